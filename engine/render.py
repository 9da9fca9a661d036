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

from engine import vision as nv
from engine.gamut import Oklab_to_XYZ, XYZ_to_Oklab, in_gamut, map_to_gamut
from engine.observers import KM_PHOTOPIC_LM_W, KM_SCOTOPIC_LM_W, XYZ_to_xy, cmfs, v_photopic, v_scotopic
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
    intensity : (...,) display intensity 0-1 from the magnitude's tone curve (1 without magnitudes).
    rgb_dimmed_encoded : (..., 3) ``encode(rgb_linear * intensity)``: the colour at its
        intensity, for premultiplied textures and previews.
    magnitude : (...,) apparent visual magnitudes, or None when none were given.
    photopic_luminance_cd_m2 : (...,) luminance of the star's image at the eye (blur spot).
    scotopic_ratio : (...,) S/P ratio of the star's spectrum (K'_m V' / K_m V).
    cone_weight : (...,) CIE 191 adaptation coefficient m, 0 (rods only) to 1 (cones).
    saturation : (...,) chroma factor applied to the full colour (after compensation).
    compensation_reached : (...,) with ``compensate``, whether the dome-compensated colour
        fitted in the gamut (None otherwise).
    Night-vision fields are None without magnitudes.
    """

    temperature_K: np.ndarray
    XYZ: np.ndarray
    xy: np.ndarray
    rgb_linear: np.ndarray
    rgb_encoded: np.ndarray
    in_gamut: np.ndarray
    intensity: np.ndarray
    rgb_dimmed_encoded: np.ndarray
    magnitude: np.ndarray | None = None
    photopic_luminance_cd_m2: np.ndarray | None = None
    scotopic_ratio: np.ndarray | None = None
    cone_weight: np.ndarray | None = None
    saturation: np.ndarray | None = None
    compensation_reached: np.ndarray | None = None

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
        Apparent visual magnitudes, -30..+30, broadcast against ``temperature_K``
        (e.g. temperatures (1, W) and magnitudes (H, 1) give (H, W) colours). With
        magnitudes the night-vision model of :mod:`engine.vision` applies (unless
        ``settings.vision == "none"``); without, every star is at full colour and
        intensity 1.

    Returns
    -------
    Rendered
        Arrays with the shape of ``temperature_K``.

    Raises
    ------
    engine.errors.InputRangeError
        A temperature that is not finite or outside 500-100 000 K, or a magnitude
        that is not finite or outside -30..+30.

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
    t = check_temperature(temperature_K)
    if magnitude is None:
        return _render_colour(settings, t)
    return _render_night(settings, t, nv.check_magnitude(magnitude))


def _render_colour(settings: Settings, t: np.ndarray, with_sp: bool = False):
    """Full colour per temperature (no magnitudes): steps 1-6 of the chain.

    With ``with_sp`` the same spectral pass also integrates V and V' and the S/P ratio
    per temperature is returned beside the result.
    """
    unique, inverse = np.unique(t.reshape(-1), return_inverse=True)
    if with_sp:
        weights = np.concatenate([cmfs(settings.observer), v_photopic()[:, None],
                                  v_scotopic()[:, None]], axis=1)
        sums = planck_weighted_sums(unique, weights)
        XYZ_u = sums[:, :3] / sums[:, 1:2]
        sp_u = KM_SCOTOPIC_LM_W * sums[:, 4] / (KM_PHOTOPIC_LM_W * sums[:, 3])
    else:
        XYZ_u = blackbody_XYZ(unique, settings.observer)
    rgb_u, ok_u = _display_rgb(settings, XYZ_u)
    enc_u = settings.display.encode(rgb_u)
    shape = t.shape
    XYZ = XYZ_u[inverse].reshape(shape + (3,))
    encoded = enc_u[inverse].reshape(shape + (3,))
    result = Rendered(
        temperature_K=t,
        XYZ=XYZ,
        xy=XYZ_to_xy(XYZ),
        rgb_linear=rgb_u[inverse].reshape(shape + (3,)),
        rgb_encoded=encoded,
        in_gamut=ok_u[inverse].reshape(shape),
        intensity=np.ones(shape),
        rgb_dimmed_encoded=encoded,
    )
    if with_sp:
        return result, sp_u[inverse].reshape(shape)
    return result


def scotopic_ratio(temperature_K) -> np.ndarray:
    """S/P ratio of Planckian radiators: ``K'_m sum L V' / (K_m sum L V)``.

    References
    ----------
    CIE S 010:2004 (V, V', K_m = 683 lm/W, K'_m = 1700 lm/W).
    """
    sums = planck_weighted_sums(temperature_K, np.stack([v_photopic(), v_scotopic()], axis=-1))
    return KM_SCOTOPIC_LM_W * sums[..., 1] / (KM_PHOTOPIC_LM_W * sums[..., 0])


def _render_night(settings: Settings, t: np.ndarray, mag: np.ndarray) -> Rendered:
    """Colour and brightness at night: the chain plus :mod:`engine.vision`, broadcast T x m."""
    shape = np.broadcast_shapes(t.shape, mag.shape)
    full, sp_t = _render_colour(settings, t, with_sp=True)
    chain = _chain(settings)
    tb = np.broadcast_to(t, shape)
    mb = np.broadcast_to(mag, shape)
    sp = np.broadcast_to(sp_t, shape)

    gain = nv.aperture_gain(settings.aperture_mm, settings.pupil_mm, settings.transmission)
    omega = nv.blur_spot_solid_angle_sr(settings.blur_spot_arcmin)
    lp = nv.photopic_illuminance_lux(mb, gain) / omega
    ls = lp * sp
    cone, lmes = nv.mesopic_cie191(lp, ls)
    m_eye = mb - 2.5 * np.log10(gain)
    if settings.vision == "mesopic":
        sat = nv.saturation_from_cone_weight(cone)
        m_eff = m_eye - 2.5 * np.log10(lmes / lp)
    else:
        sat = np.ones(shape)
        m_eff = m_eye
    intensity = nv.intensity_from_magnitude(m_eff, settings.magnitude_bright,
                                            settings.magnitude_faint, settings.intensity_curve)

    to_xyz = chain.oklab_xyz_from_rgb
    lab = np.broadcast_to(XYZ_to_Oklab(full.rgb_linear @ to_xyz.T), shape + (3,))
    reached = None
    rgb, inside, factor = _apply_chroma(settings, lab, sat, to_xyz, chain)
    if settings.compensate:
        # The audience sees each pixel at intensity x peak x its relative luminance, with their
        # own cone weight there. Boost chroma by s / s_dome; s_dome depends on the boosted
        # colour's luminance, so repeat a few times (converges in 2-3 passes).
        for _ in range(4):
            y_rel = rgb @ chain.luminance_row
            lp_dome = np.maximum(intensity * settings.display.peak_luminance_cd_m2 * y_rel, 1e-12)
            cone_dome, _ = nv.mesopic_cie191(lp_dome, lp_dome * sp)
            s_dome = nv.saturation_from_cone_weight(cone_dome)
            with np.errstate(divide="ignore", invalid="ignore"):
                wanted = np.where(s_dome > 0.0, sat / s_dome, np.inf)
            reachable = np.isfinite(wanted)
            rgb, inside, factor = _apply_chroma(settings, lab,
                                                np.where(reachable, wanted, 1.0e6), to_xyz, chain)
        reached = reachable & inside
    enc = settings.display.encode(rgb)
    dimmed = settings.display.encode(rgb * intensity[..., None])
    return Rendered(
        temperature_K=np.array(tb),
        XYZ=np.array(np.broadcast_to(full.XYZ, shape + (3,))),
        xy=np.array(np.broadcast_to(full.xy, shape + (2,))),
        rgb_linear=rgb,
        rgb_encoded=enc,
        in_gamut=np.array(np.broadcast_to(full.in_gamut, shape)),
        intensity=intensity,
        rgb_dimmed_encoded=dimmed,
        magnitude=np.array(mb),
        photopic_luminance_cd_m2=lp,
        scotopic_ratio=np.array(sp),
        cone_weight=cone,
        saturation=np.array(np.broadcast_to(factor, shape)),
        compensation_reached=reached,
    )


def _apply_chroma(settings: Settings, lab: np.ndarray, factor: np.ndarray, to_xyz, chain):
    """Scale Oklab chroma by ``factor`` (plus the night tint), map into gamut, brightest channel 1.

    Returns the RGB, whether the scaled colour was inside the gamut before mapping, and the
    chroma factor achieved (``factor`` where inside; less where the gamut cut it).
    """
    tint = settings.night_tint * (1.0 - np.clip(factor, 0.0, 1.0))
    lab_out = np.stack([lab[..., 0],
                        factor * lab[..., 1] + tint * nv.NIGHT_TINT_AB[0],
                        factor * lab[..., 2] + tint * nv.NIGHT_TINT_AB[1]], axis=-1)
    rgb = Oklab_to_XYZ(lab_out) @ np.linalg.inv(to_xyz).T
    inside = in_gamut(rgb, upper=False)
    achieved = np.array(np.broadcast_to(factor, inside.shape), dtype=np.float64)
    if not np.all(inside):
        bad = ~inside
        rgb[bad] = map_to_gamut(rgb[bad], "chroma", to_xyz, chain.luminance_row, upper=False)
        got = XYZ_to_Oklab(rgb[bad] @ to_xyz.T)  # same lightness: the chroma method keeps L
        c_full = np.hypot(lab[..., 1], lab[..., 2])[bad]
        with np.errstate(divide="ignore", invalid="ignore"):
            achieved[bad] = np.where(c_full > 1e-12, np.hypot(got[:, 1], got[:, 2]) / c_full,
                                     achieved[bad])
    rgb = np.maximum(rgb, 0.0)
    return np.clip(rgb / rgb.max(axis=-1, keepdims=True), 0.0, 1.0), inside, achieved


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
