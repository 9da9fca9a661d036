"""Bad input in the window: an inline error or a message box naming it; the last good state stays.

The autouse ``escaped`` fixture fails any test in which an exception escapes into
the event loop.
"""

import pytest
from PySide6 import QtWidgets

from test_gui_support import (centre_pixel, escaped, pytestmark, rendered_8bit,  # noqa: F401
                              shared_window, window)


def _choose(choice, value):
    choice.combo.setCurrentIndex(choice.combo.findData(value))


def _unchanged(window, settings, temperature):
    assert window.model.settings is settings
    assert window.model.temperature_K == temperature
    swatch = window.findChild(QtWidgets.QWidget, "current-swatch")
    assert centre_pixel(swatch) == rendered_8bit(settings, temperature)


@pytest.mark.parametrize("text, message", [
    ("abc", "'abc' is not a number"),
    ("", "is not a number"),
    ("nan", "not a finite number"),
    ("50", "outside the supported range 500-100000 K"),
    ("1e9", "outside the supported range"),
])
def test_bad_kelvin_entry(window, text, message):
    s, t = window.model.settings, window.model.temperature_K
    field = window.audition.kelvin
    position = window.audition.slider.value()
    assert not field.commit_text(text)
    assert field.has_error and message in field.error.text()
    assert field.edit.property("invalid") is True
    assert window.audition.slider.value() == position
    _unchanged(window, s, t)
    assert field.commit_text("4000")  # a good value clears the error
    assert not field.has_error and window.model.temperature_K == 4000.0


def test_bad_bv_and_class(window):
    s, t = window.model.settings, window.model.temperature_K
    a = window.audition
    assert not a.bv.commit_text("11")  # beyond the 500 K blackbody's B-V (synthetic model)
    assert "B-V 11 is outside the accepted range" in a.bv.error.text()
    window.model.set_index_model("relation")
    assert not a.bv.commit_text("3")  # beyond Ballesteros (2012)'s 2.00
    assert "B-V 3 is outside the accepted range" in a.bv.error.text()
    assert not a.bv.commit_text("red")
    a.commit_class("Z9")
    assert "not understood" in a.class_error.text() and not a.class_error.isHidden()
    a.commit_class("G2III")
    assert "luminosity class III is not supported" in a.class_error.text()
    _unchanged(window, s, t)
    a.commit_class("A0V")
    assert a.class_error.isHidden() and window.model.temperature_K == 9700.0


def test_white_xy_errors_inline(window):
    white = window.look.white
    _choose(white.kind, "xy")
    s, t = window.model.settings, window.model.temperature_K
    assert not white.white_x.commit_text("0.8")
    # CIE 15:2004 section 7.3: (0.8, 0.329) lies outside the spectral locus and purple line
    assert "outside the spectral locus" in white.white_x.error.text()
    _unchanged(window, s, t)
    assert not white.white_y.commit_text("zero")
    assert "white y: 'zero' is not a number" in white.white_y.error.text()
    _choose(white.kind, "daylight")
    s = window.model.settings
    assert not white.white_temperature.commit_text("3000")
    assert "outside 4000-25000 K" in white.white_temperature.error.text()
    assert window.model.settings is s


@pytest.mark.parametrize("key, text, message", [
    ("aperture_mm", "-5", "aperture_mm -5 is outside the accepted range"),
    ("aperture_mm", "wide", "'wide' is not a number"),
    ("transmission", "abc", "'abc' is not a number"),
    ("transmission", "1.5", "transmission 1.5 is outside the accepted range"),
    ("pupil_mm", "0", "pupil_mm 0 is outside the accepted range"),
    ("magnitude_faint", "-3", "must be fainter"),
    ("night_tint", "2", "night_tint 2 is outside"),
    ("blur_spot_arcmin", "inf", "not a finite number"),
])
def test_bad_night_fields(window, key, text, message):
    night = window.look.night
    field = night.aperture if key == "aperture_mm" else night.numbers[key]
    s, t = window.model.settings, window.model.temperature_K
    assert not field.commit_text(text)
    assert message in field.error.text(), field.error.text()
    _unchanged(window, s, t)
    # a later change elsewhere keeps the error shown (and the bad text) for the user to fix
    window.model.set_temperature(4500.0)
    assert field.has_error and field.text() == text


def test_bad_magnitude_luminance_and_peak(window):
    s, t = window.model.settings, window.model.temperature_K
    night = window.look.night
    assert not night.magnitude.commit_text("40")
    assert "magnitude 40 is outside the accepted range" in night.magnitude.error.text()
    assert window.model.magnitude == 1.0
    assert not night.peak.commit_text("0")
    assert "peak_luminance_cd_m2 0 is outside 0.01-10000" in night.peak.error.text()
    out = window.look.output
    assert not out.luminance.commit_text("0")
    assert "luminance_Y 0 is outside" in out.luminance.error.text()
    _unchanged(window, s, t)


def test_display_editor_rejects_bad_profiles(window):
    editor = window.look.display.edit()
    s = window.model.settings
    editor.fields["gamma"].setText("9")
    editor.transfer.setCurrentIndex(editor.transfer.findData("gamma"))
    assert not editor.apply()
    assert "gamma 9 is outside 1-4" in editor.error.text()
    editor.fields["gamma"].setText("2.4")
    editor.fields["white_x"].setText("0.9")
    editor.fields["white_y"].setText("0.05")
    assert not editor.apply()
    assert "white_xy" in editor.error.text()
    editor.fields["white_x"].setText("x")
    assert not editor.apply()
    assert "white x: 'x' is not a number" in editor.error.text()
    assert window.model.settings is s
    editor.close()


def test_corrupt_profile_gives_a_message_box(window, tmp_path):
    s = window.model.settings
    bad = tmp_path / "broken.json"
    bad.write_text("{ not json")
    assert not window.look.display.open_profile(bad)
    box = window.last_message
    assert isinstance(box, QtWidgets.QMessageBox) and box.isVisible()
    assert "broken.json" in box.text() and "not valid JSON" in box.text()
    assert window.model.settings is s
    odd = tmp_path / "odd.json"
    odd.write_text('{"starkiln_display": 1, "primaries_xy": {}, "white_xy": [0.3, 0.3], '
                   '"colour": 1}')
    assert not window.look.display.open_profile(odd)
    assert "unknown key 'colour'" in window.last_message.text()
    assert window.model.settings is s
    assert window.look.display.display.value() == "srgb"


def test_corrupt_settings_file_gives_a_message_box(window, tmp_path):
    s = window.model.settings
    bad = tmp_path / "look.toml"
    bad.write_text("gamut = [\n")
    assert not window.load_settings_file(bad)
    assert "look.toml" in window.last_message.text()
    assert "not a valid TOML settings file" in window.last_message.text()
    bad.write_text('starkiln_settings = 1\nsparkle = "yes"\n')
    assert not window.load_settings_file(bad)
    assert "unknown key 'sparkle'" in window.last_message.text()
    bad.write_text('starkiln_settings = 1\naperture_mm = -1.0\n')
    assert not window.load_settings_file(bad)
    assert "aperture_mm" in window.last_message.text()
    assert not window.load_settings_file(tmp_path / "missing.toml")
    assert "cannot read settings file" in window.last_message.text()
    assert window.model.settings is s
    assert window.recent_files() == []


def test_unwritable_destinations_give_a_message_box(window, tmp_path):
    assert not window.save_settings_file(tmp_path / "no" / "such" / "folder" / "look.toml")
    assert "does not exist" in window.last_message.text()
    assert not window.look.display.save_profile(tmp_path / "nowhere" / "d.json")
    assert "does not exist" in window.last_message.text()


@pytest.mark.parametrize("signame", ["SIGTERM", "SIGINT"])
def test_stop_signals_close_the_window_and_keep_its_session(qtbot, tmp_path, signame):
    """A stop signal (Ctrl-C, kill, a show controller) closes the window the way its close
    button does, saving the session; Qt's event loop alone would leave it ignored
    (Python's ``signal`` documentation: handlers run only when the interpreter has control)."""
    import os
    import signal

    from PySide6 import QtCore

    from starkiln.engine.pipeline.settings import Settings
    from starkiln.gui import create_window
    from starkiln.gui.app import close_on_signals

    store = QtCore.QSettings(str(tmp_path / "state.ini"), QtCore.QSettings.Format.IniFormat)
    w = create_window(Settings(), 4321.0, store=store)
    w.show()
    qtbot.waitExposed(w)
    before = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM)}
    ticker = close_on_signals(w)
    try:
        os.kill(os.getpid(), getattr(signal, signame))
        qtbot.waitUntil(lambda: not w.isVisible(), timeout=3000)
    finally:
        ticker.stop()
        for s, h in before.items():
            signal.signal(s, h)
    store.sync()
    assert store.allKeys(), "the close saved no session"
    w.deleteLater()
