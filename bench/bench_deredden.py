"""Dereddening benchmark: 1 M observed colour indices to intrinsic ones, side by side.

Prints, in one run:

1. ``starkiln.engine.path.deredden.deredden`` on 1 000 000 stars, each with its own observed
   B-V (0-2.5) and E(B-V) (0-1.5), G23 at R_V 3.1, the table already built (its one-time
   build is printed apart). Goal: >= 1 M stars per second.
2. The per-star route it replaces: for each star, a root search in temperature
   (``scipy.optimize.brentq``) on the direct synthetic index of the blackbody through the
   dust (``planck_colour_index`` with ``dust_transmission``), timed on a sample and scaled to
   1 M stars. The ratio is the speed-up.
3. For the record: the plain index-to-temperature lookup of the same 1 M indices
   (``temperature_from_colour_index``, no dust), the floor any per-star colour step pays.
4. The catalogue's colouring step (``colour_values``, the colour grid, 1 M B-V rows) with
   ``--deredden`` at a fixed E(B-V) 0.3 against the same rows without it. Goal: the fast path
   kept (ratio <= 2x).

Usage: ``python bench/bench_deredden.py [--quick]``.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from bench_render import best_of  # this folder is the script's first import path


def per_star_route(observed, ebv) -> float:
    """Seconds per star of a per-star root search on the direct synthetic photometry."""
    from scipy.optimize import brentq

    from starkiln.engine.colour.photometry import PHOTOMETRY_GRID_NM, planck_colour_index
    from starkiln.engine.path.dust import dust_transmission

    t0 = time.perf_counter()
    for o, e in zip(observed, ebv):
        trans = dust_transmission(PHOTOMETRY_GRID_NM, e)
        mired = brentq(lambda m: float(planck_colour_index(1e6 / m, "B-V", trans)) - o,
                       10.0, 2000.0, xtol=1e-4)
        float(planck_colour_index(1e6 / mired, "B-V"))
    return (time.perf_counter() - t0) / len(observed)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repeats and samples")
    args = ap.parse_args()
    from starkiln.engine.colour.photometry import temperature_from_colour_index
    from starkiln.engine.path import deredden as dr

    n = 1_000_000
    rng = np.random.default_rng(3)
    observed = rng.uniform(0.0, 2.5, n)
    ebv = rng.uniform(0.0, 1.5, n)
    t0 = time.perf_counter()
    dr._table.cache_clear()
    dr.deredden("B-V", [0.5], 0.1)
    t_build = time.perf_counter() - t0
    repeats = 3 if args.quick else 5
    t_ours = best_of(lambda: dr.deredden("B-V", observed, ebv), repeats)
    out = dr.deredden("B-V", observed, ebv)
    ok = int(np.count_nonzero(out.status == dr.OK))
    t_lookup = best_of(lambda: temperature_from_colour_index(
        np.clip(observed, -0.3, 2.5), "B-V"), repeats)
    sample = 30 if args.quick else 100
    good = out.status == dr.OK  # the per-star route needs a bracketed root
    t_ref = per_star_route(observed[good][:sample], ebv[good][:sample]) * n

    print(f"{n} stars, own B-V 0-2.5 and E(B-V) 0-1.5, G23 R_V 3.1 ({ok} dereddened, the rest "
          f"bluer than any reddened blackbody); table built once in {t_build:.2f} s "
          "(with the dust law's import)")
    print(f"{'case':<48}{'s':>10}{'M stars/s':>12}")
    print(f"{'starkiln deredden (table lookup, vectorised)':<48}{t_ours:>10.3f}"
          f"{n / t_ours / 1e6:>12.2f}")
    print(f"{'per-star brentq on direct photometry (scaled)':<48}{t_ref:>10.1f}"
          f"{n / t_ref / 1e6:>12.5f}")
    print(f"{'index -> temperature lookup alone (no dust)':<48}{t_lookup:>10.3f}"
          f"{n / t_lookup / 1e6:>12.2f}")
    print(f"speed-up against the per-star route: {t_ref / t_ours:.0f}x; "
          f"{t_ours / t_lookup:.1f}x the plain lookup")

    from starkiln.engine.catalogue.colouring import colour_values
    from starkiln.engine.catalogue.plan import CataloguePlan
    from starkiln.engine.pipeline.settings import Settings

    rows = {"bv": (rng.uniform(0.3, 2.0, n), None)}
    plain = CataloguePlan(Settings(), "bv", "bv")
    dered = CataloguePlan(Settings(), "bv", "bv", deredden_ebv=0.3)
    colour_values(plain, rows)  # the colour grid, built or loaded once
    t_plain = best_of(lambda: colour_values(plain, rows), repeats)
    t_dered = best_of(lambda: colour_values(dered, rows), repeats)
    print(f"{'catalogue colouring step, 1 M B-V rows':<48}{'plain s':>10}{'deredden s':>12}"
          f"{'ratio':>8}")
    print(f"{'colour_values (colour grid), E(B-V) 0.3':<48}{t_plain:>10.3f}{t_dered:>12.3f}"
          f"{t_dered / t_plain:>8.2f}")
    for name, goal, value, unit, ref, ref_label, ratio, sense in (
            ("deredden_1m", "deredden 1 M stars (B-V, own E(B-V), G23), goal >= 1 M stars/s",
             n / t_ours / 1e6, "M_stars/s", n / t_ref / 1e6,
             "per-star brentq on direct photometry, scaled", t_ref / t_ours, "x faster"),
            ("deredden_catalogue", "catalogue colouring step, 1 M B-V rows, --deredden at "
             "E(B-V) 0.3, goal <= 2x", t_dered, "s", t_plain, "the same rows without it",
             t_dered / t_plain, "x the plain time")):
        print(f'RESULT name={name} goal="{goal}" value={value:.4g} unit={unit} '
              f'reference={ref:.4g} reference_label="{ref_label}" ratio={ratio:.4g} '
              f'sense="{sense}"')


if __name__ == "__main__":
    main()
