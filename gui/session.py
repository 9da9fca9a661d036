"""The window's state: one engine Settings object, the current temperature and magnitude.

A thin Qt wrapper: it validates through the engine, asks
:func:`starkiln.engine.pipeline.render.render` for the current colours, and tells the views. A
rejected change raises :class:`starkiln.engine.errors.StarkilnError` and leaves the last
good state in place.

Slider table: the temperature slider has a few thousand fixed positions. Soon
after the settings (or the magnitude) change, the session asks the render path
once for every position (one vectorised call, tens of milliseconds, in idle
time); a slider step then only looks its colours up. The numbers are the render
path's own (``render`` works element by element; an 8-bit check is in the
tests). Temperatures typed in, or steps before the table is ready, are
rendered directly.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from PySide6 import QtCore

from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.render import Rendered, render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars.temperature import check_temperature
from starkiln.engine.plotdata.plots import magnitude_ladder

DEFAULT_TEMPERATURE_K = 5772.0  # the Sun's nominal effective temperature (IAU 2015 Resolution B3)
DEFAULT_MAGNITUDE = 1.0


def check_magnitude(value) -> float:
    """A magnitude the engine accepts, as a float (starkiln.engine.eye.vision's range check)."""
    from starkiln.engine.eye.vision import check_magnitude as _check

    return float(_check(value))


def _row(r: Rendered, index) -> Rendered:
    """The part ``index`` of a render (see :meth:`starkiln.engine.pipeline.render.Rendered.take`)."""
    return r.take(index)


@dataclasses.dataclass(frozen=True)
class _Table:
    """Renders of every slider position for one settings object and magnitude."""

    settings: Settings
    magnitude: float
    temperature_K: np.ndarray
    plain: Rendered
    night: Rendered  # (positions, 1 + ladder): the current magnitude, then the ladder


class Session(QtCore.QObject):
    """Current settings, temperature and magnitude, and their rendered colours.

    Signals
    -------
    settings_changed() : a new Settings object was accepted.
    colour_changed(str) : the current colour changed; the argument names what moved
        (``"temperature"``, ``"magnitude"`` or ``"settings"``); the control that did
        it is in :attr:`source`.
    """

    settings_changed = QtCore.Signal()
    colour_changed = QtCore.Signal(str)

    def __init__(self, settings: Settings | None = None,
                 temperature_K: float = DEFAULT_TEMPERATURE_K,
                 magnitude: float = DEFAULT_MAGNITUDE, parent=None):
        super().__init__(parent)
        self._settings = settings if settings is not None else Settings()
        self._temperature_K = float(check_temperature(temperature_K))
        self._magnitude = check_magnitude(magnitude)
        self.source = ""
        self._positions: np.ndarray | None = None
        self._table: _Table | None = None
        self._table_off = False
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.build_table)
        self._render_all()

    # -- read ---------------------------------------------------------------------------
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
    def current(self) -> Rendered:
        """Render of the current temperature without a magnitude (the swatch colour)."""
        return self._current

    @property
    def at_magnitude(self) -> Rendered:
        """Render of the current temperature at the current magnitude."""
        return self._at_magnitude

    @property
    def ladder(self) -> tuple[np.ndarray, Rendered]:
        """Magnitudes of the brightness strip and their render."""
        return self._ladder

    @property
    def table_ready(self) -> bool:
        """Whether slider steps are looked up (the table matches the settings and magnitude)."""
        t = self._table
        return t is not None and t.settings is self._settings and t.magnitude == self._magnitude

    # -- change -------------------------------------------------------------------------
    def set_temperature(self, temperature_K, source: str = "", position: int | None = None) -> None:
        """Make ``temperature_K`` current (raises StarkilnError when the engine rejects it).

        ``position`` is the slider position the temperature came from, if any.
        """
        t = float(check_temperature(temperature_K))
        self._temperature_K = t
        self.source = source
        self._render_all(position)
        self.colour_changed.emit("temperature")

    def set_magnitude(self, magnitude, source: str = "") -> None:
        """Make ``magnitude`` current (raises StarkilnError when outside -30..+30)."""
        self._magnitude = check_magnitude(magnitude)
        self.source = source
        self._render_all()
        self._schedule_table()
        self.colour_changed.emit("magnitude")

    def set_settings(self, settings: Settings, source: str = "") -> None:
        """Replace the settings object; every view redraws."""
        if not isinstance(settings, Settings):
            raise StarkilnError(f"not a settings object: {settings!r}")
        old = (self._settings, self._current, self._at_magnitude, self._ladder)
        self._settings = settings
        try:
            self._render_all()
        except StarkilnError:
            self._settings, self._current, self._at_magnitude, self._ladder = old
            raise
        self.source = source
        self._schedule_table()
        self.settings_changed.emit()
        self.colour_changed.emit("settings")

    def change(self, source: str = "", **fields) -> None:
        """Change some settings fields (validated by the engine; raises StarkilnError)."""
        self.set_settings(self._settings.replace(**fields), source)

    # -- slider table -------------------------------------------------------------------
    def set_slider_temperatures(self, temperature_K: np.ndarray) -> None:
        """The temperatures of the slider's positions (the table is built for these)."""
        self._positions = np.asarray(temperature_K, dtype=np.float64)
        self._table = None
        self._schedule_table()

    def use_slider_table(self, on: bool) -> None:
        """Turn the slider table on (default) or off (each step rendered directly; benchmarks)."""
        self._table_off = not on
        self._table = None
        self._schedule_table()

    def _schedule_table(self) -> None:
        if self._positions is not None:
            self._timer.start()

    def build_table(self) -> None:
        """Render every slider position now (normally done in idle time)."""
        if self._positions is None or self.table_ready or self._table_off:
            return
        s, t = self._settings, self._positions
        plain = render(s, t)
        mags = np.concatenate([[self._magnitude], magnitude_ladder(s)])
        night = render(s, t[:, None], mags[None, :])
        self._table = _Table(s, self._magnitude, t, plain, night)

    def _render_all(self, position: int | None = None) -> None:
        s, t = self._settings, self._temperature_K
        mags = magnitude_ladder(s)
        table = self._table
        if (position is not None and self.table_ready and 0 <= position < table.temperature_K.size
                and table.temperature_K[position] == t):
            self._current = _row(table.plain, position)
            both = _row(table.night, position)
            self._at_magnitude = _row(both, 0)
            self._ladder = (mags, _row(both, slice(1, None)))
            return
        self._current = render(s, t)
        # one call: the current magnitude first, then the strip's magnitudes
        both = render(s, np.full(mags.size + 1, t), np.concatenate([[self._magnitude], mags]))
        self._at_magnitude = _row(both, 0)
        self._ladder = (mags, _row(both, slice(1, None)))
