"""The Compare panel: up to four pinned settings side by side, and an A/B pair of settings files.

Each pin is one row: its words, a strip of the same temperatures
(:data:`starkiln.gui.model.PIN_TEMPERATURES_K`) rendered with the pin's settings, an "Use" button
that makes the pin's settings the main view's, and an "Unpin" button. The strips' colours are
the model's (:meth:`starkiln.gui.model.WindowModel.pin_strips`: the render path, converted to the
monitor at the viewing level); this module paints them unchanged and computes no colour.

"A/B" reads two settings files into two pins marked A and B; "Flip A/B" switches the main view
between them. A file the engine rejects gives its one-line message inline, under the buttons,
and the pins stay as they were.

References
----------
Colours: :func:`starkiln.engine.pipeline.render.render` and
:func:`starkiln.engine.colour.monitor.rendered_on_monitor`, through the window model.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from starkiln.gui.fields import INPUT_ERRORS
from starkiln.gui.model import MAX_PINS, WindowModel
from starkiln.gui.swatches import SwatchStrip
from starkiln.gui.theme import DIM, Theme


class PinRow(QtWidgets.QWidget):
    """One pin: its label, its strip, "Use" and "Unpin"."""

    def __init__(self, index: int, parent=None):
        super().__init__(parent)
        self.index = index
        self.setObjectName(f"pin-{index}")
        lay = QtWidgets.QGridLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setHorizontalSpacing(4)
        lay.setVerticalSpacing(0)
        self.label = QtWidgets.QLabel(self)
        self.label.setObjectName(f"pin-{index}-label")
        self.strip = SwatchStrip(f"pin-{index}-strip", height=40, parent=self)
        self.strip.setToolTip("The same temperatures with this pin's settings: click a swatch "
                              "to audition its temperature")
        self.use = QtWidgets.QPushButton("Use", self)
        self.use.setObjectName(f"pin-{index}-use")
        self.use.setToolTip("Make this pin's settings the main view's (Edit > Undo steps back)")
        self.unpin = QtWidgets.QPushButton("Unpin", self)
        self.unpin.setObjectName(f"pin-{index}-unpin")
        self.unpin.setToolTip("Remove this pin")
        lay.addWidget(self.label, 0, 0, 1, 3)
        lay.addWidget(self.strip, 1, 0)
        lay.addWidget(self.use, 1, 1)
        lay.addWidget(self.unpin, 1, 2)
        lay.setColumnStretch(0, 1)


class ComparePanel(QtWidgets.QWidget):
    """Pinned settings as strips, bound to a :class:`starkiln.gui.model.WindowModel`.

    Signals
    -------
    status(str) : a message for the status bar (a refused pin, a flip).
    ab_requested() : the A/B button was pressed (the window asks for the two files).
    """

    status = QtCore.Signal(str)
    ab_requested = QtCore.Signal()

    def __init__(self, model: WindowModel, parent=None):
        super().__init__(parent)
        self.setObjectName("compare-panel")
        self.model = model
        self._theme: Theme = DIM
        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(4, 2, 4, 2)
        outer.setSpacing(3)
        bar = QtWidgets.QHBoxLayout()
        self.pin_button = QtWidgets.QPushButton("Pin current settings", self)
        self.pin_button.setObjectName("pin-current")
        self.pin_button.setToolTip(f"Pin the main view's settings here (up to {MAX_PINS})")
        self.ab_button = QtWidgets.QPushButton("Compare A/B\u2026", self)
        self.ab_button.setObjectName("compare-ab")
        self.ab_button.setToolTip("Pin two settings files as A and B")
        self.flip_button = QtWidgets.QPushButton("Flip A/B", self)
        self.flip_button.setObjectName("flip-ab")
        self.flip_button.setToolTip("Show A or B in the main view, in turn")
        self.at_magnitude = QtWidgets.QCheckBox("At the current magnitude", self)
        self.at_magnitude.setObjectName("pins-at-magnitude")
        self.at_magnitude.setToolTip("Strips at the current magnitude (night vision, dimmed) "
                                     "instead of full colour")
        for w in (self.pin_button, self.ab_button, self.flip_button, self.at_magnitude):
            bar.addWidget(w)
        bar.addStretch(1)
        outer.addLayout(bar)
        self.error = QtWidgets.QLabel(self)
        self.error.setObjectName("compare-error")
        self.error.setWordWrap(True)
        self.error.hide()
        outer.addWidget(self.error)
        # the rows scroll, so a short window can keep the panel docked and small
        self.scroll = QtWidgets.QScrollArea(self)
        self.scroll.setObjectName("compare-rows")
        self.scroll.setWidgetResizable(True)
        self.scroll.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        inner = QtWidgets.QWidget(self.scroll)
        rows = QtWidgets.QVBoxLayout(inner)
        rows.setContentsMargins(0, 0, 0, 0)
        rows.setSpacing(3)
        self.rows: list[PinRow] = []
        for i in range(MAX_PINS):
            row = PinRow(i, inner)
            row.use.clicked.connect(lambda _=False, i=i: self.use_pin(i))
            row.unpin.clicked.connect(lambda _=False, i=i: self.unpin(i))
            row.strip.picked.connect(self._cell_picked)
            row.hide()
            rows.addWidget(row)
            self.rows.append(row)
        self.empty = QtWidgets.QLabel("Nothing pinned: Pin current settings (Ctrl+P) keeps the "
                                      "main view's settings here to compare", inner)
        self.empty.setObjectName("compare-empty")
        self.empty.setProperty("role", "muted")
        self.empty.setWordWrap(True)
        rows.addWidget(self.empty)
        rows.addStretch(1)
        self.scroll.setWidget(inner)
        self.scroll.setMinimumHeight(self.rows[0].sizeHint().height())
        outer.addWidget(self.scroll, 1)
        self.pin_button.clicked.connect(self.pin_current)
        self.ab_button.clicked.connect(self.ab_requested.emit)
        self.flip_button.clicked.connect(self.flip)
        self.at_magnitude.toggled.connect(lambda _on: self.refresh())
        events = model.events
        events.pins.connect(lambda _c: self.refresh())
        for event in (events.monitor, events.viewing):
            event.connect(lambda _c: self.refresh())
        events.magnitude.connect(lambda _c: self.at_magnitude.isChecked() and self.refresh())
        self.refresh()

    # -- actions --------------------------------------------------------------------------
    def pin_current(self) -> bool:
        """Pin the main view's settings; a fifth pin is refused with a status message."""
        try:
            self.model.pin_current()
        except INPUT_ERRORS as exc:
            self.status.emit(f"\u26a0 {exc}")
            return False
        self.status.emit(f"Pinned: {self.model.pins[-1].label}")
        return True

    def unpin(self, index: int) -> None:
        """Remove pin ``index``."""
        try:
            self.model.unpin(index)
        except INPUT_ERRORS as exc:
            self.status.emit(f"\u26a0 {exc}")

    def use_pin(self, index: int) -> None:
        """Make pin ``index``'s settings the main view's."""
        self.model.set_settings(self.model.pins[index].settings, origin="pin")

    def load_ab(self, path_a, path_b) -> bool:
        """Pin two settings files as A and B; a bad file's message is shown inline."""
        try:
            self.model.load_ab(path_a, path_b)
        except INPUT_ERRORS as exc:
            self.show_error(str(exc))
            return False
        self.show_error("")
        return True

    def flip(self) -> str:
        """Show the other of A and B in the main view; returns the role shown ("" if none)."""
        try:
            role = self.model.flip_ab()
        except INPUT_ERRORS as exc:
            self.show_error(str(exc))
            return ""
        self.show_error("")
        self.status.emit(f"Showing {self.model.ab_pin(role).label}")
        return role

    def show_error(self, text: str) -> None:
        """The inline one-line message ("" hides it)."""
        self.error.setText(f"\u26a0 {text}" if text else "")
        self.error.setVisible(bool(text))

    def _cell_picked(self, index: int) -> None:
        strips = self.model.pin_strips()
        if strips:
            self.model.set_temperature(float(strips[0].temperature_K[index]), origin="pin")

    def wanted_height(self) -> int:
        """Height that shows every pin without scrolling, px."""
        inner = self.scroll.widget()
        bar = self.pin_button.sizeHint().height() + 8
        error = self.error.sizeHint().height() if self.error.isVisible() else 0
        return bar + error + inner.sizeHint().height() + 8

    # -- view -----------------------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the strips."""
        self._theme = theme
        for row in self.rows:
            row.strip.set_theme(theme)

    def refresh(self) -> None:
        """Show the model's pins and their strips."""
        strips = self.model.pin_strips(at_magnitude=self.at_magnitude.isChecked())
        for i, row in enumerate(self.rows):
            if i >= len(strips):
                row.hide()
                continue
            s = strips[i]
            row.label.setText(s.pin.label)
            row.label.setToolTip(s.pin.label)
            tips = [f"{t:g} K  {h}" + ("  (clipped for this monitor)" if c else "")
                    for t, h, c in zip(s.temperature_K, s.hex, s.monitor_clipped)]
            row.strip.set_cells(s.monitor_rgb_8bit, labels=[f"{t / 1000:g}k"
                                                            for t in s.temperature_K],
                                tooltips=tips, clipped=s.monitor_clipped)
            row.show()
        self.empty.setVisible(not strips)
        self.updateGeometry()
        has_ab = self.model.ab_pin("A") is not None and self.model.ab_pin("B") is not None
        self.flip_button.setEnabled(has_ab)
