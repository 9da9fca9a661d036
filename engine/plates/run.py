"""Drawing a star plate from a catalogue file: read in chunks, colour, project, deposit.

:func:`radec_columns` picks the RA / Dec columns (the first named like ``ra`` / ``dec``
unless named); :func:`plate_chunks` yields ``name -> (values, missing)`` chunks from any
file ``starkiln catalogue`` reads (CSV and Parquet streamed through
:class:`starkiln.engine.catalogue.streaming.StreamSource`, the others read by astropy);
:func:`draw_chunk` colours one chunk through the catalogue's per-chunk colouring
(:func:`starkiln.engine.catalogue.colouring.colour_values`, the one render path), turns the
positions into the plate's frame (:mod:`starkiln.engine.plates.frames`) and deposits each
star with the projection module's ``project`` and the drawing module's ``deposit``.
Skipped rows are counted per reason, never silently.
"""

from __future__ import annotations

import re

import numpy as np

from starkiln.engine.errors import StarkilnError
from starkiln.engine.plates.frames import check_radec, plate_coordinates

_RA_NAMES = re.compile(r"^(ra|raj2000|ra_icrs|ra_deg|right_ascension)$", re.IGNORECASE)
_DEC_NAMES = re.compile(r"^(dec|de|dej2000|dec_icrs|dec_deg|de_icrs|declination)$",
                        re.IGNORECASE)


def radec_columns(names, ra_column=None, dec_column=None):
    """The RA and Dec column names, and a log line saying which were chosen.

    Parameters
    ----------
    names : list of str
        The catalogue's columns.
    ra_column, dec_column : str, optional
        Given by ``--ra-column`` / ``--dec-column``; otherwise the first column named like
        ra / dec (``ra``, ``RAJ2000``, ``ra_deg``, ...; case ignored).

    Returns
    -------
    (str, str, str)

    Raises
    ------
    StarkilnError
        A named column is missing, or no column looks like RA or Dec.

    References
    ----------
    Common practice for catalogue column names (RAJ2000 / DEJ2000, ra / dec).
    """
    picked = []
    for given, pattern, option in ((ra_column, _RA_NAMES, "--ra-column"),
                                   (dec_column, _DEC_NAMES, "--dec-column")):
        if given is not None:
            if given not in names:
                raise StarkilnError(f"{option} {given!r} is not a column; accepted: one of "
                                    + ", ".join(map(repr, names[:12])))
            picked.append(given)
            continue
        found = [n for n in names if pattern.match(n)]
        if not found:
            raise StarkilnError(f"no column named like {option[2:-7]}; name it with {option} "
                                "(degrees, ICRS)")
        picked.append(found[0])
    return picked[0], picked[1], f"positions: RA from {picked[0]!r}, Dec from {picked[1]!r} " \
                                 "(degrees, ICRS)"


def draw_chunk(image, plan, columns, ra_column, dec_column, spec, *, psf_sigma_px=0.7,
               values="display", frame=None, counts=None):
    """Colour, place and deposit one chunk of stars into ``image`` (in place).

    Parameters
    ----------
    image : ndarray, float32
        The plate (as the drawing module's ``deposit`` takes it).
    plan : CataloguePlan
        Colour settings and columns; for ``values="flux"`` it must carry one linear
        working space (``linear_columns``) and a magnitude column.
    columns : dict
        ``name -> (values, missing)``, as :func:`colour_values` takes.
    ra_column, dec_column : str
    spec : PlateSpec
    psf_sigma_px : float
    values : {"display", "flux"}
        display: the render path's display colour times its intensity; flux: its linear
        colour times 10^(-0.4 m) (Pogson's ratio, common practice).
    frame : dict, optional
        Keywords for :func:`starkiln.engine.plates.frames.plate_coordinates`.
    counts : dict, optional
        Updated in place: ``drawn``, ``outside the plate``, ``below horizon``,
        the RA/Dec reasons and ``render-flagged``.

    Returns
    -------
    dict
        ``counts``.

    References
    ----------
    :func:`starkiln.engine.catalogue.colouring.colour_values`; Pogson (1856) magnitudes.
    """
    counts = {} if counts is None else counts
    frame = dict(frame or {})
    if not frame.pop("through_air", False):
        rgb, ok = chunk_colours(plan, columns, values)
        return place_chunk(image, columns, ra_column, dec_column, rgb, ok, spec,
                           psf_sigma_px=psf_sigma_px, frame=frame, counts=counts)
    # Through the air: each star's altitude over the site first, then its colour with it.
    ra, dec, ok = _checked_radec(columns, ra_column, dec_column, counts)
    n = ra.shape[0]
    lon = np.full(n, np.nan)
    lat = np.full(n, np.nan)
    keep = np.zeros(n, dtype=bool)
    lon[ok], lat[ok], keep[ok] = plate_coordinates(ra[ok], dec[ok], **frame)
    with np.errstate(invalid="ignore"):
        above = lat >= 0.0
    altitude = np.where(above, np.minimum(lat, 90.0), np.nan)
    # Only the stars the plate keeps are coloured (each is rendered with its own air); the
    # others count as below the horizon whatever their other cells hold.
    drawn = ok & keep
    part = {k: (v[drawn], None if m is None else m[drawn]) for k, (v, m) in columns.items()}
    rgb = np.zeros((n, 3))
    coloured = np.ones(n, dtype=bool)
    rgb[drawn], coloured[drawn] = chunk_colours(plan, part, values,
                                                altitude_deg=altitude[drawn])
    return place_chunk(image, columns, ra_column, dec_column, rgb, coloured, spec,
                       psf_sigma_px=psf_sigma_px, frame=frame, counts=counts,
                       placed=(lon, lat, keep, ok, drawn & ~above))


#: The count of stars kept below the horizon (``below_horizon="keep"``) with ``through_air``:
#: drawn, without air (the atmosphere's model ends at the horizon).
NO_AIR = "drawn without air (below the horizon)"


def _checked_radec(columns, ra_column, dec_column, counts):
    """RA and Dec as float arrays (missing cells NaN) and the rows whose position is valid;
    the reasons of the others added to ``counts``."""
    ra, ra_miss = columns[ra_column]
    dec, dec_miss = columns[dec_column]
    ra = np.array(ra, dtype=float)
    dec = np.array(dec, dtype=float)
    for v, m in ((ra, ra_miss), (dec, dec_miss)):
        if m is not None:
            v[m] = np.nan
    ok, reasons = check_radec(ra, dec)
    for k, n in reasons.items():
        counts[k] = counts.get(k, 0) + n
    return ra, dec, ok


def chunk_colours(plan, columns, values="display", altitude_deg=None):
    """The colour each star of a chunk deposits, and which rows the render path coloured.

    The first half of :func:`draw_chunk`: the render path's colour through the catalogue's
    per-chunk colouring; display values (colour times intensity) or flux.

    Parameters
    ----------
    plan, columns, values
        As :func:`draw_chunk`.
    altitude_deg : numpy.ndarray, optional
        Each row's apparent altitude (NaN: no air), for the render path
        (:func:`starkiln.engine.catalogue.colouring.colour_values`). Flux values are dimmed
        by the extinction the path adds, whatever its source (these altitudes, the settings'
        fixed dust and altitude, a dust column).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        ``rgb`` (N, 3) and ``coloured`` (N,) bool.

    References
    ----------
    :func:`starkiln.engine.catalogue.colouring.colour_values`; Pogson (1856) magnitudes.
    """
    from starkiln.engine.catalogue.colouring import colour_values

    colour_cols = {k: columns[k] for k in plan.input_columns}
    res = colour_values(plan, colour_cols, altitude_deg, extinction=values == "flux")
    n = len(res.r)
    flagged = res.blank if res.blank is not None else np.zeros(n, bool)
    if values == "flux":
        if not res.linear or plan.magnitude_column is None:
            raise StarkilnError("--values flux needs a magnitude column and a linear space")
        mag = columns[plan.magnitude_column][0]
        if res.extinction_mag is not None:  # the magnitude at the eye
            mag = mag + res.extinction_mag
        weight = 10.0 ** (-0.4 * mag)
        rgb = np.stack(res.linear[:3], axis=-1) * weight[:, None]
    else:
        rgb = np.stack([res.r, res.g, res.b], axis=-1) * res.intensity[:, None]
    return rgb, ~flagged


def place_chunk(image, columns, ra_column, dec_column, rgb, coloured, spec, *,
                psf_sigma_px=0.7, frame=None, counts=None, placed=None):
    """Place and deposit stars already coloured (:func:`chunk_colours`) into ``image``.

    The second half of :func:`draw_chunk`: RA / Dec checked (reasons counted), turned into the
    plate's frame, projected and deposited.

    Parameters
    ----------
    image, columns, ra_column, dec_column, spec, psf_sigma_px, frame, counts
        As :func:`draw_chunk`.
    rgb : ndarray (N, 3)
    coloured : ndarray (N,) bool
        False for the rows the render path flagged (counted, not drawn).
    placed : tuple, optional
        ``(lon, lat, keep, ok, no_air)`` for every row, already computed (``through_air``):
        the frame's coordinates, the rows kept, the rows with a valid position (their RA/Dec
        reasons already counted), the rows coloured without air (those drawn are counted
        under :data:`NO_AIR`).

    Returns
    -------
    dict
        The counts, updated: drawn, and the rows skipped by reason.

    References
    ----------
    Calabretta & Greisen 2002, A&A 395, 1077 (the projections); the drawing module.
    """
    from starkiln.engine.plates.drawing import deposit
    from starkiln.engine.plates.projection import fisheye_valid_pixels, project

    counts = {} if counts is None else counts
    if placed is None:
        ra, dec, ok = _checked_radec(columns, ra_column, dec_column, counts)
    else:
        ok = placed[3].copy()
    flagged = ok & ~coloured
    counts["render-flagged"] = counts.get("render-flagged", 0) + int(flagged.sum())
    ok &= ~flagged
    if placed is None:
        lon, lat, keep = plate_coordinates(ra[ok], dec[ok], **(frame or {}))
    else:
        lon, lat, keep = (a[ok] for a in placed[:3])
        no_air = placed[4][ok][keep]
    counts["below horizon"] = counts.get("below horizon", 0) + int((~keep).sum())
    lon, lat, rgb = lon[keep], lat[keep], rgb[ok][keep]
    if (frame or {}).get("site") is not None:
        # Azimuth runs north through east, left-handed seen from inside; project() takes a
        # right-handed longitude like RA, so the sky over a site is not mirrored.
        lon = -lon
    x, y, face, inside = project(lon, lat, spec)
    counts["outside the plate"] = counts.get("outside the plate", 0) + int((~inside).sum())
    if placed is not None:
        counts[NO_AIR] = counts.get(NO_AIR, 0) + int((no_air & inside).sum())
    if inside.any():
        cube = spec.projection == "cube"
        valid = fisheye_valid_pixels(spec) if spec.projection == "fisheye" else None
        deposit(image, x[inside], y[inside], rgb[inside].astype(np.float32), psf_sigma_px,
                wrap_x=spec.projection == "equirect",
                face=np.asarray(face)[inside] if cube else None, valid=valid)
    counts["drawn"] = counts.get("drawn", 0) + int(inside.sum())
    return counts


def plate_chunks(path, plan, names, chunk_rows=1 << 17):
    """Chunks ``name -> (values, missing)`` of the columns ``names`` from a catalogue file.

    Parameters
    ----------
    path : path
        Any single file ``starkiln catalogue`` reads (CSV, ECSV, FITS, VOTable, Parquet).
    plan : CataloguePlan
    names : list of str
        Columns to read (RA, Dec and the plan's input columns).
    chunk_rows : int

    Yields
    ------
    (list of str, dict)
        The file's column names, then one chunk.

    References
    ----------
    :class:`starkiln.engine.catalogue.streaming.StreamSource` (CSV/Parquet, streamed);
    :func:`starkiln.engine.catalogue.formats.read_astropy` (the others, read whole).
    """
    from pathlib import Path

    from starkiln.engine.catalogue.columns import arrow_values, numpy_values
    from starkiln.engine.catalogue.formats import astropy_guard, format_of, read_astropy
    from starkiln.engine.catalogue.streaming import StreamSource

    path = Path(path)
    fmt = format_of(path, "input")
    if fmt in ("csv", "parquet"):
        source = StreamSource([path], fmt, plan, chunk_rows)
        all_names = list(source.schema.names)
        check_names(all_names, names, path)
        for batch in source.batches():
            yield all_names, {n: arrow_values(batch.column(n)) for n in names}
        return
    with astropy_guard():
        table = read_astropy(path, fmt)
    all_names = list(table.colnames)
    check_names(all_names, names, path)
    values = {n: numpy_values(table[n]) for n in names}
    rows = len(table)
    for start in range(0, rows, chunk_rows):
        stop = min(start + chunk_rows, rows)
        yield all_names, {k: (v[start:stop], None if m is None else m[start:stop])
                          for k, (v, m) in values.items()}


def check_names(all_names, names, path):
    """Raise a one-line :class:`StarkilnError` naming the first of ``names`` missing from
    ``all_names`` (the columns of ``path``) and the columns found."""
    missing = [n for n in names if n not in all_names]
    if missing:
        raise StarkilnError(f"{path}: no column {missing[0]!r}; accepted: one of "
                            + ", ".join(map(repr, all_names[:12])))


def column_names(path):
    """The column names of a catalogue file (read from its header / schema)."""
    from pathlib import Path

    from starkiln.engine.catalogue.formats import astropy_guard, format_of, read_astropy

    path = Path(path)
    fmt = format_of(path, "input")
    if fmt in ("csv", "parquet"):
        import pyarrow as pa

        from starkiln.engine.catalogue.streaming import csv_error

        try:
            if fmt == "parquet":
                import pyarrow.parquet as pq

                return list(pq.read_schema(path).names)
            import pyarrow.csv as pcsv

            with pcsv.open_csv(path) as reader:
                return list(reader.schema.names)
        except OSError as exc:
            raise StarkilnError(f"{path}: cannot read ({exc.strerror or exc})") from None
        except pa.ArrowException as exc:  # not a table pyarrow can read
            if fmt == "csv":
                raise csv_error(path, exc) from None
            raise StarkilnError(f"{path}: cannot read as Parquet ({exc})") from None
    with astropy_guard():
        return list(read_astropy(path, fmt).colnames)
