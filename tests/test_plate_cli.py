"""``starkiln plate``: bad input exits 2 with one line and writes nothing; a good run
writes a self-describing plate, through the real projection and drawing modules
(engine/plates)."""

import numpy as np
import pytest

from starkiln.cli.main import main
from tests.conftest import REPO_ROOT
from starkiln.engine.plates.projection import PlateSpec

SKY = str(REPO_ROOT / "assets" / "demo_sky.csv")
BASE = ["--temperature-column", "temperature_K", "--magnitude-column", "magnitude"]


@pytest.mark.parametrize("extra, word", [
    (["--fov", "400", "--projection", "fisheye"], "--fov"),
    (["--projection", "mercator"], "--projection"),
    (["--site", "95,10", "--time", "2026-03-14T13:30:00"], "--site"),
    (["--site=-31.5,115.25", "--time", "teatime"], "--time"),
    (["--site=-31.5,115.25"], "--time"),
    (["--size", "400000"], "GiB"),
    (["--ra-column", "alpha"], "--ra-column"),
    (["--values", "nits"], "--values"),
    (["--below-horizon", "maybe", "--site", "1,2", "--time", "2026-01-01T00:00:00"],
     "--below-horizon"),
])
def test_bad_input_exits_2_with_one_line_and_writes_nothing(tmp_path, capsys,
                                                            extra, word):
    out = tmp_path / "plate.png"
    assert main(["plate", SKY, str(out), "--size", "64", *BASE, *extra]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and word in err
    assert list(tmp_path.iterdir()) == []


def test_good_run_writes_a_self_describing_png(tmp_path, capsys):
    # Reference for the expected count: every demo row has valid RA/Dec and a temperature
    # inside 500-100000 K (assets/make_demo_sky.py's recipe), so all 4000 are drawn.
    from starkiln.engine.exports.image_files import read_embedded_json

    out = tmp_path / "plate.png"
    assert main(["plate", SKY, str(out), "--size", "128", *BASE]) == 0
    assert "RA from 'ra_deg'" in capsys.readouterr().err
    meta = read_embedded_json(out)
    assert meta["counts"]["drawn"] == 4000
    assert meta["projection"]["width_px"] == 128 and meta["projection"]["height_px"] == 64
    assert meta["values"]["kind"] == "display" and meta["frame"] == {"frame": "equatorial"}
    assert main(["plate", SKY, str(out), "--size", "128", *BASE]) == 2  # exists, no --force


def test_horizon_frame_drops_stars_below_the_horizon(tmp_path):
    # Half the sphere is below any horizon (geometry), so roughly half the uniform sky drops.
    from starkiln.engine.exports.image_files import read_embedded_json

    out = tmp_path / "dome.png"
    assert main(["plate", SKY, str(out), "--size", "64", "--projection", "fisheye",
                 "--site=-31.5,115.25,250", "--time", "2026-03-14T13:30:00", *BASE]) == 0
    meta = read_embedded_json(out)
    below = meta["counts"]["below horizon"]
    assert 1000 < below < 3000 and meta["counts"]["drawn"] + below + \
        meta["counts"].get("outside the plate", 0) == 4000
    assert meta["frame"]["site"] == "-31.5,115.25,250.0"


def test_settings_from_rebuilds_the_plate_identically(tmp_path):
    # The rebuilt file must match the first byte for byte (same metadata, same pixels).
    first, again = tmp_path / "a.png", tmp_path / "b.png"
    assert main(["plate", SKY, str(first), "--size", "96", "--psf-px", "1.1", *BASE]) == 0
    assert main(["plate", SKY, str(again), "--settings-from", str(first)]) == 0
    assert first.read_bytes() == again.read_bytes()
