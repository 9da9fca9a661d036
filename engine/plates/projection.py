"""Sky directions to plate pixels: equirectangular, equidistant fisheye and cube faces.

Conventions (all three projections)
-----------------------------------
- A direction is a longitude and latitude in degrees in the plate's frame (RA / Dec for the
  equatorial frame). The longitude is *right-handed* about the frame's pole, as RA is. An
  azimuth measured north through east is left-handed: pass ``lon_deg = -azimuth_deg`` (or
  ``360 - azimuth``), otherwise the horizon sky comes out mirrored.
- The sky is drawn **as seen from inside the sphere**, the way a dome audience or a camera at
  the centre of a sky sphere sees it: with north up, longitude (east) increases to the LEFT.
  This is the orientation of the sky on a dome and of a sky-sphere texture mapped on the inside
  of a sphere; it is also the FITS orientation of a sky image (CDELT1 < 0, east left;
  Calabretta & Greisen 2002, A&A 395, 1077).
- Pixel coordinates are continuous: pixel ``(i, j)`` (column, row) covers ``[i, i + 1) x
  [j, j + 1)`` and its centre is at ``(i + 0.5, j + 0.5)``; row 0 is the top of the image (as
  in PNG and EXR files). A FITS pixel coordinate ``p`` (1-based, centre at an integer) is
  ``x_px = p1 - 0.5`` and ``y_px = height_px + 0.5 - p2`` (FITS rows count upwards).

Projections
-----------
``equirect``
    The plate carree, CAR in Calabretta & Greisen 2002 (section 5.2.3), over the whole sphere:
    ``width = 2 * height``, ``x_px = width / 2 - (lon - centre_lon) * width / 360`` (longitude
    difference wrapped into ``[-180, 180)``), ``y_px = (90 - lat) * height / 180``. The centre
    column holds ``centre_lon_deg``; **the seam** (the left and right edges) is at
    ``centre_lon_deg + 180``. ``centre_lat_deg`` and ``tilt_deg`` are not used: the equator is
    the middle row, the pole up.
``fisheye``
    The zenithal equidistant projection, ARC in Calabretta & Greisen 2002 (section 5.1.4), as
    used for fulldome masters: a point at angle ``theta`` from the frame centre lands at
    ``r_px = theta / (fov / 2) * (size / 2)`` from the image centre; square, ``fov_deg`` from
    1 to 360. Points with ``theta > fov / 2`` are outside the circle (``inside`` False); the
    image is black there. Orientation: the frame's north (the pole side of the centre) is up,
    longitude increases to the left; when the centre *is* the pole, the image bottom points to
    longitude ``centre_lon_deg`` (the front of the dome). ``tilt_deg`` tilts the dome forward:
    the image centre moves ``tilt_deg`` from the given centre towards the image bottom, along
    the centre's meridian, the orientation following (a rotation about the image's horizontal
    axis).
``cube``
    Six square faces of side ``width_px == height_px``, a gnomonic (TAN) view of each face from
    the centre of the cube, face order ``0..5 = +X, -X, +Y, -Y, +Z, -Z`` in the frame, turned
    about the pole so that +X points at longitude ``centre_lon_deg`` (latitude 0) and +Z at
    the pole. Each face is seen from inside: the four side faces have the pole up (longitude
    increasing to the left); the +Z (pole) face has +X at its bottom edge and the -Z face has
    +X at its top edge, so the bottom of the pole face and the top of the opposite-pole face
    meet the +X face. The face of a direction is that of its largest coordinate (ties go to
    the earlier face).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from starkiln.engine.errors import InputRangeError

PROJECTIONS = ("equirect", "fisheye", "cube")
#: (forward, right, up) unit vectors of the cube faces, in the turned frame, seen from inside.
CUBE_FACES = ("+X", "-X", "+Y", "-Y", "+Z", "-Z")
_FACE_AXES = np.array([
    # forward        right           up
    [[1, 0, 0], [0, -1, 0], [0, 0, 1]],    # +X
    [[-1, 0, 0], [0, 1, 0], [0, 0, 1]],    # -X
    [[0, 1, 0], [1, 0, 0], [0, 0, 1]],     # +Y
    [[0, -1, 0], [-1, 0, 0], [0, 0, 1]],   # -Y
    [[0, 0, 1], [0, -1, 0], [-1, 0, 0]],   # +Z (pole face; bottom edge meets +X)
    [[0, 0, -1], [0, -1, 0], [1, 0, 0]],   # -Z (top edge meets +X)
], dtype=float)


@dataclass(frozen=True)
class PlateSpec:
    """The projection and size of a plate.

    Parameters
    ----------
    projection : str
        ``"equirect"`` (CAR), ``"fisheye"`` (ARC) or ``"cube"`` (six gnomonic faces);
        Calabretta & Greisen 2002, A&A 395, 1077. See the module notes for the conventions.
    width_px, height_px : int
        Image size. equirect: ``width = 2 * height``; fisheye: square; cube: the face size
        (``width == height``).
    fov_deg : float
        Fisheye field of view, 1-360 degrees (180: a hemisphere dome master).
    centre_lon_deg, centre_lat_deg : float
        The frame centre (RA / Dec, or east-handed longitude / altitude), degrees. The fisheye
        default is the pole (zenith).
    tilt_deg : float
        Fisheye dome tilt, degrees, -180..180: the image centre moves this far from the centre
        towards the image bottom.

    Raises
    ------
    InputRangeError
        A one-line message naming the value and what is accepted.
    """

    projection: str
    width_px: int
    height_px: int
    fov_deg: float = 180.0
    centre_lon_deg: float = 0.0
    centre_lat_deg: float = 90.0
    tilt_deg: float = 0.0

    def __post_init__(self):
        if self.projection not in PROJECTIONS:
            raise InputRangeError(f"projection {self.projection!r} is not known; accepted: "
                                  + ", ".join(PROJECTIONS))
        for name in ("width_px", "height_px"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
                raise InputRangeError(f"{name} {value!r} is not accepted; a whole number of "
                                      "pixels >= 1")
        w, h = int(self.width_px), int(self.height_px)
        if self.projection == "equirect" and w != 2 * h:
            raise InputRangeError(f"equirect plate {w} x {h} is not accepted; the width is "
                                  "twice the height (2:1)")
        if self.projection in ("fisheye", "cube") and w != h:
            raise InputRangeError(f"{self.projection} plate {w} x {h} is not accepted; the "
                                  "image is square (width == height)")
        for name, lo, hi in (("fov_deg", 1.0, 360.0), ("centre_lon_deg", -360.0, 360.0),
                             ("centre_lat_deg", -90.0, 90.0), ("tilt_deg", -180.0, 180.0)):
            value = getattr(self, name)
            try:
                number = float(value)
            except (TypeError, ValueError):
                number = float("nan")
            if not (lo <= number <= hi):
                raise InputRangeError(f"{name} {value!r} is not accepted; a number from {lo:g} "
                                      f"to {hi:g}")


def unit_vectors(lon_deg, lat_deg) -> np.ndarray:
    """Unit vectors ``(..., 3)`` of directions given as longitude and latitude.

    Parameters
    ----------
    lon_deg, lat_deg : array_like
        Longitude and latitude, degrees (broadcast together).

    Returns
    -------
    numpy.ndarray
        ``(cos lat cos lon, cos lat sin lon, sin lat)``: x towards longitude 0, z to the pole
        (the usual spherical-to-Cartesian relation, e.g. Calabretta & Greisen 2002, eq. 2).
    """
    lon = np.radians(np.asarray(lon_deg, dtype=float))
    lat = np.radians(np.asarray(lat_deg, dtype=float))
    cl = np.cos(lat)
    return np.stack(np.broadcast_arrays(cl * np.cos(lon), cl * np.sin(lon), np.sin(lat)), -1)


def fisheye_basis(spec: PlateSpec) -> np.ndarray:
    """The fisheye view's (centre, left, up) unit vectors ``(3, 3)`` after the tilt.

    Parameters
    ----------
    spec : PlateSpec
        A fisheye spec.

    Returns
    -------
    numpy.ndarray
        Rows: the image centre direction, the direction towards the image's left (east of the
        centre: increasing longitude) and towards the image top (north of the centre).
    """
    lon0, lat0 = np.radians(spec.centre_lon_deg), np.radians(spec.centre_lat_deg)
    centre = np.array([np.cos(lat0) * np.cos(lon0), np.cos(lat0) * np.sin(lon0), np.sin(lat0)])
    east = np.array([-np.sin(lon0), np.cos(lon0), 0.0])
    north = np.array([-np.sin(lat0) * np.cos(lon0), -np.sin(lat0) * np.sin(lon0), np.cos(lat0)])
    t = np.radians(spec.tilt_deg)
    centre_t = np.cos(t) * centre - np.sin(t) * north
    north_t = np.sin(t) * centre + np.cos(t) * north
    return np.stack([centre_t, east, north_t])


def project(lon_deg, lat_deg, spec: PlateSpec):
    """Pixel positions of sky directions on a plate.

    Parameters
    ----------
    lon_deg, lat_deg : array_like
        Directions in the plate's frame, degrees (right-handed longitude: RA, or minus the
        azimuth). Broadcast together, any shape.
    spec : PlateSpec
        The projection: CAR, ARC or cube faces (Calabretta & Greisen 2002, A&A 395, 1077;
        conventions in the module notes).

    Returns
    -------
    x_px, y_px : numpy.ndarray
        Continuous pixel coordinates (pixel centres at ``i + 0.5``; row 0 at the top).
    face : numpy.ndarray of int
        The cube face ``0..5`` (+X, -X, +Y, -Y, +Z, -Z); 0 for the other projections.
    inside : numpy.ndarray of bool
        True where the point is on the image (fisheye: within the circle of ``fov / 2``).
    """
    lon = np.asarray(lon_deg, dtype=float)
    lat = np.asarray(lat_deg, dtype=float)
    lon, lat = np.broadcast_arrays(lon, lat)
    w, h = float(spec.width_px), float(spec.height_px)
    if spec.projection == "equirect":
        dlon = np.mod(lon - spec.centre_lon_deg + 180.0, 360.0) - 180.0   # [-180, 180)
        x = w / 2.0 - dlon * (w / 360.0)
        y = (90.0 - lat) * (h / 180.0)
        face = np.zeros(lon.shape, dtype=np.int8)
        inside = np.isfinite(x) & np.isfinite(y) & (y >= 0) & (y <= h)
        return x, y, face, inside
    v = unit_vectors(lon, lat)
    if spec.projection == "fisheye":
        centre, left, up = fisheye_basis(spec)
        zc = v @ centre
        xr = -(v @ left)       # towards the image right
        yu = v @ up            # towards the image top
        rho = np.hypot(xr, yu)
        theta = np.arctan2(rho, zc)                       # angle from the centre, radians
        r_px = theta / np.radians(spec.fov_deg / 2.0) * (w / 2.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            cx = np.where(rho > 0, xr / rho, 0.0)
            cy = np.where(rho > 0, yu / rho, 0.0)
        x = w / 2.0 + r_px * cx
        y = h / 2.0 - r_px * cy
        # 1e-9 degree tolerance: a point on the horizon of a 180-degree dome is inside
        inside = (np.degrees(theta) <= spec.fov_deg / 2.0 + 1e-9) & np.isfinite(x) & np.isfinite(y)
        face = np.zeros(lon.shape, dtype=np.int8)
        return x, y, face, inside
    # cube: turn about the pole so +X is at centre_lon, then the face of the largest coordinate
    lon0 = np.radians(spec.centre_lon_deg)
    c, s = np.cos(lon0), np.sin(lon0)
    vx = c * v[..., 0] + s * v[..., 1]
    vy = -s * v[..., 0] + c * v[..., 1]
    vz = v[..., 2]
    turned = np.stack([vx, vy, vz], -1)
    x, y, face = cube_face_pixels(turned, spec.width_px)
    inside = np.isfinite(x) & np.isfinite(y)
    return x, y, face, inside


def cube_face_pixels(turned, size_px):
    """Cube face and continuous face pixel position of directions in the turned cube frame.

    Parameters
    ----------
    turned : array_like
        ``(..., 3)`` direction vectors (any length) in the cube's frame, +X towards
        ``centre_lon_deg`` (the turn :func:`project` applies first).
    size_px : int
        Face side, pixels.

    Returns
    -------
    x_px, y_px : numpy.ndarray
        Gnomonic (TAN, Calabretta & Greisen 2002, section 5.1.3) position on the face.
    face : numpy.ndarray of int8
        ``0..5`` = +X, -X, +Y, -Y, +Z, -Z: the face of the largest coordinate.
    """
    turned = np.asarray(turned, dtype=float)
    axis = np.argmax(np.abs(turned), axis=-1)
    negative = np.take_along_axis(turned, axis[..., None], -1)[..., 0] < 0
    face = (2 * axis + negative).astype(np.int8)
    axes = _FACE_AXES[face]                               # (..., 3, 3)
    forward = np.einsum("...k,...k->...", turned, axes[..., 0, :])
    a = np.einsum("...k,...k->...", turned, axes[..., 1, :]) / forward
    b = np.einsum("...k,...k->...", turned, axes[..., 2, :]) / forward
    w = float(size_px)
    return (a + 1.0) * (w / 2.0), (1.0 - b) * (w / 2.0), face


def cube_face_directions(face, x_px, y_px, size_px) -> np.ndarray:
    """Direction vectors (turned cube frame, not normalised) of face pixel positions.

    The inverse of :func:`cube_face_pixels`; positions off the face (``x_px`` outside
    ``[0, size]``) continue the face's tangent plane, which is how a footprint that spills
    over an edge finds the neighbouring face.

    Parameters
    ----------
    face : array_like of int
        ``0..5``.
    x_px, y_px : array_like
        Continuous face pixel positions.
    size_px : int
        Face side, pixels.

    Returns
    -------
    numpy.ndarray
        ``(..., 3)``: ``forward + a right + b up`` with ``a = 2 x / size - 1`` and
        ``b = 1 - 2 y / size`` (the gnomonic plane at unit distance; Calabretta & Greisen
        2002, section 5.1.3).
    """
    axes = _FACE_AXES[np.asarray(face, dtype=np.intp)]
    a = 2.0 * np.asarray(x_px, float) / size_px - 1.0
    b = 1.0 - 2.0 * np.asarray(y_px, float) / size_px
    return axes[..., 0, :] + a[..., None] * axes[..., 1, :] + b[..., None] * axes[..., 2, :]


def fisheye_valid_pixels(spec: PlateSpec) -> np.ndarray:
    """Boolean image ``(H, W)``: pixels whose centre lies inside the fisheye circle.

    Parameters
    ----------
    spec : PlateSpec
        The fisheye plate (its size; the circle is the same for every field of view).

    Returns
    -------
    numpy.ndarray of bool
        True where the pixel centre is within ``size / 2`` of the image centre (the ARC circle
        of ``fov / 2``); pass it as ``valid`` to :func:`starkiln.engine.plates.drawing.deposit`.
    """
    n = spec.width_px
    c = (np.arange(n) + 0.5) - n / 2.0
    return (c[None, :] ** 2 + c[:, None] ** 2) <= (n / 2.0) ** 2
