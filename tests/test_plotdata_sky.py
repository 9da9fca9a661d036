"""Tests of starkiln.engine.plotdata.sky: the demo cluster and the sky preview's picture.

References: the render path's engine contract (intensity 1 at the bright limit, 0 beyond
the faint one); the data are invented (assets/make_demo_cluster.py).
"""

import numpy as np
import pytest

from starkiln.engine.errors import InputRangeError, SettingsError
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.plotdata.sky import Cluster, load_demo_cluster, sky_image


def test_demo_cluster_is_loadable_and_plausible():
    c = load_demo_cluster()
    assert len(c) >= 200
    assert np.all((c.temperature_K >= 500) & (c.temperature_K <= 100000))
    assert all(str(n).startswith("Kiln-") for n in c.name)
    assert np.ptp(c.ra_deg) < 10 and np.ptp(c.dec_deg) < 10  # a small patch of sky


def test_demo_cluster_bad_files(tmp_path):
    p = tmp_path / "stars.csv"
    p.write_text("name,ra_deg,dec_deg,temperature_K\nA,1,2,3000\n")
    with pytest.raises(SettingsError, match="magnitude"):
        load_demo_cluster(p)
    p.write_text("name,ra_deg,dec_deg,temperature_K,magnitude\nA,1,2,hot,3\n")
    with pytest.raises(SettingsError, match="temperature_K"):
        load_demo_cluster(p)
    with pytest.raises(SettingsError, match="cannot read"):
        load_demo_cluster(tmp_path / "missing.csv")


def _one_star(t, m):
    return Cluster(np.array(["X"]), np.array([10.0]), np.array([20.0]), np.array([t]),
                   np.array([m]))


def test_sky_image_single_star_is_the_render_path_colour():
    s = Settings(vision="none")
    sky = sky_image(s, _one_star(4500.0, s.magnitude_bright), 64, 48)
    x, y = int(sky.x_px[0]), int(sky.y_px[0])
    r = render(s, 4500.0, s.magnitude_bright)
    # at the bright limit the tone curve gives intensity 1 (engine contract), so the spot's
    # centre pixel is the render path's encoded colour, exactly
    assert float(r.intensity) == pytest.approx(1.0)
    assert tuple(sky.rgb_8bit[y, x]) == tuple(to_8bit(r.rgb_dimmed_encoded))
    assert tuple(sky.rgb_8bit[0, 0]) == (0, 0, 0)  # the sky is black


def test_sky_image_faint_star_is_invisible():
    s = Settings()
    sky = sky_image(s, _one_star(6000.0, s.magnitude_faint + 2.0), 32, 32)
    assert sky.rgb_8bit.max() == 0  # beyond the faint limit the intensity is 0 (contract)


def test_sky_image_demo_cluster_and_size_check():
    sky = sky_image(Settings(), load_demo_cluster(), 320, 200)
    assert sky.rgb_8bit.shape == (200, 320, 3) and sky.rgb_8bit.dtype == np.uint8
    assert sky.rgb_8bit.max() > 0
    assert np.all((sky.x_px >= 0) & (sky.x_px < 320) & (sky.y_px >= 0) & (sky.y_px < 200))
    with pytest.raises(InputRangeError):
        sky_image(Settings(), load_demo_cluster(), 8, 8)
