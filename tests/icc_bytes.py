"""A small ICC profile writer for the tests only: matrix/TRC RGB profiles (and broken ones).

Written from ICC.1:2022 ([ICC1] sections 7.2 header, 7.3 tag table, 10.2 mluc, 10.6 curv,
10.18 para, 10.22 s15Fixed16Array, 10.31 XYZ). LittleCMS reading the result back is checked in
tests/test_icc_profiles.py (``test_the_test_writer_reads_back_through_littlecms``).
"""

from __future__ import annotations

import struct

import numpy as np

D50_ICC = (0.9642, 1.0, 0.8249)  # [ICC1] 7.2.16, the PCS illuminant


def s15(v: float) -> bytes:
    return struct.pack(">i", int(round(v * 65536.0)))


def xyz_tag(xyz) -> bytes:
    return b"XYZ " + b"\0" * 4 + b"".join(s15(v) for v in xyz)


def curv_gamma(gamma: float) -> bytes:
    return b"curv" + b"\0" * 4 + struct.pack(">IH", 1, int(round(gamma * 256.0)))


def curv_table(entries_0_1) -> bytes:
    e = np.round(np.asarray(entries_0_1) * 65535.0).astype(">u2")
    return b"curv" + b"\0" * 4 + struct.pack(">I", e.size) + e.tobytes()


def para(function: int, params) -> bytes:
    return b"para" + b"\0" * 4 + struct.pack(">HH", function, 0) + b"".join(s15(p) for p in params)


def sf32(matrix) -> bytes:
    return b"sf32" + b"\0" * 4 + b"".join(s15(v) for v in np.asarray(matrix).ravel())


def mluc(text: str) -> bytes:
    u = text.encode("utf-16-be")
    return b"mluc" + b"\0" * 4 + struct.pack(">II", 1, 12) + b"enUS" + struct.pack(">II", len(u), 28) + u


def profile(tags: dict, device_class: bytes = b"mntr", version: int = 0x04400000,
            colour_space: bytes = b"RGB ", pcs: bytes = b"XYZ ") -> bytes:
    """The bytes of a profile holding ``tags`` ({signature: tag bytes})."""
    count = len(tags)
    offset = 128 + 4 + 12 * count
    table, body = b"", b""
    for sig, data in tags.items():
        data = data + b"\0" * (-len(data) % 4)
        table += sig.encode("latin-1") + struct.pack(">II", offset + len(body), len(data))
        body += data
    size = offset + len(body)
    header = (struct.pack(">I", size) + b"lcms" + struct.pack(">I", version) + device_class
              + colour_space + pcs + struct.pack(">6H", 2026, 1, 1, 0, 0, 0) + b"acsp"
              + b"\0" * 4 + b"\0" * 4 + b"\0" * 4 + b"\0" * 4 + b"\0" * 8 + struct.pack(">I", 0)
              + b"".join(s15(v) for v in D50_ICC) + b"\0" * 4 + b"\0" * 16 + b"\0" * 28)
    assert len(header) == 128
    return header + struct.pack(">I", count) + table + body


def matrix_trc(primaries_xy, white_xy, trc: bytes, *, chad: bool = True, lumi=None,
               version: int = 0x04400000, description: str = "test display") -> bytes:
    """A matrix/TRC display profile: colorants adapted to D50 with Bradford (colour-science),
    with a ``chad`` tag (v4 style, wtpt = D50) or without (v2 style, wtpt = the white)."""
    import colour

    npm = colour.normalised_primary_matrix(np.array(primaries_xy), np.array(white_xy))
    w = colour.xy_to_XYZ(np.array(white_xy))
    m = colour.adaptation.matrix_chromatic_adaptation_VonKries(w, np.array(D50_ICC), "Bradford")
    colorants = m @ npm
    tags = {"desc": mluc(description),
            "wtpt": xyz_tag(D50_ICC if chad else w),
            "rXYZ": xyz_tag(colorants[:, 0]), "gXYZ": xyz_tag(colorants[:, 1]),
            "bXYZ": xyz_tag(colorants[:, 2]), "rTRC": trc, "gTRC": trc, "bTRC": trc}
    if chad:
        tags["chad"] = sf32(m)
    if lumi is not None:
        tags["lumi"] = xyz_tag((0.0, lumi, 0.0))
    return profile(tags, version=version)
