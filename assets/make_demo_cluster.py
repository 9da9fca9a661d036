"""Generate ``demo_cluster.csv``: the invented "Kiln" cluster used by the window's sky preview.

Everything here is invented for the demo; no star corresponds to a real one and
no catalogue was consulted. Run ``python assets/make_demo_cluster.py`` to
rebuild the file; the seed makes the output identical on every run (numpy's
PCG64 generator is stable across platforms for the methods used here).

Recipe (a plausible-looking young open cluster, not a physical model):

- 250 members: masses from a power law dN/dM ~ M^-2.35 between 0.35 and 9
  solar masses (Salpeter's slope, common practice); temperature
  ``5772 K * M^0.54`` with 3 % scatter; apparent magnitude
  ``6.9 - 7.3 log10(M / 0.5) / log10(18)`` with 0.25 mag scatter (brighter for
  heavier stars; an invented relation); positions from a Plummer profile with a
  0.45 degree core, cut at 1.8 degrees.
- 6 cool giants: 3900-4700 K, magnitudes 0.8-2.8, near the centre.
- 64 field stars: uniform over the patch, 3000-9500 K, magnitudes 3.5-7.5.
- Names ``Kiln-001`` ... numbered from the brightest.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

SEED = 20240607
CENTRE_RA_DEG, CENTRE_DEC_DEG = 203.5, -12.3  # an arbitrary, invented patch
HALF_WIDTH_DEG, HALF_HEIGHT_DEG = 2.2, 1.5


def generate():
    rng = np.random.default_rng(SEED)
    n = 250
    lo, hi, alpha = 0.35, 9.0, 2.35
    u = rng.random(n)
    a1 = 1.0 - alpha
    mass = (lo ** a1 + u * (hi ** a1 - lo ** a1)) ** (1.0 / a1)
    t = 5772.0 * mass ** 0.54 * (1.0 + 0.03 * rng.standard_normal(n))
    mag = 6.9 - 7.3 * np.log10(mass / 0.5) / np.log10(18.0) + 0.25 * rng.standard_normal(n)
    r = 0.45 / np.sqrt(np.maximum(rng.random(n), 1e-6) ** (-2.0 / 3.0) - 1.0)
    r = np.minimum(r, 1.8 * rng.random(n) + 0.2)
    phi = rng.random(n) * 2 * np.pi
    dx, dy = r * np.cos(phi), r * np.sin(phi)

    g = 6
    gt = rng.uniform(3900.0, 4700.0, g)
    gm = rng.uniform(0.8, 2.8, g)
    gr = np.abs(rng.normal(0.0, 0.35, g))
    gphi = rng.random(g) * 2 * np.pi

    f = 64
    ft = np.exp(rng.uniform(np.log(3000.0), np.log(9500.0), f))
    fm = rng.uniform(3.5, 7.5, f)
    fx = rng.uniform(-HALF_WIDTH_DEG, HALF_WIDTH_DEG, f)
    fy = rng.uniform(-HALF_HEIGHT_DEG, HALF_HEIGHT_DEG, f)

    x = np.concatenate([dx, gr * np.cos(gphi), fx])
    y = np.concatenate([dy, gr * np.sin(gphi), fy])
    temp = np.concatenate([t, gt, ft])
    mags = np.concatenate([mag, gm, fm])
    keep = (np.abs(x) <= HALF_WIDTH_DEG) & (np.abs(y) <= HALF_HEIGHT_DEG)
    x, y, temp, mags = x[keep], y[keep], temp[keep], mags[keep]
    dec = CENTRE_DEC_DEG + y
    ra = CENTRE_RA_DEG + x / np.cos(np.radians(dec))
    order = np.argsort(mags, kind="stable")
    return ra[order], dec[order], temp[order], mags[order]


def write(path: Path) -> None:
    ra, dec, temp, mags = generate()
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["name", "ra_deg", "dec_deg", "temperature_K", "magnitude"])
        for i, row in enumerate(zip(ra, dec, temp, mags), start=1):
            w.writerow([f"Kiln-{i:03d}", f"{row[0]:.5f}", f"{row[1]:.5f}", f"{row[2]:.0f}",
                        f"{row[3]:.2f}"])


if __name__ == "__main__":
    write(Path(__file__).with_name("demo_cluster.csv"))
