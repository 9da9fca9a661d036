"""The ``starkiln`` command line: builds the parser from the command modules and dispatches.

Each command module (:mod:`starkiln.cli.colour`, :mod:`starkiln.cli.exports`,
:mod:`starkiln.cli.catalogue`) adds its subcommands and maps their names to
functions; the heavy engine modules are imported inside those functions, so a
colour query pays neither for the window nor for colour-science. Errors are one
line on stderr and exit code 2.
"""

from __future__ import annotations

import sys

from starkiln.cli import catalogue, colour, exports
from starkiln.cli.options import EXIT_BAD_INPUT, Parser, number
from starkiln import __version__
from starkiln.engine.errors import StarkilnError

COMMAND_MODULES = (colour, exports, catalogue)


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (also used by the docs)."""
    p = Parser(prog="starkiln", description="Star colours for domes and screens.")
    p.add_argument("--version", action="version", version=f"starkiln {__version__}")
    p.add_argument("--screenshot", metavar="OUT.png",
                   help="with no command: render the window offscreen at 1280 x 800 into OUT.png")
    p.add_argument("--settings", dest="window_settings", metavar="FILE.toml",
                   help="with no command: open the window with these settings")
    p.add_argument("--temperature", dest="window_temperature", type=number, metavar="K",
                   help="with no command: open the window at this temperature")
    sub = p.add_subparsers(dest="command", parser_class=Parser)
    for module in COMMAND_MODULES:
        module.add_parsers(sub)
    return p


def main(argv=None) -> int:
    """Entry point of the ``starkiln`` console script; returns the exit code."""
    argv = sys.argv[1:] if argv is None else argv
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            return _launch_window(args)
        commands = {}
        for module in COMMAND_MODULES:
            commands.update(module.COMMANDS)
        return commands[args.command](args, sys.stdout)
    except StarkilnError as exc:
        sys.stderr.write(f"starkiln: error: {exc}\n")
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("starkiln: interrupted\n")
        return 130


def _launch_window(args) -> int:
    """No subcommand (or ``--screenshot``): the window, imported only now, so that every
    other command starts without Qt."""
    from starkiln.gui.app import run

    return run(args)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
