"""The window paints the chosen display's colours converted to the monitor (pytest-qt, offscreen).

Expected pixels are colour-science's conversion (``colour.RGB_to_RGB`` with Bradford between its
RGB colour spaces, matrices derived from the primaries as [RP177] gives them, then its sRGB
encoding, [IEC61966-2-1]) of the render path's display-linear colour, within one 8-bit code
value. The offscreen platform reports no screen colour space, so the monitor is sRGB, assumed.
"""

import warnings

import numpy as np
import pytest
from PySide6 import QtGui, QtWidgets

from starkiln.engine.colour.displays import PRESETS, WORKING_SPACES
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.pipeline.render import render
from starkiln.engine.plotdata.plots import spectral_band_colours
from test_gui_support import (centre_pixel, escaped, pytestmark, shared_window,  # noqa: F401
                              store, window)

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import colour


def _space(name):
    space = colour.RGB_COLOURSPACES[name].copy()
    space.use_derived_transformation_matrices(True)
    return space


def _on_srgb(rgb_linear, source_name):
    """colour-science: the source space's linear RGB on an sRGB monitor, 0-255 (unquantised),
    and whether a channel fell outside 0-1 there."""
    lin = colour.RGB_to_RGB(rgb_linear, _space(source_name), _space("sRGB"),
                            chromatic_adaptation_transform="Bradford")
    out = np.any((lin < -1e-4) | (lin > 1 + 1e-4), axis=-1)
    return 255.0 * colour.cctf_encoding(np.clip(lin, 0.0, 1.0), "sRGB"), out


def _close(pixel, expected_255):
    assert np.abs(np.asarray(pixel, float) - expected_255).max() <= 1.0, (pixel, expected_255)


def _swatch(w):
    return w.findChild(QtWidgets.QWidget, "current-swatch")


def _choose_display(window, key):
    combo = window.look.display.display.combo
    i = combo.findData(key)
    assert i >= 0, key
    combo.setCurrentIndex(i)


def _cell_pixel(strip, index):
    img = strip.grab().toImage()
    c = img.pixelColor(strip.cell_rect(index).center())
    return (c.red(), c.green(), c.blue())


def test_offscreen_monitor_is_srgb_assumed_and_said_so(window):
    assert window.model.monitor == PRESETS["srgb"]
    text = window.findChild(QtWidgets.QLabel, "monitor-status").text()
    assert text.startswith("monitor: sRGB (assumed; the platform reports none)")
    assert "no swatch clipped" in text  # the sRGB display on an sRGB monitor clips nothing


def test_p3_swatch_strips_and_band_are_converted_for_the_monitor(window):
    _choose_display(window, "display-p3")
    s = window.model.settings
    assert s.display.name == "display-p3"
    for t in (2400.0, 5772.0, 12000.0):
        window.model.set_temperature(t)
        r = render(s, t)
        expected, _ = _on_srgb(r.rgb_linear, "Display P3")  # [EG432-1] primaries
        _close(centre_pixel(_swatch(window)), expected)
        # the readouts keep the chosen display's values
        assert window.current.readouts.value("hex") == str(r.hex())
        assert window.current.readouts.value("8bit") == " ".join(
            f"{int(v):3d}" for v in to_8bit(r.rgb_encoded))
    strip = window.audition.strip
    cells = render(s, window.audition.cell_temperatures)
    expected, _ = _on_srgb(cells.rgb_linear, "Display P3")
    for i in (0, 20, 47):
        _close(_cell_pixel(strip, i), expected[i])
    band = spectral_band_colours(s)
    expected, _ = _on_srgb(band.rgb_linear, "Display P3")
    assert np.abs(window.spectrum.band_monitor_rgb_8bit - expected).max() <= 1.0


def test_colour_outside_srgb_is_marked_and_counted(window):
    _choose_display(window, "display-p3")
    window.model.set_temperature(1200.0)
    r = render(window.model.settings, 1200.0)
    _, outside = _on_srgb(r.rgb_linear, "Display P3")
    assert bool(outside)  # a 1200 K star on P3 needs a red sRGB cannot give (colour-science)
    swatch = _swatch(window)
    assert swatch.clipped
    img = swatch.grab().toImage()
    corner = img.pixelColor(img.width() - 4, img.height() - 4)
    centre = img.pixelColor(img.width() // 2, img.height() // 2)
    assert corner != centre
    assert corner == QtGui.QColor(window.theme.muted)  # the quiet corner mark
    n = window.model.monitor_clipped_count()
    assert n >= 1
    text = window.findChild(QtWidgets.QLabel, "monitor-status").text()
    assert f"{n} swatch" in text and "clipped for this monitor" in text
    strip = window.audition.strip
    cells = render(window.model.settings, window.audition.cell_temperatures)
    _, outside = _on_srgb(cells.rgb_linear, "Display P3")
    assert [strip.cell_clipped(i) for i in range(strip.cell_count)] == outside.tolist()
    _choose_display(window, "srgb")  # the same star for an sRGB display: nothing to clip
    assert not swatch.clipped and window.model.monitor_clipped_count() == 0


def test_working_spaces_are_listed_and_shown_through_the_monitor(window):
    combo = window.look.display.display.combo
    keys = [combo.itemData(i) for i in range(combo.count())]
    assert keys[-len(WORKING_SPACES):] == list(WORKING_SPACES)
    texts = [combo.itemText(i).lower() for i in range(combo.count())]
    heading = next(i for i, t in enumerate(texts) if t.startswith("working spaces"))
    assert keys[heading] is None and heading < len(keys) - len(WORKING_SPACES)
    assert not combo.model().item(heading).isEnabled()  # a heading, not a choice
    _choose_display(window, "acescg")
    assert window.model.settings.display == WORKING_SPACES["acescg"]
    assert window.look.display.display.value() == "acescg"
    r = render(window.model.settings, window.model.temperature_K)
    expected, _ = _on_srgb(r.rgb_linear, "ACEScg")  # AP1, ACES white [S-2014-004]
    _close(centre_pixel(_swatch(window)), expected)
    shown = window.current.readouts.value("linear")
    assert shown == " ".join(f"{float(x):.4f}" for x in r.rgb_linear)  # working-space values


def test_view_menu_monitor_p3_shows_p3_code_values(window):
    _choose_display(window, "display-p3")
    window.set_monitor_choice("display-p3")
    s = window.model.settings
    r = render(s, window.model.temperature_K)
    # P3 on a P3 monitor: the display's own code values (no conversion needed)
    assert centre_pixel(_swatch(window)) == tuple(int(v) for v in to_8bit(r.rgb_encoded))
    text = window.findChild(QtWidgets.QLabel, "monitor-status").text()
    assert text.startswith("monitor: Display P3 (chosen in View > Monitor)")
    assert window.monitor_actions["display-p3"].isChecked()
    sky = window.sky
    sky.redraw()
    from starkiln.engine.plotdata.sky import sky_image

    plain = sky_image(s, sky.cluster, sky.width(), sky.height())
    assert np.array_equal(sky.sky.rgb_8bit, plain.rgb_8bit)
    window.set_monitor_choice("as the platform reports")
    sky.redraw()
    assert not np.array_equal(sky.sky.rgb_8bit, plain.rgb_8bit)  # now converted to sRGB


def test_qt_colour_spaces_become_monitors():
    from starkiln.gui.window import monitor_from_colour_space

    cs = QtGui.QColorSpace
    p3, source = monitor_from_colour_space(cs(cs.NamedColorSpace.DisplayP3))
    assert source == "reported by the platform"
    # SMPTE EG 432-1 P3 primaries, D65 white (CIE 15:2004: 0.3127, 0.3290)
    np.testing.assert_allclose([p3.red_xy, p3.green_xy, p3.blue_xy],
                               [[0.680, 0.320], [0.265, 0.690], [0.150, 0.060]], atol=1e-6)
    np.testing.assert_allclose(p3.white_xy, [0.3127, 0.3290], atol=1e-4)
    assert p3.transfer == "srgb"
    lin, _ = monitor_from_colour_space(cs(cs.NamedColorSpace.SRgbLinear))
    assert lin.transfer == "linear"
    adobe, _ = monitor_from_colour_space(cs(cs.NamedColorSpace.AdobeRgb))
    # Adobe RGB (1998): gamma 563/256 = 2.19921875 [AdobeRGB1998]
    assert adobe.transfer == "gamma" and adobe.gamma == pytest.approx(563 / 256, abs=1e-6)
    none, source = monitor_from_colour_space(cs())
    assert none == PRESETS["srgb"] and source.startswith("assumed")


def test_monitor_option_reaches_the_window(qapp, tmp_path):
    from starkiln.gui.app import screenshot
    from starkiln.gui.window import MainWindow

    w = MainWindow(store=None, monitor=PRESETS["display-p3"])
    try:
        assert w.model.monitor == PRESETS["display-p3"]
        assert "chosen with --monitor" in w.monitor_status.text()
    finally:
        w.close()
        w.deleteLater()
    out = screenshot(tmp_path / "p3.png", monitor="display-p3")
    assert out.exists()


def _p3_decoded(code_8bit):
    """colour-science: Display P3 code values (its sRGB-curve encoding, [EG432-1]) to linear."""
    return colour.cctf_decoding(np.asarray(code_8bit, float) / 255.0, "sRGB")


def _palette_dialog(window, tmp_path, name):
    d = window.export_dialog("palette")
    d.path.setText(str(tmp_path / name))
    d.steps.setText("8")
    assert d.refresh_preview()
    return d


def test_palette_preview_strip_is_converted_for_the_monitor(window, tmp_path):
    from starkiln.engine.colour.monitor import monitor_rgb_8bit

    _choose_display(window, "display-p3")
    d = _palette_dialog(window, tmp_path, "p.json")
    palette = d._build()
    lin = palette.rendered.rgb_linear
    expected, _ = _on_srgb(lin, "Display P3")  # colour-science, [EG432-1] primaries
    ours, _ = monitor_rgb_8bit(lin, "display-p3", "srgb")
    for i in range(len(palette.names)):
        pixel = _cell_pixel(d.strip, i)
        _close(pixel, expected[i])
        _close(pixel, ours[i])
    # the conversion really happened: P3 code values are not what the strip paints
    assert not np.array_equal(np.array([_cell_pixel(d.strip, 0)]), palette.rgb_8bit[:1])
    d.close()


def test_contact_sheet_preview_is_converted_and_the_file_keeps_the_display_values(
        window, tmp_path):
    from starkiln.engine.exports.contact_sheets import sheet_swatch_boxes

    _choose_display(window, "display-p3")
    d = _palette_dialog(window, tmp_path, "sheet.png")
    palette = d._build()
    img, codes = d.preview_monitor_image, d.preview_image  # painted, and the file's pixels
    boxes = sheet_swatch_boxes(len(palette.names))
    for i, (left, top, right, bottom) in enumerate(boxes):
        cx, cy = (left + right) // 2, (top + bottom) // 2
        f = codes.pixelColor(cx, cy)
        file_px = np.array([f.red(), f.green(), f.blue()])
        assert file_px.tolist() == palette.rgb_8bit[i].tolist()  # the display's values
        expected, _ = _on_srgb(_p3_decoded(file_px), "Display P3")
        c = img.pixelColor(cx, cy)
        _close((c.red(), c.green(), c.blue()), expected)
    assert d.export()
    written = QtGui.QImage(str(tmp_path / "sheet.png")).convertToFormat(
        QtGui.QImage.Format.Format_RGB888)
    left, top, right, bottom = boxes[0]
    c = written.pixelColor((left + right) // 2, (top + bottom) // 2)
    assert [c.red(), c.green(), c.blue()] == palette.rgb_8bit[0].tolist()
    d.close()


def test_texture_preview_is_converted_at_the_viewing_level(window):
    _choose_display(window, "display-p3")
    window.model.set_viewing_level(0.5)
    try:
        d = window.export_dialog("lut")
        assert d.refresh_preview()
        codes, img = d.preview_image, d.preview_monitor_image  # the file's, and painted
        w, h = codes.width(), codes.height()
        for x, y in ((0, 0), (w // 2, h // 2), (w - 1, h - 1)):
            f = codes.pixelColor(x, y)
            lin = colour.RGB_to_RGB(_p3_decoded([f.red(), f.green(), f.blue()]),
                                    _space("Display P3"),
                                    _space("sRGB"), chromatic_adaptation_transform="Bradford")
            # dimmed in the monitor's linear light (starkiln.engine.colour.viewing)
            expected = 255.0 * colour.cctf_encoding(0.5 * np.clip(lin, 0.0, 1.0), "sRGB")
            c = img.pixelColor(x, y)
            _close((c.red(), c.green(), c.blue()), expected)
        d.close()
    finally:
        window.model.set_viewing_level(1.0)
