"""Comparing: pins, A/B settings files, and Copy command line (pytest-qt, offscreen).

References beside each check: the pin strips against the render path through the monitor
conversion (:func:`starkiln.engine.colour.monitor.rendered_on_monitor`) and against
colour-science's RGB-to-RGB conversion (``colour.RGB_to_RGB``, Bradford, matrices derived from
the primaries as SMPTE RP 177 gives them, then the IEC 61966-2-1 sRGB encoding) for a Display P3
pin, within one 8-bit code value; the copied command run through the real ``starkiln colour
--json`` in a subprocess.
"""

import json
import shlex
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest
from PySide6 import QtGui, QtWidgets

from starkiln.engine.colour.monitor import rendered_on_monitor
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings, save_settings
from starkiln.gui.model import MAX_PINS, PIN_TEMPERATURES_K, WindowModel
from test_gui_support import escaped, pytestmark, shared_window, store, window  # noqa: F401


def _cells(strip):
    return np.array([strip.cell_colour(i) for i in range(strip.cell_count)])


# -- the model, no display -----------------------------------------------------------------------
def test_model_pins_four_and_refuses_a_fifth():
    m = WindowModel()
    rejected = []
    m.events.rejected.connect(rejected.append)
    for white in ("D65", "D50", "D75", "E"):
        m.change(scene_white=white)
        m.pin_current()
    assert [p.settings.scene_white for p in m.pins] == ["D65", "D50", "D75", "E"]
    with pytest.raises(StarkilnError, match="at most 4"):
        m.pin_current()
    assert len(m.pins) == MAX_PINS and len(rejected) == 1
    m.unpin(1)
    assert [p.settings.scene_white for p in m.pins] == ["D65", "D75", "E"]
    with pytest.raises(StarkilnError, match="does not exist"):
        m.unpin(7)


def test_pin_strips_are_the_render_path_on_the_monitor_at_the_viewing_level():
    m = WindowModel()
    p3 = Settings(display="display-p3", scene_white="D50")
    m.pin_settings(p3)
    m.set_viewing_level(0.25)
    (strip,) = m.pin_strips()
    expected, clipped = rendered_on_monitor(render(p3, np.asarray(PIN_TEMPERATURES_K)),
                                            m.monitor, viewing_level=0.25)
    np.testing.assert_array_equal(strip.monitor_rgb_8bit, expected)
    np.testing.assert_array_equal(strip.monitor_clipped, clipped)
    (night,) = m.pin_strips(at_magnitude=True)  # the dimmed colours at the current magnitude
    r = render(p3, np.asarray(PIN_TEMPERATURES_K), m.magnitude)
    np.testing.assert_array_equal(night.monitor_rgb_8bit,
                                  rendered_on_monitor(r, m.monitor, dimmed=True,
                                                      viewing_level=0.25)[0])


def test_ab_reads_both_files_or_changes_nothing(tmp_path):
    m = WindowModel()
    a, b, bad = tmp_path / "a.toml", tmp_path / "b.toml", tmp_path / "bad.toml"
    save_settings(Settings(scene_white="D50"), a)
    save_settings(Settings(display="display-p3"), b)
    bad.write_text('scene_white = "D51"\n', encoding="utf-8")
    m.load_ab(a, b)
    assert [p.role for p in m.pins] == ["A", "B"]
    with pytest.raises(StarkilnError, match="bad.toml"):
        m.load_ab(a, bad)
    assert [p.label for p in m.pins] == ["A: a.toml", "B: b.toml"]
    assert m.flip_ab() == "A" and m.settings.scene_white == "D50"
    assert m.flip_ab() == "B" and m.settings.display.name == "display-p3"
    assert m.flip_ab() == "A"
    m.pin_current()
    m.pin_current()
    with pytest.raises(StarkilnError, match="unpin"):  # four pinned: a fifth is refused
        m.pin_current()
    m.load_ab(b, a)  # replaces the pair, keeps the two other pins
    assert [p.role for p in m.pins] == ["", "", "A", "B"]


# -- the window ----------------------------------------------------------------------------------
def test_pins_in_the_window_fifth_refused_in_the_status_bar(window, qapp):
    assert not window.compare_dock.isVisible()
    for white in ("D65", "D50", "D75", "E"):
        window.model.change(scene_white=white)
        assert window.pin_current()
    qapp.processEvents()
    assert window.compare_dock.isVisible()
    assert not window.pin_current()
    assert "at most 4" in window.statusBar().currentMessage()
    assert [r.isVisible() for r in window.compare.rows] == [True] * 4
    window.compare.rows[0].unpin.click()
    qapp.processEvents()
    assert [p.settings.scene_white for p in window.model.pins] == ["D50", "D75", "E"]
    assert [r.isVisible() for r in window.compare.rows] == [True, True, True, False]


def test_pins_survive_main_view_changes_and_paint_the_models_colours(window, qapp):
    window.model.change(display="display-p3")
    window.pin_current()
    window.model.change(display="srgb", scene_white="D50", gamut="clip")
    window.pin_current()
    window.model.change(scene_white="D75", vision="none")  # the main view moves on
    window.model.set_temperature(2500.0)
    qapp.processEvents()
    pins = window.model.pins
    assert pins[0].settings == Settings(display="display-p3")
    assert pins[1].settings == Settings(scene_white="D50", gamut="clip")
    t = np.asarray(PIN_TEMPERATURES_K)
    for row, pin in zip(window.compare.rows, pins):
        expected, _ = rendered_on_monitor(render(pin.settings, t), window.model.monitor)
        np.testing.assert_array_equal(_cells(row.strip), expected)
        # and what is painted, read back from the widget, in a cell's centre
        img = row.strip.grab().toImage()
        for i in (0, 8, 14):
            c = img.pixelColor(row.strip.cell_rect(i).center())
            assert (c.red(), c.green(), c.blue()) == tuple(int(v) for v in expected[i])


def test_p3_pin_against_colour_science(window, qapp):
    """colour-science: Display P3 linear RGB -> sRGB (Bradford; same D65 white), sRGB-encoded."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour
    p3 = Settings(display="display-p3")
    window.model.pin_settings(p3)
    qapp.processEvents()
    spaces = []
    for name in ("Display P3", "sRGB"):
        space = colour.RGB_COLOURSPACES[name].copy()
        space.use_derived_transformation_matrices(True)
        spaces.append(space)
    lin = colour.RGB_to_RGB(render(p3, np.asarray(PIN_TEMPERATURES_K)).rgb_linear, *spaces,
                            chromatic_adaptation_transform="Bradford")
    ref = 255.0 * colour.cctf_encoding(np.clip(lin, 0.0, 1.0), "sRGB")
    painted = _cells(window.compare.rows[0].strip)
    assert np.max(np.abs(painted - ref)) <= 1.0  # within 1/255
    outside = np.any((lin < -1e-4) | (lin > 1 + 1e-4), axis=-1)
    assert [window.compare.rows[0].strip.cell_clipped(i) for i in range(len(outside))] == \
        outside.tolist()


def test_ab_dialog_flip_and_bad_file_inline(window, qapp, tmp_path, monkeypatch):
    a, b, bad = tmp_path / "warm.toml", tmp_path / "p3.toml", tmp_path / "broken.toml"
    save_settings(Settings(scene_white="D50"), a)
    save_settings(Settings(display="display-p3"), b)
    bad.write_text("gamut = [1, 2\n", encoding="utf-8")
    answers = iter([str(a), str(b), str(a), str(bad)])
    monkeypatch.setattr(QtWidgets.QFileDialog, "getOpenFileName",
                        staticmethod(lambda *args, **kw: (next(answers), "")))
    assert window._ab_dialog()
    qapp.processEvents()
    assert [p.label for p in window.model.pins] == ["A: warm.toml", "B: p3.toml"]
    assert window.compare.flip_button.isEnabled()
    window.action_flip_ab.trigger()
    assert window.model.settings.scene_white == "D50"
    window.action_flip_ab.trigger()
    assert window.model.settings.display.name == "display-p3"
    assert not window._ab_dialog()  # the bad file: one line inline, the pair kept
    qapp.processEvents()
    err = window.compare.error
    assert err.isVisible() and "broken.toml" in err.text() and "\n" not in err.text()
    assert [p.label for p in window.model.pins] == ["A: warm.toml", "B: p3.toml"]
    assert window.last_message is None  # inline, not a message box


def _run(line):
    """Run the copied line with this interpreter's ``starkiln`` (the installed entry point)."""
    words = shlex.split(line)
    assert words[:2] == ["starkiln", "colour"]
    exe = Path(sys.executable).with_name("starkiln")
    cmd = [str(exe)] + words[1:] if exe.exists() else [sys.executable, "-m", "starkiln"] + words[1:]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def _same_as_window(window, record):
    at = window.model.colour.at_magnitude  # what the night swatch shows; the JSON's colour
    assert record["rgb_encoded"] == [round(float(v), 6) for v in at.rgb_encoded]
    assert record["rgb_dimmed_encoded"] == [round(float(v), 6) for v in at.rgb_dimmed_encoded]
    assert record["magnitude"] == window.model.magnitude
    assert record["temperature_K"] == window.model.temperature_K


def test_copy_command_line_reproduces_the_render(window, qapp, tmp_path, monkeypatch):
    from starkiln.gui.model import demo_display_path

    monkeypatch.setattr(window, "profile_dir", lambda: tmp_path / "profiles")
    cases = [
        {},
        {"scene_white": "D50", "display": "display-p3", "gamut": "clip", "aperture_mm": 80.0,
         "transmission": 0.9, "night_tint": 0.3, "vision": "mesopic", "compensate": True},
    ]
    for fields in cases:
        window.model.set_settings(Settings(**fields), origin="file")
        window.model.build_table()
        window.audition.slider.setValue(window.audition.slider.value() + 37)  # a table step
        assert window.model.table_ready
        line = window.copy_command_line()
        assert QtGui.QGuiApplication.clipboard().text() == line
        _same_as_window(window, _run(line))
    window.model.open_display_profile(demo_display_path())  # a custom JSON display profile
    window.model.set_magnitude(3.2)
    line = window.copy_command_line()
    words = shlex.split(line)
    profile = Path(words[words.index("--display") + 1])
    assert profile.parent == tmp_path / "profiles" and profile.suffix == ".json"
    _same_as_window(window, _run(line))
    assert window.copy_command_line() == line  # the same display: the same saved profile


def test_compare_keys_are_bound_and_work(window, qapp):
    """Ctrl+P pins, Ctrl+Shift+L copies the command line (issue 12's keys), Ctrl+Shift+B flips."""
    from starkiln.gui.window import SHORTCUTS

    for key, action in (("pin", window.action_pin), ("copy-command-line",
                                                     window.action_copy_command),
                        ("flip-ab", window.action_flip_ab)):
        assert action.shortcut() == QtGui.QKeySequence(SHORTCUTS[key]), key
    assert SHORTCUTS["pin"] == "Ctrl+P" and SHORTCUTS["copy-command-line"] == "Ctrl+Shift+L"
    window.action_pin.trigger()
    assert window.model.pins[0].settings == window.model.settings
    window.action_copy_command.trigger()
    words = shlex.split(QtGui.QGuiApplication.clipboard().text())
    assert words[:4] == ["starkiln", "colour", "--temperature", "5772.0"]
    window.action_flip_ab.trigger()  # no A/B pair: said inline, nothing changes
    assert "no A/B pair" in window.compare.error.text()


@pytest.mark.parametrize("size, floating", [((1024, 680), True), ((1280, 1100), False)])
def test_pins_never_squeeze_the_views(qapp, size, floating):
    """At the minimum size the panel floats over the window; where there is room it docks and
    takes the height its pins want. Either way the views keep at least their own minimum
    (Qt's minimumSizeHint) or what they had."""
    from PySide6 import QtTest

    from starkiln.gui import create_window

    w = create_window(Settings(), 5772.0, store=None)
    w.resize(*size)
    w.show()
    QtTest.QTest.qWaitForWindowExposed(w)
    qapp.processEvents()
    before = w.centralWidget().height()
    for white in ("D65", "D50", "D75", "E"):
        w.model.change(scene_white=white)
        w.pin_current()
    for _ in range(5):
        qapp.processEvents()
    assert w.compare_dock.isVisible() and w.compare_dock.isFloating() == floating
    central = w.centralWidget()
    assert central.height() >= min(before, central.minimumSizeHint().height())
    rows = w.compare.rows
    if not floating:  # every row shown whole, no scrolling
        assert all(r.visibleRegion().boundingRect().height() == r.height() for r in rows)
    w.close()
    w.deleteLater()
    qapp.processEvents()
