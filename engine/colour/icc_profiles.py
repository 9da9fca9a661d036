"""Display profiles from ICC matrix/TRC display profiles (ICC v2 and v4).

What is read, and from where:

- LittleCMS, through Pillow's ``ImageCms`` (``getOpenProfile(...).profile``), opens the file
  (a missing, non-ICC or damaged file fails here) and gives the header and the colorimetric
  tags: the profile class (``mntr`` only: a display), the colour space (``RGB``), the
  connection space (``XYZ``), the version, ``rXYZ``/``gXYZ``/``bXYZ`` (the colorants, in the
  D50 profile connection space), ``wtpt`` (media white point), ``chad`` (chromatic adaptation)
  and ``lumi`` (luminance, cd/m2).
- The primaries are the colorants adapted back from D50 to the display's own white: with the
  inverse of the profile's ``chad`` matrix when it has one, and with the Bradford transform
  from D50 to ``wtpt`` otherwise ([ICC1] Annex E and section 9.2.15; [Lam1985] for Bradford).
  The white is ``chad^-1 . D50`` with a ``chad`` tag (a v4 ``wtpt`` holds D50 itself), else
  ``wtpt``. Peak luminance is ``lumi`` Y, or 80 cd/m2 (the [IEC61966-2-1] reference display)
  when the profile has no ``lumi`` tag, said in the profile's note.
- The tone curves ``rTRC``/``gTRC``/``bTRC``: Pillow exposes no curve attribute, and its
  LittleCMS transforms run on 8-bit images only (RGB, RGBA and LAB modes), too coarse to tell
  a gamma from a table within 1e-3; so the curve tags are read from the file's tag table by
  :func:`read_trc` (``curv``, [ICC1] section 10.6, and ``para``, section 10.18). The three
  curves are sampled at 1024 code values and stored as ``srgb`` when the [IEC61966-2-1]
  curve fits within 1e-3 (display-linear, every sample), as ``gamma`` when a pure power of
  1-4 fits within 1e-3, as ``linear`` when the identity does, as ``pq`` when the [ST2084]
  EOTF divided by the profile's peak luminance does (the curve Starkiln's own PQ profiles
  hold, :mod:`starkiln.engine.colour.icc_writer`), and as a ``table`` transfer otherwise (the ``curv`` entries themselves when the three curves are the same table).

Not read: LUT-based profiles (``A2B0`` tables without colorant tags), and profiles of the
input (``scnr``), output (``prtr``), abstract, link, colour-space and named-colour classes.

References
----------
[ICC1] sections 7.2 (header), 7.3 (tag table), 9.2 (tags), 10.6 (curveType), 10.18
(parametricCurveType), Annex E (chromatic adaptation); [Lam1985] (Bradford);
[IEC61966-2-1] (the sRGB curve and 80 cd/m2 reference luminance).
"""

from __future__ import annotations

import io
import struct
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.errors import SettingsError

#: What :func:`display_from_icc` reads, for messages.
ACCEPTED = "accepted: ICC v2 or v4 matrix/TRC display profiles (class 'mntr', RGB, XYZ PCS)"
#: PCS illuminant D50 as the ICC header holds it (s15Fixed16: 0.9642, 1.0, 0.8249) [ICC1] 7.2.16.
D50_XYZ = np.array([0.9642, 1.0, 0.8249])
#: Tolerance of the srgb / gamma / linear fits, display-linear, at every sample.
FIT_TOLERANCE = 1e-3
CURVE_SAMPLES = 1024
DEFAULT_PEAK_CD_M2 = 80.0  # [IEC61966-2-1] reference display luminance
_CLASS_NAMES = {"scnr": "input (scanner/camera)", "prtr": "output (printer)",
                "link": "device link", "spac": "colour space", "abst": "abstract",
                "nmcl": "named colour"}


@dataclass(frozen=True)
class ImportedProfile:
    """A display read from an ICC profile, with notes on what was assumed."""

    display: object  # starkiln.engine.colour.displays.Display
    notes: tuple[str, ...]


def _fail(path, what: str) -> SettingsError:
    return SettingsError(f"{path}: {what}; {ACCEPTED}")


def _tag_table(data: bytes, path) -> dict[str, tuple[int, int]]:
    """Tag signature -> (offset, size) from the tag table ([ICC1] 7.3), checked for length."""
    if len(data) < 132 or data[36:40] != b"acsp":
        raise _fail(path, "not an ICC profile (no 'acsp' signature)")
    declared = struct.unpack(">I", data[0:4])[0]
    if declared > len(data):
        raise _fail(path, f"truncated ({len(data)} bytes of the {declared} its header declares)")
    count = struct.unpack(">I", data[128:132])[0]
    if 132 + 12 * count > len(data):
        raise _fail(path, "truncated (the tag table runs past the end of the file)")
    tags = {}
    for i in range(count):
        sig, off, size = struct.unpack(">4sII", data[132 + 12 * i:144 + 12 * i])
        if off + size > len(data):
            raise _fail(path, f"truncated (tag {sig.decode('latin-1')!r} runs past the end)")
        tags[sig.decode("latin-1")] = (off, size)
    return tags


def read_trc(data: bytes, offset: int, size: int, code_values: np.ndarray, what: str):
    """One tone-curve tag evaluated at ``code_values`` (0-1), and its table if it is one.

    Parameters
    ----------
    data : bytes
        The whole profile.
    offset, size : int
        Where the tag's data lies (from the tag table).
    code_values : numpy.ndarray
        Device code values 0-1 to evaluate the curve at.
    what : str
        How messages name the tag (``"profile.icc: rTRC"``).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray or None)
        The curve's output (0-1) at ``code_values``, and a ``curv`` tag's own entries (0-1)
        when it has two or more, else None.

    References
    ----------
    [ICC1] section 10.6 (curveType: no entry = identity, one entry = a u8Fixed8 gamma, N
    entries = N equally spaced samples interpolated linearly) and section 10.18
    (parametricCurveType, functions 0-4).
    """
    tag = data[offset:offset + size]
    kind = tag[0:4]
    if kind == b"curv" and len(tag) >= 12:
        n = struct.unpack(">I", tag[8:12])[0]
        if len(tag) < 12 + 2 * n:
            raise SettingsError(f"{what}: curve tag truncated; {ACCEPTED}")
        entries = np.frombuffer(tag[12:12 + 2 * n], dtype=">u2").astype(np.float64) / 65535.0
        if n == 0:
            return code_values.copy(), None
        if n == 1:
            gamma = struct.unpack(">H", tag[12:14])[0] / 256.0
            return np.power(code_values, gamma), None
        return np.interp(code_values, np.linspace(0.0, 1.0, n), entries), entries
    if kind == b"para" and len(tag) >= 12:
        function = struct.unpack(">H", tag[8:10])[0]
        counts = {0: 1, 1: 3, 2: 4, 3: 5, 4: 7}
        if function not in counts or len(tag) < 12 + 4 * counts[function]:
            raise SettingsError(f"{what}: parametric curve function {function} unreadable; "
                                f"{ACCEPTED}")
        p = [v / 65536.0 for v in struct.unpack(f">{counts[function]}i",
                                                tag[12:12 + 4 * counts[function]])]
        named = dict(zip("gabcdef", p))  # the parameters in the order of [ICC1] Table 68
        g, a, b = named["g"], named.get("a", 1.0), named.get("b", 0.0)
        c, d, e, f = (named.get(k, 0.0) for k in "cdef")
        x = code_values
        if function == 0:
            y = np.power(x, g)
        elif function == 1:  # Y = (aX + b)^g for X >= -b/a, else 0
            y = np.where(x >= -b / a, np.power(np.maximum(a * x + b, 0.0), g), 0.0)
        elif function == 2:  # Y = (aX + b)^g + c for X >= -b/a, else c
            y = np.where(x >= -b / a, np.power(np.maximum(a * x + b, 0.0), g) + c, c)
        elif function == 3:  # Y = (aX + b)^g for X >= d, else cX
            y = np.where(x >= d, np.power(np.maximum(a * x + b, 0.0), g), c * x)
        else:  # Y = (aX + b)^g + e for X >= d, else cX + f
            y = np.where(x >= d, np.power(np.maximum(a * x + b, 0.0), g) + e, c * x + f)
        return np.clip(y, 0.0, 1.0), None
    raise SettingsError(f"{what}: tone-curve tag of type {kind.decode('latin-1')!r}; "
                        f"accepted: 'curv' or 'para' ({ACCEPTED.removeprefix('accepted: ')})")


def fit_transfer(code_values: np.ndarray, linear: np.ndarray, table=None,
                 tolerance: float = FIT_TOLERANCE, peak_cd_m2: float | None = None) -> dict:
    """The simplest transfer that reproduces a sampled tone curve within ``tolerance``.

    Tried in order: ``linear``, ``srgb``, ``gamma`` (a pure power of 1-4, fitted by least
    squares on log values), ``pq`` when ``peak_cd_m2`` is given (the [ST2084] EOTF divided
    by that peak, clipped at 1: how a PQ display's curve is stored in a profile), then a
    ``table``: ``table`` if given, else the curve at its samples (which must then be equally
    spaced from 0 to 1).

    Parameters
    ----------
    code_values, linear : numpy.ndarray
        The curve: code values 0-1 and their display-linear outputs 0-1.
    table : array-like, optional
        Samples to store if no formula fits (equally spaced code values 0..1).
    tolerance : float
        Largest display-linear difference accepted at any sample.
    peak_cd_m2 : float, optional
        The display's peak luminance; given, the PQ curve normalised to it is tried too.

    Returns
    -------
    dict
        ``{"transfer": ..., "gamma": ..., "transfer_samples": (...), "error": max difference}``.

    References
    ----------
    [IEC61966-2-1] section 5.2 (the sRGB curve); [BT1886] (pure power); [ST2084] (PQ);
    module docstring.
    """
    from starkiln.engine.colour.displays import pq_decode, srgb_decode

    v = np.asarray(code_values, dtype=np.float64)
    y = np.asarray(linear, dtype=np.float64)
    candidates = [("linear", 2.2, np.max(np.abs(y - v))),
                  ("srgb", 2.2, np.max(np.abs(y - srgb_decode(v))))]
    use = (v > 0.05) & (y > 1e-6)
    if use.sum() >= 2:
        lv, ly = np.log(v[use]), np.log(y[use])
        gamma = float(np.sum(lv * ly) / np.sum(lv * lv))
        if 1.0 <= gamma <= 4.0:
            candidates.append(("gamma", gamma, np.max(np.abs(y - np.power(v, gamma)))))
    if peak_cd_m2 is not None:
        pq = np.minimum(pq_decode(v) / peak_cd_m2, 1.0)
        candidates.append(("pq", 2.2, np.max(np.abs(y - pq))))
    for name, gamma, err in candidates:
        if err <= tolerance:
            return {"transfer": name, "gamma": gamma, "transfer_samples": (),
                    "error": float(err)}
    samples = np.asarray(table if table is not None else y, dtype=np.float64)
    samples = np.maximum.accumulate(np.clip(samples, 0.0, 1.0))
    low, high = samples[0], samples[-1]
    if high <= low:
        raise SettingsError("tone curve is flat; accepted: a curve rising from black to white")
    samples = (samples - low) / (high - low)
    samples[0], samples[-1] = 0.0, 1.0
    return {"transfer": "table", "gamma": 2.2,
            "transfer_samples": tuple(float(s) for s in samples), "error": 0.0}


def chromaticity_of(XYZ) -> tuple[float, float]:
    """xy of tristimulus values ([CIE15] eq. 7.3) as a pair of floats; a point past the
    x + y = 1 edge by less than 1e-4 (a primary on the spectral edge, read back through
    rounded tags or readings) is moved onto it, keeping x / y.

    Parameters
    ----------
    XYZ : array-like
        Tristimulus values, any scale.

    Returns
    -------
    tuple of float

    References
    ----------
    [CIE15] eq. 7.3.
    """
    X, Y, Z = (float(v) for v in XYZ)
    total = X + Y + Z
    x, y = X / total, Y / total
    if 1.0 < x + y <= 1.0 + 1e-4:
        x, y = x / (x + y), y / (x + y)
    return x, y


def _xyz(pair) -> np.ndarray:
    """The XYZ half of a Pillow (XYZ, xyY) tag pair."""
    return np.array(pair[0], dtype=np.float64)


def display_from_icc(path, name: str | None = None) -> ImportedProfile:
    """Read a matrix/TRC ICC display profile as a Starkiln display (module docstring).

    Parameters
    ----------
    path : path-like
        The ``.icc`` / ``.icm`` file.
    name : str, optional
        The display's name; default: the profile's description, else the file's stem.

    Returns
    -------
    ImportedProfile
        The display and notes on what was assumed (no ``lumi`` tag, differing curves...).

    Raises
    ------
    SettingsError
        One line naming the file and the kinds of profile that are read.

    References
    ----------
    [ICC1] Annex E, sections 7.2, 9.2, 10.6, 10.18; [Lam1985]; [IEC61966-2-1].
    """
    from PIL import ImageCms

    from starkiln.engine.colour.displays import Display
    from starkiln.engine.colour.whites import adaptation_matrix

    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise _fail(path, "no such file") from None
    except IsADirectoryError:
        raise _fail(path, "is a folder") from None
    except OSError as exc:
        raise _fail(path, f"cannot be read ({exc.strerror or exc})") from None
    tags = _tag_table(data, path)
    try:
        info = ImageCms.getOpenProfile(io.BytesIO(data)).profile
    except (ImageCms.PyCMSError, OSError, ValueError, TypeError):
        raise _fail(path, "LittleCMS cannot read it as an ICC profile") from None
    cls = info.device_class
    if cls != "mntr":
        raise _fail(path, f"a profile of the {_CLASS_NAMES.get(cls, repr(cls))} class, not a "
                          "display")
    if info.xcolor_space.strip() != "RGB":
        raise _fail(path, f"a {info.xcolor_space.strip()!r} display profile, not RGB")
    colorants = [info.red_colorant, info.green_colorant, info.blue_colorant]
    trcs = [t for t in ("rTRC", "gTRC", "bTRC") if t in tags]
    if any(c is None for c in colorants) or len(trcs) < 3:
        if "A2B0" in tags or "A2B1" in tags or info.clut:
            raise _fail(path, "a LUT-based display profile (A2B tables without colorant and "
                              "tone-curve tags)")
        raise _fail(path, "no colorant (rXYZ, gXYZ, bXYZ) and tone-curve (rTRC, gTRC, bTRC) "
                          "tags")
    if info.connection_space.strip() != "XYZ":
        raise _fail(path, f"connection space {info.connection_space.strip()!r}, not XYZ")
    notes = []
    colorant_XYZ = np.column_stack([_xyz(c) for c in colorants])  # columns R, G, B at D50
    if info.chromatic_adaptation is not None:
        chad = np.array(info.chromatic_adaptation[0], dtype=np.float64)
        back = np.linalg.inv(chad)  # [ICC1] Annex E: PCS D50 -> the display's white
        white_XYZ = back @ D50_XYZ
    else:
        white_XYZ = (_xyz(info.media_white_point) if info.media_white_point is not None
                     else D50_XYZ.copy())
        back = adaptation_matrix(D50_XYZ, white_XYZ, "bradford")
        notes.append("no chromatic adaptation tag: colorants adapted back from D50 with "
                     "Bradford (ICC.1 Annex E)")
    primaries_XYZ = back @ colorant_XYZ
    red, green, blue = (chromaticity_of(primaries_XYZ[:, i]) for i in range(3))
    white = chromaticity_of(white_XYZ)
    if info.luminance is not None:
        peak = float(info.luminance[0][1])
    else:
        peak = DEFAULT_PEAK_CD_M2
        notes.append(f"no luminance tag: peak luminance {peak:g} cd/m2 assumed (the IEC "
                     "61966-2-1 reference display)")
    codes = np.linspace(0.0, 1.0, CURVE_SAMPLES)
    curves, tables = [], []
    for t in ("rTRC", "gTRC", "bTRC"):
        y, table = read_trc(data, *tags[t], codes, f"{path}: {t}")
        curves.append(y)
        tables.append(table)
    curves = np.array(curves)
    spread = float(np.max(curves.max(axis=0) - curves.min(axis=0)))
    if spread > FIT_TOLERANCE:
        notes.append(f"the red, green and blue tone curves differ by up to {spread:.4f}: "
                     "their mean is used")
    same_table = (all(t is not None for t in tables) and spread == 0.0
                  and len({len(t) for t in tables}) == 1 and len(tables[0]) <= 4096)
    fit = fit_transfer(codes, curves.mean(axis=0), tables[0] if same_table else None,
                       peak_cd_m2=peak)
    if abs(curves.mean(axis=0)[0]) > FIT_TOLERANCE or abs(curves.mean(axis=0)[-1] - 1) > FIT_TOLERANCE:
        notes.append("the tone curve does not run from 0 to 1: rescaled to 0-1")
    if name is None:
        name = (info.profile_description or "").strip() or path.stem
    try:
        display = Display(name, red, green, blue, white, fit["transfer"], fit["gamma"], peak,
                          "display", fit["transfer_samples"])
    except SettingsError as exc:
        raise _fail(path, f"gives no usable display ({exc})") from None
    return ImportedProfile(display, tuple(notes))


def import_icc_profile(icc_path, json_path, overwrite: bool = False) -> ImportedProfile:
    """Read an ICC display profile and write it as a JSON display profile, atomically.

    The JSON holds :meth:`Display.to_profile` plus a ``note`` naming the source file and the
    assumptions (``docs/formats.md``, "Display profiles (JSON)").

    Parameters
    ----------
    icc_path : path-like
        The ICC profile (module docstring for what is read).
    json_path : path-like
        Destination ``.json``.
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    ImportedProfile

    References
    ----------
    [ICC1]; [RFC8259] (JSON); :mod:`starkiln.engine.atomic` for the write.
    """
    imported = display_from_icc(icc_path)
    write_profile_with_note(imported.display, json_path,
                            f"imported from the ICC profile {Path(icc_path).name}",
                            imported.notes, overwrite)
    return imported


def write_profile_with_note(display, json_path, source: str, notes, overwrite: bool) -> None:
    """Write ``display`` as a JSON display profile whose ``note`` says where it came from.

    References
    ----------
    [RFC8259] (JSON); :mod:`starkiln.engine.atomic` for the write.
    """
    import json

    from starkiln.engine.atomic import write_atomic
    from starkiln.engine.atomic import check_writable

    check_writable(json_path, overwrite)
    profile = display.to_profile()
    profile["note"] = "; ".join((source,) + tuple(notes))
    text = json.dumps(profile, indent=2) + "\n"
    write_atomic(json_path, text.encode("utf-8"), overwrite=overwrite)
