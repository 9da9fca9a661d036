"""Legibility of the themes: WCAG 2.x contrast of every text colour against its backgrounds.

The contrast module is checked first against the WCAG 2.x definitions ([WCAG21]: relative
luminance from sRGB decoded by [IEC61966-2-1] section 5.2 and weighted by the [BT709] item 3.2
luminance row; contrast ratio (L1 + 0.05) / (L2 + 0.05)) and against colour-science's sRGB
decoding and the luminance row of its sRGB colour space. Then every text / background pair a
theme draws is held to 4.5:1 (text), disabled text to 3:1 ([WCAG21] 1.4.3 and 1.4.11), and the
dim theme to red light only.
"""

import warnings

import numpy as np
import pytest
from PySide6 import QtGui, QtWidgets

from starkiln.engine.colour.contrast import (LARGE_TEXT_CONTRAST, TEXT_CONTRAST, contrast_ratio,
                                             hex_to_rgb_8bit, relative_luminance)
from starkiln.engine.errors import StarkilnError
from starkiln.gui.theme import DIM, DIM_GREEN_BLUE_MAX, LIGHT, ORDINARY, THEMES, stylesheet
from test_gui_support import escaped, pytestmark, shared_window, store, window  # noqa: F401

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import colour


# -- the contrast module against the definition and colour-science ---------------------------
def test_wcag_definition_end_points():
    # [WCAG21] "contrast ratio": black on white is (1 + 0.05) / (0 + 0.05) = 21, a colour on
    # itself 1; the order of the two colours does not matter.
    assert float(contrast_ratio("#000000", "#ffffff")) == pytest.approx(21.0, abs=1e-12)
    assert float(contrast_ratio("#ffffff", "#000000")) == pytest.approx(21.0, abs=1e-12)
    assert float(contrast_ratio("#7a2616", "#7a2616")) == pytest.approx(1.0, abs=1e-12)
    assert float(relative_luminance("#ffffff")) == pytest.approx(1.0, abs=1e-12)
    assert float(relative_luminance("#000000")) == 0.0


def test_wcag_worked_values():
    # Pure primaries carry exactly their [BT709] item 3.2 weights ([WCAG21] formula).
    for hex_, weight in (("#ff0000", 0.2126), ("#00ff00", 0.7152), ("#0000ff", 0.0722)):
        assert float(relative_luminance(hex_)) == pytest.approx(weight, abs=1e-12)
    # Red on black: (0.2126 + 0.05) / 0.05 = 5.252 (the definition, by hand).
    assert float(contrast_ratio("#ff0000", "#000000")) == pytest.approx(5.252, abs=1e-9)
    # #767676 on white is the darkest grey that passes 4.5:1, at 4.54:1; #777777 fails at
    # 4.48:1 (values widely quoted with the WCAG 2 definition, from memory).
    assert float(contrast_ratio("#767676", "#ffffff")) == pytest.approx(4.54, abs=0.005)
    assert float(contrast_ratio("#777777", "#ffffff")) == pytest.approx(4.48, abs=0.005)


def test_relative_luminance_matches_colour_science():
    rng = np.random.default_rng(12)
    rgb8 = rng.integers(0, 256, size=(500, 3))
    decoded = colour.cctf_decoding(rgb8 / 255.0, "sRGB")  # [IEC61966-2-1]
    ours = relative_luminance(rgb8)
    np.testing.assert_allclose(ours, decoded @ np.array([0.2126, 0.7152, 0.0722]), atol=1e-12)
    # colour-science's sRGB luminance row from the primaries (0.2126729, 0.7151522, 0.0721750)
    # differs from the rounded [BT709] weights by < 1e-4
    y = colour.RGB_to_XYZ(decoded, colour.RGB_COLOURSPACES["sRGB"], apply_cctf_decoding=False)
    np.testing.assert_allclose(ours, y[:, 1], atol=2e-4)


def test_bad_colour_text_is_named():
    with pytest.raises(StarkilnError, match="'#12345'.*#rrggbb"):
        hex_to_rgb_8bit("#12345")


# -- the themes ------------------------------------------------------------------------------
BACKGROUNDS = ("window", "panel", "field")
#: Text colours and where they are drawn: labels, captions, inactive tabs, group titles, status
#: bar (window / panel / field); the chromaticity key (window) uses the plot colours as text.
TEXTS = ("text", "muted", "accent", "error", "locus", "planckian", "gamut", "marker")
#: Text drawn on the plots: tick labels and axis names (plot_axis), the Planckian tick labels
#: (planckian), the peak label (marker); legend text sits on the panel colour.
PLOT_TEXTS = ("plot_axis", "planckian", "marker")


@pytest.mark.parametrize("theme", list(THEMES.values()), ids=list(THEMES))
def test_every_text_colour_is_at_least_4_5_to_1(theme):
    low = []
    for fg in TEXTS:
        for bg in BACKGROUNDS:
            ratio = float(contrast_ratio(getattr(theme, fg), getattr(theme, bg)))
            if ratio < TEXT_CONTRAST:
                low.append((fg, bg, round(ratio, 2)))
    for fg in PLOT_TEXTS:
        ratio = float(contrast_ratio(getattr(theme, fg), theme.plot_background))
        if ratio < TEXT_CONTRAST:
            low.append((fg, "plot_background", round(ratio, 2)))
    assert TEXT_CONTRAST == 4.5 and not low, low  # [WCAG21] 1.4.3


@pytest.mark.parametrize("theme", list(THEMES.values()), ids=list(THEMES))
def test_disabled_text_is_at_least_3_to_1_and_differs_from_enabled(theme):
    # [WCAG21] 1.4.3 (large text) and 1.4.11 (state of a control): 3:1
    for bg in BACKGROUNDS:
        assert float(contrast_ratio(theme.disabled, getattr(theme, bg))) >= LARGE_TEXT_CONTRAST
    apart = float(contrast_ratio(theme.disabled, theme.text))
    if theme is DIM:
        # red alone spans at most 5.25:1 above black (test_wcag_worked_values), so 3:1 to the
        # background and 3:1 to enabled text (9:1 in all) cannot both hold: the dim theme
        # keeps disabled text darker and marks it italic with a dotted border as well
        assert 1.4 < apart < LARGE_TEXT_CONTRAST
        css = stylesheet(theme)
        assert "font-style: italic" in css and f"1px dotted {theme.disabled}" in css
    else:
        assert apart >= LARGE_TEXT_CONTRAST


def test_dim_theme_is_red_light_only():
    # Common practice: red light spares dark adaptation. Every colour of the dim theme keeps
    # green and blue at most DIM_GREEN_BLUE_MAX (0x48: linear 0.065 by [IEC61966-2-1]).
    assert DIM_GREEN_BLUE_MAX == 0x48
    for name, value in vars(DIM).items():
        for v in value if isinstance(value, tuple) else (value,):
            if isinstance(v, str) and v.startswith("#"):
                r, g, b = hex_to_rgb_8bit(v)
                assert g <= DIM_GREEN_BLUE_MAX and b <= DIM_GREEN_BLUE_MAX, (name, v)
                assert r >= 2 * max(g, b), (name, v)


def test_light_theme_is_light():
    # a daytime theme: dark text on backgrounds near white (relative luminance above 0.8)
    for bg in BACKGROUNDS + ("plot_background",):
        assert float(relative_luminance(getattr(LIGHT, bg))) > 0.8
    assert float(relative_luminance(LIGHT.text)) < 0.02
    assert float(relative_luminance(ORDINARY.window)) < 0.05


# -- the window uses them --------------------------------------------------------------------
def _pixels(widget):
    img = widget.grab().toImage().convertToFormat(QtGui.QImage.Format.Format_RGB888)
    a = np.frombuffer(img.constBits(), np.uint8).reshape(img.height(), img.bytesPerLine())
    return a[:, :img.width() * 3].reshape(img.height(), img.width(), 3).copy()


def _farthest_from(a, background):
    """The pixel of ``a`` farthest from ``background`` (the full-strength text colour)."""
    flat = a.reshape(-1, 3).astype(int)
    d = np.abs(flat - np.asarray(hex_to_rgb_8bit(background))).sum(axis=1)
    return tuple(int(v) for v in flat[np.argmax(d)])


@pytest.mark.parametrize("key", list(THEMES))
def test_disabled_field_is_drawn_in_the_disabled_colour(window, key):
    window.set_theme(key)
    t = THEMES[key]
    assert window.theme_actions[key].isChecked()
    disabled = [e for e in window.look.findChildren(QtWidgets.QLineEdit)
                if not e.isEnabled() and e.isVisible() and e.text()]
    assert disabled, "the white tab shows disabled fields with a scene-white preset"
    edit = disabled[0]
    got = _farthest_from(_pixels(edit), t.field)
    want = tuple(int(v) for v in hex_to_rgb_8bit(t.disabled))
    assert max(abs(g - w) for g, w in zip(got, want)) <= 2, (got, t.disabled)


def test_inactive_tab_text_is_drawn_in_the_muted_colour(window):
    window.set_theme("dim")
    tabs = window.look.findChild(QtWidgets.QTabBar)
    inactive = 1 if tabs.currentIndex() == 0 else 0
    a = _pixels(tabs)
    r = tabs.tabRect(inactive)
    cut = a[r.top():r.bottom(), r.left():r.right()]
    # the brightest pixel of the inactive tab's text is the muted colour (antialiasing only
    # mixes it with the darker window colour)
    brightest = cut.reshape(-1, 3)[np.argmax(cut.reshape(-1, 3)[:, 0])]
    assert tuple(int(v) for v in brightest) == tuple(int(v) for v in hex_to_rgb_8bit(DIM.muted))


def test_message_box_icon_is_drawn_in_the_dim_theme(window, qapp):
    window.set_theme("dim")
    box = window.show_message("Test", "A message in the dark room")
    qapp.processEvents()
    a = _pixels(box)
    box.close()
    # no standard blue or green icon: every pixel of the box is dim-red light
    assert int(a[..., 1].max()) <= DIM_GREEN_BLUE_MAX and int(a[..., 2].max()) <= DIM_GREEN_BLUE_MAX
    icon = box.iconPixmap().toImage()
    assert not icon.isNull()
    colours = {icon.pixelColor(x, y).name() for x in range(icon.width())
               for y in range(icon.height()) if icon.pixelColor(x, y).alpha() == 255}
    assert DIM.error in colours  # the warning icon in the theme's error colour
