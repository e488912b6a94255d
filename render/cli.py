"""The ``cloakview`` command line.

Every bad input ends in one line on stderr naming the source, the key, the
value and the rule, with exit code 2 and no traceback (``--debug`` shows it).
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import sys
import time
from importlib import resources
from pathlib import Path

from optics.cloak import LensChoice, design_cloak
from optics.errors import InputError, require_finite_positive
from optics.lenses import SHAPES
from optics.materials import MATERIALS, material_by_name
from render.cautions import cautions_text
from render.cli_motion import add_commands
from render.cli_plan import add_commands as add_plan_commands
from render.cli_report import add_commands as add_report_commands
from render.composite import TexturePyramids
from render.design_summary import summarise, table
from render.options import parse_size, parse_triple
from render.outputs import write_summary, write_viewer
from render.progress import Progress
from render.scene import Viewer, load_scene
from render.views import VIEW_NAMES, render_viewer


class _UsageError(Exception):
    """A command-line usage error, reported in one line."""


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line and exit 2."""

    def error(self, message):  # noqa: D102 - argparse hook
        raise _UsageError(f"{self.prog}: {message} (see --help)")


def _design(args) -> int:
    diameter = require_finite_positive("--diameter", args.diameter)
    choice = LensChoice(
        ideal=args.ideal,
        material=material_by_name(args.material, "--material"),
        shape=args.shape,
        outer_diameter_mm=require_finite_positive(
            "--outer-diameter", args.outer_diameter or diameter),
        inner_diameter_mm=require_finite_positive(
            "--inner-diameter", args.inner_diameter or diameter),
        min_edge_mm=args.min_edge,
    )
    try:
        design = design_cloak(args.f_outer, args.f_inner, choice, coated=args.coated)
    except InputError as error:
        given = {"outer_diameter": args.outer_diameter, "inner_diameter": args.inner_diameter}
        if error.key in given and given[error.key] is None:
            raise InputError("--diameter", error.value, error.rule) from None
        raise
    summary = summarise(design)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(table(summary))
        print()
        print(cautions_text())
    return 0


def _viewers(scene, args) -> list[Viewer]:
    if args.eye:
        base = scene.viewers[0]
        eye = parse_triple(args.eye, "--eye")
        look = parse_triple(args.look_at, "--look-at") if args.look_at else base.look_at_mm
        chosen = [dataclasses.replace(base, name="custom", eye_mm=eye, look_at_mm=look)]
        device_eye = scene.placement.to_device(eye)
        if device_eye[2] >= scene.housing.panel_z_mm:
            raise InputError("--eye", args.eye, "the eye must be in front of the device's "
                             "front panel", str(scene.path))
    elif args.viewer:
        chosen = [scene.viewer(args.viewer)]
    else:
        chosen = list(scene.viewers)
    if args.size:
        width, height = parse_size(args.size)
        chosen = [dataclasses.replace(v, width_px=width, height_px=height) for v in chosen]
    return chosen


def _views(text: str | None) -> tuple[str, ...]:
    if not text:
        return VIEW_NAMES
    views = tuple(v.strip() for v in text.split(",") if v.strip())
    for view in views:
        if view not in VIEW_NAMES:
            raise InputError("--views", view, f"unknown view; choose from {', '.join(VIEW_NAMES)}")
    return views


def _render_scene(scene_path, args, views, out: Path, quiet: bool) -> list:
    started = time.perf_counter()
    scene = load_scene(scene_path, allow_outside_paths=getattr(args, "allow_outside_paths",
                                                                False),
                       ideal=True if getattr(args, "ideal", False) else None)
    viewers = _viewers(scene, args)
    supersample = getattr(args, "supersample", None)
    pyramids = TexturePyramids(scene)
    progress = Progress(3 * len(viewers), "rendering", enabled=not quiet)
    renders = []
    for viewer in viewers:
        render = render_viewer(scene, viewer, pyramids, views, supersample, progress)
        write_viewer(out, render)
        renders.append(render)
    options = {"views": list(views), "viewers": [v.name for v in viewers],
               "ideal": scene.settings.ideal, "supersample": supersample or
               scene.settings.supersample, "wavelengths_nm": list(scene.settings.wavelengths_nm)}
    write_summary(out, renders, scene.path, options, started)
    return renders


def _render(args) -> int:
    out = Path(args.out)
    renders = _render_scene(Path(args.scene), args, _views(args.views), out, args.json)
    if args.json:
        print(json.dumps([r.metrics for r in renders], indent=2))
    else:
        _print_table(renders, out)
    return 0


def _fmt(value, pattern="{:.3f}"):
    return "-" if value is None else pattern.format(value)


def _print_table(renders, out: Path) -> None:
    print(f"{'viewer':<16}{'hidden':>8}{'SSIM':>7}{'shift':>8}{'trans':>7}{'fringe':>8}"
          f"{'s':>6}  verdict")
    for r in renders:
        mt = r.metrics
        shift = mt["background_shift_arcmin"]
        print(f"{r.viewer.name:<16}{_fmt(mt['hidden_fraction'], '{:.1%}'):>8}"
              f"{_fmt(mt['background_ssim']):>7}"
              f"{_fmt(shift and shift['median'], '{:.2f}'):>8}"
              f"{_fmt(mt['transmittance']):>7}{_fmt(mt['color_fringe_arcmin'], '{:.2f}'):>8}"
              f"{r.seconds:>6.1f}  {mt['verdict']}")
    print("hidden = share of the object that vanishes; SSIM = background likeness through "
          "the lenses;\nshift, fringe = median background displacement and colour spread "
          "[arcmin at the eye]; trans = light through the lenses")
    print(f"Images and metrics written to {out.resolve()}")
    print()
    print(cautions_text())


def _demo(args) -> int:
    started = time.perf_counter()
    scene_path = resources.files("sample_scenes") / args.scene / "scene.toml"
    out = Path(args.out)
    print(f"cloakview demo: rendering the bundled '{args.scene}' exhibit for each of its "
          "visitors...")
    renders = _render_scene(Path(str(scene_path)), args, VIEW_NAMES, out, False)
    _print_table(renders, out)
    print(f"\nDemo finished in {time.perf_counter() - started:.1f} s.")
    return 0


_OPTION_NAMES = {"f_outer": "--f-outer", "f_inner": "--f-inner", "outer_diameter":
                 "--outer-diameter", "inner_diameter": "--inner-diameter", "min_edge_mm":
                 "--min-edge", "shape": "--shape"}


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (also used to document the commands)."""
    parser = _Parser(prog="cloakview", description=(
        "Preview a four-lens 'vanishing' exhibit with real lenses: lay it out, render what "
        "visitors see, and measure how well the effect works."))
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    design = commands.add_parser("design", help="lay out four lenses so the device acts as "
                                 "empty space; print positions, spacings and the matrix")
    design.add_argument("--f-outer", type=float, required=True, metavar="MM",
                        help="focal length of the two outer lenses [mm]")
    design.add_argument("--f-inner", type=float, required=True, metavar="MM",
                        help="focal length of the two inner lenses [mm]; shorter than outer")
    design.add_argument("--diameter", type=float, default=50.8, metavar="MM",
                        help="clear diameter of every lens [mm] (default 50.8)")
    design.add_argument("--outer-diameter", type=float, metavar="MM",
                        help="clear diameter of the outer lenses [mm] (default --diameter)")
    design.add_argument("--inner-diameter", type=float, metavar="MM",
                        help="clear diameter of the inner lenses [mm] (default --diameter)")
    design.add_argument("--material", default="soda-lime",
                        help=f"lens material: {', '.join(MATERIALS)}, or ND/VD "
                        "(default soda-lime)")
    design.add_argument("--shape", default="biconvex",
                        help=f"lens shape: {', '.join(SHAPES)}, or a shape factor "
                        "(default biconvex); the far pair is mirrored")
    design.add_argument("--min-edge", type=float, default=2.0, metavar="MM",
                        help="minimum edge thickness of a lens [mm] (default 2)")
    design.add_argument("--ideal", action="store_true",
                        help="use ideal thin lenses (the textbook picture)")
    design.add_argument("--coated", action="store_true",
                        help="anti-reflection coating on every surface")
    design.add_argument("--json", action="store_true", help="print JSON instead of a table")
    design.set_defaults(run=_design)

    render = commands.add_parser("render", help="render what visitors see through the exhibit "
                                 "described in a scene file, with metrics")
    render.add_argument("scene", help="scene file (TOML)")
    who = render.add_mutually_exclusive_group()
    who.add_argument("--viewer", metavar="NAME", help="render only this viewer of the scene")
    who.add_argument("--eye", metavar="X,Y,Z", help="render from this eye point [mm, room "
                     "frame: right, height above floor, along the axis]")
    render.add_argument("--look-at", metavar="X,Y,Z", help="point the eye looks at [mm] "
                        "(with --eye)")
    render.add_argument("--views", metavar="LIST", help=f"comma-separated views from "
                        f"{', '.join(VIEW_NAMES)} (default all)")
    render.add_argument("--size", metavar="WxH", help="image size in pixels, like 1280x720")
    render.add_argument("--supersample", type=int, choices=range(1, 9), metavar="N",
                        help="samples per pixel along each axis (1-8)")
    render.add_argument("--ideal", action="store_true", help="ideal thin lenses")
    render.add_argument("--allow-outside-paths", action="store_true",
                        help="allow image paths outside the scene folder")
    render.add_argument("--out", default="cloakview-out", metavar="DIR",
                        help="output folder (default cloakview-out)")
    render.add_argument("--json", action="store_true", help="print metrics as JSON")
    render.set_defaults(run=_render)

    demo = commands.add_parser("demo", help="render the bundled gallery exhibit for all its "
                               "visitors and print how well the effect works for each")
    demo.add_argument("--scene", default="gallery", choices=("gallery", "tabletop"),
                      help="which bundled exhibit (default gallery)")
    demo.add_argument("--out", default="cloakview-demo", metavar="DIR",
                      help="output folder (default cloakview-demo)")
    demo.set_defaults(run=_demo, ideal=False, viewer=None, eye=None, size=None)
    add_commands(commands)
    add_plan_commands(commands)
    add_report_commands(commands)
    return parser


def main(argv=None) -> int:
    """Run the command line; return the exit code."""
    argv = sys.argv[1:] if argv is None else argv
    debug = "--debug" in argv
    try:
        args = build_parser().parse_args(argv)
        return args.run(args)
    except InputError as error:
        if debug:
            raise
        key = _OPTION_NAMES.get(error.key, error.key)
        line = InputError(key, error.value, error.rule, error.source)
        print(f"cloakview: error: {line}", file=sys.stderr)
        return 2
    except _UsageError as error:
        print(f"cloakview: error: command line: {error}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into a pager or head that closed early
        return 0
    except KeyboardInterrupt:
        print("cloakview: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
