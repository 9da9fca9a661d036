"""Self-describing star plates: the metadata every plate carries, and the rebuild from it.

:func:`plate_metadata` is the JSON stored under the key ``starkiln`` in a plate's PNG
``tEXt`` chunk or EXR header (the same key and writer as the lookup textures,
:mod:`starkiln.engine.exports.texture_metadata`): settings, projection, frame, site,
time, PSF, what the values mean (``display`` or ``flux``) and the row counts.
:func:`plate_request_from_metadata` reads it back for ``--settings-from OLD``.
:func:`check_plate_memory` refuses a size before any image is allocated.
:func:`cube_cross` lays the six cube faces out as one cross image (the cube file layout).
"""

from __future__ import annotations

from starkiln.engine.errors import StarkilnError

PLATE_FORMAT = 1
#: Where each cube face sits in the cross image, in face-size cells (row, column): a 4 x 3
#: cross, the four side faces in a row (each face's right edge meets the next face's left
#: edge, seen from inside), the pole face (+Z) above +X and the opposite pole (-Z) below it.
CROSS_CELLS = {"+Z": (0, 1), "+Y": (1, 0), "+X": (1, 1), "-Y": (1, 2), "-X": (1, 3),
               "-Z": (2, 1)}
#: The layout as it is written into the metadata.
CROSS_LAYOUT = "cross 4x3 cells: row 0: -, +Z, -, -; row 1: +Y, +X, -Y, -X; row 2: -, -Z, -, -"
VALUES = ("display", "flux")
EXR_TYPES = ("half", "float")
#: Bytes a plate may take in memory (the float32 image plus a chunk's work): 8 GiB.
MEMORY_LIMIT_BYTES = 8 * 1024 ** 3
#: What each value kind means, written into the metadata verbatim.
VALUE_MEANINGS = {
    "display": "display values ready to show: the render path's colour times its "
               "night-vision intensity tone curve, summed over each star's footprint",
    "flux": "scene-linear relative flux 10^(-0.4 m) times the render path's linear colour "
            "(unit luminance weight), summed over each star's footprint; tone-map it yourself",
}


def plate_bytes(width_px: int, height_px: int, faces: int = 1, channels: int = 3) -> int:
    """Memory of a float32 plate image, bytes (``faces`` square faces for a cube).

    References
    ----------
    IEEE 754 binary32: 4 bytes a sample (common practice).
    """
    return int(width_px) * int(height_px) * int(faces) * int(channels) * 4


def check_plate_memory(width_px: int, height_px: int, faces: int = 1,
                       limit_bytes: int = MEMORY_LIMIT_BYTES, extra_bytes: int = 0) -> int:
    """Refuse a plate that would not fit, before anything is allocated.

    Parameters
    ----------
    width_px, height_px : int
        Size of one face, pixels.
    faces : int
        1, or 6 for a cube.
    limit_bytes : int
        Most the image may take.
    extra_bytes : int
        Memory needed beside the faces (the cube's cross image).

    Returns
    -------
    int
        The bytes the image needs.

    Raises
    ------
    StarkilnError
        One line saying how much it would need and what is accepted.

    References
    ----------
    :func:`plate_bytes`.
    """
    need = plate_bytes(width_px, height_px, faces) + int(extra_bytes)
    if int(width_px) < 1 or int(height_px) < 1:
        raise StarkilnError(f"--size {width_px}x{height_px} is empty; accepted: positive pixels")
    if need > limit_bytes:
        raise StarkilnError(f"--size {width_px}x{height_px}"
                            + (f" x {faces} faces" if faces > 1 else "")
                            + f" needs {need / 1024 ** 3:.1f} GiB for the float image; "
                            f"accepted: at most {limit_bytes / 1024 ** 3:.0f} GiB")
    return need


def cube_cross(faces):
    """The six cube faces laid out as one cross image ``(3 n, 4 n, C)``, black elsewhere.

    Parameters
    ----------
    faces : numpy.ndarray
        ``(6, n, n, C)`` in the face order +X, -X, +Y, -Y, +Z, -Z
        (:data:`starkiln.engine.plates.projection.CUBE_FACES`).

    Returns
    -------
    numpy.ndarray
        The cross of :data:`CROSS_CELLS`: across the middle row the side faces +Y, +X, -Y, -X
        run on continuously (seen from inside, longitude increasing to the left), +Z sits on
        top of +X and -Z under it, each face the right way round; the six empty cells are 0.

    References
    ----------
    Common practice for cube-map cross layouts (a 4 x 3 horizontal cross); the face geometry
    is the projection module's gnomonic faces (Calabretta & Greisen 2002, section 5.1.3).
    """
    import numpy as np

    from starkiln.engine.plates.projection import CUBE_FACES

    faces = np.asarray(faces)
    n = faces.shape[1]
    cross = np.zeros((3 * n, 4 * n, faces.shape[-1]), dtype=faces.dtype)
    for i, name in enumerate(CUBE_FACES):
        row, col = CROSS_CELLS[name]
        cross[row * n:(row + 1) * n, col * n:(col + 1) * n] = faces[i]
    return cross


def plate_metadata(settings, spec, *, frame: dict, psf_sigma_px: float, values: str,
                   counts: dict, columns: dict, output_type: str, layout: str | None = None
                   ) -> dict:
    """The self-description embedded in every plate.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
        The look (``Settings.to_dict()`` is stored).
    spec : PlateSpec
        The projection (its fields are stored by name).
    frame : dict
        ``{"frame": "equatorial"}`` or ``{"frame": "horizon", "site": "LAT,LON,H",
        "time": ISO, "refraction": bool, "below_horizon": "drop"|"keep"}``.
    psf_sigma_px : float
        Gaussian sigma, pixels.
    values : {"display", "flux"}
    counts : dict
        Rows drawn and rows skipped per reason.
    columns : dict
        The catalogue columns used (ra, dec, colour source, magnitude).
    output_type : str
        ``png16``, ``exr-half`` or ``exr-float``.
    layout : str, optional
        How the image holds the projection (the cube's :data:`CROSS_LAYOUT`).

    Returns
    -------
    dict
        Plain JSON data; docs/formats.md, "Star plates".

    References
    ----------
    Calabretta & Greisen (2002), A&A 395, 1077 (projection names where they have one).
    """
    from dataclasses import asdict

    from starkiln import __version__

    if values not in VALUES:
        raise StarkilnError(f"--values {values!r} unknown; accepted: display, flux")
    meta = {
        "starkiln_plate": PLATE_FORMAT,
        "generator": f"starkiln {__version__}",
        "settings": settings.to_dict(),
        "projection": asdict(spec),
        "frame": dict(frame),
        "psf": {"kind": "gaussian integrated over each pixel (erf differences)",
                "sigma_px": float(psf_sigma_px)},
        "values": {"kind": values, "meaning": VALUE_MEANINGS[values]},
        "columns": dict(columns),
        "counts": {k: int(v) for k, v in counts.items()},
        "output": output_type,
    }
    if layout is not None:
        meta["layout"] = layout
    return meta


def plate_request_from_metadata(metadata: dict, source: str = "plate") -> dict:
    """What ``--settings-from OLD`` needs to draw the same plate again.

    Returns
    -------
    dict
        ``settings`` (dict for ``Settings.from_dict``), ``projection`` (PlateSpec keyword
        arguments), ``frame``, ``psf_sigma_px``, ``values``, ``columns``, ``output``.

    Raises
    ------
    StarkilnError
        ``source`` holds no Starkiln plate description.

    References
    ----------
    :func:`plate_metadata` (the inverse).
    """
    try:
        if metadata.get("starkiln_plate") != PLATE_FORMAT:
            raise KeyError("starkiln_plate")
        return {"settings": dict(metadata["settings"]),
                "projection": dict(metadata["projection"]),
                "frame": dict(metadata["frame"]),
                "psf_sigma_px": float(metadata["psf"]["sigma_px"]),
                "values": str(metadata["values"]["kind"]),
                "columns": dict(metadata["columns"]),
                "output": str(metadata["output"])}
    except (KeyError, TypeError, AttributeError, ValueError) as exc:
        raise StarkilnError(f"{source}: not a Starkiln plate description "
                            f"(missing or bad {exc})") from None


def spec_from_metadata(metadata: dict, source: str = "plate"):
    """The PlateSpec a plate was drawn with (imported from the projection module)."""
    from starkiln.engine.plates.projection import PlateSpec

    return PlateSpec(**plate_request_from_metadata(metadata, source)["projection"])
