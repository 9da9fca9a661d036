"""The display picker's "Import ICC profile…" and "From readings…" entries (pytest-qt).

The file dialogs are replaced by monkeypatched ones. Expected displays come from outside the
project: LittleCMS's built-in sRGB profile gives the [IEC61966-2-1] primaries and D65; readings
built from colour-science's sRGB matrix at 80 cd/m2 ([IEC61966-2-1]) give them back.
"""

import numpy as np
import pytest
from PIL import ImageCms
from PySide6 import QtWidgets

from test_gui_support import (centre_pixel, escaped, pytestmark, rendered_8bit,  # noqa: F401
                              shared_window, window)

SRGB = {"red_xy": (0.64, 0.33), "green_xy": (0.30, 0.60), "blue_xy": (0.15, 0.06),
        "white_xy": (0.3127, 0.3290)}  # [IEC61966-2-1]


def _pick(monkeypatch, path, calls):
    def fake(parent, title, folder, filters):
        calls.append((title, filters))
        return (str(path) if path else "", "")
    monkeypatch.setattr(QtWidgets.QFileDialog, "getOpenFileName", staticmethod(fake))


def _choose(choice, value):
    i = choice.combo.findData(value)
    assert i >= 0, value
    choice.combo.setCurrentIndex(i)


def _swatch(w):
    return w.findChild(QtWidgets.QWidget, "current-swatch")


def _like_srgb(display, atol):
    for field, xy in SRGB.items():
        np.testing.assert_allclose(getattr(display, field), xy, atol=atol)


def test_import_icc_entry_uses_the_profile(window, monkeypatch, tmp_path):
    path = tmp_path / "monitor.icc"
    path.write_bytes(ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes())
    calls = []
    _pick(monkeypatch, path, calls)
    _choose(window.look.display.display, "rec2020")
    _choose(window.look.display.display, "import-icc")
    assert calls and "ICC" in calls[0][1]
    d = window.model.settings.display
    _like_srgb(d, 1e-4)
    assert d.transfer == "srgb"
    tab = window.look.display
    assert tab.error.text() == "" and tab.display.value() == "custom"
    assert "luminance" in tab.notes.text()  # the built-in profile has no lumi tag: said so
    # the swatch shows the render path's colour for the imported display
    assert centre_pixel(_swatch(window)) == rendered_8bit(window.model.settings, 5772.0)


def test_readings_entry_uses_the_readings(window, monkeypatch, tmp_path):
    import colour

    m = colour.RGB_COLOURSPACES["sRGB"].matrix_RGB_to_XYZ * 80.0
    rows = ["patch,code,X,Y,Z"] + [
        f"{n},,{x!r},{y!r},{z!r}" for n, (x, y, z) in
        zip(("red", "green", "blue", "white"), (m[:, 0], m[:, 1], m[:, 2], m.sum(axis=1)))]
    path = tmp_path / "readings.csv"
    path.write_text("\n".join(rows) + "\n")
    _pick(monkeypatch, path, [])
    _choose(window.look.display.display, "from-readings")
    _like_srgb(window.model.settings.display, 1e-4)
    assert window.model.settings.display.peak_luminance_cd_m2 == pytest.approx(80.0)
    assert "no grey ramp" in window.look.display.notes.text()


@pytest.mark.parametrize("entry, name, content, says", [
    ("import-icc", "broken.icc", b"not a profile at all\n", "not an ICC profile"),
    ("from-readings", "short.csv", b"patch,code,X,Y,Z\nred,,41,21,2\n", "no green"),
])
def test_bad_files_show_inline_and_keep_the_display(window, monkeypatch, tmp_path, entry, name,
                                                    content, says):
    path = tmp_path / name
    path.write_bytes(content)
    _pick(monkeypatch, path, [])
    _choose(window.look.display.display, "display-p3")
    window.set_monitor_choice("display-p3")  # P3 code values painted unchanged on a P3 monitor
    before = window.model.settings
    _choose(window.look.display.display, entry)
    tab = window.look.display
    assert window.model.settings is before  # last good state kept
    assert says in tab.error.text() and name in tab.error.text()
    assert tab.display.value() == "display-p3"
    assert centre_pixel(_swatch(window)) == rendered_8bit(before, 5772.0)


def test_cancel_changes_nothing(window, monkeypatch):
    _pick(monkeypatch, None, [])
    before = window.model.settings
    for entry in ("import-icc", "from-readings"):
        _choose(window.look.display.display, entry)
        assert window.model.settings is before
        assert window.look.display.display.value() == "srgb"
