"""Starkiln window (PySide6): views and controls over the engine's settings and render path.

This package draws; it computes no colour. The widgets bind to one Qt-free
:class:`starkiln.gui.model.WindowModel`, which holds the settings, the current
temperature and magnitude, and gets every colour from
:func:`starkiln.engine.pipeline.render.render` and every plot from
:mod:`starkiln.engine.plotdata` (which uses the same chain). Start it with
``starkiln`` (no subcommand), or build it with :func:`create_window`.
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
