"""PNG outputs embed the display's ICC profile (iCCP), read back by Pillow and by LittleCMS.

References named beside each check: [PNG3] (W3C PNG 3rd edition) sections 11.3.2.3 (iCCP) and
11.3.2.5 (sRGB); [ICC1] (ICC.1:2022) for the profile; LittleCMS (through Pillow's ImageCms)
as the reference ICC implementation; colour-science for the primary matrix ([RP177]),
Bradford ([Lam1985]), the sRGB and ST 2084 decodings and CIELAB ([CIE15]).
"""

from __future__ import annotations

import io
import json
import struct
import zlib
from pathlib import Path

import numpy as np
import pytest
from PIL import Image, ImageCms

from starkiln.assets import asset_path
from starkiln.engine.colour.displays import Display, get_display
from starkiln.engine.colour.icc_profiles import display_from_icc
from starkiln.engine.colour.icc_writer import icc_profile_bytes
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.settings import Settings

D50_ICC = np.array([0.9642, 1.0, 0.8249])  # [ICC1] 7.2.16, the PCS illuminant
#: An invented projector with a measured-looking tone curve no formula fits: a gamma-2.6
#: curve with a lifted toe, 33 samples (test data, not a real device).
TOE_SAMPLES = tuple(float(v) for v in 0.02 * np.linspace(0, 1, 33)
                    + 0.98 * np.linspace(0, 1, 33) ** 2.6)
TABLE_DISPLAY = Display("Cinder Hall test projector", (0.680, 0.320), (0.265, 0.690),
                        (0.150, 0.060), (0.3127, 0.3290), "table", 2.2, 30.0, "display",
                        TOE_SAMPLES)
CASES = ["display-p3", "dci-p3", "rec2020", "rec2100-pq", "dome", "table"]


def _display_spec(case, tmp_path) -> str:
    if case == "dome":
        return str(asset_path("dome_projector.json"))
    if case == "table":
        path = tmp_path / "table-display.json"
        path.write_text(json.dumps(TABLE_DISPLAY.to_profile()))
        return str(path)
    return case


def _png(tmp_path, case, kind) -> tuple[Path, Display]:
    from starkiln.engine.exports.palettes import export_palette
    from starkiln.engine.exports.texture_spec import TextureSpec
    from starkiln.engine.exports.textures import export_texture

    spec = _display_spec(case, tmp_path)
    out = tmp_path / f"{case}-{kind}.png"
    if kind == "texture":
        export_texture(Settings(display=spec), TextureSpec(width=16, height=2), out)
    else:
        export_palette(Settings(display=spec), out, steps=4)
    return out, get_display(spec)


def _chunks(path) -> list[tuple[bytes, bytes]]:
    """(type, data) of every chunk, in order ([PNG3] 5.3 chunk layout)."""
    data = Path(path).read_bytes()
    pos, out = 8, []
    while pos < len(data):
        length, tag = struct.unpack(">I4s", data[pos:pos + 8])
        out.append((tag, data[pos + 8:pos + 8 + length]))
        pos += 12 + length
    return out


def _colour_science_decode(colour, display, code_values):
    """Display-linear RGB of code values, decoded by colour-science where it has the curve."""
    v = np.asarray(code_values, dtype=np.float64)
    if display.transfer == "srgb":
        return colour.models.eotf_sRGB(v)  # [IEC61966-2-1]
    if display.transfer == "gamma":
        return colour.gamma_function(v, display.gamma)
    if display.transfer == "pq":  # [ST2084], relative to the display's peak
        return np.minimum(colour.models.eotf_ST2084(v) / display.peak_luminance_cd_m2, 1.0)
    if display.transfer == "table":
        # [ICC1] 10.6: equally spaced samples interpolated linearly (no library curve for it)
        samples = np.asarray(display.transfer_samples)
        return np.interp(v, np.linspace(0, 1, samples.size), samples)
    raise AssertionError(display.transfer)


@pytest.mark.parametrize("kind", ["texture", "sheet"])
@pytest.mark.parametrize("case", CASES)
def test_png_embeds_the_display_profile(tmp_path, case, kind, colour):
    out, display = _png(tmp_path, case, kind)
    with Image.open(out) as im:  # Pillow reads and decompresses iCCP
        icc = im.info["icc_profile"]
        assert "srgb" not in im.info  # never both ([PNG3] 11.3.2.5)
        im.load()
    # the chunk itself: Latin-1 profile name = the display name, NUL, method 0, zlib ([PNG3])
    iccp = [data for tag, data in _chunks(out) if tag == b"iCCP"]
    assert len(iccp) == 1
    name, _, rest = iccp[0].partition(b"\x00")
    assert name.decode("latin-1") == display.name and rest[0] == 0
    assert zlib.decompress(rest[1:]) == icc

    # LittleCMS opens it: a v4 display (mntr) matrix/TRC profile with the display's name
    profile = ImageCms.getOpenProfile(io.BytesIO(icc))
    info = profile.profile
    assert info.device_class == "mntr" and info.is_matrix_shaper
    assert info.xcolor_space.strip() == "RGB" and info.connection_space.strip() == "XYZ"
    assert info.version == pytest.approx(4.4)
    assert info.profile_description == display.name
    np.testing.assert_allclose(info.luminance[0][1], display.peak_luminance_cd_m2, rtol=1e-4)
    np.testing.assert_allclose(info.media_white_point[0], D50_ICC, atol=2e-5)  # v4: wtpt = D50
    # colorants as LittleCMS reads them = colour-science's primary matrix adapted from the
    # display white to D50 with Bradford ([RP177], [Lam1985]); s15Fixed16 steps are 1.5e-5
    white_XYZ = colour.xy_to_XYZ(np.array(display.white_xy))
    npm = colour.normalised_primary_matrix(
        np.array([display.red_xy, display.green_xy, display.blue_xy]), np.array(display.white_xy))
    cat = colour.adaptation.matrix_chromatic_adaptation_VonKries(white_XYZ, D50_ICC, "Bradford")
    lcms_colorants = np.column_stack([info.red_colorant[0], info.green_colorant[0],
                                      info.blue_colorant[0]])
    np.testing.assert_allclose(lcms_colorants, cat @ npm, atol=1e-4)
    np.testing.assert_allclose(info.chromatic_adaptation[0], cat, atol=1e-4)

    # (a) the project's reader gives the display back
    icc_path = tmp_path / "embedded.icc"
    icc_path.write_bytes(icc)
    back = display_from_icc(icc_path).display
    for field in ("red_xy", "green_xy", "blue_xy", "white_xy"):
        np.testing.assert_allclose(getattr(back, field), getattr(display, field), atol=1e-4)
    assert back.transfer == display.transfer
    if display.transfer == "gamma":
        assert back.gamma == pytest.approx(display.gamma, abs=1e-4)
    if display.transfer == "table":  # uInt16 entries ([ICC1] 10.6)
        np.testing.assert_allclose(back.transfer_samples, display.transfer_samples,
                                   atol=0.5 / 65535 + 1e-12)

    # (b) LittleCMS's transform, embedded profile -> its own Lab (D50), 8-bit, against
    # colour-science: decode, primary matrix, Bradford to D50, CIELAB. 256 random code values
    # whose a*, b* fit 8-bit Lab (signed bytes), within 1 Lab unit.
    rng = np.random.default_rng(1102)
    rgb8 = rng.integers(0, 256, (4096, 3), dtype=np.uint8)
    XYZ = colour.RGB_to_XYZ(_colour_science_decode(colour, display, rgb8 / 255.0),
                            np.array(display.white_xy), np.array(display.white_xy), npm)
    XYZ50 = colour.adaptation.chromatic_adaptation_VonKries(XYZ, white_XYZ, D50_ICC, "Bradford")
    ref = colour.XYZ_to_Lab(XYZ50, colour.XYZ_to_xy(D50_ICC))
    fits = np.all((ref[:, 1:] > -127.5) & (ref[:, 1:] < 126.5), axis=1)
    assert fits.sum() >= 256
    rgb8, ref = rgb8[fits][:256], ref[fits][:256]
    t = ImageCms.buildTransform(profile, ImageCms.createProfile("LAB"), "RGB", "LAB",
                                flags=ImageCms.Flags.NOOPTIMIZE)
    raw = np.asarray(ImageCms.applyTransform(Image.fromarray(rgb8[None], "RGB"), t))[0]
    lcms = np.column_stack([raw[:, 0].astype(float) * 100 / 255,
                            raw[:, 1].view(np.int8), raw[:, 2].view(np.int8)]).astype(float)
    assert np.max(np.abs(lcms - ref)) <= 1.0, np.max(np.abs(lcms - ref), axis=0)


def test_srgb_png_has_no_profile_and_both_are_refused(tmp_path):
    # sRGB says it all, and [PNG3] 11.3.2.5 forbids sRGB with iCCP
    out, _ = _png(tmp_path, "srgb", "texture")
    tags = [tag for tag, _ in _chunks(out)]
    assert b"sRGB" in tags and b"iCCP" not in tags
    from starkiln.engine.exports.image_files import iccp_chunk_data, write_png

    both = [(b"sRGB", b"\x00"), (b"iCCP", iccp_chunk_data(get_display("rec2020")))]
    with pytest.raises(StarkilnError, match="not both"):
        write_png(tmp_path / "both.png", np.zeros((1, 1, 3), np.uint8), colour_chunks=both)
    assert not (tmp_path / "both.png").exists() or (tmp_path / "both.png").stat().st_size == 0


def test_profile_name_is_latin1_and_the_profile_is_built_once():
    # [PNG3] 11.3.2.3: the profile name follows the keyword rules (1-79 printable Latin-1
    # bytes, no leading, trailing or double spaces)
    from starkiln.engine.exports.image_files import iccp_chunk_data, iccp_profile_name

    assert iccp_profile_name("Dôme nord") == "Dôme nord".encode("latin-1")
    assert iccp_profile_name("  dome  \u2014 \u6771 ") == b"dome ? ?"
    assert len(iccp_profile_name("x" * 200)) == 79
    assert iccp_profile_name("\u2003") == b"?"
    assert iccp_profile_name("   ") == b"ICC profile"
    display = Display("Ω dome", (0.68, 0.32), (0.265, 0.69), (0.15, 0.06), (0.3127, 0.329),
                      "gamma", 2.4, 12.0)
    assert iccp_chunk_data(display).startswith(b"? dome\x00\x00")
    # LittleCMS reads the full name from the profile's mluc desc tag (UTF-16)
    info = ImageCms.getOpenProfile(io.BytesIO(icc_profile_bytes(display))).profile
    assert info.profile_description == "Ω dome"
    assert icc_profile_bytes(display) is icc_profile_bytes(display)  # cached per display
