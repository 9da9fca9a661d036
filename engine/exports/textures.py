"""Lookup textures: temperature along x, magnitude along y, one render call.

A lookup texture (LUT) is what a shader samples to colour a star: the texel
at ``(u, v)`` holds the display colour of temperature ``T(u)`` at magnitude
``m(v)``, exactly as :func:`starkiln.engine.pipeline.render.render` gives it.

Axes and sampling convention (fixed; docs/formats.md, "Lookup textures (PNG and EXR)")
---------------------------------------------------------------
The temperature axis runs over ``[A, B]`` kelvin along x, through one of three
mappings (``u`` in 0-1 from the left edge of the image to the right edge):

- ``mired`` (default): ``u = (10^6/A - 10^6/T) / (10^6/A - 10^6/B)``. The
  mired (micro reciprocal degree, 10^6 / T) spaces visible colour steps of
  Planckian light far more evenly than kelvin (common practice in lighting
  and photography; the isotemperature lines of [CIE15] section 9.5 crowd
  together in kelvin towards high temperatures).
- ``log``: ``u = ln(T / A) / ln(B / A)``.
- ``linear``: ``u = (T - A) / (B - A)``.

The magnitude axis runs over ``[m_bright, m_faint]`` down the image, linear in
magnitude: ``v = (m - m_bright) / (m_faint - m_bright)``, with ``v = 0`` at the
top edge of the image, so row 0 (the top row) is the brightest magnitude.

Texel centres: column ``i`` (0-based, left to right) samples the axis at
``u = (i + 0.5) / W``; row ``j`` (0-based, top to bottom) samples
``v = (j + 0.5) / H``. Bilinear filtering between texel centres then
interpolates the axis mapping (common practice for lookup tables; see e.g.
[OpenGL46] section 8.14.2, for where texel centres lie).

Without magnitudes the texture is a strip: every row holds the full-intensity
colours of the temperature axis.

Channel layouts
---------------
``RGB`` (colour only); ``alpha``: a fourth channel holding the intensity
(0-1, linear, from the magnitude tone curve); ``premultiply``: RGB carries the
intensity: display-encoded files hold ``rgb_dimmed_encoded`` =
``encode(rgb_linear * intensity)``, display-linear files hold
``rgb_linear * intensity``. Both options together give premultiplied RGBA.

Sample encodings: PNG holds display-encoded values (after the display's
transfer function) quantised to 8 or 16 bits by ``floor(v * (2^n - 1) + 0.5)``
(common practice); EXR holds display-linear 32-bit floats ([OpenEXR]).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from starkiln.engine.errors import StarkilnError
from starkiln.engine.exports.texture_metadata import METADATA_KEY, chromaticities, lut_metadata, metadata_json
from starkiln.engine.exports.texture_spec import TextureSpec, format_for_path, lut_axes


def check_target(settings, spec: TextureSpec) -> None:
    """Refuse a PNG texture for a working space (one line naming the target; EXR holds it).

    PNG samples are display code values 0-1; a working space holds scene-linear values that
    go below 0 and above 1, which integer samples cannot keep ([PNG] section 11.2.2;
    [OpenEXR] float channels do).
    """
    if spec.file_format == "png" and settings.display.kind == "working-space":
        raise StarkilnError(f"working space {settings.display.name!r} is scene-linear (values "
                            "outside 0-1); a PNG holds display code values only; accepted: a "
                            ".exr texture, or a display target for .png")


def display_of(metadata: dict):
    """The :class:`~starkiln.engine.colour.displays.Display` described by texture metadata."""
    from starkiln.engine.pipeline.settings import Settings

    return Settings.from_dict(metadata["settings"], "texture metadata").display


def render_lut(settings, spec: TextureSpec) -> np.ndarray:
    """The texture's values as float64 ``(H, W, C)`` before quantisation.

    Calls :func:`starkiln.engine.pipeline.render.render` once, with temperatures of shape
    ``(1, W)`` and magnitudes of shape ``(H, 1)`` (broadcast to ``(H, W)``),
    or with temperatures alone for a strip. PNG (display-encoded) takes
    ``rgb_encoded`` or ``rgb_dimmed_encoded``; EXR (display-linear) takes
    ``rgb_linear`` or ``rgb_linear * intensity``; alpha is the intensity.

    References
    ----------
    Module docstring (layouts); :func:`starkiln.engine.pipeline.render.render` (colours).
    """
    from starkiln.engine.pipeline.render import render

    temperature_K, magnitude = lut_axes(spec)
    h, w = spec.height, spec.width
    if magnitude is None:
        r = render(settings, temperature_K[None, :])
    else:
        r = render(settings, temperature_K[None, :], magnitude[:, None])
    intensity = np.broadcast_to(np.asarray(r.intensity, dtype=np.float64), (h, w))
    if spec.encoding == "display-linear":
        rgb = np.asarray(r.rgb_linear, dtype=np.float64)
        if spec.premultiply:
            rgb = rgb * np.asarray(r.intensity)[..., None]
    else:
        rgb = np.asarray(r.rgb_dimmed_encoded if spec.premultiply else r.rgb_encoded,
                         dtype=np.float64)
    rgb = np.broadcast_to(rgb, (h, w, 3))
    if not spec.alpha:
        return np.ascontiguousarray(rgb)
    out = np.empty((h, w, 4), dtype=np.float64)
    out[..., :3] = rgb
    out[..., 3] = intensity
    return out


def texture_samples(values: np.ndarray, spec: TextureSpec) -> np.ndarray:
    """Float texture values -> the stored sample type of ``spec`` (uint8, uint16, float32).

    Integer samples are the code values of :func:`starkiln.engine.colour.quantisation.quantise`
    (``floor(v * (2^n - 1) + 0.5)``, common practice); EXR keeps 32-bit floats ([OpenEXR]).
    """
    if spec.depth == 32:
        return np.asarray(values, dtype=np.float32)
    from starkiln.engine.colour.quantisation import quantise

    return quantise(values, spec.depth)


def build_lut(settings, spec: TextureSpec):
    """The texture a file holds: stored samples and the metadata to embed.

    This is the function the command line and the window's export dialog
    both call; :func:`write_lut` then writes it deterministically.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    spec : TextureSpec

    Returns
    -------
    (numpy.ndarray, dict)
        ``(H, W, C)`` samples of ``spec.sample_type`` (row 0 = top of the
        image), and the metadata of
        :func:`starkiln.engine.exports.texture_metadata.lut_metadata`.

    References
    ----------
    Module docstring (axes, layouts, quantisation).

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> arr, meta = build_lut(Settings(), TextureSpec(width=8, height=2))
    >>> arr.shape, arr.dtype.name, meta["axes"]["u"]["mapping"]
    ((2, 8, 3), 'uint8', 'mired')
    """
    check_target(settings, spec)
    if spec.magnitude_range is None:
        # A strip: quantise one row, then repeat the stored samples (not float64) H times.
        row = texture_samples(render_lut(settings, spec.replace(height=1)), spec)
        array = np.ascontiguousarray(np.broadcast_to(row, (spec.height,) + row.shape[1:]))
    else:
        array = texture_samples(render_lut(settings, spec), spec)

    return array, lut_metadata(settings, spec)


def write_lut(path, array: np.ndarray, metadata: dict, spec: TextureSpec,
              overwrite: bool = False) -> Path:
    """Write a built texture atomically (temporary file in the folder, then rename).

    PNG: metadata in a ``tEXt`` chunk with keyword ``starkiln``; EXR: a string
    header attribute ``starkiln`` plus the standard ``chromaticities`` of the
    display. No timestamps: equal inputs give byte-identical files.

    Raises
    ------
    starkiln.engine.atomic.OutputExistsError
        ``path`` exists and ``overwrite`` is False (the old file is untouched).

    References
    ----------
    [PNG] section 11.3.4.3 (tEXt); [OpenEXR] file layout
    (attributes, "chromaticities").
    """
    from starkiln.engine.atomic import atomic_path
    from starkiln.engine.exports import image_files as imageio

    path = Path(path)
    if format_for_path(path) != spec.file_format:
        raise StarkilnError(f"{path}: extension does not match the texture format "
                            f"{spec.file_format!r}")
    text = metadata_json(metadata)
    with atomic_path(path, overwrite) as tmp:
        if spec.file_format == "png":
            tagged = imageio.PngText({METADATA_KEY: text},
                                     imageio.png_colour_chunks(display_of(metadata)))
            imageio.write_png(tmp, array, tagged)
        else:
            chroma = chromaticities(metadata)
            imageio.write_exr(tmp, array, {METADATA_KEY: text}, chromaticities=chroma)
    return path


def export_texture(settings, spec: TextureSpec, path, overwrite: bool = False) -> dict:
    """Check the destination, build and write a texture; returns its metadata.

    The one texture export: the command line (``starkiln lut``) and the window both call it.
    The destination is checked first (:func:`starkiln.engine.atomic.check_writable`),
    so nothing is computed for a file that could not be written.

    Parameters
    ----------
    settings : starkiln.engine.pipeline.settings.Settings
    spec : TextureSpec
    path : path-like
        ``.png`` or ``.exr``, matching ``spec.file_format``.
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    dict
        The embedded metadata (:func:`starkiln.engine.exports.texture_metadata.lut_metadata`).

    References
    ----------
    :func:`build_lut`, :func:`write_lut`.
    """
    from starkiln.engine.atomic import check_writable

    check_target(settings, spec)
    if format_for_path(path) != spec.file_format:
        raise StarkilnError(f"{path}: extension does not match the texture format "
                            f"{spec.file_format!r}")
    check_writable(path, overwrite)
    try:
        array, metadata = build_lut(settings, spec)
    except MemoryError:
        raise StarkilnError(f"not enough memory for a {spec.width} x {spec.height} texture"
                            f"{' with magnitudes' if spec.magnitude_range else ''}; try a "
                            "smaller size") from None
    write_lut(path, array, metadata, spec, overwrite=overwrite)
    return metadata
