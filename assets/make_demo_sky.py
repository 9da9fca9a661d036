"""Generate ``demo_sky.csv``: the invented whole sky "Ember Reach" for star plates.

Everything here is invented for the demo; no star corresponds to a real one and no
catalogue was consulted. Run ``python assets/make_demo_sky.py`` to rebuild the file;
the seed makes the output identical on every run (numpy's PCG64 generator).

Recipe (plausible-looking, not a physical model):

- 4000 stars, positions uniform on the sphere (RA uniform, sin Dec uniform), except a
  band of 1500 of them concentrated within a few degrees of an invented great circle
  tilted 55 degrees to the equator (a fictional galactic plane);
- magnitudes from a rising count law N(<m) ~ 10^(0.45 m) between -1 and 7.5 (the slope
  is an invented round number near star-count practice);
- temperatures log-uniform 3000-12000 K with a few hotter stars up to 25000 K.
- Names ``Ember-0001`` ... numbered from the brightest.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

SEED = 20261202
N_FIELD, N_BAND = 2500, 1500
BAND_TILT_DEG, BAND_WIDTH_DEG = 55.0, 4.0
MAG_BRIGHT, MAG_FAINT, MAG_SLOPE = -1.0, 7.5, 0.45


def generate():
    """The rows (name, ra_deg, dec_deg, temperature_K, magnitude), brightest first."""
    rng = np.random.default_rng(SEED)
    ra = rng.uniform(0.0, 360.0, N_FIELD)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, N_FIELD)))
    # The band: points near the equator of a frame tilted about the x axis.
    lon = np.radians(rng.uniform(0.0, 360.0, N_BAND))
    lat = np.radians(np.clip(rng.normal(0.0, BAND_WIDTH_DEG, N_BAND), -89.0, 89.0))
    x, y, z = np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)
    t = np.radians(BAND_TILT_DEG)
    y, z = y * np.cos(t) - z * np.sin(t), y * np.sin(t) + z * np.cos(t)
    ra = np.concatenate([ra, np.degrees(np.arctan2(y, x)) % 360.0])
    dec = np.concatenate([dec, np.degrees(np.arcsin(np.clip(z, -1, 1)))])
    n = ra.size
    # Inverse of N(<m) ~ 10^(k m) between the bright and faint limits.
    a, b = 10 ** (MAG_SLOPE * MAG_BRIGHT), 10 ** (MAG_SLOPE * MAG_FAINT)
    mag = np.log10(a + rng.random(n) * (b - a)) / MAG_SLOPE
    temp = np.exp(rng.uniform(np.log(3000.0), np.log(12000.0), n))
    hot = rng.random(n) < 0.02
    temp[hot] = rng.uniform(12000.0, 25000.0, hot.sum())
    order = np.argsort(mag, kind="stable")
    return [(f"Ember-{i + 1:04d}", f"{ra[j]:.5f}", f"{dec[j]:.5f}", f"{temp[j]:.0f}",
             f"{mag[j]:.2f}") for i, j in enumerate(order)]


def main(path=None):
    """Write the CSV beside this script (or at ``path``)."""
    path = Path(path) if path else Path(__file__).with_name("demo_sky.csv")
    with open(path, "w", newline="", encoding="ascii") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["name", "ra_deg", "dec_deg", "temperature_K", "magnitude"])
        w.writerows(generate())
    return path


if __name__ == "__main__":
    print(main())
