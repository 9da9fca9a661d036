"""Tabulated CIE functions, taken once from colour-science and cached.

The hot path (command line, window, exports) must not pay for ``import colour``
(about 0.7-1.4 s here). The tables it needs are therefore read from
colour-science on first use, resampled to the engine's wavelength grid
(360-830 nm at 1 nm) and cached as a ``.npz`` file keyed by the installed
colour-science version, so that a new colour-science release rebuilds them.
The cache lives in ``$STARKILN_CACHE_DIR``, else ``$XDG_CACHE_HOME/starkiln``,
else ``~/.cache/starkiln``. If no cache folder is writable the tables are kept
in memory for the process only.

Why a cache rather than a build step at install time: the tables then follow
whatever colour-science the user has (a wheel build would freeze them to the
version present at build time), and an editable install needs no build hook.

Sources of the tables (as published by CIE and shipped by [ColourScience]):

- CIE 1931 2 degree and CIE 1964 10 degree colour-matching functions,
  [CIE15] Tables T.4 and T.5 ([CIE018] at 1 nm).
- CIE 1924 photopic luminous efficiency V(lambda) and CIE 1951 scotopic
  luminous efficiency V'(lambda), [CIES010]. V' is
  tabulated at 380-780 nm; outside it is taken as 0 (its values at the ends
  are below 6e-4 of the peak).
- The CIE daylight basis functions S0, S1, S2, [CIE15] Table T.2 (5 nm),
  linearly interpolated to 1 nm as [CIE15] section 3.1 recommends.
"""

from __future__ import annotations

import os
import zipfile
import zlib
from functools import lru_cache
from pathlib import Path

import numpy as np

from starkiln.engine.atomic import write_npz_atomic  # noqa: F401 (also imported from here by the catalogue)
from starkiln.engine.errors import StarkilnError

#: Default wavelength grid of the engine ([CIE15] recommends 360-830 nm).
WAVELENGTH_MIN_NM = 360.0
WAVELENGTH_MAX_NM = 830.0
WAVELENGTH_STEP_NM = 1.0

TABLE_FORMAT = 1  # bump when the content or layout of the cached file changes

_KEYS = ("wavelength_nm", "cmf_cie1931", "cmf_cie1964", "v_photopic", "v_scotopic",
         "daylight_s0", "daylight_s1", "daylight_s2")


def wavelengths_nm() -> np.ndarray:
    """The engine's default wavelength grid, 360-830 nm at 1 nm ([CIE15] section 7.1)."""
    return np.arange(WAVELENGTH_MIN_NM, WAVELENGTH_MAX_NM + 0.5 * WAVELENGTH_STEP_NM,
                     WAVELENGTH_STEP_NM)


def _colour_version() -> str:
    from importlib import metadata

    try:
        return metadata.version("colour-science")
    except metadata.PackageNotFoundError as exc:  # pragma: no cover - install problem
        raise StarkilnError("colour-science is not installed; install it with "
                            "'pip install colour-science'") from exc


def cache_dir() -> Path:
    """Folder of the table cache (see the module docstring for the order searched)."""
    env = os.environ.get("STARKILN_CACHE_DIR")
    if env:
        return Path(env)
    xdg = os.environ.get("XDG_CACHE_HOME")
    base = Path(xdg) if xdg else Path.home() / ".cache"
    return base / "starkiln"


def cache_path() -> Path:
    """Path of the cached table file for the installed colour-science version."""
    return cache_dir() / f"cie-tables-colour-{_colour_version()}-f{TABLE_FORMAT}.npz"


def build_tables() -> dict[str, np.ndarray]:
    """Read the CIE tables from colour-science and resample them to :func:`wavelengths_nm`.

    Returns
    -------
    dict
        ``wavelength_nm`` (N,), ``cmf_cie1931`` and ``cmf_cie1964`` (N, 3),
        ``v_photopic``, ``v_scotopic``, ``daylight_s0/s1/s2`` (N,).

    References
    ----------
    [CIE15], Tables T.2, T.4, T.5; [CIES010].
    """
    import warnings

    import sys

    had_matplotlib = "matplotlib" in sys.modules
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        from colour.colorimetry import (
            MSDS_CMFS,
            SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES,
            SDS_LEFS,
        )
    # Without matplotlib installed, colour-science leaves a stand-in module (no __spec__) in
    # sys.modules["matplotlib"], which breaks later optional-dependency probes (astropy's);
    # take it out again.
    stand_in = sys.modules.get("matplotlib")
    if not had_matplotlib and stand_in is not None and getattr(stand_in, "__spec__", 0) is None:
        del sys.modules["matplotlib"]

    wl = wavelengths_nm()

    def on_grid(domain, values):
        values = np.asarray(values, dtype=np.float64)
        domain = np.asarray(domain, dtype=np.float64)
        if values.ndim == 1:
            return np.interp(wl, domain, values, left=0.0, right=0.0)
        return np.stack([np.interp(wl, domain, values[:, i], left=0.0, right=0.0)
                         for i in range(values.shape[1])], axis=-1)

    out = {"wavelength_nm": wl}
    for key, name in (("cmf_cie1931", "CIE 1931 2 Degree Standard Observer"),
                      ("cmf_cie1964", "CIE 1964 10 Degree Standard Observer")):
        m = MSDS_CMFS[name]
        out[key] = on_grid(m.wavelengths, m.values)
    for key, name in (("v_photopic", "CIE 1924 Photopic Standard Observer"),
                      ("v_scotopic", "CIE 1951 Scotopic Standard Observer")):
        s = SDS_LEFS[name]
        out[key] = on_grid(s.wavelengths, s.values)
    for i in range(3):
        s = SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES[f"S{i}"]
        out[f"daylight_s{i}"] = on_grid(s.wavelengths, s.values)
    return out


@lru_cache(maxsize=1)
def tables() -> dict[str, np.ndarray]:
    """The CIE tables on the engine grid, from the cache or built (and cached) once.

    References
    ----------
    See :func:`build_tables`.
    """
    path = cache_path()
    loaded, problem = _read_cache(path)
    if loaded is not None:
        return _frozen(loaded)
    if problem != "missing":
        import sys

        sys.stderr.write(f"starkiln: note: table cache {path} is unreadable ({problem}); "
                         "rebuilding it\n")
    built = build_tables()
    try:
        write_npz_atomic(path, built)
    except OSError:
        pass  # read-only home: keep the tables in memory for this process
    return _frozen(built)


#: Errors of reading a damaged ``.npz`` (a ZIP archive of ``.npy`` files).
NPZ_READ_ERRORS = (OSError, KeyError, ValueError, EOFError, zipfile.BadZipFile, zlib.error)


def _read_cache(path: Path) -> tuple[dict | None, str | None]:
    """``(tables, None)`` if the cached tables at ``path`` are whole, else ``(None, why not)``.

    A cache that is truncated, corrupt, of another shape or holding non-finite values is not
    used (it is then rebuilt).

    References
    ----------
    numpy ``.npz`` format (a ZIP archive, APPNOTE.TXT) (common practice).
    """
    if not path.exists():
        return None, "missing"
    n = wavelengths_nm().shape[0]
    out = {}
    try:
        with np.load(path) as data:
            for key in _KEYS:
                a = data[key]
                want = (n, 3) if key.startswith("cmf_") else (n,)
                if a.shape != want or a.dtype != np.float64 or not np.isfinite(a).all():
                    return None, f"{key} is not {want} finite float64 values"
                out[key] = a
    except NPZ_READ_ERRORS as exc:
        return None, f"{type(exc).__name__}: {exc}".splitlines()[0][:120]
    return out, None


def _frozen(arrays: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    for a in arrays.values():
        a.setflags(write=False)
    return arrays
