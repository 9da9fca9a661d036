"""The one render path: settings + temperatures (+ magnitudes) -> display colours.

Every output of Starkiln calls :func:`render`. The chain, per star:

1. Planck spectrum of the temperature on the 360-830 nm grid (:mod:`engine.spectrum`).
2. Tristimulus values with the observer's colour-matching functions, by
   summation at 1 nm (CIE 15:2004 section 7.1), scaled to Y = 1; chromaticity xy.
3. Chromatic adaptation from the scene white to the display white
   (:mod:`engine.whites`), then the display's XYZ -> RGB matrix (SMPTE RP 177).
4. Normalisation: the largest linear channel is 1 (default), or a fixed
   relative luminance.
5. ``in_gamut`` is recorded *before* mapping; gamut mapping (:mod:`engine.gamut`);
   for max-channel normalisation the largest channel is set to 1 again.
6. The display's transfer function gives ``rgb_encoded`` (0-1).

Temperatures are de-duplicated first, so a lookup grid of W temperatures x H
rows costs W spectra, not W x H.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from engine.gamut import in_gamut, map_to_gamut
from engine.observers import XYZ_to_xy, cmfs
from engine.settings import Settings
from engine.sources import check_temperature
from engine.spectrum import planck_weighted_sums
from engine.whites import adaptation_matrix, resolve_white

@dataclass(frozen=True)
class Rendered:
    """Colours of a batch of stars; every array has the input's shape (+ a last axis of 3 or 2).

    Attributes
    ----------
    temperature_K : (...,) temperatures rendered.
    XYZ : (..., 3) tristimulus values of the star's light, Y = 1, chosen observer.
    xy : (..., 2) chromaticity of the star's light (chosen observer's diagram).
    rgb_linear : (..., 3) display-linear RGB after gamut mapping and normalisation.
    rgb_encoded : (..., 3) after the display's transfer function, 0-1.
    in_gamut : (...,) whether the colour was inside the display gamut before mapping.
    """

    temperature_K: np.ndarray
    XYZ: np.ndarray
    xy: np.ndarray
    rgb_linear: np.ndarray
    rgb_encoded: np.ndarray
    in_gamut: np.ndarray

    def hex(self) -> np.ndarray:
        """``#rrggbb`` strings from ``rgb_encoded`` (8-bit, rounded half up)."""
        return to_hex(self.rgb_encoded)


def to_hex(rgb_encoded) -> np.ndarray:
    """``#rrggbb`` strings from encoded RGB in 0-1 (value * 255, rounded; common practice)."""
    q = to_8bit(rgb_encoded)
    flat = q.reshape(-1, 3)
    out = np.array([f"#{r:02x}{g:02x}{b:02x}" for r, g, b in flat.tolist()], dtype="<U7")
    return out.reshape(q.shape[:-1])


def to_8bit(rgb_encoded) -> np.ndarray:
    """Encoded 0-1 -> uint8 by ``floor(v * 255 + 0.5)`` (common practice)."""
    return np.floor(np.clip(np.asarray(rgb_encoded), 0.0, 1.0) * 255.0 + 0.5).astype(np.uint8)


def blackbody_XYZ(temperature_K, observer: str = "cie1931") -> np.ndarray:
    """Tristimulus values (Y = 1) of Planckian radiators, vectorised and chunked.

    References
    ----------
    CIE 15:2004 section 7.1 (summation at 1 nm); Planck (1901).
    """
    XYZ = planck_weighted_sums(temperature_K, cmfs(observer))
    return XYZ / XYZ[..., 1:2]


@dataclass(frozen=True)
class _Chain:
    """Matrices and constants derived once per settings object."""

    XYZ_to_rgb: np.ndarray  # adaptation then display matrix
    oklab_xyz_from_rgb: np.ndarray
    luminance_row: np.ndarray


@lru_cache(maxsize=64)
def _chain(settings: Settings) -> _Chain:
    disp = settings.display
    scene = resolve_white(settings.scene_white, settings.observer)
    cat = adaptation_matrix(scene.XYZ, disp.white_XYZ, settings.adaptation)
    to_rgb = disp.XYZ_to_rgb @ cat
    d65 = np.array([0.3127 / 0.3290, 1.0, (1 - 0.3127 - 0.3290) / 0.3290])
    to_d65 = adaptation_matrix(disp.white_XYZ, d65, "bradford")
    return _Chain(to_rgb, to_d65 @ disp.rgb_to_XYZ, disp.rgb_to_XYZ[1].copy())


def render(settings: Settings, temperature_K, magnitude=None) -> Rendered:
    """Display colours of stars: the single render path of Starkiln.

    Parameters
    ----------
    settings : Settings
        The validated settings (observer, whites, adaptation, display, gamut...).
    temperature_K : array_like
        Effective temperatures in kelvin, 500-100 000 K; any shape.
    magnitude : array_like, optional
        Reserved for apparent magnitudes (night-vision model); must be None here.

    Returns
    -------
    Rendered
        Arrays with the shape of ``temperature_K``.

    Raises
    ------
    engine.errors.InputRangeError
        A temperature that is not finite or outside 500-100 000 K.

    References
    ----------
    CIE 15:2004 (colorimetry); SMPTE RP 177-1993 (RGB matrices); IEC 61966-2-1,
    SMPTE ST 2084 (transfer functions); module docstring for the chain.

    Examples
    --------
    >>> from engine.settings import Settings
    >>> str(render(Settings(), 6504.0).hex())
    '#fff9fe'
    """
    if magnitude is not None:
        raise NotImplementedError("magnitudes arrive with the night-vision model")
    t = check_temperature(temperature_K)
    unique, inverse = np.unique(t.reshape(-1), return_inverse=True)
    XYZ_u = blackbody_XYZ(unique, settings.observer)
    rgb_u, ok_u = _display_rgb(settings, XYZ_u)
    enc_u = settings.display.encode(rgb_u)
    shape = t.shape
    XYZ = XYZ_u[inverse].reshape(shape + (3,))
    return Rendered(
        temperature_K=t,
        XYZ=XYZ,
        xy=XYZ_to_xy(XYZ),
        rgb_linear=rgb_u[inverse].reshape(shape + (3,)),
        rgb_encoded=enc_u[inverse].reshape(shape + (3,)),
        in_gamut=ok_u[inverse].reshape(shape),
    )


def _display_rgb(settings: Settings, XYZ: np.ndarray):
    """Steps 3-5 of the chain for tristimulus values (Y = 1): RGB in the cube and in_gamut."""
    chain = _chain(settings)
    rgb = XYZ @ chain.XYZ_to_rgb.T
    upper = settings.normalisation == "luminance"
    if upper:
        rgb = rgb * settings.luminance_Y
    else:
        rgb = rgb / rgb.max(axis=-1, keepdims=True)
    ok = in_gamut(rgb, upper)
    out = rgb.copy()
    bad = ~ok
    if np.any(bad):
        out[bad] = map_to_gamut(rgb[bad], settings.gamut, chain.oklab_xyz_from_rgb,
                                chain.luminance_row, upper)
    if not upper:
        out = out / out.max(axis=-1, keepdims=True)
    return np.clip(out, 0.0, 1.0), ok
