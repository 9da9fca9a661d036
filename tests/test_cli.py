"""starkiln.cli.main: the ``starkiln`` command line.

Reference values come from outside the project: colour-science's blackbody chromaticity,
Ballesteros (2012) for B-V, CIE 15:2004 Table T.3 for the white presets, IEC 61966-2-1 for
the sRGB encoding, and the contract (exit code 2 and one line on stderr for bad input).
"""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from starkiln.cli.main import main

REPO_ROOT = Path(__file__).resolve().parent.parent
STARKILN = Path(sys.executable).parent / "starkiln"
JSON_KEYS = {"temperature_K", "xy", "rgb_linear", "rgb_encoded", "hex", "in_gamut"}
CIE_T3_2DEG = {"D50": (0.34567, 0.35850), "D55": (0.33242, 0.34743),
               "D65": (0.31271, 0.32902), "D75": (0.29902, 0.31485)}  # CIE 15:2004 Table T.3


def run_json(capsys, *args):
    code = main(["colour", *args, "--json"])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert err == ""
    lines = out.strip().splitlines()
    assert len(lines) == 1
    return json.loads(lines[0])


def check_hex(record):
    # '#rrggbb' of rgb_encoded rounded to the nearest 8-bit code (common practice).
    h = record["hex"]
    assert len(h) == 7 and h[0] == "#"
    codes = np.array([int(h[i:i + 2], 16) for i in (1, 3, 5)])
    assert np.abs(codes / 255.0 - np.array(record["rgb_encoded"])).max() <= 0.5 / 255 + 1e-6


def test_colour_json(capsys, blackbody_xy_ref, colour):
    rec = run_json(capsys, "--temperature", "5800")
    assert JSON_KEYS <= set(rec)
    assert rec["temperature_K"] == 5800.0
    # chromaticity: colour-science's spectral route (sd_blackbody, 1 nm summation)
    np.testing.assert_allclose(rec["xy"], blackbody_xy_ref(5800.0), atol=1e-5)
    # encoded = IEC 61966-2-1 encoding of linear (colour.models.eotf_inverse_sRGB)
    np.testing.assert_allclose(rec["rgb_encoded"],
                               colour.models.eotf_inverse_sRGB(np.array(rec["rgb_linear"])),
                               atol=2e-6)
    assert max(rec["rgb_linear"]) == 1.0
    assert rec["in_gamut"] is True
    check_hex(rec)


def test_color_alias(capsys):
    # 'color' is accepted where users type it (US spelling), same answer.
    a = run_json(capsys, "--temperature", "4200")
    code = main(["color", "--temperature", "4200", "--json"])
    b = json.loads(capsys.readouterr().out)
    assert code == 0 and a == b


def test_bv_and_spectral_class(capsys):
    # With the relation model: Ballesteros (2012) EPL 97 34008 by hand for B-V = 0.65; G2V
    # near 5772 K (IAU 2015).
    rec = run_json(capsys, "--bv", "0.65", "--index-model", "relation")
    expected = 4600.0 * (1 / (0.92 * 0.65 + 1.7) + 1 / (0.92 * 0.65 + 0.62))
    assert rec["temperature_K"] == pytest.approx(expected, rel=1e-12)
    # a negative index is a value, not an option (blue stars have B-V < 0)
    rec = run_json(capsys, "--bv", "-0.3", "--index-model", "relation")
    expected = 4600.0 * (1 / (0.92 * -0.3 + 1.7) + 1 / (0.92 * -0.3 + 0.62))
    assert rec["temperature_K"] == pytest.approx(expected, rel=1e-12)
    rec = run_json(capsys, "--spectral-class", "G2V", "--index-model", "relation")
    assert rec["temperature_K"] == pytest.approx(5772.0, abs=30.0)
    check_hex(rec)


def test_bv_bp_rp_and_class_by_synthetic_photometry(capsys):
    # The default model: the blackbody of the same synthetic colour. The Sun's B-V 0.653
    # ([Ramirez2012]) and BP-RP 0.82 ([CasagrandeVandenBerg2018], from memory) both give a
    # blackbody within 5 % of its 5772 K ([IAU2015B3]); the record says where it came from.
    rec = run_json(capsys, "--bv", "0.653")
    assert rec["temperature_K"] == pytest.approx(5772.0, rel=0.05)
    assert rec["source"] == {"index": "B-V", "value": 0.653, "index_model": "synthetic",
                             "status": "ok"}
    rec = run_json(capsys, "--bp-rp", "0.82")
    assert rec["temperature_K"] == pytest.approx(5772.0, rel=0.05)
    # Bluer than the 100 000 K blackbody (B-V about -0.34 there): shown at 100 000 K, marked.
    rec = run_json(capsys, "--bv", "-0.37")
    assert rec["temperature_K"] == pytest.approx(100000.0)
    assert rec["source"]["status"] == "bluer-than-blackbody"
    # A class: rendered from its mean B-V (G2V 0.650 in [Mamajek2018]), Teff in the record
    # (5770 K, [Mamajek2024]).
    rec = run_json(capsys, "--spectral-class", "G2V")
    assert rec["source"]["bv"] == 0.650 and rec["source"]["effective_temperature_K"] == 5770.0
    assert rec["temperature_K"] == pytest.approx(5772.0, rel=0.05)
    check_hex(rec)


def test_options_reach_the_settings(capsys, blackbody_xy_ref):
    # cie1964 changes the chromaticity to the 10 degree observer's (colour-science route);
    # a white at the star's own temperature renders neutral (common practice).
    rec = run_json(capsys, "--temperature", "3000", "--observer", "cie1964")
    np.testing.assert_allclose(rec["xy"], blackbody_xy_ref(3000.0, "cie1964"), atol=1e-5)
    rec = run_json(capsys, "--temperature", "3000", "--white", "blackbody:3000")
    assert rec["hex"] == "#ffffff"
    rec = run_json(capsys, "--temperature", "1000", "--gamut", "clip", "--display", "rec2020")
    assert rec["in_gamut"] is False and rec["settings"]["display"] == "rec2020"


def test_shipped_display_profile(capsys, colour):
    profiles = [p for p in sorted((REPO_ROOT / "assets").glob("*.json"))
                if "starkiln_display" in p.read_text(encoding="utf-8")]
    if not profiles:
        pytest.skip("no display profile shipped in assets/")
    path = profiles[0]
    data = json.loads(path.read_text(encoding="utf-8"))
    rec = run_json(capsys, "--temperature", "6000", "--display", str(path))
    assert rec["settings"]["display"] == data.get("name", path.stem)
    # the profile's transfer: a pure gamma is V = L^(1/gamma) (definition); sRGB per IEC.
    lin = np.array(rec["rgb_linear"])
    fn = data["transfer"]["function"] if isinstance(data["transfer"], dict) else data["transfer"]
    if fn == "gamma":
        expected = lin ** (1.0 / data["transfer"]["gamma"])
    elif fn == "srgb":
        expected = colour.models.eotf_inverse_sRGB(lin)
    else:
        pytest.skip(f"profile transfer {fn!r} not checked here")
    np.testing.assert_allclose(rec["rgb_encoded"], expected, atol=2e-6)
    check_hex(rec)


def test_temporary_display_profile(capsys, tmp_path, colour):
    # An invented dome profile: linear transfer, P3-like primaries, D65 white.
    profile = {"starkiln_display": 1, "name": "test-dome-linear",
               "primaries_xy": {"red": [0.68, 0.32], "green": [0.265, 0.69],
                                "blue": [0.15, 0.06]},
               "white_xy": [0.3127, 0.329], "transfer": {"function": "linear"},
               "peak_luminance_cd_m2": 10.0}
    path = tmp_path / "dome.json"
    path.write_text(json.dumps(profile), encoding="utf-8")
    rec = run_json(capsys, "--temperature", "6504", "--display", str(path))
    assert rec["settings"]["display"] == "test-dome-linear"
    np.testing.assert_allclose(rec["rgb_encoded"], rec["rgb_linear"], atol=1e-12)
    # same primaries and white as colour's "Display P3": the same linear RGB as that preset
    p3 = run_json(capsys, "--temperature", "6504", "--display", "display-p3")
    np.testing.assert_allclose(rec["rgb_linear"], p3["rgb_linear"], atol=2e-6)


def test_readable_table(capsys):
    rec = run_json(capsys, "--temperature", "5800")
    assert main(["colour", "--temperature", "5800"]) == 0
    out, err = capsys.readouterr()
    assert err == ""
    lines = out.strip().splitlines()
    assert len(lines) >= 5
    assert any(line.startswith("temperature") and "5800 K" in line for line in lines)
    assert any(line.startswith("hex") and rec["hex"] in line for line in lines)
    with pytest.raises(json.JSONDecodeError):
        json.loads(out)


def test_whites_lists_presets(capsys):
    assert main(["whites"]) == 0
    out = capsys.readouterr().out
    rows = {line.split()[0]: line for line in out.splitlines() if line.strip()}
    for name in ("D50", "D55", "D65", "D75", "E", "DCI"):
        assert name in rows
    for name, (x, y) in CIE_T3_2DEG.items():  # CIE 15:2004 Table T.3, 5 decimals printed
        fields = dict(f.split("=") for f in rows[name].split()[1:3])
        assert float(fields["x"]) == pytest.approx(x, abs=1e-4)
        assert float(fields["y"]) == pytest.approx(y, abs=1e-4)
    assert "x=0.31400 y=0.35100" in rows["DCI"]  # SMPTE RP 431-2


def test_displays_lists_presets(capsys):
    assert main(["displays"]) == 0
    out = capsys.readouterr().out
    names = [line.split()[0] for line in out.splitlines() if line.strip()]
    for name in ("srgb", "display-p3", "dci-p3", "rec2020", "rec2100-pq"):
        assert name in names
    assert "0.3127,0.3290" in out  # the 4-digit D65 of IEC 61966-2-1 / BT.2020


BAD_CASES = [
    (["--temperature", "0"], "0 K"),
    (["--temperature", "-5"], "-5"),
    (["--temperature", "nan"], "nan"),
    (["--temperature", "inf"], "inf"),
    (["--temperature", "400"], "400"),
    (["--temperature", "200000"], "200000"),
    (["--temperature", "warm"], "warm"),
    (["--temperature", "5800", "--white", "D93"], "D93"),
    (["--temperature", "5800", "--white", "xy:0.7,0.5"], "xy:0.7,0.5"),
    (["--temperature", "5800", "--settings", "{bad_toml}"], "{bad_toml}"),
    (["--temperature", "5800", "--display", "{bad_json}"], "{bad_json}"),
    (["--temperature", "5800", "--display", "crt-1985"], "crt-1985"),
    (["--bv", "3.5", "--index-model", "relation"], "3.5"),
    (["--bv", "-0.45"], "-0.45"),
    (["--bv", "11"], "11"),
    (["--bp-rp", "-0.7"], "-0.7"),
    (["--bv", "0.6", "--index-model", "tepid"], "tepid"),
    (["--spectral-class", "G2III"], "G2III"),
    ([], "--temperature"),
]


@pytest.mark.parametrize("args,shown", BAD_CASES, ids=lambda v: " ".join(v) if isinstance(v, list)
                         else None)
def test_bad_input_exit_2_one_line(capsys, tmp_path, args, shown):
    # Contract: exit code 2, exactly one line on stderr naming the value, no traceback.
    bad_toml = tmp_path / "broken.toml"
    bad_toml.write_text('starkiln_settings = 1\ngamut = "clip\n', encoding="utf-8")
    bad_json = tmp_path / "broken.json"
    bad_json.write_text('{"name": "x", ', encoding="utf-8")
    paths = {"bad_toml": str(bad_toml), "bad_json": str(bad_json)}
    args = [a.format(**paths) for a in args]
    shown = shown.format(**paths)
    code = main(["colour", *args])
    out, err = capsys.readouterr()
    assert code == 2
    assert out == ""
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("starkiln: error:")
    assert shown in lines[0]
    assert "Traceback" not in err


def test_real_subprocess():
    # The installed console script, as users run it.
    if not STARKILN.exists():
        pytest.skip("starkiln console script not installed in this environment")
    res = subprocess.run([str(STARKILN), "colour", "--temperature", "5800", "--json"],
                         capture_output=True, text=True, timeout=60, cwd=REPO_ROOT)
    assert res.returncode == 0, res.stderr
    rec = json.loads(res.stdout)
    assert JSON_KEYS <= set(rec)
    check_hex(rec)
    res = subprocess.run([str(STARKILN), "colour", "--temperature", "200000"],
                         capture_output=True, text=True, timeout=60, cwd=REPO_ROOT)
    assert res.returncode == 2
    assert res.stdout == ""
    assert len(res.stderr.splitlines()) == 1 and "200000" in res.stderr
    assert "Traceback" not in res.stderr
