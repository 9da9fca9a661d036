"""ICC profile building blocks for the tests: the engine's writer (starkiln.engine.colour.icc_writer)
under the short names the tests use, for the deliberately odd profiles (version 2 without ``chad``,
other classes, LUT-only, truncated). LittleCMS reading the writer's output back is checked in
tests/test_icc_profiles.py and tests/test_png_icc.py.
"""

from __future__ import annotations

from starkiln.engine.colour.icc_writer import (  # noqa: F401  (re-exported for the tests)
    D50_ICC,
    curv_gamma,
    curv_table,
    mluc,
    para,
    s15,
    sf32,
    xyz_tag,
)
from starkiln.engine.colour.icc_writer import assemble_profile as profile  # noqa: F401
from starkiln.engine.colour.icc_writer import matrix_trc_profile


def matrix_trc(primaries_xy, white_xy, trc: bytes, *, chad: bool = True, lumi=None,
               version: int = 0x04400000, description: str = "test display") -> bytes:
    """A matrix/TRC display profile (the engine's writer, with the tests' default name)."""
    return matrix_trc_profile(primaries_xy, white_xy, trc, chad=chad, lumi=lumi,
                              version=version, description=description)
