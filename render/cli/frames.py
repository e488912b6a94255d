"""Commands for single views: ``design``, ``render``, ``demo``, ``eyes`` and ``samples``."""

from __future__ import annotations

import json
import time
from pathlib import Path

from cloakview import sample_scenes
from cloakview.optics.errors import InputError
from cloakview.optics.lenses import SHAPES
from cloakview.optics.materials import MATERIALS
from cloakview.render.api import frames as api
from cloakview.render.cautions import cautions_text
from cloakview.render.cli import options as opt
from cloakview.render.frame.metrics import WORKS_DEFINITION
from cloakview.render.frame.views import VIEW_NAMES
from cloakview.render.proposal.design_summary import summarise, table


def _design(args) -> int:
    device = api.design(args.f_outer, args.f_inner, diameter_mm=args.diameter,
                        outer_diameter_mm=args.outer_diameter,
                        inner_diameter_mm=args.inner_diameter, material=args.material,
                        shape=args.shape, min_edge_mm=args.min_edge, ideal=args.ideal,
                        coated=args.coated)
    summary = summarise(device)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(table(summary))
        print()
        print(cautions_text())
    return 0


def _fmt(value, pattern="{:.3f}"):
    return "-" if value is None else pattern.format(value)


def _print_table(renders, out: Path) -> None:
    print(f"{'viewer':<16}{'filled':>7}{'dark':>6}{'seen':>6}{'window':>8}{'on panel':>9}"
          f"{'object':>8}"
          f"{'SSIM':>7}{'shift':>7}{'fringe':>7}{'trans':>7}  verdict")
    for r in renders:
        mt = r.metrics
        shift = mt["background_shift_arcmin"]
        print(f"{r.viewer.name:<16}{_fmt(mt['replaced_fraction'], '{:.0%}'):>7}"
              f"{_fmt(mt['blocked_fraction'], '{:.0%}'):>6}"
              f"{_fmt(mt['showing_fraction'], '{:.0%}'):>6}"
              f"{_fmt(mt['window_deg'], '{:.2f}'):>8}"
              f"{_fmt(mt['window_panel_mm'], '{:.0f}'):>9}"
              f"{_fmt(mt['object_outer_deg'], '{:.2f}'):>8}"
              f"{_fmt(mt['background_ssim'], '{:.2f}'):>7}"
              f"{_fmt(shift and shift['median'], '{:.1f}'):>7}"
              f"{_fmt(mt['color_fringe_arcmin'], '{:.1f}'):>7}"
              f"{_fmt(mt['transmittance'], '{:.2f}'):>7}"
              f"  {mt['verdict']}")
    print("Where the object was (as seen without lenses), the view through them shows: "
          "filled = background,\ndark = tube or lens mount, seen = the object. window = "
          "radius of the through-window [deg];\non panel = its diameter on the front panel "
          "[mm]; object = how far the object's place reaches\nfrom the window's centre [deg]. "
          "SSIM = background likeness; shift, fringe = median background\ndisplacement and "
          "blue-red spread [arcmin]; trans = light through the lenses.")
    print(WORKS_DEFINITION[0].upper() + WORKS_DEFINITION[1:] + ".")
    for r in renders:
        for line in r.metrics["advice"]:
            print(line)
    print(f"Images and metrics written to {out.resolve()}")
    print()
    print(cautions_text())


def _views(text: str | None) -> tuple[str, ...]:
    if not text:
        return VIEW_NAMES
    views = tuple(opt.words(text))
    for view in views:
        if view not in VIEW_NAMES:
            raise InputError("--views", view, f"unknown view; choose from {', '.join(VIEW_NAMES)}")
    return views


def _render(args) -> int:
    if args.look_at and not args.eye:
        raise InputError("--look-at", args.look_at, "needs --eye (the viewers of the scene "
                         "have their own look-at points)")
    renders = api.render(
        args.scene, viewer=args.viewer, eye_mm=opt.point(args.eye, "--eye") if args.eye
        else None, look_at_mm=opt.point(args.look_at, "--look-at") if args.look_at else None,
        size_px=opt.size(args.size) if args.size else None, views=_views(args.views),
        supersample=args.supersample, ideal=True if args.ideal else None,
        allow_outside_paths=args.allow_outside_paths, out=args.out, captions=args.captions,
        progress=not args.json)
    if args.json:
        print(json.dumps([r.metrics for r in renders], indent=2))
    else:
        _print_table(renders, Path(args.out))
    return 0


def _demo(args) -> int:
    started = time.perf_counter()
    print(f"cloakview demo: rendering the bundled '{args.scene}' exhibit for each of its "
          "visitors...")
    out = Path(args.out or f"cloakview-demo-{args.scene}")
    renders = api.render(sample_scenes.scene_path(args.scene), out=out, progress=True)
    _print_table(renders, out)
    print(f"\nDemo finished in {time.perf_counter() - started:.1f} s.")
    return 0


def _eyes(args) -> int:
    pair = api.eyes(args.scene, viewer=args.viewer, ipd_mm=args.ipd,
                    size_px=opt.size(args.size) if args.size else None,
                    ideal=True if args.ideal else None,
                    allow_outside_paths=args.allow_outside_paths, out=args.out,
                    progress=not args.json)
    if args.json:
        print(json.dumps({"viewer": pair.left.viewer.name.removesuffix("-left"),
                          "ipd_mm": args.ipd, "left": pair.left.metrics,
                          "right": pair.right.metrics, "window_overlap": pair.overlap,
                          "both_eyes": pair.statement}, indent=2))
        return 0
    for side, r in (("L, left", pair.left), ("R, right", pair.right)):
        print(f"{side:>8} eye: {r.metrics['verdict']}")
    overlap = "-" if pair.overlap is None else f"{pair.overlap:.0%}"
    print(f"through-windows overlap: {overlap}")
    print(f"both eyes: {pair.statement}")
    folder = Path(args.out) / pair.left.viewer.name.removesuffix("-left")
    print(f"Wrote left, right, pair and anaglyph (red-cyan) pictures to {folder}")
    return 0


def _samples(args) -> int:
    written = api.copy_samples(args.out)
    print(f"Copied {len(written)} sample files to {Path(args.out).resolve()}: scenes "
          f"{', '.join(f'{s}/scene.toml' for s in sample_scenes.SCENES)} and "
          f"{sample_scenes.INVENTORY}.")
    return 0


def add_commands(commands) -> None:
    """Register design, render, demo, eyes and samples."""
    d = commands.add_parser("design", help="lay out four lenses so the device acts as empty "
                            "space; print positions, spacings and the matrix")
    d.add_argument("--f-outer", type=float, required=True, metavar="MM",
                   help="focal length of the two outer lenses [mm]")
    d.add_argument("--f-inner", type=float, required=True, metavar="MM",
                   help="focal length of the two inner lenses [mm]; shorter than outer")
    d.add_argument("--diameter", type=float, default=50.8, metavar="MM",
                   help="clear diameter of every lens [mm]")
    d.add_argument("--outer-diameter", type=float, metavar="MM",
                   help="clear diameter of the outer lenses [mm] (default: --diameter)")
    d.add_argument("--inner-diameter", type=float, metavar="MM",
                   help="clear diameter of the inner lenses [mm] (default: --diameter)")
    d.add_argument("--material", default="soda-lime",
                   help=f"lens material: {', '.join(MATERIALS)}, or ND/VD such as 1.52/60")
    d.add_argument("--shape", default="biconvex",
                   help=f"lens shape: {', '.join(SHAPES)}, or a shape factor; the far pair "
                   "is mirrored")
    d.add_argument("--min-edge", type=float, default=2.0, metavar="MM",
                   help="minimum edge thickness of a lens [mm]")
    d.add_argument("--ideal", action="store_true",
                   help="ideal thin lenses (the textbook picture)")
    d.add_argument("--coated", action="store_true",
                   help="anti-reflection coating on every surface")
    opt.add_json(d, "the layout")
    d.set_defaults(run=_design)

    r = commands.add_parser("render", help="render what visitors see through the exhibit "
                            "described in a scene file, with metrics")
    opt.add_scene(r, viewer=False)
    who = r.add_mutually_exclusive_group()
    who.add_argument("--viewer", metavar="NAME",
                     help="render only this viewer of the scene (default: every viewer)")
    who.add_argument("--eye", metavar="X,Y,Z", help="render from this eye point instead [mm, "
                     "room frame: right, height above floor, along the axis]")
    r.add_argument("--look-at", metavar="X,Y,Z", help="point the typed eye looks at [mm] "
                   "(needs --eye; default: the first viewer's look-at point)")
    r.add_argument("--views", metavar="LIST", help=f"comma-separated views from "
                   f"{', '.join(VIEW_NAMES)} (default: all)")
    r.add_argument("--captions", action="store_true", help="caption every picture (viewer, "
                   "eye point, verdict) and inset an enlarged view of a small viewing hole")
    r.add_argument("--size", metavar="WxH", help="image size in pixels, like 1280x720 "
                   "(default: each viewer's)")
    r.add_argument("--supersample", type=int, choices=range(1, 9), metavar="N",
                   help="samples per pixel along each axis, 1-8 (default: the scene's)")
    opt.add_out(r, "cloakview-render", "one folder of pictures and metrics per viewer")
    opt.add_json(r, "the metrics")
    r.set_defaults(run=_render)

    m = commands.add_parser("demo", help="render a bundled exhibit for all its visitors and "
                            "print how well the effect works for each")
    m.add_argument("--scene", default="gallery", choices=sample_scenes.SCENES,
                   help="which bundled exhibit")
    m.add_argument("--out", metavar="DIR", help="output folder (default: "
                   "cloakview-demo-<scene>, one per exhibit)")
    m.set_defaults(run=_demo)

    e = commands.add_parser("eyes", help="both eyes: left and right views, side by side "
                            "and as a red-cyan anaglyph, and whether both see through")
    opt.add_scene(e)
    e.add_argument("--ipd", type=float, default=api.DEFAULT_IPD_MM, metavar="MM",
                   help="distance between the pupils [mm], 63 is the adult mean")
    e.add_argument("--size", metavar="WxH", help="image size in pixels (default: the "
                   "viewer's)")
    opt.add_out(e, "cloakview-eyes", "the pictures and metrics")
    opt.add_json(e, "the metrics")
    e.set_defaults(run=_eyes)

    s = commands.add_parser("samples", help="copy the bundled sample scenes, their pictures "
                            "and the sample lens inventory into a folder")
    opt.add_out(s, "cloakview-samples", "the sample files")
    s.set_defaults(run=_samples)
