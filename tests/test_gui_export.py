"""Export dialogs write exactly what the command line writes; the screenshot command works.

The reference for "the same file" is the command line itself (``starkiln lut``,
``starkiln palette``), run with the same settings saved as TOML: the files must
be byte-identical.
"""

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from PySide6 import QtGui

from starkiln.cli.main import main as cli_main
from starkiln.engine.pipeline.render import render
from starkiln.engine.colour.quantisation import to_8bit
from test_gui_support import escaped, pytestmark, shared_window, window  # noqa: F401

ROOT = Path(__file__).resolve().parent.parent


def _look(window):
    """A non-default look, so that the settings really travel through the TOML file."""
    window.model.change("test", scene_white="D50", display="display-p3", gamut="scale",
                          aperture_mm=80.0)


def _cli(args, capsys):
    code = cli_main(args)
    out = capsys.readouterr()
    assert code == 0, out.err
    return out.out


def test_lut_dialog_matches_the_command_line(window, tmp_path, capsys):
    _look(window)
    toml = tmp_path / "look.toml"
    assert window.save_settings_file(toml)
    d = window.export_dialog("lut")
    gui_out = tmp_path / "gui.png"
    d.path.setText(str(gui_out))
    d.t_min.setText("2000")
    d.t_max.setText("20000")
    d.axis.setCurrentText("log")
    d.with_mags.setChecked(True)
    d.m_bright.setText("-1")
    d.m_faint.setText("7")
    d.width_edit.setText("64")
    d.height_edit.setText("8")
    d.depth.setCurrentIndex(d.depth.findData(16))
    d.alpha.setChecked(True)
    d.premultiply.setChecked(True)
    d.export_button.click()
    assert d.error.isHidden(), d.error.text()
    assert gui_out.exists()
    cli_out = tmp_path / "cli.png"
    _cli(["lut", str(cli_out), "--settings", str(toml), "--temperatures", "2000:20000",
          "--axis", "log", "--magnitudes", "-1:7", "--size", "64x8", "--depth", "16",
          "--alpha", "--premultiply"], capsys)
    assert gui_out.read_bytes() == cli_out.read_bytes()
    assert "--magnitudes -1:7" in d.command.text()
    # the preview is the same texture at 8 bits: its first texel is the render path's colour
    from starkiln.engine.exports.texture_spec import lut_axes

    t, m = lut_axes(d.spec_for(gui_out))
    r = render(window.model.settings, t[0], m[0])
    img = d.preview_image
    assert (img.width(), img.height()) == (64, 8)
    c = img.pixelColor(0, 0)
    assert (c.red(), c.green(), c.blue()) == tuple(int(v) for v in to_8bit(r.rgb_dimmed_encoded))


def test_lut_strip_default_matches_the_command_line(window, tmp_path, capsys):
    toml = tmp_path / "look.toml"
    assert window.save_settings_file(toml)
    d = window.export_dialog("lut")
    gui_out = tmp_path / "strip.png"
    d.path.setText(str(gui_out))
    d.export_button.click()
    assert d.error.isHidden(), d.error.text()
    cli_out = tmp_path / "strip-cli.png"
    _cli(["lut", str(cli_out), "--settings", str(toml)], capsys)
    assert gui_out.read_bytes() == cli_out.read_bytes()
    # exporting again without "replace" is refused inline, the file stays as it was
    before = gui_out.read_bytes()
    d.width_edit.setText("32")
    assert not d.export()
    assert "exists" in d.error.text() and "Replace an existing file" in d.error.text()
    assert gui_out.read_bytes() == before
    d.overwrite.setChecked(True)
    assert d.export()
    assert gui_out.read_bytes() != before


@pytest.mark.parametrize("suffix", [".json", ".csv", ".gpl", ".png"])
def test_palette_dialog_matches_the_command_line(window, tmp_path, capsys, suffix):
    _look(window)
    toml = tmp_path / "look.toml"
    assert window.save_settings_file(toml)
    d = window.export_dialog("palette")
    gui_out = tmp_path / f"gui{suffix}"
    d.path.setText(str(gui_out))
    d.t_min.setText("2500")
    d.t_max.setText("12000")
    d.steps.setText("7")
    d.axis.setCurrentText("mired")
    d.name.setText("Kiln dome test")
    assert d.export(), d.error.text()
    cli_out = tmp_path / f"cli{suffix}"
    _cli(["palette", str(cli_out), "--settings", str(toml), "--temperatures", "2500:12000",
          "--steps", "7", "--axis", "mired", "--name", "Kiln dome test"], capsys)
    assert gui_out.read_bytes() == cli_out.read_bytes()
    # the preview strip shows the palette's own colours converted to the monitor (issue 12,
    # item 1: the file keeps the display's values, the window paints the monitor's)
    from starkiln.engine.colour.monitor import rendered_on_monitor
    from starkiln.engine.exports.palettes import build_palette

    p = build_palette(window.model.settings, range_K=(2500.0, 12000.0), steps=7, axis="mired")
    shown, _ = rendered_on_monitor(p.rendered, window.model.monitor)
    assert d.strip.cell_count == 7
    assert all(d.strip.cell_colour(i) == tuple(int(v) for v in shown[i]) for i in range(7))


def test_palette_classes_match_the_command_line(window, tmp_path, capsys):
    toml = tmp_path / "look.toml"
    assert window.save_settings_file(toml)
    d = window.export_dialog("palette")
    d.kind.setCurrentIndex(d.kind.findData("classes"))
    d.classes.setText("O5V,B0V,A0V,G2V,M0V")
    gui_out = tmp_path / "classes.gpl"
    d.path.setText(str(gui_out))
    assert d.export(), d.error.text()
    cli_out = tmp_path / "classes-cli.gpl"
    _cli(["palette", str(cli_out), "--settings", str(toml), "--classes", "O5V,B0V,A0V,G2V,M0V"],
         capsys)
    assert gui_out.read_bytes() == cli_out.read_bytes()


def test_export_dialogs_report_bad_options_inline(window, tmp_path):
    d = window.export_dialog("lut")
    d.path.setText(str(tmp_path / "x.png"))
    d.width_edit.setText("wide")
    assert not d.export()
    assert "texture width: 'wide' is not a number" in d.error.text()
    d.width_edit.setText("64")
    d.t_min.setText("9000")
    d.t_max.setText("3000")
    assert not d.export()
    assert not d.error.isHidden()
    d.t_min.setText("1000")
    d.path.setText(str(tmp_path / "x.tiff"))
    assert not d.export()
    assert "unknown texture extension" in d.error.text()
    assert not (tmp_path / "x.png").exists() and not (tmp_path / "x.tiff").exists()
    p = window.export_dialog("palette")
    p.steps.setText("2.5")
    p.path.setText(str(tmp_path / "p.json"))
    assert not p.export()
    assert "steps" in p.error.text()


def test_screenshot_in_process(window, tmp_path, capsys):
    toml = tmp_path / "look.toml"
    assert window.save_settings_file(toml)
    out = tmp_path / "shot.png"
    assert cli_main(["--screenshot", str(out), "--settings", str(toml), "--temperature",
                     "4000"]) == 0
    capsys.readouterr()
    img = QtGui.QImage(str(out))
    assert (img.width(), img.height()) == (1280, 800)
    # the large swatch shows the render path's colour of 4000 K with those settings
    rgb = tuple(int(v) for v in to_8bit(render(window.model.settings, 4000.0).rgb_encoded))
    rgb_img = img.convertToFormat(QtGui.QImage.Format.Format_RGB888)  # keep it alive
    a = np.array(rgb_img.constBits(), dtype=np.uint8, copy=True)
    a = a.reshape(800, rgb_img.bytesPerLine())[:, :1280 * 3].reshape(800, 1280, 3)
    assert int(np.all(a == rgb, axis=-1).sum()) > 20000


def test_screenshot_command_sets_offscreen_itself(tmp_path):
    env = {k: v for k, v in os.environ.items()
           if k not in ("QT_QPA_PLATFORM", "DISPLAY", "WAYLAND_DISPLAY")}
    out = tmp_path / "cli-shot.png"
    r = subprocess.run([sys.executable, "-m", "starkiln", "--screenshot", str(out),
                        "--temperature", "6500"], cwd=ROOT, env=env, capture_output=True,
                       text=True, timeout=60)
    assert r.returncode == 0, r.stderr
    assert QtGui.QImage(str(out)).size().toTuple() == (1280, 800)
    bad = subprocess.run([sys.executable, "-m", "starkiln", "--screenshot", str(out),
                          "--temperature", "20"], cwd=ROOT, env=env, capture_output=True,
                         text=True, timeout=60)
    assert bad.returncode == 2
    assert "temperature 20 K is outside the supported range" in bad.stderr


def test_no_command_opens_the_window(qapp, monkeypatch, tmp_path):
    from PySide6 import QtCore, QtWidgets

    import starkiln.gui.app
    from starkiln.cli.main import build_parser

    store = QtCore.QSettings(str(tmp_path / "state.ini"), QtCore.QSettings.Format.IniFormat)
    monkeypatch.setattr(starkiln.gui.app, "user_store", lambda: store)  # never the user's own store
    before = set(QtWidgets.QApplication.topLevelWidgets())
    opened = []

    def close_soon():
        for w in QtWidgets.QApplication.topLevelWidgets():
            if w not in before and w.objectName() == "starkiln-window" and w.isVisible():
                opened.append((w.model.temperature_K, w.model.settings.gamut))
                w.close()
        qapp.quit()

    toml = tmp_path / "look.toml"
    toml.write_text('starkiln_settings = 1\ngamut = "clip"\n')
    QtCore.QTimer.singleShot(300, close_soon)
    args = build_parser().parse_args(["--settings", str(toml), "--temperature", "4321"])
    assert starkiln.gui.app.run(args) == 0
    assert opened == [(4321.0, "clip")]
    assert store.value("session/temperature_K") is not None  # state kept on close


def test_no_command_without_a_display_says_so(tmp_path):
    env = {k: v for k, v in os.environ.items()
           if k not in ("QT_QPA_PLATFORM", "DISPLAY", "WAYLAND_DISPLAY")}
    r = subprocess.run([sys.executable, "-m", "starkiln"], cwd=ROOT, env=env,
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 2
    assert "no display found" in r.stderr and "--screenshot" in r.stderr
