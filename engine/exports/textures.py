"""Lookup textures: temperature along x, magnitude along y, one render call.

A lookup texture (LUT) is what a shader samples to colour a star: the texel
at ``(u, v)`` holds the display colour of temperature ``T(u)`` at magnitude
``m(v)``, exactly as :func:`starkiln.engine.pipeline.render.render` gives it.

Axes and sampling convention (fixed; README "Lookup textures")
---------------------------------------------------------------
The temperature axis runs over ``[A, B]`` kelvin along x, through one of three
mappings (``u`` in 0-1 from the left edge of the image to the right edge):

- ``mired`` (default): ``u = (10^6/A - 10^6/T) / (10^6/A - 10^6/B)``. The
  mired (micro reciprocal degree, 10^6 / T) spaces visible colour steps of
  Planckian light far more evenly than kelvin (common practice in lighting
  and photography; the isotemperature lines of CIE 15:2004 section 9.5 crowd
  together in kelvin towards high temperatures).
- ``log``: ``u = ln(T / A) / ln(B / A)``.
- ``linear``: ``u = (T - A) / (B - A)``.

The magnitude axis runs over ``[m_bright, m_faint]`` down the image, linear in
magnitude: ``v = (m - m_bright) / (m_faint - m_bright)``, with ``v = 0`` at the
top edge of the image, so row 0 (the top row) is the brightest magnitude.

Texel centres: column ``i`` (0-based, left to right) samples the axis at
``u = (i + 0.5) / W``; row ``j`` (0-based, top to bottom) samples
``v = (j + 0.5) / H``. Bilinear filtering between texel centres then
interpolates the axis mapping (common practice for lookup tables; see e.g.
the OpenGL 4.6 specification, section 8.14.2, for where texel centres lie).

Without magnitudes the texture is a strip: every row holds the full-intensity
colours of the temperature axis.

Channel layouts
---------------
``RGB`` (colour only); ``alpha``: a fourth channel holding the intensity
(0-1, linear, from the magnitude tone curve); ``premultiply``: RGB carries the
intensity: display-encoded files hold ``rgb_dimmed_encoded`` =
``encode(rgb_linear * intensity)``, display-linear files hold
``rgb_linear * intensity``. Both options together give premultiplied RGBA.

Sample encodings: PNG holds display-encoded values (after the display's
transfer function) quantised to 8 or 16 bits by ``floor(v * (2^n - 1) + 0.5)``
(common practice); EXR holds display-linear 32-bit floats (OpenEXR).
"""

from __future__ import annotations

import dataclasses
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.colour.temperature_axis import AXIS_MAPPINGS, check_axis, temperature_from_u, u_from_temperature  # noqa: F401 (re-exported for texture callers)
from starkiln.engine.errors import InputRangeError, StarkilnError
from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K
from starkiln.engine.eye.vision import MAGNITUDE_RANGE

FORMATS = {".png": "png", ".exr": "exr"}
DEPTHS = {"png": (8, 16), "exr": (32,)}
MAX_SIDE = 16384
TEXTURE_FORMAT = 1  # version of the embedded metadata layout
METADATA_KEY = "starkiln"
DEFAULT_TEMPERATURE_RANGE_K = (1000.0, 40000.0)
#: What the render path accepts (one definition each, in starkiln.engine.eye.vision and starkiln.engine.stars.temperature).
MAGNITUDE_MIN, MAGNITUDE_MAX = MAGNITUDE_RANGE


def texel_centres(n: int) -> np.ndarray:
    """Axis positions of the texel centres of an ``n``-texel axis: ``(i + 0.5) / n``.

    Parameters
    ----------
    n : int
        Number of texels along the axis (>= 1).

    Returns
    -------
    numpy.ndarray
        ``(n,)`` values strictly inside (0, 1).

    References
    ----------
    Texel-centre convention of GPU texture sampling (common practice; OpenGL
    4.6 specification, section 8.14.2).

    Examples
    --------
    >>> texel_centres(4).tolist()
    [0.125, 0.375, 0.625, 0.875]
    """
    return (np.arange(int(n), dtype=np.float64) + 0.5) / float(n)



def v_from_magnitude(magnitude, range_mag) -> np.ndarray:
    """Texture coordinate v (0 = top edge = brightest) of apparent magnitudes.

    ``v = (m - m_bright) / (m_faint - m_bright)`` with ``range_mag = (m_bright, m_faint)``.

    References
    ----------
    Magnitudes are already logarithmic in flux (Pogson 1856), so the axis is
    linear in magnitude (common practice).

    Examples
    --------
    >>> float(v_from_magnitude(3.0, (-1.0, 7.0)))
    0.5
    """
    m = np.asarray(magnitude, dtype=np.float64)
    a, b = float(range_mag[0]), float(range_mag[1])
    return (m - a) / (b - a)


def magnitude_from_v(v, range_mag) -> np.ndarray:
    """Apparent magnitudes at texture coordinates v; inverse of :func:`v_from_magnitude`.

    References
    ----------
    Linear magnitude axis (common practice; module docstring).

    Examples
    --------
    >>> float(magnitude_from_v(0.25, (-1.0, 7.0)))
    1.0
    """
    vv = np.asarray(v, dtype=np.float64)
    a, b = float(range_mag[0]), float(range_mag[1])
    return a + vv * (b - a)



def check_temperature_range(range_K, what: str = "temperature range") -> tuple[float, float]:
    """Validate ``(A, B)`` kelvin: finite, ``A < B``, both within 500-100 000 K."""
    a, b = _pair(range_K, what)
    if not a < b:
        raise InputRangeError(f"{what} {a:g}:{b:g} K is reversed or empty; accepted: A:B with A < B")
    for v in (a, b):
        if not TEMPERATURE_MIN_K <= v <= TEMPERATURE_MAX_K:
            raise InputRangeError(f"{what} end {v:g} K is outside the supported range "
                                  f"{TEMPERATURE_MIN_K:g}-{TEMPERATURE_MAX_K:g} K")
    return a, b


def check_magnitude_range(range_mag, what: str = "magnitude range") -> tuple[float, float]:
    """Validate ``(m_bright, m_faint)``: finite, bright < faint, within -30..30."""
    a, b = _pair(range_mag, what)
    if not a < b:
        raise InputRangeError(f"{what} {a:g}:{b:g} is reversed or empty; accepted: "
                              "BRIGHT:FAINT with BRIGHT < FAINT (e.g. -1:7)")
    for v in (a, b):
        if not MAGNITUDE_MIN <= v <= MAGNITUDE_MAX:
            raise InputRangeError(f"{what} end {v:g} is outside the accepted range "
                                  f"{MAGNITUDE_MIN:g} to {MAGNITUDE_MAX:g}")
    return a, b


def _pair(value, what: str) -> tuple[float, float]:
    try:
        a, b = (float(x) for x in value)
    except (TypeError, ValueError):
        raise StarkilnError(f"{what} {value!r} must be two numbers A:B") from None
    if not (np.isfinite(a) and np.isfinite(b)):
        raise InputRangeError(f"{what} {a:g}:{b:g} must be finite numbers")
    return a, b


def format_for_path(path) -> str:
    """Texture format from the file extension: ``.png`` -> ``png``, ``.exr`` -> ``exr``."""
    from starkiln.engine.atomic import format_for_extension

    return format_for_extension(path, FORMATS, "texture")


@dataclass(frozen=True)
class LutSpec:
    """What a lookup texture holds: size, axes, channel layout and sample format.

    Attributes
    ----------
    width, height : texels, 1-16384 each.
    temperature_range_K : ``(A, B)`` kelvin at the left and right edges, ``A < B``.
    axis : temperature mapping, ``mired`` (default), ``log`` or ``linear``.
    magnitude_range : ``(m_bright, m_faint)`` at the top and bottom edges, or
        None for a full-colour strip.
    alpha : add a fourth channel holding the intensity.
    premultiply : carry the intensity in RGB (see the module docstring).
    file_format : ``png`` (display-encoded) or ``exr`` (display-linear float).
    depth : bits per sample: 8 or 16 for PNG, 32 for EXR.
    """

    width: int = 256
    height: int = 16
    temperature_range_K: tuple[float, float] = DEFAULT_TEMPERATURE_RANGE_K
    axis: str = "mired"
    magnitude_range: tuple[float, float] | None = None
    alpha: bool = False
    premultiply: bool = False
    file_format: str = "png"
    depth: int = 8

    def __post_init__(self):
        for name in ("width", "height"):
            v = getattr(self, name)
            try:
                n = int(v)
                if n != v:
                    raise ValueError
            except (TypeError, ValueError):
                raise StarkilnError(f"texture {name} {v!r} is not a whole number; accepted: "
                                    f"1-{MAX_SIDE}") from None
            if not 1 <= n <= MAX_SIDE:
                raise StarkilnError(f"texture {name} {n} is outside the accepted range 1-{MAX_SIDE}")
            object.__setattr__(self, name, n)
        object.__setattr__(self, "temperature_range_K",
                           check_temperature_range(self.temperature_range_K))
        object.__setattr__(self, "axis", check_axis(self.axis))
        if self.magnitude_range is not None:
            object.__setattr__(self, "magnitude_range", check_magnitude_range(self.magnitude_range))
        object.__setattr__(self, "alpha", bool(self.alpha))
        object.__setattr__(self, "premultiply", bool(self.premultiply))
        fmt = str(self.file_format).lower().lstrip(".")
        if fmt not in DEPTHS:
            raise StarkilnError(f"unknown texture format {self.file_format!r}; accepted: "
                                f"{', '.join(DEPTHS)}")
        object.__setattr__(self, "file_format", fmt)
        try:
            depth = int(self.depth)
        except (TypeError, ValueError):
            depth = None
        if depth not in DEPTHS[fmt]:
            accepted = ", ".join(str(d) for d in DEPTHS[fmt])
            raise StarkilnError(f"bit depth {self.depth!r} is not available for {fmt.upper()}; "
                                f"accepted: {accepted}")
        object.__setattr__(self, "depth", depth)

    def replace(self, **changes) -> "LutSpec":
        """A copy with some fields changed, validated again."""
        return dataclasses.replace(self, **changes)

    @property
    def channels(self) -> int:
        """3 (RGB) or 4 (RGBA)."""
        return 4 if self.alpha else 3

    @property
    def encoding(self) -> str:
        """``display-encoded`` (PNG) or ``display-linear`` (EXR)."""
        return "display-linear" if self.file_format == "exr" else "display-encoded"

    @property
    def sample_type(self) -> str:
        """numpy name of the stored samples: ``uint8``, ``uint16`` or ``float32``."""
        return {8: "uint8", 16: "uint16", 32: "float32"}[self.depth]


def lut_axes(spec: LutSpec):
    """Temperatures of the columns and magnitudes of the rows at their texel centres.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray or None)
        ``(W,)`` temperatures in kelvin (clipped into the range against
        rounding), and ``(H,)`` magnitudes, row 0 the brightest, or None
        without a magnitude range.

    References
    ----------
    Texel-centre convention and axis formulas of the module docstring.
    """
    a, b = spec.temperature_range_K
    t = np.clip(temperature_from_u(texel_centres(spec.width), (a, b), spec.axis), a, b)
    if spec.magnitude_range is None:
        return t, None
    return t, magnitude_from_v(texel_centres(spec.height), spec.magnitude_range)


def to_16bit(rgb_encoded) -> np.ndarray:
    """Encoded 0-1 -> uint16 by ``floor(v * 65535 + 0.5)`` (common practice)."""
    return np.floor(np.clip(np.asarray(rgb_encoded), 0.0, 1.0) * 65535.0 + 0.5).astype(np.uint16)


def render_lut(settings, spec: LutSpec) -> np.ndarray:
    """The texture's values as float64 ``(H, W, C)`` before quantisation.

    Calls :func:`starkiln.engine.pipeline.render.render` once, with temperatures of shape
    ``(1, W)`` and magnitudes of shape ``(H, 1)`` (broadcast to ``(H, W)``),
    or with temperatures alone for a strip. PNG (display-encoded) takes
    ``rgb_encoded`` or ``rgb_dimmed_encoded``; EXR (display-linear) takes
    ``rgb_linear`` or ``rgb_linear * intensity``; alpha is the intensity.

    References
    ----------
    Module docstring (layouts); :func:`starkiln.engine.pipeline.render.render` (colours).
    """
    from starkiln.engine.pipeline.render import render

    temperature_K, magnitude = lut_axes(spec)
    h, w = spec.height, spec.width
    if magnitude is None:
        r = render(settings, temperature_K[None, :])
    else:
        r = render(settings, temperature_K[None, :], magnitude[:, None])
    intensity = np.broadcast_to(np.asarray(r.intensity, dtype=np.float64), (h, w))
    if spec.encoding == "display-linear":
        rgb = np.asarray(r.rgb_linear, dtype=np.float64)
        if spec.premultiply:
            rgb = rgb * np.asarray(r.intensity)[..., None]
    else:
        rgb = np.asarray(r.rgb_dimmed_encoded if spec.premultiply else r.rgb_encoded,
                         dtype=np.float64)
    rgb = np.broadcast_to(rgb, (h, w, 3))
    if not spec.alpha:
        return np.ascontiguousarray(rgb)
    out = np.empty((h, w, 4), dtype=np.float64)
    out[..., :3] = rgb
    out[..., 3] = intensity
    return out


def quantise(values: np.ndarray, spec: LutSpec) -> np.ndarray:
    """Float texture values -> the stored sample type of ``spec`` (uint8, uint16, float32)."""
    if spec.depth == 8:
        from starkiln.engine.pipeline.render import to_8bit

        return to_8bit(values)
    if spec.depth == 16:
        return to_16bit(values)
    return np.asarray(values, dtype=np.float32)


def _transfer_name(display) -> str:
    if display.transfer == "gamma":
        return f"gamma {display.gamma:g}"
    return display.transfer


def lut_metadata(settings, spec: LutSpec) -> dict:
    """The self-description embedded in every texture: settings, layout and axes.

    Returns
    -------
    dict
        ``{"starkiln_texture": 1, "generator", "settings": Settings.to_dict(),
        "texture": {...layout...}, "axes": {"u": {...}, "v": {...}}}``; plain
        JSON data. The formulas are the module docstring's.

    References
    ----------
    Module docstring; README "Lookup textures".
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


def build_lut(settings, spec: LutSpec):
    """The texture a file holds: stored samples and the metadata to embed.

    This is the function the command line and the window's export dialog
    both call; :func:`write_lut` then writes it deterministically.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    spec : LutSpec

    Returns
    -------
    (numpy.ndarray, dict)
        ``(H, W, C)`` samples of ``spec.sample_type`` (row 0 = top of the
        image), and the metadata of :func:`lut_metadata`.

    References
    ----------
    Module docstring (axes, layouts, quantisation).

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> arr, meta = build_lut(Settings(), LutSpec(width=8, height=2))
    >>> arr.shape, arr.dtype.name, meta["axes"]["u"]["mapping"]
    ((2, 8, 3), 'uint8', 'mired')
    """
    if spec.magnitude_range is None:
        # A strip: quantise one row, then repeat the stored samples (not float64) H times.
        row = quantise(render_lut(settings, spec.replace(height=1)), spec)
        array = np.ascontiguousarray(np.broadcast_to(row, (spec.height,) + row.shape[1:]))
    else:
        array = quantise(render_lut(settings, spec), spec)
    return array, lut_metadata(settings, spec)


def write_lut(path, array: np.ndarray, metadata: dict, spec: LutSpec,
              overwrite: bool = False) -> Path:
    """Write a built texture atomically (temporary file in the folder, then rename).

    PNG: metadata in a ``tEXt`` chunk with keyword ``starkiln``; EXR: a string
    header attribute ``starkiln`` plus the standard ``chromaticities`` of the
    display. No timestamps: equal inputs give byte-identical files.

    Raises
    ------
    starkiln.engine.atomic.OutputExistsError
        ``path`` exists and ``overwrite`` is False (the old file is untouched).

    References
    ----------
    PNG (ISO/IEC 15948:2004, section 11.3.4.3 tEXt); OpenEXR file layout
    (attributes, "chromaticities").
    """
    from starkiln.engine.exports import image_files as imageio
    from starkiln.engine.atomic import atomic_path

    path = Path(path)
    if format_for_path(path) != spec.file_format:
        raise StarkilnError(f"{path}: extension does not match the texture format "
                            f"{spec.file_format!r}")
    text = metadata_json(metadata)
    with atomic_path(path, overwrite) as tmp:
        if spec.file_format == "png":
            imageio.write_png(tmp, array, {METADATA_KEY: text})
        else:
            chroma = _chromaticities(metadata)
            imageio.write_exr(tmp, array, {METADATA_KEY: text}, chromaticities=chroma)
    return path


def _chromaticities(metadata: dict):
    d = metadata.get("settings", {}).get("display")
    if not isinstance(d, dict):
        return None
    try:
        return tuple(float(v) for k in ("red_xy", "green_xy", "blue_xy", "white_xy") for v in d[k])
    except (KeyError, TypeError, ValueError):
        return None


def export_lut(settings, spec: LutSpec, path, overwrite: bool = False) -> dict:
    """Check the destination, build and write a texture; returns its metadata.

    The destination is checked first (:func:`starkiln.engine.atomic.check_writable`),
    so nothing is computed for a file that could not be written.

    References
    ----------
    :func:`build_lut`, :func:`write_lut`.
    """
    from starkiln.engine.atomic import check_writable

    if format_for_path(path) != spec.file_format:
        raise StarkilnError(f"{path}: extension does not match the texture format "
                            f"{spec.file_format!r}")
    check_writable(path, overwrite)
    array, metadata = build_lut(settings, spec)
    write_lut(path, array, metadata, spec, overwrite=overwrite)
    return metadata


def spec_from_metadata(metadata: dict, source: str = "texture") -> LutSpec:
    """The :class:`LutSpec` described by embedded texture metadata (for rebuilds).

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
        return LutSpec(width=tex["width"], height=tex["height"],
                       temperature_range_K=tuple(u["range"]), axis=u["mapping"],
                       magnitude_range=mags, alpha=tex["alpha"] == "intensity",
                       premultiply=tex["premultiplied"], file_format=tex["format"],
                       depth=tex["depth"])
    except (KeyError, TypeError, AttributeError) as exc:
        raise StarkilnError(f"{source}: not a Starkiln texture description "
                            f"(missing or bad {exc})") from None
    except StarkilnError as exc:
        raise StarkilnError(f"{source}: {exc}") from None
