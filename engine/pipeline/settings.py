"""The one settings object, validated and immutable, and its TOML form.

Every output path receives a :class:`Settings`; nothing else carries colour
options. TOML layout (``starkiln_settings`` is the format version)::

    starkiln_settings = 1
    observer = "cie1931"
    scene_white = "D65"
    adaptation = "bradford"
    gamut = "chroma"
    normalisation = "max-channel"
    luminance_Y = 0.5
    vision = "mesopic"         # night-vision fields: see the class docstring
    pupil_mm = 7.0
    # aperture_mm = 250.0      # absent = naked eye
    transmission = 1.0
    blur_spot_arcmin = 6.0
    intensity_curve = "asinh"
    magnitude_bright = -1.5
    magnitude_faint = 6.5
    night_tint = 0.0
    compensate = false

    [display]            # or: display = "srgb"  (a preset name)
    name = "srgb"
    red_xy = [0.64, 0.33]
    green_xy = [0.3, 0.6]
    blue_xy = [0.15, 0.06]
    white_xy = [0.3127, 0.329]
    transfer = "srgb"
    gamma = 2.2
    peak_luminance_cd_m2 = 80.0

Reading uses the standard library's ``tomllib`` (TOML 1.0); writing uses
``tomli-w``. Files are written atomically.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from starkiln.engine.colour.displays import PRESETS, Display, get_display
from starkiln.engine.errors import SettingsError, finite_number
from starkiln.engine.colour.gamut import check_gamut_method
from starkiln.engine.colour.observers import check_observer
from starkiln.engine.eye.vision import INTENSITY_CURVES, VISIONS
from starkiln.engine.colour.whites import check_adaptation, normalise_white_spec

SETTINGS_FORMAT = 1
NORMALISATIONS = ("max-channel", "luminance")


def _bounded(value, name: str, lo: float, hi: float, lo_open: bool = False) -> float:
    """A finite float within [lo, hi] (or (lo, hi] if ``lo_open``), else a one-line SettingsError."""
    v = finite_number(value, name)
    ok = (v > lo if lo_open else v >= lo) and v <= hi
    if not ok:
        rng = f"{lo:g} < {name} <= {hi:g}" if lo_open else f"{lo:g} <= {name} <= {hi:g}"
        raise SettingsError(f"{name} {v:g} is outside the accepted range {rng}")
    return v


@dataclass(frozen=True)
class Settings:
    """Validated, immutable colour settings (hashable; use :meth:`replace` to change).

    Attributes
    ----------
    observer : ``cie1931`` (default) or ``cie1964`` ([CIE15]).
    scene_white : what should look neutral; see :mod:`starkiln.engine.colour.whites`.
    adaptation : ``bradford`` (default), ``cat16``, ``cat02``, ``von-kries``, ``none``.
    display : a :class:`starkiln.engine.colour.displays.Display` (preset or custom profile).
    gamut : ``clip``, ``scale`` or ``chroma`` (default); see :mod:`starkiln.engine.colour.gamut`.
    normalisation : ``max-channel`` (default: the largest linear channel is 1)
        or ``luminance`` (every star at relative luminance ``luminance_Y``).
    luminance_Y : relative luminance used by ``luminance`` normalisation, (0, 1].

    Night vision (used only when magnitudes are rendered; see :mod:`starkiln.engine.eye.vision`):

    vision : ``mesopic`` (default, [CIE191] cone weight and desaturation) or
        ``none`` (the camera look: full colour).
    pupil_mm : dark-adapted pupil diameter, 7 mm (common practice), 1-9.
    aperture_mm : instrument aperture in mm, or None for the naked eye.
    transmission : instrument transmission, 0 < tau <= 1 (used with an aperture).
    blur_spot_arcmin : diameter of the effective star image, 0.1-60 arcmin (default 6).
    intensity_curve : ``asinh`` (default), ``log`` or ``linear``.
    magnitude_bright, magnitude_faint : magnitudes mapped to intensity 1 and 0.
    night_tint : 0 (neutral, default) to 1: cool tint of the colourless night percept
        (a rendering convention, not physics).
    compensate : pre-boost chroma for viewing on a dark dome at the display's peak luminance.
    """

    observer: str = "cie1931"
    scene_white: str = "D65"
    adaptation: str = "bradford"
    display: Display = field(default_factory=lambda: PRESETS["srgb"])
    gamut: str = "chroma"
    normalisation: str = "max-channel"
    luminance_Y: float = 0.5
    vision: str = "mesopic"
    pupil_mm: float = 7.0
    aperture_mm: float | None = None
    transmission: float = 1.0
    blur_spot_arcmin: float = 6.0
    intensity_curve: str = "asinh"
    magnitude_bright: float = -1.5
    magnitude_faint: float = 6.5
    night_tint: float = 0.0
    compensate: bool = False

    def __post_init__(self):
        object.__setattr__(self, "observer", check_observer(self.observer))
        object.__setattr__(self, "scene_white", normalise_white_spec(self.scene_white))
        object.__setattr__(self, "adaptation", check_adaptation(self.adaptation))
        object.__setattr__(self, "display", get_display(self.display))
        object.__setattr__(self, "gamut", check_gamut_method(self.gamut))
        norm = str(self.normalisation).strip().lower()
        if norm not in NORMALISATIONS:
            raise SettingsError(f"unknown normalisation {self.normalisation!r}; accepted: "
                                f"{', '.join(NORMALISATIONS)}")
        object.__setattr__(self, "normalisation", norm)
        try:
            y = float(self.luminance_Y)
        except (TypeError, ValueError):
            raise SettingsError(f"luminance_Y {self.luminance_Y!r} is not a number; accepted: "
                                "0 < luminance_Y <= 1") from None
        if not 0.0 < y <= 1.0:
            raise SettingsError(f"luminance_Y {y:g} is outside the accepted range 0 < Y <= 1")
        object.__setattr__(self, "luminance_Y", y)
        self._check_vision()

    def _check_vision(self):
        """Validate the night-vision fields (ranges in the class docstring)."""
        choice = {"vision": VISIONS, "intensity_curve": INTENSITY_CURVES}
        for name, accepted in choice.items():
            v = str(getattr(self, name)).strip().lower()
            if v not in accepted:
                raise SettingsError(f"unknown {name} {getattr(self, name)!r}; accepted: "
                                    f"{', '.join(accepted)}")
            object.__setattr__(self, name, v)
        set_ = object.__setattr__
        set_(self, "pupil_mm", _bounded(self.pupil_mm, "pupil_mm", 1.0, 9.0))
        if self.aperture_mm is not None:
            set_(self, "aperture_mm", _bounded(self.aperture_mm, "aperture_mm", 0.0, 100000.0,
                                               lo_open=True))
        set_(self, "transmission", _bounded(self.transmission, "transmission", 0.0, 1.0,
                                            lo_open=True))
        set_(self, "blur_spot_arcmin", _bounded(self.blur_spot_arcmin, "blur_spot_arcmin",
                                                0.1, 60.0))
        set_(self, "magnitude_bright", _bounded(self.magnitude_bright, "magnitude_bright",
                                                -30.0, 30.0))
        set_(self, "magnitude_faint", _bounded(self.magnitude_faint, "magnitude_faint",
                                               -30.0, 30.0))
        if not self.magnitude_faint > self.magnitude_bright:
            raise SettingsError(f"magnitude_faint {self.magnitude_faint:g} must be fainter "
                                f"(larger) than magnitude_bright {self.magnitude_bright:g}")
        set_(self, "night_tint", _bounded(self.night_tint, "night_tint", 0.0, 1.0))
        if not isinstance(self.compensate, (bool, np.bool_)):
            raise SettingsError(f"compensate {self.compensate!r} must be true or false")
        set_(self, "compensate", bool(self.compensate))

    def replace(self, **changes) -> "Settings":
        """A copy with some fields changed, validated again."""
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict:
        """Plain-data form (the TOML and JSON-metadata form), with the display in full."""
        d = {"starkiln_settings": SETTINGS_FORMAT}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if isinstance(v, Display):
                v = {k: (list(x) if isinstance(x, tuple) else x)
                     for k, x in dataclasses.asdict(v).items()}
            if v is None:
                continue  # TOML has no null: an absent key means the default (None)
            d[f.name] = v
        return d

    @classmethod
    def from_dict(cls, data: dict, source: str = "settings") -> "Settings":
        """Build validated settings from the plain-data form; errors name ``source`` and the key."""
        if not isinstance(data, dict):
            raise SettingsError(f"{source}: settings must be a table of keys")
        version = data.get("starkiln_settings", SETTINGS_FORMAT)
        if version != SETTINGS_FORMAT:
            raise SettingsError(f"{source}: starkiln_settings = {version!r} is not supported; "
                                f"accepted: {SETTINGS_FORMAT}")
        names = {f.name for f in dataclasses.fields(cls)}
        kwargs = {}
        for key, value in data.items():
            if key == "starkiln_settings":
                continue
            if key not in names:
                raise SettingsError(f"{source}: unknown key {key!r}; accepted: "
                                    f"{', '.join(sorted(names))}")
            if key == "display" and isinstance(value, dict):
                try:
                    value = Display(**{k: (tuple(v) if isinstance(v, list) else v)
                                       for k, v in value.items()})
                except TypeError as exc:
                    raise SettingsError(f"{source}: key 'display': {exc}") from None
                except SettingsError as exc:
                    raise SettingsError(f"{source}: key 'display': {exc}") from None
            kwargs[key] = value
        try:
            return cls(**kwargs)
        except SettingsError as exc:
            bad = next((k for k in kwargs if k in str(exc) or repr(kwargs[k]) in str(exc)), None)
            where = f"key {bad!r}: " if bad else ""
            raise SettingsError(f"{source}: {where}{exc}") from None


def load_settings(path) -> Settings:
    """Read settings from a TOML file (format in the module docstring; TOML 1.0)."""
    import tomllib

    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise SettingsError(f"{path}: cannot read settings file ({exc.strerror})") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise SettingsError(f"{path}: not a valid TOML settings file ({exc})") from None
    return Settings.from_dict(data, str(path))


def settings_to_toml(settings: Settings) -> str:
    """The TOML text of a settings object (``tomli-w``)."""
    import tomli_w

    return tomli_w.dumps(settings.to_dict())


def save_settings(settings: Settings, path, overwrite: bool = True) -> None:
    """Write settings as TOML, atomically (temporary file in the same folder, then rename)."""
    from starkiln.engine.atomic import write_atomic

    write_atomic(path, settings_to_toml(settings).encode("utf-8"), overwrite=overwrite)
