"""Shared command-line options: the parser class, number parsing and the colour settings group.

Every subcommand that renders colours adds :func:`add_colour_options` and turns the
parsed options into one :class:`starkiln.engine.pipeline.settings.Settings` with
:func:`settings_from_args`. This module imports no command module (no cycles).
"""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from starkiln.engine.errors import StarkilnError

if TYPE_CHECKING:  # for annotations only; the CLI imports settings lazily
    from starkiln.engine.pipeline.settings import Settings

EXIT_BAD_INPUT = 2


class Parser(argparse.ArgumentParser):
    """argparse with one-line errors (``starkiln: error: ...``) and exit code 2."""

    def error(self, message):  # noqa: D401 - argparse hook
        raise StarkilnError(f"{message} (see '{self.prog} --help')")


def number(text: str) -> float:
    """argparse type: a finite number (:func:`starkiln.engine.errors.finite_number`)."""
    from starkiln.engine.errors import StarkilnError, finite_number

    try:
        return finite_number(text, "")
    except StarkilnError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def positive_int(text: str) -> int:
    """argparse type: a whole number of at least 1."""
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"{text!r} must be at least 1")
    return v


def add_colour_options(p: argparse.ArgumentParser) -> None:
    """Options shared by every command that renders colours: one per settings field.

    :data:`SETTING_OPTIONS` maps every :class:`Settings` field to its option; a field that
    can be switched off has a second spelling (``--naked-eye``, ``--no-compensate``).
    """
    g = p.add_argument_group("colour settings (override --settings)")
    g.add_argument("--settings", metavar="FILE.toml", help="start from a saved settings file")
    g.add_argument("--white", "--scene-white", dest="white", metavar="WHITE",
                   help="scene white: D50 D55 D65 D75 E DCI, daylight:<K>, blackbody:<K>, xy:<x>,<y>")
    g.add_argument("--display", metavar="NAME|PROFILE.json",
                   help="display preset (see 'starkiln displays') or a JSON display profile")
    g.add_argument("--adaptation", metavar="METHOD",
                   help="bradford (default), cat16, cat02, von-kries, none")
    g.add_argument("--gamut", metavar="METHOD", help="clip, scale, chroma (a display's default), "
                   "none (a working space's default: values outside 0-1 kept)")
    g.add_argument("--observer", metavar="NAME", help="cie1931 (default) or cie1964")
    g.add_argument("--normalisation", "--normalization", dest="normalisation", metavar="MODE",
                   help="max-channel (default) or luminance")
    g.add_argument("--luminance-y", dest="luminance_Y", type=number, metavar="Y",
                   help="relative luminance of every star with --normalisation luminance, "
                        "0 < Y <= 1 (default 0.5)")
    v = p.add_argument_group("night vision (applies when magnitudes are given)")
    v.add_argument("--vision", metavar="MODEL",
                   help="mesopic (default: CIE 191 cone weight) or none (full colour, camera look)")
    instrument = v.add_mutually_exclusive_group()
    instrument.add_argument("--aperture-mm", type=number, metavar="D",
                            help="instrument aperture in mm, 1-100000 (default: naked eye)")
    instrument.add_argument("--naked-eye", action="store_true", default=None,
                            help="no instrument: clears an aperture from --settings")
    v.add_argument("--transmission", type=number, metavar="T",
                   help="instrument transmission, 0.0001-1 (default 1)")
    v.add_argument("--pupil-mm", type=number, metavar="d", help="dark-adapted pupil, mm (default 7)")
    v.add_argument("--blur-spot-arcmin", type=number, metavar="A",
                   help="diameter of the effective star image, arcmin (default 6)")
    v.add_argument("--intensity-curve", metavar="CURVE", help="asinh (default), log or linear")
    v.add_argument("--magnitude-bright", type=number, metavar="M",
                   help="magnitude shown at intensity 1 (default -1.5)")
    v.add_argument("--magnitude-faint", type=number, metavar="M",
                   help="magnitude shown at intensity 0 (default 6.5)")
    v.add_argument("--night-tint", type=number, metavar="S",
                   help="0-1, cool tint of faint stars (a rendering convention; default 0)")
    v.add_argument("--compensate", action=argparse.BooleanOptionalAction, default=None,
                   help="pre-boost chroma for a dark dome at the display's peak luminance "
                        "(--no-compensate: off, the default)")
    a = p.add_argument_group("path of the light (default: none, the star outside dust and air)")
    dust_amount = a.add_mutually_exclusive_group()
    dust_amount.add_argument("--ebv", dest="dust_ebv", type=number, metavar="E",
                             help="interstellar reddening E(B-V), mag, 0-10 (default 0)")
    dust_amount.add_argument("--av", dest="dust_av", type=number, metavar="A",
                             help="interstellar extinction A_V, mag (E(B-V) = A_V / R_V)")
    a.add_argument("--rv", dest="dust_rv", type=number, metavar="R",
                   help="R_V = A_V / E(B-V) (default 3.1; G23 2.3-5.6, F99 and CCM89 2.0-6.0)")
    a.add_argument("--dust-law", dest="dust_law", metavar="LAW",
                   help="G23 (default, Gordon et al. 2023), F99 or CCM89")
    air = a.add_mutually_exclusive_group()
    air.add_argument("--altitude", dest="altitude_deg", type=number, metavar="DEG",
                     help="the stars' apparent altitude, 0 (horizon) to 90 (zenith): turns on "
                          "the atmosphere (default: none)")
    air.add_argument("--no-atmosphere", action="store_true", default=None,
                     help="no atmosphere: clears an altitude from --settings")
    a.add_argument("--site-height", dest="site_height_m", type=number, metavar="M",
                   help="site height above sea level, m, -500 to 11000 (default 0)")
    a.add_argument("--aerosol-tau", dest="aerosol_tau550", type=number, metavar="TAU",
                   help="aerosol optical depth at 550 nm, 0-5 (default 0.05, a clear site)")
    a.add_argument("--angstrom", dest="angstrom_exponent", type=number, metavar="ALPHA",
                   help="aerosol Angstrom exponent, -1 to 4 (default 1.3)")
    a.add_argument("--ozone", dest="ozone_du", type=number, metavar="DU",
                   help="ozone column, Dobson units, 0-1000 (default 300)")


#: Every settings field -> its command-line option (the argparse ``dest`` is the option's
#: name without dashes, except ``--white`` and ``--luminance-y``).
SETTING_OPTIONS = {
    "observer": "--observer", "scene_white": "--white", "adaptation": "--adaptation",
    "display": "--display", "gamut": "--gamut", "normalisation": "--normalisation",
    "luminance_Y": "--luminance-y", "vision": "--vision", "pupil_mm": "--pupil-mm",
    "aperture_mm": "--aperture-mm", "transmission": "--transmission",
    "blur_spot_arcmin": "--blur-spot-arcmin", "intensity_curve": "--intensity-curve",
    "magnitude_bright": "--magnitude-bright", "magnitude_faint": "--magnitude-faint",
    "night_tint": "--night-tint", "compensate": "--compensate",
    "dust_ebv": "--ebv", "dust_rv": "--rv", "dust_law": "--dust-law",
    "altitude_deg": "--altitude", "site_height_m": "--site-height",
    "aerosol_tau550": "--aerosol-tau", "angstrom_exponent": "--angstrom", "ozone_du": "--ozone",
}
#: Options that set a field another way: ``--av`` gives ``dust_ebv = A_V / R_V``.
ALTERNATIVE_OPTIONS = {"dust_ebv": "--av", "altitude_deg": "--no-atmosphere"}
_DESTS = {"scene_white": "white"}


def settings_from_args(args) -> "Settings":
    """The one Settings object from ``--settings`` plus any explicit options."""
    from starkiln.engine.pipeline.settings import Settings, load_settings

    base = load_settings(args.settings) if getattr(args, "settings", None) else Settings()
    changes = {}
    for key in SETTING_OPTIONS:
        value = getattr(args, _DESTS.get(key, key), None)
        if value is not None:
            changes[key] = value
    if getattr(args, "naked_eye", None):
        changes["aperture_mm"] = None
    if getattr(args, "no_atmosphere", None):
        changes["altitude_deg"] = None
    av = getattr(args, "dust_av", None)
    if av is not None:
        changes["dust_ebv"] = _ebv_from_av(av, changes, base)
    return base.replace(**changes) if changes else base


def _ebv_from_av(av: float, changes: dict, base: "Settings") -> float:
    """E(B-V) = A_V / R_V for ``--av`` (R_V checked for the law first, so a bad R_V is named
    as such); a negative A_V is refused here, naming ``--av``."""
    from starkiln.engine.path.dust import check_dust_law, check_rv

    if av < 0.0:
        raise StarkilnError(f"--av {av:g} is negative; accepted: A_V >= 0 mag")
    law = check_dust_law(changes.get("dust_law", base.dust_law))
    rv = check_rv(changes.get("dust_rv", base.dust_rv), law, "--rv")
    return av / rv


def add_deredden_option(p, what: str) -> None:
    """Add ``--deredden``: the colour index given (``what``) is observed and holds the dust."""
    p.add_argument("--deredden", action="store_true",
                   help=f"the {what} is observed and already holds the dust of --ebv/--av: "
                        "remove it (synthetic photometry of the matched blackbody) and show "
                        "the star as it would be without the dust (the dust is not applied "
                        "again)")


def deredden_dust(args, settings: "Settings") -> tuple[float, "Settings"]:
    """For ``--deredden``: the E(B-V) to remove and the settings to render with (the same
    without the dust); a one-line error when no dust was named.

    References
    ----------
    :mod:`starkiln.engine.path.deredden` (the method).
    """
    given = (getattr(args, "dust_ebv", None) is not None
             or getattr(args, "dust_av", None) is not None or settings.dust_ebv > 0.0)
    if not given:
        raise StarkilnError("--deredden needs the dust the observed colour holds; accepted: "
                            "--ebv E or --av A (or dust_ebv in --settings)")
    return settings.dust_ebv, settings.replace(dust_ebv=0.0)


#: The command that prints one star's colour (:mod:`starkiln.cli.colour`).
COLOUR_COMMAND = ("starkiln", "colour")


def _option_value(value) -> str:
    """A settings value as command-line text that parses back to the same value
    (``repr`` of a float round-trips exactly: Python's shortest repr, IEEE 754)."""
    if isinstance(value, float):
        return repr(value)
    return str(value)


def command_words_for(settings: "Settings", temperature_K: float, magnitude=None,
                      display_profile=None, json_output: bool = True) -> list[str]:
    """The words of the ``starkiln colour`` command that renders exactly this star.

    Every settings field in :data:`SETTING_OPTIONS` is written out (defaults included, so
    the command does not depend on a settings file or on future defaults), numbers as their
    shortest round-tripping text. A preset display or working space is named; any other
    display must be given as ``display_profile``, the path of a JSON display profile holding
    exactly that display (checked by reading it back), since a display has no option per
    field.

    Parameters
    ----------
    settings : Settings
        The settings shown.
    temperature_K : float
        The star's temperature, K.
    magnitude : float, optional
        Its apparent magnitude (turns on the night-vision model in the command's output).
    display_profile : path-like, optional
        A JSON display profile of ``settings.display``; needed when it is not a preset.
    json_output : bool
        Add ``--json``.

    Returns
    -------
    list of str
        ``["starkiln", "colour", "--temperature", ...]``.

    Raises
    ------
    StarkilnError
        A custom display without a profile, or a profile that holds another display.

    References
    ----------
    The options: :func:`add_colour_options`; float text: Python's ``repr`` (shortest string
    that reads back to the same IEEE 754 double).
    """
    from pathlib import Path

    from starkiln.engine.colour.displays import PRESETS, WORKING_SPACES, load_display_profile

    words = list(COLOUR_COMMAND) + ["--temperature", _option_value(float(temperature_K))]
    if magnitude is not None:
        words += ["--magnitude", _option_value(float(magnitude))]
    for key, option in SETTING_OPTIONS.items():
        value = getattr(settings, key)
        if key == "display":
            named = {**PRESETS, **WORKING_SPACES}.get(value.name)
            if named is not None and named == value:
                words += [option, value.name]
                continue
            if display_profile is None:
                raise StarkilnError(f"display {value.name!r} is not a preset; accepted: the "
                                    "path of a JSON display profile holding it")
            if load_display_profile(display_profile) != value:
                raise StarkilnError(f"{display_profile}: this display profile does not hold "
                                    f"display {value.name!r}; accepted: a profile saved from it")
            words += [option, str(Path(display_profile))]
        elif key == "aperture_mm" and value is None:
            words.append("--naked-eye")
        elif key == "altitude_deg" and value is None:
            words.append("--no-atmosphere")
        elif key == "compensate":
            words.append("--compensate" if value else "--no-compensate")
        else:
            words += [option, _option_value(value)]
    if json_output:
        words.append("--json")
    return words


def command_line_for(settings: "Settings", temperature_K: float, magnitude=None,
                     display_profile=None, json_output: bool = True) -> str:
    """:func:`command_words_for` as one shell line (each word quoted by :func:`shlex.join`).

    References
    ----------
    POSIX shell quoting (IEEE Std 1003.1, Shell Command Language, 2.2 Quoting), as
    :func:`shlex.quote` applies it.
    """
    import shlex

    return shlex.join(command_words_for(settings, temperature_K, magnitude, display_profile,
                                        json_output))


def index_model(text: str) -> str:
    """argparse type: a colour-index model (``synthetic`` or ``relation``)."""
    from starkiln.engine.stars.temperature import check_index_model

    try:
        return check_index_model(text)
    except StarkilnError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def add_index_model_option(p) -> None:
    """Add ``--index-model synthetic|relation`` (how B-V and BP-RP become temperatures).

    References
    ----------
    :func:`starkiln.engine.stars.temperature.temperature_from_index` (the two models).
    """
    p.add_argument("--index-model", type=index_model, default="synthetic",
                   metavar="synthetic|relation",
                   help="how a B-V or BP-RP becomes a colour: synthetic (default; the "
                        "blackbody of the same colour through the published passbands) or "
                        "relation (the published Teff relations: Ballesteros 2012 for B-V, "
                        "Mucciarelli et al. 2021 for BP-RP)")
