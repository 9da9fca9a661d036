"""``starkiln settings write`` and ``starkiln settings show``: settings files without the window.

``write`` turns the colour options (:func:`starkiln.cli.options.add_colour_options`) into a
settings file, atomically and with the ``--force`` rule of every output; ``show`` reads one,
validates it and prints it in full (every key, the display written out).
"""

from __future__ import annotations

from starkiln.cli.options import add_colour_options, settings_from_args


def add_parsers(sub) -> None:
    """Add ``settings write`` and ``settings show`` to the subcommands."""
    s = sub.add_parser("settings", help="write or show a settings file",
                       description="Write a settings file from colour options, or show one.")
    actions = s.add_subparsers(dest="settings_action", metavar="ACTION", required=True,
                               parser_class=type(s))
    w = actions.add_parser("write", help="write colour options into a settings file",
                           description="Write the colour options given (on top of --settings, "
                                       "if given, else the defaults) into a TOML settings file.")
    w.add_argument("out", metavar="OUT.toml", help="the settings file to write")
    w.add_argument("--force", action="store_true", help="overwrite OUT.toml if it exists")
    add_colour_options(w)
    show = actions.add_parser("show", help="check a settings file and print it in full",
                              description="Read and validate a settings file, then print "
                                          "every key (defaults filled in).")
    show.add_argument("file", metavar="FILE.toml", help="the settings file to read")


def cmd_settings(args, out) -> int:
    """``starkiln settings write|show``."""
    from pathlib import Path

    from starkiln.engine.atomic import check_writable, format_for_extension
    from starkiln.engine.pipeline.settings import load_settings, save_settings, settings_to_toml

    if args.settings_action == "show":
        out.write(settings_to_toml(load_settings(args.file)))
        return 0
    path = Path(args.out)
    format_for_extension(path, {".toml": "toml"}, "settings file")
    check_writable(path, overwrite=args.force)
    save_settings(settings_from_args(args), path, overwrite=args.force)
    out.write(f"wrote {path}\n")
    return 0


COMMANDS = {"settings": cmd_settings}
