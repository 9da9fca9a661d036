"""Plate metadata (``starkiln.engine.plates.plate_files``): embedded, read back, rebuilt."""

import numpy as np
import pytest

from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.plates.plate_files import (check_plate_memory, plate_metadata,
                                                plate_request_from_metadata,
                                                spec_from_metadata)
from starkiln.engine.plates.projection import PlateSpec


def _meta(spec):
    return plate_metadata(Settings(), spec,
                          frame={"frame": "horizon", "site": "-31.5,115.25,250.0",
                                 "time": "2026-03-14T13:30:00", "refraction": False,
                                 "below_horizon": "drop"},
                          psf_sigma_px=0.7, values="flux",
                          counts={"drawn": 10, "missing RA/Dec": 2},
                          columns={"ra": "ra_deg", "dec": "dec_deg", "bv": "b_v"},
                          output_type="png16")


def test_metadata_survives_a_png_text_chunk_and_rebuilds_the_spec(tmp_path):
    # Reference: PNG specification (W3C, 2003) section 11.3.4.3, tEXt holds Latin-1 text
    # that a reader returns unchanged.
    from starkiln.engine.exports.image_files import read_embedded_json, write_png
    from starkiln.engine.exports.texture_metadata import metadata_json

    spec = PlateSpec("fisheye", 64, 64, fov_deg=200.0, tilt_deg=15.0)
    meta = _meta(spec)
    path = tmp_path / "plate.png"
    write_png(path, np.zeros((4, 4, 3), np.uint16), {"starkiln": metadata_json(meta)})
    back = read_embedded_json(path)
    assert spec_from_metadata(back) == spec
    req = plate_request_from_metadata(back)
    assert req["values"] == "flux" and req["psf_sigma_px"] == 0.7
    assert req["frame"]["site"] == "-31.5,115.25,250.0"
    assert Settings.from_dict(req["settings"]) == Settings()
    assert "10^(-0.4 m)" in back["values"]["meaning"]


def test_not_a_plate_is_refused():
    with pytest.raises(StarkilnError, match="not a Starkiln plate"):
        plate_request_from_metadata({"starkiln_texture": 1}, "old.png")


def test_memory_guard_says_how_much_before_allocating():
    # IEEE 754 binary32 is 4 bytes (common practice): 8192 x 4096 x 3 x 4 B = 384 MiB.
    assert check_plate_memory(8192, 4096) == 8192 * 4096 * 3 * 4
    with pytest.raises(StarkilnError) as e:
        check_plate_memory(200000, 100000)
    # 200000 x 100000 x 3 x 4 B = 2.4e11 B = 223.5 GiB
    assert "223.5 GiB" in str(e.value) and "\n" not in str(e.value)
    with pytest.raises(StarkilnError, match="6 faces"):
        check_plate_memory(30000, 30000, faces=6)


def test_unknown_values_kind_refused():
    spec = PlateSpec("equirect", 8, 4)
    with pytest.raises(StarkilnError, match="--values"):
        plate_metadata(Settings(), spec, frame={}, psf_sigma_px=0.7, values="nits",
                       counts={}, columns={}, output_type="png16")


@pytest.mark.parametrize("lon, lat", [(-44.99, 10.0), (0.0, 44.99), (0.0, -44.99),
                                      (-135.01, -20.0)])
def test_cube_cross_is_continuous_where_it_says(lon, lat):
    # The cross puts neighbouring faces side by side across the edges it joins: a star on
    # such an edge (directions from spherical geometry: longitude -45 is the +X / -Y edge on
    # the equator, latitude 45 over longitude 0 the +X / +Z edge) spills into the next cell
    # and stays one compact blob in the cross, centred where its face pixel sits in the cross.
    from starkiln.engine.plates.drawing import deposit
    from starkiln.engine.plates.plate_files import CROSS_CELLS, cube_cross
    from starkiln.engine.plates.projection import CUBE_FACES, project

    n = 40
    spec = PlateSpec("cube", n, n)
    x, y, face, _ = project([lon], [lat], spec)
    faces = np.zeros((6, n, n, 1))
    deposit(faces, x, y, [[1.0]], 1.0, face=face)
    assert np.count_nonzero(faces.reshape(6, -1).sum(axis=1)) >= 2      # it spilled
    cross = cube_cross(faces)
    assert cross.shape == (3 * n, 4 * n, 1) and cross.sum() == pytest.approx(1.0, rel=1e-9)
    row, col = CROSS_CELLS[CUBE_FACES[int(face[0])]]
    cx, cy = col * n + x[0], row * n + y[0]
    rows, cols = np.nonzero(cross[:, :, 0])
    w = cross[rows, cols, 0]
    # one blob: no lit pixel beyond the footprint's reach ((k + 1) sqrt 2, k = 4, plus half a
    # pixel diagonal for the reprojected part)
    assert np.hypot(cols + 0.5 - cx, rows + 0.5 - cy).max() < 5 * np.sqrt(2) + 0.71
    assert abs((w * (cols + 0.5)).sum() - cx) < 0.2 and abs((w * (rows + 0.5)).sum() - cy) < 0.2
