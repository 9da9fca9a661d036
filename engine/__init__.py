"""Starkiln engine: star temperature and brightness to display colours.

Pure numpy; never imports a window toolkit. Every output of the project (the
command line, the window, lookup textures, palettes, catalogues) asks
:func:`starkiln.engine.pipeline.render.render` for its colours.
"""

from starkiln.engine.errors import StarkilnError

__all__ = ["StarkilnError"]
