"""Gamut mapping of display-linear RGB into the display's cube.

Methods:

- ``clip``: clamp each channel to [0, 1] (changes hue where a channel is cut).
- ``scale``: keep the dominant wavelength: negative channels are lifted by
  mixing in the least amount of display white at equal luminance (a straight
  line toward the white in the chromaticity diagram), then the intensity is
  scaled down so that no channel exceeds 1, which keeps the chromaticity.
- ``chroma``: reduce chroma in Oklab at constant lightness and hue, by
  bisection, until every channel is inside; the achromatic colour of the same
  lightness is always inside, so the search always ends inside.
- ``none``: no mapping at all; channels below 0 or above 1 are kept. Only a working space
  (a scene-linear target) holds such values, so only working spaces accept it, and it is
  their default: a target's default method is :func:`default_gamut_method`.

Oklab: [Ottosson2020], "A perceptual color space for image processing",
https://bottosson.github.io/posts/oklab/ (matrices M1, M2 of that post). The
display's XYZ is adapted from its own white to D65 (Bradford) first, so the
display white is Oklab-neutral to about 1e-4: the published matrices, rounded to ten
digits, send D65 to a, b of a few 1e-5 to 1e-4 rather than exactly 0. Where an exact neutral
matters (the night desaturation toward white), chroma is measured from the *neutral axis*
instead, the Oklab coordinates of the display's greys: rgb (g, g, g) has Oklab
``g^(1/3) (L_w, a_w, b_w)`` (Oklab is a cube root of a linear map), so the grey of lightness L
sits at ``(a, b) = L (a_w, b_w) / L_w`` (:func:`neutral_ab_per_lightness`,
:func:`scale_chroma`). rgb (1, 1, 1) is the display white by definition of its RGB matrix
([RP177]), so zero chroma about that axis is exactly that white.
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import SettingsError

GAMUT_METHODS = ("clip", "scale", "chroma")
#: No gamut mapping: values outside the cube are kept (working spaces only).
NO_MAPPING = "none"
#: Every value the ``gamut`` setting accepts.
GAMUT_CHOICES = GAMUT_METHODS + (NO_MAPPING,)

#: [Ottosson2020] Oklab, XYZ (D65) -> LMS.
OKLAB_M1 = np.array([[0.8189330101, 0.3618667424, -0.1288597137],
                     [0.0329845436, 0.9293118715, 0.0361456387],
                     [0.0482003018, 0.2643662691, 0.6338517070]])
#: [Ottosson2020] Oklab, LMS' -> Lab.
OKLAB_M2 = np.array([[0.2104542553, 0.7936177850, -0.0040720468],
                     [1.9779984951, -2.4285922050, 0.4505937099],
                     [0.0259040371, 0.7827717662, -0.8086757660]])
OKLAB_M1_INV = np.linalg.inv(OKLAB_M1)
OKLAB_M2_INV = np.linalg.inv(OKLAB_M2)

#: Tolerance on the cube faces for "in gamut" (numerical noise, not colour).
GAMUT_TOLERANCE = 1e-9
_BISECTION_STEPS = 24  # halves the interval to 6e-8 of the chroma


def check_gamut_method(name: str, allow_none: bool = False) -> str:
    """Canonical gamut method or :class:`SettingsError` (accepted: clip, scale, chroma; and
    ``none`` when ``allow_none``)."""
    key = str(name).strip().lower()
    accepted = GAMUT_CHOICES if allow_none else GAMUT_METHODS
    if key not in accepted:
        raise SettingsError(f"unknown gamut method {name!r}; accepted: {', '.join(accepted)}")
    return key


def default_gamut_method(display) -> str:
    """The gamut method a target gets when none is asked for.

    ``chroma`` for a display (its code values must lie in 0-1); ``none`` for a working space:
    a scene-linear working space keeps what the colour is, and the colour-management system
    downstream decides how to show it (common practice in scene-referred pipelines).

    Parameters
    ----------
    display : starkiln.engine.colour.displays.Display

    Returns
    -------
    str

    References
    ----------
    Module docstring (the methods).
    """
    return NO_MAPPING if display.kind == "working-space" else "chroma"


def XYZ_to_Oklab(XYZ) -> np.ndarray:
    """CIE XYZ (D65, Y = 1 for white) to Oklab ([Ottosson2020]).

    Examples
    --------
    The table of example values in [Ottosson2020]: the D65 white (0.950, 1.000, 1.089) is
    L = 1, a = b = 0; XYZ (1, 0, 0) is (0.450, 1.236, -0.019); (0, 1, 0) is (0.922, -0.671,
    0.263); (0, 0, 1) is (0.153, -1.415, -0.449):

    >>> np.round(XYZ_to_Oklab([0.950, 1.000, 1.089]), 3).tolist()
    [1.0, -0.0, -0.0]
    >>> np.round(XYZ_to_Oklab(np.eye(3)), 3).tolist()
    [[0.45, 1.236, -0.019], [0.922, -0.671, 0.263], [0.153, -1.415, -0.449]]
    """
    lms = np.asarray(XYZ, dtype=np.float64) @ OKLAB_M1.T
    return np.cbrt(lms) @ OKLAB_M2.T


def Oklab_to_XYZ(Lab) -> np.ndarray:
    """Oklab to CIE XYZ (D65), inverse of :func:`XYZ_to_Oklab` ([Ottosson2020]).

    Examples
    --------
    Back from the [Ottosson2020] example value of XYZ (0, 1, 0):

    >>> np.round(Oklab_to_XYZ([0.922, -0.671, 0.263]), 2).tolist()
    [0.0, 1.0, 0.0]
    """
    lms = np.asarray(Lab, dtype=np.float64) @ OKLAB_M2_INV.T
    return (lms * lms * lms) @ OKLAB_M1_INV.T


def neutral_ab_per_lightness(rgb_to_XYZ_D65) -> np.ndarray:
    """Oklab (a, b) per unit lightness of the display's greys: ``(a_w, b_w) / L_w`` of rgb (1, 1, 1).

    Parameters
    ----------
    rgb_to_XYZ_D65 : numpy.ndarray
        (3, 3) display RGB -> XYZ adapted to D65.

    Returns
    -------
    numpy.ndarray
        (2,): the grey of Oklab lightness L is at ``(a, b) = L * result`` (module docstring).

    References
    ----------
    [Ottosson2020] (Oklab); [RP177] (rgb (1, 1, 1) is the white of the RGB matrix).
    """
    white = XYZ_to_Oklab(np.asarray(rgb_to_XYZ_D65, dtype=np.float64) @ np.ones(3))
    return white[1:] / white[0]


def scale_chroma(lab, factor, neutral_ab=None) -> np.ndarray:
    """Oklab colours with their chroma about the neutral axis times ``factor``, L and hue kept.

    Parameters
    ----------
    lab : array_like
        (..., 3) Oklab.
    factor : array_like
        (...,) chroma factors (0: the grey of the same lightness).
    neutral_ab : array_like, optional
        (2,) from :func:`neutral_ab_per_lightness`; None measures chroma from a = b = 0 (the
        published Oklab origin).

    Returns
    -------
    numpy.ndarray
        (..., 3).

    References
    ----------
    [Ottosson2020]; the module docstring (the neutral axis).
    """
    lab = np.asarray(lab, dtype=np.float64)
    f = np.asarray(factor, dtype=np.float64)
    if neutral_ab is None:
        return np.stack([lab[..., 0], f * lab[..., 1], f * lab[..., 2]], axis=-1)
    na = lab[..., 0] * neutral_ab[0]
    nb = lab[..., 0] * neutral_ab[1]
    return np.stack([lab[..., 0], na + f * (lab[..., 1] - na), nb + f * (lab[..., 2] - nb)],
                    axis=-1)


def channel_min(rgb) -> np.ndarray:
    """Smallest of the three channels (elementwise; much faster than ``min(axis=-1)`` on (..., 3))."""
    return np.minimum(np.minimum(rgb[..., 0], rgb[..., 1]), rgb[..., 2])


def channel_max(rgb) -> np.ndarray:
    """Largest of the three channels (elementwise; much faster than ``max(axis=-1)`` on (..., 3))."""
    return np.maximum(np.maximum(rgb[..., 0], rgb[..., 1]), rgb[..., 2])


def in_gamut(rgb, upper: bool) -> np.ndarray:
    """Whether each RGB triple lies in the cube (no channel < 0, and none > 1 if ``upper``)."""
    rgb = np.asarray(rgb)
    ok = channel_min(rgb) >= -GAMUT_TOLERANCE
    if upper:
        ok &= channel_max(rgb) <= 1.0 + GAMUT_TOLERANCE
    return ok


def _bisect_chroma(base, step, lms_to_rgb, upper, block=16384):
    """The largest chroma factor in [0, 1] (to 2^-_BISECTION_STEPS) whose colour is inside the
    cube, by bisection: ``(n,)`` for LMS' ``base + s * step`` given as ``(3, n)`` rows.

    Every row's interval halves at each step, so the lower end alone is kept (``lo +
    2^-(k+1)`` is the midpoint); rows go in cache-sized blocks.
    """
    n = base.shape[1]
    lo = np.zeros(n)
    for a in range(0, n, block):
        b0, s0 = base[:, a:a + block], step[:, a:a + block]
        low = lo[a:a + block]
        half = 0.5
        for _ in range(_BISECTION_STEPS):
            mid = low + half
            lms = b0 + mid * s0
            lms *= lms * lms
            rgb = lms_to_rgb @ lms
            ok = np.minimum(np.minimum(rgb[0], rgb[1]), rgb[2]) >= -GAMUT_TOLERANCE
            if upper:
                ok &= np.maximum(np.maximum(rgb[0], rgb[1]), rgb[2]) <= 1.0 + GAMUT_TOLERANCE
            np.copyto(low, mid, where=ok)
            half *= 0.5
    return lo


def map_to_gamut(rgb, method: str, rgb_to_XYZ_D65: np.ndarray, luminance_row: np.ndarray,
                 upper: bool, neutral_ab=None) -> np.ndarray:
    """Bring display-linear RGB inside the cube by the named method.

    Parameters
    ----------
    rgb : array_like
        (..., 3) display-linear RGB; the display white is (1, 1, 1).
    method : str
        ``clip``, ``scale`` or ``chroma`` (module docstring).
    rgb_to_XYZ_D65 : numpy.ndarray
        (3, 3) display RGB -> XYZ adapted to D65 (the display's normalised primary matrix,
        then Bradford to D65), for the Oklab step.
    luminance_row : numpy.ndarray
        (3,) the Y row of the display's RGB -> XYZ matrix (sums to 1).
    upper : bool
        Also enforce channels <= 1 (otherwise only >= 0; the caller
        renormalises the brightest channel to 1 afterwards).
    neutral_ab : array_like, optional
        ``chroma`` only: reduce chroma toward the display's neutral axis
        (:func:`neutral_ab_per_lightness`) rather than toward a = b = 0.

    Returns
    -------
    numpy.ndarray
        (..., 3) RGB with every channel in [0, 1] (or [0, inf) if not ``upper``).

    References
    ----------
    [Ottosson2020] for Oklab; [Morovic2008]
    chapter 10 (clipping toward the lightness axis), for the approach.
    """
    method = check_gamut_method(method)
    rgb = np.asarray(rgb, dtype=np.float64)
    if method == "clip":
        return np.clip(rgb, 0.0, 1.0 if upper else np.inf)
    if method == "scale":
        lum = rgb @ luminance_row
        low = np.minimum(channel_min(rgb), 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(low < 0.0, -low / (lum - low), 0.0)
        out = (1.0 - t)[..., None] * rgb + (t * lum)[..., None]
        out = np.maximum(out, 0.0)
        if upper:
            top = channel_max(out)[..., None]
            out = np.where(top > 1.0, out / np.maximum(top, 1e-300), out)
        return out
    # chroma: bisection on the chroma factor s in [0, 1] at constant L and hue
    XYZ_D65_to_rgb = np.linalg.inv(rgb_to_XYZ_D65)
    lab = XYZ_to_Oklab(rgb @ rgb_to_XYZ_D65.T)
    inside_now = in_gamut(rgb, upper)
    # scale_chroma is affine in the factor and Oklab -> LMS' linear, so each trial's LMS' is
    # base + s * step; cubed, one matrix takes LMS to display RGB (Oklab_to_XYZ, then XYZ ->
    # RGB, folded together).
    grey = scale_chroma(lab, np.zeros(lab.shape[:-1]), neutral_ab)
    base = (grey @ OKLAB_M2_INV.T).reshape(-1, 3).T.copy()            # (3, n)
    step = ((lab - grey) @ OKLAB_M2_INV.T).reshape(-1, 3).T.copy()
    lo = _bisect_chroma(base, step, XYZ_D65_to_rgb @ OKLAB_M1_INV, upper)
    lo = lo.reshape(rgb.shape[:-1])
    s = np.where(inside_now, 1.0, lo)
    out = Oklab_to_XYZ(scale_chroma(lab, s, neutral_ab)) @ XYZ_D65_to_rgb.T
    out = np.where(inside_now[..., None], rgb, out)
    return np.clip(out, 0.0, 1.0 if upper else np.inf)
