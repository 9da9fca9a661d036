"""The sky panel's catalogue controls, the column chooser and the plate export dialog.

- :class:`SkyBar` sits over the sky preview: which view (the demo cluster close up, the whole
  sky, a dome), the dome's field of view, tilt and centre, *Load...* (a catalogue) and *Export...*
  (a star plate); problems show on its one-line error, and the sky shown before stays.
- :class:`ColumnDialog` asks which columns hold the positions, the colour and the magnitude
  when the usual names (:func:`starkiln.engine.plates.preview.guess_columns`, RA / Dec exactly
  as ``starkiln plate`` picks them) do not find them all.
- :class:`PlateDialog` writes a plate of the loaded catalogue through
  :func:`starkiln.engine.plates.make.make_plate`, the function ``starkiln plate`` calls, so
  its file is byte-identical to the command's with the same settings and options.

The window computes no colour here: the engine reads, checks and draws; these widgets only
collect the choices.
"""

from __future__ import annotations

import shlex
from pathlib import Path

from PySide6 import QtCore, QtWidgets

from starkiln.engine.errors import StarkilnError
from starkiln.engine.plates.preview import ColumnChoice
from starkiln.gui.exports import ExportDialog
from starkiln.gui.fields import INPUT_ERRORS, ErrorLine, parse_number
from starkiln.gui.sky import VIEWS

#: Catalogue files by extension, as ``starkiln catalogue`` reads them.
CATALOGUE_FILTER = "Catalogues (*.csv *.ecsv *.fits *.fit *.vot *.xml *.parquet)"
#: Words for the colour sources (the plan's names).
SOURCE_WORDS = {"temperature": "Temperature, K", "bv": "B\u2212V colour index",
                "bp-rp": "Gaia BP\u2212RP colour"}
#: The same, inside a sentence.
SOURCE_PHRASES = {"temperature": "temperature (K)", "bv": "B\u2212V",
                  "bp-rp": "Gaia BP\u2212RP"}
NO_MAGNITUDE = "(none: every star equally bright)"


def _centre(text: str):
    """``"RA, Dec"`` in degrees (StarkilnError naming the text otherwise)."""
    try:
        a, b = (float(v) for v in str(text).replace(";", ",").split(","))
    except ValueError:
        raise StarkilnError(f"centre {text!r} is not two numbers; accepted: RA, Dec in "
                            "degrees, e.g. 0, 90") from None
    return a, b


def _small_edit(parent, name, text, width=60, tip=""):
    e = QtWidgets.QLineEdit(text, parent)
    e.setObjectName(name)
    e.setFixedWidth(width)
    e.setToolTip(tip)
    return e


class SkyBar(QtWidgets.QWidget):
    """The sky panel's controls (see the module notes)."""

    def __init__(self, model, sky, parent=None):
        super().__init__(parent)
        self.model, self.sky = model, sky
        self.column_dialog: ColumnDialog | None = None
        self.plate_dialog: PlateDialog | None = None
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(2, 0, 2, 0)
        lay.setSpacing(2)
        row = QtWidgets.QHBoxLayout()
        self.view = QtWidgets.QComboBox(self)
        self.view.setObjectName("sky-view")
        for key, words in VIEWS.items():
            self.view.addItem(words, key)
        self.view.setToolTip("What the panel shows: the demo cluster close up, or the loaded "
                             "catalogue over the whole sky (equirect, 2:1) or on a dome "
                             "(fisheye)")
        self.view.setSizeAdjustPolicy(
            QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.view.setMinimumContentsLength(8)
        self.view.currentIndexChanged.connect(self._view_chosen)
        self.load_button = QtWidgets.QPushButton("Load\u2026", self)
        self.load_button.setObjectName("sky-load")
        self.load_button.setToolTip("Load a catalogue: show your own star list here (CSV, "
                                    "ECSV, FITS, VOTable or Parquet), coloured by the "
                                    "current look")
        self.load_button.clicked.connect(self._load_dialog)
        self.export_button = QtWidgets.QPushButton("Export\u2026", self)
        self.export_button.setObjectName("sky-export")
        self.export_button.setToolTip("Export a star plate: write the loaded catalogue as a whole-sky or dome "
                                      "image (PNG or EXR), as starkiln plate does")
        lay.addWidget(self.view)
        row.addWidget(self.load_button)
        row.addWidget(self.export_button)
        row.addStretch(1)
        lay.addLayout(row)
        self.dome_row = QtWidgets.QWidget(self)
        dr = QtWidgets.QGridLayout(self.dome_row)
        dr.setContentsMargins(0, 0, 0, 0)
        dr.setHorizontalSpacing(4)
        dr.setVerticalSpacing(2)
        self.fov = _small_edit(self, "sky-fov", "180", 44,
                               "How much of the sky the dome shows, 1\u2013360 degrees "
                               "(180: a hemisphere)")
        self.tilt = _small_edit(self, "sky-tilt", "0", 40,
                                "How far the dome is tilted forward, degrees")
        self.centre = _small_edit(self, "sky-centre", "0, 90", 84,
                                  "The sky at the dome's centre: RA, Dec in degrees "
                                  "(0, 90: the celestial pole)")
        for i, (label, w) in enumerate((("Field", self.fov), ("Tilt", self.tilt),
                                        ("Centre", self.centre))):
            lab = QtWidgets.QLabel(label, self.dome_row)
            lab.setProperty("role", "muted")
            r, c = (0, 2 * i) if i < 2 else (1, 0)
            dr.addWidget(lab, r, c)
            dr.addWidget(w, r, c + 1, 1, 1 if i < 2 else 3)
            w.editingFinished.connect(self.apply_dome)
        dr.setColumnStretch(4, 1)
        lay.addWidget(self.dome_row)
        self.error = ErrorLine(self)
        self.error.setObjectName("sky-error")
        lay.addWidget(self.error)
        sky.plate_problem.connect(self._problem)
        model.events.stars.connect(lambda _c: self._sync())
        self._sync()

    # -- view and dome ---------------------------------------------------------------------
    def _sync(self) -> None:
        i = self.view.findData(self.sky.view)
        if i != self.view.currentIndex():
            self.view.blockSignals(True)
            self.view.setCurrentIndex(i)
            self.view.blockSignals(False)
        self.dome_row.setVisible(self.sky.view == "fisheye")
        self.export_button.setEnabled(self.model.star_table is not None)

    def _view_chosen(self, _index) -> None:
        self.sky.set_view(self.view.currentData())
        self._sync()

    def _problem(self, message: str) -> None:
        if message:
            self.error.show_error(message)
        else:
            self.error.clear_error()

    def dome_fields(self) -> dict:
        """The dome fields as ``PlateSpec`` keywords (StarkilnError if not accepted)."""
        from starkiln.engine.plates.projection import PlateSpec

        lon, lat = _centre(self.centre.text())
        fields = {"fov_deg": parse_number(self.fov.text(), "field of view"),
                  "tilt_deg": parse_number(self.tilt.text(), "tilt"),
                  "centre_lon_deg": lon, "centre_lat_deg": lat}
        PlateSpec("fisheye", 16, 16, **fields)  # the engine's checks, before anything changes
        return fields

    def apply_dome(self) -> bool:
        """Take the dome fields (an unaccepted value is shown and the dome stays as it was)."""
        try:
            fields = self.dome_fields()
        except INPUT_ERRORS as exc:
            self.error.show_error(str(exc))
            return False
        self.error.clear_error()
        if fields != self.sky.dome:
            self.sky.set_dome(**fields)
        return True

    # -- loading ---------------------------------------------------------------------------
    def _load_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Load a catalogue", "",
                                                        CATALOGUE_FILTER)
        if path:
            self.load_catalogue(path)

    def load_catalogue(self, path, choice: ColumnChoice | None = None):
        """Load ``path`` into the panel. Returns True when shown, False on an error (shown on
        the bar; the sky before stays), None when the column chooser was opened because the
        usual names did not find every column."""
        from starkiln.engine.plates.preview import guess_columns
        from starkiln.engine.plates.run import column_names

        if choice is None:
            try:
                names = column_names(path)
            except (StarkilnError, OSError) as exc:
                self.error.show_error(_one_line(exc, path))
                return False
            guess = guess_columns(names)
            if not guess.complete:
                self.column_dialog = ColumnDialog(names, guess, self)
                self.column_dialog.chosen.connect(lambda c, p=path: self.load_catalogue(p, c))
                self.column_dialog.show()
                return None
            choice = guess
        try:
            self.model.load_star_table(path, choice, origin="sky-bar")
        except (StarkilnError, OSError) as exc:
            self.error.show_error(_one_line(exc, path))
            return False
        self.error.clear_error()
        self._sync()
        return True

    # -- export ----------------------------------------------------------------------------
    def export_dialog(self) -> "PlateDialog":
        """Open (non-modal) the plate export dialog, with the panel's view and dome."""
        if self.plate_dialog is None:
            self.plate_dialog = PlateDialog(self.model, self.window())
        d = self.plate_dialog
        if self.sky.view in ("equirect", "fisheye"):
            d.projection.setCurrentIndex(d.projection.findData(self.sky.view))
        dome = self.sky.dome
        d.fov.setText(f"{dome['fov_deg']:g}")
        d.tilt.setText(f"{dome['tilt_deg']:g}")
        d.centre.setText(f"{dome['centre_lon_deg']:g}, {dome['centre_lat_deg']:g}")
        d.show()
        d.refresh_preview()
        return d


def _one_line(exc, path) -> str:
    text = str(exc) if isinstance(exc, StarkilnError) else f"{path}: cannot read ({exc})"
    return text.splitlines()[0] if text else f"{path}: cannot read"


class ColumnDialog(QtWidgets.QDialog):
    """Which columns hold the positions, the colour and the magnitude.

    Signals
    -------
    chosen(object) : the :class:`~starkiln.engine.plates.preview.ColumnChoice` on *Show*.
    """

    chosen = QtCore.Signal(object)

    def __init__(self, names, guess: ColumnChoice, parent=None):
        super().__init__(parent)
        self.setObjectName("column-dialog")
        self.setWindowTitle("Which columns?")
        form = QtWidgets.QFormLayout()
        names = list(names)

        def combo(name, selected, extra=()):
            c = QtWidgets.QComboBox(self)
            c.setObjectName(name)
            c.addItems([*extra, *names])
            if selected in names:
                c.setCurrentText(selected)
            elif not extra:
                c.setCurrentIndex(-1)
            return c

        self.ra = combo("column-ra", guess.ra)
        self.dec = combo("column-dec", guess.dec)
        self.source = QtWidgets.QComboBox(self)
        self.source.setObjectName("column-source")
        for key, words in SOURCE_WORDS.items():
            self.source.addItem(words, key)
        if guess.source:
            self.source.setCurrentIndex(self.source.findData(guess.source))
        self.colour = combo("column-colour", guess.source_column)
        self.magnitude = combo("column-magnitude", guess.magnitude, (NO_MAGNITUDE,))
        form.addRow("Right ascension, degrees", self.ra)
        form.addRow("Declination, degrees", self.dec)
        form.addRow("Colour from", self.source)
        form.addRow("Colour column", self.colour)
        form.addRow("Magnitude (V)", self.magnitude)
        self.error = ErrorLine(self)
        self.error.setObjectName("column-error")
        buttons = QtWidgets.QDialogButtonBox(self)
        self.show_button = buttons.addButton("Show",
                                             QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole)
        self.show_button.setObjectName("column-show")
        cancel = buttons.addButton("Cancel", QtWidgets.QDialogButtonBox.ButtonRole.RejectRole)
        self.show_button.clicked.connect(self._show)
        cancel.clicked.connect(self.reject)
        lay = QtWidgets.QVBoxLayout(self)
        note = QtWidgets.QLabel("Not every column has a name Starkiln knows; say which "
                                "holds what.", self)
        note.setWordWrap(True)
        note.setProperty("role", "muted")
        lay.addWidget(note)
        lay.addLayout(form)
        lay.addWidget(self.error)
        lay.addWidget(buttons)

    def choice(self) -> ColumnChoice:
        """The columns chosen (StarkilnError when one is not chosen)."""
        picked = {}
        for key, c, words in (("ra", self.ra, "right ascension"),
                              ("dec", self.dec, "declination"),
                              ("source_column", self.colour, "colour")):
            if c.currentIndex() < 0:
                raise StarkilnError(f"no {words} column chosen; accepted: one of the "
                                    "file's columns")
            picked[key] = c.currentText()
        mag = self.magnitude.currentText()
        return ColumnChoice(picked["ra"], picked["dec"], self.source.currentData(),
                            picked["source_column"], None if mag == NO_MAGNITUDE else mag)

    def _show(self) -> None:
        try:
            choice = self.choice()
        except StarkilnError as exc:
            self.error.show_error(str(exc))
            return
        self.accept()
        self.chosen.emit(choice)


class PlateDialog(ExportDialog):
    """Options of ``starkiln plate`` for the loaded catalogue, and a small preview."""

    default_name = "star-plate.png"
    filters = "Star plates (*.png *.exr)"

    def __init__(self, model, parent=None):
        super().__init__(model, parent)
        from starkiln.engine.plates.make import PLATE_PROJECTIONS

        self.setObjectName("plate-dialog")
        self.setWindowTitle("Export a star plate")
        self.source_note = QtWidgets.QLabel(self)
        self.source_note.setObjectName("plate-source")
        self.source_note.setWordWrap(True)
        self.form.insertRow(0, "Stars", self.source_note)
        words = {"equirect": "Whole sky (equirect, 2:1)", "fisheye": "Dome master (fisheye)",
                 "cube": "Six cube faces (one 4 \u00d7 3 cross)"}
        self.projection = QtWidgets.QComboBox(self)
        self.projection.setObjectName("plate-projection")
        for key in PLATE_PROJECTIONS:
            self.projection.addItem(words.get(key, key), key)
        self.form.addRow("Picture", self.projection)
        self.width_edit = _small_edit(self, "plate-width", "4096", 80,
                                      "Image width in pixels (the height follows: half for "
                                      "the whole sky, the same for a dome); for cube faces, "
                                      "the side of one face")
        self.form.addRow("Width, pixels", self.width_edit)
        self.fov = _small_edit(self, "plate-fov", "180", 80,
                               "How much of the sky the dome shows, 1\u2013360 degrees")
        self.tilt = _small_edit(self, "plate-tilt", "0", 80, "Dome tilt forward, degrees")
        self.centre = _small_edit(self, "plate-centre", "0, 90", 120,
                                  "The sky at the dome's centre: RA, Dec in degrees; with a "
                                  "place and time: azimuth, altitude")
        self.form.addRow("Dome field, degrees", self.fov)
        self.form.addRow("Dome tilt, degrees", self.tilt)
        self.form.addRow("Dome centre", self.centre)
        self.psf = _small_edit(self, "plate-psf", "0.7", 80,
                               "How wide each star is drawn: the blur's sigma in pixels")
        self.form.addRow("Star size, pixels", self.psf)
        self.values = QtWidgets.QComboBox(self)
        self.values.setObjectName("plate-values")
        self.values.addItem("Ready to show (display values)", "display")
        self.values.addItem("Light for a renderer (linear flux)", "flux")
        self.values.setToolTip("Display values look right as they are; linear flux is for "
                               "renderers that do their own tone mapping (needs magnitudes)")
        self.form.addRow("Pixel values", self.values)
        self.exr_type = QtWidgets.QComboBox(self)
        self.exr_type.setObjectName("plate-exr-type")
        self.exr_type.addItem("Float (32-bit)", "float")
        self.exr_type.addItem("Half (16-bit, half the file size)", "half")
        self.exr_type.setToolTip("Channel type of an .exr plate; a .png plate is 16-bit")
        self.form.addRow("EXR channels", self.exr_type)
        self.site = QtWidgets.QLineEdit(self)
        self.site.setObjectName("plate-site")
        self.site.setPlaceholderText("(none: the fixed star sphere, pole up)")
        self.site.setToolTip("The sky over a place: latitude, longitude[, height m], degrees")
        self.time = QtWidgets.QLineEdit(self)
        self.time.setObjectName("plate-time")
        self.time.setPlaceholderText("e.g. 2026-03-14T21:00:00 (UTC)")
        self.time.setToolTip("The moment, ISO 8601 (UTC unless an offset is given)")
        self.form.addRow("Place", self.site)
        self.form.addRow("Time", self.time)
        for w in (self.width_edit, self.fov, self.tilt, self.centre, self.psf, self.site,
                  self.time):
            w.editingFinished.connect(self.refresh_preview)
        for c in (self.projection, self.values):
            c.currentIndexChanged.connect(self.refresh_preview)
        self.path.textChanged.connect(self._path_chosen)
        self.projection.currentIndexChanged.connect(self._projection_chosen)
        self._projection_chosen()
        self.path.setText(str(Path.home() / self.default_name))
        self._path_chosen()
        self.resize(560, 660)

    def _path_chosen(self, *_args) -> None:
        self.exr_type.setEnabled(self.path.text().strip().lower().endswith(".exr"))

    def exr_kind(self, path) -> str | None:
        """The EXR channel type for ``path`` (None for a PNG)."""
        return self.exr_type.currentData() if str(path).lower().endswith(".exr") else None

    def _projection_chosen(self, *_args) -> None:
        dome = self.projection.currentData() == "fisheye"
        for w in (self.fov, self.tilt, self.centre):
            w.setEnabled(dome)  # still passed (and recorded), as the command passes them

    # -- the options, as the command checks them -----------------------------------------
    def table(self):
        """The loaded catalogue (StarkilnError if none)."""
        t = self.model.star_table
        if t is None:
            raise StarkilnError("no catalogue is loaded; accepted: Load\u2026 a catalogue in the "
                                "sky panel first")
        return t

    def spec(self, width=None):
        """The :class:`~starkiln.engine.plates.projection.PlateSpec` (``width`` overrides)."""
        from starkiln.engine.plates.projection import PlateSpec

        proj = self.projection.currentData()
        w = parse_number(self.width_edit.text(), "width") if width is None else width
        if w != int(w) or w < 2:
            raise StarkilnError(f"width {self.width_edit.text().strip()!r} is not a whole "
                                "number of pixels >= 2")
        w = int(w)
        lon, lat = _centre(self.centre.text())
        return PlateSpec(proj, w, w // 2 if proj == "equirect" else w,
                         fov_deg=parse_number(self.fov.text(), "dome field"),
                         centre_lon_deg=lon, centre_lat_deg=lat,
                         tilt_deg=parse_number(self.tilt.text(), "dome tilt"))

    def frame(self) -> dict:
        """``site`` and ``moment`` for :func:`make_plate` (both None: the star sphere)."""
        from starkiln.engine.plates import frames

        site, when = self.site.text().strip(), self.time.text().strip()
        if bool(site) != bool(when):
            raise StarkilnError("a place and a time go together (the sky over a place at a "
                                "moment)")
        if not site:
            return {"site": None, "moment": None}
        return {"site": frames.parse_site(site), "moment": frames.parse_time(when)}

    def psf_px(self) -> float:
        return parse_number(self.psf.text(), "star size")

    def command_line(self, path: Path) -> str:
        """The equivalent ``starkiln plate`` command (settings from a saved TOML file)."""
        t, spec = self.table(), self.spec()
        c = t.choice
        source_option = {"temperature": "--temperature-column", "bv": "--bv-column",
                         "bp-rp": "--bp-rp-column"}[c.source]
        parts = ["starkiln", "plate", str(t.path), str(path), "--settings", "SETTINGS.toml",
                 "--ra-column", c.ra, "--dec-column", c.dec, source_option, c.source_column]
        if c.magnitude:
            parts += ["--magnitude-column", c.magnitude]
        parts += ["--projection", spec.projection, "--size",
                  f"{spec.width_px}x{spec.height_px}", f"--fov={spec.fov_deg:g}",
                  f"--tilt={spec.tilt_deg:g}",
                  f"--centre={spec.centre_lon_deg:g},{spec.centre_lat_deg:g}",
                  f"--psf-px={self.psf_px():g}", "--values", self.values.currentData()]
        if self.site.text().strip():
            parts += [f"--site={self.site.text().strip()}", "--time", self.time.text().strip()]
        if self.exr_kind(path):
            parts += ["--exr-type", self.exr_kind(path)]
        if self.overwrite.isChecked():
            parts.append("--force")
        return " ".join(shlex.quote(p) for p in parts)

    def _preview(self) -> None:
        from starkiln.gui.exports import PREVIEW_MAX, array_image

        t = self.table()
        c = t.choice
        colour = f"{SOURCE_PHRASES[c.source]} from {c.source_column!r}"
        mag = f"magnitude from {c.magnitude!r}" if c.magnitude else "no magnitudes"
        self.source_note.setText(f"{t.path.name}, {t.rows:,} rows: RA {c.ra!r}, Dec {c.dec!r}, "
                                 f"{colour}, {mag}")
        spec = self.spec()
        frame = self.frame()
        psf = self.psf_px()
        # drawn at about the size it is shown, so that no star is averaged away
        room = self.preview.width() if spec.projection == "equirect" else \
            min(self.preview.width(), self.preview.height())
        if spec.projection == "cube":  # the cross is 4 faces wide, 3 high
            room = min(self.preview.width() // 4, self.preview.height() // 3)
        small = self.spec(width=max(16, min(spec.width_px, PREVIEW_MAX[0], room)))
        kw = None
        if frame["site"] is not None:
            kw = dict(site=frame["site"], time=frame["moment"], refraction=False,
                      below_horizon="drop")
        plate = self.model.star_plate(small, psf_sigma_px=min(psf, 50.0), frame=kw)
        self.preview_plate = plate
        self.show_monitor_image(array_image(self.model.star_plate_rgb_8bit(plate)))
        self.preview_note.setText(
            f"{spec.width_px} \u00d7 {spec.height_px} pixels; preview at "
            f"{small.width_px} \u00d7 {small.height_px} in this monitor's colours, "
            f"{plate.counts.get('drawn', 0):,} stars drawn")
        self.command.setText("Command line: " + self.command_line(
            Path(self.path.text().strip() or self.default_name)))

    def _export(self, path: Path, overwrite: bool) -> str:
        from starkiln.engine.plates.make import make_plate

        t, spec = self.table(), self.spec()
        c = t.choice
        frame = self.frame()
        values = self.values.currentData()
        self.command.setText("Command line: " + self.command_line(path))
        result = make_plate(t.path, path, t.plan(self.model.settings), spec,
                            ra_column=c.ra, dec_column=c.dec, psf_sigma_px=self.psf_px(),
                            values=values, site=frame["site"], moment=frame["moment"],
                            overwrite=overwrite, exr_type=self.exr_kind(path))
        return "Wrote " + result.lines(path, spec, values)[0].split(" -> ", 1)[1] + \
            f": {result.counts.get('drawn', 0):,} stars"
