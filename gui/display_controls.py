"""The display controls: the display tab (preset, demo dome or custom profile) and the editor.

Every option list is read from the engine (presets, transfer functions); a profile is read and
written by :mod:`starkiln.engine.colour.displays` and handed to
:meth:`starkiln.gui.model.WindowModel.change`, which validates. A rejected value is shown under
its control and the settings stay as they were.
"""

from __future__ import annotations

from pathlib import Path

from PySide6 import QtCore, QtWidgets

from starkiln.engine.colour import displays as engine_displays
from starkiln.gui.fields import INPUT_ERRORS, Choice, ErrorLine, Form, parse_number
from starkiln.gui.model import demo_display, demo_display_path

DEMO_DISPLAY = "demo-dome"
CUSTOM_DISPLAY = "custom"
IMPORT_ICC = "import-icc"  # picker entries that open a file and build a display from it
FROM_READINGS = "from-readings"

DISPLAY_LABELS = {
    "srgb": "sRGB", "display-p3": "Display P3", "dci-p3": "DCI-P3",
    "rec2020": "Rec. 2020", "rec2100-pq": "Rec. 2100 PQ",
    DEMO_DISPLAY: "Harbourlight dome (demo)", CUSTOM_DISPLAY: "Custom display profile (JSON)",
    IMPORT_ICC: "Import ICC profile\u2026", FROM_READINGS: "From readings\u2026",
}


class DisplayTab(Form):
    """Display preset or custom profile; open, edit and save JSON display profiles."""

    message = QtCore.Signal(str, str)  # title, text: for a message box

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        options = tuple(engine_displays.PRESETS) + (DEMO_DISPLAY, CUSTOM_DISPLAY, IMPORT_ICC,
                                                    FROM_READINGS)
        self.display = self.row("Display",
                                Choice("display", options, self._choose, DISPLAY_LABELS),
                                "Primaries, white, transfer function and peak luminance")
        self._add_working_spaces()
        buttons = QtWidgets.QWidget(self)
        row = QtWidgets.QHBoxLayout(buttons)
        row.setContentsMargins(0, 0, 0, 0)
        self.edit_button = QtWidgets.QPushButton("Edit\u2026", buttons)
        self.open_button = QtWidgets.QPushButton("Open\u2026", buttons)
        self.save_button = QtWidgets.QPushButton("Save\u2026", buttons)
        self.edit_button.setToolTip("Edit the current display's primaries, white, transfer "
                                    "function and peak luminance")
        self.open_button.setToolTip("Use a Starkiln display profile (JSON); an ICC profile "
                                    "is imported from the display picker instead")
        self.save_button.setToolTip("Save the current display as a Starkiln display profile "
                                    "(JSON)")
        for b in (self.edit_button, self.open_button, self.save_button):
            row.addWidget(b)
        row.addStretch(1)
        self.edit_button.setObjectName("display-edit")
        self.open_button.setObjectName("display-open")
        self.save_button.setObjectName("display-save")
        lab = QtWidgets.QLabel("Display profile (JSON)", self)
        lab.setProperty("role", "muted")
        lab.setWordWrap(True)
        lab.setToolTip("Starkiln's own display profile file, JSON (not an ICC profile)")
        self.form.addRow(lab, buttons)
        self.error = ErrorLine(self)
        self.error.setObjectName("error-display")
        self.form.addRow(self.error)
        self.summary = self.note("")
        self.summary.setObjectName("display-summary")
        self.notes = self.note("")
        self.notes.setObjectName("display-notes")
        self.notes.setWordWrap(True)
        self.summary.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.edit_button.clicked.connect(self.edit)
        self.open_button.clicked.connect(self._open_dialog)
        self.save_button.clicked.connect(self._save_dialog)
        self.editor = None
        self.refresh()

    def _add_working_spaces(self) -> None:
        """The scene-linear working spaces as their own group at the end of the picker."""
        combo = self.display.combo
        combo.insertSeparator(combo.count())
        combo.addItem("Working spaces (scene-linear)", None)
        header = combo.model().item(combo.count() - 1)
        header.setEnabled(False)
        for key in engine_displays.WORKING_SPACES:
            combo.addItem(f"  {key}", key)
            combo.setItemData(combo.count() - 1, engine_displays.WORKING_SPACE_NOTES[key],
                              QtCore.Qt.ItemDataRole.ToolTipRole)

    def _choose(self, key: str) -> None:
        if key not in (IMPORT_ICC, FROM_READINGS):
            self.notes.setText("")  # the notes belong to an imported or measured display
        if key is None:  # the group's heading
            self.refresh()
            return
        if key in engine_displays.WORKING_SPACES:
            self.model.change("display", display=engine_displays.WORKING_SPACES[key])
            return
        if key == CUSTOM_DISPLAY:
            self.edit()
            self.refresh()
            return
        if key == DEMO_DISPLAY:
            self.open_profile(demo_display_path())
            return
        if key == IMPORT_ICC:
            self._import_icc_dialog()
            self.refresh()
            return
        if key == FROM_READINGS:
            self._readings_dialog()
            self.refresh()
            return
        self.model.change("display", display=engine_displays.PRESETS[key])

    def open_profile(self, path) -> bool:
        """Load a JSON display profile; a bad file gives a message box and changes nothing."""
        try:
            self.model.open_display_profile(path, origin="display")
        except INPUT_ERRORS as exc:
            self.error.show_error(str(exc))
            self.message.emit("Display profile not loaded", str(exc))
            self.refresh()
            return False
        self.error.clear_error()
        return True

    def _use_built(self, build, path) -> bool:
        """Use the display ``build(path)`` makes (the engine reads the file); a bad file is
        shown inline and in a message box, and the display stays as it was."""
        try:
            built = build(path)
            self.model.change("display", display=built.display)
        except (INPUT_ERRORS + (OSError,)) as exc:
            self.error.show_error(str(exc))
            self.message.emit("Display not changed", str(exc))
            self.refresh()
            return False
        self.error.clear_error()
        lines = list(getattr(built, "warnings", ())) + list(built.notes)
        self.notes.setText("\n".join(lines))
        return True

    def import_icc(self, path) -> bool:
        """Use the display of a matrix/TRC ICC display profile
        (:func:`starkiln.engine.colour.icc_profiles.display_from_icc`)."""
        from starkiln.engine.colour.icc_profiles import display_from_icc

        return self._use_built(display_from_icc, path)

    def from_readings(self, path) -> bool:
        """Use the display built from a colorimeter readings CSV
        (:func:`starkiln.engine.colour.measured.display_from_readings`)."""
        from starkiln.engine.colour.measured import display_from_readings
        from starkiln.engine.errors import read_text_file

        def build(p):
            return display_from_readings(read_text_file(Path(p), "readings file"), str(p))

        return self._use_built(build, path)

    def _import_icc_dialog(self) -> None:
        self._pick_and(self.import_icc, "Import an ICC display profile", "",
                       "ICC profiles (*.icc *.icm);;All files (*)")

    def _readings_dialog(self) -> None:
        self._pick_and(self.from_readings, "Display readings", str(demo_display_path().parent),
                       "Readings (*.csv);;All files (*)")

    def _pick_and(self, use, title: str, folder: str, filters: str) -> None:
        """Ask for a file to open and hand it to ``use``; nothing happens on Cancel."""
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, title, folder, filters)
        if path:
            use(path)

    def save_profile(self, path) -> bool:
        """Write the current display as a JSON profile (atomically)."""
        from starkiln.engine.colour.displays import save_display_profile

        try:
            save_display_profile(self.model.settings.display, path)
        except (INPUT_ERRORS + (OSError,)) as exc:
            self.message.emit("Display profile not saved", str(exc))
            return False
        return True

    def _open_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(
            self, "Open a display profile (JSON)", str(demo_display_path().parent),
            "Display profiles, JSON (*.json)")
        if path:
            self.open_profile(path)

    def _save_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getSaveFileName(
            self, "Save the display profile (JSON)", "display.json",
            "Display profiles, JSON (*.json)")
        if path:
            self.save_profile(path)

    def edit(self) -> "DisplayEditor":
        """Open the profile editor (non-modal) on the current display."""
        if self.editor is None:
            self.editor = DisplayEditor(self.model, self)
        self.editor.load(self.model.settings.display)
        self.editor.show()
        self.editor.raise_()
        return self.editor

    def refresh(self, force: bool = False) -> None:
        """Show the model's display."""
        d = self.model.settings.display
        key = next((k for k, v in engine_displays.PRESETS.items() if v == d), None)
        key = key or next((k for k, v in engine_displays.WORKING_SPACES.items() if v == d), None)
        if key is None:
            key = DEMO_DISPLAY if d == demo_display() else CUSTOM_DISPLAY
        self.display.set_value(key)
        tf = d.transfer_label
        self.summary.setText(
            f"{d.name}\nred {d.red_xy[0]:.4f}, {d.red_xy[1]:.4f}   green {d.green_xy[0]:.4f}, "
            f"{d.green_xy[1]:.4f}\nblue {d.blue_xy[0]:.4f}, {d.blue_xy[1]:.4f}   white "
            f"{d.white_xy[0]:.4f}, {d.white_xy[1]:.4f}\n{tf}, "
            f"peak {d.peak_luminance_cd_m2:g} cd/m\u00b2")
        if self.editor is not None and self.editor.isVisible() and force:
            self.editor.load(d)


class DisplayEditor(QtWidgets.QDialog):
    """Edit a display profile: primaries, white, transfer, gamma, peak; apply, open, save."""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.setObjectName("display-editor")
        self.setWindowTitle("Display profile (JSON)")
        self.model = model
        form = QtWidgets.QFormLayout(self)
        self.name = QtWidgets.QLineEdit(self)
        self.name.setObjectName("field-display-name")
        self.name.setToolTip("The display's name, as the profile and the readouts give it")
        form.addRow("Name", self.name)
        self.fields: dict[str, QtWidgets.QLineEdit] = {}
        for key, label in (("red", "Red primary x, y"), ("green", "Green primary x, y"),
                           ("blue", "Blue primary x, y"), ("white", "White x, y")):
            w = QtWidgets.QWidget(self)
            row = QtWidgets.QHBoxLayout(w)
            row.setContentsMargins(0, 0, 0, 0)
            for axis in ("x", "y"):
                e = QtWidgets.QLineEdit(w)
                e.setObjectName(f"field-{key}-{axis}")
                e.setFixedWidth(80)
                e.setToolTip(f"{label.split(' x, y')[0]}: CIE 1931 {axis} chromaticity")
                row.addWidget(e)
                self.fields[f"{key}_{axis}"] = e
            row.addStretch(1)
            form.addRow(label, w)
        self.transfer = QtWidgets.QComboBox(self)
        self.transfer.setObjectName("choice-transfer")
        for t in engine_displays.TRANSFERS:
            self.transfer.addItem(t, t)
        self.transfer.setToolTip("How the display turns signal into light")
        form.addRow("Transfer function", self.transfer)
        for key, label, tip in (
                ("gamma", "Gamma", "The exponent of a pure power-law transfer, 1-4; used "
                 "only with the 'gamma' transfer function"),
                ("peak", "Peak luminance, cd/m\u00b2", "Luminance of full white, "
                 "0.01-10000 cd/m\u00b2")):
            e = QtWidgets.QLineEdit(self)
            e.setObjectName(f"field-{key}")
            e.setFixedWidth(80)
            e.setToolTip(tip)
            self.fields[key] = e
            form.addRow(label, e)
        # the gamma field applies to the 'gamma' transfer only
        self.transfer.currentIndexChanged.connect(lambda _i: self._gamma_applies())
        self.error = ErrorLine(self)
        self.error.setObjectName("error-display-editor")
        form.addRow(self.error)
        buttons = QtWidgets.QDialogButtonBox(self)
        self.apply_button = buttons.addButton("Apply",
                                              QtWidgets.QDialogButtonBox.ButtonRole.ApplyRole)
        self.close_button = buttons.addButton("Close",
                                              QtWidgets.QDialogButtonBox.ButtonRole.RejectRole)
        self.apply_button.setObjectName("display-apply")
        self.apply_button.setToolTip("Check the fields (the engine does) and use this display")
        self.close_button.setToolTip("Close the editor; an applied display stays")
        self.apply_button.clicked.connect(self.apply)
        self.close_button.clicked.connect(self.reject)
        form.addRow(buttons)

    def load(self, d) -> None:
        """Fill the fields from a display."""
        self.name.setText(d.name)
        for key in ("red", "green", "blue", "white"):
            x, y = getattr(d, f"{key}_xy")
            self.fields[f"{key}_x"].setText(f"{x:g}")
            self.fields[f"{key}_y"].setText(f"{y:g}")
        self.transfer.setCurrentIndex(max(self.transfer.findData(d.transfer), 0))
        self.fields["gamma"].setText(f"{d.gamma:g}")
        self.fields["peak"].setText(f"{d.peak_luminance_cd_m2:g}")
        self._gamma_applies()
        self.error.clear_error()

    def _gamma_applies(self) -> None:
        self.fields["gamma"].setEnabled(self.transfer.currentData() == "gamma")

    def fields_values(self) -> dict:
        """The display fields as typed (``name``, ``red_xy``... ``peak_luminance_cd_m2``);
        raises StarkilnError for a field that is not a number."""
        labels = {"gamma": "gamma", "peak": "peak luminance"}
        v = {k: parse_number(e.text(), labels.get(k, k.replace("_", " ")))
             for k, e in self.fields.items()}
        return {"name": self.name.text().strip() or "custom",
                "red_xy": (v["red_x"], v["red_y"]), "green_xy": (v["green_x"], v["green_y"]),
                "blue_xy": (v["blue_x"], v["blue_y"]), "white_xy": (v["white_x"], v["white_y"]),
                "transfer": self.transfer.currentData(), "gamma": v["gamma"],
                # a table's samples are kept from the current display (the editor shows none)
                **({} if self.transfer.currentData() == "table" else {"transfer_samples": ()}),
                "peak_luminance_cd_m2": v["peak"]}

    def apply(self) -> bool:
        """Validate (the engine does) and use the edited display; errors stay in the dialog."""
        try:
            self.model.change_display("display", **self.fields_values())
        except INPUT_ERRORS as exc:
            self.error.show_error(str(exc))
            return False
        self.error.clear_error()
        return True
