"""Building the cached photometry arrays (``assets/photometry.npz``) from their published sources.

Run ``python -m starkiln.engine.colour.photometry_build`` (with the test extra installed) to
rewrite ``assets/photometry.npz`` and ``assets/photometry_sources.json``. The program itself
never imports the packages used here: it reads the cached arrays
(:mod:`starkiln.engine.colour.photometry`), and ``tests/test_photometry.py`` checks that the
cache still equals what the packages give.

Sources, each resampled to :data:`GRID_NM` (300-1100 nm at 1 nm):

- Filter curves from ``speclite`` ([Speclite]): ``bessell-B`` and ``bessell-V`` (the
  Johnson-Cousins standard passbands of [Bessell1990], as speclite ships them, peak 1) and
  ``gaiadr3-BP``, ``gaiadr3-RP``, ``gaiadr3-G`` (the Gaia (E)DR3 passbands of [Riello2021]),
  interpolated linearly (speclite's own interpolation) and 0 outside their tables.
- The CALSPEC spectrum of Vega, ``alpha_lyr_stis_011.fits`` ([Bohlin2020]; STIS fluxes on the
  HST white-dwarf scale, erg s^-1 cm^-2 A^-1), as the ``pyphot`` wheel carries it
  ([Pyphot]), averaged over each 1 nm bin (the integral of the linearly interpolated
  spectrum over the bin divided by its width, so that band integrals keep the flux).

The CALSPEC solar spectrum (``sun_reference_stis_001.fits``) is in the same wheel; the tests
read it from there and it is never shipped.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

#: The band-integral grid, nm: 300-1100 at 1 nm (the Gaia passbands reach 1080 nm).
GRID_NM = np.arange(300.0, 1100.0 + 0.5, 1.0)
#: Speclite filter names of the cached bands, by Starkiln's band name.
SPECLITE_FILTERS = {"B": "bessell-B", "V": "bessell-V", "BP": "gaiadr3-BP",
                    "RP": "gaiadr3-RP", "G": "gaiadr3-G"}
#: The CALSPEC Vega file inside pyphot's ``libs`` folder.
VEGA_FILE = "alpha_lyr_stis_011.fits"
#: The CALSPEC solar spectrum inside pyphot's ``libs`` folder (tests only, never shipped).
SUN_FILE = "sun_reference_stis_001.fits"
#: Where the cache goes.
ASSETS = Path(__file__).resolve().parents[2] / "assets"
NPZ_NAME = "photometry.npz"
SOURCES_NAME = "photometry_sources.json"


def pyphot_libs() -> Path:
    """Folder of the data files the installed ``pyphot`` wheel carries (without importing it).

    References
    ----------
    [Pyphot] (the package layout: ``pyphot/libs``).
    """
    import importlib.util

    spec = importlib.util.find_spec("pyphot")
    if spec is None or spec.origin is None:
        raise ModuleNotFoundError("pyphot is not installed (pip install -e '.[test]')",
                                  name="pyphot")
    return Path(spec.origin).parent / "libs"


def read_calspec(name: str) -> tuple[np.ndarray, np.ndarray]:
    """A CALSPEC spectrum from pyphot's wheel: ``(wavelength_nm, flux_lambda)``.

    Parameters
    ----------
    name : str
        File name in pyphot's ``libs`` folder, e.g. ``alpha_lyr_stis_011.fits``.

    Returns
    -------
    tuple of numpy.ndarray
        Vacuum wavelengths in nm and F_lambda in erg s^-1 cm^-2 A^-1, as in the file.

    References
    ----------
    [Bohlin2020] (CALSPEC); [Astropy2022] (``astropy.io.fits``).
    """
    import warnings

    from astropy.io import fits

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the files' TNULLn keywords are float (harmless)
        with fits.open(pyphot_libs() / name) as hdul:
            data = hdul[1].data
            wl_a = np.array(data["WAVELENGTH"], dtype=np.float64)
            flux = np.array(data["FLUX"], dtype=np.float64)
    return wl_a / 10.0, flux


def bin_average(wavelength_nm, values, grid_nm=GRID_NM) -> np.ndarray:
    """Mean of a linearly interpolated curve over 1 nm bins centred on ``grid_nm``.

    Parameters
    ----------
    wavelength_nm, values : array_like
        The tabulated curve (sorted wavelengths).
    grid_nm : array_like
        Bin centres, 1 nm apart.

    Returns
    -------
    numpy.ndarray
        The bin means (exact integrals of the piecewise-linear curve, divided by 1 nm).

    References
    ----------
    Trapezoidal integration of a piecewise-linear curve (common practice).
    """
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    v = np.asarray(values, dtype=np.float64)
    grid = np.asarray(grid_nm, dtype=np.float64)
    edges = np.concatenate([grid - 0.5, grid[-1:] + 0.5])
    # Nodes: the table's and the bin edges, so that the trapezoids are exact.
    nodes = np.union1d(wl[(wl > edges[0]) & (wl < edges[-1])], edges)
    f = np.interp(nodes, wl, v)
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (f[1:] + f[:-1]) * np.diff(nodes))])
    at_edges = np.interp(edges, nodes, cum)
    return np.diff(at_edges) / np.diff(edges)


def speclite_response(band: str, grid_nm=GRID_NM) -> np.ndarray:
    """A speclite filter's response on ``grid_nm`` (linear interpolation, 0 outside).

    References
    ----------
    [Speclite] ``speclite.filters.load_filter``; [Bessell1990]; [Riello2021].
    """
    import speclite.filters

    f = speclite.filters.load_filter(SPECLITE_FILTERS[band])
    wl_nm = np.asarray(f.wavelength, dtype=np.float64) / 10.0
    return np.interp(np.asarray(grid_nm, dtype=np.float64), wl_nm,
                     np.asarray(f.response, dtype=np.float64), left=0.0, right=0.0)


def build_arrays() -> dict[str, np.ndarray]:
    """The arrays of ``assets/photometry.npz``, built from speclite and pyphot's CALSPEC Vega.

    Returns
    -------
    dict
        ``wavelength_nm`` (801,), ``response_B``, ``response_V``, ``response_BP``,
        ``response_RP``, ``response_G`` (801,) as the packages give them, and
        ``vega_flux_lambda`` (801,) in erg s^-1 cm^-2 A^-1.

    References
    ----------
    See the module docstring.
    """
    out = {"wavelength_nm": GRID_NM.copy()}
    for band in SPECLITE_FILTERS:
        out[f"response_{band}"] = speclite_response(band)
    wl, flux = read_calspec(VEGA_FILE)
    out["vega_flux_lambda"] = bin_average(wl, flux)
    return out


def sources() -> dict:
    """Where every cached array came from (written beside the arrays as JSON).

    References
    ----------
    See the module docstring.
    """
    from importlib import metadata

    def version(name):
        try:
            return metadata.version(name)
        except metadata.PackageNotFoundError:  # pragma: no cover - build needs both
            return None

    return {
        "grid": "300-1100 nm at 1 nm (wavelength_nm)",
        "filters": {
            band: {"array": f"response_{band}", "package": "speclite",
                   "package_version": version("speclite"), "package_licence": "BSD-3-Clause",
                   "filter": name,
                   "origin": ("Bessell (1990), PASP 102, 1181 (UBVRI passbands)"
                              if name.startswith("bessell") else
                              "Riello et al. (2021), A&A 649, A3; Gaia EDR3 passbands "
                              "(ESA/Gaia/DPAC)"),
                   "resampling": "linear interpolation, 0 outside the table"}
            for band, name in SPECLITE_FILTERS.items()},
        "vega": {"array": "vega_flux_lambda", "unit": "erg s-1 cm-2 A-1",
                 "package": "pyphot", "package_version": version("pyphot"),
                 "file": VEGA_FILE,
                 "origin": "HST CALSPEC, Bohlin, Hubeny & Rauch (2020), AJ 160, 21 "
                           "(STIS spectrum of Vega; public data of STScI)",
                 "resampling": "mean over each 1 nm bin of the linearly interpolated spectrum"},
        "notes": "Built by python -m starkiln.engine.colour.photometry_build; the program "
                 "reads only these arrays. tests/test_photometry.py checks them against the "
                 "packages.",
    }


def write_assets(folder=ASSETS) -> tuple[Path, Path]:
    """Write ``photometry.npz`` and ``photometry_sources.json`` into ``folder`` (atomically).

    References
    ----------
    See the module docstring.
    """
    from starkiln.engine.atomic import write_atomic, write_npz_atomic

    folder = Path(folder)
    npz, js = folder / NPZ_NAME, folder / SOURCES_NAME
    write_npz_atomic(npz, build_arrays())
    write_atomic(js, (json.dumps(sources(), indent=2) + "\n").encode("utf-8"))
    return npz, js


def main() -> int:  # pragma: no cover - a maintainer's command
    """``python -m starkiln.engine.colour.photometry_build``: rewrite the cached arrays."""
    for p in write_assets():
        print(f"wrote {p}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
