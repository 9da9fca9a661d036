"""Shared test helpers for the Starkiln test suite.

The CIE table cache is deliberately *not* redirected here: every test process
shares the user's cache, so the tables are built once. ``test_tables.py``
exercises the cache mechanism with its own temporary ``STARKILN_CACHE_DIR``.
"""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import subprocess  # noqa: E402
import sys  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pytest  # noqa: E402

REPO_ROOT = Path(__file__).resolve().parent.parent


def pytest_configure(config):
    # colour-science reports every spectral re-alignment it does as a warning; the
    # reference computations below align on purpose.
    config.addinivalue_line("filterwarnings", "ignore:Aligning .* shape")


def import_colour():
    """colour-science, imported with its optional-dependency warnings silenced."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour
    return colour


@pytest.fixture(scope="session")
def colour():
    """The reference library colour-science (https://www.colour-science.org)."""
    return import_colour()


def colour_blackbody_xy(temperatures_K, observer="cie1931", c2=None):
    """Blackbody chromaticities by colour-science's own spectral route.

    ``colour.sd_blackbody`` on 360-830 nm at 1 nm, then ``colour.sd_to_XYZ``
    with the observer's CMFs by summation at the grid step (``method="Integration"``,
    CIE 15:2004 section 7.1). The default ``ASTM E308`` method trims to its
    practice range 360-780 nm, which is a different (shorter) sum.
    """
    c = import_colour()
    name = {"cie1931": "CIE 1931 2 Degree Standard Observer",
            "cie1964": "CIE 1964 10 Degree Standard Observer"}[observer]
    cmfs = c.MSDS_CMFS[name]
    shape = c.SpectralShape(360, 830, 1)
    kwargs = {} if c2 is None else {"c2": c2}
    out = []
    for t in np.atleast_1d(temperatures_K):
        sd = c.sd_blackbody(float(t), shape, **kwargs)
        out.append(c.XYZ_to_xy(c.sd_to_XYZ(sd, cmfs, method="Integration")))
    return np.array(out).reshape(np.shape(temperatures_K) + (2,))


def run_python(code, env_extra=None, timeout=60):
    """Run ``python -c code`` in a fresh interpreter from the repository root."""
    env = dict(os.environ)
    env.update(env_extra or {})
    return subprocess.run([sys.executable, "-c", code], cwd=REPO_ROOT, env=env,
                          capture_output=True, text=True, timeout=timeout)


@pytest.fixture(scope="session")
def blackbody_xy_ref():
    """:func:`colour_blackbody_xy` as a fixture."""
    return colour_blackbody_xy


@pytest.fixture(scope="session")
def python_run():
    """:func:`run_python` as a fixture."""
    return run_python
