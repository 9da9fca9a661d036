"""Contact-sheet titles in any script are drawn, not turned into empty boxes (issue 10).

Reference renderings come from Pillow itself (``ImageFont.load_default``, ``ImageDraw.text``):
the bundled Aileron font draws every character it lacks as the same .notdef box, so two
different letters it lacks look identical there; on the sheet they must not. Unicode
U+FFFF is a noncharacter (The Unicode Standard, chapter 23.7), so no font maps it.
"""

from __future__ import annotations

import numpy as np
import pytest
from PIL import Image, ImageDraw, ImageFont

from starkiln.engine.exports.contact_sheets import (SHEET_BACKGROUND, SHEET_MARGIN, TITLE_SIZE,
                                                    sheet_pixels)
from starkiln.engine.exports.palettes import build_palette
from starkiln.engine.exports.sheet_text import STAND_IN, font_for, font_has, missing_glyphs
from starkiln.engine.pipeline.settings import Settings

LATIN1 = "ÆØöéÅß"
CJK = "星"


@pytest.fixture(scope="module")
def palette():
    return build_palette(Settings(), range_K=(3000.0, 9000.0), steps=4)


def _title_band(px):
    return px[SHEET_MARGIN - 4:SHEET_MARGIN + 20, :].astype(int)


def _ink(band):
    return (np.abs(band - np.array(SHEET_BACKGROUND)).max(axis=-1) > 40)


def test_pillows_default_font_lacks_latin1_so_the_test_means_something():
    # Aileron (Pillow >= 10.1) has no Æ: it draws the .notdef box, the same for Æ and Ø.
    base = ImageFont.load_default(size=TITLE_SIZE)
    assert not font_has(base, "Æ") and not font_has(base, "Ø")
    assert bytes(base.getmask("Æ")) == bytes(base.getmask("Ø"))


@pytest.mark.parametrize("char", list(LATIN1))
def test_every_latin1_letter_has_a_font_with_its_own_glyph(char):
    font = font_for(char, TITLE_SIZE)
    assert font is not None and font_has(font, char)
    others = [c for c in LATIN1 if c != char]
    assert all(bytes(font.getmask(char)) != bytes(font_for(c, TITLE_SIZE).getmask(c))
               for c in others)


def test_latin1_title_letters_differ_on_the_sheet(palette):
    # With empty boxes "xÆx" and "xØx" would give the same title pixels.
    bands = [_title_band(sheet_pixels(palette, name=f"x{c}x")) for c in "ÆØ"]
    assert _ink(bands[0]).sum() > 20 and _ink(bands[1]).sum() > 20
    assert (bands[0] != bands[1]).any()
    # and the sheet's Æ is not Pillow's default-font box
    ref = Image.new("RGB", (bands[0].shape[1], bands[0].shape[0]), SHEET_BACKGROUND)
    ImageDraw.Draw(ref).text((SHEET_MARGIN, 4), "xÆx", fill=(200, 202, 210),
                             font=ImageFont.load_default(size=TITLE_SIZE))
    assert (_ink(np.asarray(ref).astype(int)) != _ink(bands[0])).sum() > 10


def test_cjk_title_is_drawn_or_shown_as_its_code(palette):
    title = "Ældre Höhle — " + CJK
    px = sheet_pixels(palette, name=title)
    font = font_for(CJK, TITLE_SIZE)
    if font is not None:  # a system font has it (fontconfig): its own glyph, not .notdef
        assert font_has(font, CJK) and missing_glyphs(title, TITLE_SIZE) == []
        return
    assert missing_glyphs(title, TITLE_SIZE) == [CJK]
    # the stand-in is the code in the bundled font: compare with "Æ...[U+661F]" drawn as text
    with_code = sheet_pixels(palette, name="Ældre Höhle — " + STAND_IN.format(ord(CJK)))
    assert (_title_band(px) == _title_band(with_code)).all()
    # and the sheet says so in its footer (more ink there than without the note)
    plain = sheet_pixels(palette, name="Ældre Höhle")
    assert _ink(px[-30:].astype(int)).sum() > _ink(plain[-30:].astype(int)).sum()
