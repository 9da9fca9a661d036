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
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.colour.temperature_axis import AXIS_MAPPINGS, check_axis, temperature_from_u, u_from_temperature  # noqa: F401 (re-exported for texture callers)
from starkiln.engine.errors import InputRangeError, StarkilnError, finite_number
from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K
from starkiln.engine.eye.vision import MAGNITUDE_RANGE

FORMATS = {".png": "png", ".exr": "exr"}
DEPTHS = {"png": (8, 16), "exr": (32,)}
MAX_SIDE = 16384
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
        a, b = value
    except (TypeError, ValueError):
        raise StarkilnError(f"{what} {value!r} must be two numbers A:B") from None
    return (finite_number(a, f"{what} start", InputRangeError),
            finite_number(b, f"{what} end", InputRangeError))


def format_for_path(path) -> str:
    """Texture format from the file extension: ``.png`` -> ``png``, ``.exr`` -> ``exr``."""
    from starkiln.engine.atomic import format_for_extension

    return format_for_extension(path, FORMATS, "texture")


@dataclass(frozen=True)
class TextureSpec:
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

    def replace(self, **changes) -> "TextureSpec":
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


def lut_axes(spec: TextureSpec):
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


def render_lut(settings, spec: TextureSpec) -> np.ndarray:
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


def texture_samples(values: np.ndarray, spec: TextureSpec) -> np.ndarray:
    """Float texture values -> the stored sample type of ``spec`` (uint8, uint16, float32).

    Integer samples are the code values of :func:`starkiln.engine.colour.quantisation.quantise`
    (``floor(v * (2^n - 1) + 0.5)``, common practice); EXR keeps 32-bit floats (OpenEXR).
    """
    if spec.depth == 32:
        return np.asarray(values, dtype=np.float32)
    from starkiln.engine.colour.quantisation import quantise

    return quantise(values, spec.depth)


def build_lut(settings, spec: TextureSpec):
    """The texture a file holds: stored samples and the metadata to embed.

    This is the function the command line and the window's export dialog
    both call; :func:`write_lut` then writes it deterministically.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    spec : TextureSpec

    Returns
    -------
    (numpy.ndarray, dict)
        ``(H, W, C)`` samples of ``spec.sample_type`` (row 0 = top of the
        image), and the metadata of
        :func:`starkiln.engine.exports.texture_metadata.lut_metadata`.

    References
    ----------
    Module docstring (axes, layouts, quantisation).

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> arr, meta = build_lut(Settings(), TextureSpec(width=8, height=2))
    >>> arr.shape, arr.dtype.name, meta["axes"]["u"]["mapping"]
    ((2, 8, 3), 'uint8', 'mired')
    """
    if spec.magnitude_range is None:
        # A strip: quantise one row, then repeat the stored samples (not float64) H times.
        row = texture_samples(render_lut(settings, spec.replace(height=1)), spec)
        array = np.ascontiguousarray(np.broadcast_to(row, (spec.height,) + row.shape[1:]))
    else:
        array = texture_samples(render_lut(settings, spec), spec)
    from starkiln.engine.exports.texture_metadata import lut_metadata

    return array, lut_metadata(settings, spec)


def write_lut(path, array: np.ndarray, metadata: dict, spec: TextureSpec,
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
    from starkiln.engine.atomic import atomic_path
    from starkiln.engine.exports import image_files as imageio
    from starkiln.engine.exports.texture_metadata import METADATA_KEY, chromaticities, metadata_json

    path = Path(path)
    if format_for_path(path) != spec.file_format:
        raise StarkilnError(f"{path}: extension does not match the texture format "
                            f"{spec.file_format!r}")
    text = metadata_json(metadata)
    with atomic_path(path, overwrite) as tmp:
        if spec.file_format == "png":
            imageio.write_png(tmp, array, {METADATA_KEY: text})
        else:
            chroma = chromaticities(metadata)
            imageio.write_exr(tmp, array, {METADATA_KEY: text}, chromaticities=chroma)
    return path


def export_texture(settings, spec: TextureSpec, path, overwrite: bool = False) -> dict:
    """Check the destination, build and write a texture; returns its metadata.

    The one texture export: the command line (``starkiln lut``) and the window both call it.
    The destination is checked first (:func:`starkiln.engine.atomic.check_writable`),
    so nothing is computed for a file that could not be written.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    spec : TextureSpec
    path : path-like
        ``.png`` or ``.exr``, matching ``spec.file_format``.
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    dict
        The embedded metadata (:func:`starkiln.engine.exports.texture_metadata.lut_metadata`).

    References
    ----------
    :func:`build_lut`, :func:`write_lut`.
    """
    from starkiln.engine.atomic import check_writable

    if format_for_path(path) != spec.file_format:
        raise StarkilnError(f"{path}: extension does not match the texture format "
                            f"{spec.file_format!r}")
    check_writable(path, overwrite)
    try:
        array, metadata = build_lut(settings, spec)
    except MemoryError:
        raise StarkilnError(f"not enough memory for a {spec.width} x {spec.height} texture"
                            f"{' with magnitudes' if spec.magnitude_range else ''}; try a "
                            "smaller size") from None
    write_lut(path, array, metadata, spec, overwrite=overwrite)
    return metadata
