"""Workarounds for the libraries under the window, each in one place.

1. The plotting library (pyqtgraph) repaints more than a slider step needs:
   a plot widget's viewport is transparent (so every repaint also repaints
   the panels behind it), it adds a context menu and an auto-scale button,
   re-scales its axes on every new curve, and shows SI prefixes on
   wavelength and chromaticity axes. :func:`steady_plot` switches these off;
   :func:`cache_static` draws items that do not move once into a device
   cache. Both plots of the window use them (a slider step stays within
   a few milliseconds; ``bench/bench_gui.py``).

2. A guard against a Qt-binding defect that crashes long sessions.
   PySide6-Essentials 6.12.0 on CPython 3.11 (seen here; 6.11.3 is clean) drops one
   reference to ``None`` on every call of a C++ method that returns ``void``
   (``QWidget.update()``, ``QPainterPath.moveTo()``...). On Python 3.11 ``None``
   is an ordinary refcounted object, so after some tens of thousands of calls the
   interpreter aborts with "Fatal Python error: none_dealloc". (From Python 3.12
   ``None`` is immortal and the defect is harmless.)

   :func:`guard_none_refcount` measures the leak once at start-up. If it is
   present it warns on stderr, naming the fix (install a PySide6 without the
   defect), and raises ``None``'s reference count by 2**40 so that the session
   cannot reach zero: ``None`` is a static object that is never freed, so its
   count only has to stay positive.

Qt is imported inside the functions: importing this module costs nothing.
"""

from __future__ import annotations

import ctypes
import sys

_BUMP = 2 ** 40
_applied = False


def steady_plot(widget) -> None:
    """Make a pyqtgraph ``PlotWidget`` repaint only itself, with fixed axes and no extras.

    Opaque viewport (a repaint does not reach the panels behind it), no context
    menu or auto-scale button, no automatic range (the caller sets it), no SI
    prefix on the left and bottom axes.
    """
    from PySide6 import QtCore

    widget.viewport().setAttribute(QtCore.Qt.WidgetAttribute.WA_OpaquePaintEvent)
    widget.setMenuEnabled(False)
    widget.hideButtons()
    plot = widget.getPlotItem()
    for name in ("left", "bottom"):
        plot.getAxis(name).enableAutoSIPrefix(False)
    plot.getViewBox().disableAutoRange()


def cache_static(*items) -> None:
    """Draw plot items that do not move at a slider step once, into a device-coordinate cache."""
    from PySide6 import QtWidgets

    for item in items:
        item.setCacheMode(QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache)


def none_leak_per_call() -> int:
    """References to ``None`` lost per void C++ call (0 on a sound binding)."""
    from PySide6 import QtGui

    path = QtGui.QPainterPath()
    before = sys.getrefcount(None)
    for _ in range(64):
        path.moveTo(0.0, 0.0)
    return (before - sys.getrefcount(None)) // 64


def guard_none_refcount(stream=None) -> bool:
    """Detect the leak and, if found, keep ``None`` alive; returns whether it was found."""
    global _applied
    if sys.version_info >= (3, 12):
        return False
    leak = none_leak_per_call()
    if leak <= 0:
        return False
    if not _applied:
        ctypes.c_ssize_t.from_address(id(None)).value += _BUMP
        _applied = True
        from PySide6 import __version__ as pyside

        (stream or sys.stderr).write(
            f"starkiln: warning: PySide6 {pyside} loses a reference to None on every call "
            f"(Python {sys.version_info[0]}.{sys.version_info[1]}); worked around for this "
            "session. Install another PySide6-Essentials (6.11.3 is known good).\n")
    return True
