"""Layout: every text fits its widget and no two labels overlap, from 1024 x 680 to 3840 x 2160.

The window is rendered offscreen at several sizes, in both themes and in states with the
longest readouts, and every visible QLabel, button, check box, tab and readout value is
measured with Qt's own font metrics (``QFontMetrics.horizontalAdvance``) against the room its
widget gives it: the style's contents rectangle for buttons and check boxes
(``QStyle.subElementRect``), the tab's rectangle for tabs, the contents rectangle for labels
(a word-wrapping label must get at least its ``heightForWidth``). A widget pushed past the edge
of what holds it (its parent, or the viewport of a scroll area across) is cut off too. 200 %
scaling (``QT_SCALE_FACTOR=2``, Qt's high-DPI scaling; common practice for 4K monitors) is
checked in a fresh interpreter, since the factor is read when the application starts.
"""

import json
import sys

import pytest
from PySide6 import QtCore, QtGui, QtWidgets

from test_gui_support import escaped, pytestmark, shared_window, store, window  # noqa: F401

#: Window sizes checked: the minimum, a small laptop, full HD, 4K (logical pixels).
SIZES = ((1024, 680), (1280, 800), (1920, 1080), (3840, 2160))
TEXT_KINDS = (QtWidgets.QLabel, QtWidgets.QAbstractButton)


def _plain(label: QtWidgets.QLabel) -> str:
    text = label.text()
    if label.textFormat() == QtCore.Qt.TextFormat.RichText or (
            label.textFormat() == QtCore.Qt.TextFormat.AutoText and _might_be_rich(text)):
        doc = QtGui.QTextDocument()
        doc.setHtml(text)
        return doc.toPlainText()
    return text


def _might_be_rich(text: str) -> bool:  # as Qt::mightBeRichText decides, roughly
    return bool(text) and text.lstrip().startswith("<")


def _shown(w, top) -> bool:
    return w.isVisibleTo(top) and w.width() > 0 and w.height() > 0


def _where(w) -> str:
    names = []
    while w is not None and len(names) < 4:
        names.append(w.objectName() or type(w).__name__)
        w = w.parentWidget()
    return "/".join(reversed(names))


def _button_room(b: QtWidgets.QAbstractButton) -> int:
    style = b.style()
    if isinstance(b, QtWidgets.QCheckBox):
        opt = QtWidgets.QStyleOptionButton()
        b.initStyleOption(opt)
        return style.subElementRect(QtWidgets.QStyle.SubElement.SE_CheckBoxContents, opt,
                                    b).width()
    if isinstance(b, QtWidgets.QRadioButton):
        opt = QtWidgets.QStyleOptionButton()
        b.initStyleOption(opt)
        return style.subElementRect(QtWidgets.QStyle.SubElement.SE_RadioButtonContents, opt,
                                    b).width()
    if isinstance(b, QtWidgets.QPushButton):
        opt = QtWidgets.QStyleOptionButton()
        b.initStyleOption(opt)
        r = style.subElementRect(QtWidgets.QStyle.SubElement.SE_PushButtonContents, opt, b)
        icon = b.iconSize().width() + 4 if not b.icon().isNull() else 0
        return r.width() - icon
    return b.contentsRect().width() - 2  # a tool button: its frame's inside


def text_problems(top: QtWidgets.QWidget) -> list[str]:
    """Every text in ``top`` that does not fit its widget, every widget cut off by what holds
    it, and every pair of overlapping sibling labels or buttons."""
    out = []
    texts = []
    for w in top.findChildren(QtWidgets.QWidget):
        if not _shown(w, top):
            continue
        fm = w.fontMetrics()
        if isinstance(w, QtWidgets.QLabel):
            if w.pixmap() is not None and not w.pixmap().isNull():
                continue
            text = _plain(w)
            if not text.strip():
                continue
            texts.append(w)
            room = w.contentsRect().width() - 2 * w.margin() - max(w.indent(), 0)
            if w.wordWrap():
                need = w.heightForWidth(w.width())
                if need > w.height():
                    out.append(f"{_where(w)}: {text[:40]!r} needs {need} px high, has "
                               f"{w.height()}")
                longest = max((fm.horizontalAdvance(word) for word in text.split()), default=0)
                if longest > room:
                    out.append(f"{_where(w)}: a word of {text[:40]!r} is {longest} px, room "
                               f"{room}")
            else:
                lines = text.split("\n")
                widest = max(fm.horizontalAdvance(line) for line in lines)
                if widest > room:
                    out.append(f"{_where(w)}: {text[:40]!r} is {widest} px wide, room {room}")
                if len(lines) * fm.height() > w.contentsRect().height() + 1:
                    out.append(f"{_where(w)}: {len(lines)} lines of {text[:30]!r} in "
                               f"{w.contentsRect().height()} px")
        elif isinstance(w, QtWidgets.QAbstractButton):
            text = w.text().replace("&&", "\0").replace("&", "").replace("\0", "&")
            if not text:
                continue
            texts.append(w)
            need, room = fm.horizontalAdvance(text), _button_room(w)
            if need > room:
                out.append(f"{_where(w)}: button {text!r} is {need} px, room {room}")
        elif isinstance(w, QtWidgets.QTabBar):
            bar = w.rect()
            for i in range(w.count()):
                r, text = w.tabRect(i), w.tabText(i).replace("&", "")
                if not bar.contains(r):
                    out.append(f"{_where(w)}: tab {text!r} lies outside its bar")
                if fm.horizontalAdvance(text) + 8 > r.width():  # 4 px a side, common practice
                    out.append(f"{_where(w)}: tab {text!r} needs "
                               f"{fm.horizontalAdvance(text) + 8} px, has {r.width()}")
        elif hasattr(w, "text") and type(w).__name__ == "ValueText":  # a readout's value
            need = fm.horizontalAdvance(w.text()) + 2
            if need > w.width():
                out.append(f"{_where(w)}: readout {w.text()!r} is {need} px, has {w.width()}")
    for w in texts:  # cut off by what holds it
        rect = QtCore.QRect(w.mapTo(top, QtCore.QPoint(0, 0)), w.size())
        p = w.parentWidget()
        while p is not None and p is not top.parentWidget():
            holder = QtCore.QRect(p.mapTo(top, QtCore.QPoint(0, 0)), p.size())
            scroll = isinstance(p.parentWidget(), QtWidgets.QAbstractScrollArea) and \
                p is p.parentWidget().viewport()
            if scroll:  # a scroll area's viewport: scrolled up and down, never across
                if rect.left() < holder.left() or rect.right() > holder.right():
                    out.append(f"{_where(w)}: cut off across by its scroll area")
                break
            if not holder.contains(rect):
                out.append(f"{_where(w)}: cut off by {_where(p)}")
                break
            if p is top:
                break
            p = p.parentWidget()
    by_parent = {}
    for w in texts:
        by_parent.setdefault(id(w.parentWidget()), []).append(w)
    for group in by_parent.values():
        for i, a in enumerate(group):
            for b in group[i + 1:]:
                if a.geometry().intersects(b.geometry()):
                    out.append(f"{_where(a)} overlaps {_where(b)}")
    return out


def _longest_readouts(window):
    """A state with the longest texts: out of gamut and mapped by 'chroma' (1000 K is outside
    sRGB, common practice), dome compensation on, an instrument, a long settings summary."""
    from starkiln.engine.pipeline.settings import Settings

    m = window.model
    m.set_settings(Settings(gamut="chroma", compensate=True, aperture_mm=200.0,
                            intensity_curve="linear"), "file")
    window.rendering.refresh(force=True)
    m.set_temperature(1000.0)
    m.set_magnitude(5.5)
    assert window.current.readouts.value("gamut").endswith("mapped (chroma)")


def _settle(qapp, window, size):
    window.resize(*size)
    for _ in range(3):
        qapp.processEvents()


def test_minimum_size(window, qapp):
    from starkiln.gui.window import MINIMUM_SIZE

    window.resize(300, 200)
    qapp.processEvents()
    assert (window.width(), window.height()) == MINIMUM_SIZE


@pytest.mark.parametrize("theme", ["dim", "ordinary"])
@pytest.mark.parametrize("long_texts", [False, True])
def test_every_text_fits_at_every_size(window, qapp, theme, long_texts):
    window.set_theme(theme)
    if long_texts:
        _longest_readouts(window)
    seen = []
    for size in SIZES:
        _settle(qapp, window, size)
        assert (window.width(), window.height()) == size
        for tab in range(window.rendering.count()):  # every settings tab in turn
            window.rendering.setCurrentIndex(tab)
            qapp.processEvents()
            seen += [f"{size}: {p}" for p in text_problems(window)]
        window.rendering.setCurrentIndex(0)
    _settle(qapp, window, (1280, 800))
    assert not seen, "\n".join(sorted(set(seen)))


def test_dialogs_fit(window, qapp):
    dialogs = [window.export_dialog("lut"), window.export_dialog("palette"),
               window.rendering.display.edit()]
    qapp.processEvents()
    problems = [p for d in dialogs for p in text_problems(d)]
    for d in dialogs:
        d.close()
    assert not problems, "\n".join(problems)


SCALED = r"""
import json, sys
sys.path.insert(0, "tests")
from PySide6 import QtWidgets
app = QtWidgets.QApplication([])
from starkiln.gui import create_window
from test_gui_layout import text_problems, _longest_readouts
w = create_window(store=None)
w.show()
out = {"ratio": w.devicePixelRatioF(), "problems": []}
for long_texts in (False, True):
    if long_texts:
        _longest_readouts(w)
    for size in ((1024, 680), (1920, 1080)):
        w.resize(*size)
        for tab in range(w.rendering.count()):
            w.rendering.setCurrentIndex(tab)
            for _ in range(3):
                app.processEvents()
            out["problems"] += [f"{size}: {p}" for p in text_problems(w)]
print(json.dumps(out))
"""


def test_every_text_fits_at_200_percent(python_run):
    # 1920 x 1080 logical pixels at a factor of 2 is a 3840 x 2160 monitor
    done = python_run(SCALED, {"QT_SCALE_FACTOR": "2", "QT_QPA_PLATFORM": "offscreen"},
                      timeout=120)
    assert done.returncode == 0, done.stderr
    out = json.loads(done.stdout.strip().splitlines()[-1])
    assert out["ratio"] == 2.0  # the platform really scaled
    assert not out["problems"], "\n".join(sorted(set(out["problems"])))


def _plot_label_problems(view, where):
    """Visible pyqtgraph text items of a plot that overlap each other or leave the plot."""
    import pyqtgraph as pg

    box = view.getPlotItem().getViewBox()
    inside = box.sceneBoundingRect()
    items = [i for i in view.scene().items() if isinstance(i, pg.TextItem) and i.isVisible()
             and i.textItem.toPlainText().strip()]
    rects = [(i.textItem.toPlainText(), i.sceneBoundingRect()) for i in items]
    out = []
    for n, (text, r) in enumerate(rects):
        if inside.intersects(r) and not inside.contains(r):
            out.append(f"{where}: {text!r} is cut by the plot's edge")
        for other, r2 in rects[n + 1:]:
            if r.intersects(r2):
                out.append(f"{where}: {text!r} overlaps {other!r}")
    return out


@pytest.mark.parametrize("zoom", ["whole", "locus"])
def test_chromaticity_and_spectrum_labels_do_not_collide(window, qapp, zoom):
    window.zoom.setCurrentIndex(window.zoom.findData(zoom))
    seen = []
    for size in SIZES:
        _settle(qapp, window, size)
        seen += _plot_label_problems(window.chromaticity, f"{size} chromaticity {zoom}")
        seen += _plot_label_problems(window.spectrum, f"{size} spectrum")
    _settle(qapp, window, (1280, 800))
    assert not seen, "\n".join(seen)


def test_label_placement_rule_gives_way_and_keeps_inside():
    # the rule of gui/plots.place_labels: first free spot in priority order, never past the
    # bounds, a label with no free spot dropped (plain rectangle geometry)
    from starkiln.gui.plots import LABEL_GAP_PX, place_labels

    bounds = QtCore.QRectF(0.0, 0.0, 200.0, 100.0)
    right, left = (1.0, 0.0), (-1.0, 0.0)
    wanted = [(QtCore.QPointF(100.0, 50.0), (40.0, 20.0), [right]),
              (QtCore.QPointF(100.0, 50.0), (40.0, 20.0), [right, left]),  # right is taken
              (QtCore.QPointF(100.0, 50.0), (40.0, 20.0), [right, left]),  # both taken
              (QtCore.QPointF(195.0, 10.0), (40.0, 20.0), [right, left])]  # right leaves
    first, second, third, fourth = place_labels(wanted, bounds)
    assert first.left() == pytest.approx(100.0 + LABEL_GAP_PX)
    assert second.right() == pytest.approx(100.0 - LABEL_GAP_PX)
    assert third is None
    assert fourth.right() == pytest.approx(195.0 - LABEL_GAP_PX)
    assert all(bounds.contains(r) for r in (first, second, fourth))
    assert not first.intersects(second)
