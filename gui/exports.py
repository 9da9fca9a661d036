"""Export dialogs: lookup textures and palettes, through exactly the command line's functions.

``starkiln lut`` (:func:`starkiln.cli.exports.cmd_lut`) and the texture dialog both call
:func:`starkiln.engine.exports.textures.export_texture`; ``starkiln palette``
(:func:`starkiln.cli.exports.cmd_palette`) and the palette dialog both call
:func:`starkiln.engine.exports.palettes.export_palette`. Each checks the destination, builds
and writes atomically, so a file written here is byte-identical to the command line's with
the same settings and options. The previews are built by the functions those exports use
(:func:`~starkiln.engine.exports.textures.build_lut` at a reduced size for large textures,
:func:`~starkiln.engine.exports.palettes.build_palette`). What a preview paints is converted
from the chosen display's colours to the monitor at the viewing level, as every colour the
window paints is (:func:`~starkiln.engine.colour.monitor.rendered_on_monitor` for the palette's
swatches, :func:`~starkiln.engine.colour.monitor.encoded_on_monitor` for the contact sheet and
the texture); the files keep the display's values.
"""

from __future__ import annotations

import shlex
from pathlib import Path

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.engine.atomic import OutputExistsError
from starkiln.engine.errors import StarkilnError
from starkiln.gui.fields import INPUT_ERRORS, ErrorLine, parse_number
from starkiln.gui.swatches import SwatchStrip

PREVIEW_MAX = (512, 256)


def array_image(rgb8: np.ndarray) -> QtGui.QImage:
    """A QImage sharing nothing with ``rgb8`` (H, W, 3 or 4) uint8."""
    a = np.ascontiguousarray(rgb8[..., :3], dtype=np.uint8)
    img = QtGui.QImage(a.data, a.shape[1], a.shape[0], a.strides[0],
                       QtGui.QImage.Format.Format_RGB888)
    return img.copy()


class ExportDialog(QtWidgets.QDialog):
    """Shared parts: output path, overwrite, preview, status, equivalent command line."""

    written = QtCore.Signal(str)
    default_name = "out"
    filters = ""

    def __init__(self, model, parent=None):
        super().__init__(parent)
        self.model = model
        self.form = QtWidgets.QFormLayout()
        self.path = QtWidgets.QLineEdit(self)
        self.path.setObjectName("export-path")
        browse = QtWidgets.QPushButton("Browse\u2026", self)
        browse.clicked.connect(self._browse)
        row = QtWidgets.QHBoxLayout()
        row.addWidget(self.path, 1)
        row.addWidget(browse)
        self.form.addRow("Save to", row)
        self.overwrite = QtWidgets.QCheckBox("Replace an existing file", self)
        self.overwrite.setObjectName("export-overwrite")
        self.preview = QtWidgets.QLabel(self)
        self.preview.setObjectName("export-preview")
        self.preview.setMinimumSize(360, 80)
        self.preview.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        self.preview_note = QtWidgets.QLabel(self)
        self.preview_note.setProperty("role", "muted")
        self.preview_note.setWordWrap(True)
        self.command = QtWidgets.QLabel(self)
        self.command.setObjectName("export-command")
        self.command.setProperty("role", "muted")
        self.command.setWordWrap(True)
        self.command.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.error = ErrorLine(self)
        self.error.setObjectName("export-error")
        self.status = QtWidgets.QLabel(self)
        self.status.setObjectName("export-status")
        self.status.setWordWrap(True)
        buttons = QtWidgets.QDialogButtonBox(self)
        self.preview_button = buttons.addButton(
            "Preview", QtWidgets.QDialogButtonBox.ButtonRole.ActionRole)
        self.export_button = buttons.addButton(
            "Export", QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole)
        close = buttons.addButton("Close", QtWidgets.QDialogButtonBox.ButtonRole.RejectRole)
        self.export_button.setObjectName("export-write")
        self.preview_button.clicked.connect(self.refresh_preview)
        self.export_button.clicked.connect(self.export)
        close.clicked.connect(self.reject)
        self.path.setToolTip("The file to write; its extension chooses the format")
        browse.setToolTip("Choose the file to write")
        self.overwrite.setToolTip("Without this an existing file is left alone (as the "
                                  "command line's --force)")
        self.preview_button.setToolTip("Build the preview with the options above")
        self.export_button.setToolTip("Write the file (atomically: nothing is left half "
                                      "written)")
        close.setToolTip("Close this dialog; the options are kept")
        self.layout_ = QtWidgets.QVBoxLayout(self)
        self.layout_.addLayout(self.form)
        self.layout_.addWidget(self.overwrite)
        self.layout_.addWidget(self.preview, 1)
        self.layout_.addWidget(self.preview_note)
        self.layout_.addWidget(self.command)
        self.layout_.addWidget(self.error)
        self.layout_.addWidget(self.status)
        self.layout_.addWidget(buttons)
        self.path.setText(str(Path.home() / self.default_name))
        self.path.editingFinished.connect(self.refresh_preview)

    def _browse(self) -> None:
        path, _ = QtWidgets.QFileDialog.getSaveFileName(self, self.windowTitle(),
                                                        self.path.text(), self.filters)
        if path:
            self.path.setText(path)
            self.refresh_preview()

    def refresh_preview(self) -> bool:
        """Rebuild the preview from the current options; errors are shown inline."""
        try:
            self._preview()
        except INPUT_ERRORS as exc:
            self.error.show_error(str(exc))
            return False
        self.error.clear_error()
        return True

    def export(self) -> bool:
        """Write the file as the command line would; errors are shown inline."""
        path = Path(self.path.text().strip())
        try:
            message = self._export(path, self.overwrite.isChecked())
        except OutputExistsError:
            self.error.show_error(f"{path} exists; tick \u201cReplace an existing file\u201d "
                                  "to overwrite it")
            self.status.setText("")
            return False
        except (INPUT_ERRORS + (OSError,)) as exc:
            self.error.show_error(str(exc))
            self.status.setText("")
            return False
        self.error.clear_error()
        self.status.setText(message)
        self.written.emit(message)
        return True

    def _show_array(self, rgb8: np.ndarray) -> None:
        """Paint an image of the display's 8-bit code values, converted to the monitor.

        ``preview_image`` keeps the display's values (the file's pixels at 8 bits),
        ``preview_monitor_image`` is what is painted."""
        from starkiln.engine.colour.monitor import encoded_on_monitor

        m = self.model
        display_rgb8 = np.ascontiguousarray(rgb8[..., :3], dtype=np.uint8)
        shown, _clipped = encoded_on_monitor(display_rgb8, m.settings.display, m.monitor,
                                             m.viewing_level)
        self.preview_image = array_image(display_rgb8)
        self.show_monitor_image(array_image(shown))

    def show_monitor_image(self, img: QtGui.QImage) -> None:
        """Paint an image already in the monitor's colours, fitted to the preview area."""
        self.preview_monitor_image = img
        area = self.preview.size()
        pix = QtGui.QPixmap.fromImage(img)
        if pix.width() < area.width() // 2:
            pix = pix.scaled(area, QtCore.Qt.AspectRatioMode.KeepAspectRatio,
                             QtCore.Qt.TransformationMode.FastTransformation)
        elif pix.width() > area.width() or pix.height() > area.height():
            pix = pix.scaled(area, QtCore.Qt.AspectRatioMode.KeepAspectRatio,
                             QtCore.Qt.TransformationMode.SmoothTransformation)
        self.preview.setPixmap(pix)


class LutDialog(ExportDialog):
    """Options of ``starkiln lut`` and a preview of the texture."""

    default_name = "star-lut.png"
    filters = "Lookup textures (*.png *.exr)"

    def __init__(self, model, parent=None):
        super().__init__(model, parent)
        from starkiln.engine.colour.temperature_axis import AXIS_MAPPINGS
        from starkiln.engine.exports.texture_spec import DEFAULT_TEMPERATURE_RANGE_K, DEPTHS

        self.setObjectName("lut-dialog")
        self.setWindowTitle("Export a lookup texture")
        a, b = DEFAULT_TEMPERATURE_RANGE_K
        self.t_min = self._edit("lut-tmin", f"{a:g}")
        self.t_max = self._edit("lut-tmax", f"{b:g}")
        self.form.addRow("Temperatures, K", self._pair(self.t_min, self.t_max, "to"))
        self.axis = QtWidgets.QComboBox(self)
        self.axis.setObjectName("lut-axis")
        self.axis.addItems(list(AXIS_MAPPINGS))
        self.form.addRow("Temperature axis", self.axis)
        self.with_mags = QtWidgets.QCheckBox("Magnitudes down the texture", self)
        self.with_mags.setObjectName("lut-magnitudes")
        s = model.settings
        self.m_bright = self._edit("lut-mbright", f"{s.magnitude_bright:g}")
        self.m_faint = self._edit("lut-mfaint", f"{s.magnitude_faint:g}")
        self.form.addRow(self.with_mags, self._pair(self.m_bright, self.m_faint, "to"))
        self.width_edit = self._edit("lut-width", "256")
        self.height_edit = self._edit("lut-height", "16")
        self.form.addRow("Size, texels (W \u00d7 H)", self._pair(self.width_edit,
                                                                  self.height_edit, "\u00d7"))
        self.depth = QtWidgets.QComboBox(self)
        self.depth.setObjectName("lut-depth")
        for d in DEPTHS["png"]:
            self.depth.addItem(f"{d}-bit PNG", d)
        self.form.addRow("PNG samples", self.depth)
        self.alpha = QtWidgets.QCheckBox("Alpha channel holds the intensity", self)
        self.alpha.setObjectName("lut-alpha")
        self.premultiply = QtWidgets.QCheckBox("Premultiply RGB by the intensity", self)
        self.premultiply.setObjectName("lut-premultiply")
        self.form.addRow(self.alpha)
        self.form.addRow(self.premultiply)
        for w, tip in ((self.t_min, "Lowest temperature, K (left edge)"),
                       (self.t_max, "Highest temperature, K (right edge)"),
                       (self.axis, "How temperatures are spaced across the texture"),
                       (self.with_mags, "Rows from the brightest to the faintest magnitude"),
                       (self.m_bright, "Brightest magnitude (top row)"),
                       (self.m_faint, "Faintest magnitude (bottom row)"),
                       (self.width_edit, "Texture width in texels"),
                       (self.height_edit, "Texture height in texels"),
                       (self.depth, "Bits per sample of a PNG texture (EXR is 32-bit float)"),
                       (self.alpha, "Store the magnitude's intensity in the alpha channel"),
                       (self.premultiply, "Multiply the colour by the intensity")):
            w.setToolTip(tip)
        self.with_mags.toggled.connect(self._mags_toggled)
        for w in (self.t_min, self.t_max, self.m_bright, self.m_faint, self.width_edit,
                  self.height_edit):
            w.editingFinished.connect(self.refresh_preview)
        for c in (self.axis, self.depth):
            c.currentIndexChanged.connect(self.refresh_preview)
        for c in (self.alpha, self.premultiply):
            c.toggled.connect(self.refresh_preview)
        self.resize(560, 560)

    def _edit(self, name: str, text: str) -> QtWidgets.QLineEdit:
        e = QtWidgets.QLineEdit(text, self)
        e.setObjectName(name)
        e.setFixedWidth(90)
        return e

    def _pair(self, a, b, between: str) -> QtWidgets.QHBoxLayout:
        row = QtWidgets.QHBoxLayout()
        row.addWidget(a)
        row.addWidget(QtWidgets.QLabel(between, self))
        row.addWidget(b)
        row.addStretch(1)
        return row

    def _mags_toggled(self, on: bool) -> None:
        if on and self.height_edit.text().strip() == "16":
            self.height_edit.setText("256")
        if not on and self.height_edit.text().strip() == "256":
            self.height_edit.setText("16")
        self.refresh_preview()

    def spec_for(self, path: Path):
        """The :class:`starkiln.engine.exports.textures.TextureSpec` for the options and the output path's format."""
        from starkiln.engine.exports.texture_spec import TextureSpec, format_for_path

        fmt = format_for_path(path)
        a = parse_number(self.t_min.text(), "lowest temperature")
        b = parse_number(self.t_max.text(), "highest temperature")
        mags = None
        if self.with_mags.isChecked():
            mags = (parse_number(self.m_bright.text(), "brightest magnitude"),
                    parse_number(self.m_faint.text(), "faintest magnitude"))
        w = parse_number(self.width_edit.text(), "texture width")
        h = parse_number(self.height_edit.text(), "texture height")
        return TextureSpec(width=w, height=h, temperature_range_K=(a, b),
                       axis=self.axis.currentText(), magnitude_range=mags,
                       alpha=self.alpha.isChecked(), premultiply=self.premultiply.isChecked(),
                       file_format=fmt, depth=32 if fmt == "exr" else self.depth.currentData())

    def command_line(self, path: Path, spec) -> str:
        """The equivalent ``starkiln lut`` command (settings from a saved TOML file)."""
        parts = ["starkiln", "lut", str(path), "--settings", "SETTINGS.toml",
                 "--temperatures", "{:g}:{:g}".format(*spec.temperature_range_K),
                 "--size", f"{spec.width}x{spec.height}", "--axis", spec.axis]
        if spec.magnitude_range is not None:
            parts += ["--magnitudes", "{:g}:{:g}".format(*spec.magnitude_range)]
        if spec.file_format == "png":
            parts += ["--depth", str(spec.depth)]
        if spec.alpha:
            parts.append("--alpha")
        if spec.premultiply:
            parts.append("--premultiply")
        if self.overwrite.isChecked():
            parts.append("--force")
        return " ".join(shlex.quote(p) for p in parts)

    def _preview(self) -> None:
        from starkiln.engine.exports.textures import build_lut

        path = Path(self.path.text().strip() or self.default_name)
        spec = self.spec_for(path)
        small = spec.replace(width=min(spec.width, PREVIEW_MAX[0]),
                             height=min(spec.height, PREVIEW_MAX[1]), file_format="png",
                             depth=8)
        array, _meta = build_lut(self.model.settings, small)
        self._show_array(array)
        notes = [f"{spec.width} \u00d7 {spec.height} texels, temperature "
                 f"{spec.temperature_range_K[0]:g}\u2013{spec.temperature_range_K[1]:g} K "
                 f"({spec.axis}) left to right"]
        if spec.magnitude_range is not None:
            notes.append("magnitude {:g} (top) to {:g} (bottom)".format(*spec.magnitude_range))
        if small != spec:
            notes.append("preview shown 8-bit display-encoded" +
                         (f" at {small.width} \u00d7 {small.height}" if
                          (small.width, small.height) != (spec.width, spec.height) else ""))
        if spec.alpha:
            notes.append("alpha (intensity) not drawn")
        self.preview_note.setText("; ".join(notes))
        self.command.setText("Command line: " + self.command_line(path, spec))

    def _export(self, path: Path, overwrite: bool) -> str:
        from starkiln.engine.exports.textures import export_texture

        spec = self.spec_for(path)
        self.command.setText("Command line: " + self.command_line(path, spec))
        export_texture(self.model.settings, spec, path, overwrite=overwrite)
        self._preview()
        return f"Wrote {path} ({spec.width} \u00d7 {spec.height}, {spec.file_format.upper()})"


class PaletteDialog(ExportDialog):
    """Options of ``starkiln palette`` and a preview of the swatches."""

    default_name = "star-palette.json"
    filters = "Palettes (*.json *.csv *.gpl *.png)"

    def __init__(self, model, parent=None):
        super().__init__(model, parent)
        from starkiln.engine.colour.temperature_axis import AXIS_MAPPINGS
        from starkiln.engine.exports.texture_spec import DEFAULT_TEMPERATURE_RANGE_K

        self.setObjectName("palette-dialog")
        self.setWindowTitle("Export a palette")
        self.kind = QtWidgets.QComboBox(self)
        self.kind.setObjectName("palette-kind")
        self.kind.addItem("Temperature steps", "steps")
        self.kind.addItem("One swatch per spectral class", "classes")
        self.form.addRow("Swatches", self.kind)
        a, b = DEFAULT_TEMPERATURE_RANGE_K
        self.t_min = QtWidgets.QLineEdit(f"{a:g}", self)
        self.t_max = QtWidgets.QLineEdit(f"{b:g}", self)
        self.t_min.setObjectName("palette-tmin")
        self.t_max.setObjectName("palette-tmax")
        row = QtWidgets.QHBoxLayout()
        for w in (self.t_min, QtWidgets.QLabel("to", self), self.t_max):
            row.addWidget(w)
        row.addStretch(1)
        self.form.addRow("Temperatures, K", row)
        self.steps = QtWidgets.QLineEdit("16", self)
        self.steps.setObjectName("palette-steps")
        self.form.addRow("Steps", self.steps)
        self.axis = QtWidgets.QComboBox(self)
        self.axis.setObjectName("palette-axis")
        self.axis.addItems(list(AXIS_MAPPINGS))
        self.form.addRow("Spacing", self.axis)
        self.classes = QtWidgets.QLineEdit("all", self)
        self.classes.setObjectName("palette-classes")
        self.classes.setToolTip("all, or a comma list such as O5V,B0V,A0V,F0V,G2V,K0V,M0V")
        self.form.addRow("Classes", self.classes)
        self.name = QtWidgets.QLineEdit(self)
        self.name.setObjectName("palette-name")
        self.name.setPlaceholderText("(from the content)")
        self.form.addRow("Palette name", self.name)
        for w, tip in ((self.kind, "Evenly spaced temperatures, or one swatch per class"),
                       (self.t_min, "Lowest temperature, K"),
                       (self.t_max, "Highest temperature, K"),
                       (self.steps, "How many swatches"),
                       (self.axis, "How the temperatures are spaced"),
                       (self.name, "The palette's name in the file (empty: from the content)")):
            w.setToolTip(tip)
        self.strip = SwatchStrip("palette-strip", height=40, parent=self)
        self.layout_.insertWidget(2, self.strip)
        for w in (self.t_min, self.t_max, self.steps, self.classes, self.name):
            w.editingFinished.connect(self.refresh_preview)
        for c in (self.kind, self.axis):
            c.currentIndexChanged.connect(self.refresh_preview)
        self.kind.currentIndexChanged.connect(self._kind_changed)
        self._kind_changed()
        self.resize(560, 560)

    def _kind_changed(self, *_args) -> None:
        steps = self.kind.currentData() == "steps"
        for w in (self.t_min, self.t_max, self.steps, self.axis):
            w.setEnabled(steps)
        self.classes.setEnabled(not steps)

    def palette_options(self) -> dict:
        """Keyword arguments of :func:`starkiln.engine.exports.palettes.build_palette` (as ``cmd_palette`` builds)."""
        if self.kind.currentData() == "classes":
            text = self.classes.text().strip() or "all"
            classes = None if text.lower() == "all" else text.split(",")
            return {"use_classes": True, "classes": classes}
        steps = parse_number(self.steps.text(), "steps")
        if steps != int(steps):
            raise StarkilnError(f"steps {self.steps.text().strip()!r} is not a whole number")
        return {"range_K": (parse_number(self.t_min.text(), "lowest temperature"),
                            parse_number(self.t_max.text(), "highest temperature")),
                "steps": int(steps), "axis": self.axis.currentText()}

    def command_line(self, path: Path) -> str:
        """The equivalent ``starkiln palette`` command (settings from a saved TOML file)."""
        parts = ["starkiln", "palette", str(path), "--settings", "SETTINGS.toml"]
        opts = self.palette_options()
        if opts.get("use_classes"):
            parts += ["--classes", self.classes.text().strip() or "all"]
        else:
            parts += ["--temperatures", "{:g}:{:g}".format(*opts["range_K"]),
                      "--steps", str(opts["steps"]), "--axis", opts["axis"]]
        if self.name.text().strip():
            parts += ["--name", self.name.text().strip()]
        if self.overwrite.isChecked():
            parts.append("--force")
        return " ".join(shlex.quote(p) for p in parts)

    def _build(self):
        from starkiln.engine.exports.palettes import build_palette

        return build_palette(self.model.settings, **self.palette_options())

    def _preview(self) -> None:
        from starkiln.engine.colour.monitor import rendered_on_monitor
        from starkiln.engine.exports.contact_sheets import sheet_image
        from starkiln.engine.exports.palettes import palette_format_for_path

        path = Path(self.path.text().strip() or self.default_name)
        fmt = palette_format_for_path(path)
        palette = self._build()
        m = self.model  # painted on the monitor; the tooltips keep the display's values
        shown, clipped = rendered_on_monitor(palette.rendered, m.monitor,
                                             viewing_level=m.viewing_level)
        self.strip.set_cells(shown, clipped=clipped, tooltips=[
            f"{n}  {h}" for n, h in zip(palette.names, palette.hex)])
        if fmt == "sheet":
            img = sheet_image(palette, self.name.text().strip() or None)
            self._show_array(np.asarray(img.convert("RGB")))
        else:
            self.preview.clear()
        self.preview_note.setText(f"{len(palette.names)} swatches, {fmt.upper()} "
                                  f"({palette.names[0]} \u2026 {palette.names[-1]})")
        self.command.setText("Command line: " + self.command_line(path))

    def _export(self, path: Path, overwrite: bool) -> str:
        from starkiln.engine.exports.palettes import export_palette, palette_format_for_path

        palette_format_for_path(path)
        self.command.setText("Command line: " + self.command_line(path))
        palette = export_palette(self.model.settings, path, **self.palette_options(),
                                 name=self.name.text().strip() or None, overwrite=overwrite)
        self._preview()
        return f"Wrote {path} ({len(palette.names)} swatches)"
