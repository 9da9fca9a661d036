"""``starkiln lut`` and ``starkiln palette`` end to end, read back with independent readers.

References used here:
- Pillow (8-bit PNG), pypng (16-bit PNG), the OpenEXR Python bindings (EXR) as
  readers independent of the writers under test.
- Texel centres (i + 0.5) / W and (j + 0.5) / H, row 0 the brightest (issue 4;
  OpenGL 4.6 section 8.14.2 for the centre convention).
- Mired = 10^6 / T (common practice).
- POSIX rename(2) atomicity within one file system (common practice): an
  interrupted export leaves the old file.
"""

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from starkiln.cli.main import build_parser, main
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings

REPO = Path(__file__).resolve().parent.parent


def run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def centres_mired(a, b, n):
    """Texel-centre temperatures of a mired axis, written out from the definitions."""
    u = (np.arange(n) + 0.5) / n
    return 1e6 / ((1 - u) * 1e6 / a + u * 1e6 / b)


def centres_linear(a, b, n):
    return a + (np.arange(n) + 0.5) / n * (b - a)


def read_png8(path):
    from PIL import Image

    with Image.open(path) as img:
        return np.asarray(img), dict(img.text)


def read_png16(path):
    import png

    w, h, rows, info = png.Reader(filename=str(path)).asDirect()
    arr = np.array([np.asarray(r) for r in rows]).reshape(h, w, info["planes"])
    return arr, info


def read_exr(path):
    import OpenEXR

    with OpenEXR.File(str(path), separate_channels=True) as f:
        ch = f.channels()
        names = [n for n in "RGBA" if n in ch]
        return np.stack([ch[n].pixels for n in names], axis=-1), dict(f.header())


def one_line_error(err):
    lines = err.strip().splitlines()
    return len(lines) == 1 and lines[0].startswith("starkiln: error:")


# --- textures -------------------------------------------------------------------------------

def test_png8_strip_matches_render_at_texel_centres(tmp_path, capsys):
    out = tmp_path / "strip.png"
    code, text, err = run(["lut", out, "--size", "48x3", "--temperatures", "1500:30000"], capsys)
    assert code == 0, err
    arr, chunks = read_png8(out)
    assert arr.shape == (3, 48, 3)
    ref = render(Settings(), centres_mired(1500.0, 30000.0, 48)).rgb_encoded
    for row in arr:  # a strip: every row holds full colour
        assert np.abs(row / 255.0 - ref).max() <= 0.5 / 255 + 1e-12
    meta = json.loads(chunks["starkiln"])
    assert Settings.from_dict(meta["settings"]) == Settings()
    assert meta["axes"]["u"]["mapping"] == "mired"


def test_png16_linear_axis_matches_render(tmp_path, capsys):
    out = tmp_path / "s16.png"
    code, _, err = run(["lut", out, "--size", "40x2", "--depth", "16", "--axis", "linear",
                        "--temperatures", "2000:12000", "--alpha", "--display", "display-p3"],
                       capsys)
    assert code == 0, err
    arr, info = read_png16(out)
    assert info["bitdepth"] == 16 and arr.shape == (2, 40, 4)
    s = Settings().replace(display="display-p3")
    ref = render(s, centres_linear(2000.0, 12000.0, 40))
    # 16-bit: within half a level after rounding
    assert np.abs(arr[0, :, :3] / 65535.0 - ref.rgb_encoded).max() <= 0.5 / 65535 + 1e-12
    assert (arr[..., 3] == 65535).all()  # intensity 1 without magnitudes


def test_exr_strip_matches_render_in_float(tmp_path, capsys):
    out = tmp_path / "s.exr"
    code, _, err = run(["lut", out, "--size", "64x2", "--white", "D50", "--axis", "log"],
                       capsys)
    assert code == 0, err
    arr, header = read_exr(out)
    assert arr.dtype == np.float32 and arr.shape == (2, 64, 3)
    a, b = 1000.0, 40000.0
    t = a * (b / a) ** ((np.arange(64) + 0.5) / 64)  # log axis: T = A (B/A)^u
    ref = render(Settings().replace(scene_white="D50"), t).rgb_linear
    assert np.abs(arr[1] - ref).max() <= 1e-6
    meta = json.loads(header["starkiln"])
    assert meta["texture"]["encoding"] == "display-linear"
    assert Settings.from_dict(meta["settings"]).scene_white == "D50"


@pytest.mark.parametrize("name,reader,tol", [
    ("m.png", read_png8, 0.5 / 255), ("m16.png", read_png16, 0.5 / 65535),
    ("m.exr", read_exr, 1e-6)])
def test_magnitude_texture_matches_render(tmp_path, capsys, name, reader, tol):
    out = tmp_path / name
    argv = ["lut", out, "--size", "32x8", "--magnitudes", "-1:7", "--alpha"]
    if name == "m16.png":
        argv += ["--depth", "16"]
    code, _, err = run(argv, capsys)
    assert code == 0, err
    arr, _ = reader(out)
    t = centres_mired(1000.0, 40000.0, 32)
    m = -1.0 + (np.arange(8) + 0.5) / 8 * 8.0  # row 0 (top) is the brightest
    r = render(Settings(), t[None, :], m[:, None])
    scale = 1.0 if name.endswith(".exr") else (65535.0 if "16" in name else 255.0)
    rgb = r.rgb_linear if name.endswith(".exr") else r.rgb_encoded
    assert np.abs(arr[..., :3] / scale - rgb).max() <= tol + 1e-12
    assert np.abs(arr[..., 3] / scale - r.intensity).max() <= tol + 1e-12


def test_premultiplied_exr_holds_linear_times_intensity(tmp_path, capsys):
    out = tmp_path / "p.exr"
    code, _, err = run(["lut", out, "--size", "16x4", "--magnitudes", "0:6", "--premultiply"],
                       capsys)
    assert code == 0, err
    arr, _ = read_exr(out)
    t = centres_mired(1000.0, 40000.0, 16)
    m = (np.arange(4) + 0.5) / 4 * 6.0
    r = render(Settings(), t[None, :], m[:, None])
    assert np.abs(arr - r.rgb_linear * np.asarray(r.intensity)[..., None]).max() <= 1e-6


def test_negative_ranges_parse_as_typed():
    args = build_parser().parse_args(["lut", "o.png", "--magnitudes", "-1:7",
                                      "--temperatures", "2000:9000"])
    assert args.magnitudes == "-1:7"
    args = build_parser().parse_args(["lut", "o.png", "--magnitudes", "-2.5:-0.5"])
    assert args.magnitudes == "-2.5:-0.5"
    args = build_parser().parse_args(["lut", "o.png", "--magnitudes=-1:7"])
    assert args.magnitudes == "-1:7"


def test_negative_magnitude_range_runs_end_to_end(tmp_path, capsys):
    code, text, err = run(["lut", tmp_path / "n.png", "--magnitudes", "-1:7", "--size", "8x4"],
                          capsys)
    assert code == 0, err
    assert "magnitudes -1 (top) to 7" in text


@pytest.mark.parametrize("name,extra", [
    ("r.png", ["--alpha", "--display", "display-p3", "--white", "D50", "--axis", "log"]),
    ("r16.png", ["--depth", "16", "--premultiply", "--gamut", "clip"]),
    ("r.exr", ["--alpha", "--temperatures", "1800:25000", "--observer", "cie1964"]),
])
def test_settings_from_rebuilds_an_identical_file(tmp_path, capsys, name, extra):
    old = tmp_path / name
    code, _, err = run(["lut", old, "--size", "40x3", *extra], capsys)
    assert code == 0, err
    new = tmp_path / ("again" + Path(name).suffix)
    code, _, err = run(["lut", new, "--settings-from", old], capsys)
    assert code == 0, err
    assert new.read_bytes() == old.read_bytes()


def test_settings_from_keeps_night_vision_fields(tmp_path, capsys):
    old = tmp_path / "night.exr"
    code, _, err = run(["lut", old, "--size", "16x8", "--magnitudes", "-1:9",
                        "--aperture-mm", "200", "--alpha"], capsys)
    assert code == 0, err
    new = tmp_path / "night2.exr"
    assert run(["lut", new, "--settings-from", old], capsys)[0] == 0
    assert new.read_bytes() == old.read_bytes()
    meta = json.loads(read_exr(new)[1]["starkiln"])
    assert meta["settings"]["aperture_mm"] == 200.0


def test_settings_from_with_overrides(tmp_path, capsys):
    old = tmp_path / "o.png"
    assert run(["lut", old, "--size", "40x3", "--display", "display-p3"], capsys)[0] == 0
    new = tmp_path / "n.png"
    code, _, err = run(["lut", new, "--settings-from", old, "--size", "20x2",
                        "--white", "D55"], capsys)
    assert code == 0, err
    arr, chunks = read_png8(new)
    meta = json.loads(chunks["starkiln"])
    assert arr.shape == (2, 20, 3)
    s = Settings.from_dict(meta["settings"])
    assert s.display.name == "display-p3" and s.scene_white == "D55"


def test_settings_from_a_file_without_metadata_is_refused(tmp_path, capsys):
    from PIL import Image

    plain = tmp_path / "plain.png"
    Image.new("RGB", (4, 4)).save(plain)
    code, _, err = run(["lut", tmp_path / "x.png", "--settings-from", plain], capsys)
    assert code == 2 and one_line_error(err)
    assert not (tmp_path / "x.png").exists()


@pytest.mark.parametrize("argv", [
    ["--size", "0x16"], ["--size", "16x0"], ["--size", "16385x4"], ["--size", "4x99999"],
    ["--size", "big"], ["--temperatures", "9000:3000"], ["--temperatures", "4000:4000"],
    ["--temperatures", "300:3000"], ["--temperatures", "abc"], ["--magnitudes", "7:-1"],
    ["--magnitudes", "2:2"], ["--axis", "kelvin"], ["--depth", "12"], ["--depth", "x"],
])
def test_bad_texture_options_exit_2_and_write_nothing(tmp_path, capsys, argv):
    code, _, err = run(["lut", tmp_path / "t.png", *argv], capsys)
    assert code == 2 and one_line_error(err), err
    assert list(tmp_path.iterdir()) == []


def test_depth_with_exr_is_refused(tmp_path, capsys):
    code, _, err = run(["lut", tmp_path / "t.exr", "--depth", "16"], capsys)
    assert code == 2 and one_line_error(err) and "32-bit float" in err
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("name", ["t.tif", "t.jpg", "t"])
def test_unknown_extension_exits_2(tmp_path, capsys, name):
    code, _, err = run(["lut", tmp_path / name], capsys)
    assert code == 2 and one_line_error(err) and "accepted: .png, .exr" in err
    assert list(tmp_path.iterdir()) == []


def test_missing_or_non_folder_destination_exits_2(tmp_path, capsys):
    code, _, err = run(["lut", tmp_path / "nowhere" / "t.png"], capsys)
    assert code == 2 and one_line_error(err)
    f = tmp_path / "afile"
    f.write_text("x")
    code, _, err = run(["palette", f / "p.json"], capsys)
    assert code == 2 and one_line_error(err)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["afile"]


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0,
                    reason="root may write into read-only folders")
def test_read_only_folder_exits_2(tmp_path, capsys):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    try:
        code, _, err = run(["lut", ro / "t.png"], capsys)
        assert code == 2 and one_line_error(err) and "not writable" in err
        assert list(ro.iterdir()) == []
    finally:
        ro.chmod(0o700)


def test_existing_file_is_kept_without_force(tmp_path, capsys):
    out = tmp_path / "keep.png"
    out.write_bytes(b"the artist's previous texture")
    code, _, err = run(["lut", out, "--size", "8x2"], capsys)
    assert code == 2 and one_line_error(err) and "--force" in err
    assert out.read_bytes() == b"the artist's previous texture"
    assert [p.name for p in tmp_path.iterdir()] == ["keep.png"]
    code, _, err = run(["lut", out, "--size", "8x2", "--force"], capsys)
    assert code == 0, err
    assert read_png8(out)[0].shape == (2, 8, 3)


@pytest.mark.parametrize("name", ["m.png", "m.exr", "m.gpl", "m.json"])
def test_exports_get_the_usual_file_mode(tmp_path, capsys, name):
    # a new file is created with mode 0666 less the umask (POSIX open(2), common practice),
    # not the owner-only mode of a temporary file
    mask = os.umask(0o022)
    os.umask(mask)
    cmd = "palette" if name.endswith((".gpl", ".json")) else "lut"
    assert run([cmd, tmp_path / name], capsys)[0] == 0
    assert (tmp_path / name).stat().st_mode & 0o777 == 0o666 & ~mask


def test_writer_failing_midway_leaves_the_old_file(tmp_path, monkeypatch):
    import starkiln.engine.exports.image_files
    from starkiln.engine.exports.texture_spec import TextureSpec
    from starkiln.engine.exports.textures import export_texture

    out = tmp_path / "old.png"
    out.write_bytes(b"previous good texture")

    def failing(path, array, text=None):
        with open(path, "wb") as fh:
            fh.write(b"\x89PNG\r\n\x1a\nhalf a file")
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(starkiln.engine.exports.image_files, "write_png", failing)
    with pytest.raises(OSError):
        export_texture(Settings(), TextureSpec(width=8, height=2), out, overwrite=True)
    assert out.read_bytes() == b"previous good texture"
    assert [p.name for p in tmp_path.iterdir()] == ["old.png"]  # temporary file removed


def test_sigkill_mid_write_leaves_the_old_file(tmp_path):
    from PIL import Image

    out = tmp_path / "tex.png"
    Image.new("RGB", (3, 3), (10, 20, 30)).save(out)
    before = out.read_bytes()
    marker = tmp_path / "writing"
    # The child patches the PNG writer to stop half way (after real bytes reach the
    # temporary file) so that the kill lands mid-write every time.
    code = f"""
import sys, time
import starkiln.engine.exports.image_files
def slow(path, array, text=None):
    with open(path, "wb") as fh:
        fh.write(b"\\x89PNG\\r\\n\\x1a\\n" + b"partial" * 1000)
        fh.flush()
        open({str(marker)!r}, "w").close()
        time.sleep(60)
starkiln.engine.exports.image_files.write_png = slow
from starkiln.cli.main import main
sys.exit(main(["lut", {str(out)!r}, "--size", "64x4", "--force"]))
"""
    proc = subprocess.Popen([sys.executable, "-c", code], cwd=REPO,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        deadline = time.monotonic() + 30
        while not marker.exists():
            assert proc.poll() is None, proc.stderr.read().decode()
            assert time.monotonic() < deadline, "the child never started writing"
            time.sleep(0.02)
        partial = [p for p in tmp_path.iterdir() if p.name.startswith(".tex.")]
        assert partial and partial[0].stat().st_size > 0  # the write is under way
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=10)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode == -signal.SIGKILL
    assert out.read_bytes() == before
    with Image.open(out) as img:
        assert img.getpixel((1, 1)) == (10, 20, 30)


# --- palettes -------------------------------------------------------------------------------

@pytest.mark.parametrize("name", ["p.json", "p.csv", "p.gpl", "p.png"])
def test_palette_formats_by_extension(tmp_path, capsys, name):
    out = tmp_path / name
    code, text, err = run(["palette", out, "--steps", "6", "--temperatures", "2000:20000"],
                          capsys)
    assert code == 0, err
    assert "6 swatches" in text
    data = out.read_bytes()
    if name.endswith(".json"):
        assert len(json.loads(data)["swatches"]) == 6
    elif name.endswith(".csv"):
        assert len(data.decode().strip().splitlines()) == 7  # header + 6 rows
    elif name.endswith(".gpl"):
        assert data.startswith(b"GIMP Palette\nName: ")
    else:
        assert data.startswith(b"\x89PNG\r\n\x1a\n")


def test_palette_classes(tmp_path, capsys):
    out = tmp_path / "c.json"
    code, _, err = run(["palette", out, "--classes", "B0V,A0V,G2V,K5V,M3V"], capsys)
    assert code == 0, err
    sw = json.loads(out.read_text())["swatches"]
    assert [s["spectral_class"] for s in sw] == ["B0V", "A0V", "G2V", "K5V", "M3V"]
    ref = render(Settings(), np.array([s["temperature_K"] for s in sw]))
    assert np.allclose([s["rgb_linear"] for s in sw], ref.rgb_linear, atol=0)
    code, _, err = run(["palette", tmp_path / "all.gpl", "--classes"], capsys)
    assert code == 0, err


def test_palette_mired_steps_default(tmp_path, capsys):
    out = tmp_path / "m.json"
    assert run(["palette", out, "--steps", "5", "--temperatures", "2000:10000"], capsys)[0] == 0
    t = np.array([s["temperature_K"] for s in json.loads(out.read_text())["swatches"]])
    assert np.allclose(np.diff(1e6 / t), (1e6 / 10000 - 1e6 / 2000) / 4)  # mired steps


@pytest.mark.parametrize("argv", [
    ["--steps", "1"], ["--steps", "5000"], ["--temperatures", "8000:2000"],
    ["--classes", "X9V"], ["--classes", "all", "--steps", "4"], ["--axis", "kelvin"],
    ["--columns", "0"],
])
def test_bad_palette_options_exit_2(tmp_path, capsys, argv):
    code, _, err = run(["palette", tmp_path / "p.json", *argv], capsys)
    assert code == 2 and one_line_error(err), err
    assert list(tmp_path.iterdir()) == []


def test_palette_unknown_extension_and_overwrite(tmp_path, capsys):
    code, _, err = run(["palette", tmp_path / "p.aco"], capsys)
    assert code == 2 and one_line_error(err)
    out = tmp_path / "p.gpl"
    out.write_text("GIMP Palette\nName: old\n")
    code, _, err = run(["palette", out], capsys)
    assert code == 2 and out.read_text() == "GIMP Palette\nName: old\n"
    assert run(["palette", out, "--force"], capsys)[0] == 0
    assert out.read_text().count("\n") > 5
