"""starkiln.engine.colour.cie_data: the CIE tables taken from colour-science, and their on-disk cache.

References: colour-science's datasets (CIE 15:2004 Tables T.2, T.4, T.5; CIE S 010:2004),
the engine contract (360-830 nm at 1 nm, cache keyed by the colour-science version, a warm
cache avoids importing colour).
"""

from importlib import metadata

import numpy as np
import pytest

import starkiln.engine.colour.cie_data as et

CMF_NAMES = {"cmf_cie1931": "CIE 1931 2 Degree Standard Observer",
             "cmf_cie1964": "CIE 1964 10 Degree Standard Observer"}


@pytest.fixture
def private_cache(tmp_path, monkeypatch):
    """A fresh, empty STARKILN_CACHE_DIR for this test only; the shared cache is untouched."""
    folder = tmp_path / "cache"
    monkeypatch.setenv("STARKILN_CACHE_DIR", str(folder))
    et.tables.cache_clear()
    yield folder
    et.tables.cache_clear()  # the next caller re-reads the shared cache


def test_grid():
    # CIE 15:2004 section 7.1: 360-830 nm at 1 nm.
    wl = et.tables()["wavelength_nm"]
    np.testing.assert_array_equal(wl, np.arange(360, 831, dtype=float))
    np.testing.assert_array_equal(et.wavelengths_nm(), wl)


def test_tables_equal_colour_science(colour):
    tab = et.tables()
    wl = tab["wavelength_nm"]
    for key, name in CMF_NAMES.items():
        ref = colour.MSDS_CMFS[name]
        np.testing.assert_array_equal(ref.wavelengths, wl)
        np.testing.assert_array_equal(tab[key], ref.values)
    lefs = colour.SDS_LEFS
    np.testing.assert_allclose(tab["v_photopic"], lefs["CIE 1924 Photopic Standard Observer"][wl],
                               atol=1e-15)
    scot = lefs["CIE 1951 Scotopic Standard Observer"]
    inside = (wl >= scot.shape.start) & (wl <= scot.shape.end)
    np.testing.assert_allclose(tab["v_scotopic"][inside], scot[wl[inside]], atol=1e-15)
    # CIE daylight basis functions S0, S1, S2 (CIE 15:2004 Table T.2, 5 nm): equal at the
    # tabulated points; in between, linear interpolation (CIE 15:2004 section 3.1).
    basis = colour.colorimetry.SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
    at5 = (wl % 5) == 0
    for i in range(3):
        s = basis[f"S{i}"]
        np.testing.assert_allclose(tab[f"daylight_s{i}"][at5], s[wl[at5]], atol=1e-12)
        np.testing.assert_allclose(tab[f"daylight_s{i}"],
                                   np.interp(wl, s.wavelengths, s.values), atol=1e-12)


def test_cache_written_once_and_reused(private_cache, monkeypatch):
    first = et.tables()
    files = sorted(private_cache.iterdir())
    assert len(files) == 1  # exactly one file, no temporary left behind
    # keyed by the installed colour-science version (package metadata)
    assert metadata.version("colour-science") in files[0].name
    assert files[0].suffix == ".npz"
    mtime = files[0].stat().st_mtime_ns
    # a second call after cache_clear reads the file: building is not allowed now
    et.tables.cache_clear()

    def no_build():
        raise AssertionError("tables were rebuilt although the cache is warm")

    monkeypatch.setattr(et, "build_tables", no_build)
    second = et.tables()
    assert second is not first
    for key in first:
        np.testing.assert_array_equal(second[key], first[key])
        assert not second[key].flags.writeable
    assert sorted(private_cache.iterdir()) == files
    assert files[0].stat().st_mtime_ns == mtime


def test_new_colour_version_gets_a_new_cache(private_cache, monkeypatch):
    et.tables()
    monkeypatch.setattr(et, "_colour_version", lambda: "0.0.0-test")
    et.tables.cache_clear()
    et.tables()
    names = sorted(p.name for p in private_cache.iterdir())
    assert len(names) == 2 and any("0.0.0-test" in n for n in names)


def test_corrupt_cache_is_rebuilt(private_cache, colour):
    private_cache.mkdir(parents=True)
    path = et.cache_path()
    path.write_bytes(b"not an npz file")
    tab = et.tables()
    np.testing.assert_array_equal(tab["cmf_cie1931"],
                                  colour.MSDS_CMFS[CMF_NAMES["cmf_cie1931"]].values)
    with np.load(path) as data:  # rewritten with the real tables
        np.testing.assert_array_equal(data["cmf_cie1931"], tab["cmf_cie1931"])


PROBE = ("import sys, starkiln.engine.colour.cie_data as t\n"
         "tab = t.tables()\n"
         "assert tab['cmf_cie1931'].shape == (471, 3)\n"
         "print('COLOUR:' + str('colour' in sys.modules))\n")


def test_warm_cache_does_not_import_colour(private_cache, python_run):
    # Contract: the hot path does not pay for `import colour` once the cache is warm.
    # Cold cache first (in a subprocess): colour is imported to build the tables, which
    # also shows the probe can tell.
    env = {"STARKILN_CACHE_DIR": str(private_cache)}
    cold = python_run(PROBE, env)
    assert cold.returncode == 0, cold.stderr
    assert cold.stdout.strip().endswith("COLOUR:True")
    assert len(list(private_cache.iterdir())) == 1
    warm = python_run(PROBE, env)
    assert warm.returncode == 0, warm.stderr
    assert warm.stdout.strip().endswith("COLOUR:False")


@pytest.mark.parametrize("damage", ["truncated", "empty", "wrong-shape", "nan"])
def test_damaged_cache_is_rebuilt_with_one_line(private_cache, colour, capsys, damage):
    # A cut-off download or a full disk leaves a truncated .npz (a ZIP archive, numpy format
    # docs); it is rebuilt from colour-science with one line on stderr, never a traceback.
    et.tables()  # a whole cache
    et.tables.cache_clear()
    path = et.cache_path()
    whole = path.read_bytes()
    if damage == "truncated":
        path.write_bytes(whole[: len(whole) // 2])
    elif damage == "empty":
        path.write_bytes(b"")
    else:
        arrays = dict(np.load(path))
        if damage == "wrong-shape":
            arrays["v_photopic"] = arrays["v_photopic"][:10]
        else:
            arrays["cmf_cie1931"] = arrays["cmf_cie1931"].copy()
            arrays["cmf_cie1931"][5, 1] = np.nan
        with open(path, "wb") as fh:
            np.savez(fh, **arrays)
    capsys.readouterr()
    tab = et.tables()
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("starkiln: note: table cache")
    assert "rebuilding" in err and str(path) in err
    # CIE 15:2004 Table T.4 as shipped by colour-science (the reference library).
    np.testing.assert_array_equal(tab["cmf_cie1931"],
                                  colour.MSDS_CMFS[CMF_NAMES["cmf_cie1931"]].values)
    assert path.read_bytes() == whole  # rewritten whole
    et.tables.cache_clear()
    et.tables()
    assert capsys.readouterr().err == ""  # and read quietly next time
