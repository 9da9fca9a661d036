"""Editing habits: undo and redo of settings changes, shortcuts, tooltips, words, the gamma field.

The undo checks compare with the settings objects the test itself built before and after each
change (never with what the history returns); the shortcut checks compare with Qt's own
platform key sequences (``QKeySequence.StandardKey``), which is what the platform's users type.
"""

import dataclasses

import pytest

from starkiln.engine.colour.displays import PRESETS
from starkiln.engine.pipeline.settings import Settings
from starkiln.gui.model import WindowModel, describe_change


def _changes(model):
    """A sequence of settings changes across every tab: white, display, gamut, normalisation,
    night sky, a whole file's settings; returns the settings after each step."""
    steps = []

    def step(fn):
        fn()
        steps.append(model.settings)

    step(lambda: model.change("white", scene_white="D50"))
    step(lambda: model.change("white", scene_white="blackbody:4100"))
    step(lambda: model.change("adaptation", adaptation="cat16"))
    step(lambda: model.change("display", display=PRESETS["display-p3"]))
    step(lambda: model.change_display("display", gamma=2.4, transfer="gamma"))
    step(lambda: model.change("gamut", gamut="clip"))
    step(lambda: model.change("normalisation", normalisation="luminance"))
    step(lambda: model.change("output", luminance_Y=0.3))
    step(lambda: model.change("night", aperture_mm=80.0, transmission=0.8))
    step(lambda: model.change("night", vision="none"))
    step(lambda: model.change_display("night", peak_luminance_cd_m2=12.0))
    step(lambda: model.set_settings(Settings(observer="cie1964", night_tint=0.4), "file"))
    return steps


# -- the model's history (no Qt) -------------------------------------------------------------
def test_undo_all_returns_the_original_settings_and_redo_all_the_final():
    original = Settings(scene_white="D55", pupil_mm=6.0)
    model = WindowModel(original)
    steps = _changes(model)
    assert all(a != b for a, b in zip([original] + steps, steps))  # each step changed something
    assert len(model.history) == len(steps)
    for expected in reversed([original] + steps[:-1]):
        assert model.undo()
        assert model.settings == expected
    assert model.settings == original
    assert not model.undo()  # nothing left
    for expected in steps:
        assert model.redo()
        assert model.settings == expected
    assert model.settings == steps[-1]
    assert not model.redo()


def test_undo_then_a_new_change_drops_the_redo_list():
    model = WindowModel()
    model.change("gamut", gamut="clip")
    model.change("gamut", gamut="scale")
    model.undo()
    assert model.history.can_redo
    model.change("observer", observer="cie1964")
    assert not model.history.can_redo
    model.undo()
    assert model.settings == Settings(gamut="clip")
    model.undo()
    assert model.settings == Settings()


def test_undo_redraws_through_the_same_events_and_is_not_pushed_again():
    model = WindowModel()
    seen = []
    for name in ("settings", "plots", "history"):
        getattr(model.events, name).connect(lambda c: seen.append((c.event, c.origin)))
    model.change("night", vision="none")
    model.undo()
    assert seen == [("settings", "night"), ("plots", "night"), ("history", "night"),
                    ("settings", "undo"), ("plots", "undo"), ("history", "undo")]
    assert len(model.history) == 0 and model.history.can_redo


def test_rejected_and_unchanged_settings_are_not_in_the_history():
    model = WindowModel()
    with pytest.raises(ValueError):
        model.change("night", pupil_mm=-3.0)  # the engine refuses it (1-9 mm)
    model.change("gamut", gamut=None)  # equal to the default: nothing happens
    assert len(model.history) == 0 and not model.history.can_undo


def test_the_history_keeps_its_limit():
    model = WindowModel()
    model.history.limit = 5
    for i in range(8):
        model.change("night", night_tint=0.1 * (i + 1))
    assert len(model.history) == 5
    while model.undo():
        pass
    assert model.settings == Settings(night_tint=0.1 * 3)  # the three oldest were dropped


def test_change_words_name_the_fields():
    a = Settings()
    assert describe_change(a, a.replace(gamut="clip")) == "gamut mapping"
    assert describe_change(a, a.replace(display="display-p3", pupil_mm=5.0)) == \
        "display and pupil"
    assert describe_change(a, dataclasses.replace(a, observer="cie1964", vision="none",
                                                  night_tint=0.5)) == "3 settings"


# -- the window ------------------------------------------------------------------------------
from PySide6 import QtGui, QtWidgets  # noqa: E402

from test_gui_support import escaped, pytestmark, shared_window, store, window  # noqa: E402,F401

CONTROLS = (QtWidgets.QAbstractButton, QtWidgets.QComboBox, QtWidgets.QLineEdit,
            QtWidgets.QSlider, QtWidgets.QAbstractSpinBox)


def _undo(window):
    return window.action_undo, window.action_redo


def test_edit_menu_undo_redo_round_trip_through_the_controls(window, qtbot):
    from test_gui import _choose

    original = window.model.settings
    r = window.rendering
    _choose(r.white.kind, "D50")
    _choose(r.display.display, "display-p3")
    _choose(r.output.gamut, "clip")
    _choose(r.output.normalisation, "luminance")
    assert r.output.luminance.commit_text("0.3")
    assert r.night.numbers["pupil_mm"].commit_text("5")
    r.night.compensate.setChecked(True)
    final = window.model.settings
    undo, redo = _undo(window)
    # the platform's own keys (Qt's standard key sequences), not typed-in ones
    assert undo.shortcut() == QtGui.QKeySequence(QtGui.QKeySequence.StandardKey.Undo)
    assert redo.shortcut() == QtGui.QKeySequence(QtGui.QKeySequence.StandardKey.Redo)
    assert window.undo_stack.count() == 7
    assert "dome compensation" in undo.text()
    while undo.isEnabled():
        undo.trigger()
    assert window.model.settings == original
    assert r.output.gamut.value() == original.gamut  # the controls show it
    assert r.display.display.value() == "srgb"
    assert r.night.numbers["pupil_mm"].text() == "7"
    while redo.isEnabled():
        redo.trigger()
    assert window.model.settings == final
    assert r.white.kind.value() == "D50" and r.night.compensate.isChecked()


def test_the_undo_stack_follows_the_model(window):
    m = window.model
    m.change("night", night_tint=0.2)
    m.change("night", night_tint=0.4)
    n = window.undo_stack.index()
    m.undo()
    assert window.undo_stack.index() == n - 1 and m.settings.night_tint == 0.2
    window.action_undo.trigger()
    assert m.settings == Settings() and window.undo_stack.index() == n - 2
    m.redo()
    assert window.undo_stack.index() == n - 1 and m.settings.night_tint == 0.2


def test_shortcuts_are_bound(window, qtbot):
    from starkiln.gui.window import SHORTCUTS

    actions = {"export-texture": window.action_export_texture,
               "export-palette": window.action_export_palette,
               "copy-hex": window.action_copy_hex, "next-theme": window.action_next_theme}
    for key, action in actions.items():
        assert action.shortcut() == QtGui.QKeySequence(SHORTCUTS[key]), key
    seqs = [a.shortcut().toString() for a in window.findChildren(QtGui.QAction)
            if not a.shortcut().isEmpty()]
    assert len(seqs) == len(set(seqs)), seqs  # no key does two things
    window.action_copy_hex.trigger()
    assert QtWidgets.QApplication.clipboard().text() == window.model.colour.hex
    before = window.theme.key
    window.action_next_theme.trigger()
    assert window.theme.key != before
    window.action_export_texture.trigger()
    assert window._lut_dialog.isVisible()
    window._lut_dialog.close()


def _all_controls(window):
    """Every control of the window and of its dialogs (opened once so that they exist)."""
    window.export_dialog("lut").close()
    window.export_dialog("palette").close()
    window.rendering.display.edit().close()
    out = []
    for w in window.findChildren(QtWidgets.QWidget):
        if not isinstance(w, CONTROLS) or isinstance(w, QtWidgets.QScrollBar):
            continue
        parent = w.parentWidget()
        if isinstance(w, QtWidgets.QLineEdit) and isinstance(
                parent, (QtWidgets.QComboBox, QtWidgets.QAbstractSpinBox)):
            continue  # the text part of a combo or spin box: Qt passes its tooltip event up
        out.append(w)
    return out


def test_every_control_has_a_tooltip(window):
    controls = _all_controls(window)
    assert len(controls) > 60  # the window really has its controls
    missing = [f"{type(w).__name__} {w.objectName()!r} "
               f"{getattr(w, 'text', lambda: '')()!r}" for w in controls if not w.toolTip()]
    assert not missing, missing


def test_slider_ends_are_named_by_colour(window):
    low = window.findChild(QtWidgets.QLabel, "slider-end-low")
    high = window.findChild(QtWidgets.QLabel, "slider-end-high")
    # left end = low temperature = red; right = high = blue (Planckian locus, CIE 15:2004)
    assert (low.text(), high.text()) == ("redder", "bluer")
    assert low.geometry().right() < window.audition.slider.geometry().left()
    assert "1000 K" in low.toolTip() and "40000 K" in high.toolTip()


def test_gamma_field_only_for_the_gamma_transfer(window):
    editor = window.rendering.display.edit()
    gamma = editor.fields["gamma"]
    for transfer in ("srgb", "gamma", "linear", "pq", "gamma"):
        editor.transfer.setCurrentIndex(editor.transfer.findData(transfer))
        assert gamma.isEnabled() == (transfer == "gamma"), transfer
    editor.load(PRESETS["srgb"])  # sRGB's own piecewise curve: no gamma to type
    assert not gamma.isEnabled()
    editor.close()


def test_the_panel_and_profile_words(window):
    window.rendering.display.edit().close()  # its title and labels too
    boxes = {b.title() for b in window.findChildren(QtWidgets.QGroupBox)}
    assert "Rendering" in boxes and "Look" not in boxes
    assert window.findChild(QtWidgets.QTabWidget, "rendering-panel") is window.rendering
    texts = [w.text() for kind in (QtWidgets.QLabel, QtWidgets.QAbstractButton)
             for w in window.findChildren(kind)]
    texts += [w.windowTitle() for w in window.findChildren(QtWidgets.QDialog)]
    texts += [a.text() for a in window.findChildren(QtGui.QAction)]
    combo = window.rendering.display.display.combo
    texts += [combo.itemText(i) for i in range(combo.count())]
    assert not [t for t in texts if t.strip().lower() in ("look", "&look")]
    # a bare "profile" could be an ICC profile: the JSON ones say so
    vague = [t for t in texts if "profile" in t.lower() and "json" not in t.lower()
             and "icc" not in t.lower()]
    assert not vague, vague
