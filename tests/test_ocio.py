"""``starkiln ocio``: the OpenColorIO config, checked with OpenColorIO itself and colour-science.

References used here:
- OpenColorIO's own built-in transforms (``PyOpenColorIO.BuiltinTransformRegistry``):
  ``ACEScg_to_ACES2065-1``, ``UTILITY - ACES-AP1_to_LINEAR-REC709_BFD``,
  ``UTILITY - ACES-AP0_to_CIE-XYZ-D65_BFD``, ``UTILITY - ACES-AP1_to_CIE-XYZ-D65_BFD`` and the
  display built-ins ``DISPLAY - CIE-XYZ-D65_to_sRGB``, ``..._to_G2.6-P3-DCI-BFD``,
  ``..._to_REC.1886-REC.2020``, ``..._to_REC.2100-PQ`` (the Academy's and SMPTE's matrices
  and IEC 61966-2-1, ITU-R BT.1886, SMPTE ST 2084 as OpenColorIO implements them).
- colour-science's RGB colourspaces and ``colour.matrix_RGB_to_RGB`` (ITU-R BT.709, BT.2020,
  SMPTE EG 432-1, ST 2065-1, Academy S-2014-004; Bradford and CAT02 adaptation).
- The config is read back by ``PyOpenColorIO.Config.CreateFromFile`` and its ``validate()``.
- Code values compared within 1/1023 (one 10-bit step), as the issue asks.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest

ocio = pytest.importorskip("PyOpenColorIO")

from starkiln.cli.main import main  # noqa: E402
from starkiln.engine.colour.displays import PRESETS, WORKING_SPACES, Display, get_display  # noqa: E402
from starkiln.engine.colour.whites import adaptation_matrix  # noqa: E402
from starkiln.engine.errors import StarkilnError  # noqa: E402
from starkiln.engine.exports import ocio_config  # noqa: E402

REPO = Path(__file__).resolve().parent.parent
DOME = REPO / "assets" / "dome_projector.json"
STEP_10BIT = 1.0 / 1023.0
FORWARD = ocio.TransformDirection.TRANSFORM_DIR_FORWARD

#: Starkiln working space -> colour-science colourspace.
COLOUR_SCIENCE = {"lin-srgb": "ITU-R BT.709", "lin-p3-d65": "P3-D65",
                  "lin-rec2020": "ITU-R BT.2020", "acescg": "ACEScg",
                  "aces2065-1": "ACES2065-1"}


def run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def one_line_error(err):
    lines = err.strip().splitlines()
    return len(lines) == 1 and lines[0].startswith("starkiln: error:")


def gamma_profile(tmp_path) -> Path:
    """An invented gamma-2.2 display (a fictional planetarium side screen)."""
    path = tmp_path / "side_screen.json"
    path.write_text(json.dumps({
        "starkiln_display": 1, "name": "Side screen, gamma 2.2",
        "primaries_xy": {"red": [0.66, 0.33], "green": [0.29, 0.62], "blue": [0.15, 0.07]},
        "white_xy": [0.3127, 0.329], "transfer": {"function": "gamma", "gamma": 2.2},
        "peak_luminance_cd_m2": 20.0}))
    return path


def written(tmp_path, display, curve="exact", adaptation="bradford", name="cfg"):
    out = tmp_path / f"{name}-{curve}-{adaptation}"
    done = ocio_config.write_ocio_config(display, out, adaptation=adaptation, curve=curve)
    config = ocio.Config.CreateFromFile(str(out / "config.ocio"))
    config.validate()
    return config, done


def cpu(config, *args):
    return config.getProcessor(*args).getDefaultCPUProcessor()


def apply(proc, rgb) -> np.ndarray:
    flat = np.array(rgb, dtype=np.float32).reshape(-1)  # a copy: applyRGB works in place
    proc.applyRGB(flat)
    return flat.astype(np.float64).reshape(-1, 3)


def matrix_of(proc) -> np.ndarray:
    """The 3 x 3 matrix a purely linear processor applies (its images of the unit vectors)."""
    return apply(proc, np.eye(3)).T


def builtin(style):
    cfg = ocio.Config.CreateRaw()
    return cfg.getProcessor(ocio.BuiltinTransform(style)).getDefaultCPUProcessor()


def starkiln_matrix(space: Display, display: Display, adaptation="bradford") -> np.ndarray:
    """Starkiln's own matrix path, working RGB -> display-linear RGB: XYZ at the working white,
    adapted to the display white as the render path adapts whites, then the display matrix."""
    cat = adaptation_matrix(space.white_XYZ, display.white_XYZ, adaptation)
    return display.XYZ_to_rgb @ cat @ space.rgb_to_XYZ


@pytest.fixture(scope="module")
def srgb_config(tmp_path_factory):
    return written(tmp_path_factory.mktemp("ocio"), "srgb")[0]


@pytest.fixture(scope="module")
def configs_by_adaptation(tmp_path_factory):
    folder = tmp_path_factory.mktemp("adaptations")
    return {a: written(folder, "srgb", adaptation=a)[0] for a in ("bradford", "cat02")}


# --- working spaces against OpenColorIO's built-ins and colour-science --------------------

@pytest.mark.parametrize("pair, style", [
    (("acescg", "aces2065-1"), "ACEScg_to_ACES2065-1"),  # OCIO built-in (Academy S-2014-004)
    (("acescg", "lin-srgb"), "UTILITY - ACES-AP1_to_LINEAR-REC709_BFD"),  # OCIO built-in
])
def test_working_space_matrices_match_ocio_builtins(srgb_config, pair, style):
    ours = matrix_of(cpu(srgb_config, *pair))
    np.testing.assert_allclose(ours, matrix_of(builtin(style)), atol=1e-5)


@pytest.mark.parametrize("source, style", [
    ("aces2065-1", "UTILITY - ACES-AP0_to_CIE-XYZ-D65_BFD"),  # OCIO built-in
    ("acescg", "UTILITY - ACES-AP1_to_CIE-XYZ-D65_BFD"),  # OCIO built-in
])
def test_view_transform_matches_ocio_builtin(srgb_config, source, style):
    view = srgb_config.getViewTransform(ocio_config.VIEW_TRANSFORM)
    to_xyz = view.getTransform(ocio.ViewTransformDirection.VIEWTRANSFORM_DIR_FROM_REFERENCE)
    to_ref = srgb_config.getColorSpace(source).getTransform(
        ocio.ColorSpaceDirection.COLORSPACE_DIR_TO_REFERENCE)
    chain = ocio.GroupTransform([t for t in (to_ref, to_xyz) if t is not None])
    ours = matrix_of(srgb_config.getProcessor(chain).getDefaultCPUProcessor())
    np.testing.assert_allclose(ours, matrix_of(builtin(style)), atol=1e-5)


@pytest.mark.parametrize("adaptation, cat", [("bradford", "Bradford"), ("cat02", "CAT02")])
@pytest.mark.parametrize("source", sorted(WORKING_SPACES))
@pytest.mark.parametrize("target", sorted(WORKING_SPACES))
def test_working_space_matrices_match_colour_science(configs_by_adaptation, colour, source,
                                                     target, adaptation, cat):
    ours = matrix_of(cpu(configs_by_adaptation[adaptation], source, target))
    spaces = colour.RGB_COLOURSPACES
    reference = colour.matrix_RGB_to_RGB(spaces[COLOUR_SCIENCE[source]],
                                         spaces[COLOUR_SCIENCE[target]],
                                         chromatic_adaptation_transform=cat)
    np.testing.assert_allclose(ours, reference, atol=1e-5)


@pytest.mark.parametrize("name, style, scale", [
    ("srgb", "DISPLAY - CIE-XYZ-D65_to_sRGB", 1.0),  # OCIO built-in, [IEC61966-2-1]
    ("dci-p3", "DISPLAY - CIE-XYZ-D65_to_G2.6-P3-DCI-BFD", 1.0),  # OCIO built-in, RP 431-2
    ("rec2020", "DISPLAY - CIE-XYZ-D65_to_REC.1886-REC.2020", 1.0),  # OCIO built-in, BT.1886
    # OCIO's PQ built-in has 1.0 = 100 cd/m2; the rec2100-pq preset's linear 1.0 is its
    # 1000 cd/m2 peak, so the built-in sees ten times the XYZ.
    ("rec2100-pq", "DISPLAY - CIE-XYZ-D65_to_REC.2100-PQ", 10.0),
])
@pytest.mark.parametrize("curve", ocio_config.CURVES)
def test_display_colour_space_matches_ocio_display_builtins(tmp_path, name, style, scale, curve):
    config, done = written(tmp_path, name, curve)
    display = PRESETS[name]
    rng = np.random.default_rng(11)
    linear = rng.uniform(0.0, 1.0, (1000, 3))  # inside the display's gamut
    XYZ_d65 = linear @ (adaptation_matrix(display.white_XYZ, WORKING_SPACES["lin-srgb"].white_XYZ)
                        @ display.rgb_to_XYZ).T
    ours = apply(cpu(config, ocio_config.DISPLAY_REFERENCE, done.display_colour_space), XYZ_d65)
    theirs = apply(builtin(style), XYZ_d65 * scale)
    assert np.max(np.abs(ours - theirs)) < STEP_10BIT


# --- the written config: loads, validates, and encodes as Starkiln does --------------------

def all_displays(tmp_path):
    return [*PRESETS, str(DOME), str(gamma_profile(tmp_path))]


def test_config_loads_validates_and_names_what_it_holds(tmp_path):
    config, done = written(tmp_path, str(DOME))
    names = set(config.getColorSpaceNames())
    assert set(WORKING_SPACES) <= names and {"raw", "CIE-XYZ-D65"} <= names
    assert config.getRoleColorSpace("aces_interchange") == "aces2065-1"
    assert config.getRoleColorSpace("cie_xyz_d65_interchange") == "CIE-XYZ-D65"
    assert config.getRoleColorSpace("scene_linear") == "acescg"
    assert list(config.getDisplays()) == [done.display_name] == ["Harbourlight Dome 8K laser"]
    assert list(config.getViews(done.display_name)) == [ocio_config.VIEW_NAME]
    assert config.getMajorVersion() == 2
    # OCIO resolves the aliases the studio configs use:
    assert config.getColorSpace("Linear Rec.709 (sRGB)").getName() == "lin-srgb"
    assert config.getColorSpace("ACEScg").getName() == "acescg"
    manifest = json.loads((done.path / ocio_config.MANIFEST_NAME).read_text())
    assert manifest["files"] == ["config.ocio"] and manifest["starkiln_ocio"] == 1


@pytest.mark.parametrize("curve", ocio_config.CURVES)
def test_view_gives_starkiln_code_values_for_every_display(tmp_path, curve):
    rng = np.random.default_rng(1011)
    worst = {}
    for spec in all_displays(tmp_path):
        display = get_display(spec)
        config, done = written(tmp_path, display, curve, name=display.name.replace(" ", "_")
                               .replace(",", ""))
        for ws_name, space in WORKING_SPACES.items():
            linear_display = rng.uniform(0.0, 1.0, (1000, 3))  # inside the display gamut
            rgb_ws = linear_display @ np.linalg.inv(starkiln_matrix(space, display)).T
            expected = display.encode(linear_display)  # Starkiln's own encoding
            got = apply(cpu(config, ws_name, done.display_name, done.view_name, FORWARD), rgb_ws)
            worst[(display.name, ws_name)] = float(np.max(np.abs(got - expected)))
    assert max(worst.values()) < STEP_10BIT, worst


def test_sampled_curve_file_is_used_for_a_sampled_config(tmp_path):
    _, exact = written(tmp_path, "rec2020", "exact")
    _, sampled = written(tmp_path, "rec2020", "sampled")
    assert exact.files == ("config.ocio",)
    assert sampled.files == ("config.ocio", ocio_config.CURVE_NAME)
    text = (sampled.path / ocio_config.CURVE_NAME).read_text()
    assert 'halfDomain="true"' in text  # [ST2136-1] attribute for a half-float domain


@pytest.mark.parametrize("curve", ocio_config.CURVES)
def test_outside_the_gamut_the_view_clamps_each_channel(tmp_path, curve):
    display = get_display(str(DOME))
    config, done = written(tmp_path, display, curve)
    space = WORKING_SPACES["lin-rec2020"]  # wider than the dome's primaries
    rng = np.random.default_rng(7)
    linear_display = rng.uniform(-0.5, 1.8, (1000, 3))
    linear_display[0] = [-0.2, 0.5, 1.5]
    rgb_ws = linear_display @ np.linalg.inv(starkiln_matrix(space, display)).T
    got = apply(cpu(config, "lin-rec2020", done.display_name, done.view_name, FORWARD), rgb_ws)
    clamped = np.clip(linear_display, 0.0, 1.0)  # per channel, no gamut mapping
    assert np.max(np.abs(got - display.encode(clamped))) < STEP_10BIT
    assert got[0, 0] == pytest.approx(0.0, abs=1e-5) and got[0, 2] == pytest.approx(1.0, abs=1e-5)
    assert np.all(got[linear_display < 0] < 1e-5) and np.all(got[linear_display > 1] > 1 - 1e-5)


def test_a_star_rendered_into_a_working_space_shows_as_rendered_for_the_display(tmp_path):
    # Module docstring claim: CAT(W -> D) CAT(S -> W) = CAT(S -> D) for the von Kries-type
    # adaptations, so the view reproduces the direct render's chromaticity (up to the
    # normalisation, which scales, and the gamut mapping, which these in-gamut stars skip).
    from starkiln.engine.pipeline.render import render
    from starkiln.engine.pipeline.settings import Settings

    dome = get_display(str(DOME))
    config, done = written(tmp_path, dome)
    temperatures_K = np.geomspace(3500.0, 12000.0, 40)
    direct = render(Settings(display=dome, scene_white="D65"), temperatures_K)
    in_ws = render(Settings(display="acescg", scene_white="D65"), temperatures_K)
    ok = direct.in_gamut & in_ws.in_gamut
    assert ok.sum() > 20
    got = apply(cpu(config, "acescg", done.display_name, done.view_name, FORWARD),
                0.5 * in_ws.rgb_linear[ok])
    linear = dome.decode(got)
    linear /= linear.max(axis=1, keepdims=True)  # max-channel normalisation, as the render
    np.testing.assert_allclose(linear, direct.rgb_linear[ok], atol=2e-3)


# --- bad input and safe writing ------------------------------------------------------------

def entries(folder: Path) -> set[str]:
    return set(os.listdir(folder))


def test_cli_writes_and_replaces_only_its_own_folder(tmp_path, capsys):
    out = tmp_path / "studio"
    code, text, err = run(["ocio", DOME, out], capsys)
    assert code == 0 and err == "" and "config.ocio" in text
    first = (out / "config.ocio").read_text()
    code, _, err = run(["ocio", "dci-p3", out], capsys)
    assert code == 2 and one_line_error(err) and str(out) in err and "--force" in err
    assert (out / "config.ocio").read_text() == first
    code, _, err = run(["ocio", "dci-p3", out, "--force"], capsys)
    assert code == 0 and err == ""
    assert "dci-p3" in (out / "config.ocio").read_text()
    assert entries(tmp_path) == {"studio"}  # no temporary folder left beside it


@pytest.mark.parametrize("case", ["file", "foreign", "added", "symlink"])
def test_cli_refuses_what_it_did_not_write(tmp_path, capsys, case):
    out = tmp_path / "target"
    if case == "file":
        out.write_text("keep me")
    else:
        assert run(["ocio", "srgb", out], capsys)[0] == 0
        if case == "foreign":
            (out / ocio_config.MANIFEST_NAME).unlink()
        elif case == "added":
            (out / "notes.txt").write_text("mine")
        else:
            link = tmp_path / "link"
            link.symlink_to(out, target_is_directory=True)
            out = link
    before = {p.name: p.read_bytes() for p in (out.iterdir() if out.is_dir() else [])}
    code, text, err = run(["ocio", "dci-p3", out, "--force"], capsys)
    assert code == 2 and one_line_error(err) and str(out) in err and "accepted" in err
    if case == "file":
        assert out.read_text() == "keep me"
    else:
        assert {p.name: p.read_bytes() for p in out.iterdir()} == before


@pytest.mark.parametrize("display, words", [
    ("no-such-display", ["no-such-display", "srgb", ".json"]),
    ("acescg", ["working space", "srgb"]),
])
def test_cli_names_an_unknown_display(tmp_path, capsys, display, words):
    code, _, err = run(["ocio", display, tmp_path / "o"], capsys)
    assert code == 2 and one_line_error(err) and all(w in err for w in words)
    assert entries(tmp_path) == set()


def test_cli_names_a_profile_that_does_not_load(tmp_path, capsys):
    bad = tmp_path / "broken.json"
    bad.write_text('{"starkiln_display": 1, "primaries_xy": ')
    code, _, err = run(["ocio", bad, tmp_path / "o"], capsys)
    assert code == 2 and one_line_error(err) and str(bad) in err and "JSON" in err
    assert entries(tmp_path) == {"broken.json"}


def test_cli_names_a_missing_parent_folder(tmp_path, capsys):
    code, _, err = run(["ocio", "srgb", tmp_path / "nowhere" / "o"], capsys)
    assert code == 2 and one_line_error(err) and "nowhere" in err


def test_a_failed_write_leaves_the_old_folder_and_no_temporary(tmp_path, monkeypatch):
    out = tmp_path / "studio"
    ocio_config.write_ocio_config("srgb", out)
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    real = ocio_config._write_file

    def failing(path, data):
        if path.name == ocio_config.CONFIG_NAME:
            raise OSError(28, "No space left on device", str(path))
        real(path, data)

    monkeypatch.setattr(ocio_config, "_write_file", failing)
    with pytest.raises(OSError):
        ocio_config.write_ocio_config("dci-p3", out, overwrite=True, curve="sampled")
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert entries(tmp_path) == {"studio"}
    with pytest.raises(OSError):
        ocio_config.write_ocio_config("dci-p3", tmp_path / "new", curve="sampled")
    assert entries(tmp_path) == {"studio"}


def test_a_folder_a_killed_run_left_is_removed_by_the_next_run(tmp_path):
    pid = 4_000_000
    while True:  # a process id no process has (POSIX kill(2) with signal 0: ESRCH)
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            break
        except PermissionError:
            pass
        pid += 1
    left = tmp_path / f".dome.starkiln-{pid}-abcd1234.tmp"
    left.mkdir()
    (left / "config.ocio").write_text("half")
    young = tmp_path / f".dome.starkiln-{pid}-efgh5678.tmp"
    young.mkdir()
    old_s = os.stat(left).st_mtime - 3600
    os.utime(left, (old_s, old_s))
    ocio_config.write_ocio_config("srgb", tmp_path / "dome")
    assert entries(tmp_path) == {"dome", young.name}  # a young one may still be running


def test_bad_options_are_named(tmp_path):
    with pytest.raises(StarkilnError, match="adaptation 'sideways'"):
        ocio_config.write_ocio_config("srgb", tmp_path / "o", adaptation="sideways")
    with pytest.raises(StarkilnError, match="curve 'wiggly'.*exact, sampled"):
        ocio_config.build_config("srgb", curve="wiggly")
    assert entries(tmp_path) == set()
