"""Command line: ``starkiln colour``, ``starkiln whites``, ``starkiln displays``.

A thin layer over :func:`engine.render.render`: it parses, builds one
:class:`engine.settings.Settings`, asks the render path and prints. Errors
are one line on stderr and exit code 2. Heavy modules are imported lazily so
that a colour query does not pay for the window or for colour-science.
"""

from __future__ import annotations

import argparse
import json
import sys

from typing import TYPE_CHECKING

from engine.errors import StarkilnError

if TYPE_CHECKING:  # for annotations only; the CLI imports settings lazily
    from engine.settings import Settings

EXIT_BAD_INPUT = 2


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors (``starkiln: error: ...``) and exit code 2."""

    def error(self, message):  # noqa: D401 - argparse hook
        raise StarkilnError(f"{message} (see '{self.prog} --help')")


def _number(text: str) -> float:
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None


def _add_colour_options(p: argparse.ArgumentParser) -> None:
    """Options shared by every command that renders colours."""
    g = p.add_argument_group("colour settings (override --settings)")
    g.add_argument("--settings", metavar="FILE.toml", help="start from a saved settings file")
    g.add_argument("--white", metavar="WHITE",
                   help="scene white: D50 D55 D65 D75 E DCI, daylight:<K>, blackbody:<K>, xy:<x>,<y>")
    g.add_argument("--display", metavar="NAME|PROFILE.json",
                   help="display preset (see 'starkiln displays') or a JSON display profile")
    g.add_argument("--adaptation", metavar="METHOD",
                   help="bradford (default), cat16, cat02, von-kries, none")
    g.add_argument("--gamut", metavar="METHOD", help="clip, scale, chroma (default)")
    g.add_argument("--observer", metavar="NAME", help="cie1931 (default) or cie1964")
    g.add_argument("--normalisation", "--normalization", dest="normalisation", metavar="MODE",
                   help="max-channel (default) or luminance")
    v = p.add_argument_group("night vision (applies when magnitudes are given)")
    v.add_argument("--vision", metavar="MODEL",
                   help="mesopic (default: CIE 191 cone weight) or none (full colour, camera look)")
    v.add_argument("--aperture-mm", type=_number, metavar="D",
                   help="instrument aperture in mm (default: naked eye)")
    v.add_argument("--transmission", type=_number, metavar="T",
                   help="instrument transmission, 0 < T <= 1 (default 1)")
    v.add_argument("--pupil-mm", type=_number, metavar="d", help="dark-adapted pupil, mm (default 7)")
    v.add_argument("--blur-spot-arcmin", type=_number, metavar="A",
                   help="diameter of the effective star image, arcmin (default 6)")
    v.add_argument("--intensity-curve", metavar="CURVE", help="asinh (default), log or linear")
    v.add_argument("--magnitude-bright", type=_number, metavar="M",
                   help="magnitude shown at intensity 1 (default -1.5)")
    v.add_argument("--magnitude-faint", type=_number, metavar="M",
                   help="magnitude shown at intensity 0 (default 6.5)")
    v.add_argument("--night-tint", type=_number, metavar="S",
                   help="0-1, cool tint of faint stars (a rendering convention; default 0)")
    v.add_argument("--compensate", action="store_true", default=None,
                   help="pre-boost chroma for a dark dome at the display's peak luminance")


def settings_from_args(args) -> "Settings":
    """The one Settings object from ``--settings`` plus any explicit options."""
    from engine.settings import Settings, load_settings

    base = load_settings(args.settings) if getattr(args, "settings", None) else Settings()
    changes = {}
    for opt, key in (("white", "scene_white"), ("display", "display"),
                     ("adaptation", "adaptation"), ("gamut", "gamut"),
                     ("observer", "observer"), ("normalisation", "normalisation"),
                     ("vision", "vision"), ("aperture_mm", "aperture_mm"),
                     ("transmission", "transmission"), ("pupil_mm", "pupil_mm"),
                     ("blur_spot_arcmin", "blur_spot_arcmin"),
                     ("intensity_curve", "intensity_curve"),
                     ("magnitude_bright", "magnitude_bright"),
                     ("magnitude_faint", "magnitude_faint"), ("night_tint", "night_tint"),
                     ("compensate", "compensate")):
        value = getattr(args, opt, None)
        if value is not None:
            changes[key] = value
    return base.replace(**changes) if changes else base


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (also used by the docs)."""
    p = _Parser(prog="starkiln", description="Star colours for domes and screens.")
    p.add_argument("--version", action="version", version="starkiln 0.1.0")
    p.add_argument("--screenshot", metavar="OUT.png",
                   help="with no command: render the window offscreen at 1280 x 800 into OUT.png")
    p.add_argument("--settings", dest="window_settings", metavar="FILE.toml",
                   help="with no command: open the window with these settings")
    p.add_argument("--temperature", dest="window_temperature", type=_number, metavar="K",
                   help="with no command: open the window at this temperature")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)

    c = sub.add_parser("colour", aliases=["color"], help="the display colour of one star",
                       description="Print the display colour of one star.")
    src = c.add_mutually_exclusive_group(required=True)
    src.add_argument("--temperature", type=_number, metavar="K", help="effective temperature, K")
    src.add_argument("--bv", type=_number, metavar="B-V", help="Johnson B-V colour index")
    src.add_argument("--spectral-class", metavar="CLASS", help="main-sequence class, e.g. G2V")
    c.add_argument("--magnitude", type=_number, metavar="M",
                   help="apparent visual magnitude: turns on the night-vision model")
    c.add_argument("--json", action="store_true", help="print one JSON object")
    _add_colour_options(c)

    sub.add_parser("whites", help="list the scene-white presets")
    sub.add_parser("displays", help="list the display presets")
    for module in _command_modules():
        module.add_parsers(sub, _add_colour_options)
    return p


#: Modules that add subcommands: each has ``add_parsers(sub, add_colour_options)``
#: and ``COMMANDS`` (name -> function(args, out) -> exit code). Imported only when
#: the parser is built; their own heavy imports stay inside the command functions.
COMMAND_MODULES = ("engine.cli_exports", "engine.cli_catalogue")


def _command_modules():
    import importlib
    import importlib.util

    mods = []
    for name in COMMAND_MODULES:
        if importlib.util.find_spec(name) is not None:
            mods.append(importlib.import_module(name))
    return mods


def _temperature_from_args(args) -> float:
    from engine.sources import temperature_from_bv, temperature_from_spectral_class

    if args.temperature is not None:
        return args.temperature
    if args.bv is not None:
        return float(temperature_from_bv(args.bv))
    return temperature_from_spectral_class(args.spectral_class)


def cmd_colour(args, out) -> int:
    """``starkiln colour``: one star's colour as a table or JSON."""
    from engine.render import render

    settings = settings_from_args(args)
    temperature = _temperature_from_args(args)
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
                     "gamut": settings.gamut, "normalisation": settings.normalisation},
    }
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
        out.write(json.dumps(record) + "\n")
        return 0
    rows = [
        ("temperature", f"{record['temperature_K']:.0f} K"),
        ("chromaticity x, y", "{:.5f}, {:.5f}".format(*record["xy"])),
        ("display linear", "{:.4f} {:.4f} {:.4f}".format(*record["rgb_linear"])),
        ("display encoded", "{:.4f} {:.4f} {:.4f}".format(*record["rgb_encoded"])),
        ("hex", record["hex"]),
        ("inside gamut", "yes" if record["in_gamut"] else f"no (mapped by {settings.gamut})"),
        ("white / display", f"{settings.scene_white} -> {settings.display.name} "
                            f"({settings.adaptation})"),
    ] + night
    width = max(len(k) for k, _ in rows)
    for k, v in rows:
        out.write(f"{k:<{width}}  {v}\n")
    return 0


def cmd_whites(args, out) -> int:
    """``starkiln whites``: the scene-white presets with their chromaticities (CIE 1931)."""
    from engine.whites import WHITE_PRESETS, resolve_white

    notes = {"D50": "CIE daylight, 5003 K (print viewing)", "D55": "CIE daylight, 5503 K",
             "D65": "CIE daylight, 6504 K (sRGB, Rec. 2020 white)", "D75": "CIE daylight, 7504 K",
             "E": "equal-energy white", "DCI": "digital-cinema projector white (SMPTE RP 431-2)"}
    for name in WHITE_PRESETS:
        w = resolve_white(name, "cie1931")
        out.write(f"{name:<5} x={w.xy[0]:.5f} y={w.xy[1]:.5f}  {notes[name]}\n")
    out.write("also: daylight:<4000-25000 K>, blackbody:<500-100000 K>, xy:<x>,<y>\n")
    return 0


def cmd_displays(args, out) -> int:
    """``starkiln displays``: the display presets."""
    from engine.displays import PRESET_NOTES, PRESETS

    for name, d in PRESETS.items():
        tf = f"gamma {d.gamma:g}" if d.transfer == "gamma" else d.transfer
        out.write(f"{name:<11} white {d.white_xy[0]:.4f},{d.white_xy[1]:.4f}  {tf:<9} "
                  f"{d.peak_luminance_cd_m2:g} cd/m2  {PRESET_NOTES[name]}\n")
    out.write("also: a JSON display profile (see README, 'Display profiles')\n")
    return 0


COMMANDS = {"colour": cmd_colour, "color": cmd_colour, "whites": cmd_whites,
            "displays": cmd_displays}


def main(argv=None) -> int:
    """Entry point of the ``starkiln`` console script; returns the exit code."""
    argv = sys.argv[1:] if argv is None else argv
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            return _launch_window(args)
        commands = dict(COMMANDS)
        for module in _command_modules():
            commands.update(module.COMMANDS)
        return commands[args.command](args, sys.stdout)
    except StarkilnError as exc:
        sys.stderr.write(f"starkiln: error: {exc}\n")
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("starkiln: interrupted\n")
        return 130


def _launch_window(args) -> int:
    """No subcommand (or ``--screenshot``): the window, imported only now.

    The engine does not import the window package at module level: ``gui`` is loaded by
    name here, so every other command starts without Qt.
    """
    import importlib

    return importlib.import_module("gui.app").run(args)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
