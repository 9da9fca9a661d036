"""What every texture says about itself: the embedded metadata and the rebuild from it.

A texture file carries one JSON object (PNG ``tEXt`` chunk, EXR string attribute, keyword
``starkiln``): the settings, the layout (size, channels, encoding, quantisation) and both
axes with their formulas (module docstring of :mod:`starkiln.engine.exports.textures`).
:func:`spec_from_metadata` reads the layout back, so ``starkiln lut --settings-from`` can
rebuild a texture from the file alone.

References
----------
[PNG] section 11.3.4.3 (PNG ``tEXt``); [OpenEXR] technical introduction
(header attributes, ``chromaticities``); [RFC8259] (JSON).
"""

from __future__ import annotations

import json

from starkiln.engine.errors import StarkilnError
from starkiln.engine.exports.texture_spec import TextureSpec

TEXTURE_FORMAT = 1  # version of the embedded metadata layout
METADATA_KEY = "starkiln"


def _transfer_name(display) -> str:
    return display.transfer_label


def lut_metadata(settings, spec: TextureSpec) -> dict:
    """The self-description embedded in every texture: settings, layout and axes.

    Returns
    -------
    dict
        ``{"starkiln_texture": 1, "generator", "settings": Settings.to_dict(),
        "texture": {...layout...}, "axes": {"u": {...}, "v": {...}}}``; plain
        JSON data. The formulas are the module docstring's.

    References
    ----------
    Module docstring; docs/formats.md, "Lookup textures (PNG and EXR)".
    """
    from starkiln import __version__

    a, b = spec.temperature_range_K
    formulas = {
        "mired": "u = (1e6/A - 1e6/T) / (1e6/A - 1e6/B)",
        "log": "u = ln(T/A) / ln(B/A)",
        "linear": "u = (T - A) / (B - A)",
    }
    u_axis = {
        "quantity": "temperature_K",
        "mapping": spec.axis,
        "range": [a, b],
        "formula": formulas[spec.axis] + f" with A = {a:g} K, B = {b:g} K",
        "texel_centres": "column i (0-based, left to right) samples u = (i + 0.5) / W",
    }
    if spec.magnitude_range is None:
        v_axis = {"quantity": "none",
                  "note": "a strip: every row holds the same full-intensity colours"}
    else:
        ma, mb = spec.magnitude_range
        v_axis = {
            "quantity": "magnitude",
            "mapping": "linear",
            "range": [ma, mb],
            "formula": f"v = (m - A) / (B - A) with A = {ma:g} (brightest), B = {mb:g}",
            "texel_centres": "row j (0-based, row 0 = top row of the image) samples "
                             "v = (j + 0.5) / H",
            "origin": "v = 0 is the top edge of the image; row 0 is the brightest magnitude",
        }
    if spec.encoding == "display-linear":
        rgb = "rgb_linear * intensity" if spec.premultiply else "rgb_linear"
        encoding = {"encoding": "display-linear", "transfer": "linear"}
    else:
        rgb = "rgb_dimmed_encoded" if spec.premultiply else "rgb_encoded"
        encoding = {"encoding": "display-encoded", "transfer": _transfer_name(settings.display)}
    layout = {
        "width": spec.width,
        "height": spec.height,
        "channels": "RGBA" if spec.alpha else "RGB",
        "rgb": rgb,
        "alpha": "intensity" if spec.alpha else "none",
        "premultiplied": spec.premultiply,
        "format": spec.file_format,
        "sample_type": spec.sample_type,
        "depth": spec.depth,
        "quantisation": ("none" if spec.depth == 32
                         else f"floor(value * {2 ** spec.depth - 1} + 0.5)"),
        "display": settings.display.name,
        **encoding,
    }
    if settings.display.kind == "working-space":  # display textures' metadata is unchanged
        layout["target"] = "working-space (scene-linear, gamut " + settings.gamut + ")"
    return {
        "starkiln_texture": TEXTURE_FORMAT,
        "generator": f"starkiln {__version__}",
        "settings": settings.to_dict(),
        "texture": layout,
        "axes": {"u": u_axis, "v": v_axis},
    }


def metadata_json(metadata: dict) -> str:
    """Deterministic ASCII JSON text of embedded metadata (sorted keys, compact)."""
    return json.dumps(metadata, sort_keys=True, separators=(",", ":"), ensure_ascii=True,
                      allow_nan=False)


def chromaticities(metadata: dict):
    """The display's red, green, blue and white xy (8 floats) from texture metadata, or None.

    For the standard OpenEXR ``chromaticities`` attribute ([OpenEXR] technical introduction).
    """
    d = metadata.get("settings", {}).get("display")
    if not isinstance(d, dict):
        return None
    try:
        return tuple(float(v) for k in ("red_xy", "green_xy", "blue_xy", "white_xy") for v in d[k])
    except (KeyError, TypeError, ValueError):
        return None


def spec_from_metadata(metadata: dict, source: str = "texture") -> TextureSpec:
    """The :class:`TextureSpec` described by embedded texture metadata (for rebuilds).

    Raises :class:`StarkilnError` naming ``source`` when the metadata is not a
    Starkiln texture description.
    """
    try:
        if metadata.get("starkiln_texture") != TEXTURE_FORMAT:
            raise KeyError("starkiln_texture")
        tex = metadata["texture"]
        u = metadata["axes"]["u"]
        v = metadata["axes"]["v"]
        mags = tuple(v["range"]) if v.get("quantity") == "magnitude" else None
        return TextureSpec(width=tex["width"], height=tex["height"],
                       temperature_range_K=tuple(u["range"]), axis=u["mapping"],
                       magnitude_range=mags, alpha=tex["alpha"] == "intensity",
                       premultiply=tex["premultiplied"], file_format=tex["format"],
                       depth=tex["depth"])
    except (KeyError, TypeError, AttributeError) as exc:
        raise StarkilnError(f"{source}: not a Starkiln texture description "
                            f"(missing or bad {exc})") from None
    except StarkilnError as exc:
        raise StarkilnError(f"{source}: {exc}") from None
