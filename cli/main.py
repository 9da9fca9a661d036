"""The ``starkiln`` command line: builds the parser from the command modules and dispatches.

Each command module (:mod:`starkiln.cli.colour`, :mod:`starkiln.cli.exports`,
:mod:`starkiln.cli.catalogue`) adds its subcommands and maps their names to
functions; the heavy engine modules are imported inside those functions, so a
colour query pays neither for the window nor for colour-science. Errors are one
line on stderr and exit code 2.
"""

from __future__ import annotations

import argparse
import errno
import os
import signal
import sys
import threading

from starkiln.cli import catalogue, colour, exports, ocio, plate, settings_cmd
from starkiln.cli.options import EXIT_BAD_INPUT, Parser, number
from starkiln import __version__
from starkiln.engine.errors import StarkilnError

COMMAND_MODULES = (colour, exports, catalogue, settings_cmd, ocio, plate)


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (also used by the docs)."""
    p = Parser(prog="starkiln", description="Star colours for domes and screens.")
    p.add_argument("-V", "--version", action="version", version=f"starkiln {__version__}")
    p.add_argument("--screenshot", metavar="OUT.png",
                   help="with no command: render the window offscreen at 1280 x 800 into OUT.png")
    p.add_argument("--force", dest="window_force", action="store_true", default=None,
                   help="with --screenshot: overwrite OUT.png if it exists")
    p.add_argument("--settings", dest="window_settings", metavar="FILE.toml",
                   help="with no command: open the window with these settings")
    p.add_argument("--temperature", dest="window_temperature", type=number, metavar="K",
                   help="with no command: open the window at this temperature")
    p.add_argument("--monitor", dest="window_monitor", metavar="NAME|PROFILE.json",
                   help="with no command: the monitor the window paints for (a display preset "
                        "or a .json display profile; default: what the platform reports, else "
                        "sRGB)")
    sub = p.add_subparsers(dest="command", parser_class=Parser)
    for module in COMMAND_MODULES:
        module.add_parsers(sub)
    return p


#: Options that belong to the window only; with a subcommand they are an error, not ignored.
WINDOW_OPTIONS = (("screenshot", "--screenshot"), ("window_settings", "--settings"),
                  ("window_temperature", "--temperature"), ("window_force", "--force"),
                  ("window_monitor", "--monitor"))


class Terminated(BaseException):
    """SIGTERM arrived: raised in the main thread so every ``atomic_path`` removes its
    temporary file on the way out (a BaseException, like KeyboardInterrupt, so that no
    ``except Exception`` swallows it)."""


def _on_sigterm(signum, frame):
    raise Terminated()


def _install_sigterm():
    """Turn SIGTERM into :class:`Terminated` while a command runs; returns the old handler
    (None where signals cannot be set: another thread, or no SIGTERM)."""
    if threading.current_thread() is not threading.main_thread() or not hasattr(signal, "SIGTERM"):
        return None
    try:
        return signal.signal(signal.SIGTERM, _on_sigterm)
    except (ValueError, OSError):
        return None


def main(argv=None) -> int:
    """Entry point of the ``starkiln`` console script; returns the exit code.

    Exit codes: 0 done; 2 bad input or an output that could not be written (one line on
    stderr naming the value or file and what is accepted; also a run stopped by SIGTERM,
    after its unfinished output is removed); 130 interrupted (Ctrl-C). A closed or
    broken standard output (``starkiln whites | head -c1``) ends the command quietly.
    """
    argv = sys.argv[1:] if argv is None else argv
    previous = _install_sigterm()
    try:
        return _run(argv)
    except Terminated:
        return _fail("stopped by SIGTERM; any unfinished output was removed and earlier "
                     "files are unchanged")
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _run(argv) -> int:
    """Parse and dispatch; every failure becomes one line (see :func:`main`)."""
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            return _launch_window(args)
        for dest, option in WINDOW_OPTIONS:
            if getattr(args, dest, None) is not None:
                raise StarkilnError(f"{option} before a command applies to the window only; "
                                    f"give it after '{args.command}' if the command accepts it, "
                                    "or leave out the command to open the window")
        if sys.stdout is None:
            raise StarkilnError("standard output is closed; accepted: an open standard output "
                                "or a command that writes a file")
        commands = {}
        for module in COMMAND_MODULES:
            commands.update(module.COMMANDS)
        code = commands[args.command](args, sys.stdout)
        sys.stdout.flush()
        return code
    except StarkilnError as exc:
        return _fail(str(exc))
    except BrokenPipeError:
        return _quiet_broken_pipe()
    except ImportError as exc:
        # A signal that lands while a C extension initialises arrives as its cause.
        if isinstance(exc.__cause__, Terminated):
            raise exc.__cause__ from None
        if not isinstance(exc.__cause__, KeyboardInterrupt):
            return _fail(f"a module Starkiln needs could not be loaded ({exc}); accepted: "
                         "a complete installation (pip install starkiln)")
        return _interrupted()
    except KeyboardInterrupt:
        return _interrupted()
    except RecursionError:
        return _fail("an input file is nested too deeply to read (a JSON or TOML file with "
                     "thousands of nested brackets?); accepted: ordinary settings and profiles")
    except MemoryError:
        return _fail("not enough memory for this request; accepted: a smaller size or input")
    except OSError as exc:
        if exc.errno == errno.EPIPE:
            return _quiet_broken_pipe()
        return _fail(describe_os_error(exc))


def describe_os_error(exc: OSError) -> str:
    """One line for a failed read or write: the file, then what went wrong, without the
    Python exception's name (``errno`` meanings from POSIX, common practice)."""
    where = exc.filename if exc.filename is not None else "standard output"
    reason = exc.strerror or str(exc)
    hint = {errno.ENOSPC: "; free some space or write elsewhere",
            errno.EISDIR: "; accepted: a file path, not a folder",
            errno.EACCES: "; accepted: a path you may write",
            errno.EROFS: "; accepted: a path on a writable file system",
            errno.ENOENT: "; check the path"}.get(exc.errno, "")
    return f"{where}: {reason}{hint}"


def _fail(message: str) -> int:
    line = " ".join(str(message).split())  # always one line
    try:
        sys.stderr.write(f"starkiln: error: {line}\n")
    except (OSError, ValueError, AttributeError):
        pass
    return EXIT_BAD_INPUT


def _interrupted() -> int:
    """Ctrl-C: the unfinished output is already removed (``atomic_path``); exit 130
    (128 + SIGINT, common practice for shells)."""
    try:
        sys.stderr.write("starkiln: interrupted\n")
    except (OSError, ValueError, AttributeError):
        pass
    return 130


def _quiet_broken_pipe() -> int:
    """The reader of standard output went away: stop quietly (Python documentation,
    "Note on SIGPIPE": point stdout at devnull so the interpreter's final flush is silent)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    return 0


def _launch_window(args) -> int:
    """No subcommand (or ``--screenshot``): the window, imported only now, so that every
    other command starts without Qt."""
    from starkiln.gui.app import run

    return run(args)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
