"""Wrote night_renders_ca2759a.npz: night renders (magnitudes, no dome compensation) of every
display preset and two working spaces, with and without night tint, by the chroma formula of
commit ca2759a (chroma scaled about Oklab a = b = 0), so that tests/test_vision.py can bound how
far the neutral-axis formula moved them.
Run: ``python tests/data/make_night_renders.py OUT.npz`` (on that commit, to remake it).
"""
import sys, numpy as np
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.pipeline.render import render
t = np.geomspace(1000.0, 40000.0, 41)
m = np.linspace(-3.0, 8.0, 23)
out = {}
for disp in ("srgb", "display-p3", "dci-p3", "rec2020", "rec2100-pq", "acescg", "lin-srgb"):
    for tint in (0.0, 0.4):
        r = render(Settings(display=disp, scene_white="D50", night_tint=tint), t[None, :], m[:, None])
        out[f"{disp}|{tint}|lin"] = r.rgb_linear
        out[f"{disp}|{tint}|sat"] = r.saturation
np.savez_compressed(sys.argv[1], temperature_K=t, magnitude=m, **out)
print(len(out))
