"""The current colour: the large swatch, its readouts, the night inset, the magnitude strip.

Everything shown is the window model's :attr:`starkiln.gui.model.WindowModel.colour`: the
swatches paint its monitor colours (``monitor_*``), the readouts show the chosen display's.

Dark-room viewing: the viewing level (a fraction of the monitor's white, dimmed by the engine
in linear light, :mod:`starkiln.engine.colour.viewing`), its dome level, and the neutral
surround round the large swatch (none, mid-grey or black; the engine gives its colour).
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.gui.swatches import ColourSwatch, Readouts, SwatchStrip
from starkiln.engine.colour.viewing import SURROUNDS, VIEWING_LEVEL_RANGE
from starkiln.engine.errors import StarkilnError
from starkiln.gui.theme import Theme

#: Words for the surround choices.
SURROUND_LABELS = {"none": "no surround", "grey": "grey surround",
                   "black": "black surround"}
#: A rise of the viewing level by more than this factor at once shows the caution.
FLASH_RISE = 2.0
VIEWING_CAUTION = ("Viewing level raised suddenly: avoid bright flashes for dark-adapted eyes "
                   "(yours and a dome audience's); raise it gradually")
VIEWING_TIP = ("Viewing level: every colour patch (swatches, strips, sky, spectrum band) dimmed "
               "to this share of the monitor's white, in linear light. For the artist's eyes "
               "in the dark, not a lighting-compliance tool. Change it gradually: avoid "
               "sudden bright flashes for dark-adapted eyes.")

ROWS = (("hex", "Hex", 8), ("8bit", "8-bit RGB", 11), ("linear", "Display-linear", 20),
        ("encoded", "Encoded 0\u20131", 20), ("xy", "CIE x, y", 16),
        ("gamut", "In gamut", 23))  # "⚠ no: mapped (chroma)" whole
NIGHT_ROWS = (("night-hex", "Seen at mag", 20), ("night", "Cone weight", 20),
              ("intensity", "Intensity", 20))
TIPS = {
    "hex": "8-bit display code values as #rrggbb",
    "8bit": "8-bit display code values, red green blue",
    "linear": "Display-linear light 0-1 (before the transfer function)",
    "encoded": "Display signal 0-1 (after the display's transfer function)",
    "xy": "Chromaticity of the star's light, CIE x, y",
    "gamut": "Whether the colour fitted the display before gamut mapping",
    "night-hex": "The colour at the star magnitude set under Night sky (dimmed, as seen)",
    "night": "Cone weight: 0 = rod vision only (no colour), 1 = full colour vision "
             "(CIE 191 mesopic); sat = share of the colour kept",
    "intensity": "Display intensity 0-1 from the magnitude's tone curve; with dome "
                 "compensation on, 'dome ok' when the intended colour can be reached on the "
                 "dome, 'dome short' when the display cannot reach it",
}


def _floats(v) -> str:
    return " ".join(f"{float(x):.4f}" for x in v)


class CurrentColourPanel(QtWidgets.QWidget):
    """Swatch and readouts of the model's current colour, plus the magnitude strip."""

    status = QtCore.Signal(str)

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        self.swatch = ColourSwatch("current-swatch", minimum=(220, 150), parent=self)
        self.swatch.setToolTip("The render path's colour for this temperature, full intensity")
        self.readouts = Readouts(ROWS + NIGHT_ROWS, self, tips=TIPS)
        self.readouts.copied.connect(self.status)
        self.copy_all = QtWidgets.QPushButton("Copy all readouts", self)
        self.copy_all.setObjectName("copy-all")
        self.copy_all.setToolTip("Copy every readout below, one per line")
        self.copy_all.clicked.connect(self._copy_all)
        self.night_swatch = ColourSwatch("night-swatch", minimum=(60, 44), parent=self)
        self.night_swatch.setToolTip("This colour at the current magnitude (night vision, "
                                     "tone curve): Rendered.rgb_dimmed_encoded")
        self.night_swatch.setSizePolicy(QtWidgets.QSizePolicy.Policy.Fixed,
                                        QtWidgets.QSizePolicy.Policy.Fixed)
        self.night_swatch.setFixedSize(64, 44)
        self.magnitude_strip = SwatchStrip("magnitude-strip", height=52, parent=self)
        self.magnitude_strip.setToolTip("This temperature from the bright to the faint "
                                        "magnitude: click to set the magnitude")
        self.magnitude_strip.picked.connect(self._magnitude_picked)
        ladder_title = QtWidgets.QLabel("Fading with magnitude (night vision)", self)
        ladder_title.setProperty("role", "muted")
        self._build_viewing()

        layout = QtWidgets.QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.setSpacing(6)
        layout.addWidget(self.swatch, 3)
        layout.addWidget(self.readouts)
        row = QtWidgets.QHBoxLayout()
        row.addWidget(self.night_swatch)
        row.addWidget(self.copy_all, 0, QtCore.Qt.AlignmentFlag.AlignBottom)
        row.addStretch(1)
        layout.addLayout(row)
        layout.addWidget(ladder_title)
        layout.addWidget(self.magnitude_strip)
        layout.addWidget(self.viewing_row)
        layout.addWidget(self.surround, 0, QtCore.Qt.AlignmentFlag.AlignLeft)  # own line: fits 1024 px
        for event in (model.events.temperature, model.events.magnitude, model.events.settings,
                      model.events.monitor, model.events.viewing):
            event.connect(lambda _change: self._show())
        model.events.viewing.connect(self._viewing_shown)
        model.events.settings.connect(lambda _change: self._dome_tip())
        self._show()

    # -- dark-room viewing ---------------------------------------------------------------------
    def _build_viewing(self) -> None:
        row = self.viewing_row = QtWidgets.QWidget(self)
        lay = QtWidgets.QHBoxLayout(row)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(4)
        label = QtWidgets.QLabel("Viewing level", row)
        label.setToolTip(VIEWING_TIP)
        self.viewing_level = QtWidgets.QDoubleSpinBox(row)
        self.viewing_level.setObjectName("viewing-level")
        lo, hi = VIEWING_LEVEL_RANGE
        self.viewing_level.setRange(100.0 * lo, 100.0 * hi)
        self.viewing_level.setDecimals(0)
        self.viewing_level.setSingleStep(5.0)
        self.viewing_level.setSuffix(" %")
        self.viewing_level.setValue(100.0 * self.model.viewing_level)
        self.viewing_level.setToolTip(VIEWING_TIP)
        self.viewing_level.setKeyboardTracking(False)
        self.viewing_level.valueChanged.connect(
            lambda v: self.set_viewing_level(v / 100.0, origin="viewing-level"))
        label.setBuddy(self.viewing_level)
        self.dome_level = QtWidgets.QPushButton("Dome level", row)
        self.dome_level.setObjectName("dome-level")
        self.dome_level.clicked.connect(self.use_dome_level)
        self.surround = QtWidgets.QComboBox(self)
        self.surround.setObjectName("surround")
        for key in SURROUNDS:
            self.surround.addItem(SURROUND_LABELS[key], key)
        self.surround.setToolTip("A neutral border round the large swatch, so that the eye "
                                 "adapts to a known neutral rather than to the swatch: "
                                 "mid-grey at a fifth of the viewing white, or black")
        self.surround.currentIndexChanged.connect(lambda _i: self._show_surround())
        lay.addWidget(label)
        lay.addWidget(self.viewing_level)
        lay.addWidget(self.dome_level)
        lay.addStretch(1)
        self._dome_tip()

    def _dome_tip(self) -> None:
        d = self.model.settings.display
        self.dome_level.setToolTip(
            f"Viewing level {100.0 * self.model.dome_viewing_level():.0f} %: a full-intensity "
            f"star shown at the luminance of {d.name} ({d.peak_luminance_cd_m2:g} cd/m2 peak) "
            "on a monitor whose white is 80 cd/m2")

    def set_viewing_level(self, level: float, origin: str = "viewing") -> None:
        """Dim every colour patch to ``level`` (0.02-1) of the monitor's white; a sudden rise
        shows the caution on the status bar."""
        before = self.model.viewing_level
        try:
            self.model.set_viewing_level(level, origin)
        except StarkilnError as exc:
            self.status.emit(str(exc))
            return
        if self.model.viewing_level > FLASH_RISE * before:
            self.status.emit(VIEWING_CAUTION)

    def use_dome_level(self) -> None:
        """Set the viewing level from the chosen display's peak luminance (dome level)."""
        self.set_viewing_level(self.model.dome_viewing_level(), origin="dome-level")

    def set_surround(self, key: str) -> None:
        """``none``, ``grey`` or ``black`` round the large swatch."""
        i = self.surround.findData(key)
        if i >= 0:
            self.surround.setCurrentIndex(i)

    def restore_viewing(self, store) -> None:
        """The viewing level and surround of the last session (a QSettings store, or None):
        the window starts as dim as it was left, never brighter."""
        if store is None:
            return
        try:
            level = float(store.value("view/viewing_level", 1.0))
            self.model.set_viewing_level(level, origin="restore")
        except (TypeError, ValueError, StarkilnError):
            pass  # a damaged entry: full level, as a fresh start
        self.set_surround(str(store.value("view/surround", "none")))

    def save_viewing(self, store) -> None:
        """Keep the viewing level and surround in ``store`` (QSettings)."""
        store.setValue("view/viewing_level", self.model.viewing_level)
        store.setValue("view/surround", self.surround.currentData())

    def _viewing_shown(self, change) -> None:
        if change.origin != "viewing-level":
            self.viewing_level.blockSignals(True)
            self.viewing_level.setValue(100.0 * float(change.value))
            self.viewing_level.blockSignals(False)

    def _show_surround(self) -> None:
        rgb = self.model.surround_rgb_8bit(self.surround.currentData())
        self.swatch.set_surround(rgb)

    def set_theme(self, theme: Theme) -> None:
        """Interface colours of the swatches and strip."""
        for w in (self.swatch, self.night_swatch, self.magnitude_strip, self.readouts):
            w.set_theme(theme)

    def _copy_all(self) -> None:
        QtGui.QGuiApplication.clipboard().setText(self.readouts.as_text())
        self.status.emit("All readouts copied")

    def _magnitude_picked(self, index: int) -> None:
        mags = self.model.colour.ladder_magnitudes
        self.model.set_magnitude(float(mags[index]), origin="magnitude-strip")

    def _show(self) -> None:
        c = self.model.colour
        r = c.plain
        rgb8 = c.rgb_8bit
        ok = bool(r.in_gamut)
        gamut = self.model.settings.gamut
        self.swatch.set_colour(c.monitor_rgb_8bit, not ok,
                               badge=f"outside gamut, mapped by {gamut}",
                               caption=f"{c.temperature_K:.0f} K", clipped=c.monitor_clipped)
        ro = self.readouts
        ro.set_value("hex", c.hex)
        ro.set_value("8bit", " ".join(f"{int(v):3d}" for v in rgb8))
        ro.set_value("linear", _floats(r.rgb_linear))
        ro.set_value("encoded", _floats(r.rgb_encoded))
        ro.set_value("xy", f"{float(r.xy[0]):.5f}, {float(r.xy[1]):.5f}")
        ro.set_value("gamut", "yes" if ok else f"\u26a0 no: mapped ({gamut})", alert=not ok)
        m = c.at_magnitude
        ro.set_value("night-hex", f"{c.magnitude:g}: {c.dimmed_hex}")
        ro.set_value("night", f"{float(m.cone_weight):.3f}  sat {float(m.saturation):.3f}")
        reached = m.compensation_reached
        dome = "" if reached is None else (
            "  dome ok" if bool(reached) else "  dome short")
        ro.set_value("intensity", f"{float(m.intensity):.3f}{dome}",
                     alert=reached is not None and not bool(reached))
        self.night_swatch.set_colour(c.monitor_dimmed_rgb_8bit,
                                     clipped=c.monitor_dimmed_clipped)
        self._show_ladder(c)
        self._show_surround()

    def _show_ladder(self, c) -> None:
        mags, lr = c.ladder_magnitudes, c.ladder
        strip = self.magnitude_strip
        labels = [f"{m:g}" for m in mags]
        tips = [f"magnitude {m:g}: intensity {i:.3f}, cone weight {c:.3f}, "
                f"saturation {sa:.3f}" for m, i, c, sa in
                zip(mags, lr.intensity, lr.cone_weight, lr.saturation)]
        strip.set_cells(c.monitor_ladder_rgb_8bit, labels=labels, tooltips=tips,
                        clipped=c.monitor_ladder_clipped)
        index = int(np.argmin(np.abs(mags - c.magnitude)))
        strip.set_marker(index)
