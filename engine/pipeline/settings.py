"""The one settings object, validated and immutable, and its TOML form.

Every output path receives a :class:`Settings`; nothing else carries colour
options. TOML layout (``starkiln_settings`` is the format version)::

    starkiln_settings = 2
    observer = "cie1931"
    scene_white = "D65"
    adaptation = "bradford"
    gamut = "chroma"           # absent: the target's default (chroma; none for a working space)
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
    dust_ebv = 0.0             # the path of the light (format 2): see the class docstring
    dust_rv = 3.1
    dust_law = "G23"
    # altitude_deg = 30.0      # absent = no atmosphere
    site_height_m = 0.0
    aerosol_tau550 = 0.05
    angstrom_exponent = 1.3
    ozone_du = 300.0

    [display]            # or: display = "srgb"  (a preset name)
    name = "srgb"
    red_xy = [0.64, 0.33]
    green_xy = [0.3, 0.6]
    blue_xy = [0.15, 0.06]
    white_xy = [0.3127, 0.329]
    transfer = "srgb"     # or "table" with transfer_samples = [0.0, ..., 1.0]
    gamma = 2.2
    peak_luminance_cd_m2 = 80.0

Reading uses the standard library's ``tomllib`` (TOML 1.0); writing uses
``tomli-w``. Files are written atomically.

Gamut: ``gamut`` is the method asked for. Left out (or ``None`` from Python), it is the
target's default (:func:`starkiln.engine.colour.gamut.default_gamut_method`): ``chroma`` for a
display, as format 1 always meant, and ``none`` (no mapping, values outside 0-1 kept) for a
working space. A display target's file still says ``gamut = "chroma"`` (so files for displays
are unchanged); a working-space target's file names the gamut only when one was asked for.
``none`` is refused for a display.

Format 2 adds the path of the light (``dust_*``, ``altitude_deg``, ``site_height_m``,
``aerosol_tau550``, ``angstrom_exponent``, ``ozone_du``; :mod:`starkiln.engine.path`). Files
of format 1 are still read, each of those fields at its default (no dust, no atmosphere), so
they render exactly as before; a format-1 file that names one of the new keys is refused
(format 1 has no such key). Files are always written as format 2.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from starkiln.engine.colour.displays import PRESETS, Display, display_from_table, get_display
from starkiln.engine.errors import (SettingsError, finite_number, plain_type_name, read_text_file,
                                    shown_value)
from starkiln.engine.colour.gamut import NO_MAPPING, check_gamut_method, default_gamut_method
from starkiln.engine.colour.observers import check_observer
from starkiln.engine.eye.vision import INTENSITY_CURVES, VISIONS
from starkiln.engine.colour.whites import check_adaptation, normalise_white_spec

SETTINGS_FORMAT = 2
#: Every format this version reads (format 1: no path-of-light keys).
READABLE_FORMATS = (1, 2)
NORMALISATIONS = ("max-channel", "luminance")
#: Accepted instrument apertures and transmissions. With the pupil (1-9 mm), the blur spot
#: (0.1-60 arcmin) and magnitudes -30..+30, every image luminance within these bounds stays a
#: normal float64 (1e-30 to 1e30 cd/m2), so no output can hold NaN or infinity. A 1 mm
#: aperture is below any instrument; a transmission of 1e-4 is a dense solar filter.
APERTURE_RANGE_MM = (1.0, 100000.0)
TRANSMISSION_RANGE = (1e-4, 1.0)


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
    gamut : ``clip``, ``scale``, ``chroma`` or ``none`` (working spaces only); see
        :mod:`starkiln.engine.colour.gamut`. Not given (None): the target's default,
        ``chroma`` for a display, ``none`` for a working space. After validation it holds the
        method in effect; ``gamut_asked`` says whether it was asked for.
    normalisation : ``max-channel`` (default: the largest linear channel is 1)
        or ``luminance`` (every star at relative luminance ``luminance_Y``).
    luminance_Y : relative luminance used by ``luminance`` normalisation, (0, 1].

    Night vision (used only when magnitudes are rendered; see :mod:`starkiln.engine.eye.vision`):

    vision : ``mesopic`` (default, [CIE191] cone weight and desaturation) or
        ``none`` (the camera look: full colour).
    pupil_mm : dark-adapted pupil diameter, 7 mm (common practice), 1-9.
    aperture_mm : instrument aperture in mm, 1-100000, or None for the naked eye.
    transmission : instrument transmission, 0.0001 <= tau <= 1 (used with an aperture).
    blur_spot_arcmin : diameter of the effective star image, 0.1-60 arcmin (default 6).
    intensity_curve : ``asinh`` (default), ``log`` or ``linear``.
    magnitude_bright, magnitude_faint : magnitudes mapped to intensity 1 and 0.
    night_tint : 0 (neutral, default) to 1: cool tint of the colourless night percept
        (a rendering convention, not physics).
    compensate : pre-boost chroma for viewing on a dark dome at the display's peak luminance.

    The path of the light (:mod:`starkiln.engine.path`; none by default, and then every output
    is as without it):

    dust_ebv : interstellar colour excess E(B-V), mag, 0-10 (0: no dust).
    dust_rv : R_V = A_V / E(B-V), 3.1 by default, within the law's range
        (:func:`starkiln.engine.path.dust.rv_range`: G23 2.3-5.6, F99 and CCM89 2.0-6.0).
    dust_law : ``G23`` (default, [Gordon2023]), ``F99`` ([Fitzpatrick1999]) or ``CCM89``
        ([Cardelli1989]), through the dust-extinction package.
    altitude_deg : apparent altitude of the stars, 0 (horizon) to 90 (zenith) degrees, or None
        (default) for no atmosphere (the star as seen from outside the air).
    site_height_m : height of the site above sea level, m, -500 to 11000 (scales the
        Rayleigh depth by the pressure, [USSA1976]).
    aerosol_tau550 : aerosol optical depth at 550 nm, 0-5 (default 0.05, a clear site;
        common practice).
    angstrom_exponent : Angstrom exponent of the aerosol, -1 to 4 (default 1.3; common practice).
    ozone_du : ozone column, Dobson units, 0-1000 (default 300; common practice).
    """

    observer: str = "cie1931"
    scene_white: str = "D65"
    adaptation: str = "bradford"
    display: Display = field(default_factory=lambda: PRESETS["srgb"])
    gamut: str | None = None
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
    dust_ebv: float = 0.0
    dust_rv: float = 3.1
    dust_law: str = "G23"
    altitude_deg: float | None = None
    site_height_m: float = 0.0
    aerosol_tau550: float = 0.05
    angstrom_exponent: float = 1.3
    ozone_du: float = 300.0

    def __post_init__(self):
        for name in _TEXT_KEYS:
            value = getattr(self, name)
            if name == "gamut" and value is None:
                continue
            if not isinstance(value, str):
                raise SettingsError(f"{name} {shown_value(value)} is {plain_type_name(value)}; "
                                    "accepted: "
                                    f"{_EXAMPLES.get(name, 'text')}")
        object.__setattr__(self, "observer", check_observer(self.observer))
        object.__setattr__(self, "scene_white", normalise_white_spec(self.scene_white))
        object.__setattr__(self, "adaptation", check_adaptation(self.adaptation))
        object.__setattr__(self, "display", get_display(self.display))
        self._check_gamut()
        norm = str(self.normalisation).strip().lower()
        if norm not in NORMALISATIONS:
            raise SettingsError(f"unknown normalisation {self.normalisation!r}; accepted: "
                                f"{', '.join(NORMALISATIONS)}")
        object.__setattr__(self, "normalisation", norm)
        y = finite_number(self.luminance_Y, "luminance_Y")
        if not 0.0 < y <= 1.0:
            raise SettingsError(f"luminance_Y {y:g} is outside the accepted range 0 < Y <= 1")
        object.__setattr__(self, "luminance_Y", y)
        self._check_vision()
        self._check_path()

    def _check_path(self):
        """Validate the path-of-light fields (ranges in the class docstring)."""
        from starkiln.engine.path import atmosphere as atm
        from starkiln.engine.path import dust

        set_ = object.__setattr__
        set_(self, "dust_law", dust.check_dust_law(self.dust_law))
        set_(self, "dust_rv", dust.check_rv(self.dust_rv, self.dust_law))
        ebv = finite_number(self.dust_ebv, "dust_ebv")
        set_(self, "dust_ebv", float(dust.check_ebv(ebv)))
        if self.altitude_deg is not None:
            alt = finite_number(self.altitude_deg, "altitude_deg")
            set_(self, "altitude_deg", float(atm.check_altitude(alt)))
        set_(self, "site_height_m", _bounded(self.site_height_m, "site_height_m",
                                             *atm.SITE_HEIGHT_RANGE_M))
        set_(self, "aerosol_tau550", _bounded(self.aerosol_tau550, "aerosol_tau550",
                                              *atm.AEROSOL_TAU_RANGE))
        set_(self, "angstrom_exponent", _bounded(self.angstrom_exponent, "angstrom_exponent",
                                                 *atm.ANGSTROM_RANGE))
        set_(self, "ozone_du", _bounded(self.ozone_du, "ozone_du", *atm.OZONE_DU_RANGE))

    def _check_gamut(self):
        """Resolve ``gamut``: the target's default when None; ``none`` only for working spaces."""
        asked = self.gamut is not None
        if not asked:
            method = default_gamut_method(self.display)
        else:
            working = self.display.kind == "working-space"
            if str(self.gamut).strip().lower() == NO_MAPPING and not working:
                raise SettingsError(f"gamut 'none' keeps values outside 0-1, which display "
                                    f"{self.display.name!r} cannot show; accepted for a display: "
                                    "clip, scale, chroma ('none' is for working spaces)")
            method = check_gamut_method(self.gamut, allow_none=working)
        object.__setattr__(self, "gamut", method)
        object.__setattr__(self, "_gamut_asked", asked)

    @property
    def gamut_asked(self) -> bool:
        """Whether ``gamut`` was asked for (False: the target's default, which follows the
        target through :meth:`replace`). Not a field: settings that render alike are equal."""
        return self._gamut_asked

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
            set_(self, "aperture_mm", _bounded(self.aperture_mm, "aperture_mm", *APERTURE_RANGE_MM))
        set_(self, "transmission", _bounded(self.transmission, "transmission",
                                            *TRANSMISSION_RANGE))
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
        """A copy with some fields changed, validated again.

        A gamut that was not asked for stays the target's default, so changing the display
        to a working space drops the mapping, and back to a display brings ``chroma`` back.
        """
        if "gamut" not in changes and not self.gamut_asked:
            changes["gamut"] = None
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict:
        """Plain-data form (the TOML and JSON-metadata form), with the display in full."""
        d = {"starkiln_settings": SETTINGS_FORMAT}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if (f.name == "gamut" and not self.gamut_asked
                    and self.display.kind == "working-space"):
                continue  # the target's default: absent, so it follows the target on reading
            if isinstance(v, Display):
                v = {k: (list(x) if isinstance(x, tuple) else x)
                     for k, x in dataclasses.asdict(v).items()
                     if not (k == "kind" and x == "display")  # files of displays unchanged
                     and not (k == "transfer_samples" and not x)}
            if v is None:
                continue  # TOML has no null: an absent key means the default (None)
            d[f.name] = v
        return d

    @classmethod
    def from_dict(cls, data: dict, source: str = "settings", base_dir=None) -> "Settings":
        """Build validated settings from the plain-data form; errors name ``source`` and the key.

        Every key is checked for its kind first (text, a number that is not true/false,
        true/false, a display name or table), so a list or table where text is expected is
        a one-line :class:`SettingsError` naming the key, never a Python error.

        Parameters
        ----------
        data : dict
            Parsed TOML (or the ``settings`` object of embedded JSON metadata).
        source : str
            How messages name the file (``"look.toml"``).
        base_dir : path-like, optional
            Folder against which a relative display profile path is resolved (the settings
            file's own folder); default: the current folder.

        Returns
        -------
        Settings

        References
        ----------
        TOML 1.0 value kinds; the field ranges in the class docstring.
        """
        if not isinstance(data, dict):
            raise SettingsError(f"{source}: settings must be a table of keys; got "
                                f"{plain_type_name(data)}")
        version = data.get("starkiln_settings", SETTINGS_FORMAT)
        if (isinstance(version, bool) or not isinstance(version, int)
                or version not in READABLE_FORMATS):
            raise SettingsError(f"{source}: starkiln_settings = {shown_value(version)} is not "
                                "supported; "
                                f"accepted: {', '.join(map(str, READABLE_FORMATS))}")
        names = [f.name for f in dataclasses.fields(cls)]
        if version == 1:  # format 1 has no path of the light: those fields keep their defaults
            names = [n for n in names if n not in PATH_KEYS]
        kwargs = {}
        for key, value in data.items():
            if key == "starkiln_settings":
                continue
            if key not in names and key in PATH_KEYS:
                raise SettingsError(f"{source}: key {key!r} is not part of settings format 1; "
                                    "accepted: starkiln_settings = 2 for the path of the light")
            if key not in names:
                raise SettingsError(f"{source}: unknown key {key!r}; accepted: "
                                    f"{', '.join(sorted(names + ['starkiln_settings']))}")
            where = f"{source}: key {key!r}"
            kwargs[key] = _typed_value(key, value, where, base_dir)
        try:
            return cls(**kwargs)
        except SettingsError as exc:
            raise SettingsError(f"{source}: {_blame(cls, kwargs)}{exc}") from None


#: The kind of each settings key in a file: text, number or true/false (display: text or table).
_TEXT_KEYS = ("observer", "scene_white", "adaptation", "gamut", "normalisation", "vision",
              "intensity_curve", "dust_law")
_NUMBER_KEYS = ("luminance_Y", "pupil_mm", "aperture_mm", "transmission", "blur_spot_arcmin",
                "magnitude_bright", "magnitude_faint", "night_tint", "dust_ebv", "dust_rv",
                "altitude_deg", "site_height_m", "aerosol_tau550", "angstrom_exponent",
                "ozone_du")
#: The keys format 2 added: the path of the light.
PATH_KEYS = ("dust_ebv", "dust_rv", "dust_law", "altitude_deg", "site_height_m",
             "aerosol_tau550", "angstrom_exponent", "ozone_du")
_EXAMPLES = {"scene_white": "text such as 'D65' or 'xy:0.3127,0.3290'"}


def _typed_value(key: str, value, where: str, base_dir):
    """One value of a settings file checked for its kind (module docstring), else an error."""
    if key in _TEXT_KEYS:
        if not isinstance(value, str):
            raise SettingsError(f"{where}: {shown_value(value)} is {plain_type_name(value)}; "
                                "accepted: "
                                f"{_EXAMPLES.get(key, 'text')}")
        return value
    if key in _NUMBER_KEYS:
        return finite_number(value, f"{where}:", text=False)
    if key == "compensate":
        if not isinstance(value, bool):
            raise SettingsError(f"{where}: {shown_value(value)} is {plain_type_name(value)}; "
                                "accepted: "
                                "true or false")
        return value
    # display: a preset name, a profile path (relative to the settings file) or a table
    if isinstance(value, dict):
        return display_from_table(value, where)
    if not isinstance(value, str):
        raise SettingsError(f"{where}: {shown_value(value)} is {plain_type_name(value)}; "
                            "accepted: a "
                            f"preset name ({', '.join(PRESETS)}), a path to a .json profile or "
                            "a [display] table")
    if base_dir is not None and value.strip().lower() not in PRESETS:
        path = Path(value.strip()).expanduser()
        if not path.is_absolute():
            value = str(Path(base_dir) / path)
    try:
        return get_display(value)
    except SettingsError as exc:
        raise SettingsError(f"{where}: {exc}") from None


def _blame(cls, kwargs: dict) -> str:
    """``"key 'K': "`` for the key whose value alone fails validation, else ``""``."""
    pair = ("magnitude_bright", "magnitude_faint")
    for key, value in kwargs.items():
        alone = {k: kwargs[k] for k in pair if k in kwargs} if key in pair else {key: value}
        try:
            cls(**alone)
        except SettingsError:
            return f"key {key!r}: " if key not in pair else ""
    return ""


def load_settings(path) -> Settings:
    """Read settings from a TOML file (format in the module docstring; TOML 1.0).

    The file must be UTF-8 (TOML 1.0); a display profile path in it is read relative to the
    file's own folder. Every problem is a one-line :class:`SettingsError` naming the file.

    References
    ----------
    TOML 1.0 (read with the standard library's ``tomllib``).
    """
    path = Path(path)
    text = read_text_file(path, "settings file")
    return settings_from_toml(text, str(path), base_dir=path.parent)


def settings_from_toml(text: str, source: str = "settings", base_dir=None) -> Settings:
    """Settings from TOML text (a settings file's content, or the window's saved session).

    Parameters
    ----------
    text : str
        TOML 1.0 text.
    source : str
        Named in every error message (a file name, "last session", ...).
    base_dir : path-like, optional
        Folder that a display profile path in the text is relative to.

    Raises
    ------
    SettingsError
        One line naming ``source``: not TOML, nested too deeply, or a bad key or value.

    References
    ----------
    TOML 1.0 (read with the standard library's ``tomllib``).
    """
    import tomllib

    try:
        data = tomllib.loads(str(text))
    except tomllib.TOMLDecodeError as exc:
        raise SettingsError(f"{source}: not a valid TOML settings file ({exc})") from None
    except RecursionError:
        raise SettingsError(f"{source}: nested too deeply to read; accepted: a settings file as in "
                            "docs/formats.md (a [display] table at most)") from None
    return Settings.from_dict(data, source, base_dir=base_dir)


def settings_to_toml(settings: Settings) -> str:
    """The TOML text of a settings object (``tomli-w``)."""
    import tomli_w

    return tomli_w.dumps(settings.to_dict())


def save_settings(settings: Settings, path, overwrite: bool = True) -> None:
    """Write settings as TOML, atomically (temporary file in the same folder, then rename)."""
    from starkiln.engine.atomic import write_atomic

    write_atomic(path, settings_to_toml(settings).encode("utf-8"), overwrite=overwrite)
