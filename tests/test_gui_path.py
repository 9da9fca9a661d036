"""The window's dust and air tab: E(B-V), dust law and R_V, the atmosphere and its altitude.

Every colour and number the window shows is compared with the render path called here
(``render``), and each direction of change with an outside reference: colour-science's
Planckian locus ([Ohno2014] through ``colour.temperature``), dust-extinction's own G23
([Gordon2023], [DustExtinction]), colour-science's Planck's law ([Planck1901]) and Kasten &
Young's published airmass formula ([KastenYoung1989] eq. 3, typed here from the paper).
"""

import colour
import numpy as np
import pytest
from PySide6 import QtWidgets

from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings, load_settings
from test_gui_support import (centre_pixel, escaped, pytestmark,  # noqa: F401
                              rendered_8bit, shared_window, store, window)

T_K = 5772.0
#: Second radiation constant c2 = h c / k from the exact SI 2019 constants (colour-science's
#: default rounds it to 1.4388e-2; [CODATA2018]).
C2_SI = 6.62607015e-34 * 299792458.0 / 1.380649e-23


def _planck(wavelength_nm, temperature_K):
    """Planck's law by colour-science ([Planck1901]) with the exact c2; c1 cancels here."""
    return colour.colorimetry.planck_law(np.asarray(wavelength_nm) * 1e-9, temperature_K,
                                         c2=C2_SI)


def _swatch(window):
    return window.findChild(QtWidgets.QWidget, "current-swatch")


def _tab(window):
    return window.rendering.path


def _upvp_locus(temperature_K):
    """CIE 1976 u', v' of the Planckian locus by colour-science ([Ohno2014]; u' = u,
    v' = 1.5 v from the CIE 1960 UCS, [CIE15] (common practice))."""
    u, v = colour.temperature.CCT_to_uv_Ohno2013(np.array([temperature_K, 0.0]))
    return np.array([u, 1.5 * v])


def test_ebv_slider_gives_the_render_paths_colour_and_reddens(window):
    tab = _tab(window)
    clean = render(Settings(), T_K)
    tab.ebv_slider.setValue(80)  # 0.80 mag
    s = window.model.settings
    assert s.dust_ebv == 0.8 and tab.ebv.value() == pytest.approx(0.8)
    # exactly the render path's colour, in the readouts and in the swatch's paint
    dusty = render(Settings(dust_ebv=0.8), T_K)
    assert window.model.colour.hex == str(dusty.hex())
    assert centre_pixel(_swatch(window)) == rendered_8bit(Settings(dust_ebv=0.8), T_K)
    assert centre_pixel(_swatch(window)) != rendered_8bit(Settings(), T_K)
    # the temperature strip follows the settings too: its cells are the render path's
    strip = window.model.plots
    assert np.array_equal(strip.strip_hex, render(s, strip.strip_temperature_K).hex())
    # Outside check: dust reddens, so the star's u'v' moves along the Planckian locus toward
    # lower temperatures (colour-science's locus from 5772 K to 5000 K; reddening by dust
    # runs nearly parallel to the blackbody locus: common practice).
    shift = colour.xy_to_Luv_uv(dusty.xy) - colour.xy_to_Luv_uv(clean.xy)
    cooler = _upvp_locus(5000.0) - _upvp_locus(T_K)
    cosine = shift @ cooler / np.linalg.norm(shift) / np.linalg.norm(cooler)
    assert cosine > 0.95
    # and the correlated colour temperature (colour-science, [Ohno2014]) drops
    def cct(xy):
        return colour.temperature.uv_to_CCT_Ohno2013(colour.xy_to_UCS_uv(xy))[0]

    assert cct(dusty.xy) < cct(clean.xy) - 500.0


def test_altitude_slider_sets_the_extinction_readout(window):
    tab = _tab(window)
    assert not tab.altitude.isEnabled()  # the atmosphere is off by default
    assert "Nothing in the way" in tab.readout.text()
    tab.air.setChecked(True)
    assert tab.altitude.isEnabled()
    tab.altitude.setValue(20)
    s = window.model.settings
    assert s.altitude_deg == 20.0
    ext20 = float(render(Settings(altitude_deg=20.0), T_K).extinction_mag)
    # [KastenYoung1989] eq. 3, typed from the paper: X = 1/(sin h + 0.50572 (h + 6.07995)^-1.6364)
    x20 = 1.0 / (np.sin(np.radians(20.0)) + 0.50572 * (20.0 + 6.07995) ** -1.6364)
    assert tab.readout.text() == f"Dimmed by {ext20:.2f} mag in V \u00b7 airmass {x20:.2f}"
    assert window.model.extinction_mag == ext20
    tab.altitude.setValue(60)
    ext60 = float(render(Settings(altitude_deg=60.0), T_K).extinction_mag)
    x60 = 1.0 / (np.sin(np.radians(60.0)) + 0.50572 * (60.0 + 6.07995) ** -1.6364)
    assert f"{ext60:.2f} mag" in tab.readout.text() and f"airmass {x60:.2f}" in tab.readout.text()
    # Outside check (Bouguer's law, common practice): extinction in magnitudes grows in
    # proportion to the airmass (within 3 %: ozone has an airmass of its own)
    assert ext20 / ext60 == pytest.approx(x20 / x60, rel=0.03)
    # a temperature change moves the readout to that star's own extinction
    window.model.set_temperature(3000.0)
    ext = float(render(Settings(altitude_deg=60.0), 3000.0).extinction_mag)
    assert tab.readout.text().startswith(f"Dimmed by {ext:.2f} mag")
    tab.air.setChecked(False)
    assert window.model.settings.altitude_deg is None and not tab.altitude.isEnabled()


def _g23_transmission(wavelength_nm, ebv, rv=3.1):
    """10^(-0.4 A) with A = R_V E(B-V) A(lambda)/A(V), by dust-extinction's own G23."""
    import astropy.units as u

    from starkiln.engine.catalogue.formats import astropy_guard

    with astropy_guard():  # dust-extinction imports astropy.table (see engine.path.dust)
        from dust_extinction.parameter_averages import G23

        a_over_av = np.asarray(G23(Rv=rv)(np.asarray(wavelength_nm) * u.nm))
    return 10.0 ** (-0.4 * rv * ebv * a_over_av)


def test_spectrum_plot_shows_emitted_and_arriving_light(window):
    view = window.spectrum
    assert not view.arriving_shown and view.legend_texts == []
    tab = _tab(window)
    tab.ebv.commit_text("0.6")
    assert window.model.settings.dust_ebv == 0.6
    assert view.arriving_shown
    assert view.legend_texts == ["sent by the star", "at the eye, after dust"]
    x_emit, y_emit = view.curve.x, view.curve.y
    x, y = view.curve.arriving_x, view.curve.arriving_y
    assert np.array_equal(x, x_emit)  # dust alone: the whole plot (G23 spans 91 nm-32 um)
    # Planck's law by colour-science ([Planck1901]), on the emitted curve's scale (peak 1)
    planck = _planck(x, T_K)
    np.testing.assert_allclose(y_emit, planck / planck.max(), rtol=1e-9)
    np.testing.assert_allclose(y, planck / planck.max() * _g23_transmission(x, 0.6),
                               rtol=1e-9, atol=1e-15)
    # the curve follows the slider of temperatures
    window.model.set_temperature(4000.0)
    x, y = view.curve.arriving_x, view.curve.arriving_y
    planck = _planck(x, 4000.0)
    np.testing.assert_allclose(y, planck / planck.max() * _g23_transmission(x, 0.6),
                               rtol=1e-9, atol=1e-15)
    # with the air as well: drawn where the air model is complete (360-2200 nm)
    tab.air.setChecked(True)
    x = view.curve.arriving_x
    assert x.min() >= 360.0 and x.max() <= 2200.0 and x.size > 100
    assert view.legend_texts[1] == "at the eye, after dust and air"
    # no path: the emitted curve alone
    tab.air.setChecked(False)
    tab.ebv_slider.setValue(0)
    assert not view.arriving_shown and view.legend_texts == []


def test_rv_typed_outside_the_law_is_refused_and_the_state_kept(window):
    tab = _tab(window)
    s = window.model.settings
    before = centre_pixel(_swatch(window))
    assert (tab.rv.minimum(), tab.rv.maximum()) == (2.3, 5.6)  # [Gordon2023]: G23 R_V 2.3-5.6
    assert not tab.rv.commit_text("7")
    assert tab.rv.error.text() == ("\u26a0 dust_rv 7 is outside the range of dust law G23: "
                                   "accepted 2.3 <= R_V <= 5.6")
    assert not tab.rv.error.isHidden()
    assert window.model.settings is s and tab.rv.value() == pytest.approx(3.1)
    assert centre_pixel(_swatch(window)) == before
    assert tab.rv.commit_text("4.2")  # a good value clears it
    assert window.model.settings.dust_rv == 4.2 and not tab.rv.has_error
    # E(B-V) typed beyond the control's 0-3 mag, or below 0
    s = window.model.settings
    assert not tab.ebv.commit_text("5")
    assert "dust_ebv 5 is outside this control's 0-3 mag" in tab.ebv.error.text()
    assert not tab.ebv.commit_text("-0.2")
    assert "dust_ebv -0.2 is outside the accepted range" in tab.ebv.error.text()
    assert window.model.settings is s


def test_law_change_that_leaves_rv_outside_is_refused(window):
    tab = _tab(window)
    law = tab.law.combo
    law.setCurrentIndex(law.findData("F99"))
    assert window.model.settings.dust_law == "F99"
    assert (tab.rv.minimum(), tab.rv.maximum()) == (2.0, 6.0)  # [Fitzpatrick1999]
    assert law.currentText() == "Fitzpatrick 1999"  # readable names, not class names
    assert tab.rv.commit_text("2.1")
    s = window.model.settings
    law.setCurrentIndex(law.findData("G23"))  # 2.1 is outside G23's 2.3-5.6
    assert "outside the range of dust law G23" in tab.law.error.text()
    assert window.model.settings is s and tab.law.value() == "F99"


def test_path_settings_round_trip_and_undo(window, tmp_path):
    tab = _tab(window)
    tab.ebv.commit_text("0.35")
    tab.law.combo.setCurrentIndex(tab.law.combo.findData("CCM89"))
    tab.rv.commit_text("4")
    tab.air.setChecked(True)
    tab.altitude.setValue(42)
    s = window.model.settings
    assert (s.dust_ebv, s.dust_law, s.dust_rv, s.altitude_deg) == (0.35, "CCM89", 4.0, 42.0)
    path = tmp_path / "dusty.toml"
    assert window.save_settings_file(path)
    assert load_settings(path) == s
    window.reset_settings()
    assert window.model.settings == Settings() and not tab.air.isChecked()
    assert tab.ebv.value() == 0.0 and tab.ebv_slider.value() == 0
    assert window.load_settings_file(path)
    assert window.model.settings == s
    assert tab.ebv.value() == pytest.approx(0.35) and tab.ebv_slider.value() == 35
    assert tab.law.value() == "CCM89" and tab.rv.value() == pytest.approx(4.0)
    assert tab.air.isChecked() and tab.altitude.value() == 42
    assert window.summary.text().endswith("\u00b7 dust E(B-V) 0.35 \u00b7 air at 42\u00b0")
    # one drag of the slider is one undo step
    window.model.clear_history()
    tab.ebv_slider.setSliderDown(True)
    for step in (40, 50, 60):
        tab.ebv_slider.setValue(step)
    tab.ebv_slider.setSliderDown(False)
    assert window.model.settings.dust_ebv == 0.6
    assert len(window.model.history) == 1 and window.undo_stack.count() == 1
    assert window.model.history.undo_text == "dust E(B-V)"
    window.undo_stack.undo()
    assert window.model.settings == s and tab.ebv_slider.value() == 35
    window.undo_stack.redo()
    assert window.model.settings.dust_ebv == 0.6


def test_demo_sky_follows_the_dust(window, qtbot):
    from starkiln.engine.plotdata.sky import sky_image

    sky = window.sky
    _tab(window).ebv_slider.setValue(120)  # 1.2 mag: the cluster reddens and fades
    s = window.model.settings
    # the change starts a redraw from the event loop (a zero-delay timer; late in a long run
    # of window tests that timer may not come round, so the redraw is asked for as well, as
    # tests/test_gui.py does)
    assert sky._timer.isActive() or sky.settings is s
    sky.redraw()
    assert sky.settings is s
    # the picture is the engine's sky picture for these settings (render path per star)
    expected = sky_image(s, sky.cluster, sky.width(), sky.height())
    assert np.array_equal(sky.sky.rgb_8bit, expected.rgb_8bit)
    clean = sky_image(Settings(), sky.cluster, sky.width(), sky.height())
    # dust takes light (A_V = 3.1 x 1.2 = 3.7 mag in V, [Cardelli1989] eq. 1): the picture
    # as a whole is darker than without it
    assert expected.rgb_8bit.sum() < clean.rgb_8bit.sum()


def test_the_session_keeps_the_path(qtbot, store):
    from starkiln.gui import create_window

    w = create_window(Settings(), T_K, store=store)
    qtbot.addWidget(w)
    tab = w.rendering.path
    tab.ebv.commit_text("0.4")
    tab.air.setChecked(True)
    tab.altitude.setValue(15)
    kept = w.model.settings
    w.close()  # closeEvent saves the session
    w2 = create_window(store=store)
    qtbot.addWidget(w2)
    assert w2.model.settings == kept
    tab2 = w2.rendering.path
    assert tab2.ebv.value() == pytest.approx(0.4) and tab2.air.isChecked()
    assert tab2.altitude.isEnabled() and tab2.altitude.value() == 15
