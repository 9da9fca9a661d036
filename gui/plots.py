"""The spectrum plot and the chromaticity diagram (pyqtgraph), drawn from the window model.

Every curve, point and fill colour comes from the :class:`starkiln.gui.model.WindowModel`
(which has them from :mod:`starkiln.engine.plotdata.plots` and
:func:`starkiln.engine.pipeline.render.render`); this module only places them.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from starkiln.engine.plotdata.plots import SPECTRUM_PLOT_RANGE_NM, VISIBLE_BAND_NM
from starkiln.gui.compat import cache_static, steady_plot
from starkiln.gui.theme import DIM, Theme

OVERLAYS = {  # key -> (legend text, engine curve keys)
    "photopic": ("V(\u03bb) photopic", ("V",)),
    "scotopic": ("V\u2032(\u03bb) scotopic", ("V'",)),
    "cmf": ("colour-matching functions x\u0304 y\u0304 z\u0304", ("x", "y", "z")),
}


#: Width (px) of the contrasting line drawn under the curve and the overlays on the band.
OUTLINE_WIDTH = 4.0


#: Gap (px) between a label and the point or line it names.
LABEL_GAP_PX = 4.0
#: Room (px) kept free around a placed label, so that labels never touch.
LABEL_PAD_PX = 2.0
#: Turns (degrees) tried away from a label's preferred direction, in order.
LABEL_TURNS_DEG = (0.0, 30.0, -30.0, 60.0, -60.0, 90.0, -90.0)


def _text_size(item: pg.TextItem) -> tuple[float, float]:
    """Width and height (scene px) of a text item's text; a TextItem is drawn unscaled."""
    r = item.textItem.boundingRect()
    return float(r.width()), float(r.height())


def _rect_beside(point: QtCore.QPointF, direction, size, gap: float) -> QtCore.QRectF:
    """The rectangle of ``size`` (w, h px) whose nearest side lies ``gap`` px from ``point``
    along the unit ``direction`` (scene px, y down)."""
    dx, dy = direction
    w, h = size
    reach = gap + 0.5 * (abs(dx) * w + abs(dy) * h)  # centre to the side facing the point
    cx, cy = point.x() + dx * reach, point.y() + dy * reach
    return QtCore.QRectF(cx - 0.5 * w, cy - 0.5 * h, w, h)


def _turned(direction, degrees: float):
    a = np.radians(degrees)
    dx, dy = direction
    return (dx * np.cos(a) - dy * np.sin(a), dx * np.sin(a) + dy * np.cos(a))


def _free(rect: QtCore.QRectF, bounds: QtCore.QRectF, taken) -> bool:
    if not bounds.contains(rect):
        return False
    grown = rect.adjusted(-LABEL_PAD_PX, -LABEL_PAD_PX, LABEL_PAD_PX, LABEL_PAD_PX)
    return not any(grown.intersects(r) for r in taken)


def place_labels(wanted, bounds: QtCore.QRectF, taken=()) -> list[QtCore.QRectF | None]:
    """Greedy label placement: each label, in priority order, takes the first free spot.

    Parameters
    ----------
    wanted : sequence of (point, size, directions)
        In priority order: the point named (scene px), the label's size (w, h px) and the
        unit directions (scene px, y down) to try, best first.
    bounds : QRectF
        Where labels may lie (the plot's view box): a label is never cut by its edge.
    taken : sequence of QRectF
        Rectangles already occupied (other labels).

    Returns
    -------
    list of QRectF or None
        Where each label goes, None for a label dropped because every spot collides.

    Notes
    -----
    The rule, for every label: try its directions in order, first at :data:`LABEL_GAP_PX`
    then at three times that from the point; the first rectangle inside ``bounds`` and at
    least :data:`LABEL_PAD_PX` from every rectangle placed before is kept; a label with no
    such spot is dropped, so a label of lower priority gives way. Greedy placement in
    priority order is common practice in map and chart labelling.
    """
    placed = list(taken)
    out = []
    for point, size, directions in wanted:
        chosen = None
        for gap in (LABEL_GAP_PX, 3.0 * LABEL_GAP_PX):
            for d in directions:
                r = _rect_beside(point, d, size, gap)
                if _free(r, bounds, placed):
                    chosen = r
                    break
            if chosen is not None:
                break
        if chosen is not None:
            placed.append(chosen)
        out.append(chosen)
    return out


def _set_centre(item: pg.TextItem, box: pg.ViewBox, rect: QtCore.QRectF | None) -> None:
    """Show ``item`` centred on ``rect`` (scene px), or hide it for None."""
    if rect is None:
        item.setVisible(False)
        return
    item.setAnchor((0.5, 0.5))
    item.setPos(box.mapSceneToView(rect.center()))
    item.setVisible(True)


def _label_frame(view: pg.PlotWidget):
    """The view box of ``view``, its scene rectangle and a view-to-scene point mapping, or
    None while the plot has no size yet."""
    box = view.getPlotItem().getViewBox()
    bounds = box.sceneBoundingRect()
    if bounds.width() < 2 or bounds.height() < 2:
        return None

    def at(x, y):
        return box.mapViewToScene(QtCore.QPointF(float(x), float(y)))

    return box, bounds, at


def _normal_px(box: pg.ViewBox, curve_xy: np.ndarray, xy) -> tuple[float, float]:
    """Unit normal (scene px, y down) of the curve ``curve_xy`` (N, 2, view units) at its
    point nearest ``xy``, by the central difference of its neighbours; its sign is the
    caller's to choose."""
    i = int(np.argmin(np.hypot(curve_xy[:, 0] - xy[0], curve_xy[:, 1] - xy[1])))
    a, b = curve_xy[max(i - 1, 0)], curve_xy[min(i + 1, len(curve_xy) - 1)]
    pa = box.mapViewToScene(QtCore.QPointF(float(a[0]), float(a[1])))
    pb = box.mapViewToScene(QtCore.QPointF(float(b[0]), float(b[1])))
    tx, ty = pb.x() - pa.x(), pb.y() - pa.y()
    n = float(np.hypot(tx, ty)) or 1.0
    return (-ty / n, tx / n)


def _pen(colour: str, width: float = 1.5, style=QtCore.Qt.PenStyle.SolidLine) -> QtGui.QPen:
    pen = pg.mkPen(QtGui.QColor(colour), width=width)
    pen.setStyle(style)
    pen.setCosmetic(True)
    return pen


def _style_axes(plot: pg.PlotItem, theme: Theme) -> None:
    for name in ("left", "bottom"):
        axis = plot.getAxis(name)
        axis.setPen(_pen(theme.plot_axis, 1))
        axis.setTextPen(_pen(theme.plot_axis, 1))
        axis.setLabel(axis.labelText, **{"color": theme.plot_axis})


class SpectrumCurve(pg.GraphicsObject):
    """The Planck curve, its faint fill and the visible band's coloured fill, as one item;
    with a path of the light, the arriving curve too (dashed, over the emitted one).

    One item with a fixed bounding box (the plot range) repaints at every
    slider step much faster than several curve items: a new curve only rebuilds
    its painter paths. The colours are the engine's (see :meth:`set_band_brush`).
    """

    def __init__(self, x_range, y_top: float = 1.0):
        super().__init__()
        self._rect = QtCore.QRectF(x_range[0], 0.0, x_range[1] - x_range[0], y_top)
        self._curve = QtGui.QPainterPath()
        self._fill = QtGui.QPainterPath()
        self._band = QtGui.QPainterPath()
        self._pen = _pen("#ffffff", 2.0)
        self._outline = _pen("#000000", 4.0)
        self._dim = QtGui.QBrush(QtGui.QColor(0, 0, 0, 0))
        self._band_brush = QtGui.QBrush(QtGui.QColor(0, 0, 0, 0))
        self._arriving = QtGui.QPainterPath()
        self._arriving_pen = _pen("#ffffff", 2.0, QtCore.Qt.PenStyle.DashLine)
        self.x = np.zeros(0)
        self.y = np.zeros(0)
        self.arriving_x: np.ndarray | None = None
        self.arriving_y: np.ndarray | None = None

    def set_style(self, pen: QtGui.QPen, dim: QtGui.QBrush,
                  outline: QtGui.QPen | None = None) -> None:
        """Stroke of the curve, the faint fill under it, and the wider contrasting stroke
        drawn first so that the curve reads on top of the band."""
        self._pen, self._dim = pen, dim
        if outline is not None:
            self._outline = outline
        self.update()

    def set_arriving_pen(self, pen: QtGui.QPen) -> None:
        """Stroke of the arriving curve (drawn over the outline pen, as the emitted one)."""
        self._arriving_pen = pen
        self.update()

    def set_arriving(self, x: np.ndarray | None, y: np.ndarray | None) -> None:
        """The arriving curve's points, or None for none."""
        self.arriving_x, self.arriving_y = x, y
        self._arriving = (QtGui.QPainterPath() if x is None else
                          pg.arrayToQPath(x, y, connect="all", finiteCheck=False))
        self.update()

    def set_band_brush(self, brush: QtGui.QBrush) -> None:
        """The brush of the visible band (a gradient of the engine's spectral colours)."""
        self._band_brush = brush
        self.update()

    def set_curve(self, x: np.ndarray, y: np.ndarray, band: np.ndarray) -> None:
        """New curve points; ``band`` is the boolean mask of the visible band."""
        self.x, self.y = x, y
        self._curve = pg.arrayToQPath(x, y, connect="all", finiteCheck=False)
        self._fill = self._closed(x, y)
        self._band = self._closed(x[band], y[band])
        self.update()

    @staticmethod
    def _closed(x, y) -> QtGui.QPainterPath:
        xs = np.concatenate([[x[0]], x, [x[-1]]])
        ys = np.concatenate([[0.0], y, [0.0]])
        path = pg.arrayToQPath(xs, ys, connect="all", finiteCheck=False)
        path.closeSubpath()
        return path

    def boundingRect(self):  # noqa: N802 - Qt API
        return self._rect

    def paint(self, p, *args):
        p.fillPath(self._fill, self._dim)
        p.fillPath(self._band, self._band_brush)
        p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
        p.strokePath(self._curve, self._outline)
        p.strokePath(self._curve, self._pen)
        if not self._arriving.isEmpty():
            p.strokePath(self._arriving, self._outline)
            p.strokePath(self._arriving, self._arriving_pen)


class SpectrumView(pg.PlotWidget):
    """Planck curve of the current temperature, the visible band filled with spectral colours."""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.setObjectName("spectrum-plot")
        self.model = model
        steady_plot(self)
        self.setMouseEnabled(x=False, y=False)
        self._theme = DIM
        plot = self.getPlotItem()
        plot.setLabel("bottom", "wavelength (nm)")
        plot.setLabel("left", "relative radiance")
        lo, hi = SPECTRUM_PLOT_RANGE_NM
        plot.setXRange(lo, hi, padding=0.0)
        plot.setYRange(0.0, 1.36, padding=0.0)
        plot.getAxis("left").setTicks([[(v, f"{v:g}") for v in (0.0, 0.25, 0.5, 0.75, 1.0)]])
        a, b = VISIBLE_BAND_NM
        plot.getAxis("bottom").setTicks([[(v, f"{v:g}") for v in
                                          (a, b, 1000.0, 1500.0, 2000.0, 2500.0)],
                                         [(v, "") for v in np.arange(200.0, hi + 1, 100.0)]])
        self.legend = plot.addLegend(offset=(-8, 36), labelTextSize="8pt")
        self._wl = model.spectrum_wavelength_nm
        a, b = VISIBLE_BAND_NM
        self._band = (self._wl >= a) & (self._wl <= b)
        # the whole curve is filled faintly (ultraviolet and infrared show so); the visible
        # band is filled again on top with its spectral colours
        self.curve = SpectrumCurve((lo, hi))
        self.edges = [pg.InfiniteLine(pos=v, angle=90, movable=False) for v in (a, b)]
        for line in self.edges:
            plot.addItem(line)
        self.edge_labels: list[pg.TextItem] = []  # the band edges are ticks of the x axis
        self.region_labels = [pg.TextItem("UV", anchor=(0.5, 0.0)),
                              pg.TextItem("visible", anchor=(0.5, 0.0)),
                              pg.TextItem("infrared", anchor=(0.5, 0.0))]
        for item, x in zip(self.region_labels, (0.5 * (lo + a), 0.5 * (a + b), 2150.0)):
            item.setPos(x, 1.35)
            plot.addItem(item)
        cache_static(*self.edges, *self.region_labels)
        self.overlays: dict[str, list[pg.PlotDataItem]] = {}
        for key, (label, parts) in OVERLAYS.items():
            items = []
            for j, _part in enumerate(parts):
                item = pg.PlotDataItem(name=label if j == 0 else None, antialias=True)
                item.setVisible(False)
                item.setZValue(20)  # above the filled curve
                plot.addItem(item)
                items.append(item)
            self.overlays[key] = items
        self.legend.setVisible(False)
        plot.addItem(self.curve)
        # the legend's samples of the emitted and the arriving curves: stand-in lines with
        # their pens (both curves are drawn by the one item above)
        self.emitted_sample = pg.PlotDataItem()
        self.arriving_sample = pg.PlotDataItem()
        self._path_words = ""
        self.peak_line = pg.InfiniteLine(angle=90, movable=False)
        plot.addItem(self.peak_line)
        self.peak_label = pg.TextItem("", anchor=(0.0, 0.0))
        plot.addItem(self.peak_label)
        self._overlay_on = {k: False for k in OVERLAYS}
        self._peak_nm = float("nan")
        self.set_theme(DIM)
        plot.getViewBox().sigResized.connect(lambda *_a: self._place_labels())
        model.events.plots.connect(lambda _change: self._show_plots())
        model.events.temperature.connect(lambda _change: self._show_curve())
        self._show_plots()
        self._show_curve()

    # -- updates ------------------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the plot (the band fill keeps the engine's colours)."""
        self._theme = theme
        self.setBackground(QtGui.QColor(theme.plot_background))
        plot = self.getPlotItem()
        _style_axes(plot, theme)
        dim = QtGui.QColor(theme.muted)
        dim.setAlpha(70)
        self.curve.set_style(_pen(theme.curve, 2.0), QtGui.QBrush(dim),
                             _pen(theme.outline, OUTLINE_WIDTH + 0.5))
        for line in self.edges:
            line.setPen(_pen(theme.plot_axis, 1, QtCore.Qt.PenStyle.DashLine))
        for item in self.edge_labels + self.region_labels:
            item.setColor(QtGui.QColor(theme.plot_axis))
        self.peak_line.setPen(_pen(theme.marker, 1, QtCore.Qt.PenStyle.DotLine))
        arriving = _pen(theme.curve_arriving, 2.0, QtCore.Qt.PenStyle.DashLine)
        self.curve.set_arriving_pen(arriving)
        self.arriving_sample.setPen(arriving)
        self.emitted_sample.setPen(_pen(theme.curve, 2.0))
        self.peak_label.setColor(QtGui.QColor(theme.marker))
        dash = QtCore.Qt.PenStyle
        styles = {"photopic": (theme.overlay_photopic, dash.DashLine),
                  "scotopic": (theme.overlay_scotopic, dash.DotLine),
                  "cmf": (None, dash.DashDotLine)}
        for key, items in self.overlays.items():
            colour, style = styles[key]
            for j, item in enumerate(items):
                c = colour or theme.overlay_cmf[j]
                item.setPen(_pen(c, 1.5, style if theme.dash_overlays or key == "cmf"
                                 else dash.SolidLine))
                # a wider solid line in the theme's outline colour under each overlay: the
                # overlay reads on the band's colours and on the dark plot alike
                item.setShadowPen(_pen(theme.outline, OUTLINE_WIDTH))
        self.legend.setLabelTextColor(QtGui.QColor(theme.text))
        self.legend.setBrush(QtGui.QBrush(QtGui.QColor(theme.panel)))
        self.legend.setPen(_pen(theme.border, 1))
        self._rebuild_legend()

    def _show_plots(self) -> None:
        """New band colours (observer, whites, display, gamut) and overlays (observer)."""
        plots = self.model.plots
        band = plots.band
        a, b = VISIBLE_BAND_NM
        grad = QtGui.QLinearGradient(a, 0.0, b, 0.0)
        for wl, rgb in zip(band.wavelength_nm, plots.band_monitor_rgb_8bit):  # on the monitor
            grad.setColorAt((wl - a) / (b - a), QtGui.QColor(int(rgb[0]), int(rgb[1]),
                                                             int(rgb[2])))
        self.curve.set_band_brush(QtGui.QBrush(grad))
        self.band_colours = band
        self.band_monitor_rgb_8bit = plots.band_monitor_rgb_8bit  # what the brush paints
        curves = plots.overlays
        for key, (_label, parts) in OVERLAYS.items():
            for item, part in zip(self.overlays[key], parts):
                wl, values = curves[part]
                item.setData(wl, values)
        s = plots.settings
        words = " and ".join(w for w, on in (("dust", s.dust_ebv > 0.0),
                                              ("air", s.altitude_deg is not None)) if on)
        if words != self._path_words:
            self._path_words = words
            self._rebuild_legend()
        self._show_arriving()

    def _show_arriving(self) -> None:
        """The model's arriving curve (hidden when nothing lies on the light's path)."""
        a = self.model.arriving
        if a is None:
            self.curve.set_arriving(None, None)
        else:
            self.curve.set_arriving(a.wavelength_nm, a.relative_radiance)

    @property
    def arriving_shown(self) -> bool:
        """Whether the arriving curve is drawn."""
        return self.curve.arriving_x is not None

    @property
    def legend_texts(self) -> list[str]:
        """The legend's entries as shown (empty when it is hidden)."""
        if not self.legend.isVisible():
            return []
        return [label.text for _sample, label in self.legend.items]

    def _show_curve(self) -> None:
        """Redraw the Planck curve and its peak for the model's temperature."""
        c = self.model.spectrum
        y = c.relative_radiance
        self.curve.set_curve(self._wl, y, self._band)
        self._show_arriving()
        self._peak_nm = c.peak_nm
        lo, hi = SPECTRUM_PLOT_RANGE_NM
        if lo <= c.peak_nm <= hi:
            self.peak_line.setVisible(True)
            self.peak_line.setValue(c.peak_nm)
            self.peak_label.setText(f"peak {c.peak_nm:.0f} nm")
            self.peak_label.setAnchor((0.0, 1.0) if c.peak_nm < 0.7 * hi else (1.0, 1.0))
            self.peak_label.setPos(c.peak_nm, 1.06)
        else:
            self.peak_line.setVisible(False)
            if c.peak_nm < lo:
                self.peak_label.setText(f"\u25c0 peak {c.peak_nm:.0f} nm (ultraviolet)")
                self.peak_label.setAnchor((0.0, 1.0))
                self.peak_label.setPos(lo, 1.06)
            else:
                self.peak_label.setText(f"peak {c.peak_nm:,.0f} nm (infrared) \u25b6")
                self.peak_label.setAnchor((1.0, 1.0))
                self.peak_label.setPos(hi, 1.06)
        self._place_labels()

    def _place_labels(self) -> None:
        """Place the region captions and the peak label so that none meets another.

        The rule: the captions sit in a row along the plot's top, "visible" first, then
        "infrared", then "UV", each centred over its region, or pushed against the plot's
        nearer side edge if that spot is taken, or hidden if neither is free. The peak label
        goes beside the peak's line (to the right while the peak lies in the left 70 % of the
        plot, else to the left; the other side next) with its foot at 1.06 of the curve's
        height; where that meets a caption it moves down a row at a time, to just under the
        captions and lower, and then further aside (half its width at a time), until it is
        free of the captions (:func:`_free`) and wholly above the curve; failing that, the
        first spot free of the captions. Run at every new curve and whenever the plot's size
        changes.
        """
        frame = _label_frame(self)
        if frame is None:
            return
        box, bounds, at = frame

        lo, hi = SPECTRUM_PLOT_RANGE_NM
        a, b = VISIBLE_BAND_NM
        top = bounds.top() + LABEL_PAD_PX
        placed: list[QtCore.QRectF] = []
        for k, x_nm, side in ((1, 0.5 * (a + b), 0), (2, 2150.0, 1), (0, 0.5 * (lo + a), -1)):
            item = self.region_labels[k]
            w, h = _text_size(item)
            left, right = bounds.left() + LABEL_PAD_PX, bounds.right() - LABEL_PAD_PX - w
            natural = min(max(at(x_nm, 1.0).x() - 0.5 * w, left), right)
            spots = [natural] + ([left] if side < 0 else [right] if side > 0 else [])
            chosen = None
            for x in spots:
                r = QtCore.QRectF(x, top, w, h)
                if _free(r, bounds, placed):
                    chosen = r
                    break
            if chosen is not None:
                placed.append(chosen)
            _set_centre(item, box, chosen)
        captions_bottom = max((r.bottom() for r in placed), default=top)
        item = self.peak_label
        w, h = _text_size(item)
        peak = self._peak_nm
        if lo <= peak <= hi:
            line = at(peak, 1.0).x()
            sides = (1, -1) if peak < 0.7 * hi else (-1, 1)
            gap = LABEL_GAP_PX
        else:  # off the plot: against the side it lies beyond
            line = bounds.left() if peak < lo else bounds.right()
            sides = (1,) if peak < lo else (-1,)
            gap = LABEL_PAD_PX
        rows = [at(lo, 1.06).y() - h]
        y = captions_bottom + LABEL_PAD_PX + 1.0
        while y + h <= bounds.bottom():
            rows.append(y)
            y += h
        spots = [QtCore.QRectF(line + gap + shift if s > 0 else line - gap - w - shift, y, w, h)
                 for shift in (0.0, 0.5 * w, w, 2.0 * w) for y in rows for s in sides]
        chosen = next((r for r in spots if _free(r, bounds, placed)
                       and self._above_curve(r, box)), None)
        if chosen is None:  # no spot clear of the curve: clear of the captions at least
            chosen = next((r for r in spots[:len(rows) * len(sides)]
                           if _free(r, bounds, placed)), None)
        if chosen is None:  # a plot too small for any free spot: keep the text readable
            r = spots[0]
            chosen = r.translated(min(max(r.left(), bounds.left()), bounds.right() - w)
                                  - r.left(), 0.0)
        _set_centre(item, box, chosen)

    def _above_curve(self, rect: QtCore.QRectF, box: pg.ViewBox) -> bool:
        """Whether ``rect`` (scene px) lies wholly above the drawn curve (and its outline)."""
        x, y = self.curve.x, self.curve.y
        if len(x) == 0:
            return True
        a = box.mapSceneToView(rect.bottomLeft())
        b = box.mapSceneToView(rect.bottomRight())
        i0, i1 = np.searchsorted(x, [a.x(), b.x()])
        i0, i1 = max(i0 - 1, 0), min(i1 + 1, len(x))
        top = float(np.max(y[i0:i1])) if i1 > i0 else 0.0
        curve_top = box.mapViewToScene(QtCore.QPointF(a.x(), top)).y()
        return rect.bottom() + 0.5 * OUTLINE_WIDTH + LABEL_PAD_PX <= curve_top

    @property
    def peak_text(self) -> str:
        """The peak label as shown."""
        return self.peak_label.textItem.toPlainText()

    def set_overlay(self, key: str, on: bool) -> None:
        """Show or hide an overlay (``photopic``, ``scotopic``, ``cmf``)."""
        self._overlay_on[key] = bool(on)
        for item in self.overlays[key]:
            item.setVisible(bool(on))
        self._rebuild_legend()

    def _rebuild_legend(self) -> None:
        if not hasattr(self, "_overlay_on"):
            return
        self.legend.clear()
        words = getattr(self, "_path_words", "")
        if words:
            self.legend.addItem(self.emitted_sample, "sent by the star")
            self.legend.addItem(self.arriving_sample, f"at the eye, after {words}")
        for k, items in self.overlays.items():
            if self._overlay_on[k]:
                self.legend.addItem(items[0], OVERLAYS[k][0])
        self.legend.setVisible(bool(words) or any(self._overlay_on.values()))
        # the legend does not move at a slider step: painted once, not under every new curve
        cache_static(self.legend, *(part for row in self.legend.items for part in row))


WHOLE_LABELS_K = (2000.0, 4000.0, 10000.0)


class ChromaticityView(pg.PlotWidget):
    """CIE x, y diagram: spectral and Planckian loci, the display gamut, the whites, the star.

    The key to the symbols is :meth:`key_html`, shown under the plot by the window.
    """

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.setObjectName("chromaticity-plot")
        self.model = model
        steady_plot(self)
        plot = self.getPlotItem()
        plot.setAspectLocked(True)
        plot.setLabel("bottom", "x")
        plot.setLabel("left", "y")
        self.locus = pg.PlotDataItem(antialias=True)
        self.planckian = pg.PlotDataItem(antialias=True)
        self.ticks = pg.ScatterPlotItem(size=5, symbol="o")
        self.gamut = pg.PlotDataItem(antialias=True)
        self.scene_white = pg.ScatterPlotItem(size=11, symbol="o")
        self.display_white = pg.ScatterPlotItem(size=9, symbol="s")
        self.star = pg.ScatterPlotItem(size=17, symbol="star")
        self.star.setData([0.0], [0.0])  # one point at the origin, moved with setPos
        self._star_rgb = None
        for item in (self.locus, self.planckian, self.ticks, self.gamut, self.scene_white,
                     self.display_white, self.star):
            plot.addItem(item)
        # the star moves at every step; everything else is drawn once into a device cache
        cache_static(self.locus, self.planckian, self.ticks, self.gamut, self.scene_white,
                     self.display_white)
        self.tick_labels: list[tuple[float, pg.TextItem]] = []
        self.wavelength_labels: list[pg.TextItem] = []
        self._theme = DIM
        self._zoom = "whole"
        self.diagram = None
        self._star_xy = (float("nan"), float("nan"))
        self.set_theme(DIM)
        self.set_zoom("whole")
        box = plot.getViewBox()  # a new size or range places the labels again
        box.sigResized.connect(lambda *_a: self._place_labels())
        box.sigRangeChanged.connect(lambda *_a: self._place_labels())
        model.events.plots.connect(lambda _change: self._show_plots())
        model.events.temperature.connect(lambda _change: self._show_star())
        self._show_plots()

    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the diagram."""
        self._theme = theme
        self.setBackground(QtGui.QColor(theme.plot_background))
        _style_axes(self.getPlotItem(), theme)
        self.locus.setPen(_pen(theme.locus, 1.5))
        self.planckian.setPen(_pen(theme.planckian, 1.5))
        self.ticks.setBrush(QtGui.QColor(theme.planckian))
        self.ticks.setPen(_pen(theme.planckian, 1))
        self.gamut.setPen(_pen(theme.gamut, 1.5, QtCore.Qt.PenStyle.DashLine))
        self.scene_white.setPen(_pen(theme.marker, 1.5))
        self.scene_white.setBrush(QtGui.QBrush(QtCore.Qt.BrushStyle.NoBrush))
        self.display_white.setPen(_pen(theme.accent, 1.5))
        self.display_white.setBrush(QtGui.QBrush(QtCore.Qt.BrushStyle.NoBrush))
        self.star.setPen(_pen(theme.marker, 1.2))
        for _t, item in self.tick_labels:
            item.setColor(QtGui.QColor(theme.planckian))
        for item in self.wavelength_labels:
            item.setColor(QtGui.QColor(theme.plot_axis))

    def key_html(self) -> str:
        """Rich-text key to the symbols, in the theme's colours."""
        t = self._theme
        s = self.model.settings
        white, disp = s.scene_white, s.display.name

        def span(colour, text):
            return f'<span style="color:{colour}">{text}</span>'

        return ("&nbsp;&nbsp;".join([
            span(t.locus, "— spectral locus"),
            span(t.planckian, "—• Planckian locus"),
            span(t.gamut, f"- - gamut of {disp}"),
            span(t.marker, f"○ scene white {white}"),
            span(t.accent, "□ display white"),
            span(t.marker, "★ this star")]))

    def _show_plots(self) -> None:
        """Redraw everything that depends on the settings (observer, whites, display)."""
        d = self.model.plots.diagram
        self.diagram = d
        plot = self.getPlotItem()
        self.locus.setData(d.spectral_locus_xy[:, 0], d.spectral_locus_xy[:, 1])
        self.planckian.setData(d.planckian_xy[:, 0], d.planckian_xy[:, 1])
        self.ticks.setData(d.tick_xy[:, 0], d.tick_xy[:, 1])
        self.gamut.setData(d.gamut_xy[:, 0], d.gamut_xy[:, 1])
        self.scene_white.setData([d.scene_white_xy[0]], [d.scene_white_xy[1]])
        self.display_white.setData([d.display_white_xy[0]], [d.display_white_xy[1]])
        for _t, item in self.tick_labels:
            plot.removeItem(item)
        for item in self.wavelength_labels:
            plot.removeItem(item)
        self.tick_labels = []
        for t, (x, y) in zip(d.tick_temperature_K, d.tick_xy):
            item = pg.TextItem(f"{t:.0f} K", anchor=(0.5, 0.5))
            item.setPos(x, y)
            plot.addItem(item)
            self.tick_labels.append((float(t), item))
        self.wavelength_labels = []
        for wl, (x, y) in zip(d.spectral_tick_nm, d.spectral_tick_xy):
            item = pg.TextItem(f"{wl:.0f}", anchor=(0.5, 0.5))
            item.setPos(x, y)
            plot.addItem(item)
            self.wavelength_labels.append(item)
        obs = "CIE 1931 2\u00b0" if d.observer == "cie1931" else "CIE 1964 10\u00b0"
        plot.setLabel("bottom", f"x ({obs} observer)")
        self.set_theme(self._theme)
        self._label_visibility()
        self._show_star()

    def _show_star(self) -> None:
        """Move the current star's marker and fill it with its display colour."""
        c = self.model.colour
        xy = c.plain.xy
        self._star_xy = (float(xy[0]), float(xy[1]))
        self.star.setPos(self._star_xy[0], self._star_xy[1])
        rgb = tuple(int(v) for v in c.monitor_rgb_8bit)  # converted to the monitor
        if rgb != self._star_rgb:  # a new fill re-renders the symbol; moving does not
            self._star_rgb = rgb
            self.star.setBrush(QtGui.QColor(*rgb))

    @property
    def star_xy(self) -> tuple[float, float]:
        """Where the star marker is."""
        return self._star_xy

    def set_zoom(self, mode: str) -> None:
        """``whole`` diagram or ``locus`` (the neighbourhood of the Planckian locus)."""
        self._zoom = mode
        plot = self.getPlotItem()
        if mode == "locus":
            plot.setRange(xRange=(0.22, 0.62), yRange=(0.22, 0.46), padding=0.0)
        else:
            plot.setRange(xRange=(-0.12, 0.8), yRange=(-0.02, 0.88), padding=0.0)
        self._label_visibility()

    def _label_visibility(self) -> None:
        self._place_labels()

    def _place_labels(self) -> None:
        """Place the temperature and wavelength labels so that none overlaps another.

        The rule (:func:`place_labels`): temperature labels first, the round ones
        (:data:`WHOLE_LABELS_K`) before the others, each offset from its tick along the
        Planckian locus's normal, below the locus first (away from the spectral locus),
        above it next; then the wavelength labels, every other one first (460, 500, 540,
        ... nm), each offset outward along the spectral locus's normal (away from the
        equal-energy white, x = y = 1/3), turned up to 90 degrees either way if that spot
        is taken. A label that finds no free spot inside the plot is hidden. The whole
        diagram shows the round temperatures only, the locus view every temperature and no
        wavelength. Run again whenever the plot's size or range changes.
        """
        d = self.diagram
        if d is None or not self.tick_labels and not self.wavelength_labels:
            return
        frame = _label_frame(self)
        if frame is None:
            return
        box, bounds, at = frame

        wanted, items = [], []
        temps = [(t, item, xy) for (t, item), xy in zip(self.tick_labels, d.tick_xy)
                 if self._zoom == "locus" or t in WHOLE_LABELS_K]
        temps.sort(key=lambda e: e[0] not in WHOLE_LABELS_K)  # stable: round ones first
        for t, item, xy in temps:
            nx, ny = _normal_px(box, d.planckian_xy, xy)
            down = (nx, ny) if ny >= 0 else (-nx, -ny)
            up = (-down[0], -down[1])
            dirs = [_turned(down, a) for a in LABEL_TURNS_DEG[:5]] + \
                [_turned(up, a) for a in LABEL_TURNS_DEG[:5]]
            wanted.append((at(*xy), _text_size(item), dirs))
            items.append(item)
        shown = set(id(i) for i in items)
        if self._zoom != "locus":
            white = at(1.0 / 3.0, 1.0 / 3.0)
            order = sorted(range(len(self.wavelength_labels)),
                           key=lambda k: int(round(d.spectral_tick_nm[k] - 460.0)) % 40 != 0)
            for k in order:
                item, xy = self.wavelength_labels[k], d.spectral_tick_xy[k]
                p = at(*xy)
                nx, ny = _normal_px(box, d.spectral_locus_xy, xy)
                if nx * (p.x() - white.x()) + ny * (p.y() - white.y()) < 0:
                    nx, ny = -nx, -ny  # outward, away from the white
                wanted.append((p, _text_size(item), [_turned((nx, ny), a)
                                                     for a in LABEL_TURNS_DEG]))
                items.append(item)
                shown.add(id(item))
        for item, rect in zip(items, place_labels(wanted, bounds)):
            _set_centre(item, box, rect)
        for _t, item in self.tick_labels:
            if id(item) not in shown:
                item.setVisible(False)
        for item in self.wavelength_labels:
            if id(item) not in shown:
                item.setVisible(False)
