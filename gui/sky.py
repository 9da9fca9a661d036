"""The small sky preview: the invented demo cluster drawn with the current settings.

The picture comes whole from the window model (:meth:`starkiln.gui.model.WindowModel.sky_image`,
which has it from :func:`starkiln.engine.plotdata.sky.sky_image`, which asks the
render path for every star's colour and intensity); this widget shows it at
one device pixel per picture pixel and turns clicks into "audition this star".
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.engine.errors import StarkilnError
from starkiln.gui.theme import DIM, Theme


class SkyPreview(QtWidgets.QWidget):
    """The demo cluster as it would look on the display.

    Signals
    -------
    star_picked(int) : index of the star clicked (the model auditions it first).
    """

    star_picked = QtCore.Signal(int)

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.setObjectName("sky-preview")
        self.setMinimumSize(220, 150)
        self.setAttribute(QtCore.Qt.WidgetAttribute.WA_OpaquePaintEvent)
        self.setCursor(QtCore.Qt.CursorShape.CrossCursor)
        self.setMouseTracking(True)
        self.model = model
        self._cluster = model.cluster
        self._error = model.cluster_error
        self.settings = None  # the settings of the picture shown
        self._image: QtGui.QImage | None = None
        self._sky = None
        self._selected = -1
        self._theme = DIM
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.redraw)
        model.events.plots.connect(lambda _change: self._timer.start())
        # a star picked here stays ringed; any other new temperature drops the ring
        model.events.temperature.connect(
            lambda change: change.origin != "sky" and self.select(-1))

    @property
    def cluster(self):
        """The star list shown (:class:`starkiln.engine.plotdata.sky.Cluster`), or None."""
        return self._cluster

    @property
    def sky(self):
        """The last :class:`starkiln.engine.plotdata.sky.SkyImage`, or None."""
        return self._sky

    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the caption."""
        self._theme = theme
        self.update()

    def select(self, index: int) -> None:
        """Ring star ``index`` (or none with -1)."""
        if int(index) != self._selected:
            self._selected = int(index)
            self.update()

    def redraw(self) -> None:
        """Draw the picture now at the widget's size."""
        if self._cluster is None:
            return
        w, h = max(self.width(), 16), max(self.height(), 16)
        try:
            self._sky = self.model.sky_image(w, h)
        except StarkilnError as exc:
            self._error = str(exc)
            self._image = None
            self.update()
            return
        self._error = ""
        self.settings = self.model.settings
        data = self._sky.rgb_8bit
        self._buffer = data  # keep the array alive while the QImage refers to it
        self._image = QtGui.QImage(data.data, data.shape[1], data.shape[0], data.strides[0],
                                   QtGui.QImage.Format.Format_RGB888)
        self.update()

    def showEvent(self, event):  # noqa: N802 - Qt API
        super().showEvent(event)
        self._timer.start()

    def resizeEvent(self, event):  # noqa: N802 - Qt API
        super().resizeEvent(event)
        self._timer.start()

    def star_at(self, x: float, y: float, radius_px: float = 7.0) -> int:
        """Index of the brightest star within ``radius_px`` of (x, y), or -1."""
        if self._sky is None:
            return -1
        d2 = (self._sky.x_px - x) ** 2 + (self._sky.y_px - y) ** 2
        near = np.flatnonzero(d2 <= radius_px ** 2)
        if near.size == 0:
            return -1
        return int(near[np.argmin(self._cluster.magnitude[near])])

    def mousePressEvent(self, event):  # noqa: N802 - Qt API
        i = self.star_at(event.position().x(), event.position().y())
        if i >= 0:
            self.select(i)
            self.model.pick_star(i, origin="sky")
            self.star_picked.emit(i)
        event.accept()

    def mouseMoveEvent(self, event):  # noqa: N802 - Qt API
        i = self.star_at(event.position().x(), event.position().y())
        if i >= 0:
            c = self._cluster
            self.setToolTip(f"{c.name[i]}: {c.temperature_K[i]:.0f} K, magnitude "
                            f"{c.magnitude[i]:.2f} (click to audition)")
        else:
            self.setToolTip("")
        super().mouseMoveEvent(event)

    def paintEvent(self, event):  # noqa: N802 - Qt API
        p = QtGui.QPainter(self)
        p.fillRect(self.rect(), QtGui.QColor(0, 0, 0))
        t = self._theme
        if self._image is not None:
            p.drawImage(0, 0, self._image)
        if 0 <= self._selected and self._sky is not None:
            p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
            p.setPen(QtGui.QPen(QtGui.QColor(t.muted), 1))
            x, y = self._sky.x_px[self._selected], self._sky.y_px[self._selected]
            p.drawEllipse(QtCore.QPointF(x, y), 8, 8)
        font = p.font()
        font.setPointSizeF(max(font.pointSizeF() - 1.5, 6.5))
        p.setFont(font)
        if self._error:
            box = self.rect().adjusted(4, 4, -4, -4)
            p.fillRect(box, QtGui.QColor(t.window))
            p.setPen(QtGui.QColor(t.muted))
            p.drawText(box.adjusted(2, 2, -2, -2),
                       QtCore.Qt.TextFlag.TextWordWrap, "\u26a0 " + self._error)
        elif self._cluster is not None and self.settings is not None:
            s = self.settings
            if s.aperture_mm:
                note = f" \u00b7 through {s.aperture_mm:g} mm"
            else:
                note = " \u00b7 naked eye"
            if s.vision == "none":
                note += ", vision model off"
            text = f"{len(self._cluster)} stars (invented){note}"
            fm = p.fontMetrics()
            # on a box of the theme's window colour: the caption keeps its contrast in every
            # theme (the sky itself is black)
            p.fillRect(QtCore.QRect(3, 2, fm.horizontalAdvance(text) + 6, fm.height() + 2),
                       QtGui.QColor(t.window))
            p.setPen(QtGui.QColor(t.muted))
            p.drawText(6, 3 + fm.ascent(), text)
        p.end()
