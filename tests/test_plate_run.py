"""Drawing a plate chunk (``starkiln.engine.plates.run``) through the one render path.

Uses the real projection and drawing (engine/plates); this module checks the glue:
columns, skip counts, colours.
"""

import numpy as np
import pytest

from starkiln.engine.catalogue.plan import CataloguePlan
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.plates.run import draw_chunk, radec_columns
from starkiln.engine.plates.projection import PlateSpec


def _col(a):
    return np.asarray(a, dtype=float), None


def test_default_columns_are_the_first_named_like_ra_and_dec():
    ra, dec, line = radec_columns(["name", "RAJ2000", "DEJ2000", "ra"])
    assert (ra, dec) == ("RAJ2000", "DEJ2000") and "RAJ2000" in line
    with pytest.raises(StarkilnError, match="--dec-column"):
        radec_columns(["ra", "x"])
    with pytest.raises(StarkilnError, match="--ra-column 'alpha'"):
        radec_columns(["ra", "dec"], ra_column="alpha")


def test_isolated_star_carries_the_render_path_colour_and_intensity():
    # Reference: the colour check: an isolated star's footprint equals the one
    # render path's display colour times its intensity (render() called here directly).
    spec = PlateSpec("equirect", 64, 32)
    plan = CataloguePlan(settings=Settings(), source="temperature", source_column="t",
                         magnitude_column="m", exact=True)
    image = np.zeros((32, 64, 3), np.float32)
    cols = {"ra": _col([100.0]), "dec": _col([20.0]), "t": _col([4300.0]), "m": _col([2.5])}
    counts = draw_chunk(image, plan, cols, "ra", "dec", spec)
    ref = render(Settings(), np.array([4300.0]), np.array([2.5]))
    expected = ref.rgb_encoded[0] * ref.intensity[0]
    np.testing.assert_allclose(image.reshape(-1, 3).sum(axis=0), expected, rtol=1e-5)
    assert counts["drawn"] == 1


def test_bad_rows_are_skipped_and_counted_by_reason():
    spec = PlateSpec("equirect", 32, 16)
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
