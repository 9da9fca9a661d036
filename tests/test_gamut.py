"""starkiln.engine.colour.gamut and the gamut step of the render path.

References:

- B. Ottosson (2020), "A perceptual color space for image processing" (Oklab), as
  implemented by colour-science (colour.XYZ_to_Oklab / colour.Oklab_to_XYZ).
- The unmapped display RGB is rebuilt with colour-science alone: Bradford adaptation
  (colour.adaptation.chromatic_adaptation_VonKries) and the SMPTE RP 177 matrix
  (colour.normalised_primary_matrix).
- CIE 15:2004 section 7.3: additive mixtures with white lie on the straight line to the
  white in the xy diagram (the basis of dominant wavelength).
"""

import numpy as np
import pytest

from starkiln.engine.errors import SettingsError
from starkiln.engine.colour.gamut import GAMUT_METHODS, Oklab_to_XYZ, XYZ_to_Oklab, check_gamut_method
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.colour.whites import resolve_white

TEMPS = np.geomspace(500.0, 100000.0, 300)
D65_4DIGIT_XY = np.array([0.3127, 0.3290])  # ITU-R BT.709 / IEC 61966-2-1 D65

# (scene white, display): the first gives red out-of-gamut stars, the second blue ones too.
CASES = [("D65", "srgb"), ("blackbody:3000", "srgb"), ("D65", "rec2020"), ("D50", "dci-p3")]


def unmapped_rgb(colour, settings, XYZ):
    """Display-linear RGB before gamut mapping, from colour-science only.

    Bradford adaptation from the scene white to the display white, then the inverse of
    colour.normalised_primary_matrix, then the render path's normalisation rule.
    """
    d = settings.display
    scene_XYZ = colour.xy_to_XYZ(np.array(resolve_white(settings.scene_white,
                                                        settings.observer).xy))
    display_XYZ = colour.xy_to_XYZ(np.array(d.white_xy))
    adapted = colour.adaptation.chromatic_adaptation_VonKries(XYZ, scene_XYZ, display_XYZ,
                                                              transform="Bradford")
    npm = colour.normalised_primary_matrix(np.array([d.red_xy, d.green_xy, d.blue_xy]),
                                           np.array(d.white_xy))
    rgb = adapted @ np.linalg.inv(npm).T
    if settings.normalisation == "luminance":
        return rgb * settings.luminance_Y, npm, adapted
    return rgb / rgb.max(axis=-1, keepdims=True), npm, adapted


def oklab_of_display_rgb(colour, rgb, npm, display_white_xy):
    """Oklab (colour.XYZ_to_Oklab) of display RGB, with XYZ adapted to D65 (Bradford)."""
    XYZ = rgb @ npm.T
    XYZ_d65 = colour.adaptation.chromatic_adaptation_VonKries(
        XYZ, colour.xy_to_XYZ(np.array(display_white_xy)), colour.xy_to_XYZ(D65_4DIGIT_XY),
        transform="Bradford")
    return colour.XYZ_to_Oklab(XYZ_d65)


def test_oklab_against_colour(colour):
    # colour.XYZ_to_Oklab / Oklab_to_XYZ (Ottosson 2020) on random XYZ, 1e-6.
    rng = np.random.default_rng(2020)
    XYZ = rng.uniform(0.0, 1.0, size=(500, 3))
    np.testing.assert_allclose(XYZ_to_Oklab(XYZ), colour.XYZ_to_Oklab(XYZ), atol=1e-6)
    lab = colour.XYZ_to_Oklab(XYZ)
    np.testing.assert_allclose(Oklab_to_XYZ(lab), colour.Oklab_to_XYZ(lab), atol=1e-6)
    # Ottosson (2020): D65 white has L = 1, a = b = 0 (to about 1e-4 with 4-digit D65).
    np.testing.assert_allclose(XYZ_to_Oklab(colour.xy_to_XYZ(D65_4DIGIT_XY)), [1.0, 0.0, 0.0],
                               atol=2e-4)


@pytest.mark.parametrize("method", GAMUT_METHODS)
@pytest.mark.parametrize("white,display", CASES)
def test_mapped_colours_inside_and_normalised(colour, method, white, display):
    # Contract (max-channel normalisation): every channel in [0, 1] and the largest
    # exactly 1; in_gamut is reported for the colour *before* mapping - checked against
    # the unmapped RGB rebuilt with colour-science (points within 1e-4 of the cube face,
    # where the 4-digit rounding of references could differ, are left out).
    s = Settings(scene_white=white, display=display, gamut=method)
    r = render(s, TEMPS)
    assert np.all(r.rgb_linear >= 0.0) and np.all(r.rgb_linear <= 1.0)
    assert np.all(r.rgb_linear.max(axis=-1) == 1.0)
    assert np.all((r.rgb_encoded >= 0.0) & (r.rgb_encoded <= 1.0))
    rgb0, _, _ = unmapped_rgb(colour, s, r.XYZ)
    low = rgb0.min(axis=-1)
    clear = np.abs(low) > 1e-4
    assert clear.sum() > 250
    np.testing.assert_array_equal(r.in_gamut[clear], low[clear] >= 0.0)
    assert (~r.in_gamut).any()  # the cases are chosen to contain out-of-gamut stars
    # stars inside the gamut are not touched by any method
    inside = r.in_gamut
    np.testing.assert_allclose(r.rgb_linear[inside], rgb0[inside], atol=1e-9)


@pytest.mark.parametrize("white,display", CASES)
def test_chroma_keeps_oklab_hue_and_lightness(colour, white, display):
    # 'chroma' reduces Oklab chroma at constant lightness and hue (Ottosson 2020 defines
    # L and the hue angle atan2(b, a)). With luminance normalisation nothing rescales the
    # result, so both are kept; hue and lightness computed with colour.XYZ_to_Oklab.
    s = Settings(scene_white=white, display=display, gamut="chroma",
                 normalisation="luminance", luminance_Y=0.5)
    r = render(s, TEMPS)
    out = ~r.in_gamut
    assert out.sum() >= 10
    rgb0, npm, _ = unmapped_rgb(colour, s, r.XYZ[out])
    lab0 = oklab_of_display_rgb(colour, rgb0, npm, s.display.white_xy)
    lab1 = oklab_of_display_rgb(colour, r.rgb_linear[out], npm, s.display.white_xy)
    np.testing.assert_allclose(lab1[:, 0], lab0[:, 0], atol=1e-6)
    hue0 = np.arctan2(lab0[:, 2], lab0[:, 1])
    hue1 = np.arctan2(lab1[:, 2], lab1[:, 1])
    dh = np.angle(np.exp(1j * (hue1 - hue0)))
    assert np.abs(dh).max() <= 1e-6
    # chroma really was reduced, and the result is inside the cube
    assert np.all(np.hypot(lab1[:, 1], lab1[:, 2]) < np.hypot(lab0[:, 1], lab0[:, 2]))
    assert np.all((r.rgb_linear >= 0.0) & (r.rgb_linear <= 1.0))


@pytest.mark.parametrize("white,display", CASES)
def test_chroma_keeps_hue_under_max_channel(colour, white, display):
    # Under max-channel normalisation the result is rescaled (brightest channel = 1);
    # Oklab hue is scale-invariant (Ottosson 2020: Lab scales with the cube root), so the
    # hue is still kept; the lightness is not (it is set by the brightest channel).
    s = Settings(scene_white=white, display=display, gamut="chroma")
    r = render(s, TEMPS)
    out = ~r.in_gamut
    rgb0, npm, _ = unmapped_rgb(colour, s, r.XYZ[out])
    lab0 = oklab_of_display_rgb(colour, rgb0, npm, s.display.white_xy)
    lab1 = oklab_of_display_rgb(colour, r.rgb_linear[out], npm, s.display.white_xy)
    dh = np.angle(np.exp(1j * (np.arctan2(lab1[:, 2], lab1[:, 1])
                               - np.arctan2(lab0[:, 2], lab0[:, 1]))))
    assert np.abs(dh).max() <= 1e-6


@pytest.mark.parametrize("normalisation", ["max-channel", "luminance"])
@pytest.mark.parametrize("white,display", CASES)
def test_scale_keeps_dominant_wavelength(colour, white, display, normalisation):
    # 'scale' mixes in display white and scales intensity: by Grassmann's laws the result's
    # chromaticity lies on the segment from the display white to the star's adapted
    # chromaticity (CIE 15:2004 7.3), i.e. the dominant wavelength is kept.
    s = Settings(scene_white=white, display=display, gamut="scale", normalisation=normalisation)
    r = render(s, TEMPS)
    out = ~r.in_gamut
    assert out.sum() >= 10
    _, npm, adapted = unmapped_rgb(colour, s, r.XYZ[out])
    star = colour.XYZ_to_xy(adapted)
    result = colour.XYZ_to_xy(r.rgb_linear[out] @ npm.T)
    w = np.array(s.display.white_xy)
    d_star, d_res = star - w, result - w
    cross = d_star[:, 0] * d_res[:, 1] - d_star[:, 1] * d_res[:, 0]
    assert np.abs(cross).max() <= 1e-9
    t = np.sum(d_res * d_star, axis=-1) / np.sum(d_star * d_star, axis=-1)
    assert np.all(t > 0.0) and np.all(t <= 1.0 + 1e-9)


def test_clip_cuts_channels():
    # 'clip' is per-channel clamping (definition): a 1000 K star on sRGB has no blue at all.
    r = render(Settings(gamut="clip"), 1000.0)
    assert r.rgb_linear[2] == 0.0 and r.rgb_linear[0] == 1.0


def test_check_gamut_method():
    assert check_gamut_method(" Chroma ") == "chroma"
    with pytest.raises(SettingsError) as exc:
        check_gamut_method("perceptual")
    assert "'perceptual'" in str(exc.value) and "clip" in str(exc.value)
