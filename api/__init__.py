"""Starkiln: star colours for domes and screens.

The public API for scripts. Every name here is stable; the modules behind them
(:mod:`starkiln.engine`, :mod:`starkiln.cli`, :mod:`starkiln.gui`) may move.
Importing :mod:`starkiln` is cheap: each name is loaded on first use.

>>> import starkiln
>>> r = starkiln.render(starkiln.Settings(), 5772.0)
>>> str(r.hex())
'#fff1ea'

See ``docs/scripting.md`` for a guide with tested examples.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

#: public name -> (module, attribute); loaded lazily by :func:`__getattr__`.
_PUBLIC = {
    # settings and the one render path
    "Settings": ("starkiln.engine.pipeline.settings", "Settings"),
    "load_settings": ("starkiln.engine.pipeline.settings", "load_settings"),
    "save_settings": ("starkiln.engine.pipeline.settings", "save_settings"),
    "render": ("starkiln.engine.pipeline.render", "render"),
    "Rendered": ("starkiln.engine.pipeline.render", "Rendered"),
    # presets
    "Display": ("starkiln.engine.colour.displays", "Display"),
    "DISPLAY_PRESETS": ("starkiln.engine.colour.displays", "PRESETS"),
    "get_display": ("starkiln.engine.colour.displays", "get_display"),
    "WHITE_PRESETS": ("starkiln.engine.colour.whites", "WHITE_PRESETS"),
    "resolve_white": ("starkiln.engine.colour.whites", "resolve_white"),
    # temperature sources
    "temperature_from_bv": ("starkiln.engine.stars.temperature", "temperature_from_bv"),
    "temperature_from_spectral_class": ("starkiln.engine.stars.temperature",
                                        "temperature_from_spectral_class"),
    "temperature_from_bp_rp": ("starkiln.engine.stars.gaia", "temperature_from_bp_rp"),
    "temperature_from_index": ("starkiln.engine.stars.temperature", "temperature_from_index"),
    "temperature_for_spectral_class": ("starkiln.engine.stars.temperature",
                                       "temperature_for_spectral_class"),
    "intrinsic_index": ("starkiln.engine.path.deredden", "intrinsic_index"),
    "colour_excess": ("starkiln.engine.path.deredden", "colour_excess"),
    # exports
    "TextureSpec": ("starkiln.engine.exports.texture_spec", "TextureSpec"),
    "export_texture": ("starkiln.engine.exports.textures", "export_texture"),
    "export_palette": ("starkiln.engine.exports.palettes", "export_palette"),
    "build_palette": ("starkiln.engine.exports.palettes", "build_palette"),
    "write_palette": ("starkiln.engine.exports.palettes", "write_palette"),
    "WORKING_SPACES": ("starkiln.engine.colour.displays", "WORKING_SPACES"),
    "write_ocio_config": ("starkiln.engine.exports.ocio_config", "write_ocio_config"),
    "display_from_icc": ("starkiln.engine.colour.icc_profiles", "display_from_icc"),
    "display_from_readings": ("starkiln.engine.colour.measured", "display_from_readings"),
    "CataloguePlan": ("starkiln.engine.catalogue.plan", "CataloguePlan"),
    "colour_catalogue": ("starkiln.engine.catalogue.run", "colour_catalogue"),
    # errors
    "StarkilnError": ("starkiln.engine.errors", "StarkilnError"),
}

__all__ = sorted(_PUBLIC) + ["__version__"]


def __getattr__(name: str):
    """Load a public name on first use ([PEP562] module ``__getattr__``)."""
    try:
        module, attribute = _PUBLIC[name]
    except KeyError:
        raise AttributeError(f"module 'starkiln' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), attribute)
    globals()[name] = value
    return value


def __dir__():
    return __all__
