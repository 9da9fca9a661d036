"""A catalogue held in memory for the window, drawn as a small plate by the plate code.

- :func:`guess_columns` proposes the columns to use: RA and Dec exactly as ``starkiln plate``
  picks them (:func:`starkiln.engine.plates.run.radec_columns`), the colour source and the
  magnitude by their usual names (``temperature_K`` / ``teff``, ``b_v`` / ``bv``,
  ``bp_rp``, ``magnitude`` / ``vmag``; common practice). Whatever it cannot propose is None.
- :func:`load_star_table` reads those columns of any file ``starkiln catalogue`` reads, once,
  with the command's own reader (:func:`starkiln.engine.plates.run.plate_chunks`).
- :func:`preview_plate` draws the table into a plate of the given :class:`PlateSpec` with the
  given settings through the two halves of :func:`starkiln.engine.plates.run.draw_chunk`,
  the very function ``starkiln plate`` draws each chunk with (``chunk_colours`` for the whole
  table, then ``place_chunk`` chunk by chunk): same colours, same places, same footprints.
- :func:`plate_on_monitor` turns a plate of display values into the monitor's 8-bit colours
  at the viewing level (:func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`), as every
  colour the window paints is.

References
----------
Calabretta & Greisen 2002, A&A 395, 1077 (the projections); common practice for catalogue
column names.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.errors import StarkilnError

#: Most rows the window holds in memory (about 40 bytes a row for five columns).
MAX_TABLE_ROWS = 20_000_000
#: Rows placed between two looks at the interface (a few milliseconds each).
PREVIEW_CHUNK_ROWS = 4096
_SOURCE_NAMES = (
    ("temperature", re.compile(r"^(temperature_?k?|teff|t_?eff|temp)$", re.IGNORECASE)),
    ("bv", re.compile(r"^(b_?v|b-v|bmv|b_minus_v)$", re.IGNORECASE)),
    ("bp-rp", re.compile(r"^(bp_?rp|bp-rp|bp_rp0)$", re.IGNORECASE)),
)
_MAGNITUDE_NAMES = re.compile(r"^(magnitude|mag|vmag|v_?mag|mag_?v|m_?v)$", re.IGNORECASE)


@dataclass(frozen=True)
class ColumnChoice:
    """Which columns mean what: positions (degrees, ICRS), colour source, magnitude (V)."""

    ra: str | None = None
    dec: str | None = None
    source: str | None = None           # "temperature", "bv" or "bp-rp"
    source_column: str | None = None
    magnitude: str | None = None

    @property
    def complete(self) -> bool:
        """Whether positions and a colour source are all named."""
        return None not in (self.ra, self.dec, self.source, self.source_column)


def guess_columns(names) -> ColumnChoice:
    """The columns to propose for a catalogue with these column names.

    Parameters
    ----------
    names : list of str

    Returns
    -------
    ColumnChoice
        None where no column has a usual name (the window then asks).

    References
    ----------
    :func:`starkiln.engine.plates.run.radec_columns` for RA / Dec (the command's own choice);
    common practice for the other names.
    """
    from starkiln.engine.plates.run import radec_columns

    names = list(names)
    try:
        ra, dec, _line = radec_columns(names)
    except StarkilnError:
        ra = dec = None
    source = column = None
    for kind, pattern in _SOURCE_NAMES:
        found = [n for n in names if pattern.match(n)]
        if found:
            source, column = kind, found[0]
            break
    mags = [n for n in names if _MAGNITUDE_NAMES.match(n)]
    return ColumnChoice(ra, dec, source, column, mags[0] if mags else None)


@dataclass(frozen=True)
class StarTable:
    """A catalogue's columns in memory: ``name -> (values, missing)``, and their meaning."""

    path: Path
    names: tuple
    choice: ColumnChoice
    columns: dict
    rows: int

    def plan(self, settings):
        """The :class:`~starkiln.engine.catalogue.plan.CataloguePlan` for ``settings``."""
        from starkiln.engine.catalogue.plan import CataloguePlan

        c = self.choice
        return CataloguePlan(settings=settings, source=c.source, source_column=c.source_column,
                             magnitude_column=c.magnitude)


def load_star_table(path, choice: ColumnChoice | None = None) -> StarTable:
    """Read the columns a plate needs from a catalogue file.

    Parameters
    ----------
    path : path
        Any single file ``starkiln catalogue`` reads (CSV, ECSV, FITS, VOTable, Parquet).
    choice : ColumnChoice, optional
        The columns; missing entries are proposed by :func:`guess_columns`.

    Returns
    -------
    StarTable

    Raises
    ------
    StarkilnError
        Unreadable file, a column that is missing, no RA / Dec or colour column, too many rows;
        one line.

    References
    ----------
    :func:`starkiln.engine.plates.run.plate_chunks` and
    :func:`~starkiln.engine.plates.run.column_names` (the command's readers).
    """
    from dataclasses import replace

    from starkiln.engine.catalogue.plan import SOURCES
    from starkiln.engine.pipeline.settings import Settings
    from starkiln.engine.plates.run import column_names, plate_chunks, radec_columns

    path = Path(path)
    try:
        names = column_names(path)
    except OSError as exc:
        raise StarkilnError(f"{path}: cannot read ({exc.strerror or exc})") from None
    guess = guess_columns(names)
    choice = choice or ColumnChoice()
    choice = ColumnChoice(*(getattr(choice, f) or getattr(guess, f)
                            for f in ("ra", "dec", "source", "source_column", "magnitude")))
    ra, dec, _line = radec_columns(names, choice.ra, choice.dec)
    if choice.source is None or choice.source_column is None:
        raise StarkilnError(f"{path.name}: no colour column (temperature, B-V or BP-RP) "
                            "found; choose one")
    if choice.source not in SOURCES:
        raise StarkilnError(f"colour source {choice.source!r} unknown; accepted: "
                            + ", ".join(SOURCES))
    for n in (choice.source_column, choice.magnitude):
        if n is not None and n not in names:
            raise StarkilnError(f"{path.name}: no column {n!r}; accepted: one of "
                                + ", ".join(map(repr, names[:12])))
    choice = replace(choice, ra=ra, dec=dec)
    table = StarTable(path, tuple(names), choice, {}, 0)
    plan = table.plan(Settings())
    wanted = list(dict.fromkeys([ra, dec, *plan.input_columns]))
    parts: dict = {n: [] for n in wanted}
    rows = 0
    try:
        for _all, chunk in plate_chunks(path, plan, wanted):
            for n in wanted:
                parts[n].append(chunk[n])
            rows += len(chunk[ra][0])
            if rows > MAX_TABLE_ROWS:
                raise StarkilnError(f"{path.name}: more than {MAX_TABLE_ROWS:,} rows; the "
                                    "window previews up to that many (use starkiln plate)")
    except OSError as exc:
        raise StarkilnError(f"{path}: cannot read ({exc.strerror or exc})") from None
    if rows == 0:
        raise StarkilnError(f"{path.name}: no rows")
    columns = {}
    for n, chunks in parts.items():
        values = np.concatenate([np.asarray(v) for v, _m in chunks])
        masks = [m for _v, m in chunks]
        if all(m is None for m in masks):
            missing = None
        else:
            missing = np.concatenate([np.zeros(len(v), bool) if m is None else np.asarray(m)
                                      for (v, _), m in zip(chunks, masks)])
        columns[n] = (values, missing)
    return StarTable(path, tuple(names), choice, columns, rows)


def preview_plate(settings, table: StarTable, spec, psf_sigma_px: float = 0.7,
                  chunk_rows: int = PREVIEW_CHUNK_ROWS, should_stop=None, frame=None):
    """Draw a star table into a plate with ``settings`` (display values, float32).

    The two halves of :func:`starkiln.engine.plates.run.draw_chunk`, the command's drawing:
    the whole table is coloured at once (:func:`~starkiln.engine.plates.run.chunk_colours`),
    then placed and deposited in chunks of ``chunk_rows``
    (:func:`~starkiln.engine.plates.run.place_chunk`; a window's worker thread lets the
    interface run between them, and can stop early), with the catalogue's rule for small
    runs: up to
    :data:`starkiln.engine.catalogue.plan.EXACT_ROWS_WITH_MAGNITUDE` rows with magnitudes
    are coloured by the render path row by row (:meth:`CataloguePlan.for_rows`), larger
    ones through the colour grid.

    Parameters
    ----------
    settings : Settings
    table : StarTable
    spec : PlateSpec
        The preview's projection and size.
    psf_sigma_px : float
        Gaussian sigma, pixels.
    chunk_rows : int
    should_stop : callable, optional
        Asked between chunks; when it returns True the drawing stops and None is returned.
    frame : dict, optional
        Keywords for :func:`starkiln.engine.plates.frames.plate_coordinates` (the sky over
        a site at a moment), as ``draw_chunk`` takes them.

    Returns
    -------
    (numpy.ndarray, dict) or None
        The image ``(H, W, 3)`` float32 (for ``cube``: the six faces in one ``(3H, 4W, 3)``
        cross, as the command writes them) and the row counts (drawn, and skipped by reason).

    References
    ----------
    :func:`starkiln.engine.plates.run.draw_chunk` (the command's drawing of each chunk).
    """
    from starkiln.engine.plates.plate_files import cube_cross
    from starkiln.engine.plates.run import chunk_colours, place_chunk

    cube = spec.projection == "cube"
    image = np.zeros(((6,) if cube else ()) + (spec.height_px, spec.width_px, 3),
                     dtype=np.float32)
    counts: dict = {}
    c = table.choice
    plan = table.plan(settings).for_rows(table.rows)
    # draw_chunk's two halves: the whole table coloured at once (the render path's work
    # shared by every row of a temperature), then placed and deposited chunk by chunk
    rgb, coloured = chunk_colours(plan, {k: table.columns[k] for k in plan.input_columns})
    for start in range(0, table.rows, int(chunk_rows)):
        if should_stop is not None and should_stop():
            return None
        stop = min(start + int(chunk_rows), table.rows)
        chunk = {k: (v[start:stop], None if m is None else m[start:stop])
                 for k, (v, m) in ((n, table.columns[n]) for n in (c.ra, c.dec))}
        place_chunk(image, chunk, c.ra, c.dec, rgb[start:stop], coloured[start:stop], spec,
                    psf_sigma_px=psf_sigma_px, frame=frame, counts=counts)
    return (cube_cross(image) if cube else image), counts


def plate_on_monitor(image, display, monitor, viewing_level: float = 1.0) -> np.ndarray:
    """A plate of display values as the monitor's 8-bit colours, at the viewing level.

    The values (the display's code values, 0-1, times each star's intensity, summed) are
    clipped to 0-1 as a file would hold them, decoded by the display's transfer function and
    converted by :func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`.

    Parameters
    ----------
    image : ndarray (H, W, 3)
    display, monitor : Display
    viewing_level : float

    Returns
    -------
    numpy.ndarray of uint8, (H, W, 3), C-contiguous

    References
    ----------
    :func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`; the display's transfer function
    as in :func:`starkiln.engine.colour.displays.decode`.
    """
    from starkiln.engine.colour.monitor import monitor_rgb_8bit

    linear = display.decode(np.clip(np.asarray(image, dtype=float), 0.0, 1.0))
    rgb8 = monitor_rgb_8bit(linear, display, monitor, viewing_level)[0]
    return np.ascontiguousarray(rgb8, dtype=np.uint8)
