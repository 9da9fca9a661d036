"""TEMPORARY stand-ins for engine/plates/projection.py and drawing.py (written in another
branch). Tests that need them take the ``plate_modules`` fixture: the real modules when
they are installed, else these (a plain plate-carree mapping and a nearest-pixel deposit).
Remove this file once the real modules have merged in."""

import sys
import types
from dataclasses import dataclass

import numpy as np
import pytest


@dataclass(frozen=True)
class StandInPlateSpec:
    projection: str
    width_px: int
    height_px: int
    fov_deg: float = 180.0
    centre_lon_deg: float = 0.0
    centre_lat_deg: float = 90.0
    tilt_deg: float = 0.0


def stand_in_project(lon_deg, lat_deg, spec):
    x = (360.0 - np.asarray(lon_deg)) % 360.0 / 360.0 * spec.width_px
    y = (90.0 - np.asarray(lat_deg)) / 180.0 * spec.height_px
    return x, y, None, np.ones(x.shape, bool)


def stand_in_deposit(image, x_px, y_px, values, sigma_px, wrap_x=False, face=None):
    h, w = image.shape[:2]
    i = np.clip(np.floor(y_px).astype(int), 0, h - 1)
    j = np.floor(x_px).astype(int) % w
    np.add.at(image, (i, j), values)


@pytest.fixture
def plate_modules(monkeypatch):
    """The PlateSpec class in use (real or stand-in)."""
    try:
        from starkiln.engine.plates.projection import PlateSpec
        import starkiln.engine.plates.drawing  # noqa: F401
        return PlateSpec
    except ImportError:
        proj = types.ModuleType("starkiln.engine.plates.projection")
        proj.PlateSpec, proj.project = StandInPlateSpec, stand_in_project
        draw = types.ModuleType("starkiln.engine.plates.drawing")
        draw.deposit = stand_in_deposit
        monkeypatch.setitem(sys.modules, "starkiln.engine.plates.projection", proj)
        monkeypatch.setitem(sys.modules, "starkiln.engine.plates.drawing", draw)
        return StandInPlateSpec
