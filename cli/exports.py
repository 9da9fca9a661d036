"""Command line exports: ``starkiln lut`` (lookup textures) and ``starkiln palette``.

Both are thin layers over :func:`starkiln.engine.exports.textures.export_texture` and
:func:`starkiln.engine.exports.palettes.export_palette` (which the window calls too): parse,
build one :class:`starkiln.engine.pipeline.settings.Settings`, check the destination
(:func:`starkiln.engine.atomic.check_writable`) before computing, write atomically.
Ranges are ``A:B`` and may start with a minus sign as typed
(``--magnitudes -1:7``), not only as ``--magnitudes=-1:7``.
"""

from __future__ import annotations

import argparse
import re

from starkiln.cli.options import add_colour_options, add_index_model_option, settings_from_args
from starkiln.engine.errors import StarkilnError, finite_number

#: A value that starts like a negative number range, "-1:7", "-1.5:-0.5", "-2e1:3".
_RANGE_VALUE = re.compile(r"^-\d*\.?\d+([eE][-+]?\d+)?\s*:")


def _allow_negative_ranges(parser: argparse.ArgumentParser) -> None:
    """Make ``parser`` read ``-1:7`` as a value rather than as an unknown option."""
    original = parser._parse_optional

    def _parse_optional(arg_string):
        if _RANGE_VALUE.match(arg_string):
            return None  # argparse: None means "a positional/value string"
        return original(arg_string)

    parser._parse_optional = _parse_optional


#: An example of each range option for its error message.
RANGE_EXAMPLES = {"--temperatures": "1000:40000", "--magnitudes": "-1:7"}


def parse_range(text: str, what: str) -> tuple[float, float]:
    """``"A:B"`` -> ``(A, B)`` floats; one-line error naming the option and its own example."""
    example = RANGE_EXAMPLES.get(what, "0:1")
    message = f"{what} {text!r} must be two numbers A:B (e.g. {example})"
    parts = str(text).split(":")
    if len(parts) != 2:
        raise StarkilnError(message)
    try:
        a, b = (finite_number(v, what) for v in parts)
    except StarkilnError:
        raise StarkilnError(message) from None
    return a, b


def parse_size(text: str) -> tuple[int, int]:
    """``"WxH"`` -> ``(W, H)``; each side 1-16384."""
    from starkiln.engine.exports.texture_spec import MAX_SIDE

    m = re.fullmatch(r"\s*(-?\d+)\s*[xX]\s*(-?\d+)\s*", str(text))
    if not m:
        raise StarkilnError(f"--size {text!r} must be WIDTHxHEIGHT in texels (e.g. 1024x256)")
    w, h = int(m.group(1)), int(m.group(2))
    for side, v in (("width", w), ("height", h)):
        if not 1 <= v <= MAX_SIDE:
            raise StarkilnError(f"--size {text}: {side} {v} is outside the accepted range "
                                f"1-{MAX_SIDE}")
    return w, h


def add_parsers(sub) -> None:
    """Add ``lut`` and ``palette`` to the ``starkiln`` subcommands."""
    lut = sub.add_parser(
        "lut", help="write a lookup texture (temperature x magnitude) for a render engine",
        description="Write a lookup texture: temperature along x, magnitude along y (row 0 = "
                    "brightest). .png is display-encoded (8 or 16 bit), .exr is display-linear "
                    "32-bit float. Column i samples u = (i + 0.5)/W, row j samples "
                    "v = (j + 0.5)/H.")
    lut.add_argument("out", metavar="OUT", help="output file, .png or .exr")
    lut.add_argument("--temperatures", metavar="A:B",
                     help="temperature range in kelvin (default 1000:40000)")
    lut.add_argument("--magnitudes", metavar="BRIGHT:FAINT",
                     help="magnitude range down the texture, e.g. -1:7 (default: none, a "
                          "full-colour strip)")
    lut.add_argument("--size", metavar="WxH",
                     help="texels (default 256x16 for a strip, 256x256 with --magnitudes)")
    lut.add_argument("--axis", metavar="MAPPING",
                     help="temperature axis: mired (default, 10^6/T), log, linear")
    lut.add_argument("--depth", type=int, metavar="BITS",
                     help="PNG bits per sample: 8 (default) or 16; EXR is always 32-bit float")
    lut.add_argument("--alpha", action="store_true", default=None,
                     help="add an alpha channel holding the intensity")
    lut.add_argument("--premultiply", action="store_true", default=None,
                     help="carry the intensity in RGB (premultiplied)")
    lut.add_argument("--settings-from", metavar="OLD.png|OLD.exr",
                     help="rebuild from the settings and layout embedded in an older texture "
                          "(options given here override)")
    lut.add_argument("--force", action="store_true", help="overwrite OUT if it exists")
    add_colour_options(lut)
    _allow_negative_ranges(lut)

    pal = sub.add_parser(
        "palette", help="write a palette (.json, .csv, .gpl, or a .png contact sheet)",
        description="Write a palette of swatches across a temperature range or one per "
                    "spectral class. Format by extension: .json, .csv, .gpl (GIMP palette), "
                    ".png (contact sheet).")
    pal.add_argument("out", metavar="OUT", help="output file: .json, .csv, .gpl or .png")
    pal.add_argument("--temperatures", metavar="A:B",
                     help="temperature range in kelvin (default 1000:40000)")
    pal.add_argument("--steps", type=int, metavar="N", help="number of swatches, 2-4096 "
                     "(default 16; both ends included)")
    pal.add_argument("--axis", metavar="MAPPING",
                     help="spacing of the steps: mired (default), log, linear")
    pal.add_argument("--classes", nargs="?", const="all", metavar="LIST",
                     help="one swatch per main-sequence class instead: all (O5V-M8V) or a "
                          "comma list such as O5V,B0V,A0V,F0V,G2V,K0V,M0V")
    add_index_model_option(pal)
    pal.add_argument("--name", metavar="TEXT", help="palette name (default from the content)")
    pal.add_argument("--columns", type=int, metavar="N",
                     help="columns of the .gpl hint and the contact sheet (default up to 8)")
    pal.add_argument("--force", action="store_true", help="overwrite OUT if it exists")
    add_colour_options(pal)
    _allow_negative_ranges(pal)


def _settings_overriding(base, args):
    """``base`` with the colour options that were given on the command line applied."""
    import dataclasses

    from starkiln.engine.pipeline.settings import Settings

    plain = argparse.Namespace(**{**vars(args), "settings": None})
    explicit = settings_from_args(plain)
    default = Settings()
    changes = {f.name: getattr(explicit, f.name) for f in dataclasses.fields(Settings)
               if getattr(explicit, f.name) != getattr(default, f.name)}
    if not explicit.gamut_asked:
        changes.pop("gamut", None)  # the target's default follows the target
    return base.replace(**changes) if changes else base


def _lut_spec_and_settings(args):
    from starkiln.engine.exports.texture_metadata import spec_from_metadata
    from starkiln.engine.exports.texture_spec import DEFAULT_TEMPERATURE_RANGE_K, TextureSpec, format_for_path

    fmt = format_for_path(args.out)
    if args.settings_from:
        from starkiln.engine.exports.image_files import read_embedded_json
        from starkiln.engine.pipeline.settings import Settings

        if args.settings:
            raise StarkilnError("use either --settings or --settings-from, not both")
        meta = read_embedded_json(args.settings_from)
        old = spec_from_metadata(meta, args.settings_from)
        settings = Settings.from_dict(meta.get("settings"), f"{args.settings_from} (embedded)")
        settings = _settings_overriding(settings, args)
        base = {"width": old.width, "height": old.height,
                "temperature_range_K": old.temperature_range_K, "axis": old.axis,
                "magnitude_range": old.magnitude_range, "alpha": old.alpha,
                "premultiply": old.premultiply}
        depth = old.depth if old.file_format == fmt else None
    else:
        settings = settings_from_args(args)
        base = {"temperature_range_K": DEFAULT_TEMPERATURE_RANGE_K, "axis": "mired",
                "magnitude_range": None, "alpha": False, "premultiply": False}
        depth = None
    if args.temperatures is not None:
        base["temperature_range_K"] = parse_range(args.temperatures, "--temperatures")
    if args.magnitudes is not None:
        base["magnitude_range"] = parse_range(args.magnitudes, "--magnitudes")
    if args.axis is not None:
        base["axis"] = args.axis
    if args.alpha:
        base["alpha"] = True
    if args.premultiply:
        base["premultiply"] = True
    if args.size is not None:
        base["width"], base["height"] = parse_size(args.size)
    elif "width" not in base:
        base["width"], base["height"] = (256, 256) if base["magnitude_range"] else (256, 16)
    if args.depth is not None:
        depth = args.depth
        if fmt == "exr" and depth != 32:
            raise StarkilnError(f"--depth {depth} applies to .png only; .exr is always 32-bit "
                                "float")
    if depth is None:
        depth = 32 if fmt == "exr" else 8
    return TextureSpec(file_format=fmt, depth=depth, **base), settings


def cmd_lut(args, out) -> int:
    """``starkiln lut``: write a lookup texture (see :mod:`starkiln.engine.exports.textures`)."""
    from starkiln.engine.exports.textures import export_texture

    spec, settings = _lut_spec_and_settings(args)
    export_texture(settings, spec, args.out, overwrite=args.force)
    a, b = spec.temperature_range_K
    rows = ("a full-colour strip" if spec.magnitude_range is None
            else "magnitudes {:g} (top) to {:g}".format(*spec.magnitude_range))
    kind = ("32-bit float display-linear" if spec.file_format == "exr"
            else f"{spec.depth}-bit display-encoded")
    if settings.display.kind == "working-space":
        kind = f"32-bit float scene-linear {settings.display.name}"
    out.write(f"wrote {args.out}: {spec.width} x {spec.height} "
              f"{'RGBA' if spec.alpha else 'RGB'}{' premultiplied' if spec.premultiply else ''}, "
              f"{kind}, {a:g}-{b:g} K on a {spec.axis} axis, {rows}\n")
    return 0


def cmd_palette(args, out) -> int:
    """``starkiln palette``: write swatches (see :mod:`starkiln.engine.exports.palettes`)."""
    from starkiln.engine.exports.palettes import export_palette, palette_format_for_path

    palette_format_for_path(args.out)
    settings = settings_from_args(args)
    if args.classes is not None:
        if args.steps is not None or args.temperatures is not None or args.axis is not None:
            raise StarkilnError("--classes cannot be combined with --steps, --temperatures "
                                "or --axis")
        classes = None if args.classes.strip().lower() == "all" else args.classes.split(",")
        kwargs = {"use_classes": True, "classes": classes, "index_model": args.index_model}
    else:
        if args.index_model != "synthetic":
            raise StarkilnError("--index-model applies only to --classes")
        kwargs = {"range_K": (parse_range(args.temperatures, "--temperatures")
                              if args.temperatures is not None else None),
                  "steps": 16 if args.steps is None else args.steps,
                  "axis": args.axis or "mired"}
    if args.columns is not None and not 1 <= args.columns <= 256:
        raise StarkilnError(f"--columns {args.columns} is outside the accepted range 1-256")
    palette = export_palette(settings, args.out, **kwargs, name=args.name, columns=args.columns,
                             overwrite=args.force)
    out.write(f"wrote {args.out}: {len(palette.names)} swatches, display "
              f"{settings.display.name}, white {settings.scene_white}\n")
    return 0


COMMANDS = {"lut": cmd_lut, "palette": cmd_palette}
