"""Displays: primaries, white, transfer function and peak luminance.

Presets (chromaticities in CIE 1931 xy):

==============  ===========================================  ==========  ================  =========
name            primaries R, G, B                            white       transfer          peak
==============  ===========================================  ==========  ================  =========
``srgb``        (0.64, 0.33) (0.30, 0.60) (0.15, 0.06)        D65         sRGB piecewise    80 cd/m2
``display-p3``  (0.680, 0.320) (0.265, 0.690) (0.150, 0.060)  D65         sRGB piecewise    80 cd/m2
``dci-p3``      (0.680, 0.320) (0.265, 0.690) (0.150, 0.060)  DCI         gamma 2.6         48 cd/m2
``rec2020``     (0.708, 0.292) (0.170, 0.797) (0.131, 0.046)  D65         gamma 2.4         100 cd/m2
``rec2100-pq``  as rec2020                                    D65         [ST2084]     1000 cd/m2
==============  ===========================================  ==========  ================  =========

Sources: [IEC61966-2-1] (sRGB, 80 cd/m2 reference display); [RP431-2]
(DCI-P3 primaries and white, 48 cd/m2); [EG432-1] (P3
primaries with a D65 white; its use with the sRGB curve is common practice);
[BT2020] (primaries), [BT1886] (gamma 2.4 reference EOTF, 100
cd/m2 is common practice); [BT2100] and [ST2084] (PQ; a
1000 cd/m2 grading peak is common practice). D65 here is x = 0.3127, y =
0.3290 (the four-digit value those standards use).

A custom display is a small JSON *display profile*::

    {
      "starkiln_display": 1,
      "name": "my-dome",
      "primaries_xy": {"red": [0.68, 0.32], "green": [0.265, 0.69], "blue": [0.15, 0.06]},
      "white_xy": [0.3127, 0.329],
      "transfer": {"function": "gamma", "gamma": 2.2},
      "peak_luminance_cd_m2": 14.0
    }

``transfer.function`` is one of ``srgb``, ``gamma`` (with ``gamma``, 1-4),
``linear``, ``pq`` or ``table``. A ``table`` transfer is a sampled tone curve::

    "transfer": {"function": "table", "samples": [0.0, 0.0056, 0.0331, ..., 1.0]}

``samples`` holds N (2-4096) display-linear outputs 0-1 at N equally spaced code values
``V_i = i / (N - 1)``; they are non-decreasing, the first is 0 and the last 1. Decoding
interpolates linearly between them (``np.interp``), as an ICC ``curveType`` does ([ICC1]
section 10.6); encoding is the inverse by the same interpolation, and on a flat run of equal
samples it gives the lowest code value of the run. On a :class:`Display` the samples are the
tuple ``transfer_samples`` (empty for every other transfer).
"""

from __future__ import annotations

import json
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.colour.observers import xy_to_XYZ
from starkiln.engine.colour.whites import ACES_WHITE_XY
from starkiln.engine.errors import SettingsError, finite_number, plain_type_name, shown_value

TRANSFERS = ("srgb", "gamma", "linear", "pq", "table")
#: Bounds of a ``table`` transfer's sample count (module docstring).
TABLE_SAMPLES_MIN, TABLE_SAMPLES_MAX = 2, 4096
#: What a target is: a ``display`` (display-referred code values) or a ``working-space``
#: (scene-linear RGB of a render or compositing pipeline, no transfer function).
KINDS = ("display", "working-space")
PROFILE_FORMAT = 1


@dataclass(frozen=True)
class Display:
    """An immutable display description; see the module docstring for the fields' sources."""

    name: str
    red_xy: tuple[float, float]
    green_xy: tuple[float, float]
    blue_xy: tuple[float, float]
    white_xy: tuple[float, float]
    transfer: str = "srgb"
    gamma: float = 2.2
    peak_luminance_cd_m2: float = 80.0
    kind: str = "display"  # or "working-space": scene-linear, primaries may lie outside the locus
    transfer_samples: tuple = ()  # the ``table`` transfer's samples (module docstring), else ()

    def __post_init__(self):
        if not isinstance(self.name, str):
            raise SettingsError(f"display name {self.name!r} is {plain_type_name(self.name)}; "
                                "accepted: text")
        where = f"display {self.name!r}"
        if self.kind not in KINDS:
            raise SettingsError(f"{where}: kind {shown_value(self.kind)} unknown; accepted: "
                                f"{', '.join(KINDS)}")
        working = self.kind == "working-space"
        for field in ("red_xy", "green_xy", "blue_xy", "white_xy"):
            pair = xy_pair(getattr(self, field), f"{where}: {field}", text=True)
            if working and field != "white_xy":
                # Working-space primaries may be imaginary (ACES AP0's blue has y < 0): any
                # finite point of the xy plane with y != 0 ([ST2065-1]).
                if not (abs(pair[0]) < 10.0 and abs(pair[1]) < 10.0 and pair[1] != 0.0):
                    raise SettingsError(f"{where}: {field} {list(pair)} is not a usable "
                                        "primary (finite x, y with y != 0)")
            elif not (0.0 < pair[0] < 1.0 and 0.0 < pair[1] < 1.0 and pair[0] + pair[1] <= 1.0 + 1e-12):
                raise SettingsError(f"{where}: {field} {list(pair)} is not a chromaticity "
                                    "(0 < x, 0 < y, x + y <= 1)")
            object.__setattr__(self, field, pair)
        if working and self.transfer != "linear":
            raise SettingsError(f"{where}: a working space is scene-linear; accepted transfer: "
                                "linear")
        if not isinstance(self.transfer, str) or self.transfer not in TRANSFERS:
            raise SettingsError(f"{where}: transfer {self.transfer!r} unknown; accepted: "
                                f"{', '.join(TRANSFERS)}")
        object.__setattr__(self, "transfer_samples",
                           table_samples(self.transfer_samples, self.transfer, where))
        g = finite_number(self.gamma, f"{where}: gamma")
        if not 1.0 <= g <= 4.0:
            raise SettingsError(f"{where}: gamma {g:g} is outside 1-4")
        object.__setattr__(self, "gamma", g)
        peak = finite_number(self.peak_luminance_cd_m2, f"{where}: peak_luminance_cd_m2")
        if not 0.01 <= peak <= 10000.0:
            raise SettingsError(f"{where}: peak_luminance_cd_m2 {peak:g} is outside 0.01-10000")
        object.__setattr__(self, "peak_luminance_cd_m2", peak)
        m = np.array([self.red_xy, self.green_xy, self.blue_xy])
        area = 0.5 * np.linalg.det(np.column_stack([m, np.ones(3)]))
        if abs(area) < 1e-4:
            raise SettingsError(f"{where}: primaries are (nearly) collinear; they must span a "
                                "triangle")
        if not in_triangle(np.array(self.white_xy), m):
            raise SettingsError(f"{where}: white_xy {list(self.white_xy)} lies outside the "
                                "primaries' triangle")

    def to_profile(self) -> dict:
        """The JSON display-profile form of this display (format in the module docstring)."""
        d = asdict(self)
        transfer = {"function": self.transfer}
        if self.transfer == "gamma":
            transfer["gamma"] = self.gamma
        if self.transfer == "table":
            transfer["samples"] = list(self.transfer_samples)
        return {
            "starkiln_display": PROFILE_FORMAT,
            "name": self.name,
            "primaries_xy": {"red": list(d["red_xy"]), "green": list(d["green_xy"]),
                             "blue": list(d["blue_xy"])},
            "white_xy": list(d["white_xy"]),
            "transfer": transfer,
            "peak_luminance_cd_m2": self.peak_luminance_cd_m2,
        } | ({"kind": self.kind} if self.kind != "display" else {})

    @property
    def rgb_to_XYZ(self) -> np.ndarray:
        """Normalised primary matrix (white -> Y = 1), [RP177] section 3.3."""
        return _npm(self.red_xy, self.green_xy, self.blue_xy, self.white_xy)

    @property
    def XYZ_to_rgb(self) -> np.ndarray:
        """Inverse of :attr:`rgb_to_XYZ` ([RP177])."""
        return np.linalg.inv(self.rgb_to_XYZ)

    @property
    def white_XYZ(self) -> np.ndarray:
        """Display white tristimulus values, Y = 1."""
        return xy_to_XYZ(self.white_xy)

    def encode(self, rgb_linear) -> np.ndarray:
        """Display-linear 0-1 -> encoded signal 0-1 through this display's transfer function."""
        return encode(rgb_linear, self.transfer, self.gamma, self.peak_luminance_cd_m2,
                      self.transfer_samples)

    def decode(self, rgb_encoded) -> np.ndarray:
        """Encoded signal 0-1 -> display-linear 0-1 (inverse of :meth:`encode`)."""
        return decode(rgb_encoded, self.transfer, self.gamma, self.peak_luminance_cd_m2,
                      self.transfer_samples)

    @property
    def transfer_label(self) -> str:
        """The transfer function in words: ``srgb``, ``gamma 2.4``, ``table (33 samples)``..."""
        if self.transfer == "gamma":
            return f"gamma {self.gamma:g}"
        if self.transfer == "table":
            return f"table ({len(self.transfer_samples)} samples)"
        return self.transfer


def table_samples(samples, transfer: str = "table", where: str = "display") -> tuple:
    """The checked samples of a ``table`` transfer as a tuple of floats (module docstring).

    Parameters
    ----------
    samples : sequence of float
        Display-linear outputs 0-1 at equally spaced code values; ``()`` for any other
        transfer.
    transfer : str
        The display's transfer function; samples are accepted with ``table`` only.
    where : str
        Prefix of messages.

    Returns
    -------
    tuple of float

    Raises
    ------
    SettingsError
        One line naming the problem and what is accepted.

    References
    ----------
    [ICC1] section 10.6 (a curve of N equally spaced entries, interpolated linearly).
    """
    accepted = (f"{TABLE_SAMPLES_MIN}-{TABLE_SAMPLES_MAX} numbers 0-1, non-decreasing, "
                "first 0, last 1")
    if transfer != "table":
        if samples is None or (isinstance(samples, (list, tuple)) and len(samples) == 0):
            return ()
        raise SettingsError(f"{where}: transfer samples are given with transfer "
                            f"{shown_value(transfer)}; accepted: samples with 'table' only")
    if isinstance(samples, np.ndarray):
        samples = samples.tolist()
    if not isinstance(samples, (list, tuple)):
        raise SettingsError(f"{where}: transfer samples {shown_value(samples)} are "
                            f"{plain_type_name(samples)}; accepted: a list of {accepted}")
    n = len(samples)
    if not TABLE_SAMPLES_MIN <= n <= TABLE_SAMPLES_MAX:
        raise SettingsError(f"{where}: transfer table has {n} samples; accepted: {accepted}")
    values = tuple(finite_number(v, f"{where}: transfer sample {i}", text=False)
                   for i, v in enumerate(samples))
    if values[0] != 0.0 or values[-1] != 1.0:
        raise SettingsError(f"{where}: transfer table runs from {values[0]:g} to "
                            f"{values[-1]:g}; accepted: {accepted}")
    for i in range(1, n):
        if values[i] < values[i - 1]:
            raise SettingsError(f"{where}: transfer sample {i} ({values[i]:g}) is below sample "
                                f"{i - 1} ({values[i - 1]:g}); accepted: {accepted}")
    return values


def xy_pair(value, what: str, text: bool = False) -> tuple[float, float]:
    """``value`` as a pair of finite floats ``(x, y)``, or a one-line :class:`SettingsError`.

    Parameters
    ----------
    value : object
        A two-element list or tuple of numbers (``[0.3127, 0.329]``).
    what : str
        How the message names the value (``"white_xy"``, ``"profile.json: primaries_xy.red"``).
    text : bool
        Accept numbers written as text (Python callers); file readers pass ``False``.

    Returns
    -------
    tuple of float

    References
    ----------
    CIE 15:2004 section 7.3 (chromaticity coordinates x, y).
    """
    if not isinstance(value, (list, tuple, np.ndarray)) or len(value) != 2:
        raise SettingsError(f"{what} must be two numbers [x, y], got {shown_value(value)} "
                            f"({plain_type_name(value)}); accepted: e.g. [0.3127, 0.329]")
    return (finite_number(value[0], f"{what} x", text=text),
            finite_number(value[1], f"{what} y", text=text))


def _typed(value, kind, what: str, accepted: str):
    """``value`` if it is of ``kind`` (and not a bool where a number is wanted), else an error."""
    if kind is str and isinstance(value, str):
        return value
    if kind is float:
        return finite_number(value, what, text=False)
    raise SettingsError(f"{what} {shown_value(value)} is {plain_type_name(value)}; accepted: "
                        f"{accepted}")


def _check_keys(data: dict, known, where: str, not_a_table: str = "must be a table") -> None:
    """One-line error if ``data`` is not a table (``not_a_table``) or has a key not in ``known``
    (naming the first and listing ``known``)."""
    if not isinstance(data, dict):
        raise SettingsError(f"{where}: {not_a_table}; got {plain_type_name(data)}")
    extra = [k for k in data if k not in known]
    if extra:
        raise SettingsError(f"{where}: unknown key {extra[0]!r}; accepted: "
                            f"{', '.join(sorted(known))}")


#: Keys of the ``[display]`` table of a settings file (the fields of :class:`Display`).
TABLE_KEYS = ("name", "red_xy", "green_xy", "blue_xy", "white_xy", "transfer", "gamma",
              "peak_luminance_cd_m2", "kind", "transfer_samples")


def display_from_table(data: dict, where: str = "display") -> Display:
    """Build a :class:`Display` from the ``[display]`` table of a settings file (TOML).

    Every key is checked for its type (text, a number that is not true/false, an [x, y] pair
    of numbers); unknown and missing keys are named with the accepted ones.

    Parameters
    ----------
    data : dict
        The parsed table (keys in :data:`TABLE_KEYS`).
    where : str
        Prefix of messages (``"look.toml: key 'display'"``).

    Returns
    -------
    Display

    References
    ----------
    TOML 1.0 (tables); the field sources in the module docstring.
    """
    _check_keys(data, TABLE_KEYS, where, "must be a preset name or a table")
    missing = [k for k in ("name", "red_xy", "green_xy", "blue_xy", "white_xy") if k not in data]
    if missing:
        raise SettingsError(f"{where}: missing key {missing[0]!r}; required: name, red_xy, "
                            "green_xy, blue_xy, white_xy")
    kw = {"name": _typed(data["name"], str, f"{where}: name", "text")}
    for k in ("red_xy", "green_xy", "blue_xy", "white_xy"):
        kw[k] = xy_pair(data[k], f"{where}: {k}")
    if "transfer" in data:
        kw["transfer"] = _typed(data["transfer"], str, f"{where}: transfer", ", ".join(TRANSFERS))
    for k in ("gamma", "peak_luminance_cd_m2"):
        if k in data:
            kw[k] = _typed(data[k], float, f"{where}: {k}", "a number")
    if "kind" in data:
        kw["kind"] = _typed(data["kind"], str, f"{where}: kind", ", ".join(KINDS))
    if "transfer_samples" in data:
        kw["transfer_samples"] = data["transfer_samples"]
    try:
        return Display(**kw)
    except SettingsError as exc:
        raise SettingsError(f"{where}: {exc}") from None


def in_triangle(p: np.ndarray, tri: np.ndarray) -> bool:
    """True when the point ``p`` (x, y) lies strictly inside the triangle ``tri`` (3 x 2).

    Parameters
    ----------
    p : numpy.ndarray
        A chromaticity (x, y).
    tri : numpy.ndarray
        The three corners (x, y), in either order of turning.

    Returns
    -------
    bool

    References
    ----------
    The sign of the 2-D cross product on each side (common practice).
    """
    def side(a, b):
        return (b[0] - a[0]) * (p[1] - a[1]) - (b[1] - a[1]) * (p[0] - a[0])
    s = [side(tri[0], tri[1]), side(tri[1], tri[2]), side(tri[2], tri[0])]
    return all(v > 0 for v in s) or all(v < 0 for v in s)


def _npm(r, g, b, w) -> np.ndarray:
    """Normalised primary matrix from xy of the primaries and white ([RP177] 3.3)."""
    p = xy_to_XYZ(np.array([r, g, b])).T
    s = np.linalg.solve(p, xy_to_XYZ(w))
    return p * s


D65_4DIGIT = (0.3127, 0.3290)
_P3 = ((0.680, 0.320), (0.265, 0.690), (0.150, 0.060))
_BT2020 = ((0.708, 0.292), (0.170, 0.797), (0.131, 0.046))

PRESETS: dict[str, Display] = {
    "srgb": Display("srgb", (0.64, 0.33), (0.30, 0.60), (0.15, 0.06), D65_4DIGIT, "srgb", 2.2, 80.0),
    "display-p3": Display("display-p3", *_P3, D65_4DIGIT, "srgb", 2.2, 80.0),
    "dci-p3": Display("dci-p3", *_P3, (0.314, 0.351), "gamma", 2.6, 48.0),
    "rec2020": Display("rec2020", *_BT2020, D65_4DIGIT, "gamma", 2.4, 100.0),
    "rec2100-pq": Display("rec2100-pq", *_BT2020, D65_4DIGIT, "pq", 2.2, 1000.0),
}

_AP0 = ((0.7347, 0.2653), (0.0, 1.0), (0.0001, -0.0770))  # [ST2065-1]
_AP1 = ((0.713, 0.293), (0.165, 0.830), (0.128, 0.044))  # [S-2014-004] (ACEScg)

#: Scene-linear working spaces, targets beside the displays: no transfer function, no gamut
#: clip unless one is asked for. Peak luminance is the reference white's, for the night-vision
#: model's dome compensation only.
WORKING_SPACES: dict[str, Display] = {
    "lin-srgb": Display("lin-srgb", (0.64, 0.33), (0.30, 0.60), (0.15, 0.06), D65_4DIGIT,
                        "linear", 2.2, 100.0, "working-space"),
    "lin-p3-d65": Display("lin-p3-d65", *_P3, D65_4DIGIT, "linear", 2.2, 100.0, "working-space"),
    "lin-rec2020": Display("lin-rec2020", *_BT2020, D65_4DIGIT, "linear", 2.2, 100.0,
                           "working-space"),
    "acescg": Display("acescg", *_AP1, ACES_WHITE_XY, "linear", 2.2, 100.0, "working-space"),
    "aces2065-1": Display("aces2065-1", *_AP0, ACES_WHITE_XY, "linear", 2.2, 100.0,
                          "working-space"),
}

WORKING_SPACE_NOTES = {
    "lin-srgb": "scene-linear, Rec. 709 / sRGB primaries, D65 (ITU-R BT.709)",
    "lin-p3-d65": "scene-linear, P3 primaries, D65 (SMPTE EG 432-1)",
    "lin-rec2020": "scene-linear, Rec. 2020 primaries, D65 (ITU-R BT.2020)",
    "acescg": "ACEScg: scene-linear, ACES AP1 primaries, ACES white (Academy S-2014-004)",
    "aces2065-1": "ACES2065-1: scene-linear, ACES AP0 primaries, ACES white (SMPTE ST 2065-1)",
}

PRESET_NOTES = {
    "srgb": "IEC 61966-2-1 monitors and the web",
    "display-p3": "P3 primaries, D65 white, sRGB curve (wide-gamut monitors)",
    "dci-p3": "digital-cinema projector (SMPTE RP 431-2), DCI white, gamma 2.6",
    "rec2020": "ITU-R BT.2020 primaries, BT.1886 gamma 2.4",
    "rec2100-pq": "ITU-R BT.2100 with SMPTE ST 2084 PQ, 1000 cd/m2",
}


def display_from_profile(data: dict, source: str = "profile") -> Display:
    """Build a :class:`Display` from a parsed JSON profile (format in the module docstring).

    Every key is checked for its type (``starkiln_display`` is the whole number 1, not
    ``true``; numbers are not text; pairs are two numbers); unknown keys, at the top and in
    ``primaries_xy`` and ``transfer``, are named with the accepted ones.

    Raises
    ------
    SettingsError
        One line naming ``source`` and the key for any problem.

    References
    ----------
    RFC 8259 (JSON); the field sources in the module docstring.
    """
    known = ("starkiln_display", "name", "primaries_xy", "white_xy", "transfer",
             "peak_luminance_cd_m2", "note", "kind")
    _check_keys(data, known, source, "a display profile must be a JSON object")
    version = data.get("starkiln_display", PROFILE_FORMAT)
    if isinstance(version, bool) or not isinstance(version, int) or version != PROFILE_FORMAT:
        raise SettingsError(f"{source}: starkiln_display {json.dumps(version)} unsupported; "
                            f"accepted: {PROFILE_FORMAT}")
    for key in ("primaries_xy", "white_xy"):
        if key not in data:
            raise SettingsError(f"{source}: missing key {key!r}")
    prim = data["primaries_xy"]
    _check_keys(prim, ("red", "green", "blue"), f"{source}: primaries_xy",
                "must be an object with keys red, green, blue")
    for colour in ("red", "green", "blue"):
        if colour not in prim:
            raise SettingsError(f"{source}: primaries_xy: missing key {colour!r}; required: "
                                "red, green, blue")
    pairs = [xy_pair(prim[c], f"{source}: primaries_xy.{c}") for c in ("red", "green", "blue")]
    white = xy_pair(data["white_xy"], f"{source}: white_xy")
    transfer = data.get("transfer", {"function": "srgb"})
    if isinstance(transfer, str):
        transfer = {"function": transfer}
    if not isinstance(transfer, dict) or "function" not in transfer:
        raise SettingsError(f"{source}: transfer must be an object with key 'function' "
                            f"({', '.join(TRANSFERS)})")
    _check_keys(transfer, ("function", "gamma", "samples"), f"{source}: transfer")
    fn = _typed(transfer["function"], str, f"{source}: transfer.function",
                ", ".join(TRANSFERS)).lower()
    if fn not in TRANSFERS:
        raise SettingsError(f"{source}: transfer.function {transfer['function']!r} unknown; "
                            f"accepted: {', '.join(TRANSFERS)}")
    if fn == "gamma" and "gamma" not in transfer:
        raise SettingsError(f"{source}: transfer.gamma is required with function 'gamma'")
    if fn == "table" and "samples" not in transfer:
        raise SettingsError(f"{source}: transfer.samples is required with function 'table' "
                            f"({TABLE_SAMPLES_MIN}-{TABLE_SAMPLES_MAX} numbers 0-1, "
                            "non-decreasing, first 0, last 1)")
    samples = transfer.get("samples", ())
    gamma = _typed(transfer.get("gamma", 2.2), float, f"{source}: transfer.gamma", "1-4")
    peak = _typed(data.get("peak_luminance_cd_m2", 100.0), float,
                  f"{source}: peak_luminance_cd_m2", "0.01-10000")
    name = _typed(data.get("name", Path(source).stem), str, f"{source}: name", "text")
    if "note" in data:
        _typed(data["note"], str, f"{source}: note", "text")
    kind = _typed(data.get("kind", "display"), str, f"{source}: kind", ", ".join(KINDS))
    try:
        return Display(name, *pairs, white, fn, gamma, peak, kind, samples)
    except SettingsError as exc:
        raise SettingsError(f"{source}: {exc}") from None


def load_display_profile(path) -> Display:
    """Read a JSON display profile from ``path`` (format in the module docstring).

    The file must be UTF-8 JSON (RFC 8259 section 8.1); text in another encoding, or nested
    too deeply to read, gives a one-line :class:`SettingsError` naming the file.

    References
    ----------
    RFC 8259 (JSON).
    """
    from starkiln.engine.errors import parse_json, read_text_file

    path = Path(path)
    data = parse_json(read_text_file(path, "display profile"), str(path),
                      "a display profile as in the user guide (a few levels)")
    return display_from_profile(data, str(path))


def save_display_profile(display, path, overwrite: bool = True) -> None:
    """Write a display as a JSON display profile (format in the module docstring), atomically.

    The text is ``json.dumps(display.to_profile(), indent=2)`` plus a newline;
    :func:`load_display_profile` reads it back to an equal display.

    Parameters
    ----------
    display : Display or str
        A display, preset name or profile path (:func:`get_display`).
    path : path-like
        Destination ``.json``.
    overwrite : bool
        Replace an existing file.

    References
    ----------
    [RFC8259] (JSON); :mod:`starkiln.engine.atomic` for the write.
    """
    from starkiln.engine.atomic import write_atomic

    text = json.dumps(get_display(display).to_profile(), indent=2) + "\n"
    write_atomic(path, text.encode("utf-8"), overwrite=overwrite)


def get_display(spec) -> Display:
    """A display from a preset name, a path to a ``.json`` profile, or a :class:`Display`."""
    if isinstance(spec, Display):
        return spec
    text = str(spec).strip()
    if text.lower() in PRESETS:
        return PRESETS[text.lower()]
    if text.lower() in WORKING_SPACES:
        return WORKING_SPACES[text.lower()]
    if text.lower().endswith(".json"):
        return load_display_profile(text)
    raise SettingsError(f"unknown display {text!r}; accepted: {', '.join(PRESETS)}, the "
                        f"working spaces {', '.join(WORKING_SPACES)}, or a path to a .json "
                        "display profile")


# --- transfer functions --------------------------------------------------------------------

#: [ST2084] constants.
PQ_M1 = 2610.0 / 16384.0
PQ_M2 = 2523.0 / 4096.0 * 128.0
PQ_C1 = 3424.0 / 4096.0
PQ_C2 = 2413.0 / 4096.0 * 32.0
PQ_C3 = 2392.0 / 4096.0 * 32.0


def _unit(v) -> np.ndarray:
    """Values clamped to [0, 1] as float64 (np.minimum/np.maximum: faster than np.clip)."""
    return np.minimum(np.maximum(np.asarray(v, dtype=np.float64), 0.0), 1.0)


def _pow(v: np.ndarray, k: float) -> np.ndarray:
    """``v ** k`` for v >= 0, k > 0, as ``exp(k ln v)`` (the same value to ~1 ulp; numpy's exp
    and log are SIMD-vectorised: 0.078 s against 0.103 s for np.power on 12.6 M values here)."""
    with np.errstate(divide="ignore"):
        return np.exp(np.log(v) * k)


def srgb_encode(linear) -> np.ndarray:
    """sRGB inverse EOTF (encoding), [IEC61966-2-1] section 5.2: 12.92 L below 0.0031308."""
    v = _unit(linear)
    return np.where(v <= 0.0031308, 12.92 * v, 1.055 * _pow(v, 1.0 / 2.4) - 0.055)


def srgb_decode(encoded) -> np.ndarray:
    """sRGB EOTF (decoding), [IEC61966-2-1] section 5.2: V / 12.92 below 0.04045."""
    v = _unit(encoded)
    return np.where(v <= 0.04045, v / 12.92, _pow((v + 0.055) / 1.055, 2.4))


def pq_encode(luminance_cd_m2) -> np.ndarray:
    """[ST2084] inverse EOTF: absolute luminance (0-10000 cd/m2) to signal 0-1."""
    y = _unit(np.asarray(luminance_cd_m2, dtype=np.float64) / 10000.0)
    ym = _pow(y, PQ_M1)
    return _pow((PQ_C1 + PQ_C2 * ym) / (1.0 + PQ_C3 * ym), PQ_M2)


def pq_decode(signal) -> np.ndarray:
    """[ST2084] EOTF: signal 0-1 to absolute luminance in cd/m2."""
    e = _pow(_unit(signal), 1.0 / PQ_M2)
    return 10000.0 * _pow(np.maximum(e - PQ_C1, 0.0) / (PQ_C2 - PQ_C3 * e), 1.0 / PQ_M1)


def _table_arrays(samples) -> tuple[np.ndarray, np.ndarray]:
    """(code values, samples) of a ``table`` transfer as arrays; an error if there are none."""
    s = np.asarray(samples, dtype=np.float64)
    if s.ndim != 1 or s.size < TABLE_SAMPLES_MIN:
        raise SettingsError("transfer 'table' needs its samples; accepted: "
                            f"{TABLE_SAMPLES_MIN}-{TABLE_SAMPLES_MAX} numbers 0-1")
    return np.linspace(0.0, 1.0, s.size), s


def table_decode(encoded, samples) -> np.ndarray:
    """``table`` transfer, code value 0-1 -> display-linear 0-1: linear interpolation between
    the samples at equally spaced code values (module docstring; [ICC1] section 10.6)."""
    codes, s = _table_arrays(samples)
    return np.interp(_unit(encoded), codes, s)


def table_encode(linear, samples) -> np.ndarray:
    """``table`` transfer, display-linear 0-1 -> code value 0-1: the inverse of
    :func:`table_decode` by linear interpolation; a flat run of equal samples maps to its
    lowest code value (module docstring; [ICC1] section 10.6)."""
    codes, s = _table_arrays(samples)
    v = _unit(linear)
    values = np.unique(s)  # the distinct outputs, increasing; a run of equal samples is one
    first = np.searchsorted(s, values, side="left")  # each run's first and last sample
    last = np.searchsorted(s, values, side="right") - 1
    if values.size == 1:
        return np.zeros_like(v)
    k = np.minimum(np.searchsorted(values, v, side="right") - 1, values.size - 2)
    t = (v - values[k]) / (values[k + 1] - values[k])
    # between runs k and k + 1 the curve rises from run k's last sample to run k + 1's first
    code = codes[last[k]] + t * (codes[first[k + 1]] - codes[last[k]])
    return np.where(t <= 0.0, codes[first[k]], np.where(t >= 1.0, codes[first[k + 1]], code))


def encode(rgb_linear, transfer: str, gamma: float = 2.2, peak_cd_m2: float = 100.0,
           samples=()) -> np.ndarray:
    """Encode display-linear values (0-1 of peak) with a transfer function.

    ``srgb`` ([IEC61966-2-1]), ``gamma`` (V = L^(1/gamma), pure power as in
    [BT1886] with zero black), ``linear``, ``pq`` ([ST2084], with
    linear 1.0 at ``peak_cd_m2``), ``table`` (``samples``; module docstring, [ICC1]
    section 10.6).
    """
    v = _unit(rgb_linear)
    if transfer == "srgb":
        return srgb_encode(v)
    if transfer == "gamma":
        return _pow(v, 1.0 / gamma)
    if transfer == "linear":
        return v
    if transfer == "pq":
        return pq_encode(v * peak_cd_m2)
    if transfer == "table":
        return table_encode(v, samples)
    raise SettingsError(f"unknown transfer {transfer!r}; accepted: {', '.join(TRANSFERS)}")


def decode(rgb_encoded, transfer: str, gamma: float = 2.2, peak_cd_m2: float = 100.0,
           samples=()) -> np.ndarray:
    """Inverse of :func:`encode` (same references)."""
    v = _unit(rgb_encoded)
    if transfer == "srgb":
        return srgb_decode(v)
    if transfer == "gamma":
        return _pow(v, gamma)
    if transfer == "linear":
        return v
    if transfer == "pq":
        return _unit(pq_decode(v) / peak_cd_m2)
    if transfer == "table":
        return table_decode(v, samples)
    raise SettingsError(f"unknown transfer {transfer!r}; accepted: {', '.join(TRANSFERS)}")
