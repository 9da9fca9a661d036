"""OpenColorIO v2 configs: Starkiln's working spaces and one display, for a studio's renderer.

A config built here declares:

* the five scene-linear working spaces of :data:`starkiln.engine.colour.displays.WORKING_SPACES`
  as OCIO colour spaces of the *scene* reference space, which is ACES2065-1 (role
  ``aces_interchange``), as OCIO's ACES configs do ([OCIO] "Config" and "Roles": the
  scene-referred interchange space is ACES2065-1);
* ``CIE-XYZ-D65``, the *display* reference space (role ``cie_xyz_d65_interchange``), as in
  the same configs: CIE XYZ with Y = 1 at a D65 white (Starkiln's four-digit D65, x = 0.3127,
  y = 0.3290);
* one view transform, :data:`VIEW_TRANSFORM`, from ACES2065-1 to CIE-XYZ-D65: AP0 -> XYZ at
  the ACES white, then the chromatic adaptation ACES white -> D65 ([ST2065-1] for AP0);
* one display colour space for the chosen display, from CIE-XYZ-D65: the adaptation D65 ->
  the display's white, the display's XYZ -> RGB matrix ([RP177]), a clamp of each channel to
  0-1, then the display's transfer function;
* the display, with one view :data:`VIEW_NAME` (that view transform and that display colour
  space), and a ``raw`` data colour space.

What the view does, precisely: working-space RGB -> ACES2065-1 (matrix, adapting the working
white to the ACES white) -> XYZ D65 (adapting the ACES white to D65) -> display RGB (adapting
D65 to the display white) -> clamp 0-1 -> transfer. Every adaptation uses the one method
asked for (Bradford by default, as :class:`starkiln.engine.pipeline.settings.Settings`).
The methods Starkiln offers are all von Kries scalings in a fixed cone space, so the chain of
adaptations equals the single adaptation working white -> display white ([vonKries1902];
``M^-1 diag(b/a) M`` composes to ``M^-1 diag(c/a) M``): the view gives, within rounding,
``display.encode(clip(display.XYZ_to_rgb @ CAT(working white -> display white) @
working.rgb_to_XYZ @ rgb))``, which is how Starkiln's render path turns XYZ into display
code values (it adapts the scene white to the display white the same way). A star rendered by
Starkiln into a working space with scene white S therefore shows, through this view, the
colour Starkiln renders for the display directly (``CAT(W -> D) CAT(S -> W) = CAT(S -> D)``),
up to the normalisation and the gamut mapping: the view clamps each display-linear channel
to 0-1 (the clamp :meth:`Display.encode` applies itself); it maps no gamut in Oklab.

The transfer function is an exact OCIO transform where one exists: sRGB ([IEC61966-2-1], an
``ExponentWithLinearTransform`` of gamma 2.4 and offset 0.055), ``gamma`` (an
``ExponentTransform``), PQ ([ST2084], the built-in ``CURVE - LINEAR_to_ST-2084``, whose
linear 1.0 is 100 cd/m2, after a scale by the display's peak / 100), ``linear`` (none). Any
other transfer, or every one with ``curve="sampled"``, is a sampled 1-D LUT: a CLF file
([ST2136-1]) with a half-float domain (one entry per 16-bit half value, [IEEE754]), sampled
from :meth:`Display.encode` itself, so any curve a display profile can hold works.

References
----------
[OCIO] OpenColorIO v2 documentation (configs, roles, display-referred reference space,
built-in transforms); [ST2065-1]; [S-2014-004]; [RP177]; [IEC61966-2-1]; [ST2084];
[ST2136-1]; [vonKries1902].
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.atomic import OutputExistsError, new_file_mode, remove_stale_temporaries
from starkiln.engine.colour.displays import (D65_4DIGIT, PRESETS, WORKING_SPACE_NOTES,
                                             WORKING_SPACES, Display, get_display)
from starkiln.engine.colour.observers import xy_to_XYZ
from starkiln.engine.colour.whites import adaptation_matrix, check_adaptation
from starkiln.engine.errors import StarkilnError

#: The config file's name inside the output folder.
CONFIG_NAME = "config.ocio"
#: The mark Starkiln leaves in every folder it writes (JSON: the files it wrote).
MANIFEST_NAME = "starkiln-ocio.json"
MANIFEST_FORMAT = 1
#: The sampled transfer curve's file, when one is needed.
CURVE_NAME = "display-curve.clf"
SCENE_REFERENCE = "aces2065-1"
DISPLAY_REFERENCE = "CIE-XYZ-D65"
VIEW_TRANSFORM = "starkiln-colorimetric"
VIEW_NAME = "Starkiln colorimetric"
#: The working space the config's ``scene_linear`` and ``rendering`` roles point at.
SCENE_LINEAR = "acescg"
CURVES = ("exact", "sampled")
#: The config's ``ocio_profile_version``: 2.1, the first with colour-space aliases, and (from
#: memory) the built-in ``CURVE - LINEAR_to_ST-2084`` ([OCIO]); checked here with the
#: installed OpenColorIO only.
CONFIG_VERSION = (2, 1)
#: Other names for the working spaces, as OCIO's ACES configs spell them ([OCIO]).
#: (``acescg`` and ``aces2065-1`` already are those names: OCIO compares names without case.)
ALIASES = {"lin-srgb": ["Linear Rec.709 (sRGB)"], "lin-p3-d65": ["Linear P3-D65"],
           "lin-rec2020": ["Linear Rec.2020"]}


@dataclass(frozen=True)
class OcioFolder:
    """What :func:`write_ocio_config` wrote.

    Attributes
    ----------
    path : the output folder.
    files : names of the files in it, the config first.
    display_name, view_name : the OCIO display and view to pick in a renderer.
    display_colour_space : the name of the display colour space.
    """

    path: Path
    files: tuple[str, ...]
    display_name: str
    view_name: str
    display_colour_space: str


def _ocio():
    try:
        import PyOpenColorIO
    except ImportError as exc:  # pragma: no cover - a dependency of the package
        raise StarkilnError(f"the opencolorio package is not installed ({exc}); accepted: "
                            "pip install opencolorio") from None
    return PyOpenColorIO


def ocio_display_name(display: Display) -> str:
    """The display's name as OCIO may hold it.

    OCIO lists displays and views separated by commas (and looks by colons) in one string
    ([OCIO] ``active_displays``, ``active_views``), so those characters become spaces.

    Parameters
    ----------
    display : Display

    Returns
    -------
    str
        The name with runs of spaces collapsed (``"display"`` if nothing is left).

    References
    ----------
    [OCIO] "Config syntax" (``active_displays``).
    """
    text = " ".join(display.name.replace(",", " ").replace(":", " ").split())
    return text or "display"


def _matrix44(m3: np.ndarray) -> list[float]:
    """A 3 x 3 matrix as the 16 row-major values of an OCIO ``MatrixTransform``."""
    m = np.eye(4)
    m[:3, :3] = m3
    return [float(v) for v in m.reshape(-1)]


def working_to_reference_matrix(space: Display, adaptation: str = "bradford") -> np.ndarray:
    """Working-space RGB -> ACES2065-1 RGB, adapting the working white to the ACES white.

    Parameters
    ----------
    space : Display
        A working space (or any RGB space) with primaries and white.
    adaptation : str
        The adaptation method (:data:`starkiln.engine.colour.whites.ADAPTATIONS`).

    Returns
    -------
    numpy.ndarray
        (3, 3), applied as ``rgb_aces = M @ rgb``.

    References
    ----------
    [RP177] section 3.3 (RGB <-> XYZ); [ST2065-1] (AP0); [vonKries1902] (adaptation).
    """
    ap0 = WORKING_SPACES[SCENE_REFERENCE]
    cat = adaptation_matrix(space.white_XYZ, ap0.white_XYZ, adaptation)
    return ap0.XYZ_to_rgb @ cat @ space.rgb_to_XYZ


def _transfer_transforms(ocio, display: Display, curve: str):
    """OCIO transforms for display-linear 0-1 -> code values, and the LUT files they need
    (name -> bytes). See the module docstring for which transfer becomes which transform."""
    inverse = ocio.TransformDirection.TRANSFORM_DIR_INVERSE
    if curve == "exact":
        if display.transfer == "linear":
            return [], {}
        if display.transfer == "srgb":  # [IEC61966-2-1] section 5.2
            return [ocio.ExponentWithLinearTransform(gamma=[2.4, 2.4, 2.4, 1.0],
                                                     offset=[0.055, 0.055, 0.055, 0.0],
                                                     direction=inverse)], {}
        if display.transfer == "gamma":
            g = display.gamma
            return [ocio.ExponentTransform(value=[g, g, g, 1.0], direction=inverse)], {}
        if display.transfer == "pq":  # [ST2084]; OCIO's linear 1.0 is 100 cd/m2
            k = display.peak_luminance_cd_m2 / 100.0
            return [ocio.MatrixTransform(_matrix44(np.diag([k, k, k]))),
                    ocio.BuiltinTransform("CURVE - LINEAR_to_ST-2084")], {}
    return [ocio.FileTransform(CURVE_NAME, interpolation=ocio.Interpolation.INTERP_LINEAR)], \
        {CURVE_NAME: sampled_curve_clf(display)}


def sampled_curve_clf(display: Display) -> bytes:
    """The display's transfer function as a CLF 1-D LUT over the 16-bit half-float domain.

    Entry ``i`` holds ``display.encode(h)`` for the half value ``h`` whose bits are ``i``
    (clamped to 0-1, as the encoding clamps), so the LUT is dense where curves are steep near
    black; OCIO writes the file ([ST2136-1]), never Starkiln.

    Parameters
    ----------
    display : Display
        Any display; only :meth:`Display.encode` is used, so every transfer it knows works.

    Returns
    -------
    bytes
        The CLF document (UTF-8 XML).

    References
    ----------
    [ST2136-1] (CLF, ``halfDomain``); [IEEE754] (binary16).
    """
    ocio = _ocio()
    half = np.arange(65536, dtype=np.uint16).view(np.float16).astype(np.float64)
    linear = np.clip(np.nan_to_num(half, nan=0.0, posinf=1.0, neginf=0.0), 0.0, 1.0)
    encoded = np.asarray(display.encode(np.repeat(linear[:, None], 3, axis=1)), dtype=np.float64)
    lut = ocio.Lut1DTransform(length=65536, inputHalfDomain=True)
    lut.setData(np.ascontiguousarray(encoded, dtype=np.float32).reshape(-1))
    text = ocio.GroupTransform([lut]).write("Academy/ASC Common LUT Format",
                                            ocio.Config.CreateRaw())
    return text.encode("utf-8")


ACCEPTED_DISPLAYS = (f"accepted: a display preset ({', '.join(PRESETS)}) or a path to a "
                     ".json display profile")


def _display_for_ocio(spec) -> Display:
    """``spec`` as a display of kind ``display``; a working space or an unknown name is one
    line saying what this command accepts (the working spaces are in every config already)."""
    if isinstance(spec, (str, os.PathLike)):
        text = str(spec).strip()
        if text.lower() not in PRESETS and text.lower() not in WORKING_SPACES \
                and not text.lower().endswith(".json"):
            raise StarkilnError(f"unknown display {text!r}; {ACCEPTED_DISPLAYS}")
    display = get_display(spec)
    if display.kind != "display":
        raise StarkilnError(f"{display.name!r} is a working space, not a display (every config "
                            f"holds the working spaces already); {ACCEPTED_DISPLAYS}")
    return display


def build_config(display, adaptation: str = "bradford", curve: str = "exact"):
    """Build (not write) the OCIO config for ``display``; see the module docstring.

    Parameters
    ----------
    display : Display or str
        A display preset name, a ``.json`` profile path, or a :class:`Display` of kind
        ``display`` (a working space is refused: it has no display encoding).
    adaptation : str
        The chromatic adaptation between whites (:data:`starkiln.engine.colour.whites.ADAPTATIONS`).
    curve : str
        ``exact`` (OCIO's own transforms where one fits the transfer) or ``sampled`` (always
        the sampled 1-D LUT).

    Returns
    -------
    config : PyOpenColorIO.Config
        Not yet validated: its LUT file must exist first (:func:`write_ocio_config`).
    files : dict
        LUT file name -> bytes, to write beside ``config.ocio``.
    names : dict
        ``display``, ``view`` and ``display_colour_space`` names.

    References
    ----------
    [OCIO]; module docstring.
    """
    ocio = _ocio()
    display = _display_for_ocio(display)
    adaptation = check_adaptation(adaptation)
    if curve not in CURVES:
        raise StarkilnError(f"curve {curve!r} unknown; accepted: {', '.join(CURVES)}")
    ref = ocio.ReferenceSpaceType
    config = ocio.Config()
    config.setMajorVersion(CONFIG_VERSION[0])
    config.setMinorVersion(CONFIG_VERSION[1])
    config.setName(f"starkiln-{ocio_display_name(display)}")
    config.setDescription(
        f"Written by Starkiln for the display {display.name!r}: the working spaces "
        f"{', '.join(WORKING_SPACES)} (scene reference ACES2065-1) and one view, "
        f"{VIEW_NAME!r}: matrix with {adaptation} adaptation from the working white to the "
        "display white, clamp 0-1, the display's transfer function.")
    config.setSearchPath(".")

    for name, space in WORKING_SPACES.items():
        to_ref = (None if name == SCENE_REFERENCE else
                  ocio.MatrixTransform(_matrix44(working_to_reference_matrix(space, adaptation))))
        config.addColorSpace(ocio.ColorSpace(
            ref.REFERENCE_SPACE_SCENE, name=name, aliases=ALIASES.get(name, []),
            family="Starkiln/working spaces", encoding="scene-linear",
            description=f"{WORKING_SPACE_NOTES[name]}; white xy {list(space.white_xy)}",
            toReference=to_ref))
    config.addColorSpace(ocio.ColorSpace(
        ref.REFERENCE_SPACE_SCENE, name="raw", family="Starkiln/utility", encoding="data",
        isData=True, description="data: no colour conversion"))
    config.addColorSpace(ocio.ColorSpace(
        ref.REFERENCE_SPACE_DISPLAY, name=DISPLAY_REFERENCE, family="Starkiln/display reference",
        encoding="display-linear",
        description="CIE XYZ, Y = 1 at the D65 white (0.3127, 0.3290): the display reference"))

    ap0 = WORKING_SPACES[SCENE_REFERENCE]
    d65_XYZ = xy_to_XYZ(np.array(D65_4DIGIT))
    view_m = adaptation_matrix(ap0.white_XYZ, d65_XYZ, adaptation) @ ap0.rgb_to_XYZ
    config.addViewTransform(ocio.ViewTransform(
        ref.REFERENCE_SPACE_SCENE, name=VIEW_TRANSFORM, family="Starkiln",
        description=(f"ACES2065-1 -> CIE XYZ D65 ({adaptation} adaptation), colorimetric: no "
                     "tone mapping, no gamut mapping"),
        fromReference=ocio.MatrixTransform(_matrix44(view_m))))

    disp_name = ocio_display_name(display)
    disp_cs = f"{disp_name} - display"
    to_disp = display.XYZ_to_rgb @ adaptation_matrix(d65_XYZ, display.white_XYZ, adaptation)
    steps = [ocio.MatrixTransform(_matrix44(to_disp)),
             ocio.RangeTransform(minInValue=0.0, maxInValue=1.0, minOutValue=0.0,
                                 maxOutValue=1.0)]
    transfer, files = _transfer_transforms(ocio, display, curve)
    config.addColorSpace(ocio.ColorSpace(
        ref.REFERENCE_SPACE_DISPLAY, name=disp_cs, family="Starkiln/displays",
        encoding="sdr-video" if display.transfer != "pq" else "hdr-video",
        description=(f"{display.name}: primaries {display.red_xy} {display.green_xy} "
                     f"{display.blue_xy}, white {display.white_xy}, transfer "
                     f"{display.transfer}, peak {display.peak_luminance_cd_m2:g} cd/m2"),
        fromReference=ocio.GroupTransform(steps + transfer)))
    config.addDisplayView(disp_name, VIEW_NAME, viewTransform=VIEW_TRANSFORM,
                          displayColorSpaceName=disp_cs)
    config.setActiveDisplays(disp_name)
    config.setActiveViews(VIEW_NAME)

    for role, cs in (("aces_interchange", SCENE_REFERENCE),
                     ("cie_xyz_d65_interchange", DISPLAY_REFERENCE),
                     ("scene_linear", SCENE_LINEAR), ("rendering", SCENE_LINEAR),
                     ("compositing_linear", SCENE_LINEAR), ("color_timing", SCENE_LINEAR),
                     ("default", SCENE_LINEAR), ("data", "raw")):
        config.setRole(role, cs)
    return config, files, {"display": disp_name, "view": VIEW_NAME,
                           "display_colour_space": disp_cs}


def _is_starkiln_folder(path: Path) -> tuple[bool, str]:
    """Whether ``path`` is a folder ``starkiln ocio`` wrote and nothing else added to: its
    manifest reads, and every entry is a file the manifest lists (or the manifest)."""
    manifest = path / MANIFEST_NAME
    try:
        data = json.loads(manifest.read_text(encoding="utf-8"))
        listed = set(data["files"]) if data.get("starkiln_ocio") == MANIFEST_FORMAT else None
    except (OSError, ValueError, KeyError, TypeError, AttributeError, RecursionError):
        listed = None
    if listed is None:
        return False, f"it holds no readable {MANIFEST_NAME}"
    for entry in os.scandir(path):
        if entry.name != MANIFEST_NAME and (entry.name not in listed
                                            or not entry.is_file(follow_symlinks=False)):
            return False, f"it holds {entry.name!r}, which Starkiln did not write there"
    return True, ""


def check_output_folder(out_dir, overwrite: bool) -> Path:
    """Validate the output folder before any work; every refusal is one line naming it.

    Accepted: a new folder in an existing, writable folder, or (with ``overwrite``) a folder
    :func:`write_ocio_config` wrote that holds nothing else. Refused: a file, a symbolic link,
    FIFO or device in its place, an existing folder without ``overwrite``, a folder Starkiln
    did not write (or one with files added), a missing or read-only parent.

    Parameters
    ----------
    out_dir : path-like
        The folder to write.
    overwrite : bool
        Whether ``--force`` was given.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    OutputExistsError
        The folder exists and ``overwrite`` is false.
    StarkilnError
        Any other refusal, one line naming ``out_dir``.

    References
    ----------
    Common practice (refuse to replace what the program did not write).
    """
    out = Path(out_dir)
    accepted = ("accepted: a new folder, or one 'starkiln ocio' wrote (with --force)")
    parent = out.parent if str(out.parent) else Path(".")
    if out.is_symlink():
        raise StarkilnError(f"{out} is a symbolic link; {accepted}")
    if out.exists() and not out.is_dir():
        kind = "a file" if out.is_file() else "not a folder (a FIFO, device or socket)"
        raise StarkilnError(f"{out} is {kind}; {accepted}")
    if not parent.is_dir():
        raise StarkilnError(f"{out}: folder {str(parent)!r} does not exist or is not a folder; "
                            f"{accepted}")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise StarkilnError(f"{out}: folder {str(parent)!r} is not writable")
    if out.exists():
        if not overwrite:
            raise OutputExistsError(f"{out} exists; pass --force to replace a folder 'starkiln "
                                    "ocio' wrote")
        ours, why = _is_starkiln_folder(out)
        if not ours:
            raise StarkilnError(f"{out} was not written by 'starkiln ocio' ({why}); {accepted}; "
                                "nothing was changed")
    return out


def _write_file(path: Path, data: bytes) -> None:
    with open(path, "wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    os.chmod(path, new_file_mode())


def write_ocio_config(display, out_dir, overwrite: bool = False, adaptation: str = "bradford",
                      curve: str = "exact") -> OcioFolder:
    """Write an OCIO v2 config for ``display`` into the new folder ``out_dir``, atomically.

    The folder is built beside ``out_dir`` under a temporary name (``config.ocio`` from
    ``Config.serialize()``, any LUT file, and the manifest :data:`MANIFEST_NAME`), the config
    is validated (``Config.validate()``) there and checked to build its view's processor, then
    the folder is renamed into place. With ``overwrite`` an earlier folder of Starkiln's is
    renamed aside first, and removed once the new one is in place (put back if that fails).
    Any failure, Ctrl-C or SIGTERM removes the temporary folder; one that SIGKILL left is
    removed by a later run once it is a minute old and its process is gone
    (:func:`starkiln.engine.atomic.remove_stale_temporaries`).

    Parameters
    ----------
    display : Display or str
        The display (:func:`build_config`).
    out_dir : path-like
        The folder to write (:func:`check_output_folder` says what is accepted).
    overwrite : bool
        Replace a folder this function wrote before.
    adaptation, curve : str
        As :func:`build_config`.

    Returns
    -------
    OcioFolder

    References
    ----------
    [OCIO] (``Config.validate``, ``Config.serialize``); POSIX ``rename(2)`` (common practice).
    """
    ocio = _ocio()
    out = check_output_folder(out_dir, overwrite)
    display = _display_for_ocio(display)
    config, files, names = build_config(display, adaptation, curve)
    parent = out.parent if str(out.parent) else Path(".")
    remove_stale_temporaries(parent, folders=True)  # what a killed run left (SIGKILL)
    tmp = Path(tempfile.mkdtemp(dir=parent, prefix=f".{out.name}.starkiln-{os.getpid()}-",
                                suffix=".tmp"))
    old = None
    try:
        for name, data in files.items():
            _write_file(tmp / name, data)
        config.setWorkingDir(str(tmp))
        try:
            config.validate()
            config.getProcessor(SCENE_LINEAR, names["display"], names["view"],
                                ocio.TransformDirection.TRANSFORM_DIR_FORWARD)
        except ocio.Exception as exc:  # pragma: no cover - a defect, not bad input
            raise StarkilnError(f"{out}: OpenColorIO refused the config Starkiln built "
                                f"({' '.join(str(exc).split())})") from None
        _write_file(tmp / CONFIG_NAME, config.serialize().encode("utf-8"))
        written = (CONFIG_NAME, *files)
        manifest = {"starkiln_ocio": MANIFEST_FORMAT, "display": display.name,
                    "ocio_display": names["display"], "view": names["view"],
                    "adaptation": adaptation, "curve": curve, "files": list(written),
                    "opencolorio": ocio.__version__}
        _write_file(tmp / MANIFEST_NAME, (json.dumps(manifest, indent=2) + "\n").encode("utf-8"))
        file_mode = new_file_mode()
        os.chmod(tmp, file_mode | (file_mode & 0o444) >> 2)  # searchable where readable
        if out.exists() or out.is_symlink():
            check_output_folder(out, overwrite)  # still ours, and still asked for
            old = Path(tempfile.mkdtemp(dir=parent, prefix=f".{out.name}.starkiln-"
                                        f"{os.getpid()}-", suffix=".tmp"))
            try:
                os.replace(out, old)
            except BaseException:
                os.rmdir(old)
                old = None
                raise
            try:
                os.replace(tmp, out)
            except BaseException:
                os.replace(old, out)
                old = None
                raise
        else:
            os.rename(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return OcioFolder(out, written, names["display"], names["view"],
                      names["display_colour_space"])
