"""The sky preview's data: a small star list (the invented demo cluster) and its picture.

- :func:`load_demo_cluster` reads a star list in the demo-cluster CSV layout
  (default: the invented ``assets`` cluster).
- :func:`sky_image` draws a star list as it would appear on the display: each
  star's colour and intensity from :func:`starkiln.engine.pipeline.render.render`,
  drawn as a small Gaussian spot in display-linear light, then encoded by the
  display's transfer function.

Pure numpy, so it is tested without a display.

References
----------
[RFC4180]; [Snyder1987], *Map Projections: A Working Manual*, USGS
Professional Paper 1395, p. 164 (gnomonic projection); common practice for
drawing a point source as a small Gaussian spot.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.errors import InputRangeError, SettingsError
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars.temperature import check_temperature


@dataclass(frozen=True)
class Cluster:
    """A small star list: names, positions (degrees), temperatures and magnitudes."""

    name: np.ndarray
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    temperature_K: np.ndarray
    magnitude: np.ndarray

    def __len__(self) -> int:
        return int(self.name.size)


DEMO_CLUSTER_COLUMNS = ("name", "ra_deg", "dec_deg", "temperature_K", "magnitude")


def load_demo_cluster(path=None) -> Cluster:
    """Read a star list in the demo-cluster CSV layout (default: the invented ``assets`` cluster).

    The CSV has a header row with the columns ``name, ra_deg, dec_deg,
    temperature_K, magnitude`` (extra columns are ignored).

    Raises
    ------
    SettingsError
        Unreadable file, missing column or a value that is not a number.

    References
    ----------
    [RFC4180]; the data are invented (``assets/make_demo_cluster.py``).
    """
    if path is None:
        from starkiln.assets import asset_path

        path = asset_path("demo_cluster.csv")
    path = Path(str(path))
    try:
        with open(path, newline="", encoding="utf-8") as fh:
            rows = list(csv.DictReader(line for line in fh if not line.startswith("#")))
    except OSError as exc:
        raise SettingsError(f"{path}: cannot read star list ({exc.strerror})") from None
    if not rows:
        raise SettingsError(f"{path}: star list is empty")
    missing = [c for c in DEMO_CLUSTER_COLUMNS if c not in rows[0]]
    if missing:
        raise SettingsError(f"{path}: missing column {missing[0]!r}; needed: "
                            f"{', '.join(DEMO_CLUSTER_COLUMNS)}")
    cols = {}
    for c in DEMO_CLUSTER_COLUMNS[1:]:
        try:
            cols[c] = np.array([float(r[c]) for r in rows])
        except (TypeError, ValueError):
            raise SettingsError(f"{path}: column {c!r} holds a value that is not a number") \
                from None
    check_temperature(cols["temperature_K"], f"{path}: temperature")
    return Cluster(np.array([r["name"] for r in rows]), cols["ra_deg"], cols["dec_deg"],
                   cols["temperature_K"], cols["magnitude"])


@dataclass(frozen=True)
class SkyImage:
    """A rendered preview of a star list: 8-bit pixels and where each star landed."""

    rgb_8bit: np.ndarray  # (H, W, 3) uint8, C-contiguous
    x_px: np.ndarray
    y_px: np.ndarray
    radius_px: np.ndarray
    in_gamut: np.ndarray


def sky_image(settings: Settings, cluster: Cluster, width_px: int, height_px: int,
              radius_px=(0.7, 2.6), monitor=None,
              viewing_level: float = 1.0) -> SkyImage:
    """Draw a star list as it would appear on the display, with the current settings.

    Each star's colour and intensity come from :func:`starkiln.engine.pipeline.render.render`
    with its temperature and magnitude (night vision, tone curve). It is drawn
    as a small Gaussian spot in display-linear light; spots add; where a sum
    exceeds 1 the pixel is scaled down to keep its hue; then the display's
    transfer function encodes the picture. Brighter stars get wider spots
    (between ``radius_px`` ends, linear in magnitude over the settings' bright
    and faint magnitudes), a drawing convention of star projectors and sky
    charts (common practice), which does not change any star's colour.

    Parameters
    ----------
    settings : Settings
    cluster : Cluster
        Positions are projected onto a tangent plane at the list's centre
        (gnomonic projection, common practice) and fitted into the picture.
    width_px, height_px : int
        Picture size, 16-4096 each.
    radius_px : (float, float)
        Gaussian sigma of the spot, pixels, at the faint and at the bright end.
    monitor : Display, optional
        Encode the picture for this monitor instead of the display
        (:func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`: the window's preview).
    viewing_level : float
        With ``monitor``: the window's viewing level (0.02-1, dimmed in the monitor's linear
        light, :mod:`starkiln.engine.colour.viewing`).

    Returns
    -------
    SkyImage

    References
    ----------
    [Snyder1987], *Map Projections: A Working Manual*, USGS PP 1395, p. 164
    (gnomonic projection); :func:`starkiln.engine.pipeline.render.render` for the colours.
    """
    w, h = int(width_px), int(height_px)
    if not (16 <= w <= 4096 and 16 <= h <= 4096):
        raise InputRangeError(f"picture size {w} x {h} is outside 16-4096 pixels")
    ra = np.radians(cluster.ra_deg)
    dec = np.radians(cluster.dec_deg)
    ra0 = np.arctan2(np.mean(np.sin(ra)), np.mean(np.cos(ra)))
    dec0 = 0.5 * (dec.max() + dec.min())
    cos_c = np.sin(dec0) * np.sin(dec) + np.cos(dec0) * np.cos(dec) * np.cos(ra - ra0)
    xi = np.cos(dec) * np.sin(ra - ra0) / cos_c
    eta = (np.cos(dec0) * np.sin(dec) - np.sin(dec0) * np.cos(dec) * np.cos(ra - ra0)) / cos_c
    xi = -xi  # east to the left, as on the sky seen from inside a dome
    margin = 0.06
    span = max(np.ptp(xi) / (w * (1 - 2 * margin)), np.ptp(eta) / (h * (1 - 2 * margin)), 1e-12)
    cx, cy = 0.5 * (xi.max() + xi.min()), 0.5 * (eta.max() + eta.min())
    x = np.rint(w / 2 + (xi - cx) / span).astype(int)
    y = np.rint(h / 2 - (eta - cy) / span).astype(int)

    r = render(settings, cluster.temperature_K, cluster.magnitude)
    bright = settings.magnitude_bright
    faint = settings.magnitude_faint
    frac = np.clip((faint - cluster.magnitude) / max(faint - bright, 1e-9), 0.0, 1.0)
    sigma = radius_px[0] + frac * (radius_px[1] - radius_px[0])
    colour = r.rgb_linear * np.asarray(r.intensity)[..., None]

    half = int(np.ceil(3.0 * radius_px[1]))
    offs = np.arange(-half, half + 1)
    dx, dy = np.meshgrid(offs, offs)  # (S, S)
    px = x[:, None, None] + dx[None]
    py = y[:, None, None] + dy[None]
    weight = np.exp(-0.5 * (dx[None] ** 2 + dy[None] ** 2) / sigma[:, None, None] ** 2)
    keep = (px >= 0) & (px < w) & (py >= 0) & (py < h) & (weight > 1e-4)
    index = (py * w + px)[keep]
    img = np.empty((h * w, 3))
    for c in range(3):
        contrib = (weight * colour[:, c][:, None, None])[keep]
        img[:, c] = np.bincount(index, weights=contrib, minlength=h * w)
    top = img.max(axis=-1, keepdims=True)
    img = np.where(top > 1.0, img / np.maximum(top, 1e-300), img)
    if monitor is None:
        rgb8 = to_8bit(settings.display.encode(img))
    else:
        from starkiln.engine.colour.monitor import monitor_rgb_8bit

        rgb8 = monitor_rgb_8bit(img, settings.display, monitor, viewing_level)[0]
    pixels = np.ascontiguousarray(rgb8.reshape(h, w, 3))
    return SkyImage(pixels, x, y, sigma, np.asarray(r.in_gamut))
