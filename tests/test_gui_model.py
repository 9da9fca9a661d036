"""The window model without a display (plain pytest, no Qt): state, events, origins, rejections.

References named beside the checks: the mired definition (Wyszecki & Stiles 1982,
section 3.11), Wien's displacement constant (CODATA 2018), CIE 15:2004 Table T.3
(D50), SMPTE RP 431-2 (P3 primaries), CIE S 010:2004 (V(lambda) peak),
Ballesteros (2012) eq. 14, and the render path's own colours where the model
must hand on exactly those.
"""

import sys

import numpy as np
import pytest

from starkiln.engine.errors import InputRangeError, StarkilnError
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.gui.model import WindowModel

WIEN_B_M_K = 2.897771955e-3  # CODATA 2018 Wien wavelength displacement law constant


class Recorder:
    """Every change of the model's events, in order, as (event, origin, value)."""

    def __init__(self, model):
        self.seen = []
        for name in ("temperature", "magnitude", "settings", "plots", "rejected"):
            getattr(model.events, name).connect(
                lambda c: self.seen.append((c.event, c.origin, c.value)))

    def events(self):
        return [(e, o) for e, o, _v in self.seen]


def _rgb8(settings, temperature_K, magnitude=None):
    r = render(settings, temperature_K, magnitude)
    rgb = r.rgb_encoded if magnitude is None else r.rgb_dimmed_encoded
    return tuple(int(v) for v in to_8bit(rgb))


@pytest.fixture
def model():
    return WindowModel(Settings(), 5772.0, 1.0)


def test_the_model_loads_no_qt(python_run):
    # the model is the window's state without the toolkit: importing it must not pull Qt in
    out = python_run("import sys, starkiln.gui.model\n"
                     "print([m for m in ('PySide6', 'pyqtgraph', 'shiboken6') "
                     "if m in sys.modules])")
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"


def test_settings_change_reaches_colour_and_plots(model):
    rec = Recorder(model)
    before = tuple(int(v) for v in model.colour.rgb_8bit)
    model.change("white", scene_white="D50")
    s = model.settings
    assert s.scene_white == "D50"
    assert rec.events() == [("settings", "white"), ("plots", "white")]
    assert rec.seen[0][2] is s and rec.seen[1][2] is model.plots
    # CIE 15:2004 Table T.3: D50 x = 0.34567, y = 0.35850
    np.testing.assert_allclose(model.plots.diagram.scene_white_xy, [0.34567, 0.35850], atol=5e-5)
    # the swatch is the render path's colour for the new settings; a warmer white makes the
    # Sun look cooler, so the colour moved
    assert tuple(int(v) for v in model.colour.rgb_8bit) == _rgb8(s, 5772.0)
    assert tuple(int(v) for v in model.colour.rgb_8bit) != before


def test_equal_settings_change_nothing(model):
    rec = Recorder(model)
    s = model.settings
    model.set_settings(Settings(), origin="file")
    model.change("gamut", gamut=s.gamut)
    assert model.settings is s and rec.seen == []


def test_temperature_from_a_slider_origin(model):
    rec = Recorder(model)
    scale = model.slider_scale
    model.set_slider_position(1600)
    # the slider runs from 1000 K (1000 mired) in steps of 0.25 mired (Wyszecki & Stiles
    # 1982, 3.11: mired = 1e6 / T): position 1600 is 600 mired, 1666.67 K
    assert model.temperature_K == pytest.approx(1e6 / 600.0, rel=1e-12)
    assert model.slider_position == 1600 and scale.steps == 3900
    assert model.mired == pytest.approx(600.0)
    assert rec.events() == [("temperature", "slider")]
    assert rec.seen[0][2] == model.temperature_K
    assert tuple(int(v) for v in model.colour.rgb_8bit) == _rgb8(model.settings, 1e6 / 600.0)
    # Wien's law for the spectrum plot's peak
    assert model.spectrum.peak_nm == pytest.approx(WIEN_B_M_K / model.temperature_K * 1e9)
    # with the table built, a step is looked up: the same numbers as the render path
    model.build_table()
    assert model.table_ready
    model.set_slider_position(1604)
    t = model.temperature_K
    assert t == pytest.approx(1e6 / 599.0, rel=1e-12)
    assert tuple(int(v) for v in model.colour.rgb_8bit) == _rgb8(model.settings, t)
    assert tuple(int(v) for v in model.colour.dimmed_rgb_8bit) == _rgb8(model.settings, t, 1.0)
    assert model.colour.hex == str(render(model.settings, t).hex())


def test_echo_is_ignored_by_origin(model):
    """A slider and a kelvin field bound to the model, each ignoring its own changes."""
    shown = {"slider": None, "kelvin": None}
    echoes = []

    def slider_view(change):
        if change.origin != "slider":
            shown["slider"] = model.slider_position
            # a real slider moved to show the model's position reports that position back
            model.set_slider_position(model.slider_position, origin="slider")

    def kelvin_view(change):
        if change.origin != "kelvin":
            shown["kelvin"] = f"{change.value:.0f}"
        else:
            echoes.append(change.value)

    model.events.temperature.connect(slider_view)
    model.events.temperature.connect(kelvin_view)
    rec = Recorder(model)
    model.set_temperature(3200.0, origin="kelvin")
    # the slider followed, its report changed nothing: the typed 3200 K stands (off the grid)
    assert model.temperature_K == 3200.0
    assert shown["slider"] == int(model.slider_scale.position_of(3200.0))
    assert shown["kelvin"] is None and echoes == [3200.0]
    assert rec.events() == [("temperature", "kelvin")]
    model.set_slider_position(2000, origin="slider")
    assert shown["kelvin"] == f"{1e6 / 500.0:.0f}"  # 2000 positions = 500 mired = 2000 K
    assert shown["slider"] == int(model.slider_scale.position_of(3200.0))  # not echoed
    assert rec.events()[-1] == ("temperature", "slider") and len(rec.seen) == 2


def test_rejected_change_keeps_the_last_good_state(model):
    model.set_temperature(4000.0, origin="kelvin")
    s, t, colour, plots = model.settings, model.temperature_K, model.colour, model.plots
    rec = Recorder(model)
    with pytest.raises(InputRangeError, match="outside the supported range 500-100000 K"):
        model.set_temperature(50.0, origin="kelvin")
    with pytest.raises(StarkilnError, match="aperture_mm -5 is outside the accepted range"):
        model.change("night", aperture_mm=-5.0)
    with pytest.raises(StarkilnError, match="magnitude 40 is outside the accepted range"):
        model.set_magnitude(40.0, origin="night")
    with pytest.raises(StarkilnError, match="B-V 11 is outside the accepted range"):
        model.set_temperature_from_bv(11.0)
    with pytest.raises(StarkilnError, match="peak_luminance_cd_m2 0 is outside"):
        model.change_display("night", peak_luminance_cd_m2=0.0)
    assert model.settings is s and model.temperature_K == t and model.magnitude == 1.0
    assert model.colour is colour and model.plots is plots
    assert [(e, o) for e, o, _v in rec.seen] == [
        ("rejected", "kelvin"), ("rejected", "night"), ("rejected", "night"),
        ("rejected", "bv"), ("rejected", "night")]
    assert all(isinstance(v, StarkilnError) for _e, _o, v in rec.seen)
    # a good value afterwards goes through: Ballesteros (2012) eq. 14 at B-V = 0.65 with the
    # relation model; the default (synthetic photometry) gives the blackbody of that colour
    model.set_index_model("relation")
    model.set_temperature_from_bv(0.65)
    assert model.temperature_K == pytest.approx(
        4600.0 * (1 / (0.92 * 0.65 + 1.7) + 1 / (0.92 * 0.65 + 0.62)))
    model.set_index_model("synthetic")
    model.set_temperature_from_bv(0.653)  # the Sun's B-V ([Ramirez2012]): near 5772 K
    assert model.temperature_K == pytest.approx(5772.0, rel=0.01)
    with pytest.raises(StarkilnError, match="unknown colour-index model"):
        model.set_index_model("tepid")


def test_plot_data_refresh_with_the_display(model):
    rec = Recorder(model)
    old = model.plots
    model.change("display", display="display-p3")
    plots = model.plots
    assert plots is not old and plots.settings is model.settings
    assert rec.events() == [("settings", "display"), ("plots", "display")]
    # SMPTE RP 431-2 / EG 432-1 P3 primaries
    np.testing.assert_allclose(plots.diagram.gamut_xy[:3],
                               [[0.680, 0.320], [0.265, 0.690], [0.150, 0.060]])
    # the strip's cells are the render path's colours for the new display
    s = model.settings
    expected = to_8bit(render(s, plots.strip_temperature_K).rgb_encoded)
    assert np.array_equal(plots.strip_rgb_8bit, expected)
    # CIE S 010:2004: V(lambda) peaks at 555 nm
    wl, v = plots.overlays["V"]
    assert wl[np.argmax(v)] == 555.0
    # a temperature step changes the colour and the spectrum, not the plot data
    model.set_temperature(3000.0, origin="kelvin")
    assert model.plots is plots and rec.events()[-1] == ("temperature", "kelvin")
    assert model.spectrum.peak_nm == pytest.approx(WIEN_B_M_K / 3000.0 * 1e9)


def test_magnitude_change_and_brightness_strip(model):
    rec = Recorder(model)
    s = model.settings
    model.set_magnitude(4.0, origin="magnitude-strip")
    assert rec.events() == [("magnitude", "magnitude-strip")]
    c = model.colour
    assert tuple(int(v) for v in c.dimmed_rgb_8bit) == _rgb8(s, 5772.0, 4.0)
    assert c.ladder_magnitudes[0] == s.magnitude_bright
    assert c.ladder_magnitudes[-1] == s.magnitude_faint
    i = 2
    assert tuple(int(v) for v in c.ladder_rgb_8bit[i]) == _rgb8(s, 5772.0,
                                                                float(c.ladder_magnitudes[i]))


def test_idle_hook_builds_the_table_once_per_change():
    queued = []
    m = WindowModel(Settings(), 5772.0, 1.0, idle=queued.append)
    assert len(queued) == 1 and not m.table_ready
    queued.pop()()
    assert m.table_ready
    m.change("gamut", gamut="scale")
    assert not m.table_ready and len(queued) == 1
    queued.pop()()
    table = m.slider_table
    assert m.table_ready and table.settings is m.settings
    pos = np.arange(0, table.temperature_K.size, 300)
    single = np.array([to_8bit(render(m.settings, t).rgb_encoded) for t in
                       table.temperature_K[pos]])
    assert np.array_equal(to_8bit(table.plain.rgb_encoded[pos]), single)
    m.use_slider_table(False)
    m.build_table()
    assert not m.table_ready


def test_picking_a_demo_star(model):
    rec = Recorder(model)
    c = model.cluster
    i = int(np.argmin(c.magnitude))
    model.pick_star(i)
    assert model.temperature_K == float(c.temperature_K[i])
    assert model.magnitude == float(c.magnitude[i])
    assert rec.events() == [("temperature", "sky"), ("magnitude", "sky")]
    sky = model.sky_image(64, 48)
    assert sky.rgb_8bit.shape == (48, 64, 3)
    assert model.sky_image(64, 48) is sky  # kept while nothing changed


def test_a_failing_listener_does_not_stop_the_others(model, monkeypatch):
    caught, later = [], []
    monkeypatch.setattr(sys, "excepthook", lambda *a: caught.append(a[0]))

    def bad(_change):
        raise RuntimeError("a broken view")

    model.events.temperature.connect(bad)
    model.events.temperature.connect(lambda change: later.append(change.value))
    model.set_temperature(4500.0, origin="kelvin")
    assert caught == [RuntimeError] and later == [4500.0] and model.temperature_K == 4500.0


def test_saved_session_that_is_broken_is_ignored_not_raised():
    # A damaged window session (QSettings text) must never stop the window from starting:
    # not TOML, nested deeper than Python's recursion limit, or a value of the wrong shape.
    from starkiln.gui.model import settings_from_toml

    for text in ("scene_white = ", "a = " + "[" * 100_000, "scene_white = [0.31, 0.33]",
                 "display = true"):
        assert settings_from_toml(text) is None
    assert settings_from_toml('scene_white = "D50"').scene_white == "D50"


def test_a_drag_is_one_undo_step(model):
    # The steps of one slider drag merge into one history entry (common practice in editors:
    # a drag is one action); the next drag starts a new one.
    start = model.settings
    for ebv in (0.1, 0.2, 0.3):
        model.change("path", merge=True, dust_ebv=ebv)
    model.end_merge()
    assert len(model.history) == 1 and model.history.undo_text == "dust E(B-V)"
    after_first = model.settings
    model.change("path", merge=True, dust_ebv=0.5)
    assert len(model.history) == 2
    assert model.undo() and model.settings is after_first
    assert model.undo() and model.settings is start
    assert model.redo() and model.settings.dust_ebv == 0.3
