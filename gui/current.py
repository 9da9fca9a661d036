"""The current colour: the large swatch, its readouts, the night inset, the magnitude strip.

Everything shown is the window model's :attr:`starkiln.gui.model.WindowModel.colour`: the
swatches paint its monitor colours (``monitor_*``), the readouts show the chosen display's.
"""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.gui.swatches import ColourSwatch, Readouts, SwatchStrip
from starkiln.gui.theme import Theme

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
        for event in (model.events.temperature, model.events.magnitude, model.events.settings,
                      model.events.monitor):
            event.connect(lambda _change: self._show())
        self._show()

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
