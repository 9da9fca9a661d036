"""Data for the window's views, computed by the engine so that the window draws only.

The window (:mod:`gui`) may not compute colour. Everything it draws that is not
a plain render of a temperature comes from here, and every colour here goes
through the same chain as :func:`starkiln.engine.pipeline.render.render`:

- :class:`MiredScale`: slider positions evenly spaced in mired (reciprocal
  megakelvin, ``1e6 / T``; common practice: equal mired steps look roughly
  equally large across the range, [WyszeckiStiles1982] section 3.11).
- :func:`spectral_band_colours`: display colours of monochromatic stimuli
  (the visible band of the spectrum plot), through the display chain and the
  settings' gamut mapping.
- :func:`planckian_locus_xy`, :func:`chromaticity_diagram`: the lines and
  points of the chromaticity diagram ([CIE15] section 7.3).
- :func:`planck_curve`, :func:`efficiency_overlays`: the spectrum plot;
  :func:`arriving_curve`: the same star's light as it arrives through dust and air.
- :func:`magnitude_ladder`: the magnitudes of the brightness strip.

The sky preview (demo cluster and its picture) is :mod:`starkiln.engine.plotdata.sky`.

References
----------
[CIE15] (locus, Planckian radiators, summation);
[Planck1901]; [WyszeckiStiles1982], section 3.11 (mired).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from starkiln.engine.errors import InputRangeError
from starkiln.engine.colour.temperature_axis import temperature_from_u, temperature_to_mired
from starkiln.engine.colour.temperature_axis import u_from_temperature
from starkiln.engine.colour.observers import XYZ_to_xy, check_observer, cmfs, spectral_locus_xy, v_photopic
from starkiln.engine.colour.observers import v_scotopic
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.pipeline.render import blackbody_XYZ, display_rgb_from_XYZ
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars.temperature import check_temperature
from starkiln.engine.colour.spectrum import peak_wavelength_nm, planck_radiance
from starkiln.engine.colour.cie_data import wavelengths_nm
from starkiln.engine.colour.whites import resolve_white

#: The visible band marked on the spectrum plot, nm ([CIE15] tabulates 380-780 nm as the
#: range of the visible spectrum that matters for colorimetry; common practice).
VISIBLE_BAND_NM = (380.0, 780.0)
#: Default range of the temperature slider and strips, K: brown-dwarf-cool to O-star-hot
#: (covers M9 to O5 dwarfs, common practice); the number entry accepts the full engine range.
AUDITION_RANGE_K = (1000.0, 40000.0)
#: Wavelength range of the spectrum plot, nm: wider than the eye's so that the Planck peak of
#: cool stars (near-infrared) and the ultraviolet side of hot stars show.
SPECTRUM_PLOT_RANGE_NM = (150.0, 2500.0)
#: Temperatures labelled on the Planckian locus (round values; common practice).
LOCUS_TICKS_K = (1000.0, 1500.0, 2000.0, 3000.0, 4000.0, 5000.0, 6500.0, 10000.0, 20000.0)
#: Wavelengths labelled on the spectral locus, nm.
SPECTRAL_TICKS_NM = (460.0, 480.0, 490.0, 500.0, 520.0, 540.0, 560.0, 580.0, 600.0, 620.0)



@dataclass(frozen=True)
class MiredScale:
    """Integer positions 0..``steps`` evenly spaced in mired between two temperatures.

    The one place that turns slider positions into temperatures and back; the
    arithmetic is the ``mired`` mapping of :mod:`starkiln.engine.colour.temperature_axis`
    (position = u * ``steps``). Position 0 is the coolest end (``temperature_min_K``),
    ``steps`` the hottest, so that the temperature rises to the right of a slider.

    Parameters
    ----------
    temperature_min_K, temperature_max_K : float
        The ends, within the engine's 500-100 000 K.
    mired_per_step : float
        Width of one position in mired.

    References
    ----------
    [WyszeckiStiles1982], section 3.11: equal mired differences are roughly
    equally perceptible along the Planckian locus (common practice).

    Examples
    --------
    >>> s = MiredScale(1000.0, 40000.0, 0.25)
    >>> s.steps, float(s.temperature_at(0)), float(s.temperature_at(s.steps))
    (3900, 1000.0, 40000.0)
    """

    temperature_min_K: float = AUDITION_RANGE_K[0]
    temperature_max_K: float = AUDITION_RANGE_K[1]
    mired_per_step: float = 0.25

    def __post_init__(self):
        check_temperature([self.temperature_min_K, self.temperature_max_K])
        if not self.temperature_max_K > self.temperature_min_K:
            raise InputRangeError(f"temperature range {self.temperature_min_K:g}-"
                                  f"{self.temperature_max_K:g} K is empty")
        if not self.mired_per_step > 0:
            raise InputRangeError(f"mired_per_step {self.mired_per_step:g} must be positive")

    @property
    def range_K(self) -> tuple[float, float]:
        """The ends ``(temperature_min_K, temperature_max_K)``, the axis range of
        :mod:`starkiln.engine.colour.temperature_axis`."""
        return (float(self.temperature_min_K), float(self.temperature_max_K))

    @property
    def steps(self) -> int:
        """Number of steps between the ends (the last position)."""
        span = temperature_to_mired(self.temperature_min_K) - temperature_to_mired(
            self.temperature_max_K)
        return int(round(float(span) / self.mired_per_step))

    def temperature_at(self, position) -> np.ndarray:
        """Temperature in kelvin at a (possibly fractional) position; the ends are exact."""
        u = np.asarray(position, dtype=np.float64) / self.steps
        return temperature_from_u(u, self.range_K, "mired")

    def fraction_of(self, temperature_K) -> np.ndarray:
        """Position of a temperature as a fraction 0..1 of the scale (clipped)."""
        return np.clip(u_from_temperature(temperature_K, self.range_K, "mired"), 0.0, 1.0)

    def position_of(self, temperature_K) -> np.ndarray:
        """Nearest integer position of a temperature (clipped to the ends)."""
        return np.rint(self.fraction_of(temperature_K) * self.steps).astype(int)

    def temperatures_K(self) -> np.ndarray:
        """Temperatures of every position 0..``steps`` (the slider's table of positions)."""
        return self.temperature_at(np.arange(self.steps + 1))

    def cell_temperatures(self, cells: int) -> np.ndarray:
        """Temperatures at the centres of ``cells`` equal-mired cells spanning the scale."""
        centres = (np.arange(cells) + 0.5) / cells * self.steps
        return self.temperature_at(centres)


@dataclass(frozen=True)
class BandColours:
    """Display colours of monochromatic stimuli (see :func:`spectral_band_colours`)."""

    wavelength_nm: np.ndarray
    rgb_linear: np.ndarray
    rgb_encoded: np.ndarray
    rgb_8bit: np.ndarray
    in_gamut: np.ndarray


def spectral_band_colours(settings: Settings, wavelength_nm=None) -> BandColours:
    """Display colours of monochromatic light, gamut-mapped by the settings' method.

    The tristimulus values of a monochromatic stimulus are the observer's
    colour-matching functions at its wavelength ([CIE15] section 7.1);
    they go through the render path's display chain (adaptation from the
    scene white, display matrix, gamut mapping) and the display's transfer
    function. The band is shown at full brightness: max-channel normalisation
    is used whatever the settings say, so that every hue is visible.

    Parameters
    ----------
    settings : Settings
        Observer, whites, display and gamut method.
    wavelength_nm : array_like, optional
        Wavelengths within the tables' 360-830 nm; default 380-780 nm at 1 nm.

    Returns
    -------
    BandColours
        ``rgb_linear``, ``rgb_encoded`` (0-1) and ``rgb_8bit`` (uint8) of shape
        (N, 3); ``in_gamut`` (N,) before mapping (False for every spectral
        colour on real displays, whose triangles lie inside the locus).

    Raises
    ------
    InputRangeError
        A wavelength outside 360-830 nm.

    References
    ----------
    [CIE15] sections 7.1 and 7.3; [RP177]; the gamut methods of
    :mod:`starkiln.engine.colour.gamut`.
    """
    wl = (np.arange(VISIBLE_BAND_NM[0], VISIBLE_BAND_NM[1] + 0.5)
          if wavelength_nm is None else np.asarray(wavelength_nm, dtype=np.float64))
    grid = wavelengths_nm()
    bad = ~np.isfinite(wl) | (wl < grid[0]) | (wl > grid[-1])
    if np.any(bad):
        raise InputRangeError(f"wavelength {wl[bad].flat[0]:g} nm is outside the tabulated "
                              f"{grid[0]:g}-{grid[-1]:g} nm")
    table = cmfs(settings.observer)
    XYZ = np.stack([np.interp(wl, grid, table[:, i]) for i in range(3)], axis=-1)
    # Scale each stimulus to Y = 1 (the chain's input); the tiny ends keep their direction.
    XYZ = XYZ / np.maximum(XYZ[..., 1:2], 1e-12)
    full = settings if settings.normalisation == "max-channel" else settings.replace(
        normalisation="max-channel")
    flat = XYZ.reshape(-1, 3)
    rgb, ok = display_rgb_from_XYZ(full, flat)
    enc = full.display.encode(rgb)
    shape = wl.shape
    return BandColours(wl, rgb.reshape(shape + (3,)), enc.reshape(shape + (3,)),
                       to_8bit(enc).reshape(shape + (3,)), ok.reshape(shape))


def planckian_locus_xy(observer: str, temperature_K) -> np.ndarray:
    """Chromaticities of Planckian radiators, the Planckian locus.

    Parameters
    ----------
    observer : str
        ``cie1931`` or ``cie1964``.
    temperature_K : array_like
        Temperatures, 500-100 000 K; any shape.

    Returns
    -------
    numpy.ndarray
        (..., 2) x, y by summation at 1 nm over 360-830 nm.

    References
    ----------
    [CIE15] sections 3.1 and 7.3; [Planck1901].

    Examples
    --------
    >>> [round(float(v), 4) for v in planckian_locus_xy("cie1931", 2856.0)]  # ~CIE illuminant A
    [0.4475, 0.4074]
    """
    t = check_temperature(temperature_K)
    return XYZ_to_xy(blackbody_XYZ(t, check_observer(observer)))


@dataclass(frozen=True)
class ChromaticityDiagram:
    """Everything drawn on the chromaticity diagram, in the observer's x, y.

    Attributes
    ----------
    observer : the observer whose diagram this is.
    spectral_locus_xy : (N, 2) closed outline (spectral locus and purple line).
    spectral_tick_nm, spectral_tick_xy : labelled wavelengths and their points.
    planckian_temperature_K, planckian_xy : dense Planckian locus.
    tick_temperature_K, tick_xy : labelled temperatures on it.
    gamut_xy : (4, 2) the display's primaries R, G, B, R (closed triangle).
    scene_white_xy, display_white_xy : (2,) the two whites.
    """

    observer: str
    spectral_locus_xy: np.ndarray
    spectral_tick_nm: np.ndarray
    spectral_tick_xy: np.ndarray
    planckian_temperature_K: np.ndarray
    planckian_xy: np.ndarray
    tick_temperature_K: np.ndarray
    tick_xy: np.ndarray
    gamut_xy: np.ndarray
    scene_white_xy: np.ndarray
    display_white_xy: np.ndarray


def chromaticity_diagram(settings: Settings, temperature_min_K: float = 1000.0,
                         temperature_max_K: float = 100000.0,
                         tick_temperatures_K=LOCUS_TICKS_K) -> ChromaticityDiagram:
    """Lines and points of the chromaticity diagram for a settings object.

    Parameters
    ----------
    settings : Settings
        Observer (which diagram), scene white and display.
    temperature_min_K, temperature_max_K : float
        Extent of the Planckian locus drawn (mired-spaced, 400 points).
    tick_temperatures_K : sequence of float
        Temperatures to label on the Planckian locus.

    Returns
    -------
    ChromaticityDiagram

    Notes
    -----
    The display's primaries and white are specified in CIE 1931 x, y (as the
    display standards give them) and are drawn as given, also on the 10 degree
    diagram.

    References
    ----------
    [CIE15] section 7.3 (spectral locus, purple boundary, Planckian locus).
    """
    obs = settings.observer
    locus = spectral_locus_xy(obs)
    closed = np.vstack([locus, locus[:1]])
    wl = wavelengths_nm()
    table = cmfs(obs)
    ticks_nm = np.asarray(SPECTRAL_TICKS_NM)
    tick_XYZ = np.stack([np.interp(ticks_nm, wl, table[:, i]) for i in range(3)], axis=-1)
    scale = MiredScale(temperature_min_K, temperature_max_K, 1.0)
    temps = scale.temperature_at(np.linspace(0, scale.steps, 400))
    ticks = np.asarray(tick_temperatures_K, dtype=np.float64)
    d = settings.display
    gamut = np.array([d.red_xy, d.green_xy, d.blue_xy, d.red_xy])
    return ChromaticityDiagram(
        observer=obs,
        spectral_locus_xy=closed,
        spectral_tick_nm=ticks_nm,
        spectral_tick_xy=XYZ_to_xy(tick_XYZ),
        planckian_temperature_K=temps,
        planckian_xy=planckian_locus_xy(obs, temps),
        tick_temperature_K=ticks,
        tick_xy=planckian_locus_xy(obs, ticks),
        gamut_xy=gamut,
        scene_white_xy=np.array(resolve_white(settings.scene_white, obs).xy),
        display_white_xy=np.array(d.white_xy),
    )


@dataclass(frozen=True)
class PlanckCurve:
    """Relative spectral radiance of one temperature over a wavelength range."""

    temperature_K: float
    wavelength_nm: np.ndarray
    relative_radiance: np.ndarray
    peak_nm: float


def spectrum_plot_wavelengths_nm(step_outside_nm: float = 5.0,
                                 step_band_nm: float = 1.0) -> np.ndarray:
    """Wavelengths for the spectrum plot: finer inside the visible band, coarser outside.

    Covers :data:`SPECTRUM_PLOT_RANGE_NM`; the band edges 380 and 780 nm are grid points.

    References
    ----------
    [CIE15] (380-780 nm, the range that matters for colorimetry).
    """
    lo, hi = SPECTRUM_PLOT_RANGE_NM
    a, b = VISIBLE_BAND_NM
    return np.concatenate([np.arange(lo, a, step_outside_nm),
                           np.arange(a, b + 0.5 * step_band_nm, step_band_nm),
                           np.arange(b + step_outside_nm, hi + 0.5, step_outside_nm)])


def planck_curve(temperature_K: float, wavelength_nm) -> PlanckCurve:
    """Planck spectral radiance over ``wavelength_nm``, scaled so that its maximum there is 1.

    Parameters
    ----------
    temperature_K : float
        500-100 000 K.
    wavelength_nm : array_like
        Wavelengths in nm, > 0 (may extend beyond the visible band).

    Returns
    -------
    PlanckCurve
        ``relative_radiance`` (N,), and ``peak_nm`` from Wien's displacement
        law (may lie outside the range given).

    References
    ----------
    [Planck1901]; [CODATA2018] (Wien's constant), via :mod:`starkiln.engine.colour.spectrum`.
    """
    t = float(check_temperature(temperature_K))
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    if wl.size == 0 or np.any(~np.isfinite(wl) | (wl <= 0)):
        raise InputRangeError("wavelengths must be positive and finite")
    radiance = planck_radiance(t, wl)
    return PlanckCurve(t, wl, radiance / radiance.max(), float(peak_wavelength_nm(t)))


@dataclass(frozen=True)
class ArrivingCurve:
    """The Planck curve after the path of the light, on the emitted curve's scale.

    ``relative_radiance`` is divided by the largest *emitted* radiance on the plot's grid, so
    that the two curves share one axis and the gap between them is what dust and air take.
    ``wavelength_nm`` is the part of the plot's grid the path model covers
    (:func:`arriving_curve`).
    """

    temperature_K: float
    wavelength_nm: np.ndarray
    relative_radiance: np.ndarray


def arriving_curve(settings: Settings, temperature_K: float,
                   wavelength_nm) -> ArrivingCurve | None:
    """The spectrum of a star as it arrives at the eye, scaled like :func:`planck_curve`.

    Parameters
    ----------
    settings : Settings
        The path of the light (dust E(B-V), law and R_V; altitude and air).
    temperature_K : float
        500-100 000 K.
    wavelength_nm : array_like
        The plot's grid (that of the emitted curve).

    Returns
    -------
    ArrivingCurve or None
        None when the settings put nothing on the way
        (:func:`starkiln.engine.path.chain.has_path`). Else
        ``Planck(T) x transmission / max(Planck(T))`` over the grid points the path model
        covers: every point with dust alone (the laws span 100-3333 nm or more); with the
        atmosphere, only :data:`starkiln.engine.path.atmosphere.MODEL_RANGE_NM`, where its
        model is complete (no curve is drawn where the model would show light that ozone in
        fact absorbs).

    References
    ----------
    [Planck1901]; :func:`starkiln.engine.path.chain.arriving_spectrum` ([Cardelli1989] eq. 1,
    [DustExtinction], [KastenYoung1989], [Bucholtz1995]).
    """
    from starkiln.engine.path.atmosphere import MODEL_RANGE_NM
    from starkiln.engine.path.chain import arriving_spectrum, has_path

    if not has_path(settings):
        return None
    t = float(check_temperature(temperature_K))
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    peak = float(planck_radiance(t, wl).max())
    if settings.altitude_deg is not None:
        lo, hi = MODEL_RANGE_NM
        wl = wl[(wl >= lo) & (wl <= hi)]
    return ArrivingCurve(t, wl, arriving_spectrum(settings, t, wl) / peak)


def efficiency_overlays(observer: str = "cie1931") -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Curves to overlay on the spectrum plot, on the tables' 360-830 nm grid.

    Returns
    -------
    dict
        ``"V"`` photopic V(lambda) and ``"V'"`` scotopic V'(lambda), both with
        peak 1 as tabulated; ``"x"``, ``"y"``, ``"z"`` the observer's
        colour-matching functions, all three divided by the largest value of
        z-bar so that their relative heights stay as tabulated and they fit
        a 0-1 axis. Each value is ``(wavelength_nm, values)``.

    References
    ----------
    [CIES010] (V, V'); [CIE15] Tables T.4, T.5 (CMFs).
    """
    wl = wavelengths_nm()
    table = cmfs(observer)
    scale = table.max()
    return {"V": (wl, np.asarray(v_photopic())), "V'": (wl, np.asarray(v_scotopic())),
            "x": (wl, table[:, 0] / scale), "y": (wl, table[:, 1] / scale),
            "z": (wl, table[:, 2] / scale)}


def magnitude_ladder(settings: Settings, step: float = 1.0) -> np.ndarray:
    """Magnitudes for the brightness strip: from ``magnitude_bright`` to ``magnitude_faint``.

    Steps of ``step`` magnitudes, both ends included (the faint end is added if
    the steps do not land on it).

    References
    ----------
    [Pogson1856] magnitude scale; :mod:`starkiln.engine.eye.vision` (tone curve ends).
    """
    bright = float(settings.magnitude_bright)
    faint = float(settings.magnitude_faint)
    mags = np.arange(bright, faint + 1e-9, step)
    if faint - mags[-1] > 1e-9:
        mags = np.append(mags, faint)
    return mags
