"""ICC display profiles written from displays: ICC v4 matrix/TRC profiles of class ``mntr``.

What :func:`icc_profile_bytes` writes for a :class:`~starkiln.engine.colour.displays.Display`
(layout from ICC.1:2022, [ICC1]):

- header (section 7.2): version 4.4, class ``mntr`` (display), colour space ``RGB``,
  connection space ``XYZ``, the PCS illuminant D50 (0.9642, 1.0, 0.8249), a fixed creation
  date (so equal displays give equal bytes) and the profile ID: the MD5 of the profile with
  the flags, rendering intent and ID fields zeroed (section 7.2.18);
- ``rXYZ``/``gXYZ``/``bXYZ`` (section 9.2): the columns of the display's RGB -> XYZ matrix
  ([RP177], white -> Y = 1) adapted from the display white to D50 with Bradford ([Lam1985]);
  ``chad`` (section 9.2.15) holds that Bradford matrix, and ``wtpt`` holds D50, as version 4
  asks for displays (Annex E);
- ``rTRC``/``gTRC``/``bTRC`` (one shared tag): for ``srgb`` a ``para`` curve of function 3
  with the [IEC61966-2-1] constants (g 2.4, a 1/1.055, b 0.055/1.055, c 1/12.92, d 0.04045;
  section 10.18); for ``gamma`` and ``linear`` a ``para`` function 0 (g = gamma, or 1); for
  ``table`` a ``curv`` of the display's own samples (section 10.6: equally spaced entries
  interpolated linearly, exactly how the ``table`` transfer decodes, so they are kept as they
  are; 2-4096 entries, all within what ``curv`` holds); for ``pq`` a 4096-entry ``curv`` of
  the [ST2084] EOTF divided by the display's peak luminance (1 from the peak's code value up),
  the curve the display itself decodes with;
- ``desc`` and ``cprt`` (``multiLocalizedUnicodeType``, section 10.15) with the display's name;
  ``lumi`` (section 9.2.32) with the peak luminance in cd/m2 as Y.

Profiles are cached per display (:func:`functools.lru_cache`): a display's profile is built
once per process, however many files embed it.

The building blocks (:func:`xyz_tag`, :func:`curv_gamma`, :func:`curv_table`, :func:`para`,
:func:`sf32`, :func:`mluc`, :func:`assemble_profile`, :func:`matrix_trc_profile`) are public so
the tests build their deliberately odd profiles (version 2, no ``chad``, a printer class...)
from the same code.

References
----------
[ICC1] sections 7.2 (header), 7.3 (tag table), 9.2 (tags), 10.6 (curveType), 10.15
(multiLocalizedUnicodeType), 10.18 (parametricCurveType), 10.22 (s15Fixed16ArrayType), 10.31
(XYZType), Annex E (chromatic adaptation); [Lam1985] (Bradford); [RP177] (primary matrix);
[IEC61966-2-1] (the sRGB curve); [ST2084] (PQ).
"""

from __future__ import annotations

import hashlib
import struct
from functools import lru_cache

import numpy as np

#: PCS illuminant D50 as the ICC header holds it ([ICC1] 7.2.16).
D50_ICC = (0.9642, 1.0, 0.8249)
#: Version 4.4.0 ([ICC1] 7.2.4: major byte, minor/bug-fix nibbles).
VERSION_4_4 = 0x04400000
#: Entries of the ``curv`` a PQ display's tone curve is sampled into.
PQ_CURVE_ENTRIES = 4096
#: The sRGB curve as ``para`` function 3 ([IEC61966-2-1] 5.2; [ICC1] Table 68: g, a, b, c, d).
SRGB_PARA = (2.4, 1.0 / 1.055, 0.055 / 1.055, 1.0 / 12.92, 0.04045)
COPYRIGHT = "No copyright: written by Starkiln from the display's description"
_CREATED = (2026, 1, 1, 0, 0, 0)  # fixed, so equal displays give byte-identical profiles


def s15(value: float) -> bytes:
    """One ``s15Fixed16Number`` ([ICC1] 4.6): big-endian, value * 65536 rounded."""
    return struct.pack(">i", int(round(value * 65536.0)))


def xyz_tag(xyz) -> bytes:
    """An ``XYZType`` tag holding one XYZ triple ([ICC1] 10.31)."""
    return b"XYZ " + b"\0" * 4 + b"".join(s15(v) for v in xyz)


def curv_gamma(gamma: float) -> bytes:
    """A one-entry ``curveType``: a pure power as u8Fixed8 ([ICC1] 10.6)."""
    return b"curv" + b"\0" * 4 + struct.pack(">IH", 1, int(round(gamma * 256.0)))


def curv_table(entries_0_1) -> bytes:
    """A ``curveType`` of N equally spaced entries 0-1, stored as uInt16 ([ICC1] 10.6)."""
    e = np.round(np.clip(np.asarray(entries_0_1, dtype=np.float64), 0.0, 1.0)
                 * 65535.0).astype(">u2")
    return b"curv" + b"\0" * 4 + struct.pack(">I", e.size) + e.tobytes()


def para(function: int, params) -> bytes:
    """A ``parametricCurveType`` of function 0-4 with its parameters ([ICC1] 10.18)."""
    return (b"para" + b"\0" * 4 + struct.pack(">HH", function, 0)
            + b"".join(s15(p) for p in params))


def sf32(matrix) -> bytes:
    """An ``s15Fixed16ArrayType`` tag of a matrix, row by row ([ICC1] 10.22)."""
    return b"sf32" + b"\0" * 4 + b"".join(s15(v) for v in np.asarray(matrix).ravel())


def mluc(text: str) -> bytes:
    """A ``multiLocalizedUnicodeType`` tag with one en-US record, UTF-16BE ([ICC1] 10.15)."""
    u = text.encode("utf-16-be")
    return (b"mluc" + b"\0" * 4 + struct.pack(">II", 1, 12) + b"enUS"
            + struct.pack(">II", len(u), 28) + u)


def assemble_profile(tags: dict, device_class: bytes = b"mntr", version: int = VERSION_4_4,
                     colour_space: bytes = b"RGB ", pcs: bytes = b"XYZ ") -> bytes:
    """The bytes of a profile holding ``tags`` (``{signature: tag bytes}``), in that order.

    Tags with identical data share one element ([ICC1] 7.3.1 allows it); every element starts
    on a 4-byte boundary. The header's profile ID is the MD5 of the profile with the flags,
    rendering intent and ID fields zeroed ([ICC1] 7.2.18).

    Parameters
    ----------
    tags : dict
        Four-character signature -> the tag's bytes (type signature first).
    device_class, version, colour_space, pcs
        Header fields ([ICC1] 7.2.5, 7.2.4, 7.2.6, 7.2.7).

    Returns
    -------
    bytes

    References
    ----------
    [ICC1] sections 7.2 (header), 7.3 (tag table).
    """
    count = len(tags)
    offset = 128 + 4 + 12 * count
    table, body, placed = b"", b"", {}
    for sig, data in tags.items():
        if data not in placed:
            placed[data] = offset + len(body)
            body += data + b"\0" * (-len(data) % 4)
        table += sig.encode("latin-1") + struct.pack(">II", placed[data], len(data))
    size = offset + len(body)
    header = (struct.pack(">I", size) + b"\0" * 4 + struct.pack(">I", version) + device_class
              + colour_space + pcs + struct.pack(">6H", *_CREATED) + b"acsp"
              + b"\0" * 4 + b"\0" * 4 + b"\0" * 4 + b"\0" * 4 + b"\0" * 8 + struct.pack(">I", 0)
              + b"".join(s15(v) for v in D50_ICC) + b"\0" * 4 + b"\0" * 16 + b"\0" * 28)
    data = header + struct.pack(">I", count) + table + body
    digest = hashlib.md5(data).digest()  # flags (44), intent (64) and ID (84) are zero here
    return data[:84] + digest + data[100:]


def matrix_trc_profile(primaries_xy, white_xy, trc: bytes, *, chad: bool = True, lumi=None,
                       version: int = VERSION_4_4, description: str = "display",
                       copyright_text: str = COPYRIGHT) -> bytes:
    """A matrix/TRC display profile for given primaries, white and one tone-curve tag.

    Parameters
    ----------
    primaries_xy : sequence of 3 (x, y)
        Red, green and blue chromaticities.
    white_xy : (x, y)
        The display white.
    trc : bytes
        The tone-curve tag (:func:`para`, :func:`curv_table`...) used for all three channels.
    chad : bool
        Version 4 style: a ``chad`` tag and ``wtpt`` = D50. False: no ``chad`` and ``wtpt`` =
        the display white (the version 2 habit, for tests of the reader).
    lumi : float, optional
        Peak luminance, cd/m2 (``lumi`` tag).
    version : int
        Header version field.
    description, copyright_text : str
        ``desc`` and ``cprt`` texts.

    Returns
    -------
    bytes

    References
    ----------
    [ICC1] sections 9.2 and Annex E; [Lam1985] (Bradford, the matrix of
    :func:`starkiln.engine.colour.whites.adaptation_matrix`); [RP177].
    """
    from starkiln.engine.colour.displays import Display
    from starkiln.engine.colour.whites import adaptation_matrix

    red, green, blue = primaries_xy
    primaries = Display(description, red, green, blue, white_xy, "linear")  # checks the xy
    npm = primaries.rgb_to_XYZ
    white_XYZ = np.asarray(primaries.white_XYZ, dtype=np.float64)
    bradford = adaptation_matrix(white_XYZ, np.array(D50_ICC), "bradford")
    colorants = bradford @ npm
    tags = {"desc": mluc(description), "cprt": mluc(copyright_text),
            "wtpt": xyz_tag(D50_ICC if chad else white_XYZ),
            "rXYZ": xyz_tag(colorants[:, 0]), "gXYZ": xyz_tag(colorants[:, 1]),
            "bXYZ": xyz_tag(colorants[:, 2]), "rTRC": trc, "gTRC": trc, "bTRC": trc}
    if chad:
        tags["chad"] = sf32(bradford)
    if lumi is not None:
        tags["lumi"] = xyz_tag((0.0, float(lumi), 0.0))
    return assemble_profile(tags, version=version)


def trc_tag(display) -> bytes:
    """The tone-curve tag of a display (module docstring for each transfer).

    Parameters
    ----------
    display : starkiln.engine.colour.displays.Display

    Returns
    -------
    bytes
        A ``para`` or ``curv`` tag.

    References
    ----------
    [ICC1] 10.6 and 10.18 (Table 68); [IEC61966-2-1] 5.2; [ST2084].
    """
    if display.transfer == "srgb":
        return para(3, SRGB_PARA)
    if display.transfer == "gamma":
        return para(0, (display.gamma,))
    if display.transfer == "linear":
        return para(0, (1.0,))
    if display.transfer == "table":
        return curv_table(display.transfer_samples)
    if display.transfer == "pq":
        return curv_table(display.decode(np.linspace(0.0, 1.0, PQ_CURVE_ENTRIES)))
    from starkiln.engine.errors import SettingsError

    raise SettingsError(f"display {display.name!r}: transfer {display.transfer!r} has no ICC "
                        "tone curve; accepted: srgb, gamma, linear, table, pq")


@lru_cache(maxsize=64)
def icc_profile_bytes(display) -> bytes:
    """An ICC v4 matrix/TRC display profile describing ``display`` (module docstring).

    Parameters
    ----------
    display : starkiln.engine.colour.displays.Display
        A display (a working space has no display profile: its values are scene-linear).

    Returns
    -------
    bytes
        The profile; the same bytes for equal displays (built once, then cached).

    Raises
    ------
    starkiln.engine.errors.SettingsError
        ``display`` is a working space.

    References
    ----------
    [ICC1] sections 7.2, 7.3, 9.2, 10.6, 10.15, 10.18, Annex E; [Lam1985]; [IEC61966-2-1];
    [ST2084].

    Examples
    --------
    LittleCMS (through Pillow's ImageCms) opens it as a display profile:

    >>> import io
    >>> from PIL import ImageCms
    >>> from starkiln.engine.colour.displays import get_display
    >>> info = ImageCms.getOpenProfile(io.BytesIO(icc_profile_bytes(get_display("rec2020")))).profile
    >>> info.device_class, info.profile_description, info.is_matrix_shaper
    ('mntr', 'rec2020', True)
    """
    if display.kind == "working-space":
        from starkiln.engine.errors import SettingsError

        raise SettingsError(f"working space {display.name!r} holds scene-linear values; an ICC "
                            "display profile is written for displays only")
    return matrix_trc_profile((display.red_xy, display.green_xy, display.blue_xy),
                              display.white_xy, trc_tag(display),
                              lumi=display.peak_luminance_cd_m2, description=display.name)
