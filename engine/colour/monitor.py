"""The monitor step: the chosen display's colours shown on the monitor in front of the artist.

Starkiln's colours are for a chosen display (a preset, a JSON profile, or a scene-linear working
space). The window shows them on whatever monitor it runs on; this module converts them to that
monitor's colour space, so that a P3 or Rec. 2020 colour is not shown as if its code values
were sRGB. The conversion is relative colorimetric:

1. display-linear RGB (0-1 of the display's peak, after the render path's gamut mapping) to
   CIE XYZ with the display's normalised primary matrix ([RP177] section 3.3), display white
   at Y = 1;
2. chromatic adaptation from the display's white to the monitor's white with the linearised
   Bradford transform ([Lam1985]; the transform that [ICC1] Annex E recommends for adapting
   display colours between whites), so that the display's white is shown as the monitor's
   white (the artist is adapted to the monitor);
3. XYZ to the monitor's linear RGB (inverse of its primary matrix), where channels outside
   0-1 are *clipped* (the monitor cannot show that colour; reported per colour) by
   clamping each channel;
4. the monitor's transfer function and the one 8-bit quantisation
   (:func:`starkiln.engine.colour.quantisation.to_8bit`).

When display and monitor have the same primaries and white the matrix is exactly the identity
(not computed), so the sRGB display on an sRGB monitor gives the render path's own 8-bit values
bit for bit. Absolute luminance is not reproduced: a 1000 cd/m2 PQ display's peak is shown as
the monitor's white (relative colorimetry).

The monitor itself is a :class:`starkiln.engine.colour.displays.Display` of kind ``display``:
a preset, a JSON display profile, or built by :func:`monitor_from_primaries` from what the
platform reports (Qt's ``QColorSpace``: a named set of primaries or three xy points, a white
point and a transfer function).

References
----------
[RP177] section 3.3 (primary matrices); [Lam1985] (Bradford); [ICC1] Annex E (linearised
Bradford for display adaptation, from memory); [IEC61966-2-1] (sRGB, the monitor assumed
when the platform reports none, common practice for desktop monitors).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from starkiln.engine.colour.displays import (D65_4DIGIT, PRESETS, TRANSFERS, Display,
                                             get_display)
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.colour.viewing import dim_linear
from starkiln.engine.colour.whites import adaptation_matrix
from starkiln.engine.errors import SettingsError

#: The monitor assumed when the platform reports none ([IEC61966-2-1], common practice).
SRGB_MONITOR: Display = PRESETS["srgb"]
#: Chromatic adaptation between the display's white and the monitor's ([Lam1985], [ICC1]).
MONITOR_ADAPTATION = "bradford"
#: A channel further than this outside 0-1 (linear, relative to the monitor's white) counts as
#: clipped: about a third of an 8-bit code step at black in sRGB, so rounding noise of the
#: matrix never marks a colour the monitor shows to the last code value.
CLIP_TOLERANCE = 1e-4

#: Named primaries a platform may report (xy of red, green, blue, and the white of that
#: colour space): Rec. 709 / sRGB [IEC61966-2-1], P3 with D65 [EG432-1], Rec. 2020 [BT2020],
#: Adobe RGB (1998) [AdobeRGB1998], ProPhoto / ROMM RGB [ISO22028-2] (D50 white).
NAMED_PRIMARIES: dict[str, tuple] = {
    "srgb": ((0.64, 0.33), (0.30, 0.60), (0.15, 0.06), D65_4DIGIT),
    "dci-p3-d65": ((0.680, 0.320), (0.265, 0.690), (0.150, 0.060), D65_4DIGIT),
    "bt2020": ((0.708, 0.292), (0.170, 0.797), (0.131, 0.046), D65_4DIGIT),
    "adobe-rgb": ((0.64, 0.33), (0.21, 0.71), (0.15, 0.06), D65_4DIGIT),
    "prophoto-rgb": ((0.7347, 0.2653), (0.1596, 0.8404), (0.0366, 0.0001), (0.3457, 0.3585)),
}


def _same_colorimetry(a: Display, b: Display) -> bool:
    return (a.red_xy, a.green_xy, a.blue_xy, a.white_xy) == \
        (b.red_xy, b.green_xy, b.blue_xy, b.white_xy)


def monitor_matrix(display: Display, monitor: Display) -> np.ndarray | None:
    """3 x 3 matrix from the display's linear RGB to the monitor's, or None for the identity.

    ``M = monitor.XYZ_to_rgb @ A @ display.rgb_to_XYZ`` with ``A`` the Bradford adaptation
    from the display's white to the monitor's (applied as ``rgb_monitor = M @ rgb_display``).

    Parameters
    ----------
    display, monitor : Display

    Returns
    -------
    numpy.ndarray or None
        None when both have the same primaries and white (the conversion is exactly the
        identity, and is skipped).

    References
    ----------
    [RP177] section 3.3; [Lam1985]; [ICC1] Annex E (from memory).
    """
    return _matrix(display, monitor)


@lru_cache(maxsize=32)
def _matrix(display: Display, monitor: Display) -> np.ndarray | None:
    """:func:`monitor_matrix`, kept per pair (a slider step converts a few colours only, and
    building the matrix would cost more than using it)."""
    if _same_colorimetry(display, monitor):
        return None
    adapt = adaptation_matrix(display.white_XYZ, monitor.white_XYZ, MONITOR_ADAPTATION)
    m = monitor.XYZ_to_rgb @ adapt @ display.rgb_to_XYZ
    m.flags.writeable = False
    return m


def monitor_rgb_8bit(rgb_linear_display, display, monitor=SRGB_MONITOR,
                     viewing_level: float = 1.0):
    """The monitor's 8-bit code values for display-linear colours, and which were clipped.

    Parameters
    ----------
    rgb_linear_display : array_like, (..., 3)
        Linear RGB of ``display`` (0-1 of its peak; the render path's ``rgb_linear``, or
        ``rgb_linear * intensity`` for a colour at its magnitude). Working-space values are
        scene-linear, with the working space's white at 1.
    display : Display or str
        What the colours are for (:func:`starkiln.engine.colour.displays.get_display`).
    monitor : Display or str
        The monitor (default sRGB).
    viewing_level : float
        Fraction 0.02-1 of the monitor's white the colours are dimmed to, in the monitor's
        linear light after the clipping (:mod:`starkiln.engine.colour.viewing`); 1 leaves
        them unchanged.

    Returns
    -------
    rgb_8bit : numpy.ndarray of uint8, (..., 3)
        ``to_8bit(monitor.encode(viewing_level * clamp(M @ rgb)))``.
    clipped : numpy.ndarray of bool, (...,)
        Whether a channel lay more than :data:`CLIP_TOLERANCE` outside 0-1 on the monitor
        (the monitor cannot show that colour; the clamped one is shown).

    References
    ----------
    [RP177] section 3.3; [Lam1985]; [ICC1] Annex E (from memory); the monitor's transfer
    function as in :func:`starkiln.engine.colour.displays.encode`.

    Examples
    --------
    P3 green on an sRGB monitor is clipped: colour-science's ``RGB_to_RGB`` from its
    "Display P3" to its "sRGB" colour space ([EG432-1] and [IEC61966-2-1] primaries, Bradford)
    gives the sRGB-linear (-0.2249, 1.0420, -0.0786):

    >>> rgb8, clipped = monitor_rgb_8bit([0.0, 1.0, 0.0], "display-p3", "srgb")
    >>> rgb8.tolist(), bool(clipped)
    ([0, 255, 0], True)
    """
    display, monitor = get_display(display), get_display(monitor)
    rgb = np.asarray(rgb_linear_display, dtype=np.float64)
    m = monitor_matrix(display, monitor)
    if m is not None:
        rgb = rgb @ m.T
    clipped = np.any((rgb < -CLIP_TOLERANCE) | (rgb > 1.0 + CLIP_TOLERANCE), axis=-1)
    if viewing_level != 1.0:
        rgb = dim_linear(rgb, viewing_level)
    return to_8bit(monitor.encode(rgb)), clipped


def rendered_on_monitor(rendered, monitor=SRGB_MONITOR, dimmed: bool = False,
                        viewing_level: float = 1.0):
    """:func:`monitor_rgb_8bit` of a render's colours (plain, or at their magnitude).

    Parameters
    ----------
    rendered : starkiln.engine.pipeline.render.Rendered
        Its ``rgb_linear`` and ``display``.
    monitor : Display or str
    dimmed : bool
        The colour at its magnitude: ``rgb_linear * intensity`` (what ``rgb_dimmed_encoded``
        encodes).
    viewing_level : float
        As :func:`monitor_rgb_8bit`.

    Returns
    -------
    (numpy.ndarray of uint8, numpy.ndarray of bool)
        As :func:`monitor_rgb_8bit`.

    References
    ----------
    As :func:`monitor_rgb_8bit`.
    """
    rgb = rendered.rgb_linear
    if dimmed:
        rgb = rgb * np.asarray(rendered.intensity)[..., None]
    return monitor_rgb_8bit(rgb, rendered.display, monitor, viewing_level)


def encoded_on_monitor(rgb_8bit_display, display, monitor=SRGB_MONITOR,
                       viewing_level: float = 1.0):
    """:func:`monitor_rgb_8bit` of an image held in a display's 8-bit code values.

    For previews of what a file will show (a contact sheet, a texture): each code value is
    decoded with the display's transfer function (one 256-entry table per channel), then
    converted as :func:`monitor_rgb_8bit` converts. The file keeps the display's values; only
    what the window paints is converted.

    Parameters
    ----------
    rgb_8bit_display : array_like of integers 0-255, (..., 3) or (..., 4)
        The display's 8-bit code values (an alpha channel is ignored).
    display : Display or str
        What the code values are for.
    monitor : Display or str
        The monitor (default sRGB).
    viewing_level : float
        As :func:`monitor_rgb_8bit`.

    Returns
    -------
    (numpy.ndarray of uint8, numpy.ndarray of bool)
        As :func:`monitor_rgb_8bit`, of shape (..., 3) and (...,).

    References
    ----------
    As :func:`monitor_rgb_8bit`; the display's transfer function as in
    :func:`starkiln.engine.colour.displays.decode`.

    Examples
    --------
    On the same display and monitor the code values come back unchanged:

    >>> encoded_on_monitor([[12, 128, 250]], "srgb", "srgb")[0].tolist()
    [[12, 128, 250]]
    """
    display = get_display(display)
    codes = np.asarray(rgb_8bit_display)
    if not np.issubdtype(codes.dtype, np.integer) or codes.ndim == 0 or \
            codes.shape[-1] not in (3, 4) or (codes.size and (codes.min() < 0
                                                                or codes.max() > 255)):
        raise SettingsError(f"image of {codes.dtype} with shape {codes.shape} is not 8-bit "
                            "RGB; accepted: integers 0-255 of shape (..., 3) or (..., 4)")
    ramp = np.repeat((np.arange(256.0) / 255.0)[:, None], 3, axis=1)
    table = display.decode(ramp)  # (256, 3): each channel's linear value per code
    rgb = np.stack([table[codes[..., c], c] for c in range(3)], axis=-1)
    return monitor_rgb_8bit(rgb, display, monitor, viewing_level)


def monitor_from_primaries(primaries, white_xy=None, transfer: str = "srgb",
                           gamma: float = 2.2, name: str = "monitor") -> Display:
    """The monitor's Display from what the platform reports of its colour space.

    Parameters
    ----------
    primaries : str or sequence of three (x, y)
        A key of :data:`NAMED_PRIMARIES` (what Qt's ``QColorSpace.primaries()`` names), or the
        xy of red, green and blue.
    white_xy : (x, y), optional
        The white point (``QColorSpace.whitePoint()``); default the named primaries' own
        white (required with xy primaries).
    transfer : str
        ``srgb``, ``gamma`` (with ``gamma``), ``linear`` or ``pq``.
    gamma : float
        Exponent of a ``gamma`` transfer, 1-4.
    name : str

    Returns
    -------
    Display
        Of kind ``display``; its peak luminance is the sRGB reference 80 cd/m2 (only a PQ
        monitor uses it).

    Raises
    ------
    SettingsError
        Unknown primaries or transfer, or values a display does not accept (one line).

    References
    ----------
    The sources of :data:`NAMED_PRIMARIES`; [IEC61966-2-1] (80 cd/m2).
    """
    if isinstance(primaries, str):
        key = primaries.strip().lower()
        if key not in NAMED_PRIMARIES:
            raise SettingsError(f"monitor primaries {primaries!r} unknown; accepted: "
                                f"{', '.join(NAMED_PRIMARIES)} or three [x, y] pairs")
        r, g, b, own_white = NAMED_PRIMARIES[key]
        white = own_white if white_xy is None else white_xy
    else:
        try:
            r, g, b = (tuple(p) for p in primaries)
        except (TypeError, ValueError):
            raise SettingsError(f"monitor primaries {primaries!r}: accepted: a name "
                                f"({', '.join(NAMED_PRIMARIES)}) or three [x, y] pairs") from None
        if white_xy is None:
            raise SettingsError("monitor white point missing; accepted: [x, y] with xy "
                                "primaries")
        white = white_xy
    if transfer not in TRANSFERS:
        raise SettingsError(f"monitor transfer {transfer!r} unsupported; accepted: "
                            f"{', '.join(TRANSFERS)}")
    return Display(name, tuple(r), tuple(g), tuple(b), tuple(white), transfer, gamma, 80.0)


def load_monitor(spec) -> Display:
    """The monitor from a display preset name or a JSON display profile (``--monitor``).

    Parameters
    ----------
    spec : str, path-like or Display

    Returns
    -------
    Display

    Raises
    ------
    SettingsError
        Unknown name, unreadable profile, or a working space (a monitor shows display-referred
        code values; a scene-linear working space is not one).

    References
    ----------
    :func:`starkiln.engine.colour.displays.get_display`.
    """
    try:
        d = get_display(spec)
    except SettingsError as exc:
        raise SettingsError(f"--monitor: {exc}") from None
    if d.kind != "display":
        raise SettingsError(f"--monitor {d.name!r} is a working space; accepted: a display "
                            f"preset ({', '.join(PRESETS)}) or a .json display profile")
    return d
