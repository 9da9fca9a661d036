"""The Earth's atmosphere: airmass and the extinction of starlight between the top of the air
and an observer at a given site.

The model (all vectorised; ``tau`` are vertical optical depths at the site):

1. **Airmass** of the line of sight at apparent altitude ``h`` (degrees), by Kasten & Young's
   formula ``X = 1 / (sin h + 0.50572 (h + 6.07995)^-1.6364)`` [KastenYoung1989] eq. 3:
   1 at the zenith, 37.9 at the horizon.
2. **Rayleigh scattering** by the molecules of the air: Bucholtz's fit of the optical depth of
   the US Standard Atmosphere 1976 at sea level (1013.25 hPa),
   ``tau_R = A lambda^-(B + C lambda + D / lambda)`` (lambda in microns) with his two
   coefficient sets, 0.2-0.5 um and 0.5-2.2 um [Bucholtz1995] Table 5 (coefficients from
   memory; the test checks tau_R(550 nm) = 0.097 from the same paper). The optical depth
   scales with the pressure of the site, from its height by the barometric formula of the US
   Standard Atmosphere's troposphere, ``p = 1013.25 hPa (1 - 0.0065 z / 288.15)^5.25588``
   [USSA1976] eq. 33a (valid to 11 km).
3. **Aerosol** extinction by Angstrom's law, ``tau_a = tau_550 (lambda / 550 nm)^-alpha``
   [Angstrom1929]. Defaults: ``tau_550 = 0.05`` and ``alpha = 1.3``, a clear site (common
   practice: clear continental sites measure 0.02-0.1 at 550 nm; 1.3 is Angstrom's own typical
   exponent).
4. **Ozone** absorption in the Chappuis band: the absorption cross-sections of Serdyuchenko et
   al. (233 K) [Serdyuchenko2014], as averaged into 10 nm bins from 360 to 830 nm in
   Bruneton's published atmosphere model [Bruneton2017]; values are taken at the bin centres
   and interpolated linearly. A column of ``ozone_du`` Dobson units holds
   ``2.687e20 DU`` molecules per m^2 (the definition of the Dobson unit; common practice).
   Default 300 DU (a typical mid-latitude column; common practice). Outside 360-830 nm the
   table has no values and ozone is left out (taken as 0): beyond 830 nm the Wulf band is
   weak, but below 360 nm the Huggins band is strong, so the far-blue edge of the Gaia BP
   band (330-360 nm) is missing some ozone extinction; the B, V and G magnitudes are
   affected by less than 0.01 mag (their responses below 360 nm are small).
   The ozone lies in a thin layer near 22 km, so its own airmass is that of a spherical shell,
   ``X_O3 = 1 / sqrt(1 - (R / (R + 22 km))^2 cos^2 h)`` with R = 6371 km (common practice);
   it is about 3.9 at the horizon, where the air's airmass is 38.
5. **Transmission** ``T(lambda) = exp(-X (tau_R + tau_a) - X_O3 tau_O3)``. Aerosols take the
   air's airmass (an approximation: their lower scale height makes their true horizon
   airmass larger). Refraction is not modelled: ``altitude_deg`` is the apparent altitude.

Typical result (from memory, checked in the tests): at a clear high site the V band loses
0.12-0.2 mag per airmass.

References
----------
[KastenYoung1989]; [Bucholtz1995]; [USSA1976]; [Angstrom1929]; [Serdyuchenko2014];
[Bruneton2017].
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import InputRangeError, SettingsError, values_in_range

#: Standard sea-level pressure, hPa ([USSA1976]).
SEA_LEVEL_HPA = 1013.25
#: Accepted site heights, m (the barometric formula's troposphere ends at 11 km; the lowest
#: dry land is about -430 m).
SITE_HEIGHT_RANGE_M = (-500.0, 11000.0)
ALTITUDE_RANGE_DEG = (0.0, 90.0)
#: Wavelengths over which the model above is complete, nm: from the ozone table's first bin
#: (below it the Huggins and Hartley bands, left out here, absorb strongly) to the end of
#: Bucholtz's fit (module docstring, steps 2 and 4).
MODEL_RANGE_NM = (360.0, 2200.0)
#: Defaults for a clear site (common practice, see the module docstring).
AEROSOL_TAU550_DEFAULT = 0.05
ANGSTROM_DEFAULT = 1.3
OZONE_DU_DEFAULT = 300.0
AEROSOL_TAU_RANGE = (0.0, 5.0)
ANGSTROM_RANGE = (-1.0, 4.0)
OZONE_DU_RANGE = (0.0, 1000.0)
#: Molecules per m^2 in one Dobson unit (common practice: 0.01 mm at STP).
DOBSON_MOLECULES_M2 = 2.687e20

#: Ozone absorption cross-sections, m^2, 10 nm bins from 360 nm (bin [360, 370) first) to
#: 830 nm: [Serdyuchenko2014] at 233 K, bin averages as published in [Bruneton2017].
_OZONE_BIN_START_NM = 360.0
_OZONE_CROSS_SECTION_M2 = np.array([
    1.18e-27, 2.182e-28, 2.818e-28, 6.636e-28, 1.527e-27, 2.763e-27, 5.52e-27, 8.451e-27,
    1.582e-26, 2.316e-26, 3.669e-26, 4.924e-26, 7.752e-26, 9.016e-26, 1.48e-25, 1.602e-25,
    2.139e-25, 2.755e-25, 3.091e-25, 3.5e-25, 4.266e-25, 4.672e-25, 4.398e-25, 4.701e-25,
    5.019e-25, 4.305e-25, 3.74e-25, 3.215e-25, 2.662e-25, 2.238e-25, 1.852e-25, 1.473e-25,
    1.209e-25, 9.423e-26, 7.455e-26, 6.566e-26, 5.105e-26, 4.15e-26, 4.228e-26, 3.237e-26,
    2.451e-26, 2.801e-26, 2.534e-26, 1.624e-26, 1.465e-26, 2.078e-26, 1.383e-26, 7.105e-27])
_EARTH_RADIUS_KM = 6371.0
_OZONE_LAYER_KM = 22.0


def check_altitude(altitude_deg, what: str = "altitude_deg", error=SettingsError) -> np.ndarray:
    """Apparent altitudes in degrees, finite and 0-90, else a one-line error naming the first bad one.

    References
    ----------
    The horizon (0) to the zenith (90) (common practice).
    """
    lo, hi = ALTITUDE_RANGE_DEG
    return values_in_range(altitude_deg, lo, hi, lambda v: f"{what} {v:g} is outside the "
                           f"accepted range {lo:g} (horizon) to {hi:g} (zenith) degrees", error)


def airmass_kasten_young(altitude_deg) -> np.ndarray:
    """Relative optical airmass at apparent altitude ``h``, Kasten & Young (1989).

    Parameters
    ----------
    altitude_deg : array_like
        Apparent altitude above the horizon, degrees, 0-90.

    Returns
    -------
    numpy.ndarray
        ``1 / (sin h + 0.50572 (h + 6.07995)^-1.6364)``.

    References
    ----------
    [KastenYoung1989] eq. 3 (coefficients a = 0.50572, b = 6.07995 deg, c = 1.6364).

    Examples
    --------
    1 at the zenith, 37.92 at the horizon ([KastenYoung1989] Table 2: 37.9):

    >>> round(float(airmass_kasten_young(90.0)), 3)
    1.0
    >>> round(float(airmass_kasten_young(0.0)), 1)
    37.9
    """
    h = check_altitude(altitude_deg, error=InputRangeError)
    return 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)


def _ozone_airmass(altitude_deg) -> np.ndarray:
    """Airmass of a thin shell at 22 km (module docstring, step 4; common practice)."""
    k = _EARTH_RADIUS_KM / (_EARTH_RADIUS_KM + _OZONE_LAYER_KM)
    c = np.cos(np.radians(altitude_deg))
    return 1.0 / np.sqrt(1.0 - (k * c) ** 2)


def pressure_hPa_at_height(height_m) -> np.ndarray:
    """Air pressure at a height above sea level, by the US Standard Atmosphere's troposphere.

    Parameters
    ----------
    height_m : array_like
        Geopotential height, m, -500 to 11000.

    Returns
    -------
    numpy.ndarray
        ``1013.25 (1 - 0.0065 z / 288.15)^5.25588`` hPa.

    References
    ----------
    [USSA1976] eq. 33a (lapse rate 6.5 K/km, T0 = 288.15 K, exponent g0 M / (R L) = 5.25588).

    Examples
    --------
    [USSA1976] Table I lists 898.76 hPa at 1000 m and 795.01 hPa at 2000 m (geometric heights;
    values from memory); the formula takes geopotential heights, 0.2 % and 0.3 % lower there,
    so it agrees within 0.1 hPa:

    >>> abs(float(pressure_hPa_at_height(1000.0)) - 898.76) < 0.1
    True
    >>> abs(float(pressure_hPa_at_height(2000.0)) - 795.01) < 0.1
    True
    """
    z = np.asarray(height_m, dtype=np.float64)
    return SEA_LEVEL_HPA * (1.0 - 0.0065 * z / 288.15) ** 5.25588


def rayleigh_optical_depth(wavelength_nm, pressure_hPa=SEA_LEVEL_HPA) -> np.ndarray:
    """Vertical Rayleigh optical depth of the air above a site, Bucholtz (1995).

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths, nm (the fit covers 200-2200 nm).
    pressure_hPa : float or array_like
        Site pressure; the depth scales with it (broadcast against the wavelengths).

    Returns
    -------
    numpy.ndarray
        ``(p / 1013.25) A lambda^-(B + C lambda + D / lambda)``, lambda in um.

    References
    ----------
    [Bucholtz1995] Table 5 (optical depth fit, US Standard Atmosphere, two wavelength
    ranges; coefficients from memory, checked at 550 nm against the paper's 0.0973).

    Examples
    --------
    >>> round(float(rayleigh_optical_depth(550.0)), 4)
    0.0972
    """
    lam = np.asarray(wavelength_nm, dtype=np.float64) * 1e-3
    short = lam < 0.5
    a = np.where(short, 6.50362e-3, 8.64627e-3)
    b = np.where(short, 3.55212, 3.99668)
    c = np.where(short, 1.35579, 1.10298e-3)
    d = np.where(short, 0.11563, 2.71393e-2)
    tau = a * lam ** -(b + c * lam + d / lam)
    return tau * (np.asarray(pressure_hPa, dtype=np.float64) / SEA_LEVEL_HPA)


def aerosol_optical_depth(wavelength_nm, tau550=AEROSOL_TAU550_DEFAULT,
                          angstrom=ANGSTROM_DEFAULT) -> np.ndarray:
    """Vertical aerosol optical depth by Angstrom's law, ``tau_550 (lambda / 550 nm)^-alpha``.

    References
    ----------
    [Angstrom1929]; defaults: a clear site (common practice, module docstring).

    Examples
    --------
    >>> round(float(aerosol_optical_depth(440.0, 0.1, 1.0)), 3)
    0.125
    """
    lam = np.asarray(wavelength_nm, dtype=np.float64)
    return tau550 * (lam / 550.0) ** (-angstrom)


def ozone_cross_section_m2(wavelength_nm) -> np.ndarray:
    """Ozone absorption cross-section, m^2, in the Chappuis band (0 outside 360-830 nm).

    References
    ----------
    [Serdyuchenko2014] (233 K), 10 nm bin averages from [Bruneton2017]; linear between bin
    centres; outside the table, 0 (module docstring, step 4).
    """
    lam = np.asarray(wavelength_nm, dtype=np.float64)
    centres = _OZONE_BIN_START_NM + 5.0 + 10.0 * np.arange(_OZONE_CROSS_SECTION_M2.size)
    sigma = np.interp(lam, centres, _OZONE_CROSS_SECTION_M2)
    inside = (lam >= _OZONE_BIN_START_NM) & (lam <= centres[-1] + 5.0)
    return np.where(inside, sigma, 0.0)


def ozone_optical_depth(wavelength_nm, ozone_du=OZONE_DU_DEFAULT) -> np.ndarray:
    """Vertical optical depth of an ozone column of ``ozone_du`` Dobson units.

    References
    ----------
    [Serdyuchenko2014]; [Bruneton2017] (binned table); 1 DU = 2.687e20 molecules/m^2
    (common practice).

    Examples
    --------
    300 DU at 600 nm: 300 x 2.687e20 x 5.0e-25 m^2 = 0.040 (the Chappuis peak):

    >>> round(float(ozone_optical_depth(605.0, 300.0)), 3)
    0.04
    """
    return ozone_du * DOBSON_MOLECULES_M2 * ozone_cross_section_m2(wavelength_nm)


def atmosphere_transmission(wavelength_nm, altitude_deg, site_height_m=0.0,
                            aerosol_tau550=AEROSOL_TAU550_DEFAULT, angstrom=ANGSTROM_DEFAULT,
                            ozone_du=OZONE_DU_DEFAULT) -> np.ndarray:
    """Transmission of the atmosphere toward a star at apparent altitude ``altitude_deg``.

    Parameters
    ----------
    wavelength_nm : array_like
        (n,) wavelengths, nm.
    altitude_deg : array_like
        (...,) apparent altitudes, 0-90 degrees.
    site_height_m : float
        Height of the site above sea level, m (its pressure scales the Rayleigh depth).
    aerosol_tau550, angstrom : float
        Aerosol optical depth at 550 nm and Angstrom exponent.
    ozone_du : float
        Ozone column, Dobson units.

    Returns
    -------
    numpy.ndarray
        (..., n) transmissions ``exp(-X (tau_R + tau_a) - X_O3 tau_O3)``.

    References
    ----------
    Module docstring: [KastenYoung1989]; [Bucholtz1995]; [USSA1976]; [Angstrom1929];
    [Serdyuchenko2014].

    Examples
    --------
    At the zenith from sea level with no aerosol and no ozone, 550 nm light keeps
    exp(-0.0972) = 90.7 % ([Bucholtz1995]):

    >>> t = atmosphere_transmission([550.0], 90.0, 0.0, 0.0, 1.3, 0.0)
    >>> round(float(t[0]), 3)
    0.907
    """
    return np.exp(-slant_optical_depth(wavelength_nm, altitude_deg, site_height_m,
                                       aerosol_tau550, angstrom, ozone_du))


def slant_optical_depth(wavelength_nm, altitude_deg, site_height_m=0.0,
                        aerosol_tau550=AEROSOL_TAU550_DEFAULT, angstrom=ANGSTROM_DEFAULT,
                        ozone_du=OZONE_DU_DEFAULT) -> np.ndarray:
    """Optical depth along the line of sight, ``X (tau_R + tau_a) + X_O3 tau_O3``: minus the
    natural logarithm of :func:`atmosphere_transmission` (same parameters, (..., n)).

    References
    ----------
    As :func:`atmosphere_transmission`.
    """
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    alt = check_altitude(altitude_deg, error=InputRangeError)
    p = pressure_hPa_at_height(site_height_m)
    tau_air = rayleigh_optical_depth(wl, p) + aerosol_optical_depth(wl, aerosol_tau550, angstrom)
    tau_o3 = ozone_optical_depth(wl, ozone_du)
    x = airmass_kasten_young(alt)
    x_o3 = _ozone_airmass(alt)
    out = np.multiply.outer(x, tau_air)
    out += np.multiply.outer(x_o3, tau_o3)
    return out
