"""Command line: ``starkiln catalogue IN OUT`` (colour every star of a catalogue).

Thin layer over :func:`starkiln.engine.catalogue.run.colour_catalogue` and
:func:`starkiln.engine.catalogue.dask_engine.colour_catalogue_dask`. This module is imported
whenever the parser is built, so it imports nothing heavy at module level:
astropy, pyarrow and dask are loaded only when the command runs.
"""

from __future__ import annotations

from starkiln.cli.options import (add_colour_options, add_deredden_option,
                                  add_index_model_option, deredden_dust, number, positive_int,
                                  settings_from_args)
from starkiln.engine.errors import StarkilnError


def add_parsers(sub) -> None:
    """Add the ``catalogue`` subcommand (alias ``catalog``) to the ``starkiln`` parser."""
    p = sub.add_parser(
        "catalogue", aliases=["catalog"], help="colour every star of a catalogue file",
        description="Colour every row of a star catalogue with the same settings as the "
                    "window. Keeps every input column and row, in order, and appends r, g, b "
                    "(display-encoded 0-1), intensity and status. Formats by extension: "
                    ".csv .ecsv .fits .vot/.xml .parquet.")
    p.add_argument("input", metavar="IN",
                   help="catalogue file; with --engine dask also a folder or glob of Parquet")
    p.add_argument("output", metavar="OUT",
                   help="output file (a folder of Parquet parts with --engine dask)")
    c = p.add_argument_group("columns (one temperature source)")
    c.add_argument("--temperature-column", metavar="NAME", help="effective temperature, K")
    c.add_argument("--bv-column", metavar="NAME",
                   help="Johnson B-V (see --index-model)")
    c.add_argument("--bp-rp-column", metavar="NAME",
                   help="dereddened Gaia BP-RP (see --index-model); also the colour for "
                        "--magnitude-band G")
    add_index_model_option(c)
    add_deredden_option(c, "--bv-column or --bp-rp-column")
    c.add_argument("--extrapolate-bp-rp", action="store_true",
                   help="with --index-model relation: colour BP-RP outside the calibrated "
                        "0.39-1.50 (up to -0.5..5.0) as status 'extrapolated' (appearance only)")
    c.add_argument("--magnitude-column", metavar="NAME",
                   help="apparent magnitudes, for night-vision colours and intensity")
    c.add_argument("--magnitude", type=number, metavar="M",
                   help="one apparent magnitude for every row (instead of a column)")
    c.add_argument("--magnitude-band", metavar="V|G", default="V",
                   help="V (Johnson, default) or G (Gaia G -> V by Riello et al. 2021, "
                        "needs --bp-rp-column)")
    add_dust_column_options(c)
    o = p.add_argument_group("output and engine")
    o.add_argument("--force", action="store_true", help="overwrite OUT if it exists (never an input; with --engine dask only "
                        "a folder an earlier run wrote, marked by .starkiln-parts.json)")
    o.add_argument("--prefix", default="", metavar="TEXT",
                   help="put TEXT before the names of the new columns (if IN has an 'r' ...)")
    o.add_argument("--linear-columns", metavar="SPACES",
                   help="also append scene-linear r_SPACE, g_SPACE, b_SPACE for these working "
                        "spaces (comma list: lin-srgb, lin-p3-d65, lin-rec2020, acescg, "
                        "aces2065-1)")
    o.add_argument("--exact", action="store_true",
                   help="call the render path for every row instead of the colour grid "
                        "(slower; same colours within CIEDE2000 0.2)")
    o.add_argument("--chunk-rows", type=positive_int, metavar="N",
                   help="rows per streamed chunk (default 131072)")
    o.add_argument("--no-progress", action="store_true", help="no progress bar on stderr")
    add_engine_options(o, "dask (Parquet in, folder of Parquet parts out)")
    add_colour_options(p)


def add_dust_column_options(group) -> None:
    """``--ebv-column`` / ``--av-column``: each star's own dust (catalogue and plate)."""
    dust = group.add_mutually_exclusive_group()
    dust.add_argument("--ebv-column", metavar="NAME",
                      help="each star's E(B-V), mag, 0-10 (instead of one --ebv); law and R_V "
                           "from --dust-law / --rv")
    dust.add_argument("--av-column", metavar="NAME",
                      help="each star's A_V, mag (E(B-V) = A_V / R_V; instead of one --av)")


def dust_column_from_args(args):
    """``(column, quantity)`` from ``--ebv-column`` / ``--av-column``, or ``(None, "ebv")``;
    a fixed ``--ebv`` / ``--av`` beside a column is refused in one line."""
    ebv_col, av_col = getattr(args, "ebv_column", None), getattr(args, "av_column", None)
    if ebv_col is None and av_col is None:
        return None, "ebv"
    option = "--ebv-column" if ebv_col is not None else "--av-column"
    fixed = [o for o, d in (("--ebv", "dust_ebv"), ("--av", "dust_av"))
             if getattr(args, d, None) is not None]
    if fixed:
        raise StarkilnError(f"{option} and {fixed[0]} do not go together; accepted: each "
                            f"star's dust from the column, or one {fixed[0]} for every star")
    return (ebv_col, "ebv") if ebv_col is not None else (av_col, "av")


def add_engine_options(group, dask_help: str) -> None:
    """``--engine local|dask``, ``--scheduler`` and ``--workers`` (catalogue and plate)."""
    group.add_argument("--engine", default="local", metavar="local|dask",
                       help=f"local (default) or {dask_help}")
    group.add_argument("--scheduler", metavar="tcp://HOST:PORT",
                       help="with --engine dask: a running Dask scheduler (default: a local "
                            "cluster)")
    group.add_argument("--workers", type=positive_int, metavar="N",
                       help="with --engine dask and no --scheduler: local workers (default: "
                            "cores)")


def engine_from_args(args) -> str:
    """The checked ``--engine`` (``"local"`` or ``"dask"``) and its companions' rules."""
    engine = str(args.engine).strip().lower()
    if engine not in ("local", "dask"):
        raise StarkilnError(f"--engine {args.engine!r} unknown; accepted: local, dask")
    if engine == "local" and (args.scheduler or args.workers):
        raise StarkilnError("--scheduler and --workers need --engine dask")
    if args.scheduler and args.workers:
        raise StarkilnError("--workers sets up a local cluster; it cannot go with --scheduler")
    if args.scheduler:
        from starkiln.engine.catalogue.dask_engine import check_scheduler_address

        check_scheduler_address(args.scheduler)
    return engine


def plan_from_args(args, settings):
    """The :class:`starkiln.engine.catalogue.plan.CataloguePlan` from the parsed options."""
    from starkiln.engine.catalogue.plan import CataloguePlan

    sources = [(k, getattr(args, f"{k.replace('-', '_')}_column"))
               for k in ("temperature", "bv")]
    given = [(k, v) for k, v in sources if v is not None]
    if len(given) > 1:
        raise StarkilnError("give one temperature source: --temperature-column or --bv-column "
                            "(--bp-rp-column may join either only for --magnitude-band G)")
    if given:
        source, column = given[0]
    elif args.bp_rp_column is not None:
        source, column = "bp-rp", args.bp_rp_column
    else:
        raise StarkilnError("name the temperature source: --temperature-column, --bv-column "
                            "or --bp-rp-column")
    band = str(args.magnitude_band).strip().upper()
    if band not in ("V", "G"):
        raise StarkilnError(f"--magnitude-band {args.magnitude_band!r} unknown; accepted: V, G")
    if source != "bp-rp" and args.bp_rp_column is not None and band != "G":
        raise StarkilnError("--bp-rp-column with another temperature source is used only by "
                            "--magnitude-band G")
    if args.extrapolate_bp_rp and source != "bp-rp":
        raise StarkilnError("--extrapolate-bp-rp applies only to --bp-rp-column")
    if args.index_model != "synthetic" and source == "temperature":
        raise StarkilnError("--index-model applies only to --bv-column and --bp-rp-column")
    magnitude = args.magnitude
    if magnitude is not None and args.magnitude_column is not None:
        raise StarkilnError("give --magnitude-column or --magnitude, not both")
    deredden_ebv = None
    if getattr(args, "deredden", False):  # observed colours hold the dust: remove it first
        if source == "temperature":
            raise StarkilnError("--deredden applies only to an observed --bv-column or "
                                "--bp-rp-column, not to --temperature-column")
        deredden_ebv, settings = deredden_dust(args, settings)
    dust_column, dust_quantity = dust_column_from_args(args)
    return CataloguePlan(
        settings=settings, source=source, source_column=column,
        magnitude_column=args.magnitude_column, magnitude_band=band,
        bp_rp_column=args.bp_rp_column, magnitude=magnitude,
        extrapolate_bp_rp=args.extrapolate_bp_rp, exact=args.exact, prefix=args.prefix,
        linear_columns=args.linear_columns or (), index_model=args.index_model,
        deredden_ebv=deredden_ebv, dust_column=dust_column, dust_quantity=dust_quantity)


def cmd_catalogue(args, out) -> int:
    """``starkiln catalogue``: colour a catalogue, print a summary."""

    engine = engine_from_args(args)
    settings = settings_from_args(args)
    plan = plan_from_args(args, settings)
    try:
        summary = _run(args, plan, engine)
    except ImportError as exc:
        raise StarkilnError(f"the catalogue command needs the package {exc.name!r}; install "
                            "it (pip install 'starkiln[cluster]' brings the Dask engine's "
                            "packages)") from None
    if plan.dust_line:
        summary.notes.append(plan.dust_line)
    for line in summary.lines():
        out.write(line + "\n")
    if plan.deredden_ebv is not None:
        out.write(f"dereddened: {dereddened_line(plan)}\n")
    return 0


def dereddened_line(plan) -> str:
    """What a run with ``--deredden`` removed, for its summary.

    References
    ----------
    :mod:`starkiln.engine.path.deredden` (the method).
    """
    s = plan.settings
    return (f"E(B-V) {plan.deredden_ebv:g} ({s.dust_law}, R_V {s.dust_rv:g}) removed from the "
            "observed colours; the dust is not applied again")


def _run(args, plan, engine):
    progress = not args.no_progress
    if engine == "dask":
        from starkiln.engine.catalogue.dask_engine import colour_catalogue_dask

        summary = colour_catalogue_dask(args.input, args.output, plan, overwrite=args.force,
                                        scheduler=args.scheduler, n_workers=args.workers,
                                        progress=progress)
    else:
        from starkiln.engine.catalogue.run import DEFAULT_CHUNK_ROWS, colour_catalogue

        summary = colour_catalogue(args.input, args.output, plan, overwrite=args.force,
                                   progress=progress,
                                   chunk_rows=args.chunk_rows or DEFAULT_CHUNK_ROWS)
    return summary


COMMANDS = {"catalogue": cmd_catalogue, "catalog": cmd_catalogue}
