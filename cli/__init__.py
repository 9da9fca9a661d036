"""The ``starkiln`` command line: its own room, outside the engine.

The modules here only parse options and call the engine (:mod:`starkiln.engine`);
:mod:`starkiln.cli.main` builds the parser and dispatches, the window is imported
only when no subcommand is given.
"""
