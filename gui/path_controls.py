"""The path of the light tab: interstellar dust and the Earth's air between the star and the eye.

Every value goes to :meth:`starkiln.gui.model.WindowModel.change` (the engine validates); the
law names and R_V ranges are the engine's (:mod:`starkiln.engine.path.dust`), the altitude
range the engine's (:mod:`starkiln.engine.path.atmosphere`), and the readout shows what the
model has from the render path (``extinction_mag``) and the airmass formula. A value the
engine refuses is shown under its control and the settings stay as they were.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from starkiln.engine.errors import StarkilnError
from starkiln.engine.path.dust import DUST_LAWS, EBV_RANGE, check_ebv, check_rv, rv_range
from starkiln.gui.fields import CheckedSpin, Choice, ErrorLine, Form

#: Readable names of the dust laws ([Gordon2023], [Fitzpatrick1999], [Cardelli1989]), short
#: enough for the narrowest window; each item's tooltip gives the whole name.
DUST_LAW_LABELS = {"G23": "Gordon 2023 (Milky Way)", "F99": "Fitzpatrick 1999",
                   "CCM89": "Cardelli et al. 1989"}
DUST_LAW_TIPS = {
    "G23": "Gordon et al. 2023: the average Milky Way dust curve, R_V 2.3-5.6 (the default)",
    "F99": "Fitzpatrick 1999: Milky Way dust, R_V 2.0-6.0",
    "CCM89": "Cardelli, Clayton & Mathis 1989: the classic Milky Way curve, R_V 2.0-6.0",
}
#: The window's E(B-V) span, mag (a settings file may go to the engine's 10 mag): 3 mag of
#: colour excess already takes about 9 magnitudes from V (common practice, R_V = 3.1).
EBV_CONTROL_MAG = (0.0, 3.0)
EBV_STEPS_PER_MAG = 100  # the slider's step, 0.01 mag
#: The altitude slider's span, degrees (the engine takes 0-90; 1 keeps the airmass below 27).
ALTITUDE_CONTROL_DEG = (1, 90)
ALTITUDE_START_DEG = 30

TIPS = {
    "ebv": "E(B-V): how strongly interstellar dust reddens the star, in magnitudes (0 = no dust)",
    "rv": "R_V: the kind of dust; higher values dim more evenly and redden less (3.1 is usual)",
    "law": "Which published dust curve turns E(B-V) and R_V into the loss at each wavelength",
    "air": "Let the star's light pass through the Earth's air as well (clear site, sea level)",
    "altitude": "Altitude: the star's height above the horizon in degrees (90 = overhead)",
}


def _slider(name: str, lo: int, hi: int, parent) -> QtWidgets.QSlider:
    s = QtWidgets.QSlider(QtCore.Qt.Orientation.Horizontal, parent)
    s.setObjectName(name)
    s.setRange(lo, hi)
    s.setMinimumWidth(90)
    return s


class PathTab(Form):
    """Dust (E(B-V) slider and spin, law, R_V) and air (on/off, altitude slider), a readout."""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        # a label and its control share a line where they fit, else the control goes under
        self.form.setRowWrapPolicy(QtWidgets.QFormLayout.RowWrapPolicy.WrapLongRows)
        title = QtWidgets.QLabel("Path of the light", self)
        title.setObjectName("path-title")
        font = title.font()
        font.setBold(True)
        title.setFont(font)
        self.form.addRow(title)
        self.note("Interstellar dust and the Earth's air between the star and the eye. With "
                  "both off, the light arrives as the star sends it.")
        # -- dust
        box = QtWidgets.QWidget(self)
        row = QtWidgets.QHBoxLayout(box)
        row.setContentsMargins(0, 0, 0, 0)
        row.setSpacing(4)
        self.ebv_slider = _slider("slider-ebv", 0,
                                  int(EBV_CONTROL_MAG[1] * EBV_STEPS_PER_MAG), box)
        self.ebv_slider.setPageStep(10)
        self.ebv = CheckedSpin("ebv", lambda v: self._apply(dust_ebv=v), self._ebv_refused, self)
        self.ebv.setRange(*EBV_CONTROL_MAG)
        self.ebv.setDecimals(2)
        self.ebv.setSingleStep(1.0 / EBV_STEPS_PER_MAG)
        self.ebv.setSuffix(" mag")
        for w in (self.ebv_slider, self.ebv):
            w.setToolTip(TIPS["ebv"])
        row.addWidget(self.ebv_slider, 1)
        row.addWidget(self.ebv)
        self.ebv_slider.valueChanged.connect(self._ebv_slid)
        self.ebv_slider.sliderReleased.connect(model.end_merge)
        self.row("Dust reddening E(B-V)", box, TIPS["ebv"], errors=(self.ebv,))
        self.law = self.row("Dust law", Choice(
            "dust-law", DUST_LAWS, lambda v: self._apply(dust_law=v), DUST_LAW_LABELS),
            TIPS["law"])
        for i in range(self.law.combo.count()):
            self.law.combo.setItemData(i, DUST_LAW_TIPS[self.law.combo.itemData(i)],
                                       QtCore.Qt.ItemDataRole.ToolTipRole)
        self.rv = CheckedSpin("rv", lambda v: self._apply(dust_rv=v), self._rv_refused, self)
        self.rv.setDecimals(2)
        self.rv.setSingleStep(0.1)
        self.rv.setToolTip(TIPS["rv"])
        self.row("Dust kind R_V", self.rv, TIPS["rv"], errors=(self.rv,))
        # -- air
        self.air = QtWidgets.QCheckBox("Through the Earth's air", self)
        self.air.setObjectName("check-air")
        self.air.setToolTip(TIPS["air"])
        self.air.toggled.connect(self._air_toggled)
        self.form.addRow(self.air)
        box = QtWidgets.QWidget(self)
        row = QtWidgets.QHBoxLayout(box)
        row.setContentsMargins(0, 0, 0, 0)
        row.setSpacing(6)
        self.altitude = _slider("slider-altitude", *ALTITUDE_CONTROL_DEG, box)
        self.altitude.setValue(ALTITUDE_START_DEG)
        self.altitude.setPageStep(10)
        self.altitude.setToolTip(TIPS["altitude"])
        self.altitude_text = QtWidgets.QLabel("", box)
        self.altitude_text.setObjectName("altitude-text")
        self.altitude_text.setMinimumWidth(self.altitude_text.fontMetrics().horizontalAdvance(
            "90\u00b0 00"))
        row.addWidget(self.altitude, 1)
        row.addWidget(self.altitude_text)
        self.altitude.valueChanged.connect(self._altitude_slid)
        self.altitude.sliderReleased.connect(model.end_merge)
        self.row("Altitude", box, TIPS["altitude"])
        self.air_error = ErrorLine(self)
        self.air_error.setObjectName("error-air")
        self.form.addRow(self.air_error)
        # -- what the path takes
        self.readout = QtWidgets.QLabel("", self)
        self.readout.setObjectName("path-readout")
        self.readout.setWordWrap(True)
        self.readout.setToolTip("Magnitudes the dust and air take from this star in the V band "
                                "(from its own spectrum), and the airmass (1 = overhead)")
        self.form.addRow(self.readout)
        model.events.temperature.connect(lambda _change: self.show_readout())
        self.refresh(force=True)

    # -- to the model -------------------------------------------------------------------------
    def _apply(self, merge: bool = False, **fields) -> None:
        self.model.change("path", merge=merge, **fields)

    def _ebv_slid(self, step: int) -> None:
        value = step / EBV_STEPS_PER_MAG
        try:
            self._apply(merge=self.ebv_slider.isSliderDown(), dust_ebv=value)
        except StarkilnError as exc:  # cannot happen inside the slider's span; shown if so
            self.ebv.error.show_error(str(exc))

    def _altitude_slid(self, deg: int) -> None:
        self.altitude_text.setText(f"{deg}\u00b0")
        if not self.air.isChecked():
            return
        try:
            self._apply(merge=self.altitude.isSliderDown(), altitude_deg=float(deg))
        except StarkilnError as exc:
            self.air_error.show_error(str(exc))

    def _air_toggled(self, on: bool) -> None:
        self.altitude.setEnabled(bool(on))
        try:
            self._apply(altitude_deg=float(self.altitude.value()) if on else None)
        except StarkilnError as exc:
            self.air_error.show_error(str(exc))
            self.refresh()
            return
        self.air_error.clear_error()

    def _ebv_refused(self, value: float) -> str:
        try:
            check_ebv(value)
        except StarkilnError as exc:
            return str(exc)
        lo, hi = EBV_CONTROL_MAG
        return (f"dust_ebv {value:g} is outside this control's {lo:g}-{hi:g} mag; accepted: "
                f"{lo:g}-{hi:g} here, up to {EBV_RANGE[1]:g} in a settings file")

    def _rv_refused(self, value: float) -> str:
        law = self.model.settings.dust_law
        try:
            check_rv(value, law)
        except StarkilnError as exc:
            return str(exc)
        lo, hi = rv_range(law)
        return f"dust_rv {value:g}: accepted {lo:g} <= R_V <= {hi:g}"

    # -- from the model -----------------------------------------------------------------------
    def refresh(self, force: bool = False) -> None:
        """Show the model's settings (a control showing an error keeps it unless ``force``)."""
        s = self.model.settings
        self.ebv_slider.blockSignals(True)
        self.ebv_slider.setValue(int(round(s.dust_ebv * EBV_STEPS_PER_MAG)))
        self.ebv_slider.blockSignals(False)
        if force or not self.ebv.has_error:
            self.ebv.set_value(s.dust_ebv)
        self.law.set_value(s.dust_law)
        self.rv.set_range(*rv_range(s.dust_law))
        if force or not self.rv.has_error:
            self.rv.set_value(s.dust_rv)
        on = s.altitude_deg is not None
        self.air.blockSignals(True)
        self.air.setChecked(on)
        self.air.blockSignals(False)
        self.altitude.setEnabled(on)
        if on:
            self.altitude.blockSignals(True)
            self.altitude.setValue(int(round(s.altitude_deg)))
            self.altitude.blockSignals(False)
        self.altitude_text.setText(f"{s.altitude_deg:g}\u00b0" if on
                                   else f"{self.altitude.value()}\u00b0")
        self.show_readout()

    def show_readout(self) -> None:
        """The magnitudes the path takes from the current star (V) and the airmass."""
        m = self.model
        ext, x = m.extinction_mag, m.airmass
        if ext is None:
            self.readout.setText("Nothing in the way: the star arrives as it shines.")
            return
        text = f"Dimmed by {ext:.2f} mag in V"
        if x is not None:
            text += f" \u00b7 airmass {x:.2f}"
        self.readout.setText(text)
