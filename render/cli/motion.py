"""Commands for visitors in motion: ``walk``, ``sightlines`` and ``zone``."""

from __future__ import annotations

import json

from cloakview.render.api import motion as api
from cloakview.render.cautions import cautions_text
from cloakview.render.cli import options as opt
from cloakview.render.sweeps.walk import PATHS


def _walk(args) -> int:
    summary = api.walk(
        args.scene, out=args.out, path=args.path, viewer=args.viewer,
        distance_mm=args.distance, height_mm=args.height, to_height_mm=args.to_height,
        span_mm=args.span, arc_deg=args.arc_deg, seconds=args.seconds, fps=args.fps,
        frames=args.frames, size_px=opt.size(args.size) if args.size else None,
        supersample=args.supersample, side_by_side=args.side_by_side,
        ideal=True if args.ideal else None, allow_outside_paths=args.allow_outside_paths,
        workers=args.workers, fresh=args.fresh, scheduler=args.scheduler, progress=not args.json)
    summary.pop("rows")
    if args.json:
        print(json.dumps(summary, indent=2))
        return 0
    print(f"Walk-by: {summary['frames']} frames, the effect works in "
          f"{summary['works_frames']} of them.")
    print(f"Wrote {summary['mp4']}, {summary['gif']} and {summary['csv']} in "
          f"{summary['seconds']:.1f} s." + opt.reuse_note(summary, summary["frames"]))
    print()
    print(cautions_text())
    return 0


def _sightlines(args) -> int:
    result = api.sightlines(
        args.scene, out=args.out, **opt.sight_lines(args), ideal=True if args.ideal else None,
        allow_outside_paths=args.allow_outside_paths, workers=args.workers,
        fresh=args.fresh, scheduler=args.scheduler, progress=not args.json)
    if args.json:
        print(json.dumps({k: v for k, v in result.items()
                          if k not in ("points", "margin_points")}, indent=2))
        return 0
    for name, works in result["works_counts"].items():
        print(f"{name:>10}: works at {works} of {result['floor_points'][name]} floor points")
    print(result["recommendation"])
    print(f"Maps and tables written to {args.out} in {result['seconds']:.1f} s."
          + opt.reuse_note(result, len(result["points"]) + len(result["margin_points"])))
    return 0


def _zone(args) -> int:
    result = api.zone(args.scene, viewer=args.viewer,
                      viewing_box_mm=opt.box(args.viewing_box, "--viewing-box")
                      if args.viewing_box else None, ideal=True if args.ideal else None,
                      allow_outside_paths=args.allow_outside_paths, out=args.out,
                      progress=not args.json)
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    for r in result["rings"]:
        print(f"{r['gap']}: hidden ring {r['inner_mm']:.1f}-{r['outer_mm']:.1f} mm from the "
              f"axis, {r['z_start_mm']:.0f}-{r['z_end_mm']:.0f} mm along it: an object up to "
              f"{r['height_mm']:.0f} mm tall and {r['length_mm']:.0f} mm long fits")
    print(f"Drawing and numbers written to {args.out}")
    return 0


def add_commands(commands) -> None:
    """Register walk, sightlines and zone."""
    w = commands.add_parser("walk", help="walk-by video: one frame per eye point along a "
                            "path, as MP4 and GIF, with per-frame metrics")
    opt.add_scene(w)
    w.add_argument("--path", default="straight", help=f"{', '.join(PATHS)} (walk past, round "
                   "the device, lower the eye) or a CSV file with columns x_mm,y_mm,z_mm")
    w.add_argument("--distance", type=float, default=1500.0, metavar="MM",
                   help="distance of the path from the front panel [mm]")
    w.add_argument("--height", type=float, metavar="MM",
                   help="eye height [mm] (default: the viewer's)")
    w.add_argument("--to-height", type=float, default=1000.0, metavar="MM",
                   help="final eye height of a crouch [mm]")
    w.add_argument("--span", type=float, default=300.0, metavar="MM",
                   help="sideways length of a straight walk [mm]")
    w.add_argument("--arc-deg", type=float, default=20.0, metavar="DEG",
                   help="angle swept by an arc [deg]")
    w.add_argument("--seconds", type=float, default=4.0, metavar="S",
                   help="video length [s]")
    w.add_argument("--fps", type=float, default=30.0, help="frames per second")
    w.add_argument("--frames", type=int, metavar="N",
                   help="number of frames (default: seconds x fps)")
    w.add_argument("--size", metavar="WxH", help="frame size in pixels (default: the "
                   "viewer's)")
    w.add_argument("--supersample", type=int, choices=range(1, 9), metavar="N",
                   help="samples per pixel along each axis, 1-8 (default: the scene's)")
    w.add_argument("--side-by-side", action="store_true",
                   help="show the view with the lenses removed beside each frame")
    opt.add_workers(w)
    opt.add_out(w, "cloakview-walk", "the videos, frames and per-frame numbers")
    opt.add_json(w, "the summary")
    w.set_defaults(run=_walk)

    s = commands.add_parser("sightlines", help="floor-plan and elevation maps of where "
                            "visitors can stand and still see the effect")
    opt.add_scene(s, viewer=False)
    opt.add_sight_lines(s)
    s.add_argument("--lateral", dest="lateral_range", action=opt.RenamedOption,
                   new_name="--lateral-range", metavar="START:STOP:STEP")
    s.add_argument("--distance", dest="distance_range", action=opt.RenamedOption,
                   new_name="--distance-range", metavar="START:STOP:STEP")
    s.add_argument("--elevation", dest="height_range", action=opt.RenamedOption,
                   new_name="--height-range", metavar="START:STOP:STEP")
    opt.add_workers(s)
    opt.add_out(s, "cloakview-sightlines", "the maps and tables")
    opt.add_json(s, "the summary")
    s.set_defaults(run=_sightlines)

    z = commands.add_parser("zone", help="side view of the device with the part of its "
                            "interior hidden from the viewer's eyes, and the largest rings")
    opt.add_scene(z)
    z.add_argument("--viewing-box", metavar="W,H,D", help="viewing zone round the eye [mm]: "
                   "3 x 3 x 3 eye points spread over it (default: the eye point alone)")
    z.add_argument("--box", dest="viewing_box", action=opt.RenamedOption,
                   new_name="--viewing-box", metavar="W,H,D")
    opt.add_out(z, "cloakview-zone", "the drawing and numbers")
    opt.add_json(z, "the rings")
    z.set_defaults(run=_zone)
