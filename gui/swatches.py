"""Swatches: the current colour, its readouts, and the strips across temperature and magnitude.

Pixels are filled with the 8-bit values the window model gives, unchanged: the chosen
display's colours converted to the monitor by the engine
(:func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`). A colour the monitor had to clip
gets a small corner mark (:func:`draw_clip_mark`), drawn in the theme's muted colour so that it
stays quiet in a dark room.
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.gui.theme import DIM, Theme


def qcolor(rgb8) -> QtGui.QColor:
    """A QColor from three 8-bit values (no conversion)."""
    r, g, b = (int(v) for v in rgb8)
    return QtGui.QColor(r, g, b)


def draw_clip_mark(p: QtGui.QPainter, rect: QtCore.QRect, theme: Theme, size: int = 9) -> None:
    """The "clipped for this monitor" mark: a small triangle in the bottom-right corner."""
    size = max(3, min(size, rect.width() // 2, rect.height() // 2))
    x, y = rect.right() + 1, rect.bottom() + 1
    tri = QtGui.QPolygon([QtCore.QPoint(x - size, y), QtCore.QPoint(x, y),
                          QtCore.QPoint(x, y - size)])
    p.save()
    p.setPen(QtCore.Qt.PenStyle.NoPen)
    p.setBrush(QtGui.QColor(theme.muted))
    p.drawPolygon(tri)
    p.restore()


#: Width of the surround on each side of a swatch, as a share of its shorter side.
SURROUND_WIDTH_FRACTION = 0.18


class ColourSwatch(QtWidgets.QWidget):
    """A flat patch of one colour, with a visible badge when the colour was outside the gamut.

    With a surround (:meth:`set_surround`) the patch sits inside a neutral border whose width is
    :data:`SURROUND_WIDTH_FRACTION` of the shorter side; its colour comes from the engine.
    """

    def __init__(self, name: str, minimum=(200, 130), parent=None):
        super().__init__(parent)
        self.setObjectName(name)
        self.setMinimumSize(*minimum)
        self.setSizePolicy(QtWidgets.QSizePolicy.Policy.Expanding,
                           QtWidgets.QSizePolicy.Policy.Expanding)
        self.setAttribute(QtCore.Qt.WidgetAttribute.WA_OpaquePaintEvent)
        self._colour = QtGui.QColor(0, 0, 0)
        self._out_of_gamut = False
        self._clipped = False
        self._badge = ""
        self._caption = ""
        self._theme = DIM
        self._surround: QtGui.QColor | None = None
        self.paint_count = 0

    def set_surround(self, rgb8) -> None:
        """A neutral border of 8-bit colour ``rgb8`` round the patch (None: no border)."""
        colour = None if rgb8 is None else qcolor(rgb8)
        if colour != self._surround:
            self._surround = colour
            self.update()

    def surround_colour(self) -> QtGui.QColor | None:
        """The surround's colour, or None."""
        return None if self._surround is None else QtGui.QColor(self._surround)

    def patch_rect(self) -> QtCore.QRect:
        """Where the colour itself is painted (inside the surround, if any)."""
        r = self.rect()
        if self._surround is None:
            return r
        k = max(4, round(SURROUND_WIDTH_FRACTION * min(r.width(), r.height())))
        return r.adjusted(k, k, -k, -k)

    def set_theme(self, theme: Theme) -> None:
        """Use the theme's interface colours for the frame and badge."""
        self._theme = theme
        self.update()

    def set_colour(self, rgb8, out_of_gamut: bool = False, badge: str = "",
                   caption: str = "", clipped: bool = False) -> None:
        """Show ``rgb8`` (three 8-bit values); ``out_of_gamut`` draws the badge text ``badge``;
        ``clipped`` (the monitor cannot show the colour) draws the corner mark."""
        self._colour = qcolor(rgb8)
        self._out_of_gamut = bool(out_of_gamut)
        self._clipped = bool(clipped)
        self._badge = badge
        self._caption = caption
        self.update()

    def colour(self) -> QtGui.QColor:
        """The colour shown."""
        return QtGui.QColor(self._colour)

    @property
    def clipped(self) -> bool:
        """Whether the corner mark is shown (the monitor clipped this colour)."""
        return self._clipped

    def paintEvent(self, event):  # noqa: N802 - Qt API
        p = QtGui.QPainter(self)
        r = self.rect()
        if self._surround is not None:
            p.fillRect(r, self._surround)
            r = self.patch_rect()
        p.fillRect(r, self._colour)
        t = self._theme
        p.setPen(QtGui.QPen(QtGui.QColor(t.border), 1))
        p.drawRect(r.adjusted(0, 0, -1, -1))
        font = p.font()
        if self._out_of_gamut and self._badge:
            font.setBold(True)
            p.setFont(font)
            fm = p.fontMetrics()
            text = "\u26a0 " + self._badge
            w, h = fm.horizontalAdvance(text) + 12, fm.height() + 6
            badge = QtCore.QRect(r.left() + 6, r.top() + 6, w, h)
            p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
            p.setPen(QtGui.QPen(QtGui.QColor(t.error), 1.5))
            p.setBrush(QtGui.QColor(t.window))
            p.drawRoundedRect(badge, 4, 4)
            p.setPen(QtGui.QColor(t.error))
            p.drawText(badge, QtCore.Qt.AlignmentFlag.AlignCenter, text)
            # hatched corner flag: a second cue that does not rely on reading
            p.setPen(QtGui.QPen(QtGui.QColor(t.error), 2))
            for k in range(0, 22, 6):
                p.drawLine(r.right() - 22 + k, r.top() + 1, r.right(), r.top() + 23 - k)
        if self._clipped:
            draw_clip_mark(p, r.adjusted(0, 0, -1, -1), t, 12)
        if self._caption:
            font.setBold(False)
            p.setFont(font)
            fm = p.fontMetrics()
            w, h = fm.horizontalAdvance(self._caption) + 10, fm.height() + 4
            box = QtCore.QRect(r.left() + 6, r.bottom() - h - 5, w, h)
            p.setPen(QtCore.Qt.PenStyle.NoPen)
            p.setBrush(QtGui.QColor(t.window))
            p.drawRoundedRect(box, 3, 3)
            p.setPen(QtGui.QColor(t.muted))
            p.drawText(box, QtCore.Qt.AlignmentFlag.AlignCenter, self._caption)
        p.end()
        self.paint_count += 1


class SwatchStrip(QtWidgets.QWidget):
    """A row of swatch cells with a marker on the current one; clicking a cell picks it.

    Signals
    -------
    picked(int) : the index of the cell clicked.
    """

    picked = QtCore.Signal(int)

    def __init__(self, name: str, height: int = 46, parent=None):
        super().__init__(parent)
        self.setObjectName(name)
        self.setMinimumHeight(height)
        self.setSizePolicy(QtWidgets.QSizePolicy.Policy.Expanding,
                           QtWidgets.QSizePolicy.Policy.Fixed)
        self.setCursor(QtCore.Qt.CursorShape.PointingHandCursor)
        self._cells = np.zeros((0, 3), np.uint8)
        self._clipped = np.zeros(0, bool)
        self._labels: list[str] = []
        self._tooltips: list[str] = []
        self._ticks: list[tuple[float, str]] = []
        self._marker_index = -1
        self._marker_fraction: float | None = None
        self._note = ""
        self._theme = DIM
        self._label_height = 15
        self._cache: QtGui.QPixmap | None = None
        self.setMouseTracking(True)
        self.setAttribute(QtCore.Qt.WidgetAttribute.WA_OpaquePaintEvent)  # paints every pixel
        self.paint_count = 0

    # -- data -------------------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        """Use the theme's interface colours for labels and the marker."""
        self._theme = theme
        self._invalidate()

    def set_cells(self, rgb8: np.ndarray, labels=None, tooltips=None, clipped=None) -> None:
        """Cells' 8-bit colours (N, 3), optional text under each cell and tooltips; ``clipped``
        (N,) marks the cells the monitor could not show."""
        cells = np.asarray(rgb8, dtype=np.uint8).reshape(-1, 3)
        labels = list(labels or [])
        self._tooltips = list(tooltips or [])
        marks = np.zeros(len(cells), bool) if clipped is None else \
            np.asarray(clipped, bool).reshape(-1)
        if cells.shape == self._cells.shape and np.array_equal(cells, self._cells) and \
                labels == self._labels and np.array_equal(marks, self._clipped):
            return
        self._cells = cells
        self._clipped = marks
        self._labels = labels
        self._invalidate()

    def set_ticks(self, ticks) -> None:
        """Labels under the strip at fractions 0..1 of its width (instead of per-cell labels)."""
        self._ticks = list(ticks)
        self._invalidate()

    def set_marker(self, index: int, fraction: float | None = None) -> None:
        """Mark cell ``index``; ``fraction`` (0..1) adds a pointer at the exact position."""
        if index == self._marker_index and fraction == self._marker_fraction:
            return
        self._marker_index = int(index)
        self._marker_fraction = fraction
        self.update()

    def set_note(self, text: str) -> None:
        """Text drawn over the strip (e.g. why it is disabled)."""
        if text != self._note:
            self._note = text
            self._invalidate()

    @property
    def cell_count(self) -> int:
        """Number of cells."""
        return int(self._cells.shape[0])

    def cell_clipped(self, index: int) -> bool:
        """Whether cell ``index`` carries the clipped mark."""
        return bool(self._clipped[index])

    def cell_colour(self, index: int) -> tuple[int, int, int]:
        """The 8-bit colour of a cell."""
        return tuple(int(v) for v in self._cells[index])

    def cell_rect(self, index: int) -> QtCore.QRect:
        """Pixel rectangle of a cell."""
        n = max(self.cell_count, 1)
        w = self.width()
        top = 7
        bottom = self.height() - (self._label_height if (self._labels or self._ticks) else 0)
        x0 = round(index * w / n)
        x1 = round((index + 1) * w / n)
        return QtCore.QRect(x0, top, max(x1 - x0 - 1, 1), max(bottom - top - 1, 1))

    def index_at(self, x: float) -> int:
        """Cell index under x (pixels), clipped to the strip."""
        n = max(self.cell_count, 1)
        return int(min(max(x / max(self.width(), 1) * n, 0), n - 1))

    # -- events -----------------------------------------------------------------------
    def mousePressEvent(self, event):  # noqa: N802 - Qt API
        if event.button() == QtCore.Qt.MouseButton.LeftButton and self.cell_count and \
                self.isEnabled():
            self.picked.emit(self.index_at(event.position().x()))
        event.accept()

    def mouseMoveEvent(self, event):  # noqa: N802 - Qt API
        if self._tooltips and self.cell_count:
            i = self.index_at(event.position().x())
            self.setToolTip(self._tooltips[i] if i < len(self._tooltips) else "")
        super().mouseMoveEvent(event)

    def _invalidate(self) -> None:
        self._cache = None
        self.update()

    def _background(self) -> QtGui.QPixmap:
        """Cells, labels and ticks (everything but the marker), drawn once per change."""
        if self._cache is not None and self._cache.size() == self.size():
            return self._cache
        t = self._theme
        pix = QtGui.QPixmap(self.size())
        pix.fill(QtGui.QColor(t.window))
        p = QtGui.QPainter(pix)
        n = self.cell_count
        for i in range(n):
            p.fillRect(self.cell_rect(i), qcolor(self._cells[i]))
        for i in np.flatnonzero(self._clipped[:n]):
            draw_clip_mark(p, self.cell_rect(int(i)), t, 7)
        p.setPen(QtGui.QColor(t.muted))
        font = self.font()
        font.setPointSizeF(max(font.pointSizeF() - 1.5, 6.5))
        p.setFont(font)
        base = self.height() - self._label_height
        for i, text in enumerate(self._labels[:n]):
            r = self.cell_rect(i)
            p.drawText(QtCore.QRect(r.left(), base, r.width(), self._label_height),
                       QtCore.Qt.AlignmentFlag.AlignCenter, text)
        fm = p.fontMetrics()
        for frac, text in self._ticks:
            x = round(frac * (self.width() - 1))
            p.drawLine(x, base, x, base + 3)
            tw = fm.horizontalAdvance(text)
            left = min(max(x - tw // 2, 0), self.width() - tw)
            p.drawText(left, base + 3 + fm.ascent(), text)
        if self._note:
            p.setPen(QtGui.QColor(t.text))
            box = self.rect().adjusted(0, 7, 0, 0)
            p.fillRect(box, QtGui.QColor(t.panel))
            p.drawText(box, QtCore.Qt.AlignmentFlag.AlignCenter | QtCore.Qt.TextFlag.TextWordWrap,
                       self._note)
        p.end()
        self._cache = pix
        return pix

    def paintEvent(self, event):  # noqa: N802 - Qt API
        t = self._theme
        p = QtGui.QPainter(self)
        p.drawPixmap(0, 0, self._background())
        n = self.cell_count
        if 0 <= self._marker_index < n and not self._note:
            r = self.cell_rect(self._marker_index)
            p.setPen(QtGui.QPen(QtGui.QColor(t.marker), 2))
            p.setBrush(QtCore.Qt.BrushStyle.NoBrush)
            p.drawRect(r.adjusted(-1, -1, 1, 1))
            if self._marker_fraction is not None:
                x = self._marker_fraction * (self.width() - 1)
                tri = QtGui.QPolygonF([QtCore.QPointF(x - 5, 0), QtCore.QPointF(x + 5, 0),
                                       QtCore.QPointF(x, 6)])
                p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
                p.setBrush(QtGui.QColor(t.marker))
                p.setPen(QtCore.Qt.PenStyle.NoPen)
                p.drawPolygon(tri)
        p.end()
        self.paint_count += 1


class ValueText(QtWidgets.QWidget):
    """One monospaced value, painted opaque so that a new value repaints nothing else."""

    def __init__(self, name: str, chars: int, font: QtGui.QFont, parent=None):
        super().__init__(parent)
        self.setObjectName(name)
        self.setAttribute(QtCore.Qt.WidgetAttribute.WA_OpaquePaintEvent)
        self.setFont(font)
        fm = QtGui.QFontMetrics(font)
        self.setFixedSize(fm.horizontalAdvance("0" * chars) + 4, fm.height() + 2)
        self._text = ""
        self._alert = False
        self._theme = DIM

    def text(self) -> str:
        """The value shown."""
        return self._text

    def setText(self, text: str) -> None:  # noqa: N802 - QLabel-like
        """Show ``text``."""
        if text != self._text:
            self._text = text
            self.update()

    def set_alert(self, on: bool) -> None:
        """Draw the value in the theme's error colour."""
        if bool(on) != self._alert:
            self._alert = bool(on)
            self.update()

    def set_theme(self, theme: Theme) -> None:
        """Interface colours."""
        self._theme = theme
        self.update()

    def paintEvent(self, event):  # noqa: N802 - Qt API
        p = QtGui.QPainter(self)
        t = self._theme
        p.fillRect(self.rect(), QtGui.QColor(t.panel))
        p.setPen(QtGui.QColor(t.error if self._alert else t.text))
        p.drawText(self.rect().adjusted(2, 0, 0, 0), QtCore.Qt.AlignmentFlag.AlignVCenter |
                   QtCore.Qt.AlignmentFlag.AlignLeft, self._text)
        p.end()


class Readouts(QtWidgets.QWidget):
    """Rows of name, value and a copy button; values are monospaced."""

    copied = QtCore.Signal(str)

    def __init__(self, rows, parent=None, tips=None):
        super().__init__(parent)
        tips = tips or {}
        grid = QtWidgets.QGridLayout(self)
        grid.setContentsMargins(0, 0, 0, 0)
        grid.setHorizontalSpacing(4)
        grid.setVerticalSpacing(2)
        self._values: dict[str, ValueText] = {}
        self._names: dict[str, str] = {}
        mono = QtGui.QFont("DejaVu Sans Mono")
        mono.setStyleHint(QtGui.QFont.StyleHint.Monospace)
        mono.setPointSizeF(max(self.font().pointSizeF() - 0.5, 7.0))
        for i, (key, label, chars) in enumerate(rows):
            name = QtWidgets.QLabel(label, self)
            name.setProperty("role", "muted")
            name.setToolTip(tips.get(key, ""))
            # fixed size and opaque: a new value repaints the value only, without re-layout
            value = ValueText(f"readout-{key}", chars, mono, self)
            button = QtWidgets.QToolButton(self)
            button.setText("Copy")
            button.setObjectName(f"copy-{key}")
            button.setToolTip(f"Copy the {label.lower()} to the clipboard")
            button.clicked.connect(lambda _=False, k=key: self.copy(k))
            grid.addWidget(name, i, 0)
            grid.addWidget(value, i, 1)
            grid.addWidget(button, i, 2)
            self._values[key] = value
            self._names[key] = label
        grid.setColumnStretch(3, 1)

    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the values."""
        for v in self._values.values():
            v.set_theme(theme)

    def set_value(self, key: str, text: str, alert: bool = False) -> None:
        """Show ``text`` in row ``key`` (``alert``: in the error colour)."""
        v = self._values[key]
        v.setText(text)
        v.set_alert(alert)

    def value(self, key: str) -> str:
        """Text of row ``key``."""
        return self._values[key].text()

    def copy(self, key: str) -> str:
        """Copy row ``key`` to the clipboard and return the text."""
        text = self._values[key].text()
        QtGui.QGuiApplication.clipboard().setText(text)
        self.copied.emit(f"{self._names[key]} copied: {text}")
        return text

    def as_text(self) -> str:
        """All rows as ``name: value`` lines."""
        return "\n".join(f"{self._names[k]}: {v.text()}" for k, v in self._values.items())
