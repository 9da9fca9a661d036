"""`starkiln displays measure`: display profiles from colorimeter readings.

References: the readings are built from the published sRGB primaries and white
([IEC61966-2-1] Table 1, D65) through colour-science's RGB -> XYZ matrix of its sRGB
colourspace, at the 80 cd/m2 reference luminance of [IEC61966-2-1]; the grey ramp from a pure
power ([BT1886], gamma 2.4).
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from starkiln.assets import asset_path
from starkiln.engine.colour.displays import PRESETS, load_display_profile
from starkiln.engine.colour.measured import display_from_readings
from starkiln.engine.errors import SettingsError


def _srgb_matrix():
    import colour

    return colour.RGB_COLOURSPACES["sRGB"].matrix_RGB_to_XYZ  # [IEC61966-2-1] via colour-science


def _readings(scale=(1.0, 1.0, 1.0), ramp=(), form="XYZ", peak=80.0) -> str:
    m = _srgb_matrix() * peak
    head = "patch,code,X,Y,Z" if form == "XYZ" else "patch,code,x,y,Y"
    lines = [head]

    def row(name, code, XYZ):
        if form == "XYZ":
            return f"{name},{code},{XYZ[0]!r},{XYZ[1]!r},{XYZ[2]!r}"
        s = sum(XYZ)
        return f"{name},{code},{XYZ[0] / s!r},{XYZ[1] / s!r},{XYZ[2]!r}".replace(
            f",{XYZ[2]!r}", f",{XYZ[1]!r}")

    for i, name in enumerate(("red", "green", "blue")):
        v = np.zeros(3)
        v[i] = scale[i]
        lines.append(row(name, "", m @ v))
    lines.append(row("white", "", m @ np.ones(3)))
    for code, linear in ramp:
        lines.append(row("grey", code, m @ np.full(3, linear)))
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("form", ["XYZ", "xyY"])
def test_srgb_readings_give_the_srgb_preset(form):
    # [IEC61966-2-1] primaries and D65 at 80 cd/m2 -> the srgb preset, within 1e-4
    m = display_from_readings(_readings(form=form), "srgb.csv")
    preset = PRESETS["srgb"]
    for field in ("red_xy", "green_xy", "blue_xy", "white_xy"):
        np.testing.assert_allclose(getattr(m.display, field), getattr(preset, field), atol=1e-4)
    assert m.display.peak_luminance_cd_m2 == pytest.approx(80.0)
    assert m.display.transfer == "srgb" and m.warnings == ()
    assert any("no grey ramp" in n for n in m.notes)


def test_a_gamma_ramp_gives_that_gamma():
    # [BT1886] pure power, gamma 2.4, read at nine code values
    ramp = [(c, c ** 2.4) for c in np.linspace(0.1, 0.9, 9)]
    d = display_from_readings(_readings(ramp=ramp), "g.csv").display
    assert d.transfer == "gamma" and d.gamma == pytest.approx(2.4, abs=1e-3)


def test_a_ramp_no_power_fits_gives_a_table():
    # a lifted toe (the fictional dome's scatter): 0.03 + 0.97 v^2.6 is no pure power
    ramp = [(c, 0.03 + 0.97 * c ** 2.6) for c in np.linspace(0.1, 0.9, 9)]
    d = display_from_readings(_readings(ramp=ramp), "t.csv").display
    assert d.transfer == "table" and len(d.transfer_samples) == 11  # 0, 0.1 ... 0.9, 1
    codes = np.array([c for c, _ in ramp])
    np.testing.assert_allclose(d.decode(codes), [y for _, y in ramp], atol=1e-9)


def test_an_unequal_ramp_is_resampled_to_33():
    ramp = [(c, 0.03 + 0.97 * c ** 2.6) for c in (0.05, 0.2, 0.45, 0.7, 0.85)]
    d = display_from_readings(_readings(ramp=ramp), "u.csv").display
    assert d.transfer == "table" and len(d.transfer_samples) == 33
    # linear interpolation of the readings, at the 33 code values ([ICC1] 10.6)
    codes = [0.0] + [c for c, _ in ramp] + [1.0]
    ys = [0.0] + [y for _, y in ramp] + [1.0]
    np.testing.assert_allclose(d.transfer_samples, np.interp(np.linspace(0, 1, 33), codes, ys),
                               atol=1e-9)


def test_not_additive_warns():
    # red 10 % brighter than its share of white: R + G + B - W = 0.1 R, about 2.1 % of Y_W in
    # Y but 4.1 % in X ([IEC61966-2-1] matrix row X: 0.4124 of white X 0.9505)
    m = display_from_readings(_readings(scale=(1.1, 1.0, 1.0)), "odd.csv")
    assert len(m.warnings) == 1 and "not additive" in m.warnings[0] and "odd.csv" in m.warnings[0]
    ok = display_from_readings(_readings(scale=(1.02, 1.0, 1.0)), "ok.csv")
    assert ok.warnings == ()


@pytest.mark.parametrize("text, says", [
    ("patch,code,X,Y,Z\nred,,41,21,2\ngreen,,36,72,12\nwhite,,95,100,109\n", "no blue"),
    ("patch,code,X,Y,Z\nred,,41,21,2\ngreen,,36,72,12\nblue,,18,7,95\nwhite,,95,100,109\n"
     "grey,0.5,1,-2,1\n", "negative"),
    # a white far outside the red-green-blue triangle (a saturated green as "white")
    ("patch,code,X,Y,Z\nred,,41,21,2\ngreen,,36,72,12\nblue,,18,7,95\nwhite,,5,100,1\n",
     "outside the triangle"),
    ("patch,code,X,Y\nred,,41,21\n", "accepted columns"),
    ("patch,code,X,Y,Z\nmagenta,,41,21,2\n", "unknown"),
    ("patch,code,X,Y,Z\nred,,41,21,2\ngreen,,36,72,12\nblue,,18,7,95\nwhite,,95,100,109\n"
     "grey,,1,2,1\n", "code value"),
])
def test_bad_readings_are_one_line(text, says):
    with pytest.raises(SettingsError) as exc:
        display_from_readings(text, "bad.csv")
    assert says in str(exc.value) and "bad.csv" in str(exc.value)
    assert "\n" not in str(exc.value)


def _cli(*args, cwd):
    return subprocess.run([sys.executable, "-m", "starkiln", *map(str, args)], cwd=cwd,
                          capture_output=True, text=True)


def test_cli_measure(tmp_path):
    (tmp_path / "srgb.csv").write_text(_readings())
    r = _cli("displays", "measure", "srgb.csv", "-o", "s.json", cwd=tmp_path)
    assert r.returncode == 0 and r.stderr == "", r.stderr
    np.testing.assert_allclose(load_display_profile(tmp_path / "s.json").red_xy,
                               PRESETS["srgb"].red_xy, atol=1e-4)  # [IEC61966-2-1]
    (tmp_path / "odd.csv").write_text(_readings(scale=(1.1, 1.0, 1.0)))
    r = _cli("displays", "measure", "odd.csv", "-o", "o.json", cwd=tmp_path)
    assert r.returncode == 0 and len(r.stderr.splitlines()) == 1 and "warning" in r.stderr
    (tmp_path / "bad.csv").write_text("patch,code,X,Y,Z\nred,,41,21,2\n")
    r = _cli("displays", "measure", "bad.csv", "-o", "b.json", cwd=tmp_path)
    assert r.returncode == 2 and len(r.stderr.splitlines()) == 1 and "bad.csv" in r.stderr
    assert not (tmp_path / "b.json").exists()
    r = _cli("displays", "measure", "missing.csv", "-o", "b.json", cwd=tmp_path)
    assert r.returncode == 2 and "missing.csv" in r.stderr


def test_the_shipped_dome_readings_measure():
    # invented readings of the fictional Harbourlight dome: near its demo profile's primaries
    m = display_from_readings(asset_path("dome_readings.csv").read_text(), "dome_readings.csv")
    dome = load_display_profile(asset_path("dome_projector.json"))
    for field in ("red_xy", "green_xy", "blue_xy", "white_xy"):
        np.testing.assert_allclose(getattr(m.display, field), getattr(dome, field), atol=3e-3)
    assert m.warnings == () and m.display.transfer == "table"
