"""Wrote display_renders_fadeace.npz: renders of every display preset and gamut method, run
once on commit fadeace (before working spaces went through the render path), so that
tests/test_working_space_outputs.py can check that display renders stay bit for bit the same.
Run: ``python tests/data/make_display_renders.py OUT.npz`` (on that commit, to remake it).
"""
import sys, numpy as np
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.pipeline.render import render
t = np.geomspace(1000.0, 40000.0, 41)
m = np.linspace(-2.0, 8.0, 6)
out = {}
for disp in ("srgb", "display-p3", "dci-p3", "rec2020", "rec2100-pq"):
    for gamut in ("clip", "scale", "chroma"):
        s = Settings(display=disp, gamut=gamut, scene_white="D50")
        r = render(s, t)
        out[f"{disp}|{gamut}|enc"] = r.rgb_encoded
        out[f"{disp}|{gamut}|lin"] = r.rgb_linear
        n = render(s.replace(compensate=True), t[None, :], m[:, None])
        out[f"{disp}|{gamut}|night_lin"] = n.rgb_linear
        out[f"{disp}|{gamut}|night_dim"] = n.rgb_dimmed_encoded
np.savez_compressed(sys.argv[1], temperature_K=t, magnitude=m, **out)
print(len(out))
