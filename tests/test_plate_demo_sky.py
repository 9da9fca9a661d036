"""The invented whole-sky demo catalogue (assets/demo_sky.csv)."""

import csv
import importlib.util

import numpy as np

from tests.conftest import REPO_ROOT
from starkiln.engine.plates.frames import check_radec


def test_demo_sky_file_is_what_its_seeded_script_makes(tmp_path):
    spec = importlib.util.spec_from_file_location("make_demo_sky",
                                                  REPO_ROOT / "assets" / "make_demo_sky.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    fresh = mod.main(tmp_path / "sky.csv")
    assert fresh.read_bytes() == (REPO_ROOT / "assets" / "demo_sky.csv").read_bytes()


def test_demo_sky_is_a_valid_whole_sky_for_the_catalogue_command(tmp_path):
    rows = list(csv.DictReader(open(REPO_ROOT / "assets" / "demo_sky.csv", encoding="ascii")))
    ra = np.array([float(r["ra_deg"]) for r in rows])
    dec = np.array([float(r["dec_deg"]) for r in rows])
    ok, reasons = check_radec(ra, dec)
    assert ok.all() and len(rows) == 4000
    # Whole sky: both hemispheres and every 90-degree slice of RA are populated.
    assert (dec > 45).any() and (dec < -45).any()
    assert len(np.unique((ra // 90).astype(int))) == 4
    from starkiln.cli.main import main

    out = tmp_path / "coloured.csv"
    assert main(["catalogue", str(REPO_ROOT / "assets" / "demo_sky.csv"), str(out),
                 "--temperature-column", "temperature_K", "--magnitude-column", "magnitude",
                 "--no-progress"]) == 0
    assert sum(1 for _ in open(out)) == 4001
