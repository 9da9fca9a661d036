"""Colouring one chunk of catalogue rows: a status per row, then colours from the render path.

:func:`colour_values` is the per-chunk function of every engine: numpy arrays
in (from :mod:`starkiln.engine.catalogue.columns`), float32 colours,
intensities and status codes out. It splits a large chunk over a small thread
pool (numpy releases the GIL) and each part goes through
:func:`colour_values_serial`. :func:`colour_arrow` and :func:`colour_partition`
wrap it for pyarrow batches and pandas partitions (Dask,
:mod:`starkiln.engine.catalogue.dask_engine`).

Colours come from the colour grid (:func:`starkiln.engine.catalogue.grid_cache.colour_grid`,
a fine grid built by :func:`starkiln.engine.pipeline.render.render`, CIEDE2000 <= 0.2
against the exact path, proven in the tests), or from ``render`` itself with
``exact=True``. The accepted ranges of the temperature sources and the G-to-V
relation are those of :mod:`starkiln.engine.stars.temperature` ([Ballesteros2012]) and
:mod:`starkiln.engine.stars.gaia` ([Mucciarelli2021]; [Riello2021]).
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

from starkiln.engine.path.chain import has_path
from starkiln.engine.catalogue.columns import arrow_values, output_schema, status_array
from starkiln.engine.catalogue.plan import (BLUER_THAN_BLACKBODY, DUST_OUT_OF_RANGE,
                                            EXTRAPOLATED, LAST_COLOURED, MAGNITUDE_MAX,
                                            MAGNITUDE_MIN, MAGNITUDE_OUT_OF_RANGE,
                                            MISSING_DUST, MISSING_MAGNITUDE, MISSING_TEMPERATURE,
                                            NOT_A_NUMBER, OUT_OF_RANGE, STATUSES,
                                            TOO_BLUE_FOR_DUST, CataloguePlan)


@dataclass
class Coloured:
    """Colours of one chunk of rows.

    Attributes
    ----------
    r, g, b, intensity : float32 arrays; NaN where the row is not coloured.
    codes : uint8 status codes (indices into :data:`STATUSES`).
    blank : bool array, True where the row is not coloured; None when every row is.
    linear : float32 arrays r, g, b of each linear working space of the plan, in order
        (``plan.linear_names``); NaN where the row is not coloured.
    extinction_mag : float32 magnitudes the path of the light adds (the render path's
        ``extinction_mag``) where a per-star altitude was given; None otherwise.
    """

    r: np.ndarray
    g: np.ndarray
    b: np.ndarray
    intensity: np.ndarray
    codes: np.ndarray
    blank: np.ndarray | None
    linear: tuple = ()
    extinction_mag: np.ndarray | None = None

    def counts(self) -> np.ndarray:
        """Rows per status (aligned with :data:`STATUSES`)."""
        return np.bincount(self.codes, minlength=len(STATUSES))[: len(STATUSES)]


def _flag(codes: np.ndarray, condition, code: int) -> None:
    """Set ``code`` where ``condition`` holds and no earlier reason was found
    (``extrapolated`` and ``bluer-than-blackbody`` are not reasons: a later one replaces them)."""
    if condition is None or not condition.any():
        return
    np.copyto(codes, np.uint8(code), where=condition & (codes <= LAST_COLOURED))


#: Rows below which a chunk is coloured by one thread.
_MIN_ROWS_PER_THREAD = 1 << 15
_POOL = None


def _pool(threads: int):
    """The process's colouring thread pool, grown to at least ``threads`` workers."""
    global _POOL
    from concurrent.futures import ThreadPoolExecutor

    if _POOL is None or _POOL._max_workers < threads:
        _POOL = ThreadPoolExecutor(max_workers=threads, thread_name_prefix="starkiln-colour")
    return _POOL


def colour_values(plan: CataloguePlan, columns: dict, altitude_deg=None,
                  extinction: bool = False) -> Coloured:
    """Colour one chunk of rows, split over ``plan.threads`` threads for large chunks.

    Parameters
    ----------
    plan : CataloguePlan
        Column meanings and settings; ``plan.threads`` 0 means one thread per core, up
        to 4. Chunks below 2 x 32 768 rows are coloured by one thread.
    columns : dict
        ``name -> (values, missing)`` as for :func:`colour_values_serial`.
    altitude_deg : numpy.ndarray, optional
        Per-row apparent altitudes, as for :func:`colour_values_serial`.
    extinction : bool
        Also return what the path adds to each row's magnitude, as for
        :func:`colour_values_serial`.

    Returns
    -------
    Coloured
        The same as :func:`colour_values_serial` returns for the whole chunk (each part
        is coloured by it; the parts are independent rows, so the result does not depend
        on the split).

    References
    ----------
    :func:`colour_values_serial` (the rules and references).
    """
    n = next(iter(columns.values()))[0].shape[0]
    threads = plan.threads or min(4, os.cpu_count() or 1)
    parts = min(threads, n // _MIN_ROWS_PER_THREAD)
    if parts < 2 or altitude_deg is not None:  # per-star air: render's own threads suffice
        return colour_values_serial(plan, columns, altitude_deg, extinction)
    if plan.deredden_ebv is not None:  # build the dereddening table before the threads
        from starkiln.engine.path.deredden import reddened_range

        reddened_range(_INDEX[plan.source], plan.deredden_ebv, law=plan.settings.dust_law,
                       rv=plan.settings.dust_rv)
    dust = plan.dust_column is not None
    if not plan.exact and not (dust and plan.with_magnitude):
        # build (or load) the grid once, before the threads need it (a dust column with
        # magnitudes takes the render path's lattice instead, built on first use)
        from starkiln.engine.catalogue.grid_cache import colour_grid

        colour_grid(plan.settings, plan.with_magnitude, dust)
        for ws in plan.linear_settings:
            colour_grid(ws, plan.with_magnitude, dust)
    bounds = np.linspace(0, n, parts + 1).astype(int)
    out = [np.empty(n, dtype=np.float32) for _ in range(4 + len(plan.linear_names))]
    codes = np.empty(n, dtype=np.uint8)
    ext = np.empty(n, dtype=np.float32) if extinction else None

    def work(p):
        a, b = bounds[p], bounds[p + 1]
        sub = {k: (v[a:b], None if m is None else m[a:b]) for k, (v, m) in columns.items()}
        res = colour_values_serial(plan, sub, extinction=extinction)
        for dst, src in zip(out, (res.r, res.g, res.b, res.intensity) + tuple(res.linear)):
            dst[a:b] = src
        codes[a:b] = res.codes
        if ext is not None:
            ext[a:b] = np.nan if res.extinction_mag is None else res.extinction_mag

    for f in [_pool(threads).submit(work, p) for p in range(parts)]:
        f.result()
    blank = codes > LAST_COLOURED
    if ext is not None and np.isnan(ext).all():
        ext = None  # no path of the light: nothing added
    return Coloured(*out[:4], codes, blank if blank.any() else None, tuple(out[4:]), ext)


def colour_values_serial(plan: CataloguePlan, columns: dict, altitude_deg=None,
                         extinction: bool = False) -> Coloured:
    """Colour one chunk of rows: status per row, then colours from the render path.

    Parameters
    ----------
    plan : CataloguePlan
        Column meanings and settings.
    columns : dict
        ``name -> (values, missing)`` for every name in ``plan.input_columns``:
        ``values`` a float64 array (NaN for text that is not a number),
        ``missing`` a bool array of empty cells, or None when there are none.
    altitude_deg : numpy.ndarray, optional
        Per-row apparent altitudes, degrees (a plate over a site, ``through_air``): each row
        is rendered exactly with its own altitude (``render(altitude_deg=...)``, the settings'
        air); NaN for a row without air (below the horizon), rendered without the atmosphere.
        The result's ``extinction_mag`` then holds what the path adds.
    extinction : bool
        Also give ``extinction_mag`` for every route (the fixed path of the settings, a dust
        column): from the render of the rows where they are rendered, else from the render
        path's lattice (:func:`starkiln.engine.pipeline.render.path_extinction_mag`).
        None when nothing lies on the path.

    Returns
    -------
    Coloured
        Colours, intensities and status codes, one per row, in order.

    Notes
    -----
    The first reason found wins, in this order: temperature source missing,
    not a number, out of range; then magnitude missing, not a number, out of
    range; then the dust column missing, not a number, out of range (E(B-V), or A_V / R_V,
    0-10 mag: [Cardelli1989] section I, E(B-V) >= 0). Accepted ranges: 500-100 000 K; with the synthetic index model (default) B-V
    -0.40 to 10.66 and BP-RP -0.60 to 14.82, colours bluer than the 100 000 K blackbody
    coloured at 100 000 K with status ``bluer-than-blackbody``
    (:func:`starkiln.engine.stars.temperature.index_range`); with the relation model B-V
    -0.40 to 2.00 ([Ballesteros2012]) and BP-RP 0.39-1.50 ([Mucciarelli2021]; -0.5 to 5.0
    with ``extrapolate_bp_rp``); V -30 to 30; BP-RP for G-to-V -0.5 to 5.0 ([Riello2021]).

    References
    ----------
    :func:`starkiln.engine.pipeline.render.render` (the colours), :mod:`starkiln.engine.catalogue.colour_grid` (the
    grid), :mod:`starkiln.engine.stars.temperature`, :mod:`starkiln.engine.stars.gaia` (relations).
    """
    from starkiln.engine.stars import gaia as pg
    from starkiln.engine.stars import temperature as st
    from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K

    src, src_missing = columns[plan.source_column]
    n = src.shape[0]
    codes = np.zeros(n, dtype=np.uint8)
    _flag(codes, src_missing, MISSING_TEMPERATURE)
    finite = np.isfinite(src)
    _flag(codes, ~finite, NOT_A_NUMBER)
    if plan.deredden_ebv is not None:  # observed colours: the intrinsic ones from here on
        src = _dereddened(plan, src, codes)
    with np.errstate(invalid="ignore"):
        if plan.source == "temperature":
            inside = (src >= TEMPERATURE_MIN_K) & (src <= TEMPERATURE_MAX_K)
        else:
            lo, hi = st.index_range(_INDEX[plan.source], plan.index_model,
                                    extrapolate=plan.extrapolate_bp_rp)
            inside = (src >= lo) & (src <= hi)
        _flag(codes, ~inside, OUT_OF_RANGE)
        if plan.source == "bp-rp" and plan.extrapolate_bp_rp:
            _flag(codes, ~pg.bp_rp_in_range(src), EXTRAPOLATED)
        if plan.source != "temperature" and plan.index_model == "synthetic":
            _flag(codes, src < st.blackbody_blue_limit(_INDEX[plan.source]),
                  BLUER_THAN_BLACKBODY)

    v_mag = None
    if plan.with_magnitude:
        if plan.magnitude is not None:
            mag = np.full(n, plan.magnitude)
        else:
            mag, mag_missing = columns[plan.magnitude_column]
            _flag(codes, mag_missing, MISSING_MAGNITUDE)
            _flag(codes, ~np.isfinite(mag), NOT_A_NUMBER)
        if plan.magnitude_band == "G":
            c, c_missing = columns[plan.bp_rp_column]
            _flag(codes, c_missing, MISSING_MAGNITUDE)
            _flag(codes, ~np.isfinite(c), NOT_A_NUMBER)
            with np.errstate(invalid="ignore"):
                c_ok = (c >= pg.BP_RP_G_TO_V_MIN) & (c <= pg.BP_RP_G_TO_V_MAX)
            _flag(codes, ~c_ok, MAGNITUDE_OUT_OF_RANGE)
            mag = mag - pg.g_minus_v(np.where(c_ok, c, 0.8))
        with np.errstate(invalid="ignore"):
            _flag(codes, ~((mag >= MAGNITUDE_MIN) & (mag <= MAGNITUDE_MAX)),
                  MAGNITUDE_OUT_OF_RANGE)
        v_mag = mag

    ebv = None
    if plan.dust_column is not None:
        from starkiln.engine.path.dust import EBV_RANGE

        dust_in, dust_missing = columns[plan.dust_column]
        _flag(codes, dust_missing, MISSING_DUST)
        _flag(codes, ~np.isfinite(dust_in), NOT_A_NUMBER)
        ebv = dust_in / plan.settings.dust_rv if plan.dust_quantity == "av" else dust_in
        with np.errstate(invalid="ignore"):
            _flag(codes, ~((ebv >= EBV_RANGE[0]) & (ebv <= EBV_RANGE[1])), DUST_OUT_OF_RANGE)

    coloured = codes <= LAST_COLOURED
    all_coloured = bool(coloured.all())
    blank = None if all_coloured else ~coloured
    if not coloured.any():
        nan = np.full(n, np.nan, dtype=np.float32)
        return Coloured(nan, nan.copy(), nan.copy(), nan.copy(), codes, blank,
                        tuple(nan.copy() for _ in plan.linear_names),
                        None if altitude_deg is None and not extinction else nan.copy())

    safe = src if all_coloured else np.where(coloured, src, _SAFE[plan.source])
    if plan.source == "temperature":
        temperature_K = safe
    elif plan.index_model == "synthetic":  # rows checked above: the table lookup alone
        from starkiln.engine.colour.photometry import lookup_temperature

        temperature_K = lookup_temperature(safe, _INDEX[plan.source])
    else:
        temperature_K = st.temperature_from_index(safe, _INDEX[plan.source], plan.index_model,
                                                  extrapolate=True)
    if v_mag is not None and not all_coloured:
        v_mag = np.where(coloured, v_mag, 0.0)
    if ebv is not None and not all_coloured:
        ebv = np.where(coloured, ebv, 0.0)

    want_extinction, extinction = extinction, None
    if altitude_deg is None:
        (r, g, b, intensity), linear, extinction = _colours(plan, temperature_K, v_mag, ebv)
        if not want_extinction:
            extinction = None
        elif extinction is None and has_path(plan.settings, ebv):
            from starkiln.engine.pipeline.render import path_extinction_mag

            extinction = path_extinction_mag(plan.settings, temperature_K,
                                             dust_ebv=ebv).astype(np.float32)
    else:
        (r, g, b, intensity), linear, extinction = _colours_in_air(
            plan, temperature_K, v_mag, ebv, np.asarray(altitude_deg, dtype=np.float64))
    if blank is not None:
        for a in (r, g, b, intensity) + linear + (() if extinction is None else (extinction,)):
            a[blank] = np.nan
    return Coloured(r, g, b, intensity, codes, blank, linear, extinction)


def _dereddened(plan: CataloguePlan, observed, codes) -> np.ndarray:
    """The intrinsic indices of observed ones behind ``plan.deredden_ebv`` (vectorised);
    rows no blackbody behind the dust can show get ``too-blue-for-dust`` or ``out-of-range``.

    References
    ----------
    :func:`starkiln.engine.path.deredden.deredden` ([BessellMurphy2012], [Riello2021]).
    """
    from starkiln.engine.path import deredden as dr

    out = dr.deredden(_INDEX[plan.source], observed, plan.deredden_ebv,
                      law=plan.settings.dust_law, rv=plan.settings.dust_rv)
    _flag(codes, out.status == dr.TOO_BLUE, TOO_BLUE_FOR_DUST)
    _flag(codes, out.status == dr.TOO_RED, OUT_OF_RANGE)
    return out.intrinsic_mag


#: The colour index of each colour source.
_INDEX = {"bv": "B-V", "bp-rp": "BP-RP"}
#: Stand-in values for rows that are not coloured (their results are discarded).
_SAFE = {"temperature": 5772.0, "bv": 0.65, "bp-rp": 0.82}


def _channels(rgb) -> tuple:
    """Three contiguous float32 channel arrays of an (n, 3) array."""
    rgb = np.asarray(rgb, dtype=np.float32)
    return tuple(np.ascontiguousarray(rgb[:, k]) for k in range(3))


def _colours(plan: CataloguePlan, temperature_K, v_mag, ebv=None):
    """(r, g, b, intensity), the linear working-space channels (float32) and the extinction
    (None where the colour grid gave the colours), from the colour grids or, with ``exact``,
    from one render per chunk (``ebv``: per-star E(B-V) of a dust column, to the render path
    as ``dust_ebv``; without magnitudes the grid then has an E(B-V) axis, with magnitudes the
    chunk is rendered with the render path's lattice of the arriving light,
    ``path_sums="table"``).

    Exact: the chunk is rendered once, and each working space's colours come from the same
    render (:func:`starkiln.engine.pipeline.render.same_stars_in`: its tristimulus values and
    night-vision quantities, no second spectral pass). Grid: each working space has its own
    colour grid, built by the render path like the display's.
    """
    if plan.exact:
        return _exact(plan, temperature_K, v_mag, ebv)
    if ebv is not None and v_mag is not None:  # a dust column with magnitudes: the lattice
        return _exact(plan, temperature_K, v_mag, ebv, path_sums="table")
    from starkiln.engine.catalogue.grid_cache import colour_grid

    dust = ebv is not None
    grid = colour_grid(plan.settings, v_mag is not None, dust)
    linear = tuple(a for ws in plan.linear_settings
                   for a in colour_grid(ws, v_mag is not None, dust).lookup(temperature_K, v_mag,
                                                                            ebv)[:3])
    return tuple(grid.lookup(temperature_K, v_mag, ebv)), linear, None


def _exact(plan: CataloguePlan, temperature_K, v_mag, ebv=None, altitude_deg=None,
           path_sums="exact"):
    """One render of a chunk: ((r, g, b, intensity), linear channels, extinction or None);
    ``path_sums`` as :func:`starkiln.engine.pipeline.render.render` takes it."""
    from starkiln.engine.pipeline.render import render, same_stars_in

    rendered = render(plan.settings, temperature_K, v_mag, dust_ebv=ebv,
                      altitude_deg=altitude_deg, path_sums=path_sums)
    inten = np.broadcast_to(rendered.intensity, temperature_K.shape).astype(np.float32)
    linear = tuple(a for ws in plan.linear_settings
                   for a in _channels(same_stars_in(ws, rendered)))
    ext = rendered.extinction_mag
    if ext is not None:
        ext = np.broadcast_to(ext, temperature_K.shape).astype(np.float32)
    return _channels(rendered.rgb_encoded) + (inten,), linear, ext


def _colours_in_air(plan: CataloguePlan, temperature_K, v_mag, ebv, altitude_deg):
    """:func:`_exact` with each row's own altitude; rows with a NaN altitude (below the
    horizon) are rendered without air. Returns the channels, the linear channels and the
    extinction (0 where nothing lies on the path)."""
    air = np.isfinite(altitude_deg)
    n = temperature_K.shape[0]
    groups = [(air, np.clip(altitude_deg, 0.0, 90.0)), (~air, None)]
    channels = [np.zeros(n, dtype=np.float32) for _ in range(4 + len(plan.linear_names) + 1)]
    for rows, alt in groups:
        if not rows.any():
            continue
        pick = (lambda a: None if a is None else a[rows])
        main, linear, ext = _exact(plan, temperature_K[rows], pick(v_mag), pick(ebv),
                                   pick(alt), "exact" if plan.exact else "table")
        for dst, src in zip(channels, main + linear + ((ext,) if ext is not None else ())):
            dst[rows] = src
    return tuple(channels[:4]), tuple(channels[4:-1]), channels[-1]


# --- pyarrow and pandas wrappers ---------------------------------------------------------


def colour_arrow(batch, plan: CataloguePlan, schema=None):
    """Colour a pyarrow RecordBatch or Table: the same columns plus r, g, b, intensity, status.

    Parameters
    ----------
    batch : pyarrow.RecordBatch or pyarrow.Table
    plan : CataloguePlan
    schema : pyarrow.Schema, optional
        The output schema (from :func:`output_schema`); computed when omitted.

    Returns
    -------
    (pyarrow.RecordBatch or pyarrow.Table, numpy.ndarray)
        The coloured rows and the row counts per status.
    """
    import pyarrow as pa

    if schema is None:
        schema = output_schema(batch.schema, plan)
    cols = {name: arrow_values(batch.column(name)) for name in plan.input_columns}
    res = colour_values(plan, cols)
    mask = res.blank
    new = [pa.array(a, mask=mask) if mask is not None else pa.array(a)
           for a in (res.r, res.g, res.b, res.intensity)]
    new.append(status_array(res.codes))
    new += [pa.array(a, mask=mask) if mask is not None else pa.array(a) for a in res.linear]
    if isinstance(batch, pa.Table):
        arrays = [batch.column(i) for i in range(batch.num_columns)] + new
        return pa.Table.from_arrays(arrays, schema=schema), res.counts()
    return pa.RecordBatch.from_arrays(list(batch.columns) + new, schema=schema), res.counts()


def colour_partition(frame, plan: CataloguePlan):
    """Colour a pandas DataFrame (a Dask partition): the same per-chunk function, via pyarrow.

    Parameters
    ----------
    frame : pandas.DataFrame
        Rows of a catalogue (any index; it is kept).
    plan : CataloguePlan

    Returns
    -------
    pandas.DataFrame
        The same columns plus r, g, b, intensity, status, with pyarrow-backed
        dtypes (``pandas.ArrowDtype``).
    """
    import pandas as pd
    import pyarrow as pa

    table = pa.Table.from_pandas(frame, preserve_index=False)
    out, _ = colour_arrow(table, plan)
    result = out.to_pandas(types_mapper=pd.ArrowDtype)
    result.index = frame.index
    return result
