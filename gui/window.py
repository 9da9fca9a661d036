"""The main window: assembles the views over one :class:`starkiln.gui.model.WindowModel`.

Layout (names are this project's own)::

    +--------------------------------------------------------------------------+
    | Temperature  redder [====== slider ======] bluer    T [    ] K  B-V  class |
    | [ strip of equal-mired swatches across 1000-40000 K, current marked     ] |
    +---------------+------------------------------------+---------------------+
    | Star colour   | Spectrum                           | Rendering           |
    |  swatch       |                                    |  White / Display /  |
    |  readouts     +------------------+-----------------+  Gamut / Night sky  |
    |  magnitudes   | Chromaticity     | Demo sky        |                     |
    +---------------+------------------+-----------------+---------------------+

Persistence (QSettings): window geometry and splitters, theme, overlays,
recent settings files, and the last session (settings as TOML, temperature,
magnitude). Files are read and written by the engine through the model (TOML
settings, JSON display profiles); problems come back as one-line messages in a
message box.

The monitor. Every colour the window paints is converted by the engine from the chosen
display's colours to the monitor's colour space: the screen's ``QColorSpace`` where Qt gives
one (:func:`platform_monitor`), else sRGB, assumed; ``--monitor`` and View > Monitor choose one.
The status bar says which, and how many swatches the monitor had to clip (those carry a corner
mark).

Editing. Edit > Undo / Redo (the platform's keys, ``QKeySequence.StandardKey.Undo`` and
``Redo``) step through every settings change. The history belongs to the model
(:class:`starkiln.gui.model.SettingsHistory`, tested without a display); the window mirrors it
in a ``QUndoStack`` (:attr:`MainWindow.undo_stack`), one command per change the model reports
on ``events.history``, whose undo and redo ask the model. The model stays the source of truth,
so a script or test calling ``model.undo()`` moves the stack too. :data:`SHORTCUTS` lists the
window's own keys.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.engine.colour.displays import PRESETS, Display
from starkiln.engine.colour.monitor import SRGB_MONITOR, monitor_from_primaries
from starkiln.engine.errors import StarkilnError
from starkiln.gui.audition import AuditionPanel
from starkiln.gui.compare import ComparePanel
from starkiln.gui.controls import CAUTION, RenderingPanel
from starkiln.gui.current import CurrentColourPanel
from starkiln.gui.fields import INPUT_ERRORS
from starkiln.gui.plots import OVERLAYS, ChromaticityView, SpectrumView
from starkiln.gui.model import DEFAULT_MAGNITUDE, DEFAULT_TEMPERATURE_K, WindowModel
from starkiln.gui.model import HISTORY_LIMIT, MONITOR_ASSUMED, MONITOR_LABELS
from starkiln.gui.model import settings_from_toml
from starkiln.gui.sky import SkyPreview
from starkiln.gui.theme import DEFAULT_THEME, THEMES, apply_theme

if TYPE_CHECKING:
    from starkiln.engine.pipeline.settings import Settings

APP_TITLE = "Starkiln \u2014 star colours"
MAX_RECENT = 8
SCREENSHOT_SIZE = (1280, 800)
MONITOR_CHOSEN = "chosen"
MONITOR_FROM_PLATFORM = "as the platform reports"
#: The smallest window whose every label fits (checked by tests/test_gui_layout.py).
MINIMUM_SIZE = (1024, 680)
#: The window's own keys (the platform's standard keys are used for open, save, undo, redo,
#: quit). Kept here so the menus, the tooltips and docs/guide.md agree.
SHORTCUTS = {
    "export-texture": "Ctrl+E",
    "export-palette": "Ctrl+Shift+E",
    "copy-hex": "Ctrl+Shift+C",
    "next-theme": "Ctrl+Shift+T",
    "pin": "Ctrl+P",
    "flip-ab": "Ctrl+Shift+B",
    "copy-command-line": "Ctrl+Shift+L",
}


class SettingsCommand(QtGui.QUndoCommand):
    """One settings change on the window's QUndoStack; undo and redo ask the model.

    The model already made the change when the command is pushed, so the stack's first
    ``redo()`` (QUndoStack.push calls it) does nothing.
    """

    def __init__(self, window: "MainWindow", text: str):
        super().__init__(text)
        self._window = window
        self._pushed = False

    def redo(self):  # noqa: D102 - Qt API
        if not self._pushed:
            self._pushed = True
            return
        self._window._history_step(redo=True)

    def undo(self):  # noqa: D102 - Qt API
        self._window._history_step(redo=False)

#: Qt's names of primaries and transfer functions -> the engine's
#: (:data:`starkiln.engine.colour.monitor.NAMED_PRIMARIES`, the display transfers). Names, not
#: colours: the colour space itself is built by the engine.
_QT_PRIMARIES = {"SRgb": "srgb", "AdobeRgb": "adobe-rgb", "DciP3D65": "dci-p3-d65",
                 "ProPhotoRgb": "prophoto-rgb", "Bt2020": "bt2020"}
_QT_TRANSFERS = {"Linear": "linear", "Gamma": "gamma", "SRgb": "srgb", "St2084": "pq"}


def monitor_from_colour_space(space) -> tuple[Display, str]:
    """The monitor's Display and how it was found, from a ``QtGui.QColorSpace``.

    Named primaries and the linear, gamma, sRGB and ST 2084 transfers are read (the engine's
    :func:`starkiln.engine.colour.monitor.monitor_from_primaries` builds the Display); any
    other colour space gives sRGB, assumed, with the reason.
    """
    if space is None or not space.isValid():
        return SRGB_MONITOR, MONITOR_ASSUMED
    desc = space.description() or "unnamed"
    primaries = _QT_PRIMARIES.get(space.primaries().name)
    transfer = _QT_TRANSFERS.get(space.transferFunction().name)
    if primaries is None or transfer is None:
        return SRGB_MONITOR, (f"assumed; the platform's colour space {desc!r} has primaries "
                              "or a transfer function this window does not read")
    white = space.whitePoint()
    try:
        display = monitor_from_primaries(primaries, (white.x(), white.y()), transfer,
                                         float(space.gamma()) if transfer == "gamma" else 2.2,
                                         name=desc)
    except StarkilnError as exc:
        return SRGB_MONITOR, f"assumed; the platform's colour space: {exc}"
    return display, "reported by the platform"


def platform_monitor(screen) -> tuple[Display, str]:
    """The monitor of ``screen`` (a ``QScreen``): its ``colorSpace()`` where this Qt offers one
    (PySide6 6.11 does not for screens, nor do the offscreen and X11 platforms), else sRGB."""
    getter = getattr(screen, "colorSpace", None) if screen is not None else None
    if not callable(getter):
        return SRGB_MONITOR, MONITOR_ASSUMED
    try:
        space = getter()
    except Exception:  # noqa: BLE001 - a platform plug-in's problem: fall back to sRGB
        return SRGB_MONITOR, MONITOR_ASSUMED
    return monitor_from_colour_space(space)


#: The sky panel's title while the demo cluster is shown.
SKY_TITLE = "Demo sky: Kiln cluster"


def _titled(title: str, widget: QtWidgets.QWidget, extra: QtWidgets.QWidget | None = None,
            name: str = "") -> QtWidgets.QGroupBox:
    box = QtWidgets.QGroupBox(title)
    if name:
        box.setObjectName(name)
    lay = QtWidgets.QVBoxLayout(box)
    lay.setContentsMargins(4, 6, 4, 4)
    lay.setSpacing(2)
    if extra is not None:
        lay.addWidget(extra)
    lay.addWidget(widget, 1)
    return box


class MainWindow(QtWidgets.QMainWindow):
    """The Starkiln window.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings, optional
        Start with these settings (else the last session's, else defaults).
    temperature_K : float, optional
        Start at this temperature.
    store : QtCore.QSettings or None
        Where window state is kept between runs; None keeps nothing.
    monitor : Display, optional
        The monitor to paint for (``--monitor``); default the screen's (:func:`platform_monitor`).
    """

    def __init__(self, settings: Settings | None = None, temperature_K: float | None = None,
                 store: QtCore.QSettings | None = None, parent=None,
                 monitor: Display | None = None):
        super().__init__(parent)
        self.setObjectName("starkiln-window")
        self.store = store
        self.settings_path: Path | None = None
        self.last_message: QtWidgets.QMessageBox | None = None
        restored, t_restored, m_restored = self._restored_session()
        start = settings if settings is not None else restored
        t0 = temperature_K if temperature_K is not None else (t_restored or DEFAULT_TEMPERATURE_K)

        def idle(fn):  # the model's slider table is built when the event loop is idle
            QtCore.QTimer.singleShot(0, self, fn)

        self.monitor_choice = MONITOR_CHOSEN if monitor is not None else MONITOR_FROM_PLATFORM
        mon, source = ((monitor, "chosen with --monitor") if monitor is not None else
                       platform_monitor(QtGui.QGuiApplication.primaryScreen()))
        try:
            self.model = WindowModel(start, t0, m_restored or DEFAULT_MAGNITUDE, idle=idle,
                                     monitor=mon, monitor_source=source)
        except StarkilnError:
            if temperature_K is not None:
                raise
            self.model = WindowModel(start, DEFAULT_TEMPERATURE_K, DEFAULT_MAGNITUDE, idle=idle,
                                     monitor=mon, monitor_source=source)
        self.undo_stack = QtGui.QUndoStack(self)
        self.undo_stack.setUndoLimit(HISTORY_LIMIT)
        self._stack_driving = False
        self._build()
        self._menus()
        self._connect()
        self.theme = THEMES[DEFAULT_THEME]
        self._restore_view_state()
        self._on_settings()
        self.setWindowTitle(APP_TITLE)
        self.setMinimumSize(*MINIMUM_SIZE)
        self.audition.slider.setFocus()

    # -- construction ----------------------------------------------------------------------
    def _build(self) -> None:
        m = self.model
        self.audition = AuditionPanel(m, self)
        self.current = CurrentColourPanel(m, self)
        self.spectrum = SpectrumView(m, self)
        self.chromaticity = ChromaticityView(m, self)
        self.sky = SkyPreview(m, self)
        self.rendering = RenderingPanel(m, self)
        self.compare = ComparePanel(m, self)
        self.compare_dock = QtWidgets.QDockWidget("Compare", self)
        self.compare_dock.setObjectName("dock-compare")
        self.compare_dock.setWidget(self.compare)
        self.addDockWidget(QtCore.Qt.DockWidgetArea.BottomDockWidgetArea, self.compare_dock)
        self.compare_dock.hide()  # shown with the first pin, or from Compare > Compare
        for button, tip in (("qt_dockwidget_floatbutton", "Float the Compare panel"),
                            ("qt_dockwidget_closebutton", "Hide the Compare panel (the pins stay)")):
            b = self.compare_dock.findChild(QtWidgets.QAbstractButton, button)
            if b is not None:
                b.setToolTip(tip)

        overlay_bar = QtWidgets.QWidget(self)
        ob = QtWidgets.QHBoxLayout(overlay_bar)
        ob.setContentsMargins(2, 0, 2, 0)
        lab = QtWidgets.QLabel("Overlay:", overlay_bar)
        lab.setProperty("role", "muted")
        ob.addWidget(lab)
        self.overlay_checks: dict[str, QtWidgets.QCheckBox] = {}
        for key, short in (("photopic", "V(\u03bb) day"), ("scotopic", "V\u2032(\u03bb) night"),
                           ("cmf", "x\u0304 y\u0304 z\u0304")):
            c = QtWidgets.QCheckBox(short, overlay_bar)
            c.setObjectName(f"overlay-{key}")
            c.setToolTip(OVERLAYS[key][0])
            c.toggled.connect(lambda on, k=key: self.set_overlay(k, on))
            ob.addWidget(c)
            self.overlay_checks[key] = c
        ob.addStretch(1)

        zoom_bar = QtWidgets.QWidget(self)
        zb = QtWidgets.QHBoxLayout(zoom_bar)
        zb.setContentsMargins(2, 0, 2, 0)
        self.zoom = QtWidgets.QComboBox(zoom_bar)
        self.zoom.setObjectName("chromaticity-zoom")
        self.zoom.setToolTip("Show the whole diagram, or zoom in near the Planckian locus")
        self.zoom.addItem("Whole diagram", "whole")
        self.zoom.addItem("Near the Planckian locus", "locus")
        self.zoom.currentIndexChanged.connect(
            lambda _i: self.chromaticity.set_zoom(self.zoom.currentData()))
        zb.addWidget(self.zoom)
        zb.addStretch(1)
        self.chroma_key = QtWidgets.QLabel(self)
        self.chroma_key.setObjectName("chromaticity-key")
        self.chroma_key.setWordWrap(True)
        self.chroma_key.setTextFormat(QtCore.Qt.TextFormat.RichText)
        small = self.chroma_key.font()
        small.setPointSizeF(max(small.pointSizeF() - 1.0, 7.0))
        self.chroma_key.setFont(small)
        chroma_box = QtWidgets.QWidget(self)
        cb = QtWidgets.QVBoxLayout(chroma_box)
        cb.setContentsMargins(0, 0, 0, 0)
        cb.setSpacing(2)
        cb.addWidget(self.chromaticity, 1)
        cb.addWidget(self.chroma_key)

        self.centre_split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical, self)
        self.centre_split.setObjectName("split-centre")
        self.centre_split.addWidget(_titled("Spectrum: Planck curve, visible band in its colours",
                                            self.spectrum, overlay_bar, "box-spectrum"))
        self.lower_split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal, self)
        self.lower_split.setObjectName("split-lower")
        self.lower_split.addWidget(_titled("Chromaticity x, y", chroma_box, zoom_bar,
                                           "box-chromaticity"))
        from starkiln.gui.plates import SkyBar

        self.sky_bar = SkyBar(m, self.sky, self)
        self.sky_box = _titled(SKY_TITLE, self.sky, self.sky_bar, "box-sky")
        self.lower_split.addWidget(self.sky_box)
        self.sky_bar.export_button.clicked.connect(self.plate_dialog)
        m.events.stars.connect(lambda c: self.sky_box.setTitle(
            SKY_TITLE if c.value is None else f"Sky: {c.value.path.name}"))
        self.lower_split.setSizes([380, 260])
        self.lower_split.setStretchFactor(0, 3)
        self.lower_split.setStretchFactor(1, 2)
        self.centre_split.addWidget(self.lower_split)
        self.centre_split.setSizes([300, 360])

        self.main_split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal, self)
        self.main_split.setObjectName("split-main")
        self.main_split.addWidget(_titled("Star colour", self.current, None, "box-current"))
        self.main_split.addWidget(self.centre_split)
        # what the settings come to, in words, over the tabs (the status bar has no room)
        self.summary = QtWidgets.QLabel(self)
        self.summary.setObjectName("settings-summary")
        self.summary.setProperty("role", "muted")
        self.summary.setWordWrap(True)
        self.summary.setToolTip("The current settings in short; Edit > Undo steps back")
        self.main_split.addWidget(_titled("Rendering", self.rendering, self.summary,
                                          "box-rendering"))
        for split in (self.main_split, self.centre_split, self.lower_split):
            split.setChildrenCollapsible(False)  # a panel is narrowed to its minimum, not hidden
        self.main_split.setStretchFactor(0, 0)
        self.main_split.setStretchFactor(1, 1)
        self.main_split.setStretchFactor(2, 0)
        self.main_split.setSizes([330, 600, 350])
        self._sized = False

        central = QtWidgets.QWidget(self)
        lay = QtWidgets.QVBoxLayout(central)
        lay.setContentsMargins(4, 2, 4, 2)
        lay.setSpacing(2)
        lay.addWidget(self.audition)
        lay.addWidget(self.main_split, 1)
        self.setCentralWidget(central)
        self.monitor_status = QtWidgets.QLabel(self)
        self.monitor_status.setObjectName("monitor-status")
        self.monitor_status.setToolTip(
            "The swatches, strips, sky and spectrum band are the chosen display's colours "
            "converted to this monitor; the readouts are the chosen display's values")
        self.statusBar().addPermanentWidget(self.monitor_status)

    def _menus(self) -> None:
        bar = self.menuBar()
        file = bar.addMenu("&File")
        self.action_open = file.addAction("Open settings\u2026", self._open_dialog,
                                          QtGui.QKeySequence.StandardKey.Open)
        self.action_save = file.addAction("Save settings", self._save,
                                          QtGui.QKeySequence.StandardKey.Save)
        file.addAction("Save settings as\u2026", self._save_as_dialog,
                       QtGui.QKeySequence.StandardKey.SaveAs)
        self.recent_menu = file.addMenu("Recent settings")
        file.addAction("Back to default settings", self.reset_settings)
        file.addSeparator()
        self.action_export_texture = file.addAction(
            "Export lookup texture\u2026", lambda: self.export_dialog("lut"),
            QtGui.QKeySequence(SHORTCUTS["export-texture"]))
        self.action_export_palette = file.addAction(
            "Export palette\u2026", lambda: self.export_dialog("palette"),
            QtGui.QKeySequence(SHORTCUTS["export-palette"]))
        self.action_export_plate = file.addAction("Export star plate\u2026", self.plate_dialog)
        self.action_load_catalogue = file.addAction("Load a catalogue into the sky\u2026",
                                                    self.sky_bar._load_dialog)
        file.addAction("Save a picture of this window\u2026", self._picture_dialog)
        file.addSeparator()
        file.addAction("Quit", self.close, QtGui.QKeySequence.StandardKey.Quit)
        edit = bar.addMenu("&Edit")
        self.action_undo = self.undo_stack.createUndoAction(self, "&Undo")
        self.action_undo.setShortcuts(QtGui.QKeySequence.StandardKey.Undo)
        self.action_redo = self.undo_stack.createRedoAction(self, "&Redo")
        self.action_redo.setShortcuts(QtGui.QKeySequence.StandardKey.Redo)
        edit.addAction(self.action_undo)
        edit.addAction(self.action_redo)
        edit.addSeparator()
        self.action_copy_hex = edit.addAction(
            "Copy hex colour", self.copy_hex, QtGui.QKeySequence(SHORTCUTS["copy-hex"]))
        self.action_copy_command = edit.addAction(
            "Copy command line", self.copy_command_line,
            QtGui.QKeySequence(SHORTCUTS["copy-command-line"]))
        compare = bar.addMenu("&Compare")
        self.action_pin = compare.addAction("Pin current settings", self.pin_current,
                                            QtGui.QKeySequence(SHORTCUTS["pin"]))
        compare.addAction("Compare A/B\u2026", self._ab_dialog)
        self.action_flip_ab = compare.addAction("Flip A/B", self.compare.flip,
                                                QtGui.QKeySequence(SHORTCUTS["flip-ab"]))
        compare.addAction(self.compare_dock.toggleViewAction())
        view = bar.addMenu("&View")
        self.action_next_theme = view.addAction(
            "Next theme", self.next_theme, QtGui.QKeySequence(SHORTCUTS["next-theme"]))
        themes = view.addMenu("Theme")
        group = QtGui.QActionGroup(self)
        self.theme_actions = {}
        for key, theme in THEMES.items():
            a = themes.addAction(theme.label, lambda k=key: self.set_theme(k))
            a.setCheckable(True)
            group.addAction(a)
            self.theme_actions[key] = a
        viewing = view.addMenu("Viewing level")  # dark-room viewing: gui/current.py
        viewing.addAction("Dome level", self.current.use_dome_level)
        viewing.addAction("Full (100 %)", lambda: self.current.set_viewing_level(1.0))
        monitors = view.addMenu("Monitor")
        monitors.setObjectName("menu-monitor")
        mgroup = QtGui.QActionGroup(self)
        self.monitor_actions = {}
        for key, label in [(MONITOR_FROM_PLATFORM, "As the platform reports (else sRGB)")] + \
                [(k, MONITOR_LABELS.get(k, k)) for k in PRESETS]:
            a = monitors.addAction(label, lambda k=key: self.set_monitor_choice(k))
            a.setCheckable(True)
            mgroup.addAction(a)
            self.monitor_actions[key] = a
        monitors.addSeparator()
        monitors.addAction("From a display profile (JSON)\u2026", self._monitor_profile_dialog)
        help_ = bar.addMenu("&Help")
        help_.addAction("Night vision: caution", lambda: self.show_message(
            "Night vision", CAUTION, QtWidgets.QMessageBox.Icon.Information))
        help_.addAction("About Starkiln", lambda: self.show_message(
            "About Starkiln", "Starkiln turns star temperatures and magnitudes into display "
            "colours. Every colour in this window comes from the engine's one render path. "
            "The Kiln cluster and the Harbourlight dome are invented demo data.",
            QtWidgets.QMessageBox.Icon.Information))
        self._rebuild_recent()
        for button in bar.findChildren(QtWidgets.QToolButton):  # shown when menus do not fit
            button.setToolTip("More menus")

    def _connect(self) -> None:
        events = self.model.events
        for event in (events.temperature, events.magnitude, events.plots, events.monitor):
            event.connect(lambda _change: self._show_monitor())
        events.settings.connect(lambda _change: self._on_settings())
        events.history.connect(self._on_history)
        events.plots.connect(lambda _change: self.chroma_key.setText(
            self.chromaticity.key_html()))
        events.rejected.connect(lambda change: self.statusBar().showMessage(
            f"\u26a0 {change.value}", 6000))
        self.sky.star_picked.connect(self._star_picked)
        self.current.status.connect(lambda text: self.statusBar().showMessage(text, 4000))
        self.compare.status.connect(lambda text: self.statusBar().showMessage(text, 6000))
        self.compare.ab_requested.connect(self._ab_dialog)
        events.pins.connect(lambda change: change.value and self.show_compare())
        events.pins.connect(lambda _change: self._fit_compare())
        self.rendering.display.message.connect(
            lambda title, text: self.show_message(title, text))

    # -- model -> window ---------------------------------------------------------------------
    def _on_settings(self) -> None:
        self._show_monitor()
        s = self.model.settings
        self.chroma_key.setText(self.chromaticity.key_html())
        path = "".join(((f" \u00b7 dust E(B-V) {s.dust_ebv:g}" if s.dust_ebv > 0 else ""),
                        (f" \u00b7 air at {s.altitude_deg:g}\u00b0"
                         if s.altitude_deg is not None else "")))
        self.summary.setText(f"white {s.scene_white} \u2192 {s.display.name} \u00b7 "
                             f"{s.adaptation} \u00b7 gamut {s.gamut} \u00b7 vision {s.vision}"
                             f"{path}")

    def _show_monitor(self) -> None:
        self.monitor_status.setText(self.model.monitor_status())
        for key, a in self.monitor_actions.items():
            a.setChecked(key == self.monitor_choice)

    # -- undo ----------------------------------------------------------------------------------
    @property
    def look(self) -> RenderingPanel:
        """The old name of :attr:`rendering` (kept for scripts written before issue 12)."""
        return self.rendering

    def _on_history(self, change) -> None:
        """Mirror the model's history in the undo stack."""
        h = change.value
        if h.kind == "push":
            self.undo_stack.push(SettingsCommand(self, h.entry.text))
        elif h.kind == "merge":  # a slider drag goes on: the newest command says its words
            top = self.undo_stack.command(self.undo_stack.index() - 1)
            if top is not None:
                top.setText(h.entry.text)
        elif h.kind == "clear":
            self.undo_stack.clear()
        elif not self._stack_driving:  # the model was asked directly: move the stack along
            self._stack_driving = True
            try:
                (self.undo_stack.redo if h.kind == "redo" else self.undo_stack.undo)()
            finally:
                self._stack_driving = False

    def _history_step(self, redo: bool) -> None:
        """The undo stack's command asks the model (unless the model moved first)."""
        if self._stack_driving:
            return
        self._stack_driving = True
        try:
            try:
                (self.model.redo if redo else self.model.undo)()
            except INPUT_ERRORS as exc:  # cannot happen (the settings were valid); shown if so
                self.statusBar().showMessage(f"\u26a0 {exc}", 6000)
        finally:
            self._stack_driving = False

    def copy_hex(self) -> str:
        """Copy the current colour's hex code to the clipboard (Edit > Copy hex colour)."""
        return self.current.readouts.copy("hex")

    # -- comparing ---------------------------------------------------------------------------
    def pin_current(self) -> bool:
        """Pin the current settings (Compare > Pin); a fifth is refused in the status bar."""
        return self.compare.pin_current()

    def _ab_dialog(self) -> bool:
        a, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Compare A/B: settings A",
                                                     self._last_dir(), "Starkiln settings (*.toml)")
        if not a:
            return False
        b, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Compare A/B: settings B",
                                                     str(Path(a).parent),
                                                     "Starkiln settings (*.toml)")
        if not b:
            return False
        self.show_compare()
        return self.compare.load_ab(a, b)

    def show_compare(self) -> None:
        """Show the Compare panel: docked under the views where the window has the height for
        it, else floating over the window's lower part (docked, it would squeeze the views
        below their minimum)."""
        dock = self.compare_dock
        if dock.isVisible():
            return
        central = self.centralWidget()
        room = central.height() - central.minimumSizeHint().height()
        wanted = self.compare.wanted_height() + 24  # the dock's title bar
        if self.isVisible() and room < wanted:
            dock.setFloating(True)
            dock.resize(round(self.width() * 0.9), wanted)
            corner = self.mapToGlobal(QtCore.QPoint(round(self.width() * 0.05),
                                                    self.height() - wanted - 30))
            dock.move(corner)
        dock.show()

    def _fit_compare(self) -> None:
        """Give the Compare panel the height its pins want, as far as the views leave room."""
        dock = self.compare_dock
        if not dock.isVisible():
            return
        wanted = self.compare.wanted_height() + 24
        if dock.isFloating():
            dock.resize(dock.width(), wanted)
            return
        central = self.centralWidget()
        room = central.height() - central.minimumSizeHint().height()
        height = max(min(wanted, dock.height() + max(room, 0)), dock.minimumSizeHint().height())
        self.resizeDocks([dock], [height], QtCore.Qt.Orientation.Vertical)

    def profile_dir(self) -> Path:
        """Where Copy command line saves a custom display's JSON display profile."""
        base = QtCore.QStandardPaths.writableLocation(
            QtCore.QStandardPaths.StandardLocation.AppDataLocation) or str(Path.home())
        return Path(base) / "display-profiles"

    def copy_command_line(self) -> str:
        """Copy the ``starkiln colour`` command that prints what is shown (Edit menu); returns
        it ("" and a status message if it cannot be made)."""
        try:
            line = self.model.command_line(self.profile_dir())
        except (INPUT_ERRORS + (OSError,)) as exc:
            self.statusBar().showMessage(f"\u26a0 {exc}", 6000)
            return ""
        QtGui.QGuiApplication.clipboard().setText(line)
        self.statusBar().showMessage(f"Copied: {line}", 6000)
        return line

    def next_theme(self) -> None:
        """Switch to the next theme of View > Theme."""
        keys = list(THEMES)
        self.set_theme(keys[(keys.index(self.theme.key) + 1) % len(keys)])

    # -- the monitor -------------------------------------------------------------------------
    def set_monitor_choice(self, key) -> None:
        """Paint for a preset monitor (a key of the display presets), a Display, or
        :data:`MONITOR_FROM_PLATFORM` (the screen's colour space, else sRGB)."""
        if isinstance(key, Display):
            self.monitor_choice = MONITOR_CHOSEN
            self.model.set_monitor(key, "chosen in View > Monitor")
        elif key == MONITOR_FROM_PLATFORM:
            self.monitor_choice = key
            self.model.set_monitor(*platform_monitor(self.screen()))
        else:
            self.monitor_choice = key
            self.model.set_monitor(PRESETS[key], "chosen in View > Monitor")
        self._show_monitor()

    def _monitor_profile_dialog(self) -> None:
        from starkiln.engine.colour.monitor import load_monitor

        path, _ = QtWidgets.QFileDialog.getOpenFileName(
            self, "Monitor: open a display profile (JSON)", self._last_dir(),
            "Display profiles, JSON (*.json)")
        if path:
            try:
                self.set_monitor_choice(load_monitor(path))
            except INPUT_ERRORS as exc:
                self.show_message("Monitor profile not used", str(exc))

    def _star_picked(self, index: int) -> None:
        c = self.sky.cluster  # the model has auditioned the star already
        self.statusBar().showMessage(f"{c.name[index]}: {c.temperature_K[index]:.0f} K, "
                                     f"magnitude {c.magnitude[index]:.2f}", 5000)

    # -- view options ------------------------------------------------------------------------
    def set_theme(self, key: str) -> None:
        """Switch to theme ``key`` (``dim`` or ``ordinary``)."""
        theme = THEMES.get(key, THEMES[DEFAULT_THEME])
        self.theme = theme
        apply_theme(self, theme)
        for view in (self.audition, self.current, self.spectrum, self.chromaticity, self.sky,
                     self.compare):
            view.set_theme(theme)
        self.chroma_key.setText(self.chromaticity.key_html())
        for k, a in self.theme_actions.items():
            a.setChecked(k == theme.key)
        if theme.key == "dim":
            self.statusBar().showMessage(
                "Dim theme: red interface light; swatches keep true colours, so dim the "
                "monitor in the dark", 8000)

    def set_overlay(self, key: str, on: bool) -> None:
        """Show or hide a spectrum overlay (``photopic``, ``scotopic``, ``cmf``)."""
        check = self.overlay_checks[key]
        if check.isChecked() != on:
            check.blockSignals(True)
            check.setChecked(on)
            check.blockSignals(False)
        self.spectrum.set_overlay(key, on)

    # -- messages ----------------------------------------------------------------------------
    def show_message(self, title: str, text: str,
                     icon=QtWidgets.QMessageBox.Icon.Warning) -> QtWidgets.QMessageBox:
        """A non-blocking message box (window-modal); the last one is :attr:`last_message`."""
        box = QtWidgets.QMessageBox(icon, title, text, QtWidgets.QMessageBox.StandardButton.Ok,
                                    self)
        box.setObjectName("message")
        box.setWindowModality(QtCore.Qt.WindowModality.WindowModal)
        box.setAttribute(QtCore.Qt.WidgetAttribute.WA_DeleteOnClose, False)
        if self.last_message is not None:
            self.last_message.close()
        self.last_message = box
        box.open()
        return box

    # -- settings files ----------------------------------------------------------------------
    def load_settings_file(self, path) -> bool:
        """Read a TOML settings file; a bad file gives a message box and changes nothing."""
        path = Path(path)
        try:
            self.model.load_settings_file(path, origin="file")
        except INPUT_ERRORS as exc:
            self.show_message("Settings not loaded", str(exc))
            return False
        self.rendering.refresh(force=True)
        self.settings_path = path
        self._add_recent(path)
        self.setWindowTitle(f"{APP_TITLE} \u2014 {path.name}")
        self.statusBar().showMessage(f"Loaded {path}", 4000)
        return True

    def save_settings_file(self, path) -> bool:
        """Write the current settings as TOML (atomically)."""
        path = Path(path)
        try:
            self.model.save_settings_file(path)
        except (INPUT_ERRORS + (OSError,)) as exc:
            self.show_message("Settings not saved", str(exc))
            return False
        self.settings_path = path
        self._add_recent(path)
        self.setWindowTitle(f"{APP_TITLE} \u2014 {path.name}")
        self.statusBar().showMessage(f"Saved {path}", 4000)
        return True

    def reset_settings(self) -> None:
        """Back to the engine's default settings."""
        self.model.reset_settings(origin="file")
        self.rendering.refresh(force=True)

    def _open_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Open settings", self._last_dir(),
                                                        "Starkiln settings (*.toml)")
        if path:
            self.load_settings_file(path)

    def _save(self) -> None:
        if self.settings_path is None:
            self._save_as_dialog()
        else:
            self.save_settings_file(self.settings_path)

    def _save_as_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getSaveFileName(
            self, "Save settings", str(Path(self._last_dir()) / "settings.toml"),
            "Starkiln settings (*.toml)")
        if path:
            self.save_settings_file(path)

    def _picture_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getSaveFileName(
            self, "Save a picture of this window", str(Path(self._last_dir()) / "starkiln.png"),
            "PNG images (*.png)")
        if path:
            try:
                save_window_picture(self, path)
            except (INPUT_ERRORS + (OSError,)) as exc:
                self.show_message("Picture not saved", str(exc))

    def _last_dir(self) -> str:
        if self.settings_path is not None:
            return str(self.settings_path.parent)
        return str(Path.home())

    # -- recent files ------------------------------------------------------------------------
    def recent_files(self) -> list[str]:
        """Recent settings files, newest first."""
        if self.store is None:
            return list(getattr(self, "_recent", []))
        value = self.store.value("recent/settings", [])
        if isinstance(value, str):
            value = [value]
        return [str(v) for v in (value or [])]

    def _add_recent(self, path: Path) -> None:
        items = [str(path)] + [p for p in self.recent_files() if p != str(path)]
        items = items[:MAX_RECENT]
        if self.store is None:
            self._recent = items
        else:
            self.store.setValue("recent/settings", items)
        self._rebuild_recent()

    def _rebuild_recent(self) -> None:
        self.recent_menu.clear()
        items = self.recent_files()
        for p in items:
            self.recent_menu.addAction(p, lambda p=p: self.load_settings_file(p))
        self.recent_menu.setEnabled(bool(items))

    # -- exports -----------------------------------------------------------------------------
    def export_dialog(self, kind: str):
        """Open (non-modal) the ``lut`` or ``palette`` export dialog and return it."""
        from starkiln.gui.exports import LutDialog, PaletteDialog

        cls = LutDialog if kind == "lut" else PaletteDialog
        dialog = getattr(self, f"_{kind}_dialog", None)
        if dialog is None:
            dialog = cls(self.model, self)
            dialog.written.connect(lambda m: self.statusBar().showMessage(m, 5000))
            setattr(self, f"_{kind}_dialog", dialog)
        dialog.show()
        dialog.refresh_preview()
        return dialog

    def plate_dialog(self):
        """Open (non-modal) the star plate export dialog and return it."""
        d = self.sky_bar.export_dialog()
        if not getattr(d, "_connected", False):
            d.written.connect(lambda msg: self.statusBar().showMessage(msg, 5000))
            d._connected = True
        return d

    # -- persistence -------------------------------------------------------------------------
    def _restored_session(self):
        if self.store is None:
            return None, None, None
        text = self.store.value("session/settings_toml", "")
        settings = settings_from_toml(text) if text else None
        try:
            t = float(self.store.value("session/temperature_K", DEFAULT_TEMPERATURE_K))
            m = float(self.store.value("session/magnitude", DEFAULT_MAGNITUDE))
        except (TypeError, ValueError):
            t, m = None, None
        return settings, t, m

    def _restore_view_state(self) -> None:
        st = self.store
        theme = str(st.value("view/theme", DEFAULT_THEME)) if st is not None else DEFAULT_THEME
        self.set_theme(theme if theme in THEMES else DEFAULT_THEME)
        self.current.restore_viewing(st)  # before the first paint: no flash at start
        if st is None:
            return
        geometry = st.value("window/geometry")
        if geometry is not None:
            self.restoreGeometry(geometry)
        for split in (self.main_split, self.centre_split, self.lower_split):
            state = st.value(f"window/{split.objectName()}")
            if state is not None:
                split.restoreState(state)
                self._sized = True
        for key in OVERLAYS:
            on = str(st.value(f"view/overlay/{key}", "false")).lower() == "true"
            self.set_overlay(key, on)
        zoom = str(st.value("view/chromaticity_zoom", "whole"))
        i = self.zoom.findData(zoom)
        if i >= 0:
            self.zoom.setCurrentIndex(i)

    def save_state(self) -> None:
        """Write window state and the session to the store (also done on close)."""
        st = self.store
        if st is None:
            return
        st.setValue("window/geometry", self.saveGeometry())
        for split in (self.main_split, self.centre_split, self.lower_split):
            st.setValue(f"window/{split.objectName()}", split.saveState())
        st.setValue("view/theme", self.theme.key)
        self.current.save_viewing(st)
        for key, check in self.overlay_checks.items():
            st.setValue(f"view/overlay/{key}", "true" if check.isChecked() else "false")
        st.setValue("view/chromaticity_zoom", self.zoom.currentData())
        st.setValue("session/settings_toml", self.model.settings_toml())
        st.setValue("session/temperature_K", self.model.temperature_K)
        st.setValue("session/magnitude", self.model.magnitude)
        st.sync()

    def showEvent(self, event):  # noqa: N802 - Qt API
        super().showEvent(event)
        handle = self.windowHandle()
        if handle is not None and not getattr(self, "_follows_screen", False):
            self._follows_screen = True  # moved to another screen: ask that one (if not chosen)
            handle.screenChanged.connect(lambda _screen: self.monitor_choice ==
                                         MONITOR_FROM_PLATFORM and
                                         self.set_monitor_choice(MONITOR_FROM_PLATFORM))
        if not self._sized:  # first show, no saved splitter state: side panels at their width
            self._sized = True
            w = self.main_split.width() or self.width()
            left = max(self.current.minimumSizeHint().width() + 16, 320)
            self.main_split.setSizes([left, max(w - left - 350, 300), 350])

    def closeEvent(self, event):  # noqa: N802 - Qt API
        self.save_state()
        super().closeEvent(event)


def save_window_picture(window: QtWidgets.QWidget, path) -> Path:
    """Grab the window into a PNG file, atomically (nothing is left on failure)."""
    from starkiln.engine.atomic import atomic_path

    path = Path(path)
    if path.suffix.lower() != ".png":
        raise StarkilnError(f"{path}: a window picture is saved as .png")
    image = window.grab().toImage()
    with atomic_path(path, overwrite=True) as tmp:
        if not image.save(str(tmp), "PNG"):
            raise StarkilnError(f"{path}: could not encode the picture as PNG")
    return path
