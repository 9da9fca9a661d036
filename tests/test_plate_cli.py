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


def _exr(path):
    # read back with the OpenEXR package itself (the reference reader of the format)
    import OpenEXR

    with OpenEXR.File(str(path)) as f:
        return f.channels()["RGB"].pixels, f.header()


@pytest.mark.parametrize("extra, word", [
    (["--exr-type", "double"], "--exr-type"),
    (["--exr-type", "half", "--projection", "cube"], ".png"),   # OUT here is a .png
    (["--projection", "cube", "--size", "40x30"], "square"),
    (["--projection", "cube", "--size", "30000"], "GiB"),
])
def test_bad_cube_and_exr_options_exit_2(tmp_path, capsys, extra, word):
    out = tmp_path / "plate.png"
    assert main(["plate", SKY, str(out), "--size", "32", *BASE, *extra]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and word in err
    assert list(tmp_path.iterdir()) == []


def test_half_exr_round_trips_through_openexr(tmp_path):
    # [OpenEXR] HALF channels hold [IEEE754] binary16: the half file read back is the float
    # file's samples rounded to half (numpy's float16 conversion, round to nearest even)
    from starkiln.engine.exports.image_files import read_embedded_json

    full, half = tmp_path / "f.exr", tmp_path / "h.exr"
    assert main(["plate", SKY, str(full), "--size", "128", *BASE]) == 0
    assert main(["plate", SKY, str(half), "--size", "128", "--exr-type", "half", *BASE]) == 0
    f32, _ = _exr(full)
    f16, _ = _exr(half)
    assert f32.dtype == np.float32 and f16.dtype == np.float16
    assert f32.shape == f16.shape == (64, 128, 3) and f32.max() > 0
    np.testing.assert_array_equal(f16, f32.astype(np.float16))
    assert read_embedded_json(half)["output"] == "exr-half"
    assert read_embedded_json(full)["output"] == "exr-float"
    again = tmp_path / "again.exr"                           # the rebuild keeps the half type
    assert main(["plate", SKY, str(again), "--settings-from", str(half)]) == 0
    assert _exr(again)[0].dtype == np.float16


def test_cube_cross_end_to_end_keeps_the_whole_sky_flux(tmp_path, capsys):
    # Flux conservation over the whole sphere: every star lands somewhere whole on the cube
    # (spilling over face edges) as on the equirectangular plate (wrapping at the seam and
    # folding over the poles), so both images hold the same total (1e-5: float32 sums)
    from starkiln.engine.exports.image_files import read_embedded_json
    from starkiln.engine.plates.plate_files import CROSS_CELLS

    cube, flat = tmp_path / "cube.exr", tmp_path / "flat.exr"
    flux = ["--values", "flux"]
    assert main(["plate", SKY, str(cube), "--projection", "cube", "--size", "48", *BASE,
                 *flux]) == 0
    assert "6 faces of 48 x 48 in a 192 x 144 cross" in capsys.readouterr().out
    assert main(["plate", SKY, str(flat), "--size", "192", *BASE, *flux]) == 0
    c, _ = _exr(cube)
    e, _ = _exr(flat)
    assert c.shape == (144, 192, 3)
    np.testing.assert_allclose(c.sum(axis=(0, 1), dtype=float), e.sum(axis=(0, 1), dtype=float),
                               rtol=1e-5)
    used = np.zeros((3, 4), bool)
    for row, col in CROSS_CELLS.values():
        used[row, col] = True
    cells = c.reshape(3, 48, 4, 48, 3).sum(axis=(1, 3, 4))
    assert np.all(cells[~used] == 0) and np.all(cells[used] > 0)
    meta = read_embedded_json(cube)
    assert meta["projection"]["projection"] == "cube" and meta["layout"].startswith("cross 4x3")
    assert meta["counts"]["drawn"] == 4000
    again = tmp_path / "again.exr"
    assert main(["plate", SKY, str(again), "--settings-from", str(cube)]) == 0
    np.testing.assert_array_equal(_exr(again)[0], c)
