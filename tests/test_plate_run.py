"""Drawing a plate chunk (``starkiln.engine.plates.run``) through the one render path.

The projection and drawing modules are written in another branch; until they merge in,
the fixture below puts a clearly TEMPORARY stand-in in ``sys.modules`` (a plain
plate-carree mapping and a nearest-pixel deposit), so that this module's glue (columns,
skip counts, colours) is checked alone. With the real modules present they are used.
"""

import sys
import types
from dataclasses import dataclass

import numpy as np
import pytest

from starkiln.engine.catalogue.plan import CataloguePlan
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.plates.run import draw_chunk, radec_columns


@dataclass(frozen=True)
class _StandInSpec:
    projection: str
    width_px: int
    height_px: int
    fov_deg: float = 180.0
    centre_lon_deg: float = 0.0
    centre_lat_deg: float = 90.0
    tilt_deg: float = 0.0


def _stand_in_project(lon_deg, lat_deg, spec):
    # TEMPORARY: plate carree, longitude increasing to the left.
    x = (360.0 - np.asarray(lon_deg)) % 360.0 / 360.0 * spec.width_px
    y = (90.0 - np.asarray(lat_deg)) / 180.0 * spec.height_px
    return x, y, None, np.ones(x.shape, bool)


def _stand_in_deposit(image, x_px, y_px, values, sigma_px, wrap_x=False, face=None):
    # TEMPORARY: all of each star's value into its nearest pixel.
    h, w = image.shape[:2]
    i = np.clip(np.floor(y_px).astype(int), 0, h - 1)
    j = np.floor(x_px).astype(int) % w
    np.add.at(image, (i, j), values)


@pytest.fixture
def plate_modules(monkeypatch):
    try:
        from starkiln.engine.plates.projection import PlateSpec  # real modules merged in
        import starkiln.engine.plates.drawing  # noqa: F401
        return PlateSpec
    except ImportError:
        proj = types.ModuleType("starkiln.engine.plates.projection")
        proj.PlateSpec, proj.project = _StandInSpec, _stand_in_project
        draw = types.ModuleType("starkiln.engine.plates.drawing")
        draw.deposit = _stand_in_deposit
        monkeypatch.setitem(sys.modules, "starkiln.engine.plates.projection", proj)
        monkeypatch.setitem(sys.modules, "starkiln.engine.plates.drawing", draw)
        return _StandInSpec


def _col(a):
    return np.asarray(a, dtype=float), None


def test_default_columns_are_the_first_named_like_ra_and_dec():
    ra, dec, line = radec_columns(["name", "RAJ2000", "DEJ2000", "ra"])
    assert (ra, dec) == ("RAJ2000", "DEJ2000") and "RAJ2000" in line
    with pytest.raises(StarkilnError, match="--dec-column"):
        radec_columns(["ra", "x"])
    with pytest.raises(StarkilnError, match="--ra-column 'alpha'"):
        radec_columns(["ra", "dec"], ra_column="alpha")


def test_isolated_star_carries_the_render_path_colour_and_intensity(plate_modules):
    # Reference: the colour check: an isolated star's footprint equals the one
    # render path's display colour times its intensity (render() called here directly).
    spec = plate_modules("equirect", 64, 32)
    plan = CataloguePlan(settings=Settings(), source="temperature", source_column="t",
                         magnitude_column="m", exact=True)
    image = np.zeros((32, 64, 3), np.float32)
    cols = {"ra": _col([100.0]), "dec": _col([20.0]), "t": _col([4300.0]), "m": _col([2.5])}
    counts = draw_chunk(image, plan, cols, "ra", "dec", spec)
    ref = render(Settings(), np.array([4300.0]), np.array([2.5]))
    expected = ref.rgb_encoded[0] * ref.intensity[0]
    np.testing.assert_allclose(image.reshape(-1, 3).sum(axis=0), expected, rtol=1e-5)
    assert counts["drawn"] == 1


def test_bad_rows_are_skipped_and_counted_by_reason(plate_modules):
    spec = plate_modules("equirect", 32, 16)
    plan = CataloguePlan(settings=Settings(), source="temperature", source_column="t",
                         magnitude_column="m", exact=True)
    image = np.zeros((16, 32, 3), np.float32)
    cols = {"ra": _col([10, np.nan, 400, 20, 30]), "dec": _col([0, 0, 0, -95, 10]),
            "t": _col([5000, 5000, 5000, 5000, 50.0]), "m": _col([1, 1, 1, 1, 1])}
    counts = draw_chunk(image, plan, cols, "ra", "dec", spec)
    assert counts["missing RA/Dec"] == 1 and counts["RA outside 0-360"] == 1
    assert counts["Dec outside -90..90"] == 1
    assert counts["render-flagged"] == 1  # 50 K is outside the render path's 500-100000 K
    assert counts["drawn"] == 1
