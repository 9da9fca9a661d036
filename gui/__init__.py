"""Starkiln window (PySide6): views and controls over the engine's settings and render path.

This package draws; it computes no colour. Every colour comes from
:func:`starkiln.engine.pipeline.render.render` or from :mod:`starkiln.engine.plotdata.plots` (which uses the same
chain). Start it with ``starkiln`` (no subcommand), or build it with
:func:`create_window`.
"""

_USER_STORE = object()


def create_window(settings=None, temperature_K=None, store=_USER_STORE):
    """The main window, built and not shown.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings, optional
        Start with these settings (default: the last session's, else the engine defaults).
    temperature_K : float, optional
        Start at this temperature.
    store : QtCore.QSettings or None, optional
        Window state between runs; default the user's store (``Starkiln/Starkiln``);
        None keeps nothing.

    Returns
    -------
    starkiln.gui.window.MainWindow
    """
    from starkiln.gui.app import application, user_store
    from starkiln.gui.window import MainWindow

    application()
    if store is _USER_STORE:
        store = user_store()
    return MainWindow(settings, temperature_K, store=store)


__all__ = ["create_window"]
