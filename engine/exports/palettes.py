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
- ``.csv``: a header row, then one row a swatch (RFC 4180: comma-separated,
  CRLF line ends, fields quoted when needed).
- ``.gpl``: the GIMP palette text format, as GIMP itself reads and writes it
  (GIMP source, ``app/core/gimppalette-load.c``, ``gimp_palette_load_gpl``,
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

    @property
    def rgb_8bit(self) -> np.ndarray:
        """(N, 3) uint8 ``floor(rgb_encoded * 255 + 0.5)``."""
        from starkiln.engine.pipeline.render import to_8bit

        return to_8bit(self.rendered.rgb_encoded)

    @property
    def hex(self) -> list[str]:
        """``#rrggbb`` of each swatch."""
        return [str(h) for h in self.rendered.hex()]


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
    from starkiln.engine.exports.textures import check_temperature_range, temperature_from_u

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


def class_temperatures(classes=None):
    """Names and temperatures of main-sequence spectral classes.

    Parameters
    ----------
    classes : sequence of str, optional
        Class names such as ``"G2V"`` or ``"K5.5"``; all tabulated classes
        O5V-M8V when None.

    Returns
    -------
    (tuple of str, numpy.ndarray)

    References
    ----------
    :func:`starkiln.engine.stars.temperature.temperature_from_spectral_class` (Pecaut & Mamajek
    2013, Table 5, values from memory).
    """
    from starkiln.engine.stars.temperature import SPECTRAL_CLASS_TEFF_K, temperature_from_spectral_class

    if classes is None:
        names = tuple(f"{k}V" for k in SPECTRAL_CLASS_TEFF_K)
    else:
        names = tuple(str(c).strip().upper() for c in classes if str(c).strip())
        if not names:
            raise StarkilnError("no spectral classes given; accepted: e.g. O5V,B0V,G2V")
        names = tuple(n if n.endswith("V") else n + "V" for n in names)
    temps = np.array([temperature_from_spectral_class(n) for n in names], dtype=np.float64)
    return names, temps


def build_palette(settings, *, range_K=None, steps: int = 16, axis: str = "mired",
                  classes=None, use_classes: bool = False) -> Palette:
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
    from starkiln.engine.exports.textures import DEFAULT_TEMPERATURE_RANGE_K, check_axis, check_temperature_range
    from starkiln.engine.pipeline.render import render

    if use_classes or classes is not None:
        names, temps = class_temperatures(classes)
        spectral = names
        description = {"kind": "spectral-classes", "classes": list(names),
                       "source": "main-sequence dwarf temperatures, Pecaut & Mamajek (2013) "
                                 "Table 5 (from memory)"}
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


def palette_title(palette: Palette) -> str:
    """One line naming the display, white, adaptation, gamut and observer."""
    s = palette.settings
    return (f"Starkiln palette | display {s.display.name} | white {s.scene_white} "
            f"({s.adaptation}) | gamut {s.gamut} | observer {s.observer}")


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
        "name": name or default_name(palette),
        "title": palette_title(palette),
        "settings": palette.settings.to_dict(),
        "palette": palette.description,
        "swatches": swatches,
    }


def default_name(palette: Palette) -> str:
    """A palette name from its content, e.g. ``Starkiln 1000-40000 K srgb D65``."""
    s = palette.settings
    d = palette.description
    what = ("spectral classes" if d["kind"] == "spectral-classes"
            else f"{d['range_K'][0]:g}-{d['range_K'][1]:g} K")
    return f"Starkiln {what} {s.display.name} {s.scene_white}"


def palette_json(palette: Palette, name: str | None = None) -> bytes:
    """UTF-8 JSON text (indented, deterministic)."""
    return (json.dumps(palette_dict(palette, name), indent=2, ensure_ascii=False,
                       allow_nan=False) + "\n").encode("utf-8")


def palette_csv(palette: Palette) -> bytes:
    """CSV text: header row :data:`CSV_COLUMNS`, one row a swatch (RFC 4180)."""
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
    GIMP source, ``app/core/gimppalette-load.c`` (``gimp_palette_load_gpl``:
    magic line, ``Name: ``, ``Columns: `` 0-256, ``#`` comments, rows of
    three integers 0-255 split on spaces/tabs with an optional name up to the
    end of the line) and ``app/core/gimppalette-save.c`` (``"%3d %3d %3d\\t%s"``).
    """
    n = len(palette.names)
    cols = columns if columns is not None else min(n, 8)
    cols = max(0, min(256, int(cols)))
    lines = ["GIMP Palette", f"Name: {_gpl_text(name or default_name(palette))}",
             f"Columns: {cols}", "#",
             f"# {_gpl_text(palette_title(palette))}",
             "# colours are display-encoded 8-bit values: floor(v * 255 + 0.5)"]
    for (r, g, b), label, hx in zip(palette.rgb_8bit.tolist(), palette.names, palette.hex):
        lines.append(f"{r:3d} {g:3d} {b:3d}\t{_gpl_text(label)} {hx}")
    return ("\n".join(lines) + "\n").encode("utf-8")


#: Contact-sheet layout (pixels).
SHEET_SWATCH = (120, 72)
SHEET_GAP = 16
SHEET_LABEL_H = 38
SHEET_MARGIN = 24
SHEET_TITLE_H = 44
SHEET_BACKGROUND = (14, 15, 20)
SHEET_TEXT = (200, 202, 210)
SHEET_FAINT_TEXT = (130, 132, 142)


def sheet_image(palette: Palette, name: str | None = None, columns: int | None = None):
    """A Pillow RGB image of labelled swatches on a dark background.

    Each swatch is a solid block of its 8-bit colour, labelled below with its
    name (temperature or class and temperature) and hex; the title line names
    the display and the white.

    References
    ----------
    Pillow ``ImageDraw`` / ``ImageFont.load_default`` (bundled font).
    """
    from PIL import Image, ImageDraw, ImageFont

    n = len(palette.names)
    cols = max(1, min(columns or 8, n))
    rows = -(-n // cols)
    sw, sh = SHEET_SWATCH
    cell_w, cell_h = sw + SHEET_GAP, sh + SHEET_LABEL_H + SHEET_GAP
    width = max(2 * SHEET_MARGIN + cols * cell_w - SHEET_GAP, 640)
    height = 2 * SHEET_MARGIN + SHEET_TITLE_H + rows * cell_h - SHEET_GAP + 18
    img = Image.new("RGB", (width, height), SHEET_BACKGROUND)
    draw = ImageDraw.Draw(img)
    try:
        title_font = ImageFont.load_default(size=15)
        font = ImageFont.load_default(size=12)
    except TypeError:  # Pillow without FreeType sizes
        title_font = font = ImageFont.load_default()
    draw.text((SHEET_MARGIN, SHEET_MARGIN), name or default_name(palette), fill=SHEET_TEXT,
              font=title_font)
    draw.text((SHEET_MARGIN, SHEET_MARGIN + 21), palette_title(palette), fill=SHEET_FAINT_TEXT,
              font=font)
    top = SHEET_MARGIN + SHEET_TITLE_H
    q = palette.rgb_8bit.tolist()
    for k, label in enumerate(palette.names):
        cx = SHEET_MARGIN + (k % cols) * cell_w
        cy = top + (k // cols) * cell_h
        draw.rectangle([cx, cy, cx + sw - 1, cy + sh - 1], fill=tuple(q[k]))
        text = label if palette.spectral_class is None else \
            f"{label}  {palette.temperature_K[k]:.0f} K"
        draw.text((cx, cy + sh + 4), text, fill=SHEET_TEXT, font=font)
        mark = "" if palette.rendered.in_gamut[k] else "  (mapped)"
        draw.text((cx, cy + sh + 20), palette.hex[k] + mark, fill=SHEET_FAINT_TEXT, font=font)
    draw.text((SHEET_MARGIN, height - SHEET_MARGIN - 4),
              "full-intensity colours; judge them on the display named above",
              fill=SHEET_FAINT_TEXT, font=font)
    return img


def sheet_swatch_boxes(n: int, columns: int | None = None) -> list[tuple[int, int, int, int]]:
    """Pixel boxes ``(left, top, right, bottom)`` (inclusive) of the swatches on a sheet."""
    cols = max(1, min(columns or 8, n))
    sw, sh = SHEET_SWATCH
    cell_w, cell_h = sw + SHEET_GAP, sh + SHEET_LABEL_H + SHEET_GAP
    top = SHEET_MARGIN + SHEET_TITLE_H
    return [(SHEET_MARGIN + (k % cols) * cell_w, top + (k // cols) * cell_h,
             SHEET_MARGIN + (k % cols) * cell_w + sw - 1, top + (k // cols) * cell_h + sh - 1)
            for k in range(n)]


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
    from starkiln.engine.exports import image_files as imageio
    from starkiln.engine.atomic import atomic_path

    path = Path(path)
    fmt = palette_format_for_path(path)
    with atomic_path(path, overwrite) as tmp:
        if fmt == "json":
            imageio.write_bytes(tmp, palette_json(palette, name))
        elif fmt == "csv":
            imageio.write_bytes(tmp, palette_csv(palette))
        elif fmt == "gpl":
            imageio.write_bytes(tmp, palette_gpl(palette, name, columns))
        else:
            img = sheet_image(palette, name, columns)
            text = json.dumps(palette_dict(palette, name), sort_keys=True,
                              separators=(",", ":"), ensure_ascii=True, allow_nan=False)
            imageio.write_png(tmp, np.asarray(img), {"starkiln": text})
    return path
