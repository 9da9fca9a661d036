"""Shared fixtures of the window tests (pytest-qt, offscreen), and a test of the hook itself.

``escaped`` (autouse where imported) replaces ``sys.excepthook`` for the test:
PySide6 reports an exception raised in a slot or an overridden Qt method
through ``sys.excepthook`` and carries on, so without this hook such an error
would pass unnoticed. Any exception that reaches the hook fails the test.
pytest-qt's own capture is switched off in these modules
(``qt_no_exception_capture``) so that this hook is the one in force.
"""

import os
import sys
import traceback

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import pytest  # noqa: E402

pytestmark = pytest.mark.qt_no_exception_capture


@pytest.fixture(autouse=True)
def escaped(qapp):
    """Fail the test on any exception that escapes into the event loop."""
    caught = []
    previous = sys.excepthook
    sys.excepthook = lambda kind, value, tb: caught.append((kind, value, tb))
    yield caught
    qapp.processEvents()
    sys.excepthook = previous
    if caught:
        text = "".join(traceback.format_exception(*caught[0]))
        pytest.fail(f"{len(caught)} exception(s) escaped the event loop; first:\n{text}")


@pytest.fixture
def store(tmp_path):
    """A QSettings store in a temporary INI file (never the user's)."""
    from PySide6 import QtCore

    return QtCore.QSettings(str(tmp_path / "window-state.ini"), QtCore.QSettings.Format.IniFormat)


@pytest.fixture(scope="module")
def shared_window(qapp, tmp_path_factory):
    """One window per test module (building one costs a few tenths of a second)."""
    from PySide6 import QtCore, QtTest

    from starkiln.engine.pipeline.settings import Settings
    from starkiln.gui import create_window

    path = tmp_path_factory.mktemp("state") / "window-state.ini"
    store = QtCore.QSettings(str(path), QtCore.QSettings.Format.IniFormat)
    w = create_window(Settings(), 5772.0, store=store)
    w.resize(1280, 800)
    w.show()
    QtTest.QTest.qWaitForWindowExposed(w)
    yield w
    w.store = None  # nothing to keep
    w.close()
    w.deleteLater()
    qapp.processEvents()


def reset_window(w):
    """Back to a fresh window's state: default settings, 5772 K, magnitude 1, no errors."""
    from starkiln.engine.pipeline.settings import Settings
    from starkiln.gui.fields import ErrorLine
    from starkiln.gui.theme import DEFAULT_THEME

    for dialog in (w.look.display.editor, w.last_message):
        if dialog is not None:
            dialog.close()
    w.last_message = None
    for name in ("_lut_dialog", "_palette_dialog"):  # fresh export dialogs, default options
        dialog = getattr(w, name, None)
        if dialog is not None:
            dialog.close()
            dialog.deleteLater()
            setattr(w, name, None)
    w.set_monitor_choice("as the platform reports")  # offscreen: sRGB, assumed
    m = w.model
    m.clear_pins()
    w.compare.show_error("")
    w.compare.at_magnitude.setChecked(False)
    w.compare_dock.hide()
    w.compare_dock.setFloating(False)
    m.set_settings(Settings(), origin="file")
    m.set_magnitude(1.0)
    m.set_temperature(5772.0)
    w.look.refresh(force=True)
    for line in w.findChildren(ErrorLine):
        line.clear_error()
    w.set_theme(DEFAULT_THEME)
    for key in w.overlay_checks:
        w.set_overlay(key, False)
    w.zoom.setCurrentIndex(0)
    w.settings_path = None
    m.clear_star_table()
    w.sky.set_view("cluster")
    w.store.clear()
    w._rebuild_recent()


@pytest.fixture
def window(shared_window, qapp):
    """The main window with default settings at 5772 K, shown offscreen at 1280 x 800."""
    reset_window(shared_window)
    qapp.processEvents()
    return shared_window


def centre_pixel(widget):
    """(r, g, b) of the widget's centre, read back from what it paints."""
    img = widget.grab().toImage()
    c = img.pixelColor(img.width() // 2, img.height() // 2)
    return (c.red(), c.green(), c.blue())


def rendered_8bit(settings, temperature_K, magnitude=None):
    """The render path's 8-bit colour (display-encoded) of one star."""
    from starkiln.engine.pipeline.render import render
    from starkiln.engine.colour.quantisation import to_8bit

    r = render(settings, temperature_K, magnitude)
    rgb = r.rgb_encoded if magnitude is None else r.rgb_dimmed_encoded
    return tuple(int(v) for v in to_8bit(rgb))


def test_hook_catches_an_exception_in_a_slot(qtbot):
    """The fixture's hook is what sees a slot's exception (so the other tests can trust it)."""
    from PySide6 import QtCore

    seen = []
    hook = sys.excepthook
    sys.excepthook = lambda *a: seen.append(a)
    try:
        class Emitter(QtCore.QObject):
            fired = QtCore.Signal()

        e = Emitter()

        def bad():
            raise RuntimeError("boom")

        e.fired.connect(bad)
        e.fired.emit()
    finally:
        sys.excepthook = hook
    assert seen and seen[0][0] is RuntimeError


def test_binding_guard_keeps_none_alive():
    """starkiln.gui.compat: found exactly when void calls drop references to None, and then it holds."""
    import io

    from starkiln.gui.compat import guard_none_refcount, none_leak_per_call

    leak = none_leak_per_call()
    found = guard_none_refcount(io.StringIO())
    assert found == (leak > 0 and sys.version_info < (3, 12))
    if found:
        assert sys.getrefcount(None) > 2 ** 39
