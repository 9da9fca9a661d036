"""Temperature audition: the mired slider, the kelvin entry, B-V and spectral class, the strip.

The slider's integer positions are the window model's slider scale
(:attr:`starkiln.gui.model.WindowModel.slider_scale`, equal mired steps); arrow
keys step 1 mired, page keys 10 mired, the mouse wheel 1 mired per notch. The
slider hands its position to the model, which owns the one conversion to a
temperature. The strip under the slider shows the render path's colours for
equal-mired cells across the same range; clicking a cell jumps there.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from starkiln.engine.stars.temperature import SPECTRAL_CLASS_TEFF_K
from starkiln.gui.fields import INPUT_ERRORS, ErrorLine, Field, parse_number, set_role
from starkiln.gui.swatches import SwatchStrip
from starkiln.gui.theme import Theme


class TemperatureSlider(QtWidgets.QSlider):
    """A horizontal QSlider on a mired scale; one wheel notch is one single step."""

    def __init__(self, scale, parent=None):
        super().__init__(QtCore.Qt.Orientation.Horizontal, parent)
        self.setObjectName("temperature")
        self.scale = scale
        per_mired = int(round(1.0 / scale.mired_per_step))
        self.setRange(0, scale.steps)
        self.setSingleStep(per_mired)
        self.setPageStep(10 * per_mired)
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
    """Slider, number entries and the temperature strip, bound to a :class:`starkiln.gui.model.WindowModel`."""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        self.scale = model.slider_scale
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
                        tooltip="Johnson B-V colour index, -0.40 to 10.66: shown as the "
                                "blackbody of the same colour (synthetic photometry)")
        self.spectral = QtWidgets.QComboBox(self)
        self.spectral.setObjectName("class-entry")
        self.spectral.setEditable(True)
        self.spectral.setInsertPolicy(QtWidgets.QComboBox.InsertPolicy.NoInsert)
        self.spectral.addItems([f"{k}V" for k in SPECTRAL_CLASS_TEFF_K])
        self.spectral.setCurrentIndex(-1)
        self.spectral.lineEdit().setPlaceholderText("class")
        self.spectral.setFixedWidth(82)
        self.spectral.setToolTip("Main-sequence spectral class O5V-M8V, e.g. G2V or K5.5V: "
                                 "shown as the blackbody of the class's mean B-V")
        self.spectral.lineEdit().setToolTip(self.spectral.toolTip())
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
        # named by the colour they go to: "cool" means bluer to photographers and lighting
        # people but a lower temperature to astronomers, so neither word is used
        cool = QtWidgets.QLabel("redder", self)
        cool.setObjectName("slider-end-low")
        cool.setToolTip(f"Lower temperatures, down to {self.scale.temperature_min_K:g} K")
        hot = QtWidgets.QLabel("bluer", self)
        hot.setObjectName("slider-end-high")
        hot.setToolTip(f"Higher temperatures, up to {self.scale.temperature_max_K:g} K")
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
        model.events.temperature.connect(lambda change: self._sync(change.origin))
        model.events.plots.connect(lambda _change: self.refresh_strip())
        self.strip.set_ticks([(fraction, f"{t:g} K") for fraction, t in model.strip_ticks])
        self.refresh_strip()
        self._sync("")

    # -- theme / strip -----------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the strip."""
        self.strip.set_theme(theme)

    @property
    def cell_temperatures(self):
        """Temperatures of the strip's cells (K)."""
        return self.model.plots.strip_temperature_K

    def refresh_strip(self) -> None:
        """Show the strip's cells for the current settings (the model's plot data)."""
        plots = self.model.plots
        tips = [f"{t:.0f} K  {h}" + ("" if ok else "  (outside gamut, mapped)") +
                ("  (clipped for this monitor)" if cut else "")
                for t, h, ok, cut in zip(plots.strip_temperature_K, plots.strip_hex,
                                         plots.strip.in_gamut, plots.strip_monitor_clipped)]
        self.strip.set_cells(plots.strip_monitor_rgb_8bit, tooltips=tips,
                             clipped=plots.strip_monitor_clipped)
        self._mark()

    # -- user input ----------------------------------------------------------------------
    def _slider_moved(self, position: int) -> None:
        try:
            self.model.set_slider_position(position, origin="slider")
        except INPUT_ERRORS as exc:  # cannot happen inside the scale; shown if it does
            self.kelvin.show_error(str(exc))

    def _strip_picked(self, index: int) -> None:
        self.model.set_temperature(float(self.cell_temperatures[index]), origin="strip")

    def _apply_kelvin(self, value: float) -> None:
        self.model.set_temperature(value, origin="kelvin")

    def _apply_bv(self, value: float) -> None:
        self.model.set_temperature_from_bv(value, origin="bv")

    def _apply_class(self) -> None:
        text = self.spectral.currentText().strip()
        if not text:
            return
        try:
            self.model.set_temperature_from_class(text, origin="class")
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

    # -- model -> controls -------------------------------------------------------------
    def _sync(self, origin: str) -> None:
        """Show the model's temperature in every control but the one it came from."""
        m = self.model
        if origin != "slider":
            # the model is at this position already: the slider's echo changes nothing
            self.slider.setValue(m.slider_position)
        if origin != "kelvin":
            self.kelvin.set_text(f"{m.temperature_K:.0f}")
        if origin != "bv":
            self.bv.set_text("")
        if origin != "class":
            self.spectral.setCurrentIndex(-1)  # user edits only are connected (activated,
            self.spectral.setEditText("")      # editingFinished): nothing to block here
            self._clear_class_error()
        self.mired_label.setText(f"{m.mired:.1f} mired")
        self._mark()

    def _mark(self) -> None:
        self.strip.set_marker(self.model.strip_cell, self.model.slider_fraction)
