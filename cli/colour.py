"""``starkiln colour``, ``starkiln whites``, ``starkiln displays``: one star, and the preset lists.

Parses, asks :func:`starkiln.engine.pipeline.render.render` and prints; nothing else.
"""

from __future__ import annotations

import json

from starkiln.cli.options import (add_colour_options, add_deredden_option, add_index_model_option,
                                  deredden_dust, number, settings_from_args)
from starkiln.engine.errors import StarkilnError


def add_parsers(sub) -> None:
    """Add ``colour`` (alias ``color``), ``whites`` and ``displays`` to the subcommands."""
    c = sub.add_parser("colour", aliases=["color"], help="the display colour of one star",
                       description="Print the display colour of one star.")
    src = c.add_mutually_exclusive_group(required=True)
    src.add_argument("--temperature", type=number, metavar="K", help="effective temperature, K")
    src.add_argument("--bv", type=number, metavar="B-V",
                     help="Johnson B-V colour index (intrinsic; observed with --deredden)")
    src.add_argument("--bp-rp", type=number, metavar="BP-RP",
                     help="Gaia BP-RP colour index (intrinsic; observed with --deredden)")
    src.add_argument("--spectral-class", metavar="CLASS", help="main-sequence class, e.g. G2V")
    add_index_model_option(c)
    add_deredden_option(c, "--bv or --bp-rp given")
    c.add_argument("--magnitude", type=number, metavar="M",
                   help="apparent visual magnitude: turns on the night-vision model")
    c.add_argument("--json", action="store_true", help="print one JSON object")
    add_colour_options(c)

    sub.add_parser("whites", help="list the scene-white presets")
    d = sub.add_parser("displays", help="list the display presets; import or measure a display",
                       description="List the display presets and working spaces; with "
                                   "'import' or 'measure', write a JSON display profile.")
    dsub = d.add_subparsers(dest="displays_command", metavar="{import,measure}")
    imp = dsub.add_parser("import", help="a JSON display profile from an ICC display profile",
                          description="Read a matrix/TRC ICC display profile (v2 or v4) and "
                                      "write it as a JSON display profile.")
    imp.add_argument("profile", metavar="PROFILE.icc", help="the ICC display profile")
    meas = dsub.add_parser("measure", help="a JSON display profile from colorimeter readings",
                           description="Build a JSON display profile from readings of the "
                                       "red, green, blue and white patches (and a grey ramp); "
                                       "columns in docs/formats.md.")
    meas.add_argument("readings", metavar="READINGS.csv", help="the readings (CSV)")
    for q in (imp, meas):
        q.add_argument("-o", "--out", required=True, metavar="PROFILE.json",
                       help="the JSON display profile to write")
        q.add_argument("--force", action="store_true", help="overwrite OUT if it exists")


def _deredden_source(args, settings) -> tuple[dict, float, "object"]:
    """For ``--deredden``: what the JSON reports, the intrinsic index (rendered as
    ``--bv``/``--bp-rp`` would be) and the settings to render with (the same without the
    dust: it is already removed)."""
    from starkiln.engine.path.deredden import intrinsic_index

    if args.bv is None and args.bp_rp is None:
        raise StarkilnError("--deredden applies only to an observed --bv or --bp-rp, not to "
                            "--temperature or --spectral-class")
    ebv, plain = deredden_dust(args, settings)
    index, observed = ("B-V", args.bv) if args.bv is not None else ("BP-RP", args.bp_rp)
    intrinsic = float(intrinsic_index(index, observed, ebv, law=settings.dust_law,
                                      rv=settings.dust_rv))
    dereddening = {"observed": observed, "intrinsic": round(intrinsic, 6),
                   "excess_mag": round(observed - intrinsic, 6), "dust_ebv": ebv,
                   "dust_law": settings.dust_law, "dust_rv": settings.dust_rv}
    return dereddening, intrinsic, plain


def _temperature_from_args(args, intrinsic=None) -> tuple[float, dict | None]:
    """The temperature to render and, for a colour index or class, what it came from
    (``intrinsic``: the dereddened index that replaces ``--bv``/``--bp-rp``)."""
    from starkiln.engine.stars import temperature as st

    if args.temperature is not None:
        if args.index_model != "synthetic":
            raise StarkilnError("--index-model applies only to --bv, --bp-rp and "
                                "--spectral-class")
        return args.temperature, None
    model = args.index_model
    if args.spectral_class is not None:
        t = st.temperature_for_spectral_class(args.spectral_class, model)
        return t, {"spectral_class": str(args.spectral_class).strip(), "index_model": model,
                   "bv": st.spectral_class_bv(args.spectral_class),
                   "effective_temperature_K":
                       st.temperature_from_spectral_class(args.spectral_class)}
    index, value = ("B-V", args.bv) if args.bv is not None else ("BP-RP", args.bp_rp)
    if intrinsic is not None:
        value = round(intrinsic, 6)  # as reported; the render is the same within 1e-6 mag
    t = float(st.temperature_from_index(value, index, model))
    status = ("bluer-than-blackbody" if model == "synthetic"
              and value < st.blackbody_blue_limit(index) else "ok")
    return t, {"index": index, "value": value, "index_model": model, "status": status}


def _source_rows(source: dict | None, temperature: float) -> list:
    """The table rows that say where the rendered temperature came from."""
    if source is None:
        return [("temperature", f"{temperature:.0f} K")]
    if "spectral_class" in source:
        how = ("blackbody of the class's mean B-V "
               f"{source['bv']:.3f}" if source["index_model"] == "synthetic"
               else "the class's effective temperature")
        return [("temperature", f"{temperature:.0f} K ({how})"),
                ("effective temperature", f"{source['effective_temperature_K']:.0f} K "
                                          f"({source['spectral_class']}, mean dwarf table)")]
    shown = (f"intrinsic {source['index']} {source['value']:.3f}" if "dereddening" in source
             else f"{source['index']} {source['value']:g}")
    if source["index_model"] == "relation":
        how = f"effective temperature of {shown}, relation model"
    else:
        how = f"blackbody of {shown}, synthetic model"
    rows = [("temperature", f"{temperature:.0f} K ({how})")]
    d = source.get("dereddening")
    if d is not None:
        rows.append(("dereddened", f"observed {source['index']} {d['observed']:g} - excess "
                                   f"{d['excess_mag']:.3f} = intrinsic {d['intrinsic']:.3f} "
                                   f"(E(B-V) {d['dust_ebv']:g}, {d['dust_law']}, R_V "
                                   f"{d['dust_rv']:g}; the dust is not applied again)"))
    if source["status"] == "bluer-than-blackbody":
        rows.append(("note", f"{source['index']} {source['value']:g} is bluer than the "
                             "100 000 K blackbody: shown at 100 000 K"))
    return rows


def cmd_colour(args, out) -> int:
    """``starkiln colour``: one star's colour as a table or JSON."""
    from starkiln.engine.pipeline.render import render

    settings = settings_from_args(args)
    dereddening = intrinsic = None
    if args.deredden:  # the observed colour holds the dust: remove it, render without it
        dereddening, intrinsic, settings = _deredden_source(args, settings)
    temperature, source = _temperature_from_args(args, intrinsic)
    if dereddening is not None:
        source["dereddening"] = dereddening
    r = render(settings, temperature, args.magnitude)
    record = {
        "temperature_K": float(r.temperature_K),
        "xy": [round(float(v), 6) for v in r.xy],
        "rgb_linear": [round(float(v), 6) for v in r.rgb_linear],
        "rgb_encoded": [round(float(v), 6) for v in r.rgb_encoded],
        "hex": str(r.hex()),
        "in_gamut": bool(r.in_gamut),
        "settings": {"observer": settings.observer, "scene_white": settings.scene_white,
                     "adaptation": settings.adaptation, "display": settings.display.name,
                     "gamut": settings.gamut, "normalisation": settings.normalisation,
                     **path_settings(settings)},
        "extinction_mag": (None if r.extinction_mag is None
                           else round(float(r.extinction_mag), 6)),
    }
    if source is not None:
        record["source"] = source
    night = []
    if args.magnitude is not None:
        record.update({
            "magnitude": float(r.magnitude),
            "photopic_luminance_cd_m2": float(r.photopic_luminance_cd_m2),
            "scotopic_ratio": round(float(r.scotopic_ratio), 6),
            "cone_weight": round(float(r.cone_weight), 6),
            "saturation": round(float(r.saturation), 6),
            "intensity": round(float(r.intensity), 6),
            "rgb_dimmed_encoded": [round(float(v), 6) for v in r.rgb_dimmed_encoded],
        })
        if r.compensation_reached is not None:
            record["compensation_reached"] = bool(r.compensation_reached)
        record["settings"].update({"vision": settings.vision,
                                   "aperture_mm": settings.aperture_mm,
                                   "transmission": settings.transmission})
        instrument = ("naked eye" if settings.aperture_mm is None
                      else f"{settings.aperture_mm:g} mm aperture, transmission "
                           f"{settings.transmission:g}")
        night = [
            ("magnitude", f"{record['magnitude']:g} ({instrument})"),
            ("image luminance", f"{record['photopic_luminance_cd_m2']:.4g} cd/m2 photopic, "
                                f"S/P {record['scotopic_ratio']:.3f}"),
            ("cone weight", f"{record['cone_weight']:.3f} (0 rods only, 1 full colour)"),
            ("saturation", f"{record['saturation']:.3f} of full colour ({settings.vision})"),
            ("intensity", f"{record['intensity']:.3f}"),
        ]
        if r.compensation_reached is not None:
            night.append(("dome compensation", "reached" if record["compensation_reached"]
                          else "out of reach (clamped to the gamut)"))
    if args.json:
        try:  # last guard: JSON output never holds NaN or infinity (RFC 8259 has neither)
            text = json.dumps(record, allow_nan=False)
        except ValueError:
            raise StarkilnError("the result is not finite for these settings; accepted: "
                                "settings within the ranges of 'starkiln colour --help'") from None
        out.write(text + "\n")
        return 0
    rows = _source_rows(source, record["temperature_K"]) + [
        ("chromaticity x, y", "{:.5f}, {:.5f}".format(*record["xy"])),
        ("display linear", "{:.4f} {:.4f} {:.4f}".format(*record["rgb_linear"])),
        ("display encoded", "{:.4f} {:.4f} {:.4f}".format(*record["rgb_encoded"])),
    ]
    if args.magnitude is None:
        rows.append(("hex", record["hex"]))
    else:  # both colours, labelled: the star's own colour and what night vision leaves of it
        full = render(settings, temperature)
        enc = "{:.4f} {:.4f} {:.4f}"
        rows += [("full colour", f"{full.hex()}  (encoded {enc.format(*full.rgb_encoded)})"),
                 (f"at magnitude {record['magnitude']:g}",
                  f"{record['hex']}  (encoded {enc.format(*record['rgb_encoded'])})")]
    if r.extinction_mag is not None:
        rows.append(("path of the light", f"{path_summary(settings)}: "
                                          f"+{record['extinction_mag']:.3f} mag in V"))
    rows += [
        ("inside gamut", "yes" if record["in_gamut"] else
         (f"no (mapped by {settings.gamut})" if settings.gamut != "none" else "no (kept as is)")),
        ("white / display", f"{settings.scene_white} -> {settings.display.name} "
                            f"({settings.adaptation})"),
    ] + night
    width = max(len(k) for k, _ in rows)
    for k, v in rows:
        out.write(f"{k:<{width}}  {v}\n")
    return 0


def path_settings(settings) -> dict:
    """The path-of-light fields of the settings, as the JSON outputs report them."""
    from starkiln.engine.pipeline.settings import PATH_KEYS

    return {key: getattr(settings, key) for key in PATH_KEYS}


def path_summary(settings) -> str:
    """One line on the path of the light: the dust and the air that were applied."""
    parts = []
    if settings.dust_ebv > 0.0:
        parts.append(f"E(B-V) {settings.dust_ebv:g} ({settings.dust_law}, R_V "
                     f"{settings.dust_rv:g})")
    if settings.altitude_deg is not None:
        parts.append(f"altitude {settings.altitude_deg:g} deg from {settings.site_height_m:g} m")
    return ", ".join(parts) or "none"


def cmd_whites(args, out) -> int:
    """``starkiln whites``: the scene-white presets with their chromaticities (CIE 1931)."""
    from starkiln.engine.colour.whites import WHITE_PRESETS, resolve_white

    notes = {"D50": "CIE daylight, 5003 K (print viewing)", "D55": "CIE daylight, 5503 K",
             "D65": "CIE daylight, 6504 K (sRGB, Rec. 2020 white)", "D75": "CIE daylight, 7504 K",
             "E": "equal-energy white", "DCI": "digital-cinema projector white (SMPTE RP 431-2)",
             "ACES": "ACES white, about D60 (SMPTE ST 2065-1)"}
    for name in WHITE_PRESETS:
        w = resolve_white(name, "cie1931")
        out.write(f"{name:<5} x={w.xy[0]:.5f} y={w.xy[1]:.5f}  {notes[name]}\n")
    out.write("also: daylight:<4000-25000 K>, blackbody:<500-100000 K>, xy:<x>,<y>\n")
    return 0


def _describe_written(display, path, out) -> None:
    """Two lines on what a written profile holds."""
    d = display
    out.write(f"wrote {path}: {d.name!r}\n")
    out.write(f"  red {d.red_xy[0]:.4f},{d.red_xy[1]:.4f}  green {d.green_xy[0]:.4f},"
              f"{d.green_xy[1]:.4f}  blue {d.blue_xy[0]:.4f},{d.blue_xy[1]:.4f}  white "
              f"{d.white_xy[0]:.4f},{d.white_xy[1]:.4f}  {d.transfer_label}  "
              f"{d.peak_luminance_cd_m2:g} cd/m2\n")


def cmd_displays_import(args, out) -> int:
    """``starkiln displays import PROFILE.icc -o PROFILE.json``: one call to the engine."""
    from starkiln.engine.colour.icc_profiles import import_icc_profile

    imported = import_icc_profile(args.profile, args.out, overwrite=args.force)
    _describe_written(imported.display, args.out, out)
    for note in imported.notes:
        out.write(f"  note: {note}\n")
    return 0


def cmd_displays_measure(args, out) -> int:
    """``starkiln displays measure READINGS.csv -o PROFILE.json``: one call to the engine;
    its warnings (a display that is not additive) go to stderr, one line each, exit 0."""
    import sys

    from starkiln.engine.colour.measured import measure_display_profile

    measured = measure_display_profile(args.readings, args.out, overwrite=args.force)
    for warning in measured.warnings:
        sys.stderr.write(f"starkiln: warning: {warning}\n")
    _describe_written(measured.display, args.out, out)
    for note in measured.notes:
        out.write(f"  note: {note}\n")
    return 0


def cmd_displays(args, out) -> int:
    """``starkiln displays``: the display presets, then the scene-linear working spaces;
    ``displays import`` and ``displays measure`` write a JSON display profile."""
    sub = getattr(args, "displays_command", None)
    if sub == "import":
        return cmd_displays_import(args, out)
    if sub == "measure":
        return cmd_displays_measure(args, out)
    from starkiln.engine.colour.displays import (PRESET_NOTES, PRESETS, WORKING_SPACE_NOTES,
                                                 WORKING_SPACES)

    out.write("displays (display-referred code values):\n")
    for name, d in PRESETS.items():
        tf = d.transfer_label
        out.write(f"  {name:<11} white {d.white_xy[0]:.4f},{d.white_xy[1]:.4f}  {tf:<9} "
                  f"{d.peak_luminance_cd_m2:g} cd/m2  {PRESET_NOTES[name]}\n")
    out.write("working spaces (scene-linear, no transfer function, no gamut clip):\n")
    for name, d in WORKING_SPACES.items():
        out.write(f"  {name:<11} white {d.white_xy[0]:.5f},{d.white_xy[1]:.5f}  "
                  f"{WORKING_SPACE_NOTES[name]}\n")
    out.write("also: a JSON display profile (see docs/formats.md, 'Display profiles (JSON)'),\n"
              "  written by 'starkiln displays import PROFILE.icc' or 'starkiln displays "
              "measure READINGS.csv'\n")
    return 0


COMMANDS = {"colour": cmd_colour, "color": cmd_colour, "whites": cmd_whites,
            "displays": cmd_displays}
