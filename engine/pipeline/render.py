"""The one render path: settings + temperatures (+ magnitudes) -> display colours.

Every output of Starkiln calls :func:`render`. The chain, per star:

1. Planck spectrum of the temperature on the 360-830 nm grid (:mod:`starkiln.engine.colour.spectrum`).
2. Tristimulus values with the observer's colour-matching functions, by
   summation at 1 nm ([CIE15] section 7.1), scaled to Y = 1; chromaticity xy.
3. Chromatic adaptation from the scene white to the display white
   (:mod:`starkiln.engine.colour.whites`), then the display's XYZ -> RGB matrix ([RP177]).
4. Normalisation: the largest linear channel is 1 (default), or a fixed
   relative luminance.
5. ``in_gamut`` is recorded *before* mapping; gamut mapping (:mod:`starkiln.engine.colour.gamut`);
   for max-channel normalisation the largest channel is set to 1 again.
6. The display's transfer function gives ``rgb_encoded`` (0-1).

Working spaces (``Display.kind == "working-space"``, e.g. ``acescg``) are targets too: the
same chain, scene-linear. Their gamut method is ``none`` unless one is asked for, so step 5
keeps channels below 0 or above 1 as they are (normalisation still sets the brightness:
the largest channel is 1, or the luminance is ``luminance_Y``), and step 6 is the identity
(``rgb_encoded`` is ``rgb_linear``, nothing clamped). An asked-for method (``clip``,
``scale``, ``chroma``) maps into the working space's cube as it does for a display.

Temperatures are de-duplicated first, so a lookup grid of W temperatures x H
rows costs W spectra, not W x H.

The path of the light (:mod:`starkiln.engine.path`): the spectrum of step 1 is the one that
reaches the eye, ``Planck(T) x T_dust x T_air``. With the settings' fixed path the
transmission multiplies the weighting functions once per settings object (no extra cost per
star, still one spectrum per temperature); with per-star ``dust_ebv`` / ``altitude_deg``
arrays the distinct (T, E(B-V), altitude) triples are rendered, each with its own
transmission, in blocks. With no path (the defaults) the chain is exactly the one above.
``Rendered.extinction_mag`` holds what the path adds in magnitudes (synthetic photometry of
the arriving minus the emitted spectrum, :mod:`starkiln.engine.colour.photometry`).

Brightness (with magnitudes): the illuminance at the eye comes from the star's own arriving
spectrum through V(lambda) and V'(lambda), normalised by the magnitude's band with the Vega
zero point (:mod:`starkiln.engine.eye.brightness`); the magnitude given is the star's outside
the path.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from starkiln.engine.errors import InputRangeError
from starkiln.engine.eye import vision as nv
from starkiln.engine.colour.gamut import (GAMUT_TOLERANCE, NO_MAPPING, OKLAB_M1_INV, OKLAB_M2_INV,
                                         Oklab_to_XYZ, XYZ_to_Oklab, channel_max, channel_min,
                                         in_gamut, map_to_gamut, neutral_ab_per_lightness,
                                         scale_chroma)
from starkiln.engine.colour.observers import (KM_PHOTOPIC_LM_W, KM_SCOTOPIC_LM_W, XYZ_to_xy, cmfs, v_photopic,
                              v_scotopic, xy_to_XYZ)
from starkiln.engine.colour.displays import D65_4DIGIT, Display
from starkiln.engine.colour.quantisation import to_hex
from starkiln.engine.pipeline.path_table import StarPath
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars.temperature import check_temperature
from starkiln.engine.colour.spectrum import planck_weighted_sums
from starkiln.engine.colour.whites import adaptation_matrix, resolve_white

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
    display : the :class:`starkiln.engine.colour.displays.Display` the colours are for. ``rgb_encoded`` and
        ``rgb_dimmed_encoded`` are computed from it on first use where the render did not
        already have them (a display-linear texture never pays for encoding).
    magnitude : (...,) apparent visual magnitudes, or None when none were given.
    photopic_luminance_cd_m2 : (...,) luminance of the star's image at the eye (blur spot).
    scotopic_ratio : (...,) S/P ratio of the star's spectrum (K'_m V' / K_m V).
    cone_weight : (...,) CIE 191 adaptation coefficient m, 0 (rods only) to 1 (cones).
    saturation : (...,) chroma factor applied to the full colour (after compensation).
    compensation_reached : (...,) with ``compensate``, whether the saturation the dome audience
        perceives is within 1 % of the intended one and the colour fits the gamut (None
        otherwise; :func:`starkiln.engine.eye.vision.perceived_saturation`).
    extinction_mag : (...,) magnitudes the path of the light adds (dust and air), by synthetic
        photometry in the band of the magnitudes (V unless ``magnitude_band="G"``); None
        with no path. The magnitude at the eye is ``magnitude + extinction_mag``.
    Night-vision fields are None without magnitudes.
    """

    temperature_K: np.ndarray
    XYZ: np.ndarray
    xy: np.ndarray
    rgb_linear: np.ndarray
    in_gamut: np.ndarray
    intensity: np.ndarray
    display: Display
    magnitude: np.ndarray | None = None
    photopic_luminance_cd_m2: np.ndarray | None = None
    scotopic_ratio: np.ndarray | None = None
    cone_weight: np.ndarray | None = None
    saturation: np.ndarray | None = None
    compensation_reached: np.ndarray | None = None
    extinction_mag: np.ndarray | None = None
    #: Encoded values when the render already has them; otherwise computed on first use.
    encoded_: np.ndarray | None = field(default=None, repr=False, compare=False)
    dimmed_encoded_: np.ndarray | None = field(default=None, repr=False, compare=False)

    @property
    def rgb_encoded(self) -> np.ndarray:
        """``display.encode(rgb_linear)``, computed on first use (a linear EXR never needs it)."""
        if self.encoded_ is None:
            object.__setattr__(self, "encoded_", encode_for(self.display, self.rgb_linear))
        return self.encoded_

    @property
    def rgb_dimmed_encoded(self) -> np.ndarray:
        """``display.encode(rgb_linear * intensity)``, computed on first use."""
        if self.dimmed_encoded_ is None:
            if self.magnitude is None:
                value = self.rgb_encoded  # intensity 1 everywhere
            else:
                value = encode_for(self.display, self.rgb_linear * self.intensity[..., None])
            object.__setattr__(self, "dimmed_encoded_", value)
        return self.dimmed_encoded_

    def take(self, index) -> "Rendered":
        """The part ``index`` of this render (numpy indexing on the star axes of every array)."""
        values = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            values[f.name] = v if v is None or isinstance(v, Display) else v[index]
        return Rendered(**values)

    def hex(self) -> np.ndarray:
        """``#rrggbb`` strings from ``rgb_encoded`` (8-bit, rounded half up)."""
        return to_hex(self.rgb_encoded)


def encode_for(display: Display, rgb_linear) -> np.ndarray:
    """The values a target stores: the display's transfer function, or for a working space the
    scene-linear values themselves (no transfer function, nothing clamped).

    Parameters
    ----------
    display : Display
        A display (encoded 0-1 through its transfer function) or a working space.
    rgb_linear : array_like
        (..., 3) linear RGB of that target.

    Returns
    -------
    numpy.ndarray
        (..., 3) float64.

    References
    ----------
    [IEC61966-2-1], [BT1886], [ST2084] (the displays' transfer functions); a working space is
    scene-linear by definition ([S-2014-004], [ST2065-1]).

    Examples
    --------
    sRGB encodes linear 0.5 as 0.7354 ([IEC61966-2-1] section 5.2: 1.055 x 0.5^(1/2.4) - 0.055);
    ACEScg keeps -0.25 and 1.5 as they are:

    >>> from starkiln.engine.colour.displays import get_display
    >>> np.round(encode_for(get_display("srgb"), [0.5, 0.5, 0.5]), 4).tolist()
    [0.7354, 0.7354, 0.7354]
    >>> encode_for(get_display("acescg"), [-0.25, 1.5, 0.5]).tolist()
    [-0.25, 1.5, 0.5]
    """
    if display.kind == "working-space":
        return np.array(rgb_linear, dtype=np.float64)
    return display.encode(rgb_linear)


def blackbody_XYZ(temperature_K, observer: str = "cie1931") -> np.ndarray:
    """Tristimulus values (Y = 1) of Planckian radiators, vectorised and chunked.

    References
    ----------
    [CIE15] section 7.1 (summation at 1 nm); [Planck1901].

    Examples
    --------
    A 2856 K radiator is CIE illuminant A, at x = 0.44757, y = 0.40745 ([CIE15] Table T.3);
    the 1 nm sums here agree with the table within 1e-4:

    >>> from starkiln.engine.colour.observers import XYZ_to_xy
    >>> bool(np.allclose(XYZ_to_xy(blackbody_XYZ(2856.0)), [0.44757, 0.40745], atol=1e-4))
    True
    >>> blackbody_XYZ([2856.0, 6500.0]).shape
    (2, 3)
    """
    XYZ = planck_weighted_sums(temperature_K, cmfs(observer))
    return XYZ / XYZ[..., 1:2]


@dataclass(frozen=True)
class _Chain:
    """Matrices and constants derived once per settings object."""

    XYZ_to_rgb: np.ndarray  # adaptation then display matrix
    rgb_to_XYZ_D65: np.ndarray  # display RGB -> XYZ adapted to D65 (Bradford), for Oklab
    luminance_row: np.ndarray


@lru_cache(maxsize=64)
def _chain(settings: Settings) -> _Chain:
    disp = settings.display
    scene = resolve_white(settings.scene_white, settings.observer)
    cat = adaptation_matrix(scene.XYZ, disp.white_XYZ, settings.adaptation)
    to_rgb = disp.XYZ_to_rgb @ cat
    to_d65 = adaptation_matrix(disp.white_XYZ, xy_to_XYZ(np.array(D65_4DIGIT)), "bradford")
    return _Chain(to_rgb, to_d65 @ disp.rgb_to_XYZ, disp.rgb_to_XYZ[1].copy())


def render(settings: Settings, temperature_K, magnitude=None, *, dust_ebv=None,
           altitude_deg=None, magnitude_band: str = "V", path_sums: str = "exact") -> Rendered:
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
        magnitudes the night-vision model of :mod:`starkiln.engine.eye.vision` applies (unless
        ``settings.vision == "none"``); without, every star is at full colour and
        intensity 1. The magnitude is the star's outside the path of the light.
    dust_ebv : array_like, optional
        Per-star E(B-V), mag, 0-10, broadcast against ``temperature_K``; overrides
        ``settings.dust_ebv`` (law and R_V from the settings).
    altitude_deg : array_like, optional
        Per-star apparent altitudes, 0-90 degrees, broadcast against ``temperature_K``;
        overrides ``settings.altitude_deg`` (site and air from the settings).
    magnitude_band : ``V`` (default) or ``G``
        The band of ``magnitude``: Johnson V, or Gaia G (the brightness is then normalised
        through the G band, :mod:`starkiln.engine.eye.brightness`).
    path_sums : ``exact`` (default) or ``table``
        With per-star ``dust_ebv`` or ``altitude_deg``: one spectral pass per distinct star
        (``exact``), or the arriving light's sums interpolated on a lattice over temperature,
        E(B-V) and airmass (``table``, :mod:`starkiln.engine.pipeline.path_table`: within
        1.5e-4 of the exact sums, for catalogues and plates of many stars). The rest of the
        chain is the same. Without per-star values it changes nothing.

    Returns
    -------
    Rendered
        Arrays with the shape of ``temperature_K``.

    Raises
    ------
    starkiln.engine.errors.InputRangeError
        A temperature that is not finite or outside 500-100 000 K, a magnitude
        that is not finite or outside -30..+30, a per-star E(B-V) or altitude out of range,
        or an unknown magnitude band.

    References
    ----------
    [CIE15] (colorimetry); [RP177] (RGB matrices); [IEC61966-2-1],
    [ST2084] (transfer functions); module docstring for the chain.

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> str(render(Settings(), 6504.0).hex())
    '#fff9fe'
    """
    from starkiln.engine.eye.brightness import check_magnitude_band
    from starkiln.engine.path.chain import has_path

    t = check_temperature(temperature_K)
    mag = None if magnitude is None else nv.check_magnitude(magnitude)
    band = check_magnitude_band(magnitude_band)
    if path_sums not in ("exact", "table"):
        raise InputRangeError(f"path_sums {path_sums!r} is not accepted; exact or table")
    stars = None
    if has_path(settings, dust_ebv, altitude_deg):
        stars = StarPath.of(settings, t, dust_ebv, altitude_deg, band, path_sums == "table")
        t = stars.temperature_K
    size = t.size if mag is None else int(np.prod(np.broadcast_shapes(t.shape, mag.shape)))
    if size < _BLAS_SINGLE_FROM:
        return (_render_colour(settings, t, stars) if mag is None
                else _render_night(settings, t, mag, stars, band))
    from threadpoolctl import threadpool_limits

    # OpenBLAS splits even (n x 3) @ (3 x 3) products over threads and is then ~6x slower
    # here than on one; the engine parallelises its own blocks instead.
    with threadpool_limits(limits=1, user_api="blas"):
        return (_render_colour(settings, t, stars) if mag is None
                else _render_night(settings, t, mag, stars, band))


_PATH_ROWS = 8192  # distinct (T, E(B-V), altitude) per block of per-star transmissions
#: (8192 rows x 471 samples: a 31 MB transmission block, and two threads in the Planck sums)


def _spectral_sums(settings: Settings, t_u: np.ndarray, weights: np.ndarray, band: str,
                   stars: "StarPath | None", ebv_u=None, alt_u=None):
    """Sums of the arriving spectra of distinct stars against the colour-grid ``weights``, and
    the band integrals of the magnitudes' band: (sums (M, K), emitted (M,), arriving (M,) or
    None without a path).

    One spectral pass where it can be: the V band lies inside the colour grid, so its integral
    is one more column; the settings' fixed path multiplies the weights once.
    """
    from starkiln.engine.colour import photometry as ph
    from starkiln.engine.colour.cie_data import wavelengths_nm
    from starkiln.engine.eye.brightness import band_on_colour_grid, band_support
    from starkiln.engine.path.chain import path_transmission

    k = weights.shape[1]
    on_colour = band_on_colour_grid(band)
    wl_b, w_b, sl_b = band_support(band)

    def band_pass(t, transmission=None):
        return planck_weighted_sums(t, w_b, wl_b, transmission=transmission)

    if stars is None:
        if on_colour is None:
            return planck_weighted_sums(t_u, weights), band_pass(t_u), None
        sums = planck_weighted_sums(t_u, np.column_stack([weights, on_colour]))
        return sums[:, :k], sums[:, k], None
    cols = weights if on_colour is None else np.column_stack([weights, on_colour])
    grid = ph.PHOTOMETRY_GRID_NM
    lo = int(np.searchsorted(grid, wavelengths_nm()[0]))
    sl_c = slice(lo, lo + weights.shape[0])
    if ebv_u is None:  # the settings' fixed path: fold it into the weights once
        tr = path_transmission(settings, grid)
        if on_colour is None:
            sums = planck_weighted_sums(t_u, weights, transmission=tr[sl_c])
            return sums, band_pass(t_u), band_pass(t_u, tr[sl_b])
        tr_c = tr[sl_c]
        sums = planck_weighted_sums(t_u, np.column_stack([weights * tr_c[:, None],
                                                          on_colour * tr_c, on_colour]))
        return sums[:, :k], sums[:, k + 1], sums[:, k]
    # Per-star values: one transmission row per distinct star, in blocks.
    t_only, back = np.unique(t_u, return_inverse=True)
    # The emitted band integral depends on the temperature alone: the same pass as without a
    # path (so that a transmission of 1 gives exactly the plain render).
    emitted = (band_pass(t_only) if on_colour is None
               else planck_weighted_sums(t_only, cols)[:, k])[back.reshape(-1)]
    sums = np.empty((t_u.size, cols.shape[1]))
    arriving = np.empty(t_u.size)
    tr_grid = grid if on_colour is None else wavelengths_nm()  # V: the colour grid suffices
    if on_colour is not None:
        sl_c = slice(0, tr_grid.size)
    for start in range(0, t_u.size, _PATH_ROWS):
        sl = slice(start, start + _PATH_ROWS)
        alt_sl = None if alt_u is None else alt_u[sl]
        tr = path_transmission(settings, tr_grid, ebv_u[sl], alt_sl)
        sums[sl] = planck_weighted_sums(t_u[sl], cols, transmission=tr[:, sl_c])
        if on_colour is None:
            arriving[sl] = band_pass(t_u[sl], tr[:, sl_b])
    if on_colour is not None:
        arriving = sums[:, k]
    return sums[:, :k], emitted, arriving


@dataclass(frozen=True)
class _Distinct:
    """Steps 1-5 once per distinct star (temperature, or (T, E(B-V), altitude) triple)."""

    temperature_K: np.ndarray  # (M,) the temperature of each distinct star
    inverse: np.ndarray  # (n,) index of each star's distinct entry
    XYZ: np.ndarray
    rgb: np.ndarray
    in_gamut: np.ndarray
    sp: np.ndarray | None = None  # S/P of the arriving light (with magnitudes)
    zero_point_lux: np.ndarray | None = None  # photopic lux at magnitude 0 (with magnitudes)
    extinction_mag: np.ndarray | None = None  # what the path adds (None: no path)


def _unique_rows(cols):
    """The distinct rows of the columns ``cols`` (sorted as ``numpy.unique(..., axis=0)``
    sorts them) and each row's index among them; by ``numpy.lexsort``, several times faster
    than ``unique`` on rows (which sorts a structured view)."""
    rows = np.stack(cols, axis=1)
    order = np.lexsort(tuple(cols[::-1]))
    ordered = rows[order]
    new = np.ones(rows.shape[0], dtype=bool)
    new[1:] = np.any(ordered[1:] != ordered[:-1], axis=1)
    inverse = np.empty(rows.shape[0], dtype=np.intp)
    inverse[order] = np.cumsum(new) - 1
    return ordered[new], inverse


def _per_temperature(settings: Settings, t_flat: np.ndarray, with_sp: bool,
                     stars: "StarPath | None" = None, band: str = "V") -> _Distinct:
    """Steps 1-5 once per distinct temperature (and path): a :class:`_Distinct`.

    With ``with_sp`` the same spectral pass also integrates V and V' for the S/P ratio and the
    brightness. With a path, the sums are those of the arriving spectrum.
    """
    ebv_u = alt_u = None
    per_star = stars is not None and stars.ebv is not None
    weights = None
    if stars is not None or with_sp:
        weights = cmfs(settings.observer)
        if with_sp:
            weights = np.concatenate([weights, v_photopic()[:, None], v_scotopic()[:, None]],
                                     axis=1)
    got = None
    if per_star and stars.tabulated:
        from starkiln.engine.pipeline.path_table import tabulated_sums

        got = tabulated_sums(settings, weights, (settings.observer, with_sp), band, t_flat,
                             stars)
    if got is not None:  # every star its own row: no de-duplication (the lattice is cheap)
        unique, inverse = t_flat, np.arange(t_flat.size)
    elif per_star:
        cols = [t_flat, stars.ebv] + ([stars.alt] if stars.alt is not None else [])
        keys, inverse = _unique_rows(cols)
        unique, ebv_u = keys[:, 0].copy(), keys[:, 1].copy()
        alt_u = keys[:, 2].copy() if stars.alt is not None else None
    else:
        unique, inverse = np.unique(t_flat, return_inverse=True)
    sp_u = e0_u = ext_u = None
    if weights is None:
        XYZ_u = blackbody_XYZ(unique, settings.observer)
    else:
        sums, emitted, arriving = got if got is not None else _spectral_sums(
            settings, unique, weights, band, stars, ebv_u, alt_u)
        if arriving is not None:
            with np.errstate(divide="ignore"):
                ext_u = -2.5 * np.log10(arriving / emitted)
        XYZ_u = sums[:, :3] / sums[:, 1:2]
        if with_sp:
            from starkiln.engine.eye.brightness import zero_point_lux

            sp_u = _sp(sums[:, 3], sums[:, 4])
            e0_u = zero_point_lux(sums[:, 3], emitted, band)
    rgb_u, ok_u = _display_rgb(settings, XYZ_u)
    return _Distinct(unique, inverse, XYZ_u, rgb_u, ok_u, sp_u, e0_u, ext_u)


def _render_colour(settings: Settings, t: np.ndarray, stars: "StarPath | None" = None
                   ) -> Rendered:
    """Full colour per temperature (no magnitudes): steps 1-6 of the chain."""
    d = _per_temperature(settings, t.reshape(-1), False, stars)
    inverse, XYZ_u, rgb_u, ok_u = d.inverse, d.XYZ, d.rgb, d.in_gamut
    enc_u = encode_for(settings.display, rgb_u)
    shape = t.shape
    XYZ = XYZ_u[inverse].reshape(shape + (3,))
    encoded = enc_u[inverse].reshape(shape + (3,))  # encoded once per temperature: cheap
    return Rendered(
        temperature_K=t,
        XYZ=XYZ,
        xy=XYZ_to_xy(XYZ),
        rgb_linear=rgb_u[inverse].reshape(shape + (3,)),
        in_gamut=ok_u[inverse].reshape(shape),
        intensity=np.ones(shape),
        display=settings.display,
        extinction_mag=(None if d.extinction_mag is None
                        else d.extinction_mag[inverse].reshape(shape)),
        encoded_=encoded,
        dimmed_encoded_=encoded,
    )


def scotopic_ratio(temperature_K) -> np.ndarray:
    """S/P ratio of Planckian radiators: ``K'_m sum L V' / (K_m sum L V)``.

    References
    ----------
    [CIES010] (V, V', K_m = 683 lm/W, K'_m = 1700 lm/W).

    Examples
    --------
    An incandescent (2856 K) source has S/P = 1.41 (the figure lighting tables give for it;
    common practice); hotter light is richer in the blue that rods see:

    >>> np.round(scotopic_ratio([2856.0]), 2).tolist()
    [1.41]
    >>> bool(scotopic_ratio(6500.0) > scotopic_ratio(2856.0))
    True
    """
    sums = planck_weighted_sums(temperature_K, np.stack([v_photopic(), v_scotopic()], axis=-1))
    return _sp(sums[..., 0], sums[..., 1])


def _sp(photopic_sum, scotopic_sum):
    """S/P from the V- and V'-weighted spectral sums ([CIES010] efficacies)."""
    return KM_SCOTOPIC_LM_W * scotopic_sum / (KM_PHOTOPIC_LM_W * photopic_sum)


_NIGHT_CHUNK = 65536  # stars per block of the night-vision pass (a few MB per array)
_BLAS_SINGLE_FROM = 4096  # from this many stars, render with single-threaded BLAS


def _render_night(settings: Settings, t: np.ndarray, mag: np.ndarray,
                  stars: "StarPath | None" = None, band: str = "V") -> Rendered:
    """Colour and brightness at night: the chain plus :mod:`starkiln.engine.eye.vision`, broadcast T x m.

    The spectral work runs once per distinct temperature; the per-star vision work runs in
    blocks of ``_NIGHT_CHUNK`` stars on two threads (numpy releases the GIL in its kernels).
    """
    shape = np.broadcast_shapes(t.shape, mag.shape)
    d = _per_temperature(settings, t.reshape(-1), True, stars, band)
    unique, inverse, XYZ_u, rgb_u, ok_u, sp_u = (d.temperature_K, d.inverse, d.XYZ, d.rgb,
                                                 d.in_gamut, d.sp)
    e0_u, ext_u = d.zero_point_lux, d.extinction_mag
    chain = _chain(settings)
    lab_u = XYZ_to_Oklab(rgb_u @ chain.rgb_to_XYZ_D65.T)
    idx = np.broadcast_to(inverse.reshape(t.shape), shape).reshape(-1)
    m_flat = np.ascontiguousarray(np.broadcast_to(mag, shape), dtype=np.float64).reshape(-1)
    n = idx.size
    out = {"rgb": np.empty((n, 3)),
           "intensity": np.empty(n), "lp": np.empty(n), "cone": np.empty(n),
           "sat": np.empty(n), "reached": np.empty(n, dtype=bool)}

    def block(start: int) -> None:
        sl = slice(start, start + _NIGHT_CHUNK)
        res = _night_block(settings, chain, m_flat[sl], sp_u[idx[sl]], lab_u[idx[sl]],
                           e0_u[idx[sl]], None if ext_u is None else ext_u[idx[sl]])
        for key, value in res.items():
            out[key][sl] = value

    starts = range(0, n, _NIGHT_CHUNK)
    if n > 2 * _NIGHT_CHUNK:
        from concurrent.futures import ThreadPoolExecutor

        with ThreadPoolExecutor(2) as pool:  # render() has made BLAS single-threaded
            list(pool.map(block, starts))
    else:
        for start in starts:
            block(start)

    def grid(a, last=()):
        return a.reshape(shape + last)

    XYZ = grid(XYZ_u[idx], (3,))
    return Rendered(
        temperature_K=grid(unique[idx]),
        XYZ=XYZ,
        xy=XYZ_to_xy(XYZ),
        rgb_linear=grid(out["rgb"], (3,)),
        in_gamut=grid(ok_u[idx]),
        intensity=grid(out["intensity"]),
        display=settings.display,
        magnitude=grid(m_flat.copy()),
        photopic_luminance_cd_m2=grid(out["lp"]),
        scotopic_ratio=grid(sp_u[idx]),
        cone_weight=grid(out["cone"]),
        saturation=grid(out["sat"]),
        compensation_reached=grid(out["reached"]) if settings.compensate else None,
        extinction_mag=None if ext_u is None else grid(ext_u[idx]),
    )


def _night_block(settings: Settings, chain: "_Chain", mag, sp, lab, e0, ext=None) -> dict:
    """Night-vision steps for one block of stars (1-D arrays): see :mod:`starkiln.engine.eye.vision`.

    ``e0`` is each star's illuminance at magnitude 0 from its own arriving spectrum
    (:mod:`starkiln.engine.eye.brightness`); ``ext`` what the path adds in magnitudes (None:
    no path), so that the magnitude at the eye is ``mag + ext``.
    """
    gain = nv.aperture_gain(settings.aperture_mm, settings.pupil_mm, settings.transmission)
    omega = nv.blur_spot_solid_angle_sr(settings.blur_spot_arcmin)
    lp = nv.photopic_illuminance_lux(mag, gain, e0) / omega
    cone, lmes = nv.mesopic_cie191(lp, lp * sp)
    m_eye = (mag if ext is None else mag + ext) - 2.5 * np.log10(gain)
    if settings.vision == "mesopic":
        sat = nv.saturation_from_cone_weight(cone)
        m_eff = m_eye - 2.5 * np.log10(lmes / lp)
    else:
        sat = np.ones(mag.shape)
        m_eff = m_eye
    intensity = nv.intensity_from_magnitude(m_eff, settings.magnitude_bright,
                                            settings.magnitude_faint, settings.intensity_curve)
    rgb, factor, reached = _chroma_and_compensation(settings, chain, lab, sat, sp, intensity)
    _check_finite(settings, rgb, intensity, lp)
    return {"rgb": rgb, "intensity": intensity, "lp": lp, "cone": cone, "sat": factor,
            "reached": reached}


def _chroma_and_compensation(settings: Settings, chain: "_Chain", lab, sat, sp, intensity):
    """The night colour of each star: chroma factor ``sat``, then (with ``compensate``) the dome
    boost; returns RGB, the chroma factor achieved and whether compensation was reached."""
    if settings.compensate:
        return _compensate(settings, chain, lab, np.asarray(sat, dtype=np.float64), sp,
                           intensity)
    rgb, _, factor = _apply_chroma(settings, lab, sat, chain)
    return rgb, factor, np.zeros(np.shape(sat), dtype=bool)


#: Relative residual the compensation solve aims at (well inside the 1 % of "reached").
_SOLVE_TOLERANCE = 1e-3
#: Bound on the false-position steps of the compensation solve (each one vectorised).
_SOLVE_STEPS = 30
#: Interior points scanned for a bracket where the gamut limit itself falls short.
_SCAN_POINTS = 8
#: Upper end of the search for the gamut limit (a nearly white star can take a large factor).
_FACTOR_CAP = 1.0e4
_GAMUT_LIMIT_STEPS = 22  # log2 bisection over 33 octaves: to 5e-6 of the factor


def _dome_perceived(settings, chain, lab, factor, sp, intensity):
    """Colour shown with chroma ``factor`` and the saturation the dome audience perceives in it:
    (rgb, inside, achieved factor, perceived saturation)."""
    rgb, inside, achieved = _apply_chroma(settings, lab, factor, chain)
    lp_dome = intensity * settings.display.peak_luminance_cd_m2 * (rgb @ chain.luminance_row)
    return rgb, inside, achieved, nv.perceived_saturation(achieved, lp_dome, sp)


def _gamut_limit(settings, chain, lab):
    """Largest chroma factor (up to ``_FACTOR_CAP``) whose colour has no channel below 0.

    For every target, a working space without mapping too: the boost stops at the target's
    cube (a working space's own gamut); a colour outside it already is not boosted further.

    Bisection on log2 of the factor over [2^-20, _FACTOR_CAP], once per distinct colour (a
    texture repeats each temperature's colour on every magnitude row). The colours are those
    of :func:`_scaled_rgb`, written in Oklab's cone space: there the colour of factor f is
    ``lms' = p + f q + t(f) r`` (neutral part, chroma part, night tint with
    ``t(f) = night_tint (1 - min(f, 1))``), and RGB is a fixed matrix of ``lms'^3``
    ([Ottosson2020]), so each step is one cube and one 3 x 3 product.
    """
    n = lab.shape[0]
    # distinct colours: rows of one temperature are bitwise equal (checked, not assumed)
    first_L, inverse = np.unique(lab[:, 0], return_inverse=True)
    inverse = inverse.reshape(-1)
    distinct = np.empty((first_L.size, 3))
    distinct[inverse] = lab
    if not np.array_equal(distinct[inverse], lab):
        distinct, inverse = lab, np.arange(n)
    neutral = neutral_ab_per_lightness(chain.rgb_to_XYZ_D65)
    grey = distinct[:, :1] * np.array([1.0, neutral[0], neutral[1]])
    p = grey @ OKLAB_M2_INV.T
    q = (distinct - grey) @ OKLAB_M2_INV.T
    r = (settings.night_tint * np.array([0.0, *nv.NIGHT_TINT_AB])) @ OKLAB_M2_INV.T
    to_rgb = (np.linalg.inv(chain.rgb_to_XYZ_D65) @ OKLAB_M1_INV).T
    lo = np.full(distinct.shape[0], -20.0)
    hi = np.full(distinct.shape[0], np.log2(_FACTOR_CAP))
    for _ in range(_GAMUT_LIMIT_STEPS):
        mid = 0.5 * (lo + hi)
        f = np.exp2(mid)
        lms = p + f[:, None] * q + (1.0 - np.minimum(f, 1.0))[:, None] * r
        ok = channel_min((lms * lms * lms) @ to_rgb) >= -GAMUT_TOLERANCE
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
    return np.exp2(lo)[inverse]


def _compensate(settings: Settings, chain: "_Chain", lab, goal, sp, intensity):
    """Dome compensation: the chroma factor f whose perceived dome saturation P(f) equals ``goal``.

    P(f) = f * s(m_dome(f)) (:func:`starkiln.engine.eye.vision.perceived_saturation`) is
    continuous in f wherever the CIE 191 cone weight is, but not monotone (more chroma lowers
    the luminance at a brightest channel of 1). The solve, all stars at once:

    1. f = goal. P(goal) <= goal (s <= 1); where it is already within ``_SOLVE_TOLERANCE``
       (a bright dome, or goal 0) that is the answer.
    2. The others get the bracket [goal, f_max], f_max the gamut limit (bisection, no vision
       work). Where P(f_max) >= goal the bracket holds a root (intermediate value theorem);
       elsewhere ``_SCAN_POINTS`` geometric interior points are tried and the first one with
       P >= goal closes the bracket (skipped where even the white's luminance at f_max
       would fall short); where none does the goal is out of reach and the factor with the
       largest P tried is shown (ties: the smaller, so no boost where no colour is seen).
    3. False position with the Illinois modification on every bracket, at most
       ``_SOLVE_STEPS`` vectorised steps; a star leaves the active set when its residual is
       within ``_SOLVE_TOLERANCE``. Each step keeps a sign change inside the bracket, so the
       bracket never loses the root; the step bound makes the loop end.

    ``reached`` is then tested, not assumed: |P - goal| <= COMPENSATION_TOLERANCE * goal and
    the colour inside the gamut.
    """
    rgb, inside, achieved, p = _dome_perceived(settings, chain, lab, goal, sp, intensity)
    todo = np.flatnonzero(np.abs(p - goal) > _SOLVE_TOLERANCE * goal)
    if todo.size:
        lab_t, sp_t, i_t, g_t = lab[todo], sp[todo], intensity[todo], goal[todo]
        # the shown result of every star in ``todo``, updated wherever its factor changes
        shown = [rgb[todo], inside[todo], achieved[todo], p[todo]]

        def evaluate(idx, factor):
            """(rgb, inside, achieved, P) of stars ``idx`` at ``factor``, and P - goal."""
            out = _dome_perceived(settings, chain, lab_t[idx], factor, sp_t[idx], i_t[idx])
            return out, out[3] - g_t[idx]

        def show(idx, out, keep=None):
            """Stars ``idx`` (where ``keep``) take the result ``out`` as the one shown."""
            sel = idx if keep is None else idx[keep]
            for store, value in zip(shown, out):
                store[sel] = value if keep is None else value[keep]

        every = np.arange(todo.size)
        a = g_t.copy()
        ga = p[todo] - g_t
        # the fixed-point step f <- goal / s_dome(f) from f = goal, as a first guess below
        with np.errstate(divide="ignore", invalid="ignore"):
            guess = g_t * g_t / p[todo]
        b = np.maximum(_gamut_limit(settings, chain, lab_t), a)
        out, gb = evaluate(every, b)
        best_p = p[todo]  # shown so far: the factor goal itself
        keep = (out[3] > best_p) | (gb >= 0.0)
        show(every, out, keep)
        best_p = np.where(keep, out[3], best_p)
        bracket = gb >= 0.0
        # Where the gamut limit falls short, look inside for a point above the goal; not where
        # even the white's luminance (Y <= 1 at a brightest channel of 1) at the largest
        # factor falls short: P(f) <= f_max s(m(intensity x peak)) on the whole bracket.
        scan = np.flatnonzero(~bracket & (b > a))
        if scan.size:
            ceiling = nv.perceived_saturation(
                b[scan], i_t[scan] * settings.display.peak_luminance_cd_m2, sp_t[scan])
            scan = scan[ceiling >= g_t[scan]]
        if scan.size:
            prev_f, prev_g = a[scan].copy(), ga[scan].copy()
            found = np.zeros(scan.size, dtype=bool)
            ratio = b[scan] / a[scan]
            for j in range(1, _SCAN_POINTS + 1):
                fj = a[scan] * ratio ** (j / (_SCAN_POINTS + 1))
                # until bracketed, a star shows the point with the largest P so far (ties: the
                # smaller factor, so no boost where the dome shows no colour at any factor)
                out, gj = evaluate(scan, fj)
                keep = ~found & ((out[3] > best_p[scan]) | (gj >= 0.0))
                show(scan, out, keep)
                best_p[scan] = np.where(keep, out[3], best_p[scan])
                new = ~found & (gj >= 0.0)
                a[scan] = np.where(new, prev_f, a[scan])
                ga[scan] = np.where(new, prev_g, ga[scan])
                b[scan] = np.where(new, fj, b[scan])
                gb[scan] = np.where(new, gj, gb[scan])
                found |= new
                prev_f, prev_g = np.where(found, prev_f, fj), np.where(found, prev_g, gj)
            bracket[scan] = found
        # Illinois false position on the brackets (ga < 0 <= gb), first trial the guess.
        act = np.flatnonzero(bracket & (np.abs(gb) > _SOLVE_TOLERANCE * g_t))
        side = np.zeros(todo.size, dtype=np.int8)  # which end moved last: -1 a, +1 b
        for step in range(_SOLVE_STEPS):
            if act.size == 0:
                break
            fa, fb, va, vb = a[act], b[act], ga[act], gb[act]
            with np.errstate(divide="ignore", invalid="ignore"):
                c = guess[act] if step == 0 else fb - vb * (fb - fa) / (vb - va)
            c = np.where(np.isfinite(c) & (c > fa) & (c < fb), c, 0.5 * (fa + fb))
            out, gc = evaluate(act, c)
            show(act, out)
            up = gc >= 0.0
            # the root lies in [a, c] where gc >= 0, else in [c, b]
            ga_new = np.where(up & (side[act] == 1), 0.5 * va, va)  # Illinois: halve the stale end
            gb_new = np.where(~up & (side[act] == -1), 0.5 * vb, vb)
            b[act] = np.where(up, c, fb)
            gb[act] = np.where(up, gc, gb_new)
            a[act] = np.where(up, fa, c)
            ga[act] = np.where(up, ga_new, gc)
            side[act] = np.where(up, 1, -1)
            act = act[np.abs(gc) > _SOLVE_TOLERANCE * g_t[act]]
        rgb[todo], inside[todo], achieved[todo], p[todo] = shown
    reached = (np.abs(p - goal) <= nv.COMPENSATION_TOLERANCE * goal) & inside
    return rgb, achieved, reached


def same_stars_in(settings: Settings, rendered: Rendered) -> np.ndarray:
    """``render(settings, T, m).rgb_linear`` from a render of the same stars for another target.

    The spectral sums and the night-vision quantities do not depend on the target, so the
    tristimulus values, cone weights, S/P ratios and intensities of ``rendered`` give the
    colours for ``settings`` (typically the same look with a working space as the target)
    through steps 3-5 of the chain alone: no second spectral pass. The result equals a
    direct render with ``settings``, value for value.

    Parameters
    ----------
    settings : Settings
        The target to convert to; its look (observer, whites, adaptation, normalisation,
        night vision) must be that of the settings ``rendered`` was made with; only
        ``display`` and ``gamut`` may differ.
    rendered : Rendered
        The render of the stars (with or without magnitudes).

    Returns
    -------
    numpy.ndarray
        (..., 3) linear RGB of ``settings.display`` (scene-linear for a working space), the
        shape of ``rendered.rgb_linear``.

    References
    ----------
    As :func:`render`: [CIE15], [RP177], [CIE191] (the cone weight reused).

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> shown = render(Settings(), [3000.0, 9000.0])
    >>> aces = Settings(display="acescg")
    >>> bool(np.array_equal(same_stars_in(aces, shown), render(aces, [3000.0, 9000.0]).rgb_linear))
    True
    """
    shape = rendered.rgb_linear.shape
    t_flat = np.asarray(rendered.temperature_K, dtype=np.float64).reshape(-1)
    XYZ_flat = np.asarray(rendered.XYZ, dtype=np.float64).reshape(-1, 3)
    if rendered.extinction_mag is None:
        _, first, inverse = np.unique(t_flat, return_index=True, return_inverse=True)
    else:  # with a path of the light the same temperature may arrive as different light
        _, first, inverse = np.unique(XYZ_flat, axis=0, return_index=True, return_inverse=True)
        inverse = inverse.reshape(-1)
    rgb_u, _ = _display_rgb(settings, XYZ_flat[first])
    if rendered.magnitude is None:
        return rgb_u[inverse].reshape(shape)
    chain = _chain(settings)
    lab = XYZ_to_Oklab(rgb_u @ chain.rgb_to_XYZ_D65.T)[inverse]
    cone = np.asarray(rendered.cone_weight, dtype=np.float64).reshape(-1)
    sat = (nv.saturation_from_cone_weight(cone) if settings.vision == "mesopic"
           else np.ones(cone.shape))
    rgb, _, _ = _chroma_and_compensation(
        settings, chain, lab, sat, np.asarray(rendered.scotopic_ratio).reshape(-1),
        np.broadcast_to(rendered.intensity, shape[:-1]).reshape(-1))
    return rgb.reshape(shape)


def _check_finite(settings: Settings, *arrays) -> None:
    """Last guard of the night pass: NaN or infinity in a result is an error, never an output.

    The settings' ranges keep every result finite; this catches a combination they missed
    (IEEE 754 finite: neither infinite nor NaN).
    """
    if all(np.isfinite(a).all() for a in arrays):
        return
    raise InputRangeError(
        f"aperture_mm {settings.aperture_mm}, transmission {settings.transmission:g}, pupil_mm "
        f"{settings.pupil_mm:g} and blur_spot_arcmin {settings.blur_spot_arcmin:g} give no finite "
        "image luminance for these magnitudes; accepted: values that keep the instrument gain "
        "tau (D/d)^2 between 1e-6 and 1e10")


def _scaled_rgb(settings: Settings, lab: np.ndarray, factor, chain: "_Chain") -> np.ndarray:
    """Display-linear RGB (not yet mapped or normalised) of ``lab`` with its chroma about the
    display's neutral axis times ``factor``, plus the night tint."""
    neutral = neutral_ab_per_lightness(chain.rgb_to_XYZ_D65)
    lab_out = scale_chroma(lab, factor, neutral)
    if settings.night_tint:
        tint = settings.night_tint * (1.0 - np.minimum(np.maximum(factor, 0.0), 1.0))
        lab_out[..., 1] += tint * nv.NIGHT_TINT_AB[0]
        lab_out[..., 2] += tint * nv.NIGHT_TINT_AB[1]
    return Oklab_to_XYZ(lab_out) @ np.linalg.inv(chain.rgb_to_XYZ_D65).T


def _apply_chroma(settings: Settings, lab: np.ndarray, factor: np.ndarray, chain: "_Chain"):
    """Scale Oklab chroma by ``factor`` (plus the night tint), map into gamut, brightest channel 1.

    Chroma is measured from the display's neutral axis (:func:`starkiln.engine.colour.gamut.
    neutral_ab_per_lightness`), so ``factor`` 0 without tint is the display white rgb
    (1, 1, 1) ([RP177]) to rounding, for every display and working space.

    Returns the RGB, whether the scaled colour was inside the gamut before mapping, and the
    chroma factor achieved (``factor`` where inside; less where the gamut cut it).
    """
    rgb = _scaled_rgb(settings, lab, factor, chain)
    inside = in_gamut(rgb, upper=False)
    achieved = np.array(np.broadcast_to(factor, inside.shape), dtype=np.float64)
    if settings.gamut == NO_MAPPING:  # a working space without mapping: keep every value
        return rgb / channel_max(rgb)[..., None], inside, achieved
    if not np.all(inside):
        bad = ~inside
        neutral = neutral_ab_per_lightness(chain.rgb_to_XYZ_D65)
        rgb[bad] = map_to_gamut(rgb[bad], "chroma", chain.rgb_to_XYZ_D65, chain.luminance_row,
                                upper=False, neutral_ab=neutral)
        # same lightness: the chroma method keeps L; chroma measured from the neutral axis
        got = XYZ_to_Oklab(rgb[bad] @ chain.rgb_to_XYZ_D65.T)
        c_got = np.hypot(got[:, 1] - got[:, 0] * neutral[0], got[:, 2] - got[:, 0] * neutral[1])
        lab_bad = lab[bad]
        c_full = np.hypot(lab_bad[:, 1] - lab_bad[:, 0] * neutral[0],
                          lab_bad[:, 2] - lab_bad[:, 0] * neutral[1])
        with np.errstate(divide="ignore", invalid="ignore"):
            achieved[bad] = np.where(c_full > 1e-12, c_got / c_full, achieved[bad])
    rgb = np.maximum(rgb, 0.0)
    rgb /= channel_max(rgb)[..., None]
    return np.minimum(rgb, 1.0), inside, achieved


def display_rgb_from_XYZ(settings: Settings, XYZ):
    """Steps 3-5 of the chain for any tristimulus values: display RGB and in-gamut flags.

    The same adaptation, display matrix, normalisation and gamut mapping that stars get, for
    stimuli that are not Planckian (e.g. monochromatic light for a spectrum plot).

    Parameters
    ----------
    settings : Settings
    XYZ : array_like
        (..., 3) tristimulus values with Y = 1 in the settings' observer.

    Returns
    -------
    (rgb_linear, in_gamut) : (..., 3) display-linear RGB in the cube, (...,) bool before mapping.

    References
    ----------
    As :func:`render` ([CIE15]; [RP177]; :mod:`starkiln.engine.colour.gamut`).
    """
    XYZ = np.asarray(XYZ, dtype=np.float64)
    rgb, ok = _display_rgb(settings, XYZ.reshape(-1, 3))
    return rgb.reshape(XYZ.shape), ok.reshape(XYZ.shape[:-1])


def _display_rgb(settings: Settings, XYZ: np.ndarray):
    """Steps 3-5 of the chain for tristimulus values (Y = 1): RGB in the cube and in_gamut."""
    chain = _chain(settings)
    rgb = XYZ @ chain.XYZ_to_rgb.T
    upper = settings.normalisation == "luminance"
    if upper:
        rgb = rgb * settings.luminance_Y
    else:
        rgb = rgb / channel_max(rgb)[..., None]
    ok = in_gamut(rgb, upper)
    if settings.gamut == NO_MAPPING:  # a working space without mapping: keep every value
        return rgb, ok
    out = rgb.copy()
    bad = ~ok
    if np.any(bad):
        out[bad] = map_to_gamut(rgb[bad], settings.gamut, chain.rgb_to_XYZ_D65,
                                chain.luminance_row, upper)
    if not upper:
        out = out / channel_max(out)[..., None]
    return np.minimum(np.maximum(out, 0.0), 1.0), ok

def path_extinction_mag(settings, temperature_K, dust_ebv=None, altitude_deg=None,
                        band: str = "V") -> np.ndarray:
    """What the path of the light adds to stars' magnitudes, from the lattice.

    ``-2.5 log10(arriving / emitted)`` of the band integrals (synthetic photometry of the
    arriving and the emitted spectrum), as ``Rendered.extinction_mag`` gives it, for many
    stars at the cost of an interpolation: for the settings' fixed path (one node) or per-star
    E(B-V) and altitudes. Used where the colours come from a colour grid (which holds no
    extinction) and the flux is wanted.

    Parameters
    ----------
    settings : Settings
        The path (dust law, R_V, fixed E(B-V), altitude and air).
    temperature_K : array_like
        (n,) kelvin, 500-100 000.
    dust_ebv, altitude_deg : array_like, optional
        (n,) per-star E(B-V) (mag) and apparent altitudes (degrees), overriding the settings'.
    band : str
        The magnitudes' band, ``V`` (default) or ``G``.

    Returns
    -------
    numpy.ndarray
        (n,) magnitudes, >= 0; zeros without a path. Within 3e-5 mag of the exact pass
        (tests/test_path_table.py); :mod:`starkiln.engine.pipeline.path_table`.

    References
    ----------
    [BessellMurphy2012] eq. 1 (band integrals); module docstring.
    """
    from starkiln.engine.path.chain import has_path

    t = np.ascontiguousarray(check_temperature(temperature_K), dtype=np.float64).reshape(-1)
    if not has_path(settings, dust_ebv, altitude_deg):
        return np.zeros(t.size)
    stars = StarPath.of(settings, t, np.full(t.size, settings.dust_ebv)
                         if dust_ebv is None else dust_ebv,
                         None if altitude_deg is None and settings.altitude_deg is None
                         else np.full(t.size, settings.altitude_deg) if altitude_deg is None
                         else altitude_deg, band, True)
    stars = dataclasses.replace(stars, per_star_dust=dust_ebv is not None,
                                per_star_air=altitude_deg is not None)
    from starkiln.engine.pipeline.path_table import tabulated_sums

    got = tabulated_sums(settings, cmfs(settings.observer), (settings.observer, False), band,
                         stars.temperature_K.reshape(-1), stars)
    if got is None:  # too large a lattice: the exact pass
        return np.asarray(render(settings, t, dust_ebv=dust_ebv,
                                 altitude_deg=altitude_deg).extinction_mag).reshape(-1)
    _, emitted, arriving = got
    return -2.5 * np.log10(arriving / emitted)
