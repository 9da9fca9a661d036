"""The sky panel with a catalogue, and the star plate dialog (pytest-qt, offscreen).

References for the checks:
- "the same file": the command line itself (``starkiln plate``), run with the same settings
  saved as TOML; the files must be byte-identical.
- the panel's picture: :func:`starkiln.engine.plates.run.draw_chunk` (the command's drawing)
  into the same plate, then IEC 61966-2-1 sRGB decoding and encoding by colour-science
  ([IEC61966-2-1]) at the viewing level, as a monitor shows display values.
- the dark-room cap: the encoded viewing level, [IEC61966-2-1] through colour-science.
"""

import numpy as np
import pytest

from starkiln.cli.main import main as cli_main
from test_gui_support import escaped, pytestmark, shared_window, window  # noqa: F401
from tests.conftest import REPO_ROOT

SKY = REPO_ROOT / "assets" / "demo_sky.csv"


def _loaded(window, qapp, view="equirect"):
    assert window.sky_bar.load_catalogue(SKY) is True
    window.sky_bar.view.setCurrentIndex(window.sky_bar.view.findData(view))
    assert window.sky.wait_drawn()
    qapp.processEvents()
    return window.sky.plate


def test_loaded_catalogue_is_drawn_by_the_commands_drawing(window, qapp, colour):
    from starkiln.engine.catalogue.plan import CataloguePlan
    from starkiln.engine.plates.run import draw_chunk

    window.current.set_viewing_level(0.5)
    plate = _loaded(window, qapp)
    assert plate.counts["drawn"] == 4000  # every invented row is valid (make_demo_sky.py)
    assert window.sky_box.title() == "Sky: demo_sky.csv"
    # the same plate drawn directly by the command's per-chunk function, whole
    cols = plate.table.columns
    image = np.zeros_like(plate.image)
    draw_chunk(image, CataloguePlan(settings=window.model.settings, source="temperature",
                                    source_column="temperature_K",
                                    magnitude_column="magnitude", exact=True),
               cols, "ra_deg", "dec_deg", plate.spec, psf_sigma_px=0.7)
    assert np.allclose(plate.image, image, rtol=0, atol=1e-6)
    # painted: the display values decoded (sRGB), dimmed to the level, encoded for the monitor
    expected = colour.cctf_encoding(0.5 * colour.cctf_decoding(np.clip(image, 0, 1), "sRGB"),
                                    "sRGB")
    shown = window.sky._buffer.astype(float) / 255.0
    assert np.abs(shown - expected).max() <= 1.0 / 255.0 + 1e-9


def test_settings_edit_recolours_the_plate_live(window, qapp):
    before = _loaded(window, qapp)
    window.model.change("test", scene_white="D50")
    assert window.sky.wait_drawn()
    after = window.sky.plate
    assert after is not before and after.settings.scene_white == "D50"
    assert not np.array_equal(after.image, before.image)
    # a dome view, drawn square in its circle
    plate = _loaded(window, qapp, "fisheye")
    assert plate.spec.projection == "fisheye" and plate.spec.width_px == plate.spec.height_px
    assert window.sky_bar.dome_row.isVisibleTo(window)


def test_bad_dome_field_is_one_line_and_the_dome_stays(window, qapp):
    plate = _loaded(window, qapp, "fisheye")
    window.sky_bar.fov.setText("400")
    assert window.sky_bar.apply_dome() is False
    err = window.sky_bar.error
    assert err.isVisibleTo(window) and "400" in err.text() and len(err.text().splitlines()) == 1
    assert window.sky.dome["fov_deg"] == 180.0 and window.sky.plate is plate


@pytest.mark.parametrize("content, word", [
    ("name,x,y,temperature_K\na,1,2,5000\n", "ra"),     # no RA / Dec: asks for the columns
    ("not a table at all \x00\x01", "cannot"),
])
def test_bad_catalogue_is_one_line_and_the_last_sky_stays(window, qapp, tmp_path,
                                                          content, word):
    plate = _loaded(window, qapp)
    bad = tmp_path / "bad.csv"
    bad.write_text(content)
    result = window.sky_bar.load_catalogue(bad)
    if result is None:  # the column chooser opened; choosing nothing is refused inline
        d = window.sky_bar.column_dialog
        assert d.ra.currentIndex() == -1 and d.colour.currentText() == "temperature_K"
        d.show_button.click()
        assert d.error.isVisibleTo(d) and "right ascension" in d.error.text()
        d.close()
    else:
        assert result is False
        text = window.sky_bar.error.text()
        assert len(text.splitlines()) == 1 and text
    assert window.model.star_table is plate.table and window.sky.plate is plate


def test_column_chooser_loads_with_the_chosen_columns(window, qapp, tmp_path):
    odd = tmp_path / "odd.csv"
    odd.write_text("alpha,delta,kelvin,bright\n10,20,5800,1.5\n200,-40,3500,3.0\n")
    assert window.sky_bar.load_catalogue(odd) is None
    d = window.sky_bar.column_dialog
    d.ra.setCurrentText("alpha")
    d.dec.setCurrentText("delta")
    d.source.setCurrentIndex(d.source.findData("temperature"))
    d.colour.setCurrentText("kelvin")
    d.magnitude.setCurrentText("bright")
    d.show_button.click()
    assert window.sky.wait_drawn()
    t = window.model.star_table
    assert (t.choice.ra, t.choice.dec, t.choice.source_column, t.choice.magnitude) == \
        ("alpha", "delta", "kelvin", "bright") and t.rows == 2
    assert window.sky.plate.counts["drawn"] == 2


def test_dim_theme_at_dome_level_no_bright_flash_when_a_catalogue_appears(window, qapp,
                                                                         colour):
    window.set_theme("dim")
    window.current.use_dome_level()
    level = window.model.viewing_level
    _loaded(window, qapp)
    cap = round(255.0 * float(colour.cctf_encoding(level, "sRGB"))) + 1
    assert int(window.sky._buffer.max()) <= cap
    # and at the moment it appears: nothing but black before the first plate is drawn
    window.model.clear_star_table()
    assert window.sky_bar.load_catalogue(SKY) is True
    assert window.sky._image is None
    assert window.sky.wait_drawn()
    assert int(window.sky._buffer.max()) <= cap


@pytest.mark.parametrize("suffix, extra", [
    (".png", []),
    (".exr", ["fisheye"]),
    (".exr", ["cube", "half"]),
])
def test_plate_dialog_writes_the_commands_file_byte_for_byte(window, qapp, tmp_path, capsys,
                                                             suffix, extra):
    window.model.change("test", scene_white="D50", display="display-p3", gamut="scale")
    toml = tmp_path / "look.toml"
    assert window.save_settings_file(toml)
    _loaded(window, qapp)
    d = window.plate_dialog()
    gui_out = tmp_path / f"gui{suffix}"
    d.path.setText(str(gui_out))
    d.width_edit.setText("128")
    d.psf.setText("0.9")
    if extra == ["fisheye"]:
        d.projection.setCurrentIndex(d.projection.findData("fisheye"))
        d.fov.setText("200")
        d.tilt.setText("15")
        d.centre.setText("80, 30")
    elif extra:
        d.projection.setCurrentIndex(d.projection.findData("cube"))
        d.width_edit.setText("48")
        assert d.exr_type.isEnabled()
        d.exr_type.setCurrentIndex(d.exr_type.findData("half"))
    d.export_button.click()
    assert d.error.isHidden(), d.error.text()
    assert gui_out.exists()
    cli_out = tmp_path / f"cli{suffix}"
    args = ["plate", str(SKY), str(cli_out), "--settings", str(toml), "--temperature-column",
            "temperature_K", "--magnitude-column", "magnitude", "--psf-px", "0.9"]
    if extra == ["fisheye"]:
        args += ["--projection", "fisheye", "--size", "128", "--fov", "200", "--tilt", "15",
                 "--centre", "80,30"]
    elif extra:
        args += ["--projection", "cube", "--size", "48", "--exr-type", "half"]
    else:
        args += ["--size", "128"]
    assert cli_main(args) == 0, capsys.readouterr().err
    assert gui_out.read_bytes() == cli_out.read_bytes()
    assert "starkiln plate" in d.command.text() and "--psf-px=0.9" in d.command.text()
    d.close()


def test_plate_dialog_errors_inline_and_nothing_written(window, qapp, tmp_path):
    _loaded(window, qapp)
    d = window.plate_dialog()
    out = tmp_path / "p.png"
    d.path.setText(str(out))
    d.width_edit.setText("64")
    for widget, text, word in ((d.psf, "80", "psf"), (d.site, "95,10", "time"),
                               (d.width_edit, "lots", "width")):
        old = widget.text()
        widget.setText(text)
        assert d.export() is False
        assert word in d.error.text().lower() and len(d.error.text().splitlines()) == 1
        widget.setText(old)
    d.path.setText(str(tmp_path / "p.tiff"))
    assert d.export() is False and ".png" in d.error.text()
    assert list(tmp_path.iterdir()) == []
    d.path.setText(str(out))
    assert d.export() is True and out.exists()
    assert d.export() is False and "exists" in d.error.text()  # no overwrite without asking
    d.close()
