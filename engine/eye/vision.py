"""Night vision: how bright a star's image is at the eye, and how much colour the eye keeps.

The model, in order (all vectorised):

1. **Illuminance at the eye** from the apparent magnitude m:
   ``E_v = E_0 * 10^(-0.4 m) * tau * (D / d)^2`` lux, with ``d`` the
   dark-adapted pupil (7 mm by default, common practice), ``D`` the instrument
   aperture and ``tau`` its transmission (naked eye: ``D = d``, ``tau = 1``).
   The aperture gain is therefore ``5 log10(D / d)`` magnitudes.
   ``E_0``, the illuminance of a magnitude-0 star, comes from each star's own
   (arriving) spectrum through V(lambda), normalised by the V band with the Vega
   zero point (:mod:`starkiln.engine.eye.brightness`; the render path passes it
   to :func:`photopic_illuminance_lux`). The single ``E0_LUX = 2.54e-6 lx`` of
   P. Schlyter's "Radiometry and photometry in astronomy" [Schlyter] is kept as
   that function's default and for reference: published single values differ
   by tens of percent (2.1e-6 to 2.6e-6 lx), and the CALSPEC Vega spectrum gives
   about 2.6 % more than 2.54e-6 lx.
2. **Rod and cone signals**: the V band is taken as photopic (V(lambda)), so
   ``E_v`` is the photopic illuminance; the scotopic illuminance is
   ``E_s = E_v * S/P`` with the star's scotopic-to-photopic ratio
   ``S/P = K'_m int L V' dl / (K_m int L V dl)`` from its Planck spectrum
   (K_m = 683 lm/W, K'_m = 1700 lm/W; [CIES010]). A point source becomes
   a luminance by spreading it over an effective image, the *blur spot*, a
   disc of diameter ``blur_spot_arcmin`` (default 6 arcmin): ``L = E / Omega``.
   The blur spot stands for the dark-adapted eye's optical spread and
   neural pooling; its default is an appearance choice made so that the
   behaviour listed below holds (it is not a measured optical quantity).
3. **Mesopic weighting**: the [CIE191] recommended system (MES2): the
   adaptation coefficient ``m = a + b log10(L_mes)`` (a = 0.7670,
   b = 0.3334, clamped to 0..1) and the mesopic luminance
   ``L_mes = (m L_p + (1 - m) L_s V'(lambda_0)) / (m + (1 - m) V'(lambda_0))``
   with ``V'(lambda_0) = 683 / 1699`` are iterated to a fixed point; above
   5 cd/m2 ``m = 1`` (photopic), below 0.005 cd/m2 ``m = 0`` (scotopic). ``m``
   is called the *cone weight*. For very red light (S/P below about 0.3, stars
   cooler than about 1000 K) the MES2 equations fold: as such a star fades,
   the fixed point reached from m_0 = 0.5 drops to 0 in one step (at 508 K
   from m = 0.12, between magnitudes 3.5 and 3.6). That is the published
   procedure applied outside the S/P range of the lamps it was made for; the
   engine reproduces it rather than smoothing it (the saturation, m^2, jumps
   by only 0.015 there).
4. **Desaturation**: the saturation (chroma factor in Oklab, at constant
   lightness and hue) is ``s = m^2`` (``SATURATION_EXPONENT`` = 2): with no
   cone signal there is no colour, with full cone vision all of it. The
   square is an appearance choice, not a CIE result: point sources lose
   colour faster than the cone weight alone, and by common practice naked-eye
   star colour is seen only in stars of about magnitude 2 and brighter. Toward
   ``s = 0`` the colour goes to neutral, or, with ``night_tint > 0``, to a
   cool blue-grey: that tint is a *rendering convention* of film and dome
   work, not physics.
5. **Brightness (Purkinje shift)**: perceived brightness follows the mesopic
   luminance, so the effective magnitude is
   ``m_eff = m_V - 2.5 log10(tau (D/d)^2) - 2.5 log10(L_mes / L_p)``; a blue
   and a red star of equal m_V differ at night. ``vision = none`` drops the
   last term and the desaturation (the camera look).
6. **Intensity** 0-1 from ``m_eff`` by a tone curve between
   ``magnitude_bright`` (intensity 1) and ``magnitude_faint`` (intensity 0):
   ``linear`` in flux, ``log`` (linear in magnitude) or ``asinh`` ([Lupton1999],
   softened at the faint flux).
7. **Dome compensation** (optional): the audience sees the display itself in
   the dark, at ``intensity * peak_luminance_cd_m2 * Y`` of the displayed
   colour (Y its relative luminance), where their own cone weight ``m_dome``
   is low. The *perceived saturation* on the dome of a colour shown with chroma
   factor f is ``P(f) = f * s(m_dome(f))`` (:func:`perceived_saturation`);
   compensation solves ``P(f) = s`` for the intended ``s``. More chroma at a
   brightest channel of 1 lowers Y, hence ``m_dome``, so P is not monotone and
   the plain repetition ``f <- s / s_dome(f)`` can diverge or oscillate; the
   render path therefore solves the equation on a bracket (method and why it
   ends: ``starkiln.engine.pipeline.render._compensate``, docs/science.md).
   The intent counts as *reached* only where ``P`` is within 1 %
   (``COMPENSATION_TOLERANCE``) of ``s`` and the colour fits the gamut;
   otherwise the colour with the largest ``P`` tried is shown (no boost where
   no colour is seen at any factor) and reported out of reach. The displayed light's S/P is taken as the star's (the display
   reproduces the colour metamerically; its primaries' spectra are unknown):
   an approximation.

Behaviour with the defaults (common practice, tested): naked-eye stars of
magnitude 6 look colourless; stars of magnitude 1 and brighter show clear
colour; colour fades monotonically with faintness; a magnitude-5 star through
a 250 mm aperture shows clear colour again.

Caution: this is an *appearance* model for rendering. It is not a basis for
lighting-design or road-lighting compliance; for those follow [CIE191] as
adopted by local codes and licensed practice. For a dark-adapted dome
audience avoid sudden bright flashes (changes of several magnitudes at once).

References
----------
[CIE191]; [CIES010]; [Schlyter] (E0); [Pogson1856]; [Lupton1999];
[Ottosson2020] (Oklab).
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import InputRangeError, values_in_range

#: Illuminance of a zero-magnitude (V) star outside the atmosphere, lux ([Schlyter];
#: other published values 2.1e-6 to 2.6e-6, see the module docstring).
E0_LUX = 2.54e-6
#: [CIE191] MES2 constants.
MES2_A = 0.7670
MES2_B = 0.3334
MESOPIC_LOW_CD_M2 = 0.005
MESOPIC_HIGH_CD_M2 = 5.0
#: V'(lambda_0) at 555 nm, the ratio of the photopic to the scotopic efficacy: 683 / 1699 ([CIE191]).
V_PRIME_555 = 683.0 / 1699.0
MAGNITUDE_RANGE = (-30.0, 30.0)
VISIONS = ("mesopic", "none")
INTENSITY_CURVES = ("asinh", "log", "linear")
#: Exponent of the cone weight in the saturation, s = m ** 2 (appearance choice, step 4).
SATURATION_EXPONENT = 2.0
#: Largest relative error of the perceived dome saturation for "compensation reached" (step 7).
COMPENSATION_TOLERANCE = 0.01
#: Direction of the optional night tint in Oklab (a, b): a cool blue-grey; rendering convention.
NIGHT_TINT_AB = (-0.012, -0.045)
_ARCMIN_RAD = np.pi / (180.0 * 60.0)


def check_magnitude(magnitude) -> np.ndarray:
    """Validate apparent magnitudes: finite and within -30..+30; raise :class:`InputRangeError`."""
    lo, hi = MAGNITUDE_RANGE
    return values_in_range(magnitude, lo, hi, lambda v: f"magnitude {v:g} is outside the "
                                                       f"accepted range {lo:g} to +{hi:g}")


def aperture_gain(aperture_mm, pupil_mm: float = 7.0, transmission: float = 1.0):
    """Light-gathering factor of an instrument relative to the naked eye, ``tau (D / d)^2``.

    ``aperture_mm = None`` means the naked eye (gain 1). In magnitudes the gain
    is ``2.5 log10(gain) = 5 log10(D / d)`` for ``tau = 1`` (common practice).
    """
    if aperture_mm is None:
        return 1.0
    return transmission * (aperture_mm / pupil_mm) ** 2


def blur_spot_solid_angle_sr(blur_spot_arcmin: float) -> float:
    """Solid angle of a disc of the given angular diameter, ``pi (theta / 2)^2`` (small angle)."""
    r = 0.5 * blur_spot_arcmin * _ARCMIN_RAD
    return np.pi * r * r


def photopic_illuminance_lux(magnitude, gain=1.0, zero_point_lux=E0_LUX) -> np.ndarray:
    """Photopic illuminance at the eye of a star of visual magnitude ``m``: ``E0 10^(-0.4 m) gain``.

    ``zero_point_lux`` is the illuminance at magnitude 0: the render path passes each star's
    own, from its spectrum (:mod:`starkiln.engine.eye.brightness`); the default is the single
    E0 of [Schlyter].

    References: [Schlyter] for E0 (see the module docstring); [Pogson1856].
    """
    return (zero_point_lux * np.exp(-0.4 * np.log(10.0) * np.asarray(magnitude, dtype=np.float64))
            * gain)


def mesopic_cie191(photopic_cd_m2, scotopic_cd_m2, iterations: int = 400):
    """Adaptation coefficient m and mesopic luminance by the [CIE191] MES2 iteration.

    Parameters
    ----------
    photopic_cd_m2, scotopic_cd_m2 : array_like
        Photopic and scotopic luminances (scotopic in scotopic cd/m2, K'_m = 1700 lm/W).
    iterations : int
        Upper bound on fixed-point steps; each element stops when it changes < 1e-10.

    Returns
    -------
    (m, L_mes) : tuple of numpy.ndarray
        Cone weight 0..1 and mesopic luminance in cd/m2.

    References
    ----------
    [CIE191], section 4 (MES2): m_0 = 0.5; L_mes,n = (m_{n-1} L_p + (1 - m_{n-1})
    L_s V'(lambda_0)) / (m_{n-1} + (1 - m_{n-1}) V'(lambda_0)); m_n = a + b log10(L_mes,n),
    0 <= m <= 1; hence L_mes = L_p at and above 5 cd/m2 and L_mes = L_s at and below
    0.005 cd/m2.
    """
    lp = np.asarray(photopic_cd_m2, dtype=np.float64)
    ls = np.asarray(scotopic_cd_m2, dtype=np.float64)
    lp, ls = np.broadcast_arrays(lp, ls)
    v0 = V_PRIME_555
    # Work in log10: L_mes = L_p * f(m), f = (m + (1 - m) r v0) / (m + (1 - m) v0), r = L_s / L_p,
    # so each step is m = a + b log10(L_p) + b log10 f(m): one log per element and step.
    with np.errstate(divide="ignore", invalid="ignore"):
        base = MES2_A + MES2_B * np.log10(np.maximum(lp, 1e-300))
        rv0 = np.where(lp > 0.0, ls / lp, 1.0) * v0
    # The CIE 191 fixed-point iteration from m_0 = 0.5. Most elements settle in ~10 steps; a
    # few near the ends of the mesopic range converge slowly, so after every 4 steps only the
    # elements still moving are carried on (an active set). Newton's method was tried and
    # rejected: h(m) is not monotone at very low L_s / L_p and Newton can land on the wrong side
    # of the clamp.
    shape = lp.shape
    base_f, rv0_f = base.reshape(-1), rv0.reshape(-1)
    m_all = np.full(base_f.size, 0.5)
    active = np.arange(base_f.size)
    b_act, r_act, m = base_f, rv0_f, m_all.copy()
    for step in range(iterations):
        prev = m
        f = (m + (1.0 - m) * r_act) / (m + (1.0 - m) * v0)
        m = np.minimum(np.maximum(b_act + MES2_B * np.log10(f), 0.0), 1.0)
        if step % 4 == 3:
            moving = np.abs(m - prev) >= 1e-10
            m_all[active] = m
            if not moving.any():
                break
            active, b_act, r_act, m = active[moving], b_act[moving], r_act[moving], m[moving]
    else:
        m_all[active] = m
    m = m_all.reshape(shape)
    # With m clamped to 0..1 the limits come out of the equations themselves:
    # a + b log10(5) = 1.00004 -> m = 1, L_mes = L_p; a + b log10(0.005) < 0 -> m = 0, L_mes = L_s.
    lmes = lp * (m + (1.0 - m) * rv0) / (m + (1.0 - m) * v0)
    return m, lmes


def saturation_from_cone_weight(cone_weight) -> np.ndarray:
    """Chroma factor of the perceived colour from the cone weight: ``s = m^2`` (module docstring, step 4).

    References: an appearance choice documented in the module docstring (step 4), built on the
    [CIE191] adaptation coefficient.
    """
    m = np.clip(np.asarray(cone_weight, dtype=np.float64), 0.0, 1.0)
    return m**SATURATION_EXPONENT


def perceived_saturation(chroma_factor, luminance_cd_m2, scotopic_ratio) -> np.ndarray:
    """Saturation an observer perceives in a colour shown at a luminance: ``f * s(m(L, L S/P))``.

    Parameters
    ----------
    chroma_factor : array_like
        Chroma factor f of the shown colour (relative to the star's full colour).
    luminance_cd_m2 : array_like
        Photopic luminance of the shown colour at the eye (floored at 1e-12 cd/m2).
    scotopic_ratio : array_like
        S/P ratio of the light (scotopic luminance = ``L * S/P``).

    Returns
    -------
    numpy.ndarray
        ``f * saturation_from_cone_weight(m)``, m the [CIE191] MES2 cone weight at that light.

    References
    ----------
    [CIE191] (MES2, :func:`mesopic_cie191`); step 4 of the module docstring (``s = m^2``, an
    appearance choice).
    """
    lp = np.maximum(np.asarray(luminance_cd_m2, dtype=np.float64), 1e-12)
    cone, _ = mesopic_cie191(lp, lp * np.asarray(scotopic_ratio, dtype=np.float64))
    return np.asarray(chroma_factor, dtype=np.float64) * saturation_from_cone_weight(cone)


def intensity_from_magnitude(magnitude, bright: float, faint: float, curve: str = "asinh"):
    """Display intensity 0-1 from an (effective) magnitude by a tone curve.

    Parameters
    ----------
    magnitude : array_like
        Effective magnitudes.
    bright, faint : float
        Magnitudes mapped to intensity 1 and 0 (bright < faint).
    curve : str
        ``linear`` (in flux), ``log`` (linear in magnitude), ``asinh``
        (``asinh(f / f0)`` with the softening flux ``f0`` at ``faint``).

    Returns
    -------
    numpy.ndarray
        Intensities clipped to 0..1.

    References
    ----------
    [Pogson1856] magnitude scale; [Lupton1999] (asinh).
    """
    m = np.asarray(magnitude, dtype=np.float64)
    if curve == "log":
        out = (faint - m) / (faint - bright)
    else:
        f = np.exp(-0.4 * np.log(10.0) * (m - bright))  # 10^(-0.4 (m - bright)): 1 at bright
        f_faint = 10.0 ** (-0.4 * (faint - bright))
        if curve == "linear":
            out = (f - f_faint) / (1.0 - f_faint)
        elif curve == "asinh":
            out = (np.arcsinh(f / f_faint) - np.arcsinh(1.0)) / (np.arcsinh(1.0 / f_faint)
                                                                - np.arcsinh(1.0))
        else:
            raise InputRangeError(f"unknown intensity curve {curve!r}; accepted: "
                                  f"{', '.join(INTENSITY_CURVES)}")
    return np.clip(out, 0.0, 1.0)
