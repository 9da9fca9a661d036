"""The one plate maker: a catalogue file in, a self-describing plate file out.

``starkiln plate`` (:func:`starkiln.cli.plate.cmd_plate`) and the window's plate dialog
(:class:`starkiln.gui.plate_dialog.PlateDialog`) both call :func:`make_plate`, so a file
written by either is byte-identical to the other's with the same settings and options. It
picks the RA / Dec columns (:func:`starkiln.engine.plates.run.radec_columns`), reads the file
in chunks (:func:`~starkiln.engine.plates.run.plate_chunks`), colours, places and deposits
each chunk (:func:`~starkiln.engine.plates.run.draw_chunk`, the render path through the
catalogue's per-chunk colouring), then writes the image with its metadata
(:func:`starkiln.engine.plates.plate_files.plate_metadata`) atomically
(:func:`starkiln.engine.atomic.atomic_path`): nothing is left half written.

References
----------
Calabretta & Greisen 2002, A&A 395, 1077 (the projections, via
:mod:`starkiln.engine.plates.projection`); [PNG] (16-bit samples, ``tEXt``); OpenEXR
(float samples, header attributes), through :mod:`starkiln.engine.exports.image_files`.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from starkiln.engine.errors import StarkilnError

#: The projections ``starkiln plate`` and the plate dialog write.
PLATE_PROJECTIONS = ("equirect", "fisheye")
#: Image types by file extension.
PLATE_FILE_TYPES = {"png": "png16", "exr": "exr-float"}


@dataclass(frozen=True)
class PlateResult:
    """What :func:`make_plate` drew: the columns it used, the row counts, the log line."""

    ra_column: str
    dec_column: str
    counts: dict = field(default_factory=dict)
    columns_line: str = ""

    def lines(self, path, spec, values) -> list[str]:
        """The command's summary: stars drawn, then each reason rows were skipped."""
        out = [f"{self.counts.get('drawn', 0):,} stars -> {path} ({spec.width_px} x "
               f"{spec.height_px}, {spec.projection}, {values})"]
        out += [f"  skipped, {k}: {v:,}" for k, v in sorted(self.counts.items())
                if k != "drawn" and v]
        return out


def plate_file_type(path) -> str:
    """``png16`` or ``exr-float`` for an output path (StarkilnError for another extension).

    References
    ----------
    [PNG] (16-bit samples); OpenEXR (float samples); file types by extension, common practice.
    """
    ext = str(path).lower().rsplit(".", 1)[-1]
    if ext not in PLATE_FILE_TYPES:
        raise StarkilnError(f"{path}: unknown image type; accepted: .png, .exr")
    return PLATE_FILE_TYPES[ext]


def plate_plan(plan, values: str):
    """The catalogue plan a plate of ``values`` needs (flux: one linear working space).

    Raises
    ------
    StarkilnError
        ``values`` unknown, or flux without a magnitude column.

    References
    ----------
    Pogson (1856) magnitudes for the flux weights (common practice); the linear colour from
    :func:`starkiln.engine.catalogue.colouring.colour_values`.
    """
    if values not in ("display", "flux"):
        raise StarkilnError(f"values {values!r} unknown; accepted: display, flux")
    if values == "flux":
        if plan.magnitude_column is None:
            raise StarkilnError("--values flux needs --magnitude-column (a magnitude column)")
        plan = replace(plan, linear_columns=("lin-srgb",))
    return plan


def make_plate(input_path, output_path, plan, spec, *, ra_column=None, dec_column=None,
               psf_sigma_px: float = 0.7, values: str = "display", site=None, moment=None,
               refraction: bool = False, below_horizon: str = "drop", overwrite: bool = False,
               log=None) -> PlateResult:
    """Draw every star of a catalogue file into a plate and write it atomically.

    Parameters
    ----------
    input_path : path
        Any single file ``starkiln catalogue`` reads.
    output_path : path
        ``.png`` (16-bit) or ``.exr`` (float).
    plan : CataloguePlan
        The look (``plan.settings``) and the colour and magnitude columns.
    spec : PlateSpec
        Projection and size.
    ra_column, dec_column : str, optional
        Default: the first column named like ra / dec.
    psf_sigma_px : float
        Gaussian sigma, pixels (0-50).
    values : {"display", "flux"}
    site : Site, optional
        With ``moment``: the sky over a place at a moment (the horizon frame).
    moment : astropy.time.Time, optional
    refraction : bool
    below_horizon : {"drop", "keep"}
    overwrite : bool
        Replace an existing ``output_path``.
    log : callable, optional
        Called with the column-choice line.

    Returns
    -------
    PlateResult

    Raises
    ------
    StarkilnError
        One line naming the value and what is accepted; nothing is written.

    References
    ----------
    :func:`starkiln.engine.plates.run.draw_chunk`; :mod:`starkiln.engine.plates.plate_files`.
    """
    import numpy as np

    from starkiln.engine.atomic import atomic_path, check_writable
    from starkiln.engine.plates.plate_files import check_plate_memory, plate_metadata
    from starkiln.engine.plates.run import column_names, draw_chunk, plate_chunks, radec_columns

    if not (psf_sigma_px > 0 and psf_sigma_px <= 50):
        raise StarkilnError(f"--psf-px {psf_sigma_px:g} is out of range; accepted: 0-50 px")
    output_type = plate_file_type(output_path)
    plan = plate_plan(plan, values)
    if (site is None) != (moment is None):
        raise StarkilnError("--site and --time go together (the sky over a place at a moment)")
    check_plate_memory(spec.width_px, spec.height_px)
    check_writable(output_path, overwrite)
    ra_col, dec_col, line = radec_columns(column_names(input_path), ra_column, dec_column)
    if log is not None:
        log(line)
    frame_kw = {} if site is None else dict(site=site, time=moment, refraction=refraction,
                                            below_horizon=below_horizon)
    image = np.zeros((spec.height_px, spec.width_px, 3), dtype=np.float32)
    counts: dict = {}
    names = list(dict.fromkeys([ra_col, dec_col, *plan.input_columns]))
    for _, chunk in plate_chunks(input_path, plan, names):
        draw_chunk(image, plan, chunk, ra_col, dec_col, spec, psf_sigma_px=psf_sigma_px,
                   values=values, frame=frame_kw, counts=counts)
    frame = {"frame": "equatorial" if site is None else "horizon"}
    if site is not None:
        frame.update(site=site.text(), time=moment.isot, refraction=bool(refraction),
                     below_horizon=below_horizon)
    meta = plate_metadata(plan.settings, spec, frame=frame, psf_sigma_px=psf_sigma_px,
                          values=values, counts=counts,
                          columns={"ra": ra_col, "dec": dec_col, "source": plan.source,
                                   "source_column": plan.source_column,
                                   "magnitude": plan.magnitude_column},
                          output_type=output_type)
    write_plate(output_path, image, meta, overwrite, atomic_path)
    return PlateResult(ra_col, dec_col, counts, line)


def write_plate(path, image, meta, overwrite, atomic_path=None) -> None:
    """Write a plate image (16-bit PNG, or float EXR) with its metadata, atomically.

    References
    ----------
    [PNG] 16-bit samples: ``floor(v * 65535 + 0.5)`` (the one rounding of
    :mod:`starkiln.engine.colour.quantisation`, common practice).
    """
    import numpy as np

    from starkiln.engine.exports.image_files import write_exr, write_png
    from starkiln.engine.exports.texture_metadata import metadata_json

    if atomic_path is None:
        from starkiln.engine.atomic import atomic_path
    text = metadata_json(meta)
    with atomic_path(path, overwrite) as tmp:
        if str(path).lower().endswith(".png"):
            q = np.floor(np.clip(image, 0.0, 1.0) * 65535.0 + 0.5).astype(np.uint16)
            write_png(tmp, q, {"starkiln": text})
        else:
            write_exr(tmp, image, {"starkiln": text})
