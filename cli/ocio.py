"""``starkiln ocio DISPLAY OUT_DIR``: an OpenColorIO config for a studio's renderer.

One call to :func:`starkiln.engine.exports.ocio_config.write_ocio_config`, which checks the
folder before anything is built (:func:`starkiln.engine.exports.ocio_config.check_output_folder`).
"""

from __future__ import annotations


def add_parsers(sub) -> None:
    """Add ``ocio`` to the subcommands."""
    p = sub.add_parser(
        "ocio", help="write an OpenColorIO config: the working spaces and one display",
        description="Write an OpenColorIO v2 config (config.ocio and any LUT it needs) into "
                    "the new folder OUT_DIR: Starkiln's scene-linear working spaces, and "
                    "DISPLAY as an OCIO display whose view encodes the way Starkiln does.")
    p.add_argument("display", metavar="DISPLAY",
                   help="display preset (see 'starkiln displays') or a JSON display profile")
    p.add_argument("out_dir", metavar="OUT_DIR", help="folder to create")
    p.add_argument("--force", action="store_true",
                   help="replace OUT_DIR if an earlier 'starkiln ocio' wrote it")
    p.add_argument("--adaptation", default="bradford", metavar="METHOD",
                   help="chromatic adaptation between the working white and the display "
                        "white: bradford (default, as the render path), cat16, cat02, "
                        "von-kries, none")
    p.add_argument("--curve", default="exact", choices=("exact", "sampled"),
                   help="exact: OCIO's own transforms for sRGB, gamma and PQ; sampled: a 1-D "
                        "LUT file sampled from Starkiln's encoding (always used for other "
                        "transfers)")


def cmd_ocio(args, out) -> int:
    """``starkiln ocio``: write the config folder and say what to pick in a renderer."""
    from starkiln.engine.exports.ocio_config import MANIFEST_NAME, SCENE_LINEAR, write_ocio_config

    done = write_ocio_config(args.display, args.out_dir, overwrite=args.force,
                             adaptation=args.adaptation, curve=args.curve)
    out.write(f"wrote {done.path}: {', '.join((*done.files, MANIFEST_NAME))}\n")
    out.write(f"display {done.display_name!r}, view {done.view_name!r}; scene_linear role: "
              f"{SCENE_LINEAR}\n")
    return 0


COMMANDS = {"ocio": cmd_ocio}
