"""Palettes: swatch sets rendered by the one render path, and their writers.

Swatch sets
-----------
- Steps: ``N`` temperatures across ``[A, B]`` kelvin through the same axis
  mappings as lookup textures (:mod:`starkiln.engine.exports.textures`); swatch ``k`` (0-based) sits
  at ``u = k / (N - 1)``, so both ends are included.
- Classes: one swatch per main-sequence spectral class (all of O5V-M8V from
  :data:`starkiln.engine.stars.temperature.SPECTRAL_CLASS_TEFF_K`, or a chosen list).

Formats (by extension)
----------------------
- ``.json``: ``{"starkiln_palette": 1, "settings": {...}, "palette": {...},
  "swatches": [{"name", "temperature_K", "hex", "rgb_encoded", "rgb_linear",
  "rgb_8bit", "xy", "in_gamut", ["spectral_class"]}, ...]}``.
- ``.csv``: a header row, then one row a swatch ([RFC4180]: comma-separated,
  CRLF line ends, fields quoted when needed).
- ``.gpl``: the GIMP palette text format, as GIMP itself reads and writes it
  ([GIMP-GPL]: ``app/core/gimppalette-load.c``, ``gimp_palette_load_gpl``,
  and ``gimppalette-save.c``): first line ``GIMP Palette``, then ``Name: ``,
  then ``Columns: `` (0-256), ``#`` comment lines, then one row a colour
  ``R G B<tab>name`` with integers 0-255; LF line ends, no blank lines.
- ``.png``: a contact sheet for review: labelled swatches on a dark
  background, with a title line naming the display and the white; the JSON
  form is embedded in a ``tEXt`` chunk with keyword ``starkiln``.

Every swatch is full-intensity colour (no magnitude); ``hex`` and
``rgb_8bit`` are ``floor(rgb_encoded * 255 + 0.5)`` (common practice).
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np

from starkiln.engine.errors import StarkilnError

PALETTE_FORMAT = 1
PALETTE_FORMATS = {".json": "json", ".csv": "csv", ".gpl": "gpl", ".png": "sheet"}
MAX_STEPS = 4096
CSV_COLUMNS = ("name", "temperature_K", "spectral_class", "hex",
               "r_encoded", "g_encoded", "b_encoded", "r_linear", "g_linear", "b_linear",
               "r_8bit", "g_8bit", "b_8bit", "x", "y", "in_gamut")


@dataclass(frozen=True)
class Palette:
    """A rendered swatch set.

    Attributes
    ----------
    names : (N,) swatch names ("5800 K", "G2V").
    temperature_K : (N,) temperatures.
    spectral_class : (N,) class names, or None for temperature steps.
    rendered : starkiln.engine.pipeline.render.Rendered of shape (N,).
    description : plain data saying how the set was made (axis, range, steps or classes).
    settings : starkiln.engine.pipeline.settings.Settings used.
    """

    names: tuple
    temperature_K: np.ndarray
    spectral_class: tuple | None
    rendered: object
    description: dict
    settings: object

    def title(self) -> str:
        """One line naming the display, white, adaptation, gamut and observer."""
        s = self.settings
        return (f"Starkiln palette | display {s.display.name} | white {s.scene_white} "
                f"({s.adaptation}) | gamut {s.gamut} | observer {s.observer}")

    def default_name(self) -> str:
        """A palette name from its content, e.g. ``Starkiln 1000-40000 K srgb D65``."""
        s = self.settings
        d = self.description
        what = ("spectral classes" if d["kind"] == "spectral-classes"
                else f"{d['range_K'][0]:g}-{d['range_K'][1]:g} K")
        return f"Starkiln {what} {s.display.name} {s.scene_white}"

    @cached_property
    def rgb_8bit(self) -> np.ndarray:
        """(N, 3) uint8 ``floor(rgb_encoded * 255 + 0.5)``, computed once (read-only).

        References
        ----------
        :func:`starkiln.engine.colour.quantisation.to_8bit` (common practice).
        """
        from starkiln.engine.colour.quantisation import to_8bit

        q = to_8bit(self.rendered.rgb_encoded)
        q.setflags(write=False)
        return q

    @cached_property
    def hex(self) -> tuple[str, ...]:
        """``#rrggbb`` of each swatch, computed once (writers index it inside their loops).

        References
        ----------
        :func:`starkiln.engine.colour.quantisation.to_hex` ([CSSColor4] hex notation).
        """
        return tuple(self.rendered.hex().tolist())


def step_temperatures(range_K, steps: int, axis: str = "mired") -> np.ndarray:
    """``steps`` temperatures across ``range_K`` at ``u = k / (steps - 1)`` (ends included).

    Parameters
    ----------
    range_K : (float, float)
        ``(A, B)`` kelvin, ``A < B``, within 500-100 000 K.
    steps : int
        2-4096.
    axis : {"mired", "log", "linear"}
        Spacing (see :mod:`starkiln.engine.exports.textures`).

    References
    ----------
    Axis mappings of :mod:`starkiln.engine.exports.textures` (mired = 10^6 / T, common practice).

    Examples
    --------
    >>> step_temperatures((2000.0, 8000.0), 3, "mired").round(6).tolist()
    [2000.0, 3200.0, 8000.0]
    """
    from starkiln.engine.colour.temperature_axis import temperature_from_u
    from starkiln.engine.exports.texture_spec import check_temperature_range

    a, b = check_temperature_range(range_K)
    n = _check_steps(steps)
    u = np.arange(n, dtype=np.float64) / (n - 1)
    t = np.clip(temperature_from_u(u, (a, b), axis), a, b)
    t[0], t[-1] = a, b
    return t


def _check_steps(steps) -> int:
    try:
        n = int(steps)
        if n != steps:
            raise ValueError
    except (TypeError, ValueError):
        raise StarkilnError(f"steps {steps!r} is not a whole number; accepted: 2-{MAX_STEPS}") from None
    if not 2 <= n <= MAX_STEPS:
        raise StarkilnError(f"steps {n} is outside the accepted range 2-{MAX_STEPS}")
    return n


def class_temperatures(classes=None, index_model: str = "synthetic"):
    """Names and rendered temperatures of main-sequence spectral classes.

    Parameters
    ----------
    classes : sequence of str, optional
        Class names such as ``"G2V"`` or ``"K5.5"``; all tabulated classes
        O5V-M8V when None.
    index_model : {"synthetic", "relation"}
        ``synthetic`` (default): the blackbody of each class's mean intrinsic B-V;
        ``relation``: each class's effective temperature.

    Returns
    -------
    (tuple of str, numpy.ndarray)

    References
    ----------
    :func:`starkiln.engine.stars.temperature.temperature_for_spectral_class` ([Mamajek2018]
    B-V, [Mamajek2024] Teff, mean dwarf sequence).
    """
    from starkiln.engine.stars.temperature import (SPECTRAL_CLASS_TEFF_K,
                                                   temperature_for_spectral_class)

    if classes is None:
        names = tuple(f"{k}V" for k in SPECTRAL_CLASS_TEFF_K)
    else:
        names = tuple(str(c).strip().upper() for c in classes if str(c).strip())
        if not names:
            raise StarkilnError("no spectral classes given; accepted: e.g. O5V,B0V,G2V")
        names = tuple(n if n.endswith("V") else n + "V" for n in names)
    temps = np.array([temperature_for_spectral_class(n, index_model) for n in names],
                     dtype=np.float64)
    return names, temps


def build_palette(settings, *, range_K=None, steps: int = 16, axis: str = "mired",
                  classes=None, use_classes: bool = False,
                  index_model: str = "synthetic") -> Palette:
    """Render a swatch set with one call to :func:`starkiln.engine.pipeline.render.render`.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    range_K, steps, axis
        Temperature steps (default range 1000-40000 K); ignored with classes.
    classes : sequence of str, optional
        Spectral classes; implies ``use_classes``.
    use_classes : bool
        One swatch per class (all tabulated classes when ``classes`` is None).
    index_model : {"synthetic", "relation"}
        How a class becomes a temperature (:func:`class_temperatures`).

    Returns
    -------
    Palette

    References
    ----------
    Module docstring; :func:`starkiln.engine.pipeline.render.render`.

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> p = build_palette(Settings(), range_K=(2000, 8000), steps=3)
    >>> p.names
    ('2000 K', '3200 K', '8000 K')
    """
    from starkiln.engine.colour.temperature_axis import check_axis
    from starkiln.engine.exports.texture_spec import DEFAULT_TEMPERATURE_RANGE_K, check_temperature_range
    from starkiln.engine.pipeline.render import render

    if use_classes or classes is not None:
        from starkiln.engine.stars.temperature import check_index_model

        index_model = check_index_model(index_model)
        names, temps = class_temperatures(classes, index_model)
        spectral = names
        source = ("blackbodies of the classes' mean B-V (synthetic photometry), E. Mamajek, "
                  "mean dwarf sequence v2018.08.02" if index_model == "synthetic" else
                  "main-sequence dwarf temperatures, E. Mamajek, mean dwarf sequence v2024.05.15")
        description = {"kind": "spectral-classes", "classes": list(names),
                       "index_model": index_model, "source": source}
    else:
        rng = check_temperature_range(range_K if range_K is not None
                                      else DEFAULT_TEMPERATURE_RANGE_K)
        axis = check_axis(axis)
        temps = step_temperatures(rng, steps, axis)
        names = tuple(f"{t:.0f} K" for t in temps)
        spectral = None
        description = {"kind": "temperature-steps", "axis": axis, "range_K": list(rng),
                       "steps": int(len(temps)), "position": "swatch k samples u = k / (N - 1)"}
    r = render(settings, temps)
    return Palette(names, temps, spectral, r, description, settings)


def palette_format_for_path(path) -> str:
    """Palette format from the extension: json, csv, gpl, or sheet (``.png``)."""
    from starkiln.engine.atomic import format_for_extension

    return format_for_extension(path, PALETTE_FORMATS, "palette")



def palette_dict(palette: Palette, name: str | None = None) -> dict:
    """The JSON form: ``{"starkiln_palette", "name", "settings", "palette", "swatches"}``.

    References
    ----------
    Module docstring (fields).
    """
    r = palette.rendered
    q = palette.rgb_8bit
    swatches = []
    for k, label in enumerate(palette.names):
        sw = {
            "name": label,
            "temperature_K": float(palette.temperature_K[k]),
            "hex": palette.hex[k],
            "rgb_encoded": [float(v) for v in r.rgb_encoded[k]],
            "rgb_linear": [float(v) for v in r.rgb_linear[k]],
            "rgb_8bit": [int(v) for v in q[k]],
            "xy": [float(v) for v in r.xy[k]],
            "in_gamut": bool(r.in_gamut[k]),
        }
        if palette.spectral_class is not None:
            sw["spectral_class"] = palette.spectral_class[k]
        swatches.append(sw)
    from starkiln import __version__

    return {
        "starkiln_palette": PALETTE_FORMAT,
        "generator": f"starkiln {__version__}",
        "name": name or palette.default_name(),
        "title": palette.title(),
        "settings": palette.settings.to_dict(),
        "palette": palette.description,
        "swatches": swatches,
    }



def palette_json(palette: Palette, name: str | None = None) -> bytes:
    """UTF-8 JSON text (indented, deterministic)."""
    return (json.dumps(palette_dict(palette, name), indent=2, ensure_ascii=False,
                       allow_nan=False) + "\n").encode("utf-8")


def palette_csv(palette: Palette) -> bytes:
    """CSV text: header row :data:`CSV_COLUMNS`, one row a swatch ([RFC4180])."""
    r = palette.rendered
    q = palette.rgb_8bit
    buf = io.StringIO(newline="")
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(CSV_COLUMNS)
    for k, label in enumerate(palette.names):
        w.writerow([label, repr(float(palette.temperature_K[k])),
                    palette.spectral_class[k] if palette.spectral_class else "",
                    palette.hex[k],
                    *(repr(float(v)) for v in r.rgb_encoded[k]),
                    *(repr(float(v)) for v in r.rgb_linear[k]),
                    *(int(v) for v in q[k]),
                    *(repr(float(v)) for v in r.xy[k]),
                    "true" if r.in_gamut[k] else "false"])
    return buf.getvalue().encode("utf-8")


def _gpl_text(value: str) -> str:
    return " ".join(str(value).replace("\t", " ").splitlines())


def palette_gpl(palette: Palette, name: str | None = None, columns: int | None = None) -> bytes:
    """GIMP palette text (format in the module docstring; GIMP ``gimppalette-save.c`` layout).

    References
    ----------
    [GIMP-GPL] ``app/core/gimppalette-load.c`` (``gimp_palette_load_gpl``:
    magic line, ``Name: ``, ``Columns: `` 0-256, ``#`` comments, rows of
    three integers 0-255 split on spaces/tabs with an optional name up to the
    end of the line) and ``app/core/gimppalette-save.c`` (``"%3d %3d %3d\\t%s"``).
    """
    n = len(palette.names)
    cols = columns if columns is not None else min(n, 8)
    cols = max(0, min(256, int(cols)))
    lines = ["GIMP Palette", f"Name: {_gpl_text(name or palette.default_name())}",
             f"Columns: {cols}", "#",
             f"# {_gpl_text(palette.title())}",
             "# colours are display-encoded 8-bit values: floor(v * 255 + 0.5)"]
    for (r, g, b), label, hx in zip(palette.rgb_8bit.tolist(), palette.names, palette.hex):
        lines.append(f"{r:3d} {g:3d} {b:3d}\t{_gpl_text(label)} {hx}")
    return ("\n".join(lines) + "\n").encode("utf-8")


def check_palette_target(display, fmt: str, path) -> None:
    """Refuse a contact sheet or GIMP palette for a working space (8-bit code values only).

    Their colours are 8-bit display code values ([PNG] section 11.2.2; the ``.gpl`` format's
    0-255 triples, common practice); a working space's scene-linear values go outside 0-1.
    """
    if display.kind == "working-space" and fmt in ("sheet", "gpl"):
        raise StarkilnError(f"{path}: working space {display.name!r} is scene-linear (values "
                            "outside 0-1); a .png sheet or .gpl palette holds 8-bit display "
                            "colours only; accepted: .json or .csv, or a display target")


def write_palette(palette: Palette, path, overwrite: bool = False, name: str | None = None,
                  columns: int | None = None) -> Path:
    """Write a palette in the format its extension names, atomically.

    Raises
    ------
    starkiln.engine.atomic.OutputExistsError
        ``path`` exists and ``overwrite`` is False (the old file is untouched).

    References
    ----------
    Module docstring (formats); :mod:`starkiln.engine.atomic`.
    """
    from starkiln.engine.atomic import atomic_path, write_atomic

    path = Path(path)
    fmt = palette_format_for_path(path)
    check_palette_target(palette.rendered.display, fmt, path)
    if fmt == "json":
        write_atomic(path, palette_json(palette, name), overwrite)
    elif fmt == "csv":
        write_atomic(path, palette_csv(palette), overwrite)
    elif fmt == "gpl":
        write_atomic(path, palette_gpl(palette, name, columns), overwrite)
    else:
        from starkiln.engine.exports import image_files as imageio
        from starkiln.engine.exports.contact_sheets import SHEET_COMPRESSION, sheet_size, sheet_strips

        width, height = sheet_size(len(palette.names), columns)
        text = json.dumps(palette_dict(palette, name), sort_keys=True,
                          separators=(",", ":"), ensure_ascii=True, allow_nan=False)
        with atomic_path(path, overwrite) as tmp:
            imageio.write_png_strips(tmp, sheet_strips(palette, name, columns), width, height,
                                     {"starkiln": text}, SHEET_COMPRESSION,
                                     imageio.png_colour_chunks(palette.rendered.display))
    return path


def export_palette(settings, path, *, range_K=None, steps: int = 16, axis: str = "mired",
                   classes=None, use_classes: bool = False, name: str | None = None,
                   columns: int | None = None, overwrite: bool = False,
                   index_model: str = "synthetic") -> Palette:
    """Check the destination, build a palette and write it atomically; returns the palette.

    The one palette export: the command line (``starkiln palette``) and the window both call
    it. The extension and the destination folder are checked first
    (:func:`starkiln.engine.atomic.check_writable`), so nothing is rendered for a file that
    could not be written.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    path : path-like
        ``.json``, ``.csv``, ``.gpl`` or ``.png`` (contact sheet).
    range_K, steps, axis, classes, use_classes, index_model
        As :func:`build_palette`.
    name : str, optional
        Palette name (default from its content, :meth:`Palette.default_name`).
    columns : int, optional
        Columns of a GIMP palette or a contact sheet.
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    Palette

    References
    ----------
    :func:`build_palette`, :func:`write_palette`; :mod:`starkiln.engine.atomic`.
    """
    from starkiln.engine.atomic import check_writable

    check_palette_target(settings.display, palette_format_for_path(path), path)
    check_writable(path, overwrite)
    palette = build_palette(settings, range_K=range_K, steps=steps, axis=axis, classes=classes,
                            use_classes=use_classes, index_model=index_model)
    write_palette(palette, path, overwrite=overwrite, name=name, columns=columns)
    return palette
