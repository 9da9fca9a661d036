"""Start the window: ``starkiln`` (no subcommand) and ``starkiln --screenshot OUT.png``.

:func:`run` is called by :func:`starkiln.cli.main._launch_window` with the parsed
top-level arguments (``screenshot``, ``window_settings``,
``window_temperature``, ``window_monitor``). Bad input raises :class:`starkiln.engine.errors.StarkilnError`,
which the command line prints as one line with exit code 2.
"""

from __future__ import annotations

import os
import sys
import traceback
from pathlib import Path

from starkiln.engine.errors import StarkilnError

ORGANISATION = "Starkiln"
APPLICATION = "Starkiln"


def _has_display() -> bool:
    if os.environ.get("QT_QPA_PLATFORM"):
        return True
    if sys.platform.startswith("linux") or "bsd" in sys.platform:
        return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))
    return True


def application():
    """The QApplication (created once, with the project's names)."""
    from PySide6 import QtWidgets

    from starkiln.gui.compat import guard_none_refcount

    app = QtWidgets.QApplication.instance()
    if app is None:
        app = QtWidgets.QApplication([sys.argv[0] if sys.argv else "starkiln"])
        app.setOrganizationName(ORGANISATION)
        app.setApplicationName(APPLICATION)
        app.setApplicationDisplayName("Starkiln")
        guard_none_refcount()
    return app


def user_store():
    """The per-user QSettings store of window state."""
    from PySide6 import QtCore

    return QtCore.QSettings(ORGANISATION, APPLICATION)


def _settings_and_temperature(settings_path, temperature_K):
    from starkiln.engine.pipeline.settings import load_settings
    from starkiln.engine.stars.temperature import check_temperature

    settings = load_settings(settings_path) if settings_path else None
    t = None if temperature_K is None else float(check_temperature(temperature_K))
    return settings, t


def _monitor(spec):
    """The ``--monitor`` display, or None (the window asks the platform)."""
    if not spec:
        return None
    from starkiln.engine.colour.monitor import load_monitor

    return load_monitor(spec)


def screenshot(out, settings_path=None, temperature_K=None, size=(1280, 800),
               theme: str | None = None, overwrite: bool = False, monitor=None) -> Path:
    """Render the window offscreen at ``size`` and save it as a PNG (atomically).

    An existing ``out`` is replaced only with ``overwrite`` (``--force``), as every output.

    Uses the ``offscreen`` Qt platform unless ``QT_QPA_PLATFORM`` names another
    (or a QApplication exists already). No window state is read or written.
    """
    from starkiln.engine.atomic import check_writable

    out = Path(out)
    if out.suffix.lower() != ".png":
        raise StarkilnError(f"--screenshot {out}: the picture is saved as .png")
    settings, t = _settings_and_temperature(settings_path, temperature_K)  # bad values first
    monitor = _monitor(monitor)
    check_writable(out, overwrite=overwrite)
    from PySide6 import QtWidgets

    if QtWidgets.QApplication.instance() is None and not os.environ.get("QT_QPA_PLATFORM"):
        os.environ["QT_QPA_PLATFORM"] = "offscreen"  # same picture with or without a display
    app = application()
    from PySide6 import QtCore

    from starkiln.gui.window import MainWindow, save_window_picture

    def quiet(kind, context, message):
        # the offscreen platform reports that it cannot size native windows: not a problem here
        if "propagateSizeHints" not in message:
            sys.stderr.write(message + "\n")

    previous = QtCore.qInstallMessageHandler(quiet)
    window = MainWindow(settings, t, store=None, monitor=monitor)
    if theme:
        window.set_theme(theme)
    window.statusBar().clearMessage()
    window.resize(*size)
    window.show()
    for _ in range(3):
        app.processEvents()
    window.sky.redraw()
    app.processEvents()
    try:
        save_window_picture(window, out)
    finally:
        window.close()
        window.deleteLater()
        app.processEvents()
        QtCore.qInstallMessageHandler(previous)
    return out


def _excepthook(exc_type, exc, tb):
    """Last resort in the running window: print the traceback and show it; never crash."""
    text = "".join(traceback.format_exception(exc_type, exc, tb))
    sys.stderr.write(text)
    try:
        from PySide6 import QtWidgets

        app = QtWidgets.QApplication.instance()
        windows = [w for w in (app.topLevelWidgets() if app else [])
                   if w.objectName() == "starkiln-window"]
        if windows:
            windows[0].show_message("Unexpected problem",
                                    f"{exc_type.__name__}: {exc}\n(The details are on the "
                                    "terminal.) The last good state is kept.")
    except Exception:  # noqa: BLE001 - the hook itself must never raise
        pass


def run(args) -> int:
    """Open the window (or, with ``--screenshot``, save a picture of it); returns the exit code."""
    shot = getattr(args, "screenshot", None)
    settings_path = getattr(args, "window_settings", None)
    temperature_K = getattr(args, "window_temperature", None)
    monitor_spec = getattr(args, "window_monitor", None)
    if shot:
        out = screenshot(shot, settings_path, temperature_K,
                         overwrite=bool(getattr(args, "window_force", None)),
                         monitor=monitor_spec)
        sys.stdout.write(f"wrote {out}\n")
        return 0
    if getattr(args, "window_force", None):
        raise StarkilnError("--force applies to --screenshot only; accepted: "
                            "'starkiln --screenshot OUT.png --force'")
    settings, t = _settings_and_temperature(settings_path, temperature_K)
    monitor = _monitor(monitor_spec)
    if not _has_display():
        raise StarkilnError("no display found (DISPLAY is not set); to render the window "
                            "offscreen use 'starkiln --screenshot OUT.png'")
    app = application()
    from starkiln.gui.window import MainWindow

    window = MainWindow(settings, t, store=user_store(), monitor=monitor)
    previous = sys.excepthook
    sys.excepthook = _excepthook
    window.show()
    ticker = close_on_signals(window)
    try:
        return int(app.exec())
    finally:
        ticker.stop()
        sys.excepthook = previous


def close_on_signals(window) -> "QtCore.QTimer":
    """Close ``window`` (saving its session, as the close button does) on SIGINT or SIGTERM.

    Python runs signal handlers only when the interpreter has control, which Qt's event loop
    does not give it by itself; a timer that fires four times a second hands control back,
    so Ctrl-C in the terminal, ``kill`` or a show controller's stop closes the window within
    about 0.25 s instead of being ignored (common practice for PySide applications; the
    ``signal`` module's documentation on handlers running between bytecodes).

    Returns
    -------
    QtCore.QTimer
        The running timer (stop it when the event loop ends).
    """
    import signal

    from PySide6 import QtCore

    def handler(signum, frame):  # runs in the main thread, between Qt events
        QtCore.QTimer.singleShot(0, window.close)

    for sig in (signal.SIGINT, signal.SIGTERM):
        signal.signal(sig, handler)
    ticker = QtCore.QTimer(window)
    ticker.timeout.connect(lambda: None)
    ticker.start(250)
    return ticker
