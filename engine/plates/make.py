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
PLATE_PROJECTIONS = ("equirect", "fisheye", "cube")
#: Image types by file extension.
PLATE_FILE_TYPES = {"png": "png16", "exr": "exr-float"}
#: EXR channel types: 32-bit float (the default) or 16-bit half.
EXR_TYPES = ("half", "float")


@dataclass(frozen=True)
class PlateResult:
    """What :func:`make_plate` drew: the columns it used, the row counts, the log line."""

    ra_column: str
    dec_column: str
    counts: dict = field(default_factory=dict)
    columns_line: str = ""

    def lines(self, path, spec, values) -> list[str]:
        """The command's summary: stars drawn, then each reason rows were skipped."""
        w, h = spec.width_px, spec.height_px
        size = f"6 faces of {w} x {h} in a {4 * w} x {3 * h} cross" \
            if spec.projection == "cube" else f"{w} x {h}"
        out = [f"{self.counts.get('drawn', 0):,} stars -> {path} ({size}, "
               f"{spec.projection}, {values})"]
        from starkiln.engine.plates.run import NO_AIR

        out += [f"  skipped, {k}: {v:,}" for k, v in sorted(self.counts.items())
                if k not in ("drawn", NO_AIR) and v]
        if self.counts.get(NO_AIR):
            out.append(f"  {NO_AIR}: {self.counts[NO_AIR]:,}")
        return out


def plate_file_type(path, exr_type=None) -> str:
    """``png16``, ``exr-float`` or ``exr-half`` for an output path and EXR channel type.

    ``exr_type`` (``half`` or ``float``; None: float) applies to ``.exr`` files only.

    Raises
    ------
    StarkilnError
        Another extension, an unknown ``exr_type``, or an ``exr_type`` for a PNG.

    References
    ----------
    [PNG] (16-bit samples); OpenEXR (half and float samples); file types by extension,
    common practice.
    """
    ext = str(path).lower().rsplit(".", 1)[-1]
    if ext not in PLATE_FILE_TYPES:
        raise StarkilnError(f"{path}: unknown image type; accepted: .png, .exr")
    if exr_type is None:
        return PLATE_FILE_TYPES[ext]
    kind = str(exr_type).strip().lower()
    if kind not in EXR_TYPES:
        raise StarkilnError(f"--exr-type {exr_type!r} unknown; accepted: half, float")
    if ext != "exr":
        raise StarkilnError(f"--exr-type {exr_type} applies to .exr files; {path} is a "
                            "16-bit .png")
    return f"exr-{kind}"


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


def through_air_plan(plan, site):
    """The plan of a plate drawn through the air over ``site``: the site's height as the
    settings' ``site_height_m``.

    Raises
    ------
    StarkilnError
        No site, a fixed altitude in the settings, or a ``site_height_m`` other than the
        site's height.

    References
    ----------
    [Bucholtz1995] (the Rayleigh depth scales with the pressure at the site's height, through
    :mod:`starkiln.engine.path.atmosphere`).
    """
    if site is None:
        raise StarkilnError("--through-air needs --site LAT,LON[,HEIGHT_M] and --time (each "
                            "star's altitude over the site)")
    settings = plan.settings
    if settings.altitude_deg is not None:
        raise StarkilnError(f"--through-air and a fixed altitude ({settings.altitude_deg:g} "
                            "deg, from --altitude or the settings) do not go together; "
                            "accepted: one of them")
    if settings.site_height_m not in (0.0, site.height_m):
        raise StarkilnError(f"--site-height {settings.site_height_m:g} m and the --site height "
                            f"{site.height_m:g} m differ; accepted: the height in --site "
                            "LAT,LON,HEIGHT_M")
    return replace(plan, settings=settings.replace(site_height_m=float(site.height_m)))


def make_plate(input_path, output_path, plan, spec, *, ra_column=None, dec_column=None,
               psf_sigma_px: float = 0.7, values: str = "display", site=None, moment=None,
               refraction: bool = False, below_horizon: str = "drop", overwrite: bool = False,
               exr_type=None, engine: str = "local", scheduler=None, n_workers=None,
               log=None, through_air: bool = False) -> PlateResult:
    """Draw every star of a catalogue file into a plate and write it atomically.

    Parameters
    ----------
    input_path : path
        Any single file ``starkiln catalogue`` reads.
    output_path : path
        ``.png`` (16-bit) or ``.exr`` (float, or half with ``exr_type``).
    plan : CataloguePlan
        The look (``plan.settings``) and the colour and magnitude columns.
    spec : PlateSpec
        Projection and size (for ``cube``: the side of one face; the file is the six faces
        in one 4 x 3 cross, :func:`starkiln.engine.plates.plate_files.cube_cross`).
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
    exr_type : {"half", "float"}, optional
        EXR channel type (None: float).
    engine : {"local", "dask"}
        ``dask``: ``input_path`` is a Parquet file, folder or glob; each partition is drawn
        on a worker and the plates are summed on the cluster
        (:func:`starkiln.engine.plates.dask_engine.draw_plate_dask`).
    scheduler : str, optional
        With ``dask``: a running scheduler's address (else a local cluster).
    n_workers : int, optional
        With ``dask`` and no scheduler: the local cluster's worker processes.
    log : callable, optional
        Called with the column-choice line (and, with dask, the partition count).
    through_air : bool
        With ``site`` and ``moment``: each star's light through the atmosphere at its own
        apparent altitude over the site (``render(altitude_deg=...)``, every row rendered
        exactly; the settings' aerosol and ozone, the site's height as ``site_height_m``).
        Stars kept below the horizon (``below_horizon="keep"``) are drawn without air and
        counted apart. Refused beside a fixed altitude in the settings.

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
    from starkiln.engine.plates import plate_files
    from starkiln.engine.plates.plate_files import check_plate_memory, plate_metadata
    from starkiln.engine.plates.run import column_names, draw_chunk, plate_chunks, radec_columns

    if not (psf_sigma_px > 0 and psf_sigma_px <= 50):
        raise StarkilnError(f"--psf-px {psf_sigma_px:g} is out of range; accepted: 0-50 px")
    output_type = plate_file_type(output_path, exr_type)
    plan = plate_plan(plan, values)
    if (site is None) != (moment is None):
        raise StarkilnError("--site and --time go together (the sky over a place at a moment)")
    if through_air:
        plan = through_air_plan(plan, site)
    cube = spec.projection == "cube"
    if cube:
        check_plate_memory(spec.width_px, spec.height_px, faces=6,
                           extra_bytes=plate_files.plate_bytes(4 * spec.width_px,
                                                               3 * spec.height_px))
    else:
        check_plate_memory(spec.width_px, spec.height_px)
    check_writable(output_path, overwrite)
    if engine not in ("local", "dask"):
        raise StarkilnError(f"--engine {engine!r} unknown; accepted: local, dask")
    names_from = input_path
    if engine == "dask":
        from starkiln.engine.catalogue.dask_engine import parquet_inputs

        names_from = parquet_inputs(input_path)[0]
    ra_col, dec_col, line = radec_columns(column_names(names_from), ra_column, dec_column)
    if log is not None:
        log(line)
    frame_kw = {} if site is None else dict(site=site, time=moment, refraction=refraction,
                                            below_horizon=below_horizon)
    if through_air:
        frame_kw["through_air"] = True
    image = np.zeros(((6,) if cube else ()) + (spec.height_px, spec.width_px, 3),
                     dtype=np.float32)
    counts: dict = {}
    names = list(dict.fromkeys([ra_col, dec_col, *plan.input_columns]))
    if engine == "dask":
        from starkiln.engine.plates.dask_engine import draw_plate_dask

        _, n_parts = draw_plate_dask(image, input_path, plan, names, ra_col, dec_col, spec,
                                     counts=counts, scheduler=scheduler, n_workers=n_workers,
                                     psf_sigma_px=psf_sigma_px, values=values, frame=frame_kw)
        if log is not None:
            log(f"{n_parts} partition{'s' * (n_parts != 1)} drawn on the cluster, summed "
                "there (tree reduction)")
    else:
        for _, chunk in plate_chunks(input_path, plan, names):
            draw_chunk(image, plan, chunk, ra_col, dec_col, spec, psf_sigma_px=psf_sigma_px,
                       values=values, frame=frame_kw, counts=counts)
    frame = {"frame": "equatorial" if site is None else "horizon"}
    if site is not None:
        frame.update(site=site.text(), time=moment.isot, refraction=bool(refraction),
                     below_horizon=below_horizon, through_air=bool(through_air))
    meta = plate_metadata(plan.settings, spec, frame=frame, psf_sigma_px=psf_sigma_px,
                          values=values, counts=counts,
                          columns={"ra": ra_col, "dec": dec_col, "source": plan.source,
                                   "source_column": plan.source_column,
                                   "magnitude": plan.magnitude_column,
                                   "dust": plan.dust_column,
                                   "dust_quantity": plan.dust_quantity,
                                   "deredden_ebv": plan.deredden_ebv},
                          output_type=output_type,
                          layout=plate_files.CROSS_LAYOUT if cube else None)
    if cube:
        image = plate_files.cube_cross(image)
    write_plate(output_path, image, meta, overwrite, atomic_path,
                exr_type=output_type[4:] if output_type.startswith("exr-") else "float")
    return PlateResult(ra_col, dec_col, counts, line)


def write_plate(path, image, meta, overwrite, atomic_path=None, exr_type="float") -> None:
    """Write a plate image (16-bit PNG, or half / float EXR) with its metadata, atomically.

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
            write_exr(tmp, image, {"starkiln": text}, pixel_type=exr_type)
