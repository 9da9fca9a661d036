"""Contact sheets: a palette drawn as labelled swatches on a dark background, for review.

Layout: swatches of :data:`SHEET_SWATCH` pixels in rows of ``columns`` (8 by default), each
labelled below with its name and ``#rrggbb`` (``(mapped)`` where the colour was outside the
display gamut), under a title line naming the display and the white. The background is
dark so a dark-adapted reviewer is not dazzled (common practice for planetarium previews).

The swatch blocks and the background are filled with numpy; only the labels go through
Pillow's text drawing, and each distinct label is rasterised once and pasted wherever it
appears, so a 4096-swatch sheet is drawn in well under a second.

References
----------
[Pillow] ``ImageDraw.text`` / ``ImageFont.load_default`` (bundled font); titles in any script
through :mod:`starkiln.engine.exports.sheet_text`.
"""

from __future__ import annotations

import numpy as np

from typing import TYPE_CHECKING

from starkiln.engine.exports.sheet_text import STAND_IN, draw_text, missing_glyphs

if TYPE_CHECKING:  # the palette type for annotations; palettes import this module
    from starkiln.engine.exports.palettes import Palette

FOOTER = "full-intensity colours; judge them on the display named above"

#: Contact-sheet layout (pixels).
SHEET_SWATCH = (120, 72)
SHEET_GAP = 16
SHEET_LABEL_H = 38
SHEET_MARGIN = 24
SHEET_TITLE_H = 44
SHEET_BACKGROUND = (14, 15, 20)
SHEET_TEXT = (200, 202, 210)
SHEET_FAINT_TEXT = (130, 132, 142)
#: zlib level of sheet PNGs: flat colour compresses well even at level 1, and a sheet
#: is a review copy (6 would halve the file and triple the encoding time).
SHEET_COMPRESSION = 1


def sheet_swatch_boxes(n: int, columns: int | None = None) -> list[tuple[int, int, int, int]]:
    """Pixel boxes ``(left, top, right, bottom)`` (inclusive) of the swatches on a sheet."""
    cols, cell_w, cell_h, _, _ = _layout(n, columns)
    sw, sh = SHEET_SWATCH
    top = SHEET_MARGIN + SHEET_TITLE_H
    return [(SHEET_MARGIN + (k % cols) * cell_w, top + (k // cols) * cell_h,
             SHEET_MARGIN + (k % cols) * cell_w + sw - 1, top + (k // cols) * cell_h + sh - 1)
            for k in range(n)]


def _layout(n: int, columns: int | None):
    """Columns, rows, cell size and image size of a sheet of ``n`` swatches."""
    cols = max(1, min(columns or 8, n))
    rows = -(-n // cols)
    sw, sh = SHEET_SWATCH
    cell_w, cell_h = sw + SHEET_GAP, sh + SHEET_LABEL_H + SHEET_GAP
    width = max(2 * SHEET_MARGIN + cols * cell_w - SHEET_GAP, 640)
    height = 2 * SHEET_MARGIN + SHEET_TITLE_H + rows * cell_h - SHEET_GAP + 18
    return cols, cell_w, cell_h, width, height


#: Font sizes (pixels) of the title line and of the labels.
TITLE_SIZE, LABEL_SIZE = 15, 12


def _fonts():
    from PIL import ImageFont

    try:
        return ImageFont.load_default(size=TITLE_SIZE), ImageFont.load_default(size=LABEL_SIZE)
    except TypeError:  # Pillow without FreeType sizes
        font = ImageFont.load_default()
        return font, font


def sheet_labels(palette: Palette) -> tuple[list[str], list[str]]:
    """The two label lines of every swatch: name (and temperature for classes), and hex.

    A swatch whose colour was outside the display gamut gets ``(mapped)`` after its hex.
    """
    temps = palette.temperature_K.tolist()
    if palette.spectral_class is None:
        names = list(palette.names)
    else:
        names = [f"{label}  {t:.0f} K" for label, t in zip(palette.names, temps)]
    hexes = [h if ok else h + "  (mapped)"
             for h, ok in zip(palette.hex, palette.rendered.in_gamut.tolist())]
    return names, hexes


def _glyphs(font, chars: str) -> dict:
    """Each character's coverage once, from Pillow: ``c -> (ys, xs, ink, advance_px)``.

    ``ys, xs`` are the inked pixels relative to the pen position at the text's top line
    (``ImageDraw.text`` anchor ``la``), ``ink`` their coverage 0-255, ``advance_px`` the
    pen advance (``FreeTypeFont.getlength``).
    """
    from PIL import Image, ImageDraw

    out = {}
    for c in chars:
        right, bottom = font.getbbox(c)[2:]
        ys = xs = ink = np.zeros(0, dtype=np.int64)
        if right > 0 and bottom > 0:
            img = Image.new("L", (int(right), int(bottom)), 0)
            ImageDraw.Draw(img).text((0, 0), c, fill=255, font=font)
            glyph = np.asarray(img)
            ys, xs = np.nonzero(glyph)
            ink = glyph[ys, xs]
        out[c] = (ys, xs, ink, float(font.getlength(c)))
    return out


def _text_coverage(texts: list[str], slot: np.ndarray, x0: np.ndarray, shape, glyphs) -> np.ndarray:
    """Coverage (0-255) of many one-line texts on a stack of label bands.

    Text ``i`` starts at pixel column ``x0[i]`` of band ``slot[i]``; the result has
    ``shape = (bands, band_height, width)``. Each character is stamped with numpy at every
    place it occurs, one string position at a time (so a character never overlaps itself
    within one assignment); pen positions advance by whole-pixel-rounded character advances.
    """
    coverage = np.zeros(shape, dtype=np.uint8)
    if not texts:
        return coverage
    flat = coverage.reshape(-1)
    _, band_h, width = shape
    chars = sorted(glyphs)
    code = {c: i for i, c in enumerate(chars)}
    longest = max(len(t) for t in texts)
    idx = np.full((len(texts), longest), len(chars), dtype=np.int64)
    for row, text in enumerate(texts):
        idx[row, :len(text)] = [code[c] for c in text]
    advance = np.array([glyphs[c][3] for c in chars] + [0.0])
    pen = np.rint(np.cumsum(advance[idx], axis=1) - advance[idx]).astype(np.int64)
    base = slot.astype(np.int64) * (band_h * width) + x0.astype(np.int64)
    for ci, c in enumerate(chars):
        ys, xs, ink, _ = glyphs[c]
        if ink.size == 0:
            continue
        keep = (ys < band_h)
        offsets = ys[keep] * width + xs[keep]
        ink = ink[keep]
        for k in range(longest):
            rows = np.nonzero(idx[:, k] == ci)[0]
            if rows.size == 0:
                continue
            cols = np.minimum(x0[rows] + pen[rows, k] + xs[keep].max(), width - 1) - xs[keep].max()
            at = (base[rows] - x0[rows] + cols)[:, None] + offsets[None, :]
            flat[at] = np.maximum(flat[at], ink[None, :])
    return coverage


def _blend_table(colour) -> np.ndarray:
    """(256, 3) uint8: the background blended toward ``colour`` at each coverage 0-255."""
    a = np.arange(256, dtype=np.float64)[:, None] / 255.0
    bg = np.asarray(SHEET_BACKGROUND, dtype=np.float64)
    return np.floor(bg + (np.asarray(colour, dtype=np.float64) - bg) * a + 0.5).astype(np.uint8)


def sheet_size(n: int, columns: int | None = None) -> tuple[int, int]:
    """``(width, height)`` in pixels of the contact sheet of ``n`` swatches."""
    _, _, _, width, height = _layout(n, columns)
    return width, height


def sheet_strips(palette: Palette, name: str | None = None, columns: int | None = None):
    """A contact sheet as horizontal uint8 strips, top to bottom: title, one per row of cells, footer.

    Each swatch is a solid block of its 8-bit colour
    (:func:`starkiln.engine.colour.quantisation.to_8bit`), labelled below with its name and
    hex (:func:`sheet_labels`); the title line names the display and the white. Label glyphs
    are rasterised once by Pillow and stamped with numpy (:func:`_text_coverage`); each strip
    is built when asked for, so a PNG writer can encode a sheet of any size strip by strip
    while it stays in the processor's cache.

    Parameters
    ----------
    palette : starkiln.engine.exports.palettes.Palette
    name : str, optional
        Title (default :meth:`starkiln.engine.exports.palettes.Palette.default_name`).
    columns : int, optional
        Swatches per row (8 by default).

    Yields
    ------
    numpy.ndarray
        ``(h, W, 3)`` uint8 strips whose heights sum to the sheet's height.

    References
    ----------
    Pillow ``ImageDraw.text`` / ``ImageFont.load_default`` (bundled font); module docstring.
    """
    from PIL import Image, ImageDraw

    n = len(palette.names)
    cols, cell_w, cell_h, width, height = _layout(n, columns)
    rows = -(-n // cols)
    sw, sh = SHEET_SWATCH
    top = SHEET_MARGIN + SHEET_TITLE_H
    background = np.array(SHEET_BACKGROUND, dtype=np.uint8)
    title_font, font = _fonts()
    names, hexes = sheet_labels(palette)
    glyphs = _glyphs(font, sorted(set("".join(names) + "".join(hexes))))
    k = np.arange(n)
    slot, x_left = k // cols, SHEET_MARGIN + (k % cols) * cell_w
    lines = [(4, 20, _blend_table(SHEET_TEXT),
              _text_coverage(names, slot, x_left, (rows, 16, width), glyphs)),
             (20, SHEET_LABEL_H, _blend_table(SHEET_FAINT_TEXT),
              _text_coverage(hexes, slot, x_left, (rows, SHEET_LABEL_H - 20, width), glyphs))]
    colours = palette.rgb_8bit

    head = Image.new("RGB", (width, top), SHEET_BACKGROUND)
    draw = ImageDraw.Draw(head)
    title, subtitle = name or palette.default_name(), palette.title()
    # Titles may be in any script: a font per character (sheet_text), never empty boxes.
    draw_text(draw, (SHEET_MARGIN, SHEET_MARGIN), title, SHEET_TEXT, TITLE_SIZE)
    draw_text(draw, (SHEET_MARGIN, SHEET_MARGIN + 21), subtitle, SHEET_FAINT_TEXT, LABEL_SIZE)
    missing = sorted(set(missing_glyphs(title, TITLE_SIZE) + missing_glyphs(subtitle, LABEL_SIZE)))
    footer = FOOTER if not missing else (
        FOOTER + "; no font here has " + " ".join(STAND_IN.format(ord(c)) for c in missing)
        + ", drawn as its code")
    yield np.asarray(head)
    for r in range(rows):
        strip = np.empty((cell_h, width, 3), dtype=np.uint8)
        strip[...] = background
        for j in range(r * cols, min(n, (r + 1) * cols)):
            x0 = SHEET_MARGIN + (j - r * cols) * cell_w
            strip[:sh, x0:x0 + sw] = colours[j]
        for y0, y1, table, coverage in lines:
            strip[sh + y0:sh + y1] = table[coverage[r]]
        yield strip
    # The footer band; its text line starts SHEET_MARGIN + 4 above the bottom edge.
    foot_h = height - top - rows * cell_h
    foot = Image.new("RGB", (width, foot_h), SHEET_BACKGROUND)
    ImageDraw.Draw(foot).text((SHEET_MARGIN, foot_h - SHEET_MARGIN - 4), footer,
                              fill=SHEET_FAINT_TEXT, font=font)
    yield np.asarray(foot)


def sheet_pixels(palette: Palette, name: str | None = None, columns: int | None = None) -> np.ndarray:
    """The whole contact sheet as one ``(H, W, 3)`` uint8 array (:func:`sheet_strips`)."""
    return np.concatenate(list(sheet_strips(palette, name, columns)), axis=0)


def sheet_image(palette: Palette, name: str | None = None, columns: int | None = None):
    """The contact sheet of :func:`sheet_pixels` as a Pillow RGB image (for previews).

    References
    ----------
    Pillow ``Image.fromarray``; :func:`sheet_pixels`.
    """
    from PIL import Image

    return Image.fromarray(sheet_pixels(palette, name, columns), "RGB")
