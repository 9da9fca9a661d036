"""The window (pytest-qt, offscreen): controls drive the engine; every view shows its colours.

Colours are read back from the painted pixels and compared with the render
path's 8-bit values; reference values from outside the project are named
beside each check.
"""

import numpy as np
import pytest
from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.engine.pipeline.render import render
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.plotdata.plots import efficiency_overlays, magnitude_ladder
from starkiln.engine.plotdata.plots import spectral_band_colours
from starkiln.engine.plotdata.sky import sky_image
from test_gui_support import (centre_pixel, escaped, pytestmark, rendered_8bit,  # noqa: F401
                              shared_window, store, window)

Qt = QtCore.Qt


def _swatch(w):
    return w.findChild(QtWidgets.QWidget, "current-swatch")


def _slider(w):
    return w.findChild(QtWidgets.QAbstractSlider, "temperature")


def _choose(choice, value):
    i = choice.combo.findData(value)
    assert i >= 0, value
    choice.combo.setCurrentIndex(i)


def _cell_pixel(strip, index):
    img = strip.grab().toImage()
    c = img.pixelColor(strip.cell_rect(index).center())
    return (c.red(), c.green(), c.blue())


# -- entry points ----------------------------------------------------------------------------
def test_create_window_returns_it_unshown(qtbot, store):
    from starkiln.gui import create_window

    w = create_window(store=store)
    qtbot.addWidget(w)
    assert not w.isVisible()
    assert isinstance(_slider(w), QtWidgets.QAbstractSlider)
    assert _swatch(w) is not None


# -- temperature audition --------------------------------------------------------------------
def test_slider_keys_and_wheel_give_the_render_path_colour(window, qtbot):
    slider, swatch = _slider(window), _swatch(window)
    s = window.model.settings
    slider.setValue(1600)  # on the grid (5772 K, the start, lies between two positions)
    slider.setFocus()
    seen = []
    for key in (Qt.Key.Key_Right, Qt.Key.Key_Right, Qt.Key.Key_PageUp, Qt.Key.Key_Left,
                Qt.Key.Key_PageDown, Qt.Key.Key_PageDown):
        before = 1e6 / window.model.temperature_K
        qtbot.keyClick(slider, key)
        t = window.model.temperature_K
        assert t == pytest.approx(float(slider.scale.temperature_at(slider.value())), rel=1e-12)
        # arrows step 1 mired, page keys 10 mired (mired = 1e6 / T, Wyszecki & Stiles 3.11)
        step = {Qt.Key.Key_Right: -1, Qt.Key.Key_Left: 1, Qt.Key.Key_PageUp: -10,
                Qt.Key.Key_PageDown: 10}[key]
        assert 1e6 / t - before == pytest.approx(step, abs=1e-6)
        assert centre_pixel(swatch) == rendered_8bit(s, t)
        seen.append(t)
    assert seen[0] < seen[1] < seen[2] and seen[4] == seen[0]  # hotter, hotter, ... and back
    # one wheel notch away from the user: one mired hotter
    before = window.model.temperature_K
    pos = QtCore.QPointF(slider.width() / 2, slider.height() / 2)
    ev = QtGui.QWheelEvent(pos, slider.mapToGlobal(pos), QtCore.QPoint(0, 0), QtCore.QPoint(0, 120),
                           Qt.MouseButton.NoButton, Qt.KeyboardModifier.NoModifier,
                           Qt.ScrollPhase.NoScrollPhase, False)
    QtWidgets.QApplication.sendEvent(slider, ev)
    assert 1e6 / before - 1e6 / window.model.temperature_K == pytest.approx(1.0, abs=1e-6)
    assert centre_pixel(swatch) == rendered_8bit(s, window.model.temperature_K)


def test_slider_across_the_range_out_of_gamut_and_table(window):
    slider, swatch = _slider(window), _swatch(window)
    model = window.model
    model.build_table()
    assert model.table_ready
    s = model.settings
    for position in (0, 37, 400, 1500, 2600, slider.maximum()):
        slider.setValue(position)
        t = model.temperature_K
        r = render(s, t)
        assert centre_pixel(swatch) == tuple(int(v) for v in to_8bit(r.rgb_encoded))
        assert window.current.readouts.value("hex") == str(r.hex())
        assert window.current.readouts.value("gamut").startswith("yes" if r.in_gamut else "\u26a0")
    # the looked-up table is the render path's own numbers: 8-bit identical at every 50th position
    table = model.slider_table
    pos = np.arange(0, table.temperature_K.size, 50)
    single = np.array([to_8bit(render(s, t).rgb_encoded) for t in table.temperature_K[pos]])
    assert np.array_equal(to_8bit(table.plain.rgb_encoded[pos]), single)
    m = model.magnitude
    single = np.array([to_8bit(render(s, t, m).rgb_dimmed_encoded)
                       for t in table.temperature_K[pos]])
    assert np.array_equal(to_8bit(table.night.rgb_dimmed_encoded[pos, 0]), single)


def test_out_of_gamut_is_marked(window):
    window.model.set_temperature(1200.0)
    r = render(window.model.settings, 1200.0)
    assert not bool(r.in_gamut)  # a 1200 K blackbody lies outside sRGB (IEC 61966-2-1 triangle)
    assert window.current.swatch._out_of_gamut
    assert window.current.readouts.value("gamut").startswith("\u26a0 no")
    window.model.set_temperature(6500.0)
    assert not window.current.swatch._out_of_gamut
    assert window.current.readouts.value("gamut") == "yes"


def test_kelvin_bv_and_class_entries(window):
    a = window.audition
    assert a.kelvin.commit_text("3200")
    assert window.model.temperature_K == 3200.0
    assert _slider(window).value() == int(a.scale.position_of(3200.0))
    assert centre_pixel(_swatch(window)) == rendered_8bit(window.model.settings, 3200.0)
    # The default index model: the blackbody of the same synthetic colour. The Sun's B-V 0.653
    # ([Ramirez2012]) gives it within 1 % of 5772 K ([IAU2015B3]); G2V (B-V 0.650,
    # [Mamajek2018]) the same way.
    assert a.bv.commit_text("0.653")
    assert window.model.temperature_K == pytest.approx(5772.0, rel=0.01)
    assert centre_pixel(_swatch(window)) == rendered_8bit(window.model.settings,
                                                          window.model.temperature_K)
    a.commit_class("G2V")
    assert window.model.temperature_K == pytest.approx(5772.0, rel=0.01)
    # The relation model (the window's model can be switched by scripts):
    window.model.set_index_model("relation")
    assert a.bv.commit_text("0.65")
    # Ballesteros (2012) EPL 97 34008 eq. 14 at B-V = 0.65: 4600 (1/2.298 + 1/1.218) = 5778 K
    expected = 4600.0 * (1 / (0.92 * 0.65 + 1.7) + 1 / (0.92 * 0.65 + 0.62))
    assert window.model.temperature_K == pytest.approx(expected)
    assert window.model.temperature_K == pytest.approx(5778.0, abs=1.0)
    a.commit_class("G2V")
    # G2V 5770 K: Mamajek mean dwarf sequence v2024.05.15 (Pecaut & Mamajek 2013, Table 5)
    assert window.model.temperature_K == 5770.0
    a.commit_class("K5.5V")
    assert window.model.temperature_K == pytest.approx(0.5 * (4440.0 + 4300.0))


def test_temperature_outside_the_slider_range_is_kept(window):
    assert window.audition.kelvin.commit_text("60000")
    assert window.model.temperature_K == 60000.0
    assert _slider(window).value() == _slider(window).maximum()
    assert centre_pixel(_swatch(window)) == rendered_8bit(window.model.settings, 60000.0)


def test_strip_shows_render_colours_and_click_jumps(window, qtbot):
    strip = window.audition.strip
    s = window.model.settings
    temps = window.audition.cell_temperatures
    expected = to_8bit(render(s, temps).rgb_encoded)
    for i in (0, 10, 30, len(temps) - 1):
        assert _cell_pixel(strip, i) == tuple(int(v) for v in expected[i])
    qtbot.mouseClick(strip, Qt.MouseButton.LeftButton, pos=strip.cell_rect(12).center())
    assert window.model.temperature_K == pytest.approx(float(temps[12]))
    assert strip._marker_index == 12
    assert centre_pixel(_swatch(window)) == rendered_8bit(s, float(temps[12]))


def test_magnitude_strip_and_night_readouts(window, qtbot):
    s = window.model.settings
    t = window.model.temperature_K
    mags = magnitude_ladder(s)
    strip = window.current.magnitude_strip
    assert strip.isEnabled() and strip.cell_count == mags.size
    for i in (0, 3, mags.size - 1):
        assert _cell_pixel(strip, i) == rendered_8bit(s, t, float(mags[i]))
    # colour fades with faintness: the naked-eye strip ends darker than it starts
    assert sum(_cell_pixel(strip, mags.size - 1)) < sum(_cell_pixel(strip, 0))
    qtbot.mouseClick(strip, Qt.MouseButton.LeftButton, pos=strip.cell_rect(2).center())
    assert window.model.magnitude == float(mags[2])
    r = render(s, t, float(mags[2]))
    assert centre_pixel(window.current.night_swatch) == rendered_8bit(s, t, float(mags[2]))
    assert window.current.readouts.value("intensity") == f"{float(r.intensity):.3f}"


# -- every view follows the white and the display -------------------------------------------
def _check_every_view(window, qtbot):
    s = window.model.settings
    t = window.model.temperature_K
    assert centre_pixel(_swatch(window)) == rendered_8bit(s, t)
    assert window.current.readouts.value("hex") == str(render(s, t).hex())
    temps = window.audition.cell_temperatures
    cells = to_8bit(render(s, temps).rgb_encoded)
    assert _cell_pixel(window.audition.strip, 20) == tuple(int(v) for v in cells[20])
    mags = magnitude_ladder(s)
    assert _cell_pixel(window.current.magnitude_strip, 1) == rendered_8bit(s, t, float(mags[1]))
    band = spectral_band_colours(s)
    assert np.array_equal(window.spectrum.band_colours.rgb_8bit, band.rgb_8bit)
    np.testing.assert_allclose(window.chromaticity.star_xy, render(s, t).xy)
    sky = window.sky
    qtbot.waitUntil(lambda: sky.sky is not None and sky.settings is s, timeout=2000)
    sky.redraw()
    expected = sky_image(s, sky.cluster, sky.width(), sky.height())
    assert np.array_equal(sky.sky.rgb_8bit, expected.rgb_8bit)
    img = sky.grab().toImage()
    i = int(np.argmin(sky.cluster.magnitude))
    x, y = int(expected.x_px[i]), int(expected.y_px[i])
    c = img.pixelColor(x, y)
    assert (c.red(), c.green(), c.blue()) == tuple(int(v) for v in expected.rgb_8bit[y, x])


def test_changing_the_white_updates_every_view(window, qtbot):
    before = centre_pixel(_swatch(window))
    _choose(window.look.white.kind, "D50")
    s = window.model.settings
    assert s.scene_white == "D50"
    # CIE 15:2004 Table T.3: D50 x = 0.34567, y = 0.35850
    np.testing.assert_allclose(window.chromaticity.diagram.scene_white_xy, [0.34567, 0.35850],
                               atol=5e-5)
    assert centre_pixel(_swatch(window)) != before  # a warmer white makes the Sun look cooler
    _check_every_view(window, qtbot)
    assert "D50" in window.summary.text()


def test_changing_the_display_updates_every_view(window, qtbot):
    # on a P3 monitor the P3 display's code values are painted unchanged (the conversion to
    # another monitor is checked in test_monitor.py)
    window.set_monitor_choice("display-p3")
    _choose(window.look.display.display, "display-p3")
    s = window.model.settings
    assert s.display.name == "display-p3"
    # SMPTE EG 432-1 / RP 431-2 P3 primaries
    np.testing.assert_allclose(window.chromaticity.diagram.gamut_xy[:3],
                               [[0.680, 0.320], [0.265, 0.690], [0.150, 0.060]])
    _check_every_view(window, qtbot)


def test_custom_white_by_xy_and_by_temperature(window, colour, qtbot):
    white = window.look.white
    _choose(white.kind, "xy")
    assert white.white_x.commit_text("0.33")
    assert white.white_y.commit_text("0.34")
    assert window.model.settings.scene_white == "xy:0.33,0.34"
    np.testing.assert_allclose(window.chromaticity.diagram.scene_white_xy, [0.33, 0.34])
    _choose(white.kind, "daylight")
    assert white.white_temperature.commit_text("5000")
    assert window.model.settings.scene_white == "daylight:5000"
    # CIE 15:2004 eq. 3.3-3.5 via colour-science's CCT_to_xy_CIE_D (reference library)
    ref = colour.temperature.CCT_to_xy_CIE_D(5000.0)
    np.testing.assert_allclose(window.chromaticity.diagram.scene_white_xy, ref, atol=3e-4)
    window.model.set_temperature(4100.0)
    white.use_star.click()
    assert window.model.settings.scene_white == "blackbody:4100"
    _check_every_view(window, qtbot)


def test_adaptation_observer_gamut_normalisation(window):
    look = window.look
    for choice, key, value in ((look.white.adaptation, "adaptation", "cat16"),
                               (look.white.observer, "observer", "cie1964"),
                               (look.output.gamut, "gamut", "clip"),
                               (look.output.normalisation, "normalisation", "luminance")):
        _choose(choice, value)
        assert getattr(window.model.settings, key) == value
        assert centre_pixel(_swatch(window)) == rendered_8bit(window.model.settings,
                                                              window.model.temperature_K)
    assert look.output.luminance.commit_text("0.3")
    assert window.model.settings.luminance_Y == 0.3
    assert "10\u00b0" in window.chromaticity.getPlotItem().getAxis("bottom").labelText


def test_options_are_the_engines(window):
    from starkiln.engine.colour.displays import PRESETS
    from starkiln.engine.colour.gamut import GAMUT_CHOICES
    from starkiln.engine.colour.whites import ADAPTATIONS, WHITE_PRESETS

    def data(choice):
        return [choice.combo.itemData(i) for i in range(choice.combo.count())]

    look = window.look
    assert data(look.white.adaptation) == list(ADAPTATIONS)
    assert data(look.output.gamut) == list(GAMUT_CHOICES)
    assert data(look.white.kind)[:len(WHITE_PRESETS)] == list(WHITE_PRESETS)
    assert data(look.display.display)[:len(PRESETS)] == list(PRESETS)


def test_keep_values_is_offered_only_for_working_spaces(window):
    # A working space is scene-linear: no gamut mapping unless one is asked for (issue 11);
    # a display's code values must lie in 0-1, so "keep values" is not offered for one.
    from starkiln.engine.colour.displays import PRESETS, WORKING_SPACES

    gamut = window.look.output.gamut
    keep = gamut.combo.model().item(gamut.combo.findData("none"))
    assert not keep.isEnabled()
    window.model.change("display", display=WORKING_SPACES["acescg"])
    window.look.output.refresh()
    assert keep.isEnabled() and gamut.value() == "none"
    window.model.change("display", display=PRESETS["srgb"])
    window.look.output.refresh()
    assert not keep.isEnabled() and gamut.value() == "chroma"


def test_demo_dome_profile_and_editor(window, qtbot):
    from starkiln.assets import asset_path
    from starkiln.engine.colour.displays import load_display_profile

    _choose(window.look.display.display, "demo-dome")
    dome = load_display_profile(str(asset_path("dome_projector.json")))
    assert window.model.settings.display == dome
    np.testing.assert_allclose(window.chromaticity.diagram.display_white_xy, dome.white_xy)
    editor = window.look.display.edit()
    editor.fields["gamma"].setText("2.2")
    editor.name.setText("dome, edited")
    assert editor.apply()
    d = window.model.settings.display
    assert d.gamma == 2.2 and d.name == "dome, edited" and d.red_xy == dome.red_xy
    assert window.look.display.display.value() == "custom"
    window.set_monitor_choice(d)  # the window shown on the dome itself: its code values as they are
    _check_every_view(window, qtbot)
    editor.close()


def test_save_and_open_display_profile(window, tmp_path):
    _choose(window.look.display.display, "rec2020")
    path = tmp_path / "screen.json"
    assert window.look.display.save_profile(path)
    _choose(window.look.display.display, "srgb")
    assert window.look.display.open_profile(path)
    assert window.model.settings.display.name == "rec2020"


def test_night_sky_controls(window):
    night = window.look.night
    assert night.aperture.commit_text("250")
    assert window.model.settings.aperture_mm == 250.0
    assert night.numbers["transmission"].commit_text("0.8")
    assert window.model.settings.transmission == 0.8
    assert night.magnitude.commit_text("5")
    assert window.model.magnitude == 5.0
    _choose(night.vision, "none")
    assert window.model.settings.vision == "none"
    _choose(night.curve, "log")
    assert window.model.settings.intensity_curve == "log"
    night.compensate.setChecked(True)
    assert window.model.settings.compensate is True
    assert night.peak.commit_text("20")
    assert window.model.settings.display.peak_luminance_cd_m2 == 20.0
    assert night.aperture.commit_text("")
    assert window.model.settings.aperture_mm is None
    s, t = window.model.settings, window.model.temperature_K
    assert centre_pixel(window.current.night_swatch) == rendered_8bit(s, t, 5.0)


# -- plots -----------------------------------------------------------------------------------
def test_spectrum_peak_and_overlays(window):
    window.model.set_temperature(5800.0)
    # Wien's law, b = 2.897771955e-3 m K (CODATA 2018): 5800 K peaks at 499.6 nm
    assert window.spectrum.peak_text == "peak 500 nm"
    window.model.set_temperature(40000.0)
    assert window.spectrum.peak_text.startswith("\u25c0 peak 72 nm")
    window.model.set_temperature(1000.0)
    assert "2,898 nm" in window.spectrum.peak_text
    assert not window.spectrum.overlays["photopic"][0].isVisible()
    window.overlay_checks["photopic"].setChecked(True)
    item = window.spectrum.overlays["photopic"][0]
    assert item.isVisible()
    wl, v = efficiency_overlays("cie1931")["V"]
    np.testing.assert_allclose(item.getData()[1], v)
    window.overlay_checks["cmf"].setChecked(True)
    assert all(i.isVisible() for i in window.spectrum.overlays["cmf"])


def test_chromaticity_star_follows(window):
    window.model.set_temperature(3000.0)
    np.testing.assert_allclose(window.chromaticity.star_xy,
                               render(window.model.settings, 3000.0).xy)
    window.zoom.setCurrentIndex(window.zoom.findData("locus"))
    x0, x1 = window.chromaticity.getPlotItem().getViewBox().viewRange()[0]
    assert x1 - x0 < 0.5


# -- sky preview ----------------------------------------------------------------------------
def test_sky_click_auditions_the_star(window, qtbot):
    sky = window.sky
    qtbot.waitUntil(lambda: sky.sky is not None, timeout=2000)
    i = int(np.argmin(sky.cluster.magnitude))
    qtbot.mouseClick(sky, Qt.MouseButton.LeftButton,
                     pos=QtCore.QPoint(int(sky.sky.x_px[i]), int(sky.sky.y_px[i])))
    assert window.model.temperature_K == float(sky.cluster.temperature_K[i])
    assert window.model.magnitude == float(sky.cluster.magnitude[i])


# -- clipboard, themes, persistence ---------------------------------------------------------
def test_copy_to_clipboard(window):
    window.findChild(QtWidgets.QToolButton, "copy-hex").click()
    hex_ = str(render(window.model.settings, window.model.temperature_K).hex())
    assert QtGui.QGuiApplication.clipboard().text() == hex_
    window.current.copy_all.click()
    assert f"Hex: {hex_}" in QtGui.QGuiApplication.clipboard().text()


def test_dim_theme_is_long_wavelength_light(window):
    from starkiln.gui.theme import DIM, ORDINARY

    # Common practice: red light spares dark adaptation. Every interface colour of the dim
    # theme has red at least twice green and blue.
    for name, value in vars(DIM).items():
        values = value if isinstance(value, tuple) else (value,)
        for v in values:
            if isinstance(v, str) and v.startswith("#"):
                r, g, b = (int(v[i:i + 2], 16) for i in (1, 3, 5))
                assert r >= 2 * max(g, b), (name, v)
    window.set_theme("ordinary")
    assert window.palette().color(QtGui.QPalette.ColorRole.Window).name() == ORDINARY.window
    window.set_theme("dim")
    assert window.palette().color(QtGui.QPalette.ColorRole.Window).name() == DIM.window


def test_state_is_kept_between_runs(qtbot, store, tmp_path):
    from starkiln.gui import create_window

    w = create_window(Settings(), 5772.0, store=store)
    qtbot.addWidget(w)
    w.set_theme("ordinary")
    w.overlay_checks["scotopic"].setChecked(True)
    w.model.set_temperature(4200.0)
    _choose(w.look.white.kind, "D55")
    assert w.save_settings_file(tmp_path / "look.toml")
    w.close()  # closeEvent saves the state
    w2 = create_window(store=store)
    qtbot.addWidget(w2)
    assert w2.theme.key == "ordinary"
    assert w2.overlay_checks["scotopic"].isChecked()
    assert w2.model.temperature_K == 4200.0
    assert w2.model.settings.scene_white == "D55"
    assert w2.recent_files() == [str(tmp_path / "look.toml")]
    assert w2.recent_menu.actions()[0].text() == str(tmp_path / "look.toml")


def test_settings_save_and_load(window, tmp_path):
    from starkiln.engine.pipeline.settings import load_settings

    _choose(window.look.output.gamut, "scale")
    path = tmp_path / "dome-look.toml"
    assert window.save_settings_file(path)
    assert load_settings(path) == window.model.settings
    window.reset_settings()
    assert window.model.settings == Settings()
    assert window.load_settings_file(path)
    assert window.model.settings.gamut == "scale"
    assert window.look.output.gamut.value() == "scale"
