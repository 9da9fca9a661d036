"""CIELAB (starkiln.engine.colour.cielab) against colour-science and CIE 15:2004.

References for the checks:
- colour-science ``colour.XYZ_to_Lab`` (CIE 15:2004 section 8.2.1, reference library), with
  the white given to it as chromaticity xy (colour-science takes Yn = 1), and
  ``colour.delta_E(..., method="CIE 1976")``.
- CIE 15:2004 section 8.2.1: the reference white has L* = 100, a* = b* = 0, and black L* = 0.
"""

from __future__ import annotations

import numpy as np
import pytest

from starkiln.engine.colour.cielab import XYZ_to_CIELAB, delta_E_CIE1976

colour = pytest.importorskip("colour")

#: Whites as xy chromaticities: D65 and D50 (CIE 15:2004, as colour-science holds
#: them) and a warm blackbody-like white of an invented dome projector.
WHITES_XY = {
    "D65": colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["D65"],
    "D50": colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["D50"],
    "dome": np.array([0.4369, 0.4041]),
}


def _XYZ_samples(rng, white_XYZ):
    """Colours over the whole range, dark ones below the (6/29)^3 knee included."""
    bright = rng.uniform(0.0, 1.0, (400, 3)) * white_XYZ
    dark = rng.uniform(0.0, 0.01, (400, 3)) * white_XYZ  # the linear segment of f
    knee = np.full((3, 3), 216.0 / 24389.0) * white_XYZ * np.array([[0.999], [1.0], [1.001]])
    return np.concatenate([bright, dark, knee])


@pytest.mark.parametrize("white", sorted(WHITES_XY))
def test_matches_colour_science(white):
    xy = np.asarray(WHITES_XY[white], dtype=np.float64)
    white_XYZ = colour.xy_to_XYZ(xy)  # Y = 1, as colour.XYZ_to_Lab assumes
    XYZ = _XYZ_samples(np.random.default_rng(3), white_XYZ)
    np.testing.assert_allclose(XYZ_to_CIELAB(XYZ, white_XYZ), colour.XYZ_to_Lab(XYZ, xy),
                               atol=1e-9, rtol=1e-12)


def test_white_and_black(white="D65"):
    # CIE 15:2004 section 8.2.1: L* = 100 and a* = b* = 0 at the reference white (any Yn);
    # black is L* = 0.
    white_XYZ = colour.xy_to_XYZ(np.asarray(WHITES_XY[white])) * 80.0  # cd/m2 scale
    np.testing.assert_allclose(XYZ_to_CIELAB(white_XYZ, white_XYZ), [100.0, 0.0, 0.0],
                               atol=1e-12)
    np.testing.assert_allclose(XYZ_to_CIELAB([0.0, 0.0, 0.0], white_XYZ), [0.0, 0.0, 0.0],
                               atol=1e-12)


def test_shapes_broadcast():
    rng = np.random.default_rng(4)
    white_XYZ = colour.xy_to_XYZ(np.asarray(WHITES_XY["D50"]))
    XYZ = rng.uniform(0.0, 1.0, (5, 7, 3))
    lab = XYZ_to_CIELAB(XYZ, white_XYZ)
    assert lab.shape == (5, 7, 3)
    np.testing.assert_allclose(lab.reshape(-1, 3),
                               colour.XYZ_to_Lab(XYZ.reshape(-1, 3), WHITES_XY["D50"]),
                               atol=1e-9)


def test_delta_E_CIE1976_matches_colour_science():
    rng = np.random.default_rng(5)
    a = rng.uniform([0, -100, -100], [100, 100, 100], (300, 3))
    b = rng.uniform([0, -100, -100], [100, 100, 100], (300, 3))
    np.testing.assert_allclose(delta_E_CIE1976(a, b), colour.delta_E(a, b, method="CIE 1976"),
                               rtol=1e-12)
