"""Synthetic photometry: Vega-system magnitudes and colour indices of spectra and blackbodies.

Method. A magnitude in band X is the photon-counting integral of the spectrum through the
band, relative to Vega's ([BessellMurphy2012] eq. 1 and section 2; [Riello2021] section 5.4)::

    m_X = -2.5 log10( sum F_lambda S_X lambda dlambda / sum F_Vega S_X lambda dlambda ) + m_X(Vega)

with S_X the photon-counting (photonic) response on :data:`PHOTOMETRY_GRID_NM` (300-1100 nm
at 1 nm; wider than the 360-830 nm colour grid because BP and RP reach about 1050 nm),
F_Vega the CALSPEC spectrum of Vega ([Bohlin2020]) and m_X(Vega) Vega's adopted magnitude.

Bands, all cached in ``assets/photometry.npz`` (:mod:`starkiln.engine.colour.photometry_build`
made it from the packages named; ``assets/photometry_sources.json`` says where each array
came from; the program imports neither package):

- ``B``, ``V``: the Johnson-Cousins standard passbands of [Bessell1990] as ``speclite``
  ships them ([Speclite]). [BessellMurphy2012] (section 2 and appendix, from memory) point out
  that these 1990 curves are energy responses, to be used as ``sum F S dlambda``; their
  photonic form is ``S(lambda) / lambda``, renormalised. :func:`band` returns that photonic
  form, so every band here is used the same way, photon counting.
- ``BP``, ``RP``, ``G``: the Gaia (E)DR3 passbands of [Riello2021] (photon-counting
  responses as published), through ``speclite``.

Vega's magnitudes (:data:`VEGA_MAGNITUDES`): V = 0.03 and B - V = 0.00 (common practice; the
values [BessellMurphy2012] adopt, from memory); G = BP = RP = 0.023 ([Riello2021], the
VEGAMAG zero points of (E)DR3, from memory). Colour indices of Vega are therefore 0.

Blackbodies. :func:`planck_colour_index` integrates Planck's law ([Planck1901]) through two
bands; :func:`temperature_from_colour_index` inverts it through a table evenly spaced in
mired and its inverse on evenly spaced index values, built once (about 20 ms) and cached on
disk beside the CIE tables, keyed by the digest of ``assets/photometry.npz``; a lookup is
arithmetic and linear interpolation (vectorised, catalogue speed). Blackbody colour indices saturate at the hot end: as T grows without bound the
spectrum tends to the Rayleigh-Jeans form F_lambda ~ lambda^-4, whose indices
(:func:`blackbody_limit_index`) are the bluest any blackbody reaches.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from starkiln.engine.errors import InputRangeError

#: The band-integral grid, nm: 300-1100 at 1 nm.
PHOTOMETRY_GRID_NM = np.arange(300.0, 1100.0 + 0.5, 1.0)
PHOTOMETRY_GRID_NM.setflags(write=False)
#: The bands, by name.
BANDS = ("B", "V", "BP", "RP", "G")
#: The colour indices, each as (blue band, red band).
INDICES = {"B-V": ("B", "V"), "BP-RP": ("BP", "RP")}
#: The unit of the cached F_lambda (erg s^-1 cm^-2 A^-1) in W m^-2 nm^-1 (1e-7 W / 1e-4 m^2 /
#: 0.1 nm; SI prefixes, [SI2019]).
FLUX_LAMBDA_W_M2_NM = 1e-2
#: Vega's adopted magnitudes (module docstring: common practice and [Riello2021], from memory).
VEGA_MAGNITUDES = {"B": 0.03, "V": 0.03, "BP": 0.023, "RP": 0.023, "G": 0.023}
#: Bands cached as energy responses (converted to photonic form by :func:`band`).
_ENERGY_RESPONSE_BANDS = ("B", "V")
#: Temperatures of the inversion table: the render path's range, 500-100 000 K.
TABLE_TEMPERATURE_MIN_K = 500.0
TABLE_TEMPERATURE_MAX_K = 100000.0
#: Nodes of the inversion table, evenly spaced in mired from 10 to 2000.
TABLE_NODES = 8192
_KEYS = ("wavelength_nm", "response_B", "response_V", "response_BP", "response_RP",
         "response_G", "vega_flux_lambda")


@lru_cache(maxsize=1)
def cached_arrays() -> dict[str, np.ndarray]:
    """The arrays of ``assets/photometry.npz`` (read once, read-only).

    Returns
    -------
    dict
        ``wavelength_nm``, ``response_<band>`` (as the source package gives them) and
        ``vega_flux_lambda`` (erg s^-1 cm^-2 A^-1), all (801,) on :data:`PHOTOMETRY_GRID_NM`.

    References
    ----------
    [Speclite], [Bessell1990], [Riello2021], [Bohlin2020] (see the module docstring).
    """
    with np.load(_asset_file()) as data:
        out = {k: np.array(data[k], dtype=np.float64) for k in _KEYS}
    if not np.array_equal(out["wavelength_nm"], PHOTOMETRY_GRID_NM):  # pragma: no cover
        raise RuntimeError("assets/photometry.npz is not on the 300-1100 nm grid; rebuild it "
                           "with python -m starkiln.engine.colour.photometry_build")
    for a in out.values():
        a.setflags(write=False)
    return out


def check_band(name: str) -> str:
    """The canonical band name (``B``, ``V``, ``BP``, ``RP``, ``G``) or an :class:`InputRangeError`.

    References
    ----------
    The band names of [Bessell1990] and [Riello2021].
    """
    key = str(name).strip().upper()
    if key not in BANDS:
        raise InputRangeError(f"unknown band {name!r}; accepted: {', '.join(BANDS)}")
    return key


def check_index(name: str) -> str:
    """The canonical colour-index name (``B-V`` or ``BP-RP``) or an :class:`InputRangeError`.

    References
    ----------
    The band names of [Bessell1990] and [Riello2021].
    """
    key = str(name).strip().upper().replace("_", "-").replace(" ", "")
    key = {"BV": "B-V", "BPRP": "BP-RP"}.get(key, key)
    if key not in INDICES:
        raise InputRangeError(f"unknown colour index {name!r}; accepted: B-V, BP-RP")
    return key


@lru_cache(maxsize=None)
def _band(name: str) -> np.ndarray:
    arrays = cached_arrays()
    s = arrays[f"response_{name}"]
    if name in _ENERGY_RESPONSE_BANDS:  # [BessellMurphy2012]: photonic = energy / lambda
        s = s / PHOTOMETRY_GRID_NM
        s = s / s.max()
    s = np.array(s, dtype=np.float64)
    s.setflags(write=False)
    return s


def band(name: str) -> tuple[np.ndarray, np.ndarray]:
    """A band's photon-counting response on :data:`PHOTOMETRY_GRID_NM`.

    Parameters
    ----------
    name : {"B", "V", "BP", "RP", "G"}

    Returns
    -------
    tuple of numpy.ndarray
        ``(wavelength_nm, response)``, (801,) each, read-only; the response peaks at 1 for B
        and V (renormalised photonic form) and as published for the Gaia bands.

    References
    ----------
    [Bessell1990] and [BessellMurphy2012] (B, V); [Riello2021] (BP, RP, G); [Speclite].

    Examples
    --------
    The Gaia DR3 G passband has its peak transmission of about 0.72 near 640 nm
    ([Riello2021] Fig. 1, from memory):

    >>> wl, s = band("G")
    >>> round(float(s.max()), 2)
    0.72
    """
    return PHOTOMETRY_GRID_NM, _band(check_band(name))


@lru_cache(maxsize=None)
def _weights(name: str) -> np.ndarray:
    w = _band(name) * PHOTOMETRY_GRID_NM * 1.0  # S lambda dlambda, dlambda = 1 nm
    w.setflags(write=False)
    return w


def band_weights(name: str) -> np.ndarray:
    """Photon-counting weights ``S(lambda) lambda dlambda`` (nm^2) on :data:`PHOTOMETRY_GRID_NM`.

    ``flux_lambda @ band_weights(name)`` is the band integral of a spectrum sampled on the grid.

    References
    ----------
    [BessellMurphy2012] eq. 1 (photon counting).
    """
    return _weights(check_band(name))


@lru_cache(maxsize=None)
def _vega_band_flux(name: str) -> float:
    return float(cached_arrays()["vega_flux_lambda"] @ _weights(name))


def vega_band_flux(name: str) -> float:
    """Vega's photon-counting band integral, ``sum F_Vega S lambda dlambda``.

    Returns
    -------
    float
        In erg s^-1 cm^-2 A^-1 nm^2 (F_lambda of the CALSPEC file times the weights of
        :func:`band_weights`); a spectrum with this integral has magnitude
        ``VEGA_MAGNITUDES[name]``.

    References
    ----------
    [Bohlin2020] (the spectrum); [BessellMurphy2012] eq. 1.
    """
    return _vega_band_flux(check_band(name))


def _weights_on(wavelength_nm, name: str) -> np.ndarray:
    """The band's weights on another wavelength grid (interpolated response, trapezoid steps)."""
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    if wl.shape == PHOTOMETRY_GRID_NM.shape and np.array_equal(wl, PHOTOMETRY_GRID_NM):
        return _weights(name)
    if wl.ndim != 1 or wl.size < 2 or np.any(np.diff(wl) <= 0):
        raise InputRangeError("wavelength_nm must be one increasing array of 2 or more values")
    s = np.interp(wl, PHOTOMETRY_GRID_NM, _band(name), left=0.0, right=0.0)
    step = np.gradient(wl)  # trapezoid weights away from the ends
    step[0] = 0.5 * (wl[1] - wl[0])
    step[-1] = 0.5 * (wl[-1] - wl[-2])
    return s * wl * step


def band_flux(wavelength_nm, flux_lambda, band_name: str) -> np.ndarray:
    """Photon-counting band integral of spectra, ``sum F_lambda S lambda dlambda``.

    Parameters
    ----------
    wavelength_nm : array_like
        (n,) increasing wavelengths; :data:`PHOTOMETRY_GRID_NM` is the fast path.
    flux_lambda : array_like
        (..., n) F_lambda, in erg s^-1 cm^-2 A^-1 for absolute magnitudes (any unit for
        colour indices and magnitude differences).
    band_name : {"B", "V", "BP", "RP", "G"}

    Returns
    -------
    numpy.ndarray
        Shape (...,).

    References
    ----------
    [BessellMurphy2012] eq. 1.
    """
    w = _weights_on(wavelength_nm, check_band(band_name))
    return np.asarray(flux_lambda, dtype=np.float64) @ w


def synthetic_magnitude(wavelength_nm, flux_lambda, band_name: str) -> np.ndarray:
    """Vega-system magnitude of spectra through a band (photon counting).

    Parameters
    ----------
    wavelength_nm : array_like
        (n,) increasing wavelengths in nm (vacuum); the band is zero outside 300-1100 nm.
    flux_lambda : array_like
        (..., n) F_lambda in erg s^-1 cm^-2 A^-1 (the unit of the Vega spectrum; only
        differences of magnitudes are meaningful in any other unit).
    band_name : {"B", "V", "BP", "RP", "G"}

    Returns
    -------
    numpy.ndarray
        ``-2.5 log10(band_flux / vega_band_flux) + VEGA_MAGNITUDES[band]``, shape (...,).

    References
    ----------
    [BessellMurphy2012] eq. 1 and section 2; [Riello2021] section 5.4; [Bohlin2020] (Vega).

    Examples
    --------
    Vega's own spectrum has the adopted magnitudes (V = 0.03, common practice):

    >>> wl = PHOTOMETRY_GRID_NM
    >>> round(float(synthetic_magnitude(wl, cached_arrays()["vega_flux_lambda"], "V")), 6)
    0.03
    """
    name = check_band(band_name)
    f = band_flux(wavelength_nm, flux_lambda, name)
    with np.errstate(divide="ignore", invalid="ignore"):
        return -2.5 * np.log10(f / _vega_band_flux(name)) + VEGA_MAGNITUDES[name]


def flux_scale_for_magnitude(wavelength_nm, flux_lambda, band_name: str, magnitude) -> np.ndarray:
    """The factor that gives spectra a chosen magnitude: ``synthetic_magnitude(k F) = magnitude``.

    Parameters
    ----------
    wavelength_nm, flux_lambda, band_name
        As for :func:`synthetic_magnitude`.
    magnitude : array_like
        Target magnitudes, broadcast against the spectra's leading shape.

    Returns
    -------
    numpy.ndarray
        ``k = 10^(-0.4 (magnitude - synthetic_magnitude(F)))``.

    References
    ----------
    [Pogson1856] (the magnitude scale, 2.5 log10).
    """
    m = synthetic_magnitude(wavelength_nm, flux_lambda, band_name)
    return 10.0 ** (-0.4 * (np.asarray(magnitude, dtype=np.float64) - m))


def _index_of_spectra(spectra, index: str) -> np.ndarray:
    blue, red = INDICES[index]
    zero = (2.5 * np.log10(_vega_band_flux(blue) / _vega_band_flux(red))
            + VEGA_MAGNITUDES[blue] - VEGA_MAGNITUDES[red])
    with np.errstate(divide="ignore", invalid="ignore"):
        return -2.5 * np.log10((spectra @ _weights(blue)) / (spectra @ _weights(red))) + zero


def colour_index(wavelength_nm, flux_lambda, index: str) -> np.ndarray:
    """Synthetic colour index (``B-V`` or ``BP-RP``) of spectra, Vega system.

    Parameters
    ----------
    wavelength_nm, flux_lambda
        As for :func:`synthetic_magnitude` (any flux unit).
    index : {"B-V", "BP-RP"}

    Returns
    -------
    numpy.ndarray
        ``m_blue - m_red``, shape (...,).

    References
    ----------
    [BessellMurphy2012]; [Riello2021].
    """
    blue, red = INDICES[check_index(index)]
    return (synthetic_magnitude(wavelength_nm, flux_lambda, blue)
            - synthetic_magnitude(wavelength_nm, flux_lambda, red))


def planck_colour_index(temperature_K, index: str, transmission=None) -> np.ndarray:
    """Synthetic colour index of blackbodies, optionally seen through a transmission.

    Parameters
    ----------
    temperature_K : array_like
        Temperatures in kelvin, > 0 (``numpy.inf`` gives :func:`blackbody_limit_index`).
    index : {"B-V", "BP-RP"}
    transmission : array_like, optional
        (..., 801) factor on :data:`PHOTOMETRY_GRID_NM` multiplying the Planck spectrum (dust,
        air), broadcast against ``temperature_K[..., None]``.

    Returns
    -------
    numpy.ndarray
        The index, shape of ``temperature_K`` broadcast with ``transmission[..., 0]``.

    References
    ----------
    [Planck1901]; [BessellMurphy2012]; [Riello2021].

    Examples
    --------
    A blackbody at Vega's effective temperature is a little redder than Vega itself, whose
    Balmer jump and lines make B-V = 0 at about 9600 K ([Bohlin2020] fit Teff = 9550 K to
    the spectrum); so the colour-matched blackbody is hotter than Teff:

    >>> 0.1 < float(planck_colour_index(9550.0, "B-V")) < 0.3
    True
    """
    name = check_index(index)
    t = np.asarray(temperature_K, dtype=np.float64)
    spectra = _planck_on_grid(t)
    if transmission is not None:
        spectra = spectra * np.asarray(transmission, dtype=np.float64)
    return _index_of_spectra(spectra, name)


def _planck_on_grid(t: np.ndarray) -> np.ndarray:
    """Planck's law on the photometry grid, shape t.shape + (801,); T = inf gives lambda^-4."""
    from starkiln.engine.colour.spectrum import planck_radiance

    with np.errstate(divide="ignore", invalid="ignore"):
        out = planck_radiance(np.where(np.isinf(t), 1.0, t), PHOTOMETRY_GRID_NM)
    if np.any(np.isinf(t)):
        out = np.where(np.isinf(t)[..., None], PHOTOMETRY_GRID_NM ** -4.0, out)
    return out


@lru_cache(maxsize=None)
def blackbody_limit_index(index: str) -> float:
    """The bluest colour index of any blackbody: the T -> infinity (Rayleigh-Jeans) limit.

    Returns
    -------
    float
        The index of F_lambda ~ lambda^-4 (the limit of Planck's law as T grows).

    References
    ----------
    [Planck1901] (its Rayleigh-Jeans limit); [BessellMurphy2012]; [Riello2021].
    """
    return float(_index_of_spectra(PHOTOMETRY_GRID_NM ** -4.0, check_index(index)))


#: Nodes of the lookup table evenly spaced in index value (the fast inverse).
LOOKUP_NODES = 16384
#: Rounding slack at the ends of the tables, mag.
_SLACK_MAG = 1e-9
#: Bump when the content or layout of the cached tables changes.
TABLE_FORMAT = 1


def _build_tables(index: str) -> dict[str, np.ndarray]:
    """The blackbody tables of one index: on the mired nodes, and the inverse on index nodes."""
    mired = np.linspace(1e6 / TABLE_TEMPERATURE_MAX_K, 1e6 / TABLE_TEMPERATURE_MIN_K,
                        TABLE_NODES)
    values = np.empty_like(mired)
    for s in range(0, TABLE_NODES, 1024):  # blocks: 1024 x 801 spectra at a time
        values[s:s + 1024] = _index_of_spectra(_planck_on_grid(1e6 / mired[s:s + 1024]), index)
    if np.any(np.diff(values) <= 0):  # pragma: no cover - physics says it cannot happen
        raise RuntimeError(f"the blackbody {index} table is not monotonic")
    # The inverse on index nodes evenly spaced, so that a lookup is arithmetic, not a search
    # (linear in mired between the fine mired nodes: within 1e-5 of the exact inverse).
    grid = np.linspace(values[0], values[-1], LOOKUP_NODES)
    guess = np.interp(grid, values, mired)
    return {"index_values": values, "mired": mired, "lookup_mired": guess}


def _asset_file():
    """``assets/photometry.npz``: beside ``engine/`` in a checkout, in ``starkiln/assets``
    when installed (the same relative place; no importlib.resources at start-up)."""
    from pathlib import Path

    return Path(__file__).resolve().parents[2] / "assets" / "photometry.npz"


def _asset_digest() -> str:
    import hashlib

    return hashlib.sha256(_asset_file().read_bytes()).hexdigest()[:16]


@lru_cache(maxsize=None)
def _tables(index: str) -> dict[str, np.ndarray]:
    """The tables of :func:`_build_tables`, from the on-disk cache or built (and cached) once.

    The cache sits beside the CIE tables' (``cie_data.cache_dir()``), keyed
    by the cached arrays' digest; a damaged or foreign file is rebuilt.
    """
    from starkiln.engine.colour.cie_data import NPZ_READ_ERRORS, cache_dir, write_npz_atomic

    tag = index.replace("-", "").lower()
    path = cache_dir() / f"photometry-{tag}-{_asset_digest()}-f{TABLE_FORMAT}.npz"
    want = {"index_values": TABLE_NODES, "mired": TABLE_NODES, "lookup_mired": LOOKUP_NODES}
    out = None
    if path.exists():
        try:
            with np.load(path) as data:
                out = {k: np.array(data[k]) for k in want}
            if any(out[k].shape != (n,) or out[k].dtype != np.float64
                   or not np.isfinite(out[k]).all() for k, n in want.items()):
                out = None
        except NPZ_READ_ERRORS:
            out = None
    if out is None:
        out = _build_tables(index)
        try:
            write_npz_atomic(path, out)
        except OSError:
            pass  # read-only home: keep the tables in memory for this process
    for a in out.values():
        a.setflags(write=False)
    return out


def _table(index: str) -> tuple[np.ndarray, np.ndarray]:
    """(index values, mired) at TABLE_NODES mired nodes, increasing in both."""
    t = _tables(index)
    return t["index_values"], t["mired"]


def colour_index_table(index: str) -> tuple[np.ndarray, np.ndarray]:
    """The cached inversion table: blackbody index values and their mired (10^6 / K).

    Returns
    -------
    tuple of numpy.ndarray
        ``(index_values, mired)``, :data:`TABLE_NODES` each, both increasing; from 100 000 K
        (10 mired) to 500 K (2000 mired).

    References
    ----------
    [Planck1901]; [WyszeckiStiles1982] section 3.11 (mired).
    """
    return _table(check_index(index))


def colour_index_range(index: str) -> tuple[float, float]:
    """The indices of the hottest and coolest blackbodies of the table (100 000 K and 500 K).

    References
    ----------
    See :func:`colour_index_table`.
    """
    values, _ = _table(check_index(index))
    return float(values[0]), float(values[-1])


def temperature_from_colour_index(value, index: str, clamp_blue: bool = False) -> np.ndarray:
    """The blackbody temperature whose synthetic colour index equals ``value``.

    Parameters
    ----------
    value : array_like
        Colour indices (mag).
    index : {"B-V", "BP-RP"}
    clamp_blue : bool
        Give 100 000 K for values bluer than the 100 000 K blackbody instead of raising.

    Returns
    -------
    numpy.ndarray
        Temperatures in kelvin (500-100 000 K), the shape of ``value``. Linear interpolation
        in mired on the cached table (:func:`colour_index_table`): the round trip through
        :func:`planck_colour_index` agrees to better than 1e-4 mag.

    Raises
    ------
    starkiln.engine.errors.InputRangeError
        A value outside the table's range (bluer only without ``clamp_blue``), or not finite.

    References
    ----------
    [Planck1901]; [BessellMurphy2012]; [Riello2021]; [WyszeckiStiles1982] section 3.11.

    Examples
    --------
    The Sun's B-V of 0.653 ([Ramirez2012]) gives a blackbody within 1 % of the Sun's
    effective temperature, 5772 K ([IAU2015B3]):

    >>> abs(float(temperature_from_colour_index(0.653, "B-V")) / 5772.0 - 1.0) < 0.01
    True
    """
    name = check_index(index)
    values, mired = _table(name)
    v = np.asarray(value, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        # 1e-9 mag of slack: an index recomputed at 500 K or 100 000 K may differ from the
        # table's in the last bits (the sums' rounding depends on the array's layout).
        bad = ~np.isfinite(v) | (v > values[-1] + _SLACK_MAG)
        if not clamp_blue:
            bad |= v < values[0] - _SLACK_MAG
    if np.any(bad):
        x = v[bad].flat[0] if v.ndim else float(v)
        raise InputRangeError(f"{name} {x:g} is outside the range of blackbody colours "
                              f"{values[0]:.3f} to {values[-1]:.3f} "
                              f"({TABLE_TEMPERATURE_MAX_K:g}-{TABLE_TEMPERATURE_MIN_K:g} K)")
    return lookup_temperature(v, name)


@lru_cache(maxsize=None)
def _lookup(index: str) -> tuple[float, float, np.ndarray, np.ndarray]:
    """(first index value, nodes per mag, mired at the nodes, slope to the next node)."""
    t = _tables(index)
    values, mired = t["index_values"], t["lookup_mired"]
    n = mired.shape[0]
    # One node more (slope 0) so that the last value needs no special case.
    nodes = np.append(mired, mired[-1])
    slopes = np.append(np.diff(mired), [0.0, 0.0])
    for a in (nodes, slopes):
        a.setflags(write=False)
    return float(values[0]), (n - 1) / float(values[-1] - values[0]), nodes, slopes


def lookup_temperature(value, index: str) -> np.ndarray:
    """The blackbody temperature of colour indices already checked: the hot path of catalogues.

    Parameters
    ----------
    value : array_like
        Finite colour indices no redder than the 500 K blackbody's (:func:`colour_index_range`);
        bluer than the 100 000 K blackbody's give 100 000 K. Not checked.
    index : {"B-V", "BP-RP"}

    Returns
    -------
    numpy.ndarray
        Kelvin, the shape of ``value``: linear interpolation in mired on the evenly spaced
        index nodes of the cached table (arithmetic, no search).

    References
    ----------
    See :func:`temperature_from_colour_index`.
    """
    v0, per_mag, nodes, slopes = _lookup(check_index(index))
    v = np.asarray(value, dtype=np.float64)
    x = np.subtract(np.atleast_1d(v), v0)
    x *= per_mag
    np.maximum(x, 0.0, out=x)
    i = x.astype(np.intp)
    x -= i
    x *= slopes.take(i)
    x += nodes.take(i)
    np.divide(1e6, x, out=x)
    return x.reshape(v.shape)
