"""The small sky preview: the invented demo cluster, or a loaded catalogue as a star plate.

The cluster's picture comes whole from the window model
(:meth:`starkiln.gui.model.WindowModel.sky_image`, which has it from
:func:`starkiln.engine.plotdata.sky.sky_image`, which asks the render path for every star's
colour and intensity); this widget shows it at one device pixel per picture pixel and turns
clicks into "audition this star".

A catalogue loaded into the model (:meth:`~starkiln.gui.model.WindowModel.load_star_table`) is
shown instead as a plate in the chosen view, whole sky (equirect) or dome (fisheye), drawn by
the model with the plate command's own drawing
(:meth:`~starkiln.gui.model.WindowModel.star_plate`) at the widget's size, in a worker thread
(a settings change while it draws stops it and starts again, so the interface stays
responsive; the last picture stays up meanwhile), and painted in the monitor's colours at the
viewing level (:meth:`~starkiln.gui.model.WindowModel.star_plate_rgb_8bit`).
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.engine.errors import StarkilnError
from starkiln.gui.theme import DIM, Theme

#: The panel's views: the demo cluster close up, or a loaded catalogue as a plate.
VIEWS = {"cluster": "Demo cluster", "equirect": "Whole sky", "fisheye": "Dome"}
#: Largest preview plate drawn, pixels (wide); the widget is usually smaller.
PLATE_PREVIEW_MAX_PX = 1024


class _PlateJob(QtCore.QRunnable):
    """Draws one preview plate off the interface thread."""

    class Signals(QtCore.QObject):
        done = QtCore.Signal(int, object)

    def __init__(self, generation, work):
        super().__init__()
        self.generation, self.work = generation, work
        self.signals = _PlateJob.Signals()

    def run(self):  # noqa: D102 - Qt API
        try:
            result = self.work()
        except StarkilnError as exc:
            result = exc
        self.signals.done.emit(self.generation, result)


class SkyPreview(QtWidgets.QWidget):
    """The demo cluster as it would look on the display.

    Signals
    -------
    star_picked(int) : index of the star clicked (the model auditions it first).
    """

    star_picked = QtCore.Signal(int)
    #: One line about the catalogue view ("" when all is well): a plate that could not be
    #: drawn (the last good picture stays up); the panel's bar shows it.
    plate_problem = QtCore.Signal(str)

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
        self.view = "cluster"
        self.dome = {"fov_deg": 180.0, "tilt_deg": 0.0, "centre_lon_deg": 0.0,
                     "centre_lat_deg": 90.0}
        self.plate = None  # the last StarPlate shown
        self._generation = 0
        self._running = False
        self._pending = False
        self._jobs = {}
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.redraw)
        model.events.plots.connect(lambda _change: self._timer.start())
        model.events.stars.connect(self._stars_changed)
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

    def set_view(self, view: str) -> None:
        """Show ``view``: ``cluster`` (the demo cluster), ``equirect`` or ``fisheye``."""
        if view not in VIEWS:
            raise StarkilnError(f"sky view {view!r} unknown; accepted: " + ", ".join(VIEWS))
        if view != self.view:
            self.view = view
            self.select(-1)
            self.redraw()

    def set_dome(self, **fields) -> None:
        """The dome view's field of view, tilt and centre (``PlateSpec`` fields, checked by
        the engine when the plate is drawn)."""
        self.dome.update(fields)
        self.redraw()

    def plate_spec(self):
        """The preview plate's :class:`~starkiln.engine.plates.projection.PlateSpec` for the
        view at the widget's size (StarkilnError if the dome fields are not accepted)."""
        from starkiln.engine.plates.projection import PlateSpec

        w, h = max(self.width(), 16), max(self.height(), 16)
        if self.view == "fisheye":
            side = min(w, h, PLATE_PREVIEW_MAX_PX)
            return PlateSpec("fisheye", side, side, **self.dome)
        half = max(min(w // 2, h, PLATE_PREVIEW_MAX_PX // 2), 8)
        return PlateSpec("equirect", 2 * half, half)

    def showing_plate(self) -> bool:
        """Whether a catalogue view (not the demo cluster) is shown."""
        return self.view != "cluster"

    def busy(self) -> bool:
        """Whether a plate is being drawn."""
        return self._running

    def redraw(self) -> None:
        """Draw the picture now at the widget's size (a plate: start drawing it)."""
        if self.showing_plate():
            self._redraw_plate()
            return
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
        self._show_rgb(self._sky.rgb_8bit)

    def _show_rgb(self, data) -> None:
        self._buffer = data  # keep the array alive while the QImage refers to it
        self._image = QtGui.QImage(data.data, data.shape[1], data.shape[0], data.strides[0],
                                   QtGui.QImage.Format.Format_RGB888)
        self.update()

    def _stars_changed(self, change) -> None:
        if change.value is None:
            self.plate = None
            self.set_view("cluster")
        else:
            self.plate = None
            self._image = None  # black until the new catalogue is drawn: no old picture
            if self.view == "cluster":
                self.view = "equirect"
            self.redraw()

    def _redraw_plate(self) -> None:
        m = self.model
        if m.star_table is None:
            self._image = None
            self.update()
            return
        try:
            spec = self.plate_spec()
        except StarkilnError as exc:
            self.plate_problem.emit(str(exc))
            return
        p = self.plate
        if p is not None and p.settings == m.settings and p.spec == spec and \
                p.table is m.star_table:
            # only the monitor or the viewing level changed: repaint, nothing to draw
            self._show_rgb(m.star_plate_rgb_8bit(p))
            return
        self._generation += 1
        if self._running:
            self._pending = True  # the running job stops at its next chunk
            return
        self._start(spec)

    def _start(self, spec) -> None:
        gen, settings, model = self._generation, self.model.settings, self.model
        job = _PlateJob(gen, lambda: model.star_plate(
            spec, settings, should_stop=lambda: self._generation != gen))
        job.setAutoDelete(False)
        self._jobs[gen] = job  # kept alive until its signal has been delivered
        # a bound slot of this widget: Qt drops the call if the widget is gone by then
        job.signals.done.connect(self._finished, QtCore.Qt.ConnectionType.QueuedConnection)
        self._running, self._pending = True, False
        QtCore.QThreadPool.globalInstance().start(job)

    @QtCore.Slot(int, object)
    def _finished(self, generation, result) -> None:
        self._jobs.pop(generation, None)
        self._running = False
        if generation == self._generation and result is not None:
            if isinstance(result, StarkilnError):
                self.plate_problem.emit(str(result))  # the last good picture stays
            else:
                self.plate_problem.emit("")
                self.plate = result
                self.settings = result.settings
                self._show_rgb(self.model.star_plate_rgb_8bit(result))
        if self._pending or generation != self._generation:
            self._pending = False
            self._redraw_plate()

    def wait_drawn(self, timeout_ms: int = 20000) -> bool:
        """Process events until no plate is being drawn (tests and benchmarks)."""
        timer = QtCore.QElapsedTimer()
        timer.start()
        app = QtWidgets.QApplication.instance()
        def waiting():
            return self._running or self._pending or self._timer.isActive()

        while waiting() and timer.elapsed() < timeout_ms:
            app.processEvents(QtCore.QEventLoop.ProcessEventsFlag.AllEvents, 20)
        return not waiting()

    def showEvent(self, event):  # noqa: N802 - Qt API
        super().showEvent(event)
        self._timer.start()

    def resizeEvent(self, event):  # noqa: N802 - Qt API
        super().resizeEvent(event)
        self._timer.start()

    def star_at(self, x: float, y: float, radius_px: float = 7.0) -> int:
        """Index of the brightest star within ``radius_px`` of (x, y), or -1."""
        if self._sky is None or self.showing_plate():
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
            if self.showing_plate():  # a plate keeps its shape: centred
                x0 = (self.width() - self._image.width()) // 2
                y0 = (self.height() - self._image.height()) // 2
                p.drawImage(x0, y0, self._image)
                if self.plate is not None and self.plate.spec.projection == "fisheye":
                    # the dome's rim, in the interface's muted colour (the sky is black both
                    # sides of it)
                    p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
                    p.setPen(QtGui.QPen(QtGui.QColor(t.muted), 1, QtCore.Qt.PenStyle.DotLine))
                    p.drawEllipse(QtCore.QRectF(x0 + 0.5, y0 + 0.5, self._image.width() - 1,
                                                self._image.height() - 1))
            else:
                p.drawImage(0, 0, self._image)
        if 0 <= self._selected and self._sky is not None and not self.showing_plate():
            p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
            p.setPen(QtGui.QPen(QtGui.QColor(t.muted), 1))
            x, y = self._sky.x_px[self._selected], self._sky.y_px[self._selected]
            p.drawEllipse(QtCore.QPointF(x, y), 8, 8)
        font = p.font()
        font.setPointSizeF(max(font.pointSizeF() - 1.5, 6.5))
        p.setFont(font)
        if self._error and not self.showing_plate():
            box = self.rect().adjusted(4, 4, -4, -4)
            p.fillRect(box, QtGui.QColor(t.window))
            p.setPen(QtGui.QColor(t.muted))
            p.drawText(box.adjusted(2, 2, -2, -2),
                       QtCore.Qt.TextFlag.TextWordWrap, "\u26a0 " + self._error)
        elif self.showing_plate():
            self._plate_caption(p, t)
        elif self._cluster is not None and self.settings is not None:
            s = self.settings
            if s.aperture_mm:
                note = f" \u00b7 through {s.aperture_mm:g} mm"
            else:
                note = " \u00b7 naked eye"
            if s.vision == "none":
                note += ", vision model off"
            self._caption(p, t, f"{len(self._cluster)} stars (invented){note}")
        p.end()

    def _plate_caption(self, p, t) -> None:
        table = self.model.star_table
        if table is None:
            text = "No catalogue loaded: Load\u2026 one"
        elif self.plate is None:
            text = f"{table.path.name}: drawing {table.rows:,} stars\u2026"
        else:
            counts = self.plate.counts
            drawn = counts.get("drawn", 0)
            outside = counts.get("outside the plate", 0) + counts.get("below horizon", 0)
            skipped = table.rows - drawn - outside
            text = f"{drawn:,} stars"
            if outside:
                text += f", {outside:,} outside the view"
            if skipped:
                text += f", {skipped:,} skipped"
            if self._running:
                text += " \u00b7 redrawing\u2026"
        self._caption(p, t, text)

    @staticmethod
    def _caption(p, t, text) -> None:
        fm = p.fontMetrics()
        # on a box of the theme's window colour: the caption keeps its contrast in every
        # theme (the sky itself is black)
        p.fillRect(QtCore.QRect(3, 2, fm.horizontalAdvance(text) + 6, fm.height() + 2),
                   QtGui.QColor(t.window))
        p.setPen(QtGui.QColor(t.muted))
        p.drawText(6, 3 + fm.ascent(), text)
