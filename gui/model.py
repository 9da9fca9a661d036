"""The window's model: settings, current temperature and magnitude, their renders and plot data.

No Qt here (a test imports this module in a fresh interpreter and checks that
PySide6 is not loaded), so the whole state of the window is tested without a
display. The widgets bind to a :class:`WindowModel`: they read it, call its
setters, and listen to its events; they never ask the engine for data
themselves.

Events. ``model.events.temperature.connect(callback)``; every callback gets one
:class:`Change` carrying the event's name, its ``origin`` (who asked:
``"slider"``, ``"kelvin"``, ``"sky"``, ``"file"``...) and the new value. A widget
that caused a change ignores its own echo by its origin. Events are emitted
only after the whole state is consistent, and a setter that changes nothing
emits nothing (so a view showing the model's value can set it back harmlessly).
A change the engine rejects (:class:`starkiln.engine.errors.StarkilnError`)
leaves the last good state, is reported on ``events.rejected`` and is raised
again for the control that asked (to show it inline).

The temperature slider. Its positions are one
:class:`starkiln.engine.plotdata.plots.MiredScale`, the only place that turns a
position into a temperature and back. Soon after the settings (or the
magnitude) change, the model asks the render path once for every position (one
vectorised call, tens of milliseconds, run when the window is idle through the
``idle`` hook); a slider step then only looks its colours up. The numbers are
the render path's own (``render`` works element by element; an 8-bit check is
in the tests). Temperatures typed in, and steps before the table is ready, are
rendered directly.

Undo. Every change of the settings object (from a control, a file, a reset) is kept in the
model's history (:class:`SettingsHistory`): :meth:`WindowModel.undo` and
:meth:`WindowModel.redo` step through it and give back the very settings objects that were
current, so an undone sequence returns settings equal (``==``) to where it began. The history
is the model's, so it is tested without a display; the window mirrors it in a ``QUndoStack``
for its Edit menu (``events.history`` tells it what was pushed). The temperature and the
magnitude are what is being auditioned, not settings, and are not in the history.

The monitor. Every colour the window paints is converted from the chosen display's colours to
the monitor's colour space by :func:`starkiln.engine.colour.monitor.monitor_rgb_8bit` (the
``monitor_*`` fields below); the readouts keep the chosen display's values. The window tells
the model which monitor it is on (:meth:`WindowModel.set_monitor`); sRGB is assumed until then.

Dark-room viewing. Those monitor colours are dimmed to the viewing level
(:meth:`WindowModel.set_viewing_level`, a fraction 0.02-1 of the monitor's white, in its linear
light: :mod:`starkiln.engine.colour.viewing`); :meth:`WindowModel.dome_viewing_level` is the
level that shows a full-intensity star at the chosen display's luminance.

References
----------
Mired scale: [WyszeckiStiles1982] section 3.11. Colours:
:func:`starkiln.engine.pipeline.render.render`; plot data: :mod:`starkiln.engine.plotdata.plots`
and :mod:`starkiln.engine.plotdata.sky`.
"""

from __future__ import annotations

import dataclasses
import sys
from functools import lru_cache
from pathlib import Path
from typing import Callable

import numpy as np

from starkiln.engine.colour.displays import Display, load_display_profile
from starkiln.engine.colour.monitor import SRGB_MONITOR, monitor_rgb_8bit, rendered_on_monitor
from starkiln.engine.colour.viewing import (check_viewing_level, dome_viewing_level,
                                           surround_rgb_8bit)
from starkiln.engine.colour.temperature_axis import temperature_to_mired
from starkiln.engine.errors import InputRangeError, StarkilnError
from starkiln.engine.eye.vision import check_magnitude
from starkiln.engine.colour.quantisation import to_8bit, to_hex
from starkiln.engine.pipeline.render import Rendered, render
from starkiln.engine.pipeline.settings import Settings, load_settings, save_settings
from starkiln.engine.pipeline.settings import settings_to_toml
from starkiln.engine.path.atmosphere import airmass_kasten_young
from starkiln.engine.plotdata.plots import (ArrivingCurve, BandColours, ChromaticityDiagram,
                                            MiredScale, PlanckCurve, arriving_curve,
                                            chromaticity_diagram,
                                            efficiency_overlays, magnitude_ladder, planck_curve,
                                            spectral_band_colours,
                                            spectrum_plot_wavelengths_nm)
from starkiln.engine.plotdata.sky import Cluster, SkyImage, load_demo_cluster, sky_image
from starkiln.engine.plates.preview import (ColumnChoice, StarTable, load_star_table,
                                            plate_on_monitor, preview_plate)
from starkiln.engine.stars.temperature import (DEFAULT_INDEX_MODEL, check_index_model,
                                               check_temperature, temperature_for_spectral_class,
                                               temperature_from_index)

DEFAULT_TEMPERATURE_K = 5772.0  # the Sun's nominal effective temperature ([IAU2015B3])
DEFAULT_MAGNITUDE = 1.0
#: Slider resolution: positions per mired (arrow keys step 1 mired, page keys 10).
POSITIONS_PER_MIRED = 4
#: Cells of the temperature strip under the slider, and its labelled temperatures.
STRIP_CELLS = 48
STRIP_TICKS_K = (1000, 1500, 2000, 3000, 4000, 5000, 6500, 10000, 40000)
#: Wavelengths of the spectrum plot's curve: 2 nm in the visible band, 10 nm outside.
SPECTRUM_STEP_BAND_NM = 2.0
SPECTRUM_STEP_OUTSIDE_NM = 10.0


#: The status bar's words for the monitor when the platform gives no colour space.
MONITOR_ASSUMED = "assumed; the platform reports none"
#: Names the status bar gives the preset monitors.
MONITOR_LABELS = {"srgb": "sRGB", "display-p3": "Display P3", "dci-p3": "DCI-P3",
                  "rec2020": "Rec. 2020", "rec2100-pq": "Rec. 2100 PQ"}


# -- events ------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class Change:
    """One change: which event, who asked for it, and the new value."""

    event: str
    origin: str
    value: object


class Event:
    """Callbacks for one kind of change; each gets a :class:`Change`."""

    def __init__(self, name: str):
        self.name = name
        self._callbacks: list[Callable[[Change], object]] = []

    def connect(self, callback: Callable[[Change], object]) -> Callable[[Change], object]:
        """Call ``callback(change)`` on every change from now on; returns the callback."""
        self._callbacks.append(callback)
        return callback

    def disconnect(self, callback: Callable[[Change], object]) -> None:
        """Stop calling ``callback``."""
        self._callbacks.remove(callback)

    def emit(self, origin: str, value) -> Change:
        """Tell every callback, in the order they connected.

        A callback that raises does not stop the others (nor undo the change):
        its exception goes to ``sys.excepthook``, as a slot's does in Qt.
        """
        change = Change(self.name, origin, value)
        for callback in tuple(self._callbacks):
            try:
                callback(change)
            except Exception:  # noqa: BLE001 - as a toolkit does: report, call the others
                sys.excepthook(*sys.exc_info())
        return change


class ModelEvents:
    """The model's events.

    Attributes
    ----------
    temperature : value the new temperature, K (the colour, spectrum and slider
        position are already updated).
    magnitude : value the new apparent magnitude.
    settings : value the new :class:`~starkiln.engine.pipeline.settings.Settings`.
    plots : value the new :class:`PlotData` (emitted after ``settings``).
    rejected : value the :class:`~starkiln.engine.errors.StarkilnError`; nothing changed.
    monitor : value the new monitor :class:`~starkiln.engine.colour.displays.Display` (the
        colours and plot data are already converted; ``plots`` follows).
    viewing : value the new viewing level (the colours and plot data are already dimmed;
        ``plots`` follows).
    history : value a :class:`HistoryChange`: a change was pushed, undone or redone (emitted
        after ``settings`` and ``plots``).
    pins : value the tuple of :class:`Pin` now pinned (a pin was added or removed, or the A/B
        pair loaded); the strips follow from :meth:`WindowModel.pin_strips`.
    stars : value the :class:`~starkiln.engine.plates.preview.StarTable` now loaded for the
        sky panel, or None (back to the demo cluster).
    """

    def __init__(self):
        self.temperature = Event("temperature")
        self.magnitude = Event("magnitude")
        self.settings = Event("settings")
        self.plots = Event("plots")
        self.rejected = Event("rejected")
        self.monitor = Event("monitor")
        self.viewing = Event("viewing")
        self.history = Event("history")
        self.pins = Event("pins")
        self.stars = Event("stars")


#: Origins of the history's own steps: changes made by undo and redo are not pushed again.
UNDO_ORIGIN = "undo"
REDO_ORIGIN = "redo"
#: Most changes kept (common practice for an editor's undo list; older ones are dropped).
HISTORY_LIMIT = 200
#: Words for the settings fields in the Edit menu ("Undo gamut mapping"); a field not named
#: here is said as its name with spaces ("scene white", "night tint").
FIELD_WORDS = {
    "gamut": "gamut mapping", "vision": "vision model", "pupil_mm": "pupil",
    "aperture_mm": "aperture", "blur_spot_arcmin": "star image size",
    "magnitude_bright": "brightest magnitude", "magnitude_faint": "faintest magnitude",
    "compensate": "dome compensation",
    "dust_ebv": "dust E(B-V)", "dust_rv": "dust R_V", "altitude_deg": "altitude",
}


def describe_change(before: Settings, after: Settings) -> str:
    """Words for what changed between two settings objects ("gamut mapping", "display and
    pupil", "4 settings"), for the Edit menu."""
    names = [f.name for f in dataclasses.fields(Settings)
             if getattr(before, f.name) != getattr(after, f.name)]
    words = [FIELD_WORDS.get(n, n.replace("_", " ")) for n in names]
    if not words:
        return "settings"
    if len(words) > 2:
        return f"{len(words)} settings"
    return " and ".join(words)


@dataclasses.dataclass(frozen=True)
class HistoryEntry:
    """One settings change: the settings before and after it, and its words."""

    before: Settings
    after: Settings
    text: str


@dataclasses.dataclass(frozen=True)
class HistoryChange:
    """What happened to the history: ``kind`` is ``"push"``, ``"merge"`` (the newest entry
    now ends at a later change: a slider being dragged), ``"undo"``, ``"redo"`` or ``"clear"``;
    ``entry`` the entry concerned (None for ``"clear"``)."""

    kind: str
    entry: HistoryEntry | None


class SettingsHistory:
    """Undo and redo lists of settings changes (newest last), at most ``limit`` kept.

    Parameters
    ----------
    limit : int
        Most entries kept in the undo list; the oldest go first.
    """

    def __init__(self, limit: int = HISTORY_LIMIT):
        self.limit = int(limit)
        self._undo: list[HistoryEntry] = []
        self._redo: list[HistoryEntry] = []
        self._open = False  # the newest entry may still take merged changes

    @property
    def can_undo(self) -> bool:
        """Whether there is a change to undo."""
        return bool(self._undo)

    @property
    def can_redo(self) -> bool:
        """Whether there is an undone change to redo."""
        return bool(self._redo)

    @property
    def undo_text(self) -> str:
        """Words of the change :meth:`WindowModel.undo` would undo ("" if none)."""
        return self._undo[-1].text if self._undo else ""

    @property
    def redo_text(self) -> str:
        """Words of the change :meth:`WindowModel.redo` would redo ("" if none)."""
        return self._redo[-1].text if self._redo else ""

    def __len__(self) -> int:
        return len(self._undo)

    def push(self, before: Settings, after: Settings, open_merge: bool = False) -> HistoryEntry:
        """Record a change; the redo list is dropped (a new change starts a new branch).

        ``open_merge``: later changes given to :meth:`merge` join this entry (the steps of one
        slider drag are one undo step) until :meth:`close_merge` or another push.
        """
        entry = HistoryEntry(before, after, describe_change(before, after))
        self._undo.append(entry)
        del self._undo[:-self.limit]
        self._redo.clear()
        self._open = bool(open_merge)
        return entry

    def merge(self, before: Settings, after: Settings) -> HistoryEntry | None:
        """Extend the newest entry to ``after`` if it is open and ends at ``before``; returns
        the extended entry, or None (nothing changed: push instead)."""
        last = self._undo[-1] if self._undo else None
        if not self._open or last is None or last.after is not before:
            return None
        entry = HistoryEntry(last.before, after, describe_change(last.before, after))
        self._undo[-1] = entry
        return entry

    def close_merge(self) -> None:
        """The next change starts an entry of its own (a drag ended)."""
        self._open = False

    def take_undo(self) -> HistoryEntry:
        """Move the newest change to the redo list and return it."""
        entry = self._undo.pop()
        self._redo.append(entry)
        self._open = False
        return entry

    def take_redo(self) -> HistoryEntry:
        """Move the newest undone change back to the undo list and return it."""
        entry = self._redo.pop()
        self._undo.append(entry)
        self._open = False
        return entry

    def clear(self) -> None:
        """Forget every change."""
        self._undo.clear()
        self._redo.clear()
        self._open = False


# -- derived state -----------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class CurrentColour:
    """Renders of the current temperature and what the swatches show of them.

    ``plain`` is the render without a magnitude (the swatch), ``at_magnitude``
    at the current magnitude (night vision, tone curve), ``ladder`` at each of
    ``ladder_magnitudes`` (the brightness strip). The 8-bit values are
    :func:`starkiln.engine.pipeline.render.to_8bit` of the display-encoded colours (the
    readouts); the ``monitor_*`` values are what the swatches paint
    (:func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`), with whether the monitor had to
    clip each colour.
    """

    temperature_K: float
    magnitude: float
    plain: Rendered
    at_magnitude: Rendered
    ladder_magnitudes: np.ndarray
    ladder: Rendered
    rgb_8bit: np.ndarray
    hex: str
    dimmed_rgb_8bit: np.ndarray
    dimmed_hex: str
    ladder_rgb_8bit: np.ndarray
    monitor_rgb_8bit: np.ndarray
    monitor_clipped: bool
    monitor_dimmed_rgb_8bit: np.ndarray
    monitor_dimmed_clipped: bool
    monitor_ladder_rgb_8bit: np.ndarray
    monitor_ladder_clipped: np.ndarray


@dataclasses.dataclass(frozen=True)
class PlotData:
    """What the plots and the strip draw for one settings object.

    Attributes
    ----------
    settings : the settings these were computed with.
    band : display colours of the visible band (spectrum plot fill).
    overlays : V, V' and the colour-matching functions (spectrum plot overlays).
    diagram : the chromaticity diagram's lines and points.
    strip_temperature_K, strip, strip_rgb_8bit, strip_hex : the temperature strip's cells.
    monitor : the monitor the ``*_monitor_*`` colours are for.
    strip_monitor_rgb_8bit, strip_monitor_clipped : the strip's cells on the monitor.
    band_monitor_rgb_8bit : the band's colours on the monitor.
    """

    settings: Settings
    band: BandColours
    overlays: dict
    diagram: ChromaticityDiagram
    strip_temperature_K: np.ndarray
    strip: Rendered
    strip_rgb_8bit: np.ndarray
    strip_hex: np.ndarray
    monitor: Display
    strip_monitor_rgb_8bit: np.ndarray
    strip_monitor_clipped: np.ndarray
    band_monitor_rgb_8bit: np.ndarray


@dataclasses.dataclass(frozen=True)
class SliderTable:
    """Renders of every slider position for one settings object and magnitude.

    ``night`` has shape (positions, 1 + ladder): the current magnitude, then the
    brightness strip's magnitudes.
    """

    settings: Settings
    magnitude: float
    temperature_K: np.ndarray
    plain: Rendered
    night: Rendered


def demo_display_path() -> Path:
    """Path of the invented dome projector profile in ``assets``."""
    from starkiln.assets import asset_path

    return Path(str(asset_path("dome_projector.json")))


@lru_cache(maxsize=1)
def demo_display():
    """The invented dome projector's Display (read once), or None if the file is unreadable."""
    try:
        return load_display_profile(demo_display_path())
    except StarkilnError:
        return None


def settings_from_toml(text: str, source: str = "last session") -> Settings | None:
    """Settings from TOML text (the window's saved session), or None if it is not valid."""
    from starkiln.engine.pipeline.settings import settings_from_toml as parse

    try:
        return parse(text, source)
    except StarkilnError:
        return None


# -- pins ----------------------------------------------------------------------------------------
#: Most settings pinned side by side (issue 12: "up to four candidate settings").
MAX_PINS = 4
#: Temperatures of every pin's strip, K: the same for every pin, so they read across.
PIN_TEMPERATURES_K = (1500.0, 2000.0, 2500.0, 3000.0, 3500.0, 4000.0, 4500.0, 5000.0, 5772.0,
                      6500.0, 8000.0, 10000.0, 15000.0, 25000.0, 40000.0)
#: Roles of the A/B pair's pins.
AB_ROLES = ("A", "B")


def settings_words(settings: Settings) -> str:
    """Short words for a settings object: white, display, adaptation, gamut, night sky."""
    s = settings
    night = "naked eye" if s.aperture_mm is None else f"{s.aperture_mm:g} mm"
    return (f"white {s.scene_white} \u2192 {s.display.name} \u00b7 {s.adaptation} \u00b7 "
            f"gamut {s.gamut} \u00b7 vision {s.vision}, {night}")


@dataclasses.dataclass(frozen=True)
class Pin:
    """One pinned settings object: ``role`` is ``""``, ``"A"`` or ``"B"``; ``label`` its words
    (the file's name for an A/B pin)."""

    settings: Settings
    label: str
    role: str = ""


@dataclasses.dataclass(frozen=True)
class PinStrip:
    """What one pin's strip paints: the colours of :data:`PIN_TEMPERATURES_K` through the render
    path (at ``magnitude``, dimmed, if not None), converted to the monitor at the viewing level.

    ``rgb_8bit`` and ``hex`` are the chosen display's values (the tooltips); ``monitor_rgb_8bit``
    and ``monitor_clipped`` what is painted (:func:`starkiln.engine.colour.monitor.rendered_on_monitor`).
    """

    pin: Pin
    temperature_K: np.ndarray
    magnitude: float | None
    rendered: Rendered
    rgb_8bit: np.ndarray
    hex: np.ndarray
    monitor_rgb_8bit: np.ndarray
    monitor_clipped: np.ndarray


# -- the model ---------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class StarPlate:
    """A catalogue drawn as a plate for the sky panel: the settings, table and spec it was
    drawn with, the image of display values (H, W, 3) float32 and the row counts."""

    settings: Settings
    table: StarTable
    spec: object
    image: np.ndarray
    counts: dict


class WindowModel:
    """Current settings, temperature and magnitude, their renders, and the plot data.

    Parameters
    ----------
    settings : Settings, optional
        Default: the engine's defaults.
    temperature_K, magnitude : float
        Start values (validated by the engine).
    idle : callable, optional
        ``idle(fn)`` runs ``fn()`` later, when the caller's event loop is idle
        (the window passes a zero-delay timer). Without it the slider table is
        built only when :meth:`build_table` is called.
    scale : MiredScale, optional
        The slider's positions; default 1000-40000 K at
        :data:`POSITIONS_PER_MIRED` positions per mired.
    monitor : Display, optional
        The monitor the window paints on (default sRGB, assumed).
    monitor_source : str
        How the monitor was found, for the status bar.

    Raises
    ------
    StarkilnError
        A start value the engine does not accept.
    """

    def __init__(self, settings: Settings | None = None,
                 temperature_K: float = DEFAULT_TEMPERATURE_K,
                 magnitude: float = DEFAULT_MAGNITUDE, idle: Callable | None = None,
                 scale: MiredScale | None = None, monitor: Display | None = None,
                 monitor_source: str = MONITOR_ASSUMED):
        self.events = ModelEvents()
        self._monitor = monitor if monitor is not None else SRGB_MONITOR
        self._monitor_source = monitor_source
        self._viewing_level = 1.0
        self.slider_scale = scale if scale is not None else MiredScale(
            mired_per_step=1.0 / POSITIONS_PER_MIRED)
        self._slider_temperature_K = self.slider_scale.temperatures_K()
        self.spectrum_wavelength_nm = spectrum_plot_wavelengths_nm(
            step_outside_nm=SPECTRUM_STEP_OUTSIDE_NM, step_band_nm=SPECTRUM_STEP_BAND_NM)
        self._strip_temperature_K = self.slider_scale.cell_temperatures(STRIP_CELLS)
        self.strip_ticks = tuple((float(self.slider_scale.fraction_of(t)), float(t))
                                 for t in STRIP_TICKS_K)
        self._idle = idle
        self._table: SliderTable | None = None
        self._table_on = True
        self._cluster: Cluster | None = None
        self._cluster_error: str | None = None
        self._sky: tuple | None = None
        self._stars: StarTable | None = None
        settings = settings if settings is not None else Settings()
        if not isinstance(settings, Settings):
            raise StarkilnError(f"not a settings object: {settings!r}")
        self._settings = settings
        self.history = SettingsHistory()
        self._pins: list[Pin] = []
        self._pin_strips: dict = {}
        self._magnitude = float(check_magnitude(magnitude))
        self._index_model = DEFAULT_INDEX_MODEL
        t = float(check_temperature(temperature_K))
        self._plots = self._plots_for(settings)
        self._place(t, None, self._colour_for(settings, t, self._magnitude))
        self._schedule_table()

    # -- read ----------------------------------------------------------------------------------
    @property
    def settings(self) -> Settings:
        """The current, validated settings."""
        return self._settings

    @property
    def temperature_K(self) -> float:
        """The current temperature, K."""
        return self._temperature_K

    @property
    def magnitude(self) -> float:
        """The current apparent magnitude (for the night-vision readouts)."""
        return self._magnitude

    @property
    def mired(self) -> float:
        """The current temperature in mired (1e6 / T)."""
        return float(temperature_to_mired(self._temperature_K))

    @property
    def colour(self) -> CurrentColour:
        """Renders of the current temperature (plain, at the magnitude, the brightness strip)."""
        return self._colour

    @property
    def plots(self) -> PlotData:
        """Plot and strip data for the current settings."""
        return self._plots

    @property
    def spectrum(self) -> PlanckCurve:
        """Planck curve of the current temperature over :attr:`spectrum_wavelength_nm`."""
        return self._spectrum

    @property
    def arriving(self) -> ArrivingCurve | None:
        """The current star's spectrum after dust and air, on the scale of :attr:`spectrum`
        (:func:`starkiln.engine.plotdata.plots.arriving_curve`); None with no path."""
        return self._arriving

    @property
    def extinction_mag(self) -> float | None:
        """Magnitudes (V) the path of the light takes from the current star: the render's
        ``extinction_mag``; None with no path."""
        e = self._colour.plain.extinction_mag
        return None if e is None else float(e)

    @property
    def airmass(self) -> float | None:
        """Airmass toward the settings' altitude ([KastenYoung1989] eq. 3, through
        :func:`starkiln.engine.path.atmosphere.airmass_kasten_young`); None without air."""
        alt = self._settings.altitude_deg
        return None if alt is None else float(airmass_kasten_young(alt))

    @property
    def slider_position(self) -> int:
        """The slider position of the current temperature (clipped to the slider's ends)."""
        return self._position

    @property
    def slider_fraction(self) -> float:
        """Where the current temperature lies along the slider, 0..1 (clipped)."""
        return self._fraction

    @property
    def monitor(self) -> Display:
        """The monitor the window paints on (the swatches' colours are for it)."""
        return self._monitor

    def monitor_clipped_count(self) -> int:
        """How many swatches the monitor cannot show: the current and night swatches, the
        magnitude strip's and the temperature strip's cells, clipped by the monitor."""
        c, p = self._colour, self._plots
        return int(c.monitor_clipped) + int(c.monitor_dimmed_clipped) + \
            int(np.count_nonzero(c.monitor_ladder_clipped)) + \
            int(np.count_nonzero(p.strip_monitor_clipped))

    def monitor_status(self) -> str:
        """Status-bar text: which monitor, how it was found, and how many swatches it clips."""
        name = MONITOR_LABELS.get(self._monitor.name, self._monitor.name)
        n = self.monitor_clipped_count()
        clipped = ("no swatch clipped" if n == 0 else
                   f"{n} swatch{'es' if n != 1 else ''} clipped for this monitor (marked)")
        return f"monitor: {name} ({self._monitor_source}) \u00b7 {clipped}"

    def set_monitor(self, monitor: Display, source: str, origin: str = "monitor") -> None:
        """Paint for ``monitor`` from now on (``source``: how it was found, for the status)."""
        if not isinstance(monitor, Display) or monitor.kind != "display":
            exc = StarkilnError(f"monitor {monitor!r} is not a display; accepted: a display "
                                "preset or a .json display profile")
            self._report(origin, exc)
            raise exc
        if monitor == self._monitor and source == self._monitor_source:
            return
        self._monitor, self._monitor_source = monitor, str(source)
        self._colour = self._colour_for(self._settings, self._temperature_K, self._magnitude)
        self._plots = self._plots_for(self._settings)
        self.events.monitor.emit(origin, monitor)
        self.events.plots.emit(origin, self._plots)

    # -- dark-room viewing --------------------------------------------------------------------
    @property
    def viewing_level(self) -> float:
        """The fraction (0.02-1) of the monitor's white every colour patch is dimmed to."""
        return self._viewing_level

    def dome_viewing_level(self) -> float:
        """The viewing level that shows a full-intensity star at the chosen display's
        luminance (:func:`starkiln.engine.colour.viewing.dome_viewing_level`)."""
        return dome_viewing_level(self._settings.display)

    def set_viewing_level(self, level, origin: str = "viewing") -> None:
        """Dim every colour patch to ``level`` of the monitor's white (StarkilnError if the
        engine rejects it)."""
        try:
            v = check_viewing_level(level)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        if v == self._viewing_level:
            return
        self._viewing_level = v
        self._colour = self._colour_for(self._settings, self._temperature_K, self._magnitude)
        self._plots = self._plots_for(self._settings)
        self.events.viewing.emit(origin, v)
        self.events.plots.emit(origin, self._plots)

    def surround_rgb_8bit(self, surround: str):
        """The monitor's 8-bit colour of the surround ``none``/``grey``/``black`` at the viewing
        level (:func:`starkiln.engine.colour.viewing.surround_rgb_8bit`; None for ``none``)."""
        return surround_rgb_8bit(surround, self._viewing_level, self._monitor)

    @property
    def strip_cell(self) -> int:
        """Index of the temperature strip's cell holding the current temperature."""
        return min(int(self._fraction * STRIP_CELLS), STRIP_CELLS - 1)

    # -- change --------------------------------------------------------------------------------
    def set_temperature(self, temperature_K, origin: str = "") -> None:
        """Make ``temperature_K`` current (StarkilnError if the engine rejects it)."""
        try:
            t = float(check_temperature(temperature_K))
            if t == self._temperature_K:
                return
            colour = self._colour_for(self._settings, t, self._magnitude)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self._place(t, None, colour)
        self.events.temperature.emit(origin, t)

    def set_slider_position(self, position: int, origin: str = "slider") -> None:
        """Make the temperature of slider ``position`` current (looked up when the table is ready).

        Nothing happens when the model is at that position already (a slider
        that was just moved to show the model's temperature sets it back).
        """
        p = int(position)
        if p == self._position:
            return
        if not 0 <= p <= self.slider_scale.steps:
            exc = InputRangeError(f"slider position {p} is outside 0-{self.slider_scale.steps}")
            self._report(origin, exc)
            raise exc
        t = float(self._slider_temperature_K[p])
        if self.table_ready:
            colour = self._colour_from_table(p)
        else:
            try:
                colour = self._colour_for(self._settings, t, self._magnitude)
            except StarkilnError as exc:
                self._report(origin, exc)
                raise
        self._place(t, p, colour)
        self.events.temperature.emit(origin, t)

    @property
    def index_model(self) -> str:
        """How B-V and spectral classes become temperatures: ``synthetic`` or ``relation``."""
        return self._index_model

    def set_index_model(self, model: str) -> None:
        """Choose the colour-index model for the next B-V or class (the engine validates)."""
        self._index_model = check_index_model(model)

    def set_temperature_from_bv(self, bv, origin: str = "bv") -> None:
        """Temperature from a Johnson B-V colour index, by :attr:`index_model` (via the engine:
        the colour-matched blackbody, or [Ballesteros2012] with ``relation``)."""
        try:
            t = float(temperature_from_index(bv, "B-V", self.index_model))
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self.set_temperature(t, origin)

    def set_temperature_from_class(self, spectral_class: str, origin: str = "class") -> None:
        """Temperature of a main-sequence spectral class by :attr:`index_model` (the blackbody
        of the class's mean B-V, or its effective temperature with ``relation``)."""
        try:
            t = float(temperature_for_spectral_class(spectral_class, self.index_model))
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self.set_temperature(t, origin)

    def set_magnitude(self, magnitude, origin: str = "") -> None:
        """Make ``magnitude`` current (StarkilnError when outside the engine's range)."""
        try:
            m = float(check_magnitude(magnitude))
            if m == self._magnitude:
                return
            colour = self._colour_for(self._settings, self._temperature_K, m)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self._magnitude = m
        self._colour = colour
        self._schedule_table()
        self.events.magnitude.emit(origin, m)

    def set_settings(self, settings: Settings, origin: str = "", merge: bool = False) -> None:
        """Replace the settings object; every view redraws (nothing happens if it is equal).

        ``merge``: the change joins the newest history entry while it stays open (the steps
        of one slider drag, :meth:`SettingsHistory.merge`), else opens a new one that may be
        joined; :meth:`end_merge` closes it.
        """
        try:
            if not isinstance(settings, Settings):
                raise StarkilnError(f"not a settings object: {settings!r}")
            if settings == self._settings:
                return
            colour = self._colour_for(settings, self._temperature_K, self._magnitude)
            plots = self._plots_for(settings)
            arriving = arriving_curve(settings, self._temperature_K,
                                      self.spectrum_wavelength_nm)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        before = self._settings
        self._settings, self._colour, self._plots = settings, colour, plots
        self._arriving = arriving
        self._schedule_table()
        entry, kind = None, "push"
        if origin not in (UNDO_ORIGIN, REDO_ORIGIN):
            entry = self.history.merge(before, settings) if merge else None
            if entry is None:
                entry = self.history.push(before, settings, open_merge=merge)
            else:
                kind = "merge"
        self.events.settings.emit(origin, settings)
        self.events.plots.emit(origin, plots)
        if entry is not None:
            self.events.history.emit(origin, HistoryChange(kind, entry))

    def end_merge(self) -> None:
        """The next settings change is an undo step of its own (a slider drag ended)."""
        self.history.close_merge()

    # -- undo ----------------------------------------------------------------------------------
    def undo(self) -> bool:
        """Go back to the settings before the newest change; False if there is none."""
        if not self.history.can_undo:
            return False
        entry = self.history._undo[-1]
        self.set_settings(entry.before, UNDO_ORIGIN)  # may raise: the entry stays then
        self.history.take_undo()
        self.events.history.emit(UNDO_ORIGIN, HistoryChange("undo", entry))
        return True

    def redo(self) -> bool:
        """Make the newest undone change again; False if there is none."""
        if not self.history.can_redo:
            return False
        entry = self.history._redo[-1]
        self.set_settings(entry.after, REDO_ORIGIN)
        self.history.take_redo()
        self.events.history.emit(REDO_ORIGIN, HistoryChange("redo", entry))
        return True

    def clear_history(self) -> None:
        """Forget every change (undo and redo)."""
        self.history.clear()
        self.events.history.emit("", HistoryChange("clear", None))

    def change(self, origin: str = "", merge: bool = False, **fields) -> None:
        """Change some settings fields (validated by :meth:`Settings.replace`); ``merge`` as
        in :meth:`set_settings`."""
        try:
            settings = self._settings.replace(**fields)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self.set_settings(settings, origin, merge)

    def change_display(self, origin: str = "", **fields) -> None:
        """Change some fields of the current display (name, primaries, transfer, peak...)."""
        try:
            display = dataclasses.replace(self._settings.display, **fields)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self.change(origin, display=display)

    def open_display_profile(self, path, origin: str = "display") -> None:
        """Use the display of a JSON display profile (StarkilnError naming the file)."""
        try:
            display = load_display_profile(path)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self.change(origin, display=display)

    def load_settings_file(self, path, origin: str = "file") -> None:
        """Use the settings of a TOML settings file (StarkilnError naming the file and key)."""
        try:
            settings = load_settings(path)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self.set_settings(settings, origin)

    def save_settings_file(self, path) -> None:
        """Write the current settings as TOML, atomically (StarkilnError or OSError)."""
        save_settings(self._settings, path)

    def settings_toml(self) -> str:
        """The current settings as TOML text."""
        return settings_to_toml(self._settings)

    def reset_settings(self, origin: str = "file") -> None:
        """Back to the engine's default settings."""
        self.set_settings(Settings(), origin)

    # -- pins ----------------------------------------------------------------------------------
    @property
    def pins(self) -> tuple[Pin, ...]:
        """The pinned settings, oldest first (at most :data:`MAX_PINS`)."""
        return tuple(self._pins)

    def pin_current(self, label: str = "", origin: str = "pin") -> Pin:
        """Pin the current settings (StarkilnError when :data:`MAX_PINS` are pinned already)."""
        return self.pin_settings(self._settings, label, origin=origin)

    def pin_settings(self, settings: Settings, label: str = "", role: str = "",
                     origin: str = "pin") -> Pin:
        """Pin ``settings`` (StarkilnError when no room is left; nothing changes then)."""
        if not isinstance(settings, Settings):
            exc = StarkilnError(f"not a settings object: {settings!r}")
            self._report(origin, exc)
            raise exc
        if len(self._pins) >= MAX_PINS:
            exc = StarkilnError(f"{MAX_PINS} settings are pinned already; accepted: at most "
                                f"{MAX_PINS} (unpin one first)")
            self._report(origin, exc)
            raise exc
        pin = Pin(settings, label or settings_words(settings), role)
        self._pins.append(pin)
        self.events.pins.emit(origin, self.pins)
        return pin

    def unpin(self, index: int, origin: str = "pin") -> None:
        """Remove pin ``index`` (StarkilnError if there is no such pin)."""
        if not 0 <= int(index) < len(self._pins):
            exc = InputRangeError(f"pin {index} does not exist; accepted: 0-{len(self._pins) - 1}"
                                  if self._pins else f"pin {index} does not exist; none pinned")
            self._report(origin, exc)
            raise exc
        del self._pins[int(index)]
        self.events.pins.emit(origin, self.pins)

    def clear_pins(self, origin: str = "pin") -> None:
        """Remove every pin."""
        if self._pins:
            self._pins.clear()
            self.events.pins.emit(origin, self.pins)

    def load_ab(self, path_a, path_b, origin: str = "ab") -> tuple[Pin, Pin]:
        """Pin two settings files as the A/B pair (replacing an earlier pair).

        Both files are read first; a file the engine rejects, or no room for two pins, raises
        StarkilnError (naming the file) and leaves the pins as they were.
        """
        try:
            loaded = [load_settings(p) for p in (path_a, path_b)]
            kept = [p for p in self._pins if p.role not in AB_ROLES]
            if len(kept) + 2 > MAX_PINS:
                raise StarkilnError(f"A/B needs two of the {MAX_PINS} pins and "
                                    f"{len(kept)} are taken; accepted: unpin "
                                    f"{len(kept) + 2 - MAX_PINS} first")
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        pair = tuple(Pin(s, f"{role}: {Path(p).name}", role)
                     for s, p, role in zip(loaded, (path_a, path_b), AB_ROLES))
        self._pins = kept + list(pair)
        self.events.pins.emit(origin, self.pins)
        return pair

    def ab_pin(self, role: str) -> Pin | None:
        """The A or B pin, if an A/B pair is loaded."""
        return next((p for p in self._pins if p.role == role), None)

    def flip_ab(self, origin: str = "ab") -> str:
        """Show the A/B pair's other settings in the main view: B when A is shown, else A.
        Returns the role now shown (StarkilnError when no pair is loaded)."""
        a, b = self.ab_pin("A"), self.ab_pin("B")
        if a is None or b is None:
            exc = StarkilnError("no A/B pair is loaded; accepted: Compare A/B with two "
                                "settings files first")
            self._report(origin, exc)
            raise exc
        role, pin = ("B", b) if self._settings == a.settings else ("A", a)
        self.set_settings(pin.settings, origin)
        return role

    def pin_strips(self, at_magnitude: bool = False) -> list[PinStrip]:
        """Every pin's strip (kept until the monitor, viewing level or magnitude changes).

        ``at_magnitude``: the colours at the current magnitude (night vision, dimmed), else
        full colour.
        """
        m = self._magnitude if at_magnitude else None
        out = []
        for pin in self._pins:
            key = (pin.settings, self._monitor, self._viewing_level, m)
            strip = self._pin_strips.get(key)
            if strip is None:
                strip = self._pin_strip(pin, m)
                if len(self._pin_strips) > 4 * MAX_PINS:
                    self._pin_strips.clear()
                self._pin_strips[key] = strip
            elif strip.pin != pin:
                strip = dataclasses.replace(strip, pin=pin)
            out.append(strip)
        return out

    def _pin_strip(self, pin: Pin, magnitude: float | None) -> PinStrip:
        t = np.asarray(PIN_TEMPERATURES_K)
        r = render(pin.settings, t) if magnitude is None else render(pin.settings, t, magnitude)
        dimmed = magnitude is not None
        m8, mc = rendered_on_monitor(r, self._monitor, dimmed=dimmed,
                                     viewing_level=self._viewing_level)
        encoded = r.rgb_dimmed_encoded if dimmed else r.rgb_encoded
        return PinStrip(pin=pin, temperature_K=t, magnitude=magnitude, rendered=r,
                        rgb_8bit=to_8bit(encoded), hex=to_hex(encoded),
                        monitor_rgb_8bit=m8, monitor_clipped=mc)

    # -- the command line --------------------------------------------------------------------
    def command_line(self, profile_dir=None) -> str:
        """The ``starkiln colour`` command that prints the current render (at the current
        magnitude: its text output shows the full colour and the colour at the magnitude, its
        ``--json`` output the latter); :func:`starkiln.cli.options.command_line_for`.

        A display that is not a preset is saved, atomically, as a JSON display profile named by
        its content (``display-<hash>.json``) in ``profile_dir`` and the command points to it
        (StarkilnError without a ``profile_dir`` then).
        """
        import hashlib
        import json as _json

        from starkiln.cli.options import command_line_for
        from starkiln.engine.colour.displays import PRESETS, WORKING_SPACES, save_display_profile

        s = self._settings
        profile = None
        if {**PRESETS, **WORKING_SPACES}.get(s.display.name) != s.display:
            if profile_dir is None:
                raise StarkilnError(f"display {s.display.name!r} is not a preset; accepted: a "
                                    "folder to save its display profile in")
            text = _json.dumps(s.display.to_profile(), sort_keys=True)
            digest = hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]
            profile = Path(profile_dir) / f"display-{digest}.json"
            if not profile.exists():
                Path(profile_dir).mkdir(parents=True, exist_ok=True)
                save_display_profile(s.display, profile, overwrite=True)
        return command_line_for(s, self._temperature_K, self._magnitude,
                                display_profile=profile)

    # -- demo sky ------------------------------------------------------------------------------
    @property
    def cluster(self) -> Cluster | None:
        """The invented demo cluster (read once), or None if it cannot be read."""
        if self._cluster is None and self._cluster_error is None:
            try:
                self._cluster = load_demo_cluster()
            except StarkilnError as exc:
                self._cluster_error = str(exc)
        return self._cluster

    @property
    def cluster_error(self) -> str:
        """Why the demo cluster could not be read ("" if it could)."""
        return "" if self.cluster is not None else (self._cluster_error or "")

    def sky_image(self, width_px: int, height_px: int) -> SkyImage:
        """The demo cluster drawn with the current settings (the last picture is kept).

        Raises StarkilnError when there is no cluster or the size is not accepted.
        """
        cluster = self.cluster
        if cluster is None:
            raise StarkilnError(self._cluster_error)
        key = (self._settings, self._monitor, self._viewing_level, int(width_px),
               int(height_px))
        if self._sky is None or self._sky[0] != key:
            self._sky = (key, sky_image(self._settings, cluster, width_px, height_px,
                                        monitor=self._monitor,
                                        viewing_level=self._viewing_level))
        return self._sky[1]

    def pick_star(self, index: int, origin: str = "sky") -> None:
        """Audition star ``index`` of the demo cluster: its temperature and magnitude.

        A magnitude the engine does not accept is reported on ``events.rejected``
        and the star's temperature stands.
        """
        c = self.cluster
        self.set_temperature(float(c.temperature_K[index]), origin)
        try:
            self.set_magnitude(float(c.magnitude[index]), origin)
        except StarkilnError:
            pass

    # -- a catalogue in the sky panel ----------------------------------------------------------
    @property
    def star_table(self) -> StarTable | None:
        """The catalogue loaded for the sky panel, or None (the demo cluster is shown)."""
        return self._stars

    def load_star_table(self, path, choice: ColumnChoice | None = None,
                        origin: str = "stars") -> StarTable:
        """Load a catalogue file for the sky panel (the columns ``choice`` names, the rest
        proposed by :func:`starkiln.engine.plates.preview.guess_columns`).

        A file the engine refuses is reported on ``events.rejected`` and raised again; the
        catalogue shown before stays.
        """
        try:
            table = load_star_table(path, choice)
        except StarkilnError as exc:
            self._report(origin, exc)
            raise
        self._stars = table
        self.events.stars.emit(origin, table)
        return table

    def clear_star_table(self, origin: str = "stars") -> None:
        """Back to the demo cluster in the sky panel."""
        if self._stars is not None:
            self._stars = None
            self.events.stars.emit(origin, None)

    def star_plate(self, spec, settings: Settings | None = None, psf_sigma_px: float = 0.7,
                   should_stop=None, frame=None) -> "StarPlate | None":
        """The loaded catalogue drawn into a plate of ``spec`` with ``settings`` (default the
        current ones), by the plate command's drawing
        (:func:`starkiln.engine.plates.preview.preview_plate`).

        Reads only what it is given and the loaded table (both immutable), so a worker thread
        may call it; None if ``should_stop`` stopped it. StarkilnError without a catalogue.
        """
        table = self._stars
        if table is None:
            raise StarkilnError("no catalogue is loaded; accepted: Load\u2026 one in the sky panel first")
        settings = self._settings if settings is None else settings
        drawn = preview_plate(settings, table, spec, psf_sigma_px, should_stop=should_stop,
                              frame=frame)
        if drawn is None:
            return None
        return StarPlate(settings, table, spec, drawn[0], drawn[1])

    def star_plate_rgb_8bit(self, plate: "StarPlate") -> np.ndarray:
        """What the panel paints of a plate: its display values on the monitor at the viewing
        level (:func:`starkiln.engine.plates.preview.plate_on_monitor`)."""
        return plate_on_monitor(plate.image, plate.settings.display, self._monitor,
                                self._viewing_level)

    # -- slider table --------------------------------------------------------------------------
    @property
    def slider_temperature_K(self) -> np.ndarray:
        """Temperatures of the slider's positions, K (read-only view)."""
        view = self._slider_temperature_K.view()
        view.flags.writeable = False
        return view

    @property
    def slider_table(self) -> SliderTable | None:
        """The renders of every slider position, if built."""
        return self._table

    @property
    def table_ready(self) -> bool:
        """Whether slider steps are looked up (the table matches the settings and magnitude)."""
        t = self._table
        return t is not None and t.settings is self._settings and t.magnitude == self._magnitude

    def use_slider_table(self, on: bool) -> None:
        """Turn the slider table on (default) or off (each step rendered directly; benchmarks)."""
        self._table_on = bool(on)
        self._table = None
        self._schedule_table()

    def build_table(self) -> None:
        """Render every slider position now (normally run through the ``idle`` hook)."""
        if self.table_ready or not self._table_on:
            return
        s, t = self._settings, self._slider_temperature_K
        plain = render(s, t)
        mags = np.concatenate([[self._magnitude], magnitude_ladder(s)])
        night = render(s, t[:, None], mags[None, :])
        self._table = SliderTable(s, self._magnitude, t, plain, night)

    # -- inside --------------------------------------------------------------------------------
    def _schedule_table(self) -> None:
        if self._idle is not None and self._table_on and not self.table_ready:
            self._idle(self.build_table)

    def _report(self, origin: str, exc: StarkilnError) -> None:
        self.events.rejected.emit(origin, exc)

    def _place(self, t: float, position: int | None, colour: CurrentColour) -> None:
        """Commit a new temperature: its colour, spectrum and slider position."""
        spectrum = planck_curve(t, self.spectrum_wavelength_nm)
        self._arriving = arriving_curve(self._settings, t, self.spectrum_wavelength_nm)
        if position is None:
            self._fraction = float(self.slider_scale.fraction_of(t))
            self._position = int(round(self._fraction * self.slider_scale.steps))
        else:
            self._position = position
            self._fraction = position / self.slider_scale.steps
        self._temperature_K, self._colour, self._spectrum = t, colour, spectrum

    def _colour_from_table(self, position: int) -> CurrentColour:
        table = self._table
        return _current_colour(float(table.temperature_K[position]), table.magnitude,
                               table.plain.take(position), table.night.take(position),
                               magnitude_ladder(table.settings), self._monitor,
                               self._viewing_level)

    def _colour_for(self, settings: Settings, t: float, magnitude: float) -> CurrentColour:
        mags = magnitude_ladder(settings)
        plain = render(settings, t)
        # one call: the current magnitude first, then the strip's magnitudes
        both = render(settings, np.full(mags.size + 1, t), np.concatenate([[magnitude], mags]))
        return _current_colour(t, magnitude, plain, both, mags, self._monitor,
                               self._viewing_level)

    def _plots_for(self, settings: Settings) -> PlotData:
        strip = render(settings, self._strip_temperature_K)
        band = spectral_band_colours(settings)
        level = self._viewing_level
        strip_8bit, strip_clipped = rendered_on_monitor(strip, self._monitor,
                                                        viewing_level=level)
        return PlotData(settings=settings, band=band,
                        overlays=efficiency_overlays(settings.observer),
                        diagram=chromaticity_diagram(settings),
                        strip_temperature_K=self._strip_temperature_K, strip=strip,
                        strip_rgb_8bit=to_8bit(strip.rgb_encoded), strip_hex=strip.hex(),
                        monitor=self._monitor, strip_monitor_rgb_8bit=strip_8bit,
                        strip_monitor_clipped=strip_clipped,
                        band_monitor_rgb_8bit=monitor_rgb_8bit(band.rgb_linear, settings.display,
                                                               self._monitor, level)[0])


def _current_colour(t: float, magnitude: float, plain: Rendered, both: Rendered,
                    mags: np.ndarray, monitor: Display,
                    viewing_level: float = 1.0) -> CurrentColour:
    """``both`` holds the render at ``magnitude`` first, then at each of ``mags``."""
    at = both.take(0)
    ladder = both.take(slice(1, None))
    m8, mc = rendered_on_monitor(plain, monitor, viewing_level=viewing_level)
    d8, dc = rendered_on_monitor(at, monitor, dimmed=True, viewing_level=viewing_level)
    l8, lc = rendered_on_monitor(ladder, monitor, dimmed=True, viewing_level=viewing_level)
    return CurrentColour(
        temperature_K=t, magnitude=magnitude, plain=plain, at_magnitude=at,
        ladder_magnitudes=mags, ladder=ladder, rgb_8bit=to_8bit(plain.rgb_encoded),
        hex=str(plain.hex()), dimmed_rgb_8bit=to_8bit(at.rgb_dimmed_encoded),
        dimmed_hex=str(to_hex(at.rgb_dimmed_encoded)),
        ladder_rgb_8bit=to_8bit(ladder.rgb_dimmed_encoded), monitor_rgb_8bit=m8,
        monitor_clipped=bool(mc), monitor_dimmed_rgb_8bit=d8, monitor_dimmed_clipped=bool(dc),
        monitor_ladder_rgb_8bit=l8, monitor_ladder_clipped=lc)
