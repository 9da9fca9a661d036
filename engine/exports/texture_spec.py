"""Lookup-texture layout: the axes, the texel-centre convention and the validated texture spec.

What a texture holds where (the u axis over temperature, the v axis over magnitude, texel
centres, channel layouts, sample types) is described in :mod:`starkiln.engine.exports.textures`
and ``docs/formats.md``; this module holds the numbers and the checks, and imports nothing
that renders, so the metadata reader and the writers can both depend on it.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from starkiln.engine.colour.temperature_axis import check_axis, temperature_from_u
from starkiln.engine.errors import InputRangeError, StarkilnError, finite_number
from starkiln.engine.eye.vision import MAGNITUDE_RANGE
from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K

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
    Texel-centre convention of GPU texture sampling (common practice; [OpenGL46]
    section 8.14.2).

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
    Magnitudes are already logarithmic in flux ([Pogson1856]), so the axis is
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
