"""Dark-room viewing: the viewing level, the dome level, the surround, and the light the window
gives off (pytest-qt, offscreen; the monitor is sRGB, assumed).

Expected pixels and luminances come from colour-science: its sRGB encoding and decoding
([IEC61966-2-1] section 5.2, ``colour.cctf_encoding`` / ``colour.cctf_decoding``) and its sRGB
RGB-to-XYZ matrix; luminance of a pixel is the [BT709] item 3.2 weighting of its decoded
channels, as [WCAG21] defines relative luminance.
"""

import warnings

import numpy as np
import pytest
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.assets import asset_path
from starkiln.engine.colour.displays import PRESETS, load_display_profile
from starkiln.engine.colour.monitor import monitor_rgb_8bit
from starkiln.engine.colour.viewing import (SURROUND_GREY_FRACTION, check_viewing_level,
                                            dome_viewing_level, surround_rgb_8bit)
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.gui.theme import DIM_GREEN_BLUE_MAX
from test_gui_support import escaped, pytestmark, shared_window, store  # noqa: F401
from test_gui_support import reset_window

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import colour

WEIGHTS_709 = np.array([0.2126, 0.7152, 0.0722])  # [BT709] item 3.2
DOME = load_display_profile(str(asset_path("dome_projector.json")))  # invented, 12 cd/m2 peak


@pytest.fixture
def window(shared_window, qapp):
    """The shared window, reset, and back at full viewing level with no surround after."""
    reset_window(shared_window)
    shared_window.current.set_viewing_level(1.0)
    shared_window.current.set_surround("none")
    qapp.processEvents()
    yield shared_window
    shared_window.current.set_viewing_level(1.0)
    shared_window.current.set_surround("none")


def _luminance(rgb8):
    return colour.cctf_decoding(np.asarray(rgb8, float) / 255.0, "sRGB") @ WEIGHTS_709


def _pixels(widget):
    img = widget.grab().toImage().convertToFormat(QtGui.QImage.Format.Format_RGB888)
    a = np.frombuffer(img.constBits(), np.uint8).reshape(img.height(), img.bytesPerLine())
    return a[:, :img.width() * 3].reshape(img.height(), img.width(), 3).copy()


# -- engine ----------------------------------------------------------------------------------
def test_viewing_level_scales_linear_light_and_keeps_chromaticity():
    rng = np.random.default_rng(3)
    lin = rng.uniform(0.0, 1.0, (200, 3))
    for level in (1.0, 0.5, 0.15, 0.02):
        rgb8, clipped = monitor_rgb_8bit(lin, "srgb", "srgb", viewing_level=level)
        want = 255.0 * colour.cctf_encoding(level * lin, "sRGB")  # [IEC61966-2-1]
        assert np.max(np.abs(rgb8 - want)) <= 0.5 + 1e-9
        assert not clipped.any()
    # chromaticity: a 5772 K star at 15 % has the same xy as at full level, within what 8-bit
    # quantisation at the darker level allows (colour-science's sRGB matrix)
    r = render(Settings(), 5772.0)
    space = colour.RGB_COLOURSPACES["sRGB"]

    def xy(rgb8):
        lin8 = colour.cctf_decoding(np.asarray(rgb8, float) / 255.0, "sRGB")
        return colour.XYZ_to_xy(colour.RGB_to_XYZ(lin8, space, apply_cctf_decoding=False))

    full, _ = monitor_rgb_8bit(r.rgb_linear, r.display, "srgb")
    dim, _ = monitor_rgb_8bit(r.rgb_linear, r.display, "srgb", viewing_level=0.15)
    np.testing.assert_allclose(xy(dim), xy(full), atol=0.003)
    assert _luminance(dim) / _luminance(full) == pytest.approx(0.15, rel=0.03)


def test_clipping_is_judged_before_dimming():
    # P3 green is outside sRGB ([EG432-1], [IEC61966-2-1]); dimming does not bring it inside
    _, clipped = monitor_rgb_8bit([0.0, 1.0, 0.0], "display-p3", "srgb", viewing_level=0.1)
    assert bool(clipped)


def test_dome_level_is_the_dome_peak_over_the_monitor_white():
    # the formula of starkiln.engine.colour.viewing: peak / 80 cd/m2 (the sRGB reference
    # display's white, [IEC61966-2-1]), clamped to 0.02-1
    assert DOME.peak_luminance_cd_m2 == 12.0
    assert dome_viewing_level(DOME) == pytest.approx(12.0 / 80.0)
    assert dome_viewing_level(DOME, monitor_white_cd_m2=120.0) == pytest.approx(0.1)
    assert dome_viewing_level(PRESETS["srgb"]) == 1.0  # 80 / 80
    assert dome_viewing_level("rec2100-pq") == 1.0  # brighter than the monitor: clamped
    with pytest.raises(StarkilnError, match="monitor white luminance 0 cd/m2"):
        dome_viewing_level(DOME, monitor_white_cd_m2=0.0)


@pytest.mark.parametrize("bad", [0.0, 0.01, 1.5, float("nan"), "dim"])
def test_bad_viewing_level_is_one_line_naming_it(bad):
    with pytest.raises(StarkilnError, match="viewing level") as info:
        check_viewing_level(bad)
    assert "\n" not in str(info.value)


def test_surround_colours():
    # grey: a neutral at 20 % of the viewing white in linear light; black: 0
    for level in (1.0, 0.15):
        grey = surround_rgb_8bit("grey", level)
        assert grey[0] == grey[1] == grey[2]
        want = 255.0 * colour.cctf_encoding(SURROUND_GREY_FRACTION * level, "sRGB")
        assert abs(int(grey[0]) - want) <= 0.5 + 1e-9
    assert surround_rgb_8bit("black", 0.5).tolist() == [0, 0, 0]
    assert surround_rgb_8bit("none") is None
    with pytest.raises(StarkilnError, match="surround 'white' unknown; accepted: none, grey"):
        surround_rgb_8bit("white")


# -- the window ------------------------------------------------------------------------------
def test_viewing_level_dims_every_colour_patch(window, qapp):
    m = window.model
    full_swatch = m.colour.monitor_rgb_8bit.copy()
    full_band = m.plots.band_monitor_rgb_8bit.copy()
    full_strip = m.plots.strip_monitor_rgb_8bit.copy()
    window.current.viewing_level.setValue(25.0)  # the control, in per cent
    qapp.processEvents()
    assert m.viewing_level == 0.25
    # swatch as painted: a quarter of the luminance (colour-science decoding)
    c = window.current.swatch.grab().toImage().pixelColor(40, 40)
    painted = (c.red(), c.green(), c.blue())
    assert painted == tuple(int(v) for v in m.colour.monitor_rgb_8bit)
    assert _luminance(painted) / _luminance(full_swatch) == pytest.approx(0.25, rel=0.03)
    # strips, band, night swatch and the sky picture: all at a quarter of their light
    for full, now in ((full_strip, m.plots.strip_monitor_rgb_8bit),
                      (full_band, m.plots.band_monitor_rgb_8bit)):
        bright = _luminance(full) > 0.05
        np.testing.assert_allclose(_luminance(now)[bright] / _luminance(full)[bright], 0.25,
                                   rtol=0.1)
    strip = window.audition.strip
    cell = strip.grab().toImage().pixelColor(strip.cell_rect(10).center())
    assert (cell.red(), cell.green(), cell.blue()) == tuple(
        int(v) for v in m.plots.strip_monitor_rgb_8bit[10])
    window.sky.redraw()
    sky = window.sky.sky.rgb_8bit
    # the brightest sky pixel is at most the encoded quarter white
    assert int(sky.max()) <= round(255.0 * float(colour.cctf_encoding(0.25, "sRGB"))) + 1
    # the readouts keep the chosen display's values
    assert window.current.readouts.value("hex") == str(render(m.settings, 5772.0).hex())


def test_dome_level_button_and_caution_on_a_sudden_rise(window, qapp):
    m = window.model
    m.set_settings(Settings(display=DOME), origin="file")
    window.current.dome_level.click()
    qapp.processEvents()
    assert m.viewing_level == pytest.approx(0.15)
    assert window.current.viewing_level.value() == pytest.approx(15.0)
    assert "12 cd/m2" in window.current.dome_level.toolTip()
    messages = []
    window.current.status.connect(messages.append)
    window.current.set_viewing_level(0.2)  # gradual: no caution
    window.current.set_viewing_level(1.0)  # five times brighter at once
    assert len(messages) == 1 and "avoid bright flashes" in messages[0]


def test_surround_is_drawn_round_the_big_swatch(window, qapp):
    window.current.set_viewing_level(0.5)
    window.current.set_surround("grey")
    qapp.processEvents()
    sw = window.current.swatch
    a = _pixels(sw)
    grey = surround_rgb_8bit("grey", 0.5)
    assert a[3, sw.width() // 2].tolist() == grey.tolist()  # border
    inner = sw.patch_rect()
    assert inner.width() < sw.width() and inner.height() < sw.height()
    centre = a[inner.center().y(), inner.center().x()].tolist()
    assert centre == window.model.colour.monitor_rgb_8bit.tolist()
    window.current.set_surround("black")
    qapp.processEvents()
    assert _pixels(sw)[3, sw.width() // 2].tolist() == [0, 0, 0]


def _widget_rect(window, widget, rect=None):
    r = widget.rect() if rect is None else rect
    top_left = widget.mapTo(window, r.topLeft())
    return QtCore.QRect(top_left, r.size())


def _plot_rect(window, plot, x0, y0, x1, y1):
    vb = plot.getPlotItem().getViewBox()
    a = plot.mapFromScene(vb.mapViewToScene(QtCore.QPointF(x0, y0)))
    b = plot.mapFromScene(vb.mapViewToScene(QtCore.QPointF(x1, y1)))
    r = QtCore.QRect(a, b).normalized()
    return QtCore.QRect(plot.mapTo(window, r.topLeft()), r.size())


def _colour_patches(window):
    """Window rectangles of every colour patch (the engine's star colours), a little larger."""
    rects = [_widget_rect(window, window.current.swatch),
             _widget_rect(window, window.current.night_swatch),
             _widget_rect(window, window.sky)]
    for strip in (window.current.magnitude_strip, window.audition.strip):
        for i in range(strip.cell_count):
            rects.append(_widget_rect(window, strip, strip.cell_rect(i)))
    rects.append(_plot_rect(window, window.spectrum, 380.0, 0.0, 780.0, 1.0))  # the band
    x, y = window.chromaticity.star_xy
    star = window.chromaticity.mapFromScene(window.chromaticity.getPlotItem().getViewBox()
                                            .mapViewToScene(QtCore.QPointF(x, y)))
    star = window.chromaticity.mapTo(window, star)
    rects.append(QtCore.QRect(star.x() - 12, star.y() - 12, 24, 24))
    return [r.adjusted(-3, -3, 3, 3) for r in rects]


def test_dim_theme_at_dome_level_emits_little_light_and_no_green_or_blue(window, qapp):
    window.set_theme("dim")
    window.model.set_settings(Settings(display=DOME), origin="file")
    window.current.use_dome_level()
    for key in window.overlay_checks:
        window.set_overlay(key, True)
    qapp.processEvents()
    window.sky.redraw()
    qapp.processEvents()
    a = _pixels(window)
    luminance = _luminance(a)  # relative to a full-white screen (= 1)
    # Bound: at the sRGB reference white of 80 cd/m2 ([IEC61966-2-1]) a mean of 0.03 is
    # 2.4 cd/m2, under half of the 5 cd/m2 above which [CIE191] counts vision as photopic
    # (m = 1), and a fifth of the dome's own 12 cd/m2 peak: the window as a whole keeps the
    # artist's eyes in the mesopic range the dome is seen in. (Measured before the dim theme
    # had a viewing level: about 0.12, 92 % of it from the colour patches.)
    assert float(luminance.mean()) < 0.03
    # The chrome (everything but the engine's colour patches) is red light only: green and
    # blue at most the dim palette's DIM_GREEN_BLUE_MAX (0x48; antialiasing only mixes palette
    # colours, so it cannot exceed it).
    chrome = np.ones(a.shape[:2], bool)
    for r in _colour_patches(window):
        chrome[max(r.top(), 0):max(r.bottom() + 1, 0), max(r.left(), 0):max(r.right() + 1, 0)] \
            = False
    assert chrome.mean() > 0.5  # most of the window is checked
    g, b = a[..., 1][chrome], a[..., 2][chrome]
    assert int(g.max()) <= DIM_GREEN_BLUE_MAX and int(b.max()) <= DIM_GREEN_BLUE_MAX
    # the chrome's own light is a small part of the whole
    assert float(luminance[chrome].mean()) < 0.02


def test_overlays_have_an_outline_under_them(window):
    from starkiln.gui.plots import OUTLINE_WIDTH

    window.set_theme("dim")
    item = window.spectrum.overlays["photopic"][0]
    shadow = item.opts["shadowPen"]
    assert shadow is not None and shadow.widthF() == OUTLINE_WIDTH > item.opts["pen"].widthF()
    assert shadow.color().name() == "#000000"  # dark under a light line on the band


def test_viewing_level_and_surround_are_kept_between_runs(qtbot, store):
    from starkiln.gui import create_window

    w = create_window(Settings(), 5772.0, store=store)
    qtbot.addWidget(w)
    w.current.set_viewing_level(0.1)
    w.current.set_surround("grey")
    w.close()  # closeEvent saves the state
    w2 = create_window(store=store)
    qtbot.addWidget(w2)
    # a window left dim starts dim: no bright flash at the next start
    assert w2.model.viewing_level == pytest.approx(0.1)
    assert w2.current.surround.currentData() == "grey"
    assert w2.current.swatch.surround_colour() is not None
