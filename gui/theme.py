"""The window's looks: a dim long-wavelength theme for the dark dome, a light one for daytime
work, and the ordinary dark-grey one.

These are interface colours (text, borders, plot axes), fixed design choices of
this project; the colours of stars shown in swatches and plots come from the
engine and are never themed (they are dimmed by the viewing level instead:
:mod:`starkiln.engine.colour.viewing`).

The dim theme keeps nearly all of its light in long wavelengths (deep red and
red-orange on near-black): rods are almost blind to long-wavelength light, so
red instrument light spares the viewer's dark adaptation (common practice at
observatories and in planetarium control rooms). Every colour of it has green and
blue code values at most :data:`DIM_GREEN_BLUE_MAX`. The standard message-box icons (blue and
green discs) are replaced by outline icons in the theme's own colours
(:class:`ThemedIconStyle`).

Legibility: every text colour keeps at least 4.5:1 against each background it is drawn on,
and disabled text 3:1 ([WCAG21] success criteria 1.4.3 and 1.4.11, computed with
:func:`starkiln.engine.colour.contrast.contrast_ratio`; checked in tests/test_gui_theme.py). In
the light and ordinary themes disabled text also differs from enabled text by 3:1. The dim
theme cannot: red light alone spans at most about 5.3:1 above black (the red primary carries
0.2126 of the luminance, [BT709]), so its disabled fields are told apart by italic text and a
dotted border as well as by a darker red.

References
----------
[WCAG21] 1.4.3, 1.4.11; [BT709] item 3.2 (luminance weights, through the contrast module).
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6 import QtCore, QtGui, QtWidgets

#: The largest green or blue 8-bit code value of any colour of the dim theme: linear 0.065 of
#: the channel's full output ([IEC61966-2-1] decoding), so green and blue together add at most
#: about 0.05 to a colour's relative luminance; red carries the rest.
DIM_GREEN_BLUE_MAX = 0x48


@dataclass(frozen=True)
class Theme:
    """Interface colours of one look (hex strings, '#rrggbb')."""

    key: str
    label: str
    window: str
    panel: str
    field: str
    text: str
    muted: str
    disabled: str
    accent: str
    border: str
    error: str
    plot_background: str
    plot_axis: str
    plot_grid: str
    curve: str
    curve_arriving: str  # the spectrum after dust and air (dashed, over the emitted curve)
    overlay_photopic: str
    overlay_scotopic: str
    overlay_cmf: tuple[str, str, str]
    locus: str
    planckian: str
    gamut: str
    marker: str
    outline: str  # the dark line drawn under overlays so they read on top of the band
    dash_overlays: bool  # the dim theme tells overlays apart by dash pattern, not hue


DIM = Theme(
    key="dim", label="Dim red (dark room)",
    window="#080100", panel="#100200", field="#160300",
    text="#ff3a1a", muted="#f02e12", disabled="#bc1e0a", accent="#ff4020", border="#4a0c02",
    error="#ff4424",
    plot_background="#050000", plot_axis="#f8321a", plot_grid="#2a0600",
    curve="#ff4020", curve_arriving="#ff4828", overlay_photopic="#ff3a1a", overlay_scotopic="#f8321a",
    overlay_cmf=("#ff3a1a", "#ff3a1a", "#ff3a1a"),
    locus="#f02e12", planckian="#ff3a1a", gamut="#f8361a", marker="#ff4420",
    outline="#000000", dash_overlays=True,
)

ORDINARY = Theme(
    key="ordinary", label="Ordinary (dark grey)",
    window="#2b2d30", panel="#34373b", field="#24262a",
    text="#f2f0ea", muted="#b4b6b8", disabled="#85878a", accent="#8fc0da", border="#4a4d52",
    error="#ff9a82",
    plot_background="#1e2023", plot_axis="#b4b6b8", plot_grid="#383b3f",
    curve="#f2efe6", curve_arriving="#f0a060", overlay_photopic="#9fd08a", overlay_scotopic="#8fb4ff",
    overlay_cmf=("#ff8f8f", "#8fe09a", "#9fb0ff"),
    locus="#c9c6bd", planckian="#f0c070", gamut="#8fc0da", marker="#ffffff",
    outline="#000000", dash_overlays=False,
)

LIGHT = Theme(
    key="light", label="Light (daytime)",
    window="#f3f1ec", panel="#fbfaf7", field="#ffffff",
    text="#1b1a17", muted="#4f4c46", disabled="#8a857c", accent="#1d5a85", border="#b9b4aa",
    error="#a3260f",
    plot_background="#ffffff", plot_axis="#3d3a35", plot_grid="#e4e1da",
    curve="#1b1a17", curve_arriving="#8a4e00", overlay_photopic="#1d6b2a", overlay_scotopic="#2450a8",
    overlay_cmf=("#a3260f", "#1d6b2a", "#2450a8"),
    locus="#3d3a35", planckian="#8a4e00", gamut="#1d5a85", marker="#000000",
    outline="#ffffff", dash_overlays=False,
)

THEMES = {t.key: t for t in (DIM, LIGHT, ORDINARY)}
DEFAULT_THEME = "dim"


def stylesheet(t: Theme) -> str:
    """The Qt style sheet of a theme."""
    return f"""
    QWidget {{ background: {t.window}; color: {t.text}; }}
    QMainWindow::separator {{ background: {t.border}; width: 3px; height: 3px; }}
    QSplitter::handle {{ background: {t.border}; }}
    QGroupBox {{ border: 1px solid {t.border}; border-radius: 4px; margin-top: 14px;
                 padding: 6px 4px 4px 4px; background: {t.panel}; }}
    QGroupBox::title {{ subcontrol-origin: margin; left: 8px; padding: 0 4px;
                        color: {t.accent}; background: {t.window}; }}
    QLabel {{ background: transparent; }}
    QLabel[role="muted"] {{ color: {t.muted}; }}
    QLabel[role="error"] {{ color: {t.error}; font-weight: bold; }}
    QLabel[opaque="true"] {{ background: {t.window}; }}
    QLineEdit, QComboBox, QDoubleSpinBox {{ background: {t.field}; border: 1px solid {t.border};
                 border-radius: 3px; padding: 2px 4px; selection-background-color: {t.muted}; }}
    QLineEdit[invalid="true"] {{ border: 2px solid {t.error}; }}
    QLineEdit:disabled, QComboBox:disabled, QCheckBox:disabled, QLabel:disabled,
    QDoubleSpinBox:disabled, QPushButton:disabled, QToolButton:disabled {{
                 color: {t.disabled}; font-style: italic; }}
    QLineEdit:disabled, QComboBox:disabled, QDoubleSpinBox:disabled {{
                 border: 1px dotted {t.disabled}; }}
    QComboBox QAbstractItemView {{ background: {t.field}; color: {t.text};
                 selection-background-color: {t.border}; }}
    QPushButton, QToolButton {{ background: {t.panel}; border: 1px solid {t.border};
                 border-radius: 3px; padding: 3px 8px; }}
    QToolButton {{ padding: 1px 4px; }}
    QPushButton:hover, QToolButton:hover {{ border-color: {t.accent}; }}
    QPushButton:pressed, QToolButton:pressed {{ background: {t.field}; }}
    QTabWidget::pane {{ border: 1px solid {t.border}; background: {t.panel}; }}
    QTabBar::tab {{ background: {t.window}; border: 1px solid {t.border}; padding: 4px 9px;
                   color: {t.muted}; }}
    QTabBar::tab:selected {{ background: {t.panel}; color: {t.text}; }}
    QMenuBar {{ background: {t.window}; }}
    QMenuBar::item:selected, QMenu::item:selected {{ background: {t.border}; }}
    QMenu {{ background: {t.panel}; border: 1px solid {t.border}; }}
    QStatusBar {{ color: {t.muted}; }}
    QSlider::groove:horizontal {{ height: 6px; background: {t.field};
                 border: 1px solid {t.border}; border-radius: 3px; }}
    QSlider::handle:horizontal {{ width: 14px; margin: -6px 0; background: {t.accent};
                 border: 1px solid {t.border}; border-radius: 4px; }}
    QSlider:focus {{ border: 1px dotted {t.muted}; }}
    QCheckBox::indicator {{ width: 13px; height: 13px; border: 1px solid {t.border};
                 background: {t.field}; }}
    QCheckBox::indicator:checked {{ background: {t.accent}; }}
    QScrollArea {{ border: none; }}
    QToolTip {{ background: {t.panel}; color: {t.text}; border: 1px solid {t.border}; }}
    """


def palette(t: Theme) -> QtGui.QPalette:
    """A QPalette matching the theme (for widgets the style sheet does not reach)."""
    p = QtGui.QPalette()
    c = QtGui.QColor
    roles = QtGui.QPalette.ColorRole
    for role, value in ((roles.Window, t.window), (roles.WindowText, t.text),
                        (roles.Base, t.field), (roles.AlternateBase, t.panel),
                        (roles.Text, t.text), (roles.Button, t.panel),
                        (roles.ButtonText, t.text), (roles.Highlight, t.border),
                        (roles.HighlightedText, t.text), (roles.ToolTipBase, t.panel),
                        (roles.ToolTipText, t.text), (roles.PlaceholderText, t.muted)):
        p.setColor(role, c(value))
    for role in (roles.Text, roles.WindowText, roles.ButtonText):
        p.setColor(QtGui.QPalette.ColorGroup.Disabled, role, c(t.disabled))
    return p


MESSAGE_ICONS = {
    QtWidgets.QStyle.StandardPixmap.SP_MessageBoxInformation: "i",
    QtWidgets.QStyle.StandardPixmap.SP_MessageBoxQuestion: "?",
    QtWidgets.QStyle.StandardPixmap.SP_MessageBoxWarning: "!",
    QtWidgets.QStyle.StandardPixmap.SP_MessageBoxCritical: "\u00d7",
}


def message_icon(t: Theme, glyph: str, size: int = 40) -> QtGui.QIcon:
    """A message-box icon in the theme's colours: an outlined disc with ``glyph``.

    Drawn in the theme's error colour for warnings and errors (``!``, ``x``) and its accent
    colour otherwise, on no fill: no blue or green disc in the dark room.
    """
    pix = QtGui.QPixmap(size, size)
    pix.fill(QtCore.Qt.GlobalColor.transparent)
    colour = QtGui.QColor(t.error if glyph in ("!", "\u00d7") else t.accent)
    p = QtGui.QPainter(pix)
    p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
    p.setPen(QtGui.QPen(colour, 2.5))
    p.setBrush(QtCore.Qt.BrushStyle.NoBrush)
    p.drawEllipse(QtCore.QRectF(2, 2, size - 4, size - 4))
    font = p.font()
    font.setBold(True)
    font.setPixelSize(int(size * 0.55))
    p.setFont(font)
    p.drawText(QtCore.QRect(0, 0, size, size), QtCore.Qt.AlignmentFlag.AlignCenter, glyph)
    p.end()
    return QtGui.QIcon(pix)


class ThemedIconStyle(QtWidgets.QProxyStyle):
    """The platform's style with the message-box icons drawn in the current theme's colours."""

    def __init__(self, base: str | None = None):
        super().__init__(base) if base else super().__init__()
        self.theme = DIM

    def standardIcon(self, standard_icon, option=None, widget=None):  # noqa: N802 - Qt API
        glyph = MESSAGE_ICONS.get(standard_icon)
        if glyph is not None:
            return message_icon(self.theme, glyph)
        return super().standardIcon(standard_icon, option, widget)


def _icon_style(t: Theme) -> None:
    """Put :class:`ThemedIconStyle` under the application (once) and give it theme ``t``."""
    app = QtWidgets.QApplication.instance()
    if app is None:
        return
    style = app.style()
    if not isinstance(style, ThemedIconStyle):
        style = ThemedIconStyle(style.name())
        app.setStyle(style)
    style.theme = t


def apply_theme(widget: QtWidgets.QWidget, t: Theme) -> None:
    """Apply a theme to a top-level widget and its children (message-box icons included)."""
    _icon_style(t)
    widget.setPalette(palette(t))
    widget.setStyleSheet(stylesheet(t))
