"""The window's two looks: a dim long-wavelength theme for the dark dome, and an ordinary one.

These are interface colours (text, borders, plot axes), fixed design choices of
this project; the colours of stars shown in swatches and plots come from the
engine and are never themed.

The dim theme keeps nearly all of its light in long wavelengths (deep red and
red-orange on near-black): rods are almost blind to long-wavelength light, so
red instrument light spares the viewer's dark adaptation (common practice at
observatories and in planetarium control rooms). It cannot help with the star
swatches themselves, which show true colours: lower the monitor brightness in
the dark.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6 import QtGui, QtWidgets


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
    accent: str
    border: str
    error: str
    plot_background: str
    plot_axis: str
    plot_grid: str
    curve: str
    overlay_photopic: str
    overlay_scotopic: str
    overlay_cmf: tuple[str, str, str]
    locus: str
    planckian: str
    gamut: str
    marker: str
    dash_overlays: bool  # the dim theme tells overlays apart by dash pattern, not hue


DIM = Theme(
    key="dim", label="Dim red (dark room)",
    window="#0b0302", panel="#140604", field="#1c0805",
    text="#b83a22", muted="#7a2616", accent="#d4502a", border="#3a1109",
    error="#ff7a2e",
    plot_background="#070201", plot_axis="#8c2c18", plot_grid="#2a0c06",
    curve="#d4502a", overlay_photopic="#a8361d", overlay_scotopic="#8a2d18",
    overlay_cmf=("#9b321b", "#9b321b", "#9b321b"),
    locus="#8c2c18", planckian="#c24426", gamut="#a8361d", marker="#e05a2e",
    dash_overlays=True,
)

ORDINARY = Theme(
    key="ordinary", label="Ordinary",
    window="#2b2d30", panel="#34373b", field="#24262a",
    text="#dedbd3", muted="#9b9d9f", accent="#7fb3cf", border="#4a4d52",
    error="#ff8a70",
    plot_background="#1e2023", plot_axis="#a9abad", plot_grid="#383b3f",
    curve="#f2efe6", overlay_photopic="#9fd08a", overlay_scotopic="#8fb4ff",
    overlay_cmf=("#ff8f8f", "#8fe09a", "#9fb0ff"),
    locus="#c9c6bd", planckian="#f0c070", gamut="#7fb3cf", marker="#ffffff",
    dash_overlays=False,
)

THEMES = {t.key: t for t in (DIM, ORDINARY)}
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
    QLineEdit:disabled, QComboBox:disabled, QCheckBox:disabled, QLabel:disabled {{
                 color: {t.muted}; }}
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
    p.setColor(QtGui.QPalette.ColorGroup.Disabled, roles.Text, c(t.muted))
    p.setColor(QtGui.QPalette.ColorGroup.Disabled, roles.WindowText, c(t.muted))
    return p


def apply_theme(widget: QtWidgets.QWidget, t: Theme) -> None:
    """Apply a theme to a top-level widget and its children."""
    widget.setPalette(palette(t))
    widget.setStyleSheet(stylesheet(t))
