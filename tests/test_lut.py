"""Lookup textures (starkiln.engine.exports.textures): axes, texel centres, layouts, one render path.

References used here:
- Texel centres at (i + 0.5) / N: the sampling convention of GPU textures
  (OpenGL 4.6 specification, section 8.14.2; common practice) and of issue 4.
- Mired = 10^6 / T (common practice in lighting and photography).
- colour-science (reference library): colour.sd_blackbody -> colour.sd_to_XYZ
  -> colour.normalised_primary_matrix (SMPTE RP 177, sRGB primaries of IEC 61966-2-1).
"""

import dataclasses
import warnings

import numpy as np
import pytest

import starkiln.engine.pipeline.settings
from starkiln.engine.errors import StarkilnError
from starkiln.engine.exports.texture_metadata import lut_metadata, spec_from_metadata
from starkiln.engine.colour.temperature_axis import temperature_from_u, u_from_temperature
from starkiln.engine.exports.texture_spec import TextureSpec, lut_axes, magnitude_from_v, texel_centres, v_from_magnitude
from starkiln.engine.exports.textures import build_lut, render_lut, write_lut
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings

#: Second radiation constant from the exact SI values of h, c, k (CODATA 2018).
C2_CODATA_2018 = 6.62607015e-34 * 299792458.0 / 1.380649e-23

needs_vision = pytest.mark.skipif(not hasattr(starkiln.engine.pipeline.settings.Settings, "aperture_mm"),
                                  reason="night-vision model (magnitudes) not available yet")


def test_texel_centres_follow_the_gpu_convention():
    # OpenGL 4.6 section 8.14.2: texel i of an N-texel axis covers [i/N, (i+1)/N), centre (i+0.5)/N
    for n in (1, 4, 7, 256):
        expected = [(i + 0.5) / n for i in range(n)]
        assert np.allclose(texel_centres(n), expected, rtol=0, atol=1e-15)


@pytest.mark.parametrize("axis", ["mired", "log", "linear"])
def test_axis_mappings_invert_each_other(axis):
    u = np.linspace(0.0, 1.0, 11)
    t = temperature_from_u(u, (1200.0, 35000.0), axis)
    assert t[0] == pytest.approx(1200.0) and t[-1] == pytest.approx(35000.0)
    assert np.allclose(u_from_temperature(t, (1200.0, 35000.0), axis), u, atol=1e-12)
    assert np.all(np.diff(t) > 0)


def test_mired_axis_is_even_in_reciprocal_temperature():
    # mired = 1e6 / T (common practice): equal u steps are equal mired steps
    a, b = 2000.0, 20000.0
    t = temperature_from_u(np.linspace(0, 1, 9), (a, b), "mired")
    mired = 1e6 / t
    assert np.allclose(np.diff(mired), (1e6 / b - 1e6 / a) / 8, rtol=1e-12)
    # issue 4 formula written out independently: u = (1e6/A - 1e6/T) / (1e6/A - 1e6/B)
    T = 5000.0
    assert float(u_from_temperature(T, (a, b), "mired")) == pytest.approx(
        (1e6 / a - 1e6 / T) / (1e6 / a - 1e6 / b), rel=1e-14)


def test_log_and_linear_axes_written_out():
    a, b = 1000.0, 40000.0
    # log: equal u steps are equal ratios; linear: equal kelvin steps (definitions)
    t = temperature_from_u(np.linspace(0, 1, 5), (a, b), "log")
    assert np.allclose(t[1:] / t[:-1], (b / a) ** 0.25)
    assert float(temperature_from_u(0.25, (a, b), "linear")) == pytest.approx(a + 0.25 * (b - a))


def test_magnitude_axis_top_row_is_brightest():
    assert float(v_from_magnitude(-1.0, (-1.0, 7.0))) == 0.0
    assert float(v_from_magnitude(7.0, (-1.0, 7.0))) == 1.0
    spec = TextureSpec(width=4, height=8, magnitude_range=(-1.0, 7.0))
    t, m = lut_axes(spec)
    # row j samples v = (j + 0.5) / H (issue 4), m = A + v (B - A)
    assert np.allclose(m, [-1.0 + (j + 0.5) / 8 * 8.0 for j in range(8)])
    assert m[0] == m.min()
    assert np.allclose(magnitude_from_v(v_from_magnitude(m, (-1, 7)), (-1, 7)), m)


def test_columns_sample_the_temperature_axis_at_texel_centres():
    spec = TextureSpec(width=5, height=1, temperature_range_K=(2000.0, 10000.0), axis="mired")
    t, m = lut_axes(spec)
    assert m is None
    ma, mb = 1e6 / 2000.0, 1e6 / 10000.0
    expected = [1e6 / (ma + (i + 0.5) / 5 * (mb - ma)) for i in range(5)]
    assert np.allclose(t, expected, rtol=1e-13)


def test_strip_rows_all_hold_full_colour_from_the_render_path():
    s = Settings()
    spec = TextureSpec(width=64, height=6)
    arr, meta = build_lut(s, spec)
    assert arr.shape == (6, 64, 3) and arr.dtype == np.uint8
    assert (arr == arr[:1]).all()
    t, _ = lut_axes(spec)
    ref = render(s, t).rgb_encoded
    # 8-bit: within half a level after rounding (issue 4 check)
    assert np.abs(arr[0] / 255.0 - ref).max() <= 0.5 / 255 + 1e-12
    assert meta["axes"]["v"]["quantity"] == "none"


def test_exr_strip_is_display_linear_float():
    s = Settings().replace(display="display-p3", scene_white="D50")
    spec = TextureSpec(width=32, height=2, file_format="exr", depth=32, alpha=True)
    arr, meta = build_lut(s, spec)
    assert arr.dtype == np.float32 and arr.shape == (2, 32, 4)
    t, _ = lut_axes(spec)
    r = render(s, t)
    assert np.abs(arr[1, :, :3] - r.rgb_linear).max() <= 1e-6
    assert np.all(arr[..., 3] == 1.0)  # no magnitudes: intensity 1
    assert meta["texture"]["encoding"] == "display-linear"


def test_exr_texels_match_the_colour_science_spectral_route(colour):
    # Independent route (colour-science): Planck spectrum, CIE 1931 CMFs summed at 1 nm on
    # 360-830 nm, sRGB primaries (IEC 61966-2-1) with the display's D65 white, max channel = 1.
    # c2 = h c / k with the exact SI 2019 constants (CODATA 2018: 1.438776877e-2 m K);
    # colour's default c2 is the rounded 1.4388e-2.
    spec = TextureSpec(width=24, height=1, temperature_range_K=(2500.0, 25000.0),
                   file_format="exr", depth=32)
    # adaptation "none": the engine's scene D65 is computed from the CIE daylight spectrum
    # (x, y = 0.31273, 0.32902) and would be adapted to the display's 4-digit D65.
    arr, _ = build_lut(Settings(adaptation="none"), spec)
    t, _ = lut_axes(spec)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    shape = colour.SpectralShape(360, 830, 1)
    srgb = colour.RGB_COLOURSPACES["sRGB"]
    # RGB -> XYZ from the sRGB primaries and white by SMPTE RP 177 (colour's implementation);
    # colour's sRGB colourspace itself carries the 4-decimal matrix printed in IEC 61966-2-1.
    npm = colour.normalised_primary_matrix(srgb.primaries, srgb.whitepoint)
    checked = 0
    for i, temp in enumerate(t):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            XYZ = colour.sd_to_XYZ(colour.sd_blackbody(float(temp), shape, c2=C2_CODATA_2018), cmfs,
                                   method="Integration") / 100.0
            rgb = np.linalg.solve(npm, XYZ)
        if rgb.min() < 0:  # outside the sRGB gamut: the engine maps it, no reference here
            continue
        rgb = rgb / rgb.max()
        assert np.allclose(arr[0, i], rgb, atol=2e-6), (temp, arr[0, i], rgb)
        checked += 1
    assert checked >= 10


def test_build_lut_calls_the_render_path_exactly_once(monkeypatch):
    import starkiln.engine.pipeline.render

    calls = []
    original = starkiln.engine.pipeline.render.render

    def counting(settings, temperature_K, magnitude=None):
        calls.append((np.shape(temperature_K), None if magnitude is None else np.shape(magnitude)))
        return original(settings, temperature_K, magnitude)

    monkeypatch.setattr(starkiln.engine.pipeline.render, "render", counting)
    build_lut(Settings(), TextureSpec(width=16, height=4))
    assert calls == [((1, 16), None)]


@needs_vision
def test_magnitude_texture_is_one_broadcast_render_call(monkeypatch):
    import starkiln.engine.pipeline.render

    calls = []
    original = starkiln.engine.pipeline.render.render

    def counting(settings, temperature_K, magnitude=None):
        calls.append((np.shape(temperature_K), np.shape(magnitude)))
        return original(settings, temperature_K, magnitude)

    monkeypatch.setattr(starkiln.engine.pipeline.render, "render", counting)
    build_lut(Settings(), TextureSpec(width=16, height=8, magnitude_range=(-1.0, 7.0)))
    assert calls == [((1, 16), (8, 1))]


@needs_vision
def test_magnitude_texture_layouts_match_render():
    s = Settings()
    spec = TextureSpec(width=20, height=10, magnitude_range=(-1.0, 7.0), alpha=True)
    t, m = lut_axes(spec)
    ref = render(s, t[None, :], m[:, None])  # contract: (1, W) x (H, 1) -> (H, W)
    arr, meta = build_lut(s, spec)
    assert arr.shape == (10, 20, 4)
    assert np.abs(arr[..., :3] / 255.0 - ref.rgb_encoded).max() <= 0.5 / 255 + 1e-12
    assert np.abs(arr[..., 3] / 255.0 - ref.intensity).max() <= 0.5 / 255 + 1e-12
    # row 0 is the brightest magnitude: intensity never rises down a column
    inten = np.asarray(ref.intensity)
    assert np.all(np.diff(inten, axis=0) <= 1e-12)
    pre = render_lut(s, spec.replace(premultiply=True, alpha=False))
    assert np.allclose(pre, ref.rgb_dimmed_encoded, atol=0)
    lin = render_lut(s, spec.replace(premultiply=True, file_format="exr", depth=32))
    assert np.allclose(lin[..., :3], ref.rgb_linear * np.asarray(ref.intensity)[..., None],
                       atol=1e-15)
    assert meta["axes"]["v"]["range"] == [-1.0, 7.0]


@pytest.mark.parametrize("kwargs", [
    {"width": 0}, {"height": 0}, {"width": 16385}, {"height": 20000}, {"width": 2.5},
    {"temperature_range_K": (5000.0, 3000.0)}, {"temperature_range_K": (4000.0, 4000.0)},
    {"temperature_range_K": (100.0, 3000.0)}, {"temperature_range_K": (float("nan"), 3000.0)},
    {"magnitude_range": (7.0, -1.0)}, {"magnitude_range": (2.0, 2.0)},
    {"magnitude_range": (-40.0, 2.0)}, {"axis": "kelvin"},
    {"depth": 16, "file_format": "exr"}, {"depth": 12}, {"file_format": "tiff"},
])
def test_spec_rejects_bad_input_with_one_line(kwargs):
    with pytest.raises(StarkilnError) as err:
        TextureSpec(**kwargs)
    assert "\n" not in str(err.value)


def test_largest_side_is_accepted():
    assert TextureSpec(width=16384, height=1).width == 16384


def test_metadata_round_trips_settings_and_spec():
    s = Settings().replace(display="display-p3", scene_white="daylight:5500", gamut="clip",
                           observer="cie1964")
    spec = TextureSpec(width=33, height=3, temperature_range_K=(1500.0, 30000.0), axis="log",
                   alpha=True, premultiply=True, depth=16)
    meta = lut_metadata(s, spec)
    assert Settings.from_dict(meta["settings"]) == s
    assert spec_from_metadata(meta) == spec
    assert meta["axes"]["u"]["formula"].startswith("u = ln(T/A) / ln(B/A)")
    assert "(i + 0.5) / W" in meta["axes"]["u"]["texel_centres"]


def test_spec_from_metadata_rejects_foreign_json():
    with pytest.raises(StarkilnError):
        spec_from_metadata({"hello": 1}, "x.png")


@pytest.mark.parametrize("fmt,depth,name", [("png", 8, "a.png"), ("png", 16, "a.png"),
                                             ("exr", 32, "a.exr")])
def test_writes_are_deterministic(tmp_path, fmt, depth, name):
    s = Settings()
    spec = TextureSpec(width=40, height=5, file_format=fmt, depth=depth, alpha=True)
    arr, meta = build_lut(s, spec)
    (tmp_path / "1").mkdir()
    (tmp_path / "2").mkdir()
    write_lut(tmp_path / "1" / name, arr, meta, spec)
    arr2, meta2 = build_lut(s, spec)
    write_lut(tmp_path / "2" / name, arr2, meta2, spec)
    assert (tmp_path / "1" / name).read_bytes() == (tmp_path / "2" / name).read_bytes()


def test_spec_is_a_frozen_dataclass():
    spec = TextureSpec()
    with pytest.raises(dataclasses.FrozenInstanceError):
        spec.width = 3
    assert spec.replace(width=3).width == 3
