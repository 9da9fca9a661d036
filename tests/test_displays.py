"""starkiln.engine.colour.displays: presets, matrices, transfer functions and display profiles.

References:

- IEC 61966-2-1:1999 (sRGB): breakpoint 0.0031308 <-> 0.04045, RGB -> XYZ matrix.
- SMPTE ST 2084:2014 (PQ); ITU-R BT.1886 (gamma 2.4 reference EOTF); SMPTE RP 431-2:2011
  (DCI-P3, gamma 2.6); ITU-R BT.2020; SMPTE RP 177-1993 (normalised primary matrix).
- colour-science: colour.models.eotf_sRGB / eotf_inverse_sRGB, eotf_ST2084 /
  eotf_inverse_ST2084, eotf_BT1886, colour.RGB_COLOURSPACES, colour.normalised_primary_matrix.
"""

import json

import numpy as np
import pytest

from starkiln.engine.colour.displays import (
    PRESETS,
    Display,
    decode,
    display_from_profile,
    encode,
    get_display,
    load_display_profile,
    pq_decode,
    pq_encode,
    srgb_decode,
    srgb_encode,
)
from starkiln.engine.errors import SettingsError

GRID = np.linspace(0.0, 1.0, 1001)


# --- sRGB ---------------------------------------------------------------------------------

def test_srgb_breakpoint_iec_61966_2_1():
    # IEC 61966-2-1:1999: linear 0.0031308 <-> encoded 0.04045 at the breakpoint.
    assert float(srgb_encode(0.0031308)) == pytest.approx(0.04045, abs=1e-6)
    assert float(srgb_decode(0.04045)) == pytest.approx(0.0031308, abs=1e-6)
    assert float(srgb_encode(1.0)) == pytest.approx(1.0, abs=1e-12)
    assert float(srgb_encode(0.0)) == 0.0
    assert float(srgb_decode(1.0)) == pytest.approx(1.0, abs=1e-12)
    # 18 % grey encodes to about 0.4613 (IEC formula by hand: 1.055 * 0.18^(1/2.4) - 0.055)
    assert float(srgb_encode(0.18)) == pytest.approx(1.055 * 0.18 ** (1 / 2.4) - 0.055, abs=1e-12)


def test_srgb_against_colour(colour):
    # colour.models.eotf_inverse_sRGB / eotf_sRGB on a 1001-point grid.
    np.testing.assert_allclose(srgb_encode(GRID), colour.models.eotf_inverse_sRGB(GRID), atol=1e-12)
    np.testing.assert_allclose(srgb_decode(GRID), colour.models.eotf_sRGB(GRID), atol=1e-12)
    np.testing.assert_allclose(srgb_decode(srgb_encode(GRID)), GRID, atol=1e-12)
    np.testing.assert_allclose(PRESETS["srgb"].encode(GRID), colour.models.eotf_inverse_sRGB(GRID),
                               atol=1e-12)


def test_srgb_clamps_out_of_range():
    # Encoded signals are 0-1 (IEC 61966-2-1 digital range).
    out = srgb_encode(np.array([-0.5, 1.5]))
    np.testing.assert_allclose(out, [0.0, 1.0], atol=1e-12)


# --- PQ -----------------------------------------------------------------------------------

def test_pq_against_colour(colour):
    # colour.models.eotf_inverse_ST2084 / eotf_ST2084 (SMPTE ST 2084:2014), relative 1e-9.
    lum = np.geomspace(1e-3, 10000.0, 500)
    np.testing.assert_allclose(pq_encode(lum), colour.models.eotf_inverse_ST2084(lum), rtol=1e-9)
    sig = np.linspace(0.01, 1.0, 500)
    np.testing.assert_allclose(pq_decode(sig), colour.models.eotf_ST2084(sig), rtol=1e-9)
    np.testing.assert_allclose(pq_decode(pq_encode(lum)), lum, rtol=1e-9)


def test_pq_check_points(colour):
    # SMPTE ST 2084: 10000 cd/m2 -> 1.0; 100 cd/m2 -> ~0.5081 (from memory), checked exactly
    # against colour's value.
    assert float(pq_encode(10000.0)) == pytest.approx(1.0, abs=1e-12)
    assert float(pq_encode(0.0)) == pytest.approx(0.0, abs=1e-6)
    v100 = float(pq_encode(100.0))
    assert v100 == pytest.approx(0.5081, abs=1e-4)
    assert v100 == pytest.approx(float(colour.models.eotf_inverse_ST2084(100.0)), rel=1e-9)


def test_pq_display_scales_to_its_peak(colour):
    # rec2100-pq preset: linear 1.0 is its 1000 cd/m2 peak (common practice grading peak).
    d = PRESETS["rec2100-pq"]
    lin = np.linspace(0.0, 1.0, 101)
    np.testing.assert_allclose(d.encode(lin), colour.models.eotf_inverse_ST2084(lin * 1000.0),
                               rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(d.decode(d.encode(lin)), lin, atol=1e-9)


# --- gamma curves -------------------------------------------------------------------------

def test_rec2020_gamma_is_bt1886_with_zero_black(colour):
    # ITU-R BT.1886 EOTF with L_B = 0, L_W = 1 is V^2.4 (colour.models.eotf_BT1886).
    d = PRESETS["rec2020"]
    np.testing.assert_allclose(d.decode(GRID), colour.models.eotf_BT1886(GRID, L_B=0, L_W=1),
                               atol=1e-12)
    np.testing.assert_allclose(d.encode(colour.models.eotf_BT1886(GRID, L_B=0, L_W=1)), GRID,
                               atol=1e-9)


def test_dci_p3_gamma_26(colour):
    # SMPTE RP 431-2: DCI-P3 gamma 2.6; colour's DCI-P3 colourspace decoding function.
    d = PRESETS["dci-p3"]
    ref = colour.RGB_COLOURSPACES["DCI-P3"]
    np.testing.assert_allclose(d.decode(GRID), ref.cctf_decoding(GRID), atol=1e-12)
    np.testing.assert_allclose(d.encode(GRID), ref.cctf_encoding(GRID), atol=1e-12)


def test_display_p3_uses_srgb_curve(colour):
    # SMPTE EG 432-1 primaries with the sRGB curve (common practice); colour's "Display P3".
    ref = colour.RGB_COLOURSPACES["Display P3"]
    np.testing.assert_allclose(PRESETS["display-p3"].encode(GRID), ref.cctf_encoding(GRID),
                               atol=1e-12)


def test_linear_transfer_and_unknown_transfer():
    # "linear" is the identity on 0-1 (definition); unknown names are rejected.
    np.testing.assert_array_equal(encode(GRID, "linear"), GRID)
    np.testing.assert_array_equal(decode(GRID, "linear"), GRID)
    with pytest.raises(SettingsError):
        encode(GRID, "log")


# --- matrices -----------------------------------------------------------------------------

# colour.RGB_COLOURSPACES names for our presets. colour's sRGB matrix is the rounded
# IEC 61966-2-1 one (4 digits) from the 4-digit D65, hence 1e-4.
COLOURSPACES = {"srgb": "sRGB", "rec2020": "ITU-R BT.2020", "dci-p3": "DCI-P3",
                "display-p3": "Display P3", "rec2100-pq": "ITU-R BT.2020"}


@pytest.mark.parametrize("preset", sorted(COLOURSPACES))
def test_npm_against_colour(colour, preset):
    space = colour.RGB_COLOURSPACES[COLOURSPACES[preset]]
    d = PRESETS[preset]
    np.testing.assert_allclose(d.rgb_to_XYZ, space.matrix_RGB_to_XYZ, atol=1e-4)
    # SMPTE RP 177 derivation from the same primaries and white (colour.normalised_primary_matrix)
    np.testing.assert_allclose(d.rgb_to_XYZ,
                               colour.normalised_primary_matrix(space.primaries, space.whitepoint),
                               atol=1e-12)
    np.testing.assert_allclose(d.XYZ_to_rgb @ d.rgb_to_XYZ, np.eye(3), atol=1e-12)
    np.testing.assert_allclose(d.white_xy, space.whitepoint, atol=1e-12)
    np.testing.assert_allclose([d.red_xy, d.green_xy, d.blue_xy], space.primaries, atol=1e-12)


def test_srgb_matrix_iec_61966_2_1_rows():
    # IEC 61966-2-1:1999, RGB -> XYZ (4 decimals).
    iec = np.array([[0.4124, 0.3576, 0.1805],
                    [0.2126, 0.7152, 0.0722],
                    [0.0193, 0.1192, 0.9505]])
    np.testing.assert_allclose(PRESETS["srgb"].rgb_to_XYZ, iec, atol=1e-4)
    # white (1, 1, 1) has Y = 1 (SMPTE RP 177 normalisation)
    assert PRESETS["srgb"].rgb_to_XYZ[1].sum() == pytest.approx(1.0, abs=1e-12)


def test_preset_peaks():
    # IEC 61966-2-1: 80 cd/m2 reference display; SMPTE RP 431-2: 48 cd/m2;
    # BT.2100 PQ grading at 1000 cd/m2 and BT.1886 at 100 cd/m2 (common practice).
    peaks = {k: d.peak_luminance_cd_m2 for k, d in PRESETS.items()}
    assert peaks == {"srgb": 80.0, "display-p3": 80.0, "dci-p3": 48.0, "rec2020": 100.0,
                     "rec2100-pq": 1000.0}


# --- validation and profiles --------------------------------------------------------------

def _profile(**changes):
    # An invented profile for a fictional dome projector ("Lantern Hill dome").
    data = {"starkiln_display": 1, "name": "lantern-hill-dome",
            "primaries_xy": {"red": [0.68, 0.32], "green": [0.265, 0.69], "blue": [0.15, 0.06]},
            "white_xy": [0.3127, 0.329], "transfer": {"function": "gamma", "gamma": 2.2},
            "peak_luminance_cd_m2": 14.0}
    data.update(changes)
    return data


@pytest.mark.parametrize("kwargs,word", [
    ({"red_xy": (0.9, 0.3)}, "red_xy"),            # x + y > 1: not a chromaticity
    ({"green_xy": (0.3,)}, "green_xy"),
    ({"white_xy": (0.7, 0.29)}, "white_xy"),       # outside the triangle
    ({"blue_xy": (0.47, 0.465)}, "collinear"),     # on the red-green line
    ({"transfer": "hlg"}, "hlg"),
    ({"gamma": 5.0}, "gamma"),
    ({"peak_luminance_cd_m2": 0.0}, "peak_luminance_cd_m2"),
    ({"peak_luminance_cd_m2": float("nan")}, "peak_luminance_cd_m2"),
])
def test_display_validation(kwargs, word):
    # CIE 15:2004 7.3: chromaticities satisfy x, y > 0 and x + y <= 1; a display's white
    # must be a mix of its primaries (inside their triangle) - RP 177 needs a solvable
    # matrix.
    base = dict(name="test", red_xy=(0.64, 0.33), green_xy=(0.30, 0.60), blue_xy=(0.15, 0.06),
                white_xy=(0.3127, 0.3290))
    base.update(kwargs)
    with pytest.raises(SettingsError) as exc:
        Display(**base)
    assert word in str(exc.value)
    assert "\n" not in str(exc.value)


def test_profile_round_trip(tmp_path, colour):
    # A profile written from a display reads back as the same display, and its matrix is
    # colour.normalised_primary_matrix of the profile's primaries and white.
    d = display_from_profile(_profile(), "inline")
    assert d.transfer == "gamma" and d.gamma == 2.2 and d.peak_luminance_cd_m2 == 14.0
    path = tmp_path / "dome.json"
    path.write_text(json.dumps(d.to_profile()), encoding="utf-8")
    again = load_display_profile(path)
    assert again == d
    assert get_display(str(path)) == d
    np.testing.assert_allclose(
        d.rgb_to_XYZ,
        colour.normalised_primary_matrix(np.array([[0.68, 0.32], [0.265, 0.69], [0.15, 0.06]]),
                                         np.array([0.3127, 0.329])), atol=1e-12)
    # gamma 2.2 is a pure power (definition of the "gamma" transfer)
    np.testing.assert_allclose(d.encode(GRID), GRID ** (1 / 2.2), atol=1e-12)


def test_profile_transfer_as_string_and_defaults():
    d = display_from_profile(_profile(transfer="srgb"), "inline")
    assert d.transfer == "srgb"


@pytest.mark.parametrize("changes,word", [
    ({"colour_space": "x"}, "colour_space"),
    ({"starkiln_display": 2}, "starkiln_display"),
    ({"primaries_xy": {"red": [0.68, 0.32], "green": [0.265, 0.69]}}, "primaries_xy"),
    ({"transfer": {"function": "gamma"}}, "transfer.gamma"),
    ({"transfer": {"function": "s-log3"}}, "s-log3"),
    ({"white_xy": [0.9, 0.9]}, "white_xy"),
    ({"peak_luminance_cd_m2": "bright"}, "peak_luminance_cd_m2"),
])
def test_bad_profiles(tmp_path, changes, word):
    # Contract: errors name the file and the key, in one line.
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(_profile(**changes)), encoding="utf-8")
    with pytest.raises(SettingsError) as exc:
        load_display_profile(path)
    msg = str(exc.value)
    assert str(path) in msg and word in msg and "\n" not in msg


def test_missing_key_and_malformed_json(tmp_path):
    data = _profile()
    del data["white_xy"]
    path = tmp_path / "nowhite.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    with pytest.raises(SettingsError, match="white_xy"):
        load_display_profile(path)
    broken = tmp_path / "broken.json"
    broken.write_text('{"name": "x",\n "white_xy": [0.3, }', encoding="utf-8")
    with pytest.raises(SettingsError) as exc:
        load_display_profile(broken)
    assert str(broken) in str(exc.value) and "line 2" in str(exc.value)
    with pytest.raises(SettingsError) as exc:
        load_display_profile(tmp_path / "absent.json")
    assert "absent.json" in str(exc.value)


def test_get_display_names():
    # Preset names are case-insensitive; unknown names list what is accepted.
    assert get_display("sRGB") is PRESETS["srgb"]
    assert get_display(PRESETS["rec2020"]) is PRESETS["rec2020"]
    with pytest.raises(SettingsError) as exc:
        get_display("crt-1985")
    assert "'crt-1985'" in str(exc.value) and "srgb" in str(exc.value)
