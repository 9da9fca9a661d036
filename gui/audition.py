"""Temperature audition: the mired slider, the kelvin entry, B-V and spectral class, the strip.

The slider's integer positions are the engine's :class:`starkiln.engine.plotdata.plots.MiredScale`
(equal mired steps); arrow keys step 1 mired, page keys 10 mired, the mouse
wheel 1 mired per notch. The strip under the slider shows the render path's
colours for equal-mired cells across the same range; clicking a cell jumps there.
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtWidgets

from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.stars.temperature import SPECTRAL_CLASS_TEFF_K, temperature_from_bv
from starkiln.engine.stars.temperature import temperature_from_spectral_class
from starkiln.engine.plotdata.plots import MiredScale, temperature_to_mired
from starkiln.gui.fields import INPUT_ERRORS, ErrorLine, Field, parse_number, set_role
from starkiln.gui.swatches import SwatchStrip
from starkiln.gui.theme import Theme

#: Slider resolution and key steps (in positions of the mired scale).
POSITIONS_PER_MIRED = 4
STRIP_CELLS = 48
STRIP_TICKS_K = (1000, 1500, 2000, 3000, 4000, 5000, 6500, 10000, 40000)


class TemperatureSlider(QtWidgets.QSlider):
    """A horizontal QSlider on the mired scale; one wheel notch is one single step."""

    def __init__(self, scale: MiredScale, parent=None):
        super().__init__(QtCore.Qt.Orientation.Horizontal, parent)
        self.setObjectName("temperature")
        self.scale = scale
        self.setRange(0, scale.steps)
        self.setSingleStep(POSITIONS_PER_MIRED)
        self.setPageStep(10 * POSITIONS_PER_MIRED)
        self.setFocusPolicy(QtCore.Qt.FocusPolicy.WheelFocus)
        self.setToolTip("Temperature on an even mired scale: arrows 1 mired, Page Up/Down "
                        "10 mired, wheel 1 mired a notch")
        self.setAccessibleName("Temperature")
        self.setAutoFillBackground(True)  # opaque: a step repaints the slider only

    def wheelEvent(self, event):  # noqa: N802 - Qt API
        steps = event.angleDelta().y() / 120.0 or event.angleDelta().x() / 120.0
        if steps:
            # up/away = hotter, like pressing the right arrow
            n = int(round(steps)) or (1 if steps > 0 else -1)
            action = (QtWidgets.QAbstractSlider.SliderAction.SliderSingleStepAdd if n > 0
                      else QtWidgets.QAbstractSlider.SliderAction.SliderSingleStepSub)
            for _ in range(abs(n)):
                self.triggerAction(action)
        event.accept()


class AuditionPanel(QtWidgets.QWidget):
    """Slider, number entries and the temperature strip, bound to a :class:`starkiln.gui.session.Session`."""

    def __init__(self, session, parent=None):
        super().__init__(parent)
        self.session = session
        self.scale = MiredScale(mired_per_step=1.0 / POSITIONS_PER_MIRED)
        self.slider = TemperatureSlider(self.scale, self)
        self.strip = SwatchStrip("temperature-strip", height=52, parent=self)
        self.strip.setToolTip("Equal-mired steps across the range: click a swatch to jump to it")
        self.kelvin = Field("temperature-entry", lambda s: parse_number(s, "temperature"),
                            self._apply_kelvin, placeholder="kelvin", width=80, unit="K",
                            tooltip="Temperature in kelvin, 500-100000 (the slider covers "
                                    f"{self.scale.temperature_min_K:g}-"
                                    f"{self.scale.temperature_max_K:g} K)")
        self.bv = Field("bv-entry", lambda s: parse_number(s, "B-V"), self._apply_bv,
                        placeholder="B-V", width=64,
                        tooltip="Johnson B-V colour index, -0.40 to 2.00 (Ballesteros 2012)")
        self.spectral = QtWidgets.QComboBox(self)
        self.spectral.setObjectName("class-entry")
        self.spectral.setEditable(True)
        self.spectral.setInsertPolicy(QtWidgets.QComboBox.InsertPolicy.NoInsert)
        self.spectral.addItems([f"{k}V" for k in SPECTRAL_CLASS_TEFF_K])
        self.spectral.setCurrentIndex(-1)
        self.spectral.lineEdit().setPlaceholderText("class")
        self.spectral.setFixedWidth(82)
        self.spectral.setToolTip("Main-sequence spectral class O5V-M8V, e.g. G2V or K5.5V")
        self.spectral.lineEdit().editingFinished.connect(self._apply_class)
        self.spectral.activated.connect(lambda _i: self._apply_class())
        self.class_error = ErrorLine(self)
        self.class_error.setObjectName("error-class-entry")
        self.mired_label = QtWidgets.QLabel(self)
        self.mired_label.setProperty("role", "muted")
        self.mired_label.setFixedWidth(90)
        self.mired_label.setProperty("opaque", True)
        self.mired_label.setAutoFillBackground(True)

        title = QtWidgets.QLabel("Temperature", self)
        title.setStyleSheet("font-weight: bold;")
        cool = QtWidgets.QLabel("cooler", self)
        hot = QtWidgets.QLabel("hotter", self)
        for w in (cool, hot):
            w.setProperty("role", "muted")
        top = QtWidgets.QHBoxLayout()
        top.setSpacing(8)
        top.addWidget(title)
        top.addWidget(cool)
        top.addWidget(self.slider, 1)
        top.addWidget(hot)
        entries = QtWidgets.QHBoxLayout()
        entries.setSpacing(6)
        for label, widget in (("T", self.kelvin), ("or B\u2212V", self.bv)):
            lab = QtWidgets.QLabel(label, self)
            lab.setProperty("role", "muted")
            entries.addWidget(lab)
            entries.addWidget(widget, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        lab = QtWidgets.QLabel("or class", self)
        lab.setProperty("role", "muted")
        entries.addWidget(lab)
        entries.addWidget(self.spectral, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        entries.addWidget(self.mired_label)
        top.addLayout(entries)
        layout = QtWidgets.QVBoxLayout(self)
        layout.setContentsMargins(8, 6, 8, 2)
        layout.setSpacing(2)
        layout.addLayout(top)
        for err in (self.kelvin.take_error(), self.bv.take_error()):
            err.setAlignment(QtCore.Qt.AlignmentFlag.AlignRight)
            layout.addWidget(err)
        self.class_error.setAlignment(QtCore.Qt.AlignmentFlag.AlignRight)
        layout.addWidget(self.class_error)
        layout.addWidget(self.strip)

        self.slider.valueChanged.connect(self._slider_moved)
        self.strip.picked.connect(self._strip_picked)
        session.colour_changed.connect(self._on_colour)
        session.settings_changed.connect(self.refresh_strip)
        self._cell_temperatures = self.scale.cell_temperatures(STRIP_CELLS)
        self._positions = self.scale.temperature_at(np.arange(self.scale.steps + 1))
        session.set_slider_temperatures(self._positions)
        self.strip.set_ticks([(float(self.scale.fraction_of(t)), f"{t:g} K")
                              for t in STRIP_TICKS_K])
        self.refresh_strip()
        self._sync(session.temperature_K, "")

    # -- theme / strip -----------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the strip."""
        self.strip.set_theme(theme)

    @property
    def cell_temperatures(self):
        """Temperatures of the strip's cells (K)."""
        return self._cell_temperatures

    def refresh_strip(self) -> None:
        """Render the strip's cells with the current settings."""
        from starkiln.engine.pipeline.render import render

        r = render(self.session.settings, self._cell_temperatures)
        tips = [f"{t:.0f} K  {h}" + ("" if ok else "  (outside gamut, mapped)")
                for t, h, ok in zip(self._cell_temperatures, r.hex(), r.in_gamut)]
        self.strip.set_cells(to_8bit(r.rgb_encoded), tooltips=tips)
        self._mark(self.session.temperature_K)

    # -- user input ----------------------------------------------------------------------
    def _slider_moved(self, position: int) -> None:
        t = float(self._positions[position])
        try:
            self.session.set_temperature(t, source="slider", position=position)
        except INPUT_ERRORS as exc:  # cannot happen inside the scale; shown if it does
            self.kelvin.show_error(str(exc))

    def _strip_picked(self, index: int) -> None:
        self.session.set_temperature(float(self._cell_temperatures[index]), source="strip")

    def _apply_kelvin(self, value: float) -> None:
        self.session.set_temperature(value, source="kelvin")

    def _apply_bv(self, value: float) -> None:
        self.session.set_temperature(float(temperature_from_bv(value)), source="bv")

    def _apply_class(self) -> None:
        text = self.spectral.currentText().strip()
        if not text:
            return
        try:
            t = temperature_from_spectral_class(text)
            self.session.set_temperature(t, source="class")
        except INPUT_ERRORS as exc:
            self.class_error.show_error(str(exc))
            set_role(self.spectral.lineEdit(), "invalid", True)
            return
        self._clear_class_error()

    def _clear_class_error(self) -> None:
        self.class_error.clear_error()
        if self.spectral.lineEdit().property("invalid"):
            set_role(self.spectral.lineEdit(), "invalid", False)

    def commit_class(self, text: str) -> None:
        """Type a spectral class and commit it (as the user would)."""
        self.spectral.setEditText(text)
        self._apply_class()

    # -- session -> controls -----------------------------------------------------------
    def _on_colour(self, what: str) -> None:
        if what == "temperature":
            self._sync(self.session.temperature_K, self.session.source)

    def _sync(self, t: float, source: str) -> None:
        if source != "slider":
            self.slider.blockSignals(True)
            self.slider.setValue(int(self.scale.position_of(t)))
            self.slider.blockSignals(False)
        if source != "kelvin":
            self.kelvin.set_text(f"{t:.0f}")
        if source != "bv":
            self.bv.set_text("")
        if source != "class":
            self.spectral.blockSignals(True)
            self.spectral.setCurrentIndex(-1)
            self.spectral.setEditText("")
            self.spectral.blockSignals(False)
            self._clear_class_error()
        self.mired_label.setText(f"{float(temperature_to_mired(t)):.1f} mired")
        self._mark(t)

    def _mark(self, t: float) -> None:
        frac = float(self.scale.fraction_of(t))
        index = min(int(frac * STRIP_CELLS), STRIP_CELLS - 1)
        self.strip.set_marker(index, frac)
