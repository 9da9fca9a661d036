"""The ``table`` transfer: validation, round trips, and every place a transfer is written.

References: [IEC61966-2-1] section 5.2 (the sRGB curve, written out here), [ICC1] section
10.6 (linear interpolation between equally spaced samples), colour-science's
``eotf_inverse_sRGB`` as a second reference for the sRGB encoding.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from starkiln.engine.colour.displays import (Display, display_from_profile, get_display,
                                             load_display_profile, save_display_profile)
from starkiln.engine.errors import SettingsError
from starkiln.engine.pipeline.settings import Settings, settings_from_toml, settings_to_toml

SRGB_XY = ((0.64, 0.33), (0.30, 0.60), (0.15, 0.06))  # [IEC61966-2-1]
D65 = (0.3127, 0.3290)


def _table_display(samples, name="table-dome"):
    return Display(name, *SRGB_XY, D65, "table", 2.2, 12.0, "display", tuple(samples))


def _srgb_table(n):
    v = np.linspace(0, 1, n)  # [IEC61966-2-1] section 5.2 decoding
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


@pytest.mark.parametrize("n", [256, 1024])
def test_sampled_srgb_table_matches_colour_science_encoding(n):
    import colour

    d = _table_display(_srgb_table(n))
    x = np.random.default_rng(5).random(5000)
    assert np.max(np.abs(d.encode(x) - colour.models.eotf_inverse_sRGB(x))) < 1e-4


def test_round_trips():
    # a strictly increasing table: decode(encode(L)) = L and encode(decode(V)) = V exactly
    # up to rounding, as linear interpolation and its inverse are ([ICC1] 10.6)
    d = _table_display(np.linspace(0, 1, 9) ** 2.2)
    x = np.random.default_rng(1).random(2000)
    np.testing.assert_allclose(d.decode(d.encode(x)), x, atol=1e-12)
    np.testing.assert_allclose(d.encode(d.decode(x)), x, atol=1e-12)
    assert d.encode(np.array([[0.0, 1.0, 2.0]])).tolist() == [[0.0, 1.0, 1.0]]


def test_flat_run_encodes_to_its_lowest_code_value():
    d = _table_display([0.0, 0.0, 0.0, 0.5, 1.0])  # codes 0, .25, .5, .75, 1
    assert d.encode(0.0) == 0.0
    assert d.encode(0.25) == pytest.approx(0.625)  # halfway between codes 0.5 and 0.75
    assert d.encode(1e-9) == pytest.approx(0.5, abs=1e-7)  # just above the run: its end
    e = _table_display([0.0, 0.5, 0.5, 1.0])
    assert e.encode(0.5) == pytest.approx(1 / 3)  # on the run: its lowest code value
    assert e.encode(0.75) == pytest.approx(5 / 6)
    assert e.encode(0.25) == pytest.approx(1 / 6)


@pytest.mark.parametrize("samples, says", [
    ([0.0], "1 samples"),
    ([0.1, 1.0], "runs from 0.1"),
    ([0.0, 0.9], "to 0.9"),
    ([0.0, 0.6, 0.4, 1.0], r"sample 2 \(0.4\) is below"),
    ([0.0, "half", 1.0], "sample 1"),
    ([0.0, float("nan"), 1.0], "sample 1"),
    (list(np.linspace(0, 1, 4097)), "4097 samples"),
])
def test_bad_tables_are_refused(samples, says):
    with pytest.raises(SettingsError, match=says):
        _table_display(samples)


def test_samples_only_with_table():
    with pytest.raises(SettingsError, match="with 'table' only"):
        Display("x", *SRGB_XY, D65, "gamma", 2.2, 80.0, "display", (0.0, 1.0))


def test_hashable_and_immutable():
    a, b = _table_display([0.0, 0.2, 1.0]), _table_display([0.0, 0.2, 1.0])
    assert a == b and hash(a) == hash(b) and isinstance(a.transfer_samples, tuple)
    assert _table_display([0.0, 0.3, 1.0]) != a


def test_json_profile(tmp_path):
    d = _table_display(np.linspace(0, 1, 5) ** 2)
    path = tmp_path / "t.json"
    save_display_profile(d, path)
    data = json.loads(path.read_text())
    assert data["transfer"] == {"function": "table", "samples": [0.0, 0.0625, 0.25, 0.5625, 1.0]}
    assert load_display_profile(path) == d
    base = {"primaries_xy": {"red": [0.64, 0.33], "green": [0.3, 0.6], "blue": [0.15, 0.06]},
            "white_xy": [0.3127, 0.329]}
    with pytest.raises(SettingsError, match="transfer.samples is required"):
        display_from_profile(base | {"transfer": {"function": "table"}}, "p.json")
    with pytest.raises(SettingsError, match="p.json"):
        display_from_profile(base | {"transfer": {"function": "table", "samples": [0, 2]}},
                             "p.json")


def test_settings_toml_and_texture_metadata():
    from starkiln.engine.exports.texture_metadata import lut_metadata
    from starkiln.engine.exports.texture_spec import TextureSpec

    s = Settings(display=_table_display([0.0, 0.1, 0.4, 1.0]))
    text = settings_to_toml(s)
    assert "transfer_samples = [" in text
    assert settings_from_toml(text) == s
    assert "transfer_samples" not in settings_to_toml(Settings())  # other files unchanged
    meta = lut_metadata(s, TextureSpec())
    assert meta["texture"]["transfer"] == "table (4 samples)"
    assert Settings.from_dict(json.loads(json.dumps(meta["settings"]))) == s


def test_render_and_colour_query_use_the_table(tmp_path):
    import subprocess
    import sys

    from starkiln.engine.pipeline.render import render

    d = _table_display(np.linspace(0, 1, 17) ** 2.4)
    r = render(Settings(display=d), 4500.0)
    # the encoded values decode back through the table to the linear ones ([ICC1] 10.6)
    np.testing.assert_allclose(np.interp(r.rgb_encoded, np.linspace(0, 1, 17),
                                         np.linspace(0, 1, 17) ** 2.4), r.rgb_linear, atol=1e-9)
    save_display_profile(d, tmp_path / "t.json")
    out = subprocess.run([sys.executable, "-m", "starkiln", "colour", "--temperature", "4500",
                          "--display", str(tmp_path / "t.json"), "--json"],
                         capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    np.testing.assert_allclose(json.loads(out.stdout)["rgb_encoded"], r.rgb_encoded, atol=1e-6)
    assert get_display(str(tmp_path / "t.json")) == d


def test_catalogue_grid_holds_its_bound_under_a_table_transfer():
    # the catalogue's fast path (an interpolated grid over render) stays within its CIEDE2000
    # bound under the kinks a table transfer has at every sample (colour-science referee,
    # tests/test_fastpath.py); the invented dome readings give the table
    from starkiln.assets import asset_path
    from starkiln.engine.catalogue.grid_build import build_colour_grid
    from starkiln.engine.colour.measured import display_from_readings
    from starkiln.engine.pipeline.render import render
    import colour

    from test_fastpath import DELTA_E_BOUND

    def lab(encoded):  # the format's definition ([ICC1] 10.6), then colour-science throughout
        d = settings.display
        v = np.clip(encoded, 0.0, 1.0)
        linear = np.interp(v, np.linspace(0, 1, len(d.transfer_samples)), d.transfer_samples)
        space = colour.RGB_Colourspace("dome", np.array([d.red_xy, d.green_xy, d.blue_xy]),
                                       np.array(d.white_xy))
        return colour.XYZ_to_Lab(colour.RGB_to_XYZ(linear, space), np.array(d.white_xy))

    dome = display_from_readings(asset_path("dome_readings.csv").read_text(), "dome").display
    assert dome.transfer == "table"
    settings = Settings(display=dome)
    grid = build_colour_grid(settings)
    t = np.exp(np.random.default_rng(8).uniform(np.log(500.0), np.log(100000.0), 20000))
    exact = render(settings, t).rgb_encoded
    fast = np.stack(grid.lookup(t)[:3], axis=-1)
    de = colour.difference.delta_E_CIE2000(lab(exact), lab(fast))
    assert de.max() <= DELTA_E_BOUND, de.max()
