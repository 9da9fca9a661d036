"""Command line: ``starkiln plate IN OUT`` (draw a catalogue's stars into one image).

Thin layer over :mod:`starkiln.engine.plates` (frames, plate_files, run); imports nothing
heavy at module level.
"""

from __future__ import annotations

from starkiln.cli.catalogue import add_engine_options, engine_from_args
from starkiln.cli.options import add_colour_options, number, settings_from_args
from starkiln.engine.errors import StarkilnError

PROJECTIONS = ("equirect", "fisheye")


def add_parsers(sub) -> None:
    """Add the ``plate`` subcommand to the ``starkiln`` parser."""
    p = sub.add_parser("plate", help="draw a catalogue's stars into a sky image",
                       description="Draw every star of a catalogue into a whole-sky or dome "
                                   "image (16-bit .png or float .exr), coloured by the same "
                                   "render path as 'starkiln catalogue'.")
    p.add_argument("input", metavar="IN", help="catalogue file (as 'starkiln catalogue' reads)")
    p.add_argument("output", metavar="OUT", help="image file: .png (16-bit) or .exr")
    c = p.add_argument_group("columns")
    c.add_argument("--ra-column", metavar="NAME", help="right ascension, degrees ICRS "
                   "(default: the first column named like ra)")
    c.add_argument("--dec-column", metavar="NAME", help="declination, degrees ICRS "
                   "(default: the first column named like dec)")
    c.add_argument("--temperature-column", metavar="NAME", help="effective temperature, K")
    c.add_argument("--bv-column", metavar="NAME", help="Johnson B-V (Ballesteros 2012)")
    c.add_argument("--bp-rp-column", metavar="NAME", help="dereddened Gaia BP-RP")
    c.add_argument("--extrapolate-bp-rp", action="store_true",
                   help="colour BP-RP outside the calibrated range (appearance only)")
    c.add_argument("--magnitude-column", metavar="NAME", help="apparent magnitudes")
    c.add_argument("--magnitude", type=number, metavar="M", help="one magnitude for every row")
    c.add_argument("--magnitude-band", metavar="V|G", default="V", help="V (default) or G")
    g = p.add_argument_group("plate")
    g.add_argument("--projection", default="equirect", metavar="|".join(PROJECTIONS),
                   help="equirect (whole sphere, 2:1; default) or fisheye (equidistant dome)")
    g.add_argument("--size", metavar="W[xH]", default="4096",
                   help="pixels: the width (height W/2 for equirect, W for fisheye) or WxH")
    g.add_argument("--fov", type=number, default=180.0, metavar="DEG",
                   help="fisheye field of view, 1-360 degrees (default 180)")
    g.add_argument("--tilt", type=number, default=0.0, metavar="DEG", help="dome tilt, degrees")
    g.add_argument("--centre", metavar="LON,LAT",
                   help="frame centre: az,alt with --site, else RA,Dec (default: zenith / pole)")
    g.add_argument("--frame", default="equatorial", metavar="equatorial|horizon",
                   help="equatorial (default; pole up) or horizon (needs --site and --time)")
    g.add_argument("--site", metavar="LAT,LON[,HEIGHT_M]", help="observing site (southern or western: write --site=-31.5,115.25)")
    g.add_argument("--time", metavar="ISO-8601", help="the moment (UTC unless an offset)")
    g.add_argument("--refraction", action="store_true", help="apply atmospheric refraction")
    g.add_argument("--below-horizon", default="drop", metavar="drop|keep")
    g.add_argument("--psf-px", type=number, default=0.7, metavar="SIGMA",
                   help="Gaussian sigma, pixels (default 0.7)")
    g.add_argument("--values", default="display", metavar="display|flux")
    g.add_argument("--settings-from", metavar="OLD", help="rebuild the plate OLD describes")
    g.add_argument("--force", action="store_true", help="overwrite OUT if it exists")
    add_engine_options(p.add_argument_group("engine"),
                       "dask (IN: a Parquet file, folder or glob; partitions drawn on the "
                       "workers, summed on the cluster)")
    add_colour_options(p)


def _pair(text, option):
    try:
        a, b = (float(v) for v in str(text).split(","))
    except ValueError:
        raise StarkilnError(f"{option} {text!r} is not two numbers; accepted: LON,LAT "
                            "in degrees") from None
    if not -90.0 <= b <= 90.0:
        raise StarkilnError(f"{option} latitude {b:g} is outside -90..90")
    return a, b


def _size(text, projection):
    try:
        parts = [int(v) for v in str(text).lower().split("x")]
        if len(parts) not in (1, 2) or min(parts) < 1:
            raise ValueError
    except ValueError:
        raise StarkilnError(f"--size {text!r} is not W or WxH in whole pixels; accepted: "
                            "e.g. 4096 or 8192x4096") from None
    if len(parts) == 2:
        return parts[0], parts[1]
    return parts[0], (parts[0] // 2 if projection == "equirect" else parts[0])


def cmd_plate(args, out) -> int:
    """``starkiln plate``: check every option, then draw and write the plate atomically."""
    import numpy as np

    from starkiln.cli.catalogue import plan_from_args
    from starkiln.engine.atomic import atomic_path, check_writable
    from starkiln.engine.plates import frames
    from starkiln.engine.plates.plate_files import check_plate_memory, plate_metadata

    if args.settings_from:
        _apply_old_plate(args)
    args.exact = False
    args.prefix = ""
    args.linear_columns = None
    engine = engine_from_args(args)
    projection = str(args.projection).strip().lower()
    if projection not in PROJECTIONS:
        raise StarkilnError(f"--projection {args.projection!r} unknown; accepted: "
                            + ", ".join(PROJECTIONS))
    if not 1.0 <= args.fov <= 360.0:
        raise StarkilnError(f"--fov {args.fov:g} is out of range; accepted: 1-360 degrees")
    if not (args.psf_px > 0 and args.psf_px <= 50):
        raise StarkilnError(f"--psf-px {args.psf_px:g} is out of range; accepted: 0-50 px")
    values = str(args.values).strip().lower()
    if values not in ("display", "flux"):
        raise StarkilnError(f"--values {args.values!r} unknown; accepted: display, flux")
    ext = str(args.output).lower().rsplit(".", 1)[-1]
    if ext not in ("png", "exr"):
        raise StarkilnError(f"{args.output}: unknown image type; accepted: .png, .exr")
    frame_name = str(args.frame).strip().lower()
    if frame_name not in frames.FRAMES:
        raise StarkilnError(f"--frame {args.frame!r} unknown; accepted: equatorial, horizon")
    if (args.site is None) != (args.time is None):
        raise StarkilnError("--site and --time go together (the sky over a place at a moment)")
    if args.site is not None:
        frame_name = "horizon"
    elif frame_name == "horizon":
        raise StarkilnError("--frame horizon needs --site LAT,LON[,HEIGHT_M] and --time")
    site = frames.parse_site(args.site) if args.site else None
    moment = frames.parse_time(args.time) if args.time else None
    below = str(args.below_horizon).strip().lower()
    if below not in frames.BELOW_HORIZON:
        raise StarkilnError(f"--below-horizon {args.below_horizon!r} unknown; accepted: drop, keep")
    width, height = _size(args.size, projection)
    check_plate_memory(width, height)
    centre = _pair(args.centre, "--centre") if args.centre else (0.0, 90.0)
    check_writable(args.output, args.force)
    settings = settings_from_args(args)
    if getattr(args, "old_settings", None) is not None:
        from starkiln.engine.pipeline.settings import Settings

        settings = Settings.from_dict(args.old_settings, source=args.settings_from)
    plan = plan_from_args(args, settings)
    if values == "flux":
        from dataclasses import replace

        if plan.magnitude_column is None:
            raise StarkilnError("--values flux needs --magnitude-column")
        plan = replace(plan, linear_columns=("lin-srgb",))

    from starkiln.engine.plates.projection import PlateSpec
    from starkiln.engine.plates.run import column_names, draw_chunk, plate_chunks, radec_columns

    spec = PlateSpec(projection=projection, width_px=width, height_px=height,
                     fov_deg=float(args.fov), centre_lon_deg=centre[0],
                     centre_lat_deg=centre[1], tilt_deg=float(args.tilt))
    names_from = args.input
    if engine == "dask":
        from starkiln.engine.catalogue.dask_engine import parquet_inputs

        names_from = parquet_inputs(args.input)[0]
    ra_col, dec_col, line = radec_columns(column_names(names_from), args.ra_column,
                                          args.dec_column)
    import sys
    sys.stderr.write(f"starkiln: {line}\n")
    frame_kw = {} if site is None else dict(site=site, time=moment, refraction=args.refraction,
                                            below_horizon=below)
    image = np.zeros((height, width, 3), dtype=np.float32)
    counts = {}
    names = list(dict.fromkeys([ra_col, dec_col, *plan.input_columns]))
    if engine == "dask":
        from starkiln.engine.plates.dask_engine import draw_plate_dask

        _, n_parts = draw_plate_dask(image, args.input, plan, names, ra_col, dec_col, spec,
                                     counts=counts, scheduler=args.scheduler,
                                     n_workers=args.workers, psf_sigma_px=args.psf_px,
                                     values=values, frame=frame_kw)
        sys.stderr.write(f"starkiln: {n_parts} partition{'s' * (n_parts != 1)} drawn on the "
                         "cluster, summed there (tree reduction)\n")
    else:
        for _, chunk in plate_chunks(args.input, plan, names):
            draw_chunk(image, plan, chunk, ra_col, dec_col, spec, psf_sigma_px=args.psf_px,
                       values=values, frame=frame_kw, counts=counts)
    frame = {"frame": frame_name}
    if site is not None:
        frame.update(site=site.text(), time=moment.isot, refraction=bool(args.refraction),
                     below_horizon=below)
    meta = plate_metadata(settings, spec, frame=frame, psf_sigma_px=args.psf_px,
                          values=values, counts=counts,
                          columns={"ra": ra_col, "dec": dec_col, "source": plan.source,
                                   "source_column": plan.source_column,
                                   "magnitude": plan.magnitude_column},
                          output_type="png16" if ext == "png" else "exr-float")
    _write(args.output, image, meta, args.force, atomic_path)
    out.write(f"{counts.get('drawn', 0):,} stars -> {args.output} ({width} x {height}, "
              f"{projection}, {values})\n")
    for k, v in sorted(counts.items()):
        if k != "drawn" and v:
            out.write(f"  skipped, {k}: {v:,}\n")
    return 0


def _apply_old_plate(args):
    """``--settings-from OLD``: take the look, projection, frame, PSF, values and columns
    that OLD's metadata records (the file's own description, plate_files)."""
    from starkiln.engine.exports.image_files import read_embedded_json
    from starkiln.engine.plates.plate_files import plate_request_from_metadata

    old = plate_request_from_metadata(read_embedded_json(args.settings_from),
                                      args.settings_from)
    proj = old["projection"]
    args.projection = proj["projection"]
    args.size = f"{proj['width_px']}x{proj['height_px']}"
    args.fov, args.tilt = proj["fov_deg"], proj["tilt_deg"]
    args.centre = f"{proj['centre_lon_deg']!r},{proj['centre_lat_deg']!r}"
    frame = old["frame"]
    args.frame = frame.get("frame", "equatorial")
    args.site, args.time = frame.get("site"), frame.get("time")
    args.refraction = bool(frame.get("refraction", False))
    args.below_horizon = frame.get("below_horizon", "drop")
    args.psf_px, args.values = old["psf_sigma_px"], old["values"]
    cols = old["columns"]
    args.ra_column, args.dec_column = cols.get("ra"), cols.get("dec")
    source_option = {"temperature": "temperature_column", "bv": "bv_column",
                     "bp-rp": "bp_rp_column"}.get(cols.get("source"))
    if source_option:
        for k in ("temperature_column", "bv_column", "bp_rp_column"):
            setattr(args, k, None)
        setattr(args, source_option, cols.get("source_column"))
    if cols.get("magnitude"):
        args.magnitude_column, args.magnitude = cols["magnitude"], None
    args.old_settings = old["settings"]


def _write(path, image, meta, overwrite, atomic_path):
    import numpy as np

    from starkiln.engine.exports.image_files import write_exr, write_png
    from starkiln.engine.exports.texture_metadata import metadata_json

    text = metadata_json(meta)
    with atomic_path(path, overwrite) as tmp:
        if str(path).lower().endswith(".png"):
            q = np.floor(np.clip(image, 0.0, 1.0) * 65535.0 + 0.5).astype(np.uint16)
            write_png(tmp, q, {"starkiln": text})
        else:
            write_exr(tmp, image, {"starkiln": text})


COMMANDS = {"plate": cmd_plate}
