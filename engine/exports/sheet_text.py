"""Text on contact sheets in any script: a font per character, or a visible stand-in.

Pillow's bundled font (``ImageFont.load_default(size)``, a FreeType build of Aileron in
Pillow >= 10.1) covers ASCII only, so a title such as ``"Ældre Höhle — 星"`` would come out
as empty boxes. Each character is drawn with the first font of a chain that has a glyph for
it: the bundled font (ASCII, unchanged look), then DejaVu Sans shipped with Starkiln in
``starkiln/assets/fonts`` (Latin, Greek, Cyrillic and more; Bitstream Vera licence, which
allows redistribution, text beside the font), then a system font that fontconfig names for
that character (``fc-match :charset=...``, where fontconfig is installed). A character no
font has is drawn as its code, ``[U+661F]``, and :func:`missing_glyphs` lists it so the sheet
can say so.

References
----------
Pillow ``ImageFont.truetype`` / ``ImageFont.load_default`` and ``ImageDraw.text`` (anchors
``ls``: left, baseline); fontconfig ``fc-match`` pattern syntax (``:charset=<hex>``).
"""

from __future__ import annotations

import shutil
import subprocess
from functools import lru_cache

#: The stand-in for a character no available font has.
STAND_IN = "[U+{:04X}]"


def _glyph_mask(font, char: str) -> bytes:
    mask = font.getmask(char)
    return bytes(mask) + repr(mask.size).encode()


@lru_cache(maxsize=None)
def _notdef(font) -> bytes:
    # U+FFFF is a Unicode noncharacter: no font maps it, so it draws the font's .notdef glyph.
    return _glyph_mask(font, "\uffff")


def font_has(font, char: str) -> bool:
    """Whether ``font`` draws ``char`` with a glyph of its own (not its .notdef box).

    Spaces count as covered; any other character must give ink that differs from the
    .notdef glyph (Unicode noncharacter U+FFFF).
    """
    if char.isspace():
        return True
    mask = font.getmask(char)
    if mask.size[0] == 0 or mask.size[1] == 0 or max(bytes(mask), default=0) == 0:
        return False
    return _glyph_mask(font, char) != _notdef(font)


@lru_cache(maxsize=None)
def _bundled(size: int):
    from PIL import ImageFont

    from starkiln.assets import asset_path

    try:
        return ImageFont.truetype(str(asset_path("fonts/DejaVuSans.ttf")), size)
    except OSError:  # a packaging without the font: the chain just gets shorter
        return None


@lru_cache(maxsize=None)
def _system_font_file(char: str) -> str | None:
    """The font file fontconfig proposes for ``char``, or None (no fontconfig)."""
    fc_match = shutil.which("fc-match")
    if fc_match is None:
        return None
    try:
        r = subprocess.run([fc_match, "--format=%{file}", f":charset={ord(char):x}"],
                           capture_output=True, text=True, timeout=10)
    except (OSError, subprocess.SubprocessError):
        return None
    return r.stdout.strip() or None


@lru_cache(maxsize=None)
def _system_font(path: str, size: int):
    from PIL import ImageFont

    try:
        return ImageFont.truetype(path, size)
    except OSError:
        return None


@lru_cache(maxsize=None)
def _default(size: int):
    from PIL import ImageFont

    return ImageFont.load_default(size=size)


@lru_cache(maxsize=4096)
def font_for(char: str, size: int):
    """The first font of the chain (module docstring) that has ``char``, or None."""
    for font in (_default(size), _bundled(size)):
        if font is not None and font_has(font, char):
            return font
    path = _system_font_file(char)
    font = _system_font(path, size) if path else None
    return font if font is not None and font_has(font, char) else None


def missing_glyphs(text: str, size: int) -> list[str]:
    """The characters of ``text`` no available font has (drawn as :data:`STAND_IN`)."""
    return sorted({c for c in text if font_for(c, size) is None})


def draw_text(draw, xy, text: str, fill, size: int) -> None:
    """Draw one line of ``text`` with its top-left at ``xy``, a font per character.

    Runs of characters sharing a font are drawn together on the baseline of the bundled
    font; a character without a font is drawn as :data:`STAND_IN` in the bundled font.
    """
    base_font = _default(size)
    x, y = xy
    baseline = y + base_font.getmetrics()[0]
    runs: list[tuple[object, str]] = []
    for c in text:
        font = font_for(c, size)
        piece = c if font is not None else STAND_IN.format(ord(c))
        font = font if font is not None else base_font
        if runs and runs[-1][0] is font:
            runs[-1] = (font, runs[-1][1] + piece)
        else:
            runs.append((font, piece))
    for font, piece in runs:
        draw.text((x, baseline), piece, fill=fill, font=font, anchor="ls")
        x += font.getlength(piece)
