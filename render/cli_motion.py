"""Commands for visitors in motion: walk-by videos, both eyes, sight-line maps, cloaked zone."""

from __future__ import annotations

import dataclasses
import json
import time
from pathlib import Path

import numpy as np

from optics.errors import InputError
from render import sightlines as sl
from render import walk
from render import zone as zn
from render.cautions import cautions_text
from render.composite import TexturePyramids
from render.images import write_csv, write_json, write_png
from render.options import parse_size
from render.outputs import VERSION
from render.progress import Progress
from render.scene import load_scene
from render.sweeps import run_jobs
from render.views import render_viewer


def _load(args):
    return load_scene(args.scene, allow_outside_paths=args.allow_outside_paths,
                      ideal=True if args.ideal else None)


def _base_viewer(scene, args):
    return scene.viewer(args.viewer) if args.viewer else scene.viewers[0]


def _range(text: str, key: str) -> list[float]:
    try:
        start, stop, step = (float(v) for v in text.split(":"))
    except ValueError:
        raise InputError(key, text, "must be START:STOP:STEP in mm, like -150:150:10") from None
    return sl.grid(start, stop, step, key)


def _size(text: str, default):
    return parse_size(text) if text else default


def _run_record(out: Path, args, started: float, extra: dict) -> None:
    options = {k: v for k, v in vars(args).items() if k not in ("run",)}
    write_json(out / "run.json", {"program": "cloakview", "version": VERSION,
                                  "command": args.command, "options": options,
                                  "seconds": round(time.perf_counter() - started, 3), **extra})


def _walk(args) -> int:
    started = time.perf_counter()
    scene = _load(args)
    base = _base_viewer(scene, args)
    height = args.height if args.height is not None else base.eye_mm[1]
    count = args.frames if args.frames is not None else max(1, round(args.seconds * args.fps))
    if not 1 <= count <= 5000:
        raise InputError("--frames", count, "a video must have 1 to 5000 frames")
    if args.path == "straight":
        eyes = walk.straight_path(scene, args.distance, height, args.span, count)
    elif args.path == "arc":
        eyes = walk.arc_path(scene, args.distance, height, args.arc_deg, count)
    elif args.path == "crouch":
        eyes = walk.crouch_path(scene, args.distance, height, args.to_height, count)
    else:
        eyes = walk.path_from_csv(Path(args.path))
    for eye in eyes:
        if scene.placement.to_device(eye)[2] >= scene.housing.panel_z_mm:
            raise InputError("--path", [round(float(v)) for v in eye], "every eye point must "
                             "be in front of the device's front panel")
    out = Path(args.out)
    size = _size(args.size, (base.width_px, base.height_px))
    frames_dir = out / "frames"
    jobs = [{"index": i, "eye": [float(v) for v in eye], "size": list(size),
             "supersample": args.supersample or scene.settings.supersample,
             "side_by_side": args.side_by_side,
             "frame_path": str(frames_dir / f"frame_{i:05d}.png")}
            for i, eye in enumerate(eyes)]
    progress = Progress(len(jobs), "walk-by", enabled=not args.json)
    rows = run_jobs(walk.render_frame, jobs, out / ".jobs",
                    walk.setup_worker, (str(args.scene), args.allow_outside_paths,
                                        True if args.ideal else None),
                    workers=args.workers, progress=progress)
    missing = [j for j in jobs if not Path(j["frame_path"]).is_file()]
    if missing:  # result cached but picture removed: draw those frames again
        state = walk.setup_worker(str(args.scene), args.allow_outside_paths,
                                  True if args.ideal else None)
        for job in missing:
            walk.render_frame(state, job)
    frames = [Path(j["frame_path"]) for j in jobs]
    walk.write_videos(frames, out / "walk.mp4", out / "walk.gif", args.fps)
    write_csv(out / "walk.csv", rows)
    works = sum(r["verdict"].startswith("works") for r in rows)
    summary = {"frames": len(rows), "fps": args.fps, "works_frames": works,
               "mp4": str(out / "walk.mp4"), "gif": str(out / "walk.gif"),
               "csv": str(out / "walk.csv"), "seconds": round(time.perf_counter() - started, 2)}
    _run_record(out, args, started, {"summary": summary})
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(f"Walk-by: {len(rows)} frames, the effect works in {works} of them.")
        print(f"Wrote {out / 'walk.mp4'}, {out / 'walk.gif'} and {out / 'walk.csv'} "
              f"in {summary['seconds']:.1f} s.")
        print()
        print(cautions_text())
    return 0


def _eyes(args) -> int:
    started = time.perf_counter()
    scene = _load(args)
    base = _base_viewer(scene, args)
    if args.size:
        width, height = _size(args.size, None)
        base = dataclasses.replace(base, width_px=width, height_px=height)
    if not 20.0 <= args.ipd <= 90.0:
        raise InputError("--ipd", args.ipd, "interpupillary distance must be 20 to 90 mm")
    left, right = walk.eye_pair(base, args.ipd)
    pyramids = TexturePyramids(scene)
    progress = Progress(6, "both eyes", enabled=not args.json)
    renders = [render_viewer(scene, v, pyramids, ("cloaked",), progress=progress)
               for v in (left, right)]
    out = Path(args.out) / base.name
    images = [r.images["cloaked"] for r in renders]
    write_png(out / "left.png", images[0])
    write_png(out / "right.png", images[1])
    write_png(out / "pair.png", np.concatenate([images[0], images[1]], axis=1))
    write_png(out / "anaglyph.png", walk.anaglyph(images[0], images[1]))
    statement = walk.both_eyes_statement(renders[0].metrics, renders[1].metrics)
    result = {"viewer": base.name, "ipd_mm": args.ipd, "left": renders[0].metrics,
              "right": renders[1].metrics, "both_eyes": statement}
    write_json(out / "metrics.json", result)
    _run_record(Path(args.out), args, started, {})
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        for side, r in zip(("left", "right"), renders, strict=True):
            hidden = r.metrics["hidden_fraction"]
            print(f"{side:>5} eye: hidden {'-' if hidden is None else format(hidden, '.0%')}, "
                  f"{r.metrics['verdict']}")
        print(statement)
        print(f"Wrote left, right, pair and anaglyph (red-cyan) pictures to {out}")
    return 0


def _sightlines(args) -> int:
    started = time.perf_counter()
    scene = _load(args)
    names = [h.strip() for h in args.heights.split(",") if h.strip()]
    heights = {}
    for name in names:
        if name in sl.EYE_HEIGHTS_MM:
            heights[name] = sl.EYE_HEIGHTS_MM[name]
        else:
            try:
                heights[f"{float(name):.0f} mm"] = float(name)
            except ValueError:
                raise InputError("--heights", name, "use seated, child, women, men or a "
                                 "height in mm") from None
    xs = _range(args.lateral, "--lateral")
    ds = _range(args.distance, "--distance")
    axis = scene.placement.axis_height_mm
    hs = (_range(args.elevation, "--elevation") if args.elevation else
          sl.grid(min(900.0, axis - 400.0), max(1800.0, axis + 400.0), 25.0, "--elevation"))
    if min(ds) <= 0:
        raise InputError("--distance", args.distance, "distances from the panel must be > 0")
    size = _size(args.size, (96, 54))
    floor = sl.floor_jobs(xs, ds, list(heights.values()), size)
    side = sl.elevation_jobs(hs, ds, size)
    out = Path(args.out)
    progress = Progress(len(floor) + len(side), "sight lines", enabled=not args.json)
    rows = run_jobs(sl.measure_point, floor + side, out / ".jobs", sl.setup_worker,
                    (str(args.scene), args.allow_outside_paths, True if args.ideal else None),
                    workers=args.workers, progress=progress)
    floor_rows, side_rows = rows[:len(floor)], rows[len(floor):]
    by_height = {}
    for name, h in heights.items():
        subset = [r for r in floor_rows if r["h"] == h]
        by_height[name] = subset
        picture = sl.floor_plan_image(scene, subset, xs, ds, h, f"{scene.title}: where it "
                                      f"works ({name})")
        write_png(out / f"floor_{name.replace(' ', '')}.png", picture)
    write_png(out / "elevation.png", sl.elevation_image(scene, side_rows, hs, ds,
                                                        f"{scene.title}: eye heights"))
    advice = sl.recommendation(by_height, side_rows, scene.placement.axis_height_mm)
    write_csv(out / "sightlines.csv", rows)
    result = {"definition": "works: at least 90 % of the object hidden, a view of the "
              "background through the lenses, median background shift at most 2 arcmin",
              "heights_mm": heights, "recommendation": advice,
              "seconds": round(time.perf_counter() - started, 2), "points": rows}
    write_json(out / "sightlines.json", result)
    _run_record(out, args, started, {"points": len(rows)})
    if args.json:
        print(json.dumps({k: v for k, v in result.items() if k != "points"}, indent=2))
    else:
        for name, subset in by_height.items():
            works = sum(r["class"] == "works" for r in subset)
            print(f"{name:>10}: works at {works} of {len(subset)} floor points")
        print(advice)
        print(f"Maps and tables written to {out} in {result['seconds']:.1f} s.")
    return 0


def _zone(args) -> int:
    started = time.perf_counter()
    scene = _load(args)
    base = _base_viewer(scene, args)
    if args.box:
        try:
            size = [float(v) for v in args.box.split(",")]
        except ValueError:
            size = []
        if len(size) != 3 or min(size) < 0:
            raise InputError("--box", args.box, "must be WIDTH,HEIGHT,DEPTH in mm (>= 0)")
        grid = [np.linspace(-s / 2, s / 2, 3) for s in size]
        eyes = np.array([np.asarray(base.eye_mm) + [dx, dy, dz]
                         for dx in grid[0] for dy in grid[1] for dz in grid[2]])
    else:
        eyes = np.array([base.eye_mm])
    if base.pupil_mm > 0:
        ring = [np.asarray(e) + [base.pupil_mm / 2 * np.cos(a), base.pupil_mm / 2 * np.sin(a),
                                 0.0] for e in eyes for a in np.linspace(0, 2 * np.pi, 6,
                                                                         endpoint=False)]
        eyes = np.concatenate([eyes, np.array(ring)])
    progress = Progress(1, "cloaked zone", enabled=not args.json)
    zone = zn.cloaked_zone(scene, eyes)
    progress(f"{len(eyes)} eye points")
    rings = zn.largest_rings(zone, scene)
    out = Path(args.out)
    write_png(out / "zone.png", zn.zone_image(zone, scene, rings, f"{scene.title}: cloaked "
                                              f"zone for '{base.name}'"))
    result = {"viewer": base.name, "eye_points_mm": eyes.tolist(),
              "rings": [dict(dataclasses.asdict(r), height_mm=r.height_mm,
                             length_mm=r.length_mm) for r in rings],
              "axis_hidden": bool(zone.hidden[:, 0].any()),
              "seconds": round(time.perf_counter() - started, 2)}
    write_json(out / "zone.json", result)
    _run_record(out, args, started, {})
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        for r in rings:
            print(f"{r.gap}: hidden ring {r.inner_mm:.1f}-{r.outer_mm:.1f} mm from the axis, "
                  f"{r.z_start_mm:.0f}-{r.z_end_mm:.0f} mm along it: an object up to "
                  f"{r.height_mm:.0f} mm tall and {r.length_mm:.0f} mm long fits")
        print(f"Drawing and numbers written to {out}")
    return 0


def add_commands(commands) -> None:
    """Register the walk, eyes, sightlines and zone commands."""
    def common(p):
        p.add_argument("scene", help="scene file (TOML)")
        p.add_argument("--ideal", action="store_true", help="ideal thin lenses")
        p.add_argument("--allow-outside-paths", action="store_true",
                       help="allow image paths outside the scene folder")
        p.add_argument("--json", action="store_true", help="print results as JSON")

    w = commands.add_parser("walk", help="walk-by video: one frame per eye point along a "
                            "path, as MP4 and GIF, with per-frame metrics")
    common(w)
    w.add_argument("--path", default="straight", help="straight (walk past), arc (round "
                   "the device), crouch (lower the eye) or a CSV file of x_mm,y_mm,z_mm")
    w.add_argument("--viewer", metavar="NAME", help="viewer whose size and eye height to use")
    w.add_argument("--distance", type=float, default=1500.0, metavar="MM",
                   help="distance from the front panel [mm] (default 1500)")
    w.add_argument("--height", type=float, metavar="MM", help="eye height [mm] (default: "
                   "the viewer's)")
    w.add_argument("--to-height", type=float, default=1000.0, metavar="MM",
                   help="final eye height of a crouch [mm] (default 1000)")
    w.add_argument("--span", type=float, default=300.0, metavar="MM",
                   help="sideways length of a straight walk [mm] (default 300)")
    w.add_argument("--arc-deg", type=float, default=20.0, metavar="DEG",
                   help="angle swept by an arc [deg] (default 20)")
    w.add_argument("--seconds", type=float, default=4.0, help="video length (default 4)")
    w.add_argument("--fps", type=float, default=30.0, help="frames per second (default 30)")
    w.add_argument("--frames", type=int, help="number of frames (overrides --seconds)")
    w.add_argument("--size", metavar="WxH", help="frame size in pixels")
    w.add_argument("--supersample", type=int, choices=range(1, 9), metavar="N")
    w.add_argument("--side-by-side", action="store_true",
                   help="show the view with the lenses removed beside each frame")
    w.add_argument("--workers", type=int, help="processes (default: one per core)")
    w.add_argument("--out", default="cloakview-walk", metavar="DIR")
    w.set_defaults(run=_walk)

    e = commands.add_parser("eyes", help="both eyes: left and right views, side by side "
                            "and as a red-cyan anaglyph, and whether both see through")
    common(e)
    e.add_argument("--viewer", metavar="NAME", help="viewer (default: the first)")
    e.add_argument("--ipd", type=float, default=walk.DEFAULT_IPD_MM, metavar="MM",
                   help="distance between the pupils [mm] (default 63, adult mean)")
    e.add_argument("--size", metavar="WxH", help="image size in pixels")
    e.add_argument("--out", default="cloakview-eyes", metavar="DIR")
    e.set_defaults(run=_eyes)

    s = commands.add_parser("sightlines", help="floor-plan and elevation maps of where "
                            "visitors can stand and still see the effect")
    common(s)
    s.add_argument("--heights", default="seated,child,women,men",
                   help="eye heights: seated, child, women, men or numbers in mm")
    s.add_argument("--lateral", default="-150:150:10", metavar="A:B:S",
                   help="sideways offsets from the axis [mm] (default -150:150:10)")
    s.add_argument("--distance", default="600:3000:150", metavar="A:B:S",
                   help="distances from the front panel [mm] (default 600:3000:150)")
    s.add_argument("--elevation", metavar="A:B:S", help="eye heights of the elevation map "
                   "[mm] (default: 900 to 1800, or 400 either side of the axis if wider, "
                   "in 25 mm steps)")
    s.add_argument("--size", metavar="WxH", help="render size per point (default 96x54)")
    s.add_argument("--workers", type=int, help="processes (default: one per core)")
    s.add_argument("--out", default="cloakview-sightlines", metavar="DIR")
    s.set_defaults(run=_sightlines)

    z = commands.add_parser("zone", help="side view of the device with the part of its "
                            "interior hidden from the viewer's eyes, and the largest rings")
    common(z)
    z.add_argument("--viewer", metavar="NAME", help="viewer (default: the first)")
    z.add_argument("--box", metavar="W,H,D", help="viewing zone around the eye [mm]: "
                   "3 x 3 x 3 eye points spread over it")
    z.add_argument("--out", default="cloakview-zone", metavar="DIR")
    z.set_defaults(run=_zone)
