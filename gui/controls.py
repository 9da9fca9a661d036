"""The rendering controls: white, gamut and output, night sky (brightness and vision), their tabs.

The display tab and the profile editor are in :mod:`starkiln.gui.display_controls`.

Every option list is read from the engine (presets, methods, curves); every
value goes to :meth:`starkiln.gui.model.WindowModel.change`, which asks
:meth:`starkiln.engine.pipeline.settings.Settings.replace` to validate. A rejected value is
shown under its control and the settings stay as they were.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from starkiln.engine.pipeline import settings as engine_settings
from starkiln.engine.colour.gamut import GAMUT_CHOICES, NO_MAPPING
from starkiln.engine.colour.observers import OBSERVERS
from starkiln.engine.colour.whites import ADAPTATIONS, WHITE_PRESETS
from starkiln.gui.display_controls import DisplayTab
from starkiln.gui.fields import INPUT_ERRORS, Choice, ErrorLine, Field, Form, format_number
from starkiln.gui.fields import parse_number, parse_optional_number
from starkiln.gui.path_controls import PathTab

WHITE_KINDS = ("daylight", "blackbody", "xy")

LABELS = {
    "D50": "D50 daylight 5003 K", "D55": "D55 daylight 5503 K", "D65": "D65 daylight 6504 K",
    "D75": "D75 daylight 7504 K", "E": "E equal energy", "DCI": "DCI projector white",
    "daylight": "Daylight at a temperature\u2026", "blackbody": "Blackbody at a temperature\u2026",
    "xy": "Custom chromaticity x, y\u2026",
    "bradford": "Bradford", "cat16": "CAT16", "cat02": "CAT02", "von-kries": "von Kries",
    "none": "None (no adaptation)",
    "cie1931": "CIE 1931 2\u00b0", "cie1964": "CIE 1964 10\u00b0",
    "clip": "Clip channels", "scale": "Toward white", "chroma": "Less chroma (Oklab)",
    NO_MAPPING: "Keep values (working spaces)",
    "max-channel": "Brightest channel 1", "luminance": "Fixed luminance Y",
    "mesopic": "Mesopic (CIE 191)", "asinh": "asinh (soft)", "log": "log (linear in mag)",
    "linear": "linear in flux",
}
VISION_LABELS = {"none": "Off: camera look"}

CAUTION = ("Night vision here is an appearance model for rendering, not a basis for "
           "lighting-design compliance: follow local codes and licensed practice for that. "
           "For a dark-adapted dome audience avoid sudden bright flashes.")


class WhiteTab(Form):
    """Scene white (preset, daylight or blackbody by temperature, or x, y); adaptation; observer."""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        kinds = tuple(WHITE_PRESETS) + WHITE_KINDS
        self.kind = self.row("Scene white", Choice("white", kinds, self._kind_changed, LABELS),
                             "What should look neutral on the display")
        self.white_temperature = self.row(
            "Temperature", Field("white-temperature",
                                 lambda s: parse_number(s, "white temperature"),
                                 lambda v: self._apply_white(temperature=v), width=80, unit="K",
                                 placeholder="6500"),
            "Daylight 4000-25000 K, blackbody 500-100000 K")
        xy = QtWidgets.QWidget(self)
        xy_row = QtWidgets.QHBoxLayout(xy)
        xy_row.setContentsMargins(0, 0, 0, 0)
        self.white_x = Field("white-x", lambda s: parse_number(s, "white x"),
                             lambda v: self._apply_white(x=v), width=70, placeholder="x")
        self.white_y = Field("white-y", lambda s: parse_number(s, "white y"),
                             lambda v: self._apply_white(y=v), width=70, placeholder="y")
        self.white_x.edit.setToolTip("CIE 1931 x of a custom white")
        self.white_y.edit.setToolTip("CIE 1931 y of a custom white")
        xy_row.addWidget(self.white_x, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        xy_row.addWidget(self.white_y, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        xy_row.addStretch(1)
        self.row("Chromaticity", xy, "A custom white must lie inside the spectral locus",
                 errors=(self.white_x, self.white_y))
        self.use_star = QtWidgets.QPushButton("Use this star's colour as the white", self)
        self.use_star.setObjectName("white-from-star")
        self.use_star.setToolTip("Make the auditioned star's blackbody the scene white")
        self.use_star.clicked.connect(self._white_from_star)
        self.form.addRow(self.use_star)
        self.white_error = ErrorLine(self)
        self.white_error.setObjectName("error-white")
        self.form.addRow(self.white_error)
        self.resolved = self.note("")
        self.adaptation = self.row("Adaptation", Choice(
            "adaptation", ADAPTATIONS, lambda v: model.change("adaptation", adaptation=v),
            LABELS), "Chromatic adaptation from the scene white to the display white")
        self.observer = self.row("Observer", Choice(
            "observer", OBSERVERS, lambda v: model.change("observer", observer=v), LABELS),
            "Standard colorimetric observer (CIE 15:2004)")
        self._pending_temperature = 6500.0
        self.refresh(force=True)

    def _kind_changed(self, kind: str) -> None:
        if kind in WHITE_PRESETS:
            self.model.change("white", scene_white=kind)
        else:
            self._apply_white()
        self._show_inputs(kind)

    def _show_inputs(self, kind: str) -> None:
        self.white_temperature.setEnabled(kind in ("daylight", "blackbody"))
        self.white_x.setEnabled(kind == "xy")
        self.white_y.setEnabled(kind == "xy")

    def _apply_white(self, temperature=None, x=None, y=None) -> None:
        """Build the white specification from the chosen kind and fields; the engine validates."""
        kind = self.kind.value()
        if kind in ("daylight", "blackbody"):
            t = temperature if temperature is not None else parse_number(
                self.white_temperature.text() or "6500", "white temperature")
            spec = f"{kind}:{t:g}"
        elif kind == "xy":
            xv = x if x is not None else parse_number(self.white_x.text(), "white x")
            yv = y if y is not None else parse_number(self.white_y.text(), "white y")
            spec = f"xy:{xv:g},{yv:g}"
        else:
            spec = kind
        self.model.change("white", scene_white=spec)

    def _white_from_star(self) -> None:
        t = self.model.temperature_K
        try:
            self.model.change("white", scene_white=f"blackbody:{t:.0f}")
        except INPUT_ERRORS as exc:
            self.white_error.show_error(str(exc))
            return
        self.white_error.clear_error()

    def refresh(self, force: bool = False) -> None:
        """Show the model's settings in the controls (fields showing an error keep it)."""
        s = self.model.settings
        spec = s.scene_white
        head, _, rest = spec.partition(":")
        kind = head if rest else spec
        self.kind.set_value(kind)
        self._show_inputs(kind)
        white_xy = self.model.plots.diagram.scene_white_xy
        texts = [(self.white_x, f"{white_xy[0]:.4f}"), (self.white_y, f"{white_xy[1]:.4f}")]
        if kind in ("daylight", "blackbody"):
            texts.append((self.white_temperature, rest))
        for field, text in texts:
            if force or not field.has_error:
                field.set_text(text)
        d = s.display
        self.resolved.setText(f"Scene white x {white_xy[0]:.4f}, y {white_xy[1]:.4f} \u2192 "
                              f"display white x {d.white_xy[0]:.4f}, y {d.white_xy[1]:.4f}")
        self.adaptation.set_value(s.adaptation)
        self.observer.set_value(s.observer)


class OutputTab(Form):
    """Gamut mapping and normalisation."""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        self.gamut = self.row("Gamut mapping", Choice(
            "gamut", GAMUT_CHOICES, lambda v: model.change("gamut", gamut=v), LABELS),
            "How colours outside the display's triangle are brought inside; a scene-linear "
            "working space keeps its values unless a method is chosen")
        self.normalisation = self.row("Normalisation", Choice(
            "normalisation", engine_settings.NORMALISATIONS,
            lambda v: model.change("normalisation", normalisation=v), LABELS),
            "Brightest channel = 1 keeps every star at full brightness; fixed luminance "
            "keeps every star at the same relative luminance Y")
        self.luminance = self.row("Luminance Y", Field(
            "luminance_Y", lambda s: parse_number(s, "luminance_Y"),
            lambda v: model.change("output", luminance_Y=v), width=70, placeholder="0.5"),
            "Relative luminance for fixed-luminance normalisation, 0 < Y <= 1")
        self.note("A swatch outside the display's gamut is marked \u26a0 and mapped by the "
                  "method above; the readouts say which.")
        self.refresh(force=True)

    def refresh(self, force: bool = False) -> None:
        """Show the model's settings."""
        s = self.model.settings
        keep = self.gamut.combo.findData(NO_MAPPING)  # only a working space may keep values
        self.gamut.combo.model().item(keep).setEnabled(s.display.kind == "working-space")
        self.gamut.set_value(s.gamut)
        self.normalisation.set_value(s.normalisation)
        if force or not self.luminance.has_error:
            self.luminance.set_text(format_number(s.luminance_Y))
        self.luminance.setEnabled(s.normalisation == "luminance")


class NightTab(Form):
    """Brightness and night vision: magnitude, instrument, vision model, tone curve, dome."""

    NUMBER_FIELDS = (
        ("pupil_mm", "Pupil", "mm", "Dark-adapted pupil diameter, 1-9 mm (7 mm is usual)"),
        ("transmission", "Transmission", "", "Instrument transmission, 0 < T <= 1"),
        ("blur_spot_arcmin", "Star image size", "arcmin",
         "Diameter of the effective star image at the eye, 0.1-60 arcmin"),
        ("magnitude_bright", "Brightest magnitude", "mag", "Shown at intensity 1"),
        ("magnitude_faint", "Faintest magnitude", "mag", "Shown at intensity 0"),
        ("night_tint", "Night tint", "0\u20131",
         "Cool tint of colourless faint stars: a rendering convention, not physics"),
    )

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        self.magnitude = self.row("Star magnitude", Field(
            "magnitude", lambda s: parse_number(s, "magnitude"),
            lambda v: model.set_magnitude(v, "night"), width=70, unit="mag"),
            "Apparent visual magnitude of the auditioned star, -30 to +30")
        self.aperture = self.row("Aperture", Field(
            "aperture_mm", lambda s: parse_optional_number(s, "aperture_mm"),
            lambda v: model.change("night", aperture_mm=v), width=84, unit="mm",
            placeholder="naked eye"),
            "Instrument aperture in mm; leave empty for the naked eye")
        self.numbers: dict[str, Field] = {}
        for key, label, unit, tip in self.NUMBER_FIELDS:
            f = Field(key, lambda s, k=key: parse_number(s, k),
                      lambda v, k=key: model.change("night", **{k: v}), width=70, unit=unit)
            self.numbers[key] = self.row(label, f, tip)
        self.vision = self.row("Vision model", Choice(
            "vision", engine_settings.VISIONS, lambda v: model.change("night", vision=v),
            {**LABELS, **VISION_LABELS}), "Mesopic: faint stars lose colour as cone vision "
            "fades (CIE 191:2010); off: full colour at every magnitude")
        self.curve = self.row("Intensity curve", Choice(
            "intensity_curve", engine_settings.INTENSITY_CURVES,
            lambda v: model.change("night", intensity_curve=v), LABELS),
            "Tone curve from magnitude to display intensity")
        self.compensate = QtWidgets.QCheckBox("Compensate for a dark dome", self)
        self.compensate.setObjectName("check-compensate")
        self.compensate.setToolTip("Pre-boost chroma so that the colour seen on a dim dome "
                                   "matches the intent (uses the dome peak luminance)")
        self.compensate.toggled.connect(self._compensate)
        self.form.addRow(self.compensate)
        self.compensate_error = ErrorLine(self)
        self.form.addRow(self.compensate_error)
        self.peak = self.row("Dome peak luminance", Field(
            "peak_luminance_cd_m2", lambda s: parse_number(s, "peak luminance"),
            self._apply_peak, width=70, unit="cd/m\u00b2"),
            "The display's peak luminance, 0.01-10000 cd/m\u00b2 (part of the display profile)")
        self.caution = self.note("Caution: " + CAUTION)
        self.refresh(force=True)

    def _compensate(self, on: bool) -> None:
        try:
            self.model.change("night", compensate=bool(on))
        except INPUT_ERRORS as exc:
            self.compensate_error.show_error(str(exc))
            return
        self.compensate_error.clear_error()

    def _apply_peak(self, value: float) -> None:
        self.model.change_display("night", peak_luminance_cd_m2=value)

    def refresh(self, force: bool = False) -> None:
        """Show the model's settings and magnitude."""
        s = self.model.settings
        if force or not self.magnitude.has_error:
            self.magnitude.set_text(format_number(self.model.magnitude))
        if force or not self.peak.has_error:
            self.peak.set_text(format_number(s.display.peak_luminance_cd_m2))
        if force or not self.aperture.has_error:
            self.aperture.set_text(format_number(s.aperture_mm))
        for key, field in self.numbers.items():
            if force or not field.has_error:
                field.set_text(format_number(getattr(s, key)))
        self.numbers["transmission"].setEnabled(s.aperture_mm is not None)
        self.vision.set_value(s.vision)
        self.curve.set_value(s.intensity_curve)
        self.compensate.setChecked(bool(s.compensate))  # equal settings: the model ignores it


#: Narrowest a settings tab's form is laid out (px); its longest row fits in it.
TAB_MINIMUM_WIDTH = 300


class RenderingPanel(QtWidgets.QTabWidget):
    """The Rendering panel: the tabs of rendering settings, kept in step with the model.

    (Called "Look" before issue 12: in colour pipelines a look is a creative grade, which
    these settings are not.)
    """

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.setObjectName("rendering-panel")
        self.model = model
        self.white = WhiteTab(model, self)
        self.display = DisplayTab(model, self)
        self.output = OutputTab(model, self)
        self.night = NightTab(model, self)
        self.path = PathTab(model, self)
        for tab, title in ((self.white, "White"), (self.display, "Display"),
                           (self.output, "Gamut"), (self.night, "Night sky"),
                           (self.path, "Path")):
            scroll = QtWidgets.QScrollArea(self)
            scroll.setWidget(tab)
            scroll.setWidgetResizable(True)
            scroll.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
            tab.setMinimumWidth(TAB_MINIMUM_WIDTH)
            # never narrower than its form and a vertical scroll bar: nothing is cut across
            bar = scroll.style().pixelMetric(QtWidgets.QStyle.PixelMetric.PM_ScrollBarExtent)
            scroll.setMinimumWidth(TAB_MINIMUM_WIDTH + bar + 2 * scroll.frameWidth() + 2)
            self.addTab(scroll, title)
        self.setTabToolTip(self.indexOf(self.path.parentWidget().parentWidget()),
                           "The path of the light: interstellar dust and the Earth's air")
        for button in self.tabBar().findChildren(QtWidgets.QToolButton):  # narrow windows
            button.setToolTip("More tabs")
        # undo, redo and files replace every field's value: a stale error goes with it
        model.events.settings.connect(lambda change: self.refresh(
            force=change.origin in ("undo", "redo", "file")))
        # the magnitude field shows the magnitude; its own entries need no echo
        model.events.magnitude.connect(
            lambda change: change.origin != "night" and self.night.refresh())

    def refresh(self, force: bool = False) -> None:
        """Show the model's settings in every tab."""
        for tab in (self.white, self.display, self.output, self.night, self.path):
            tab.refresh(force=force)
