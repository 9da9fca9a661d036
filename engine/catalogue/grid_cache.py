"""Keeping colour grids: in memory per process and on disk, keyed by everything they depend on.

:func:`colour_grid` is the one way the catalogue engines get a
:class:`starkiln.engine.catalogue.colour_grid.ColourGrid`: from this process's
memory, else from an ``.npz`` file in the engine's cache folder
(:func:`starkiln.engine.colour.cie_data.cache_dir`), else built
(:func:`starkiln.engine.catalogue.grid_build.build_colour_grid`) and saved. The
file name holds a hash of the settings, the grid constants, the engine's source
code and the versions of numpy and colour-science, so a changed engine never
reuses an old grid. The cache folder keeps the :data:`CACHE_KEEP` newest grid
files.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import numpy as np

from starkiln.engine.catalogue.colour_grid import (DUST_FINE, DUST_GRID_NODES, EBV_GRID_MAX,
                                                   EBV_STEP,
                                                   GRID_NODES, MAGNITUDE_MAX, MAGNITUDE_MIN,
                                                   MAGNITUDE_STEP, VISION_GRID_NODES, ColourGrid)
from starkiln.engine.catalogue.grid_build import (BEND_TOLERANCE_DE, BEND_TOLERANCE_INTENSITY,
                                                  CELL_TOLERANCE_DE, CELL_TOLERANCE_INTENSITY,
                                                  build_colour_grid, build_dust_grid)
from starkiln.engine.pipeline.settings import Settings

#: Version of the on-disk grid format (part of the cache key).
GRID_CACHE_FORMAT = 2
#: How many grid files the cache folder keeps (older ones, e.g. from an earlier engine
#: version, are removed when a new one is saved).
CACHE_KEEP = 16
#: Source files whose code a grid depends on: every module of the engine.
ENGINE_SOURCE_DIR = Path(__file__).resolve().parent.parent


def _cache_key(settings: Settings, with_magnitude: bool, with_dust: bool = False) -> str:
    """Hash of everything a grid depends on: settings, grid constants, the engine's code
    (every ``.py`` file under ``engine/``) and the versions of numpy and colour-science
    (CIE tables)."""
    import hashlib
    import json
    from importlib import metadata

    h = hashlib.sha256()
    h.update(json.dumps(settings.to_dict(), sort_keys=True, default=str).encode())
    h.update(repr((with_magnitude, GRID_NODES, VISION_GRID_NODES, MAGNITUDE_MIN,
                   MAGNITUDE_MAX, MAGNITUDE_STEP, CELL_TOLERANCE_DE,
                   CELL_TOLERANCE_INTENSITY, BEND_TOLERANCE_DE,
                   BEND_TOLERANCE_INTENSITY, GRID_CACHE_FORMAT)).encode())
    if with_dust:
        h.update(repr(("dust", DUST_GRID_NODES, EBV_STEP, EBV_GRID_MAX, DUST_FINE)).encode())
    for path in sorted(ENGINE_SOURCE_DIR.rglob("*.py")):
        h.update(path.relative_to(ENGINE_SOURCE_DIR).as_posix().encode())
        h.update(path.read_bytes())
    for package in ("numpy", "colour-science"):
        try:
            h.update(metadata.version(package).encode())
        except metadata.PackageNotFoundError:
            pass
    return h.hexdigest()[:32]


def cache_file(settings: Settings, with_magnitude: bool = False,
               with_dust: bool = False) -> Path:
    """The file a colour grid for ``settings`` is kept in (whether or not it exists yet).

    Parameters
    ----------
    settings : Settings
    with_magnitude : bool
        The 2-D (temperature x magnitude) grid rather than the 1-D one.
    with_dust : bool
        The 2-D (temperature x E(B-V)) grid of a dust column (without magnitudes).

    Returns
    -------
    Path
        ``colour-grid-<hash>.npz`` in :func:`starkiln.engine.colour.cie_data.cache_dir`.
    """
    from starkiln.engine.colour.cie_data import cache_dir

    return cache_dir() / f"colour-grid-{_cache_key(settings, with_magnitude, with_dust)}.npz"


def _load_cached(settings: Settings, path: Path) -> ColourGrid | None:
    """The cached grid, or None when there is none; a damaged file (truncated, not a zip,
    wrong arrays) is reported in one line on stderr and rebuilt by the caller."""
    import sys

    from starkiln.engine.colour.cie_data import NPZ_READ_ERRORS

    if not path.is_file():
        return None
    try:
        with np.load(path) as data:
            mags = data["magnitude_nodes"] if "magnitude_nodes" in data else None
            slopes = data["slopes"] if "slopes" in data else None
            cells = data["exact_cells"] if "exact_cells" in data else None
            extra = {name: data[name] for name in ("ebv_nodes", "fine_cells", "fine_values")
                     if name in data}
            grid = ColourGrid(settings, data["mired_nodes"], mags, data["values"], slopes,
                              cells, **extra)
        if not (np.all(np.isfinite(grid.values)) and np.all(np.isfinite(grid.mired_nodes))):
            raise ValueError("values that are not finite")
        return grid
    except (*NPZ_READ_ERRORS, TypeError, IndexError) as exc:
        problem = f"{type(exc).__name__}: {exc}".splitlines()[0][:120]
        sys.stderr.write(f"starkiln: note: colour grid cache {path} is unreadable ({problem}); "
                         "rebuilding it\n")
        return None


def _save_cached(grid: ColourGrid, path: Path) -> None:
    from starkiln.engine.atomic import write_npz_atomic

    arrays = {"mired_nodes": grid.mired_nodes, "values": grid.values}
    for name in ("magnitude_nodes", "slopes", "exact_cells", "ebv_nodes", "fine_cells",
                 "fine_values"):
        if getattr(grid, name) is not None:
            arrays[name] = getattr(grid, name)
    try:
        write_npz_atomic(path, arrays)
        # "colour-*": grid files of earlier engine versions (then named colour-table-*) go too.
        old = sorted(path.parent.glob("colour-*.npz"), key=lambda p: p.stat().st_mtime)
        for stale in old[:-CACHE_KEEP]:
            stale.unlink(missing_ok=True)
    except OSError:
        pass  # read-only cache folder: the grid lives in this process only


@lru_cache(maxsize=8)
def colour_grid(settings: Settings, with_magnitude: bool = False,
                with_dust: bool = False) -> ColourGrid:
    """The (cached) colour grid of the render path for ``settings``.

    Grids are kept in memory per process and on disk in the engine's cache folder
    (:func:`starkiln.engine.colour.cie_data.cache_dir`), keyed by a hash of the settings,
    the grid and the engine's source code, so a changed engine never reuses an old grid.

    Parameters
    ----------
    settings : Settings
        The settings whose colours the grid holds (part of the cache key; hashable).
    with_magnitude : bool
        True for the night-vision grid over temperature and magnitude, False (default)
        for the grid over temperature alone.
    with_dust : bool
        True (without magnitudes) for the grid over temperature and E(B-V) of a dust column
        (:func:`starkiln.engine.catalogue.grid_build.build_dust_grid`).

    Returns
    -------
    ColourGrid
        The same object for the same arguments within a process (``functools.lru_cache``).

    References
    ----------
    :func:`starkiln.engine.catalogue.grid_build.build_colour_grid` (render path only).
    """
    if with_dust and with_magnitude:
        raise ValueError("a dust grid takes no magnitudes (those rows are rendered exactly)")
    path = cache_file(settings, with_magnitude, with_dust)
    grid = _load_cached(settings, path)
    if grid is None:
        grid = build_dust_grid(settings) if with_dust else \
            build_colour_grid(settings, with_magnitude)
        _save_cached(grid, path)
    return grid
