"""Command line: ``starkiln plate IN OUT`` (draw a catalogue's stars into one image).

Thin layer over :mod:`starkiln.engine.plates` (frames, plate_files, run); imports nothing
heavy at module level.
"""

from __future__ import annotations

from starkiln.cli.catalogue import (add_dust_column_options, add_engine_options, dereddened_line,
                                    engine_from_args)
from starkiln.cli.options import (add_colour_options, add_deredden_option, add_index_model_option,
                                  number, settings_from_args)
from starkiln.engine.errors import StarkilnError

from starkiln.engine.plates.make import EXR_TYPES
from starkiln.engine.plates.make import PLATE_PROJECTIONS as PROJECTIONS


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
    c.add_argument("--bv-column", metavar="NAME", help="Johnson B-V (see --index-model)")
    c.add_argument("--bp-rp-column", metavar="NAME", help="dereddened Gaia BP-RP")
    add_index_model_option(c)
    add_deredden_option(c, "--bv-column or --bp-rp-column")
    c.add_argument("--extrapolate-bp-rp", action="store_true",
                   help="with --index-model relation: colour BP-RP outside the calibrated "
                        "range (appearance only)")
    c.add_argument("--magnitude-column", metavar="NAME", help="apparent magnitudes")
    c.add_argument("--magnitude", type=number, metavar="M", help="one magnitude for every row")
    c.add_argument("--magnitude-band", metavar="V|G", default="V", help="V (default) or G")
    add_dust_column_options(c)
    g = p.add_argument_group("plate")
    g.add_argument("--projection", default="equirect", metavar="|".join(PROJECTIONS),
                   help="equirect (whole sphere, 2:1; default), fisheye (equidistant dome) or "
                        "cube (six gnomonic faces in one 4x3 cross image)")
    g.add_argument("--size", metavar="W[xH]", default="4096",
                   help="pixels: the width (height W/2 for equirect, W for fisheye), the face "
                        "side for cube, or WxH")
    g.add_argument("--exr-type", metavar="|".join(EXR_TYPES),
                   help="EXR channels: float (32-bit; default) or half (16-bit)")
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
    g.add_argument("--through-air", action="store_true",
                   help="with --site and --time: each star through the atmosphere at its own "
                        "altitude (the site's height; --aerosol-tau, --angstrom, --ozone); "
                        "stars kept below the horizon are drawn without air")
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
    from starkiln.cli.catalogue import plan_from_args
    from starkiln.engine.atomic import check_writable
    from starkiln.engine.plates import frames
    from starkiln.engine.plates.make import plate_file_type
    from starkiln.engine.plates.plate_files import check_plate_memory

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
    values = str(args.values).strip().lower()
    if values not in ("display", "flux"):
        raise StarkilnError(f"--values {args.values!r} unknown; accepted: display, flux")
    plate_file_type(args.output, args.exr_type)
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
    cube = projection == "cube"
    if cube:
        from starkiln.engine.plates.plate_files import plate_bytes

        check_plate_memory(width, height, faces=6,
                           extra_bytes=plate_bytes(4 * width, 3 * height))
    else:
        check_plate_memory(width, height)
    centre = _pair(args.centre, "--centre") if args.centre else (0.0, 90.0)
    check_writable(args.output, args.force)
    settings = settings_from_args(args)
    if getattr(args, "old_settings", None) is not None:
        from starkiln.engine.pipeline.settings import Settings

        settings = Settings.from_dict(args.old_settings, source=args.settings_from)
    plan = plan_from_args(args, settings)

    import sys

    from starkiln.engine.plates.make import make_plate
    from starkiln.engine.plates.projection import PlateSpec

    spec = PlateSpec(projection=projection, width_px=width, height_px=height,
                     fov_deg=float(args.fov), centre_lon_deg=centre[0],
                     centre_lat_deg=centre[1], tilt_deg=float(args.tilt))
    result = make_plate(args.input, args.output, plan, spec, ra_column=args.ra_column,
                        dec_column=args.dec_column, psf_sigma_px=args.psf_px, values=values,
                        site=site, moment=moment, refraction=bool(args.refraction),
                        below_horizon=below, overwrite=args.force,
                        exr_type=args.exr_type, engine=engine, scheduler=args.scheduler,
                        n_workers=args.workers, through_air=bool(args.through_air),
                        log=lambda line: sys.stderr.write(f"starkiln: {line}\n"))
    for line in result.lines(args.output, spec, values):
        out.write(line + "\n")
    if plan.deredden_ebv is not None:
        out.write(f"dereddened: {dereddened_line(plan)}\n")
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
    args.through_air = bool(frame.get("through_air", False))
    args.psf_px, args.values = old["psf_sigma_px"], old["values"]
    if args.exr_type is None and str(args.output).lower().endswith(".exr") \
            and old["output"] in ("exr-half", "exr-float"):
        args.exr_type = old["output"][4:]
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
    if cols.get("dust"):
        args.ebv_column = args.av_column = None
        setattr(args, "av_column" if cols.get("dust_quantity") == "av" else "ebv_column",
                cols["dust"])
    args.old_settings = dict(old["settings"])
    if cols.get("deredden_ebv") is not None:
        # OLD's colours were dereddened by this E(B-V): its settings hold no dust (the dust is
        # not applied again), so the amount comes back from the columns' record
        args.deredden = True
        args.old_settings["dust_ebv"] = float(cols["deredden_ebv"])


COMMANDS = {"plate": cmd_plate}
