"""The ``choose`` command: from a lens inventory to ranked four-lens designs."""

from __future__ import annotations

import dataclasses
import json
import time
from pathlib import Path

from optics.errors import InputError
from render import planning
from render import sightlines as sl
from render import tolerance as tl
from render.images import write_csv, write_json, write_png
from render.inventory import load_inventory
from render.options import parse_size
from render.progress import Progress
from render.report import scene_with_lenses
from render.scene import load_scene
from render.sweeps import run_jobs
from render.views import render_viewer

_COLUMNS = ("rank", "pareto", "outer", "inner", "f_outer_mm", "f_inner_mm", "length_mm",
            "acuity_field_deg", "through_window_deg", "object_height_mm", "object_length_mm",
            "object_gap", "color_fringe_arcmin", "transmittance", "mass_g", "cost", "reason")


def _pair(text: str, key: str, count: int):
    try:
        values = tuple(float(v) for v in text.lower().replace("x", ",").split(","))
    except ValueError:
        values = ()
    if len(values) != count or min(values) < 0:
        raise InputError(key, text, f"must be {count} numbers in mm (>= 0)")
    return values


def _choose(args) -> int:
    started = time.perf_counter()
    items = load_inventory(args.inventory)
    constraints = planning.Constraints(
        max_length_mm=args.max_length or float("inf"),
        max_budget=args.budget if args.budget is not None else float("inf"),
        viewing_distance_mm=args.distance,
        zone_mm=_pair(args.zone, "--zone", 3),
        min_object_mm=_pair(args.min_object, "--min-object", 2))
    if not args.distance > 0:
        raise InputError("--distance", args.distance, "must be greater than 0 mm")
    progress = Progress(planning.pair_count(items), "design search", enabled=not args.json)
    out = Path(args.out)
    rows = planning.search(args.inventory, items, constraints, out / ".jobs", args.workers,
                           progress)
    feasible = [r for r in rows if r["reason"] is None]
    write_csv(out / "designs.csv", rows, _COLUMNS)
    write_json(out / "designs.json", {"constraints": {
        "max_length_mm": args.max_length, "budget": args.budget, "distance_mm": args.distance,
        "zone_mm": list(constraints.zone_mm), "min_object_mm": list(constraints.min_object_mm)},
        "designs": rows, "seconds": round(time.perf_counter() - started, 2)})
    write_csv(out / "pareto.csv", [r for r in feasible if r["pareto"]], _COLUMNS)
    write_png(out / "pareto.png", planning.pareto_image(rows))
    if not feasible:
        raise InputError("constraints", args.inventory, planning.relax_hint(rows, constraints))
    if args.render_top:
        _render_top(args.render_top, feasible[0], {i.id: i for i in items}, out)
    if args.json:
        print(json.dumps(feasible[:10], indent=2))
        return 0
    print(f"{'rank':>4} {'outer':<12}{'inner':<12}{'length':>8}{'field':>7}{'object':>11}"
          f"{'fringe':>8}{'trans':>7}{'kg':>6}{'cost':>7}  Pareto")
    for r in feasible[:args.top]:
        print(f"{r['rank']:>4} {r['outer']:<12}{r['inner']:<12}{r['length_mm']:>8.0f}"
              f"{r['acuity_field_deg']:>7.2f}"
              f"{r['object_height_mm']:>5.0f}x{r['object_length_mm']:<5.0f}"
              f"{r['color_fringe_arcmin'] or 0:>8.2f}{r['transmittance']:>7.3f}"
              f"{r['mass_g'] / 1000:>6.2f}{r['cost']:>7.0f}  {'yes' if r['pareto'] else ''}")
    rejected = len(rows) - len(feasible)
    print(f"field: degrees off the axis with the background within 1 arcmin; object: largest "
          f"hidden ring, height x length [mm]; {rejected} pairs rejected (reasons in "
          f"designs.csv).")
    print(f"Wrote {out / 'designs.csv'}, pareto.csv, pareto.png and designs.json "
          f"in {time.perf_counter() - started:.1f} s.")
    return 0


def tolerance_analysis(scene_path, tol, builds, seed, size, folder, workers=None,
                       allow_outside=False, ideal=None, progress=None,
                       setup=None) -> tuple[dict, list]:
    """Run every build group of a tolerance analysis on the job map; summary and builds.

    ``setup`` (a callable giving the worker state) replaces loading ``scene_path``, for a
    scene that exists only in memory (then the jobs run in this process).
    """
    groups = tl.plan(tol, builds, seed, size)
    unique = {}
    for jobs in groups.values():
        for job in jobs:
            unique.setdefault(json.dumps(job, sort_keys=True), job)
    jobs = list(unique.values())
    if progress:
        progress.total = len(jobs)
    if setup is None:
        setup, args = sl.setup_worker, (str(scene_path), allow_outside, ideal)
    else:
        args, workers = (), 1
    results = run_jobs(tl.build_job, jobs, folder, setup, args, workers=workers,
                       progress=progress)
    by_job = {json.dumps(j, sort_keys=True): r for j, r in zip(jobs, results, strict=True)}
    rows = {name: [by_job[json.dumps(j, sort_keys=True)] for j in jobs_]
            for name, jobs_ in groups.items()}
    return tl.summarise(tol, rows), rows["all"]


def _tolerance(args) -> int:
    started = time.perf_counter()
    tol = tl.Tolerances(args.axial, args.decentre, args.tilt, args.focal)
    for key, value in dataclasses.asdict(tol).items():
        if not (value >= 0 and value < 1e3):
            raise InputError(f"--{key.split('_')[0]}", value, "must be 0 or more")
    if not 1 <= args.builds <= 10000:
        raise InputError("--builds", args.builds, "must be 1 to 10000")
    size = parse_size(args.size) if args.size else (128, 72)
    out = Path(args.out)
    progress = Progress(1, "tolerance", enabled=not args.json)
    summary, builds = tolerance_analysis(args.scene, tol, args.builds, args.seed, size,
                                         out / ".jobs", args.workers,
                                         args.allow_outside_paths,
                                         True if args.ideal else None, progress)
    summary["seed"] = args.seed
    summary["seconds"] = round(time.perf_counter() - started, 2)
    write_json(out / "tolerance.json", summary)
    write_csv(out / "builds.csv", builds)
    write_png(out / "histograms.png", tl.histogram_image(
        builds, f"{args.builds} builds: yield {summary['yield']:.0%}"))
    if args.json:
        print(json.dumps(summary, indent=2))
        return 0
    print(f"Yield: {summary['yield']:.0%} of {args.builds} builds work from the design viewer "
          "(>= 90 % hidden, median background shift <= 2 arcmin).")
    print("Which tolerance costs most (yield with that tolerance alone):")
    for s in summary["sensitivity"]:
        keep = summary["for_95_yield"][s["tolerance"]]["largest_tested_with_95_yield"]
        hint = (f"keep within +-{keep:g} for 95 % yield" if keep is not None else
                f"even +-{summary['for_95_yield'][s['tolerance']]['smallest_tested']:g} "
                "misses 95 % yield")
        print(f"  {tl.LABELS[s['tolerance']]:<22} +-{s['value']:<6g} yield "
              f"{s['yield_alone']:>4.0%}; {hint}")
    print(f"Wrote tolerance.json, builds.csv and histograms.png to {out} in "
          f"{summary['seconds']:.1f} s.")
    return 0


def _render_top(scene_path, top: dict, items: dict, out: Path) -> None:
    """Render the best design in a scene (its layers and first viewer): top_design.png."""
    scene = scene_with_lenses(load_scene(scene_path), items[top["outer"]].lens,
                              items[top["inner"]].lens)
    result = render_viewer(scene, scene.viewers[0], views=("cloaked", "vanish"))
    write_png(out / "top_design.png", result.images["cloaked"])
    write_png(out / "top_design_vanish.png", result.images["vanish"])
    write_json(out / "top_design_metrics.json", result.metrics)


def add_tolerance_options(parser) -> None:
    """The four +- tolerance options, shared by ``tolerance`` and ``report``."""
    parser.add_argument("--axial", type=float, default=1.0, metavar="MM",
                        help="+- axial position of each lens [mm] (default 1)")
    parser.add_argument("--decentre", type=float, default=0.5, metavar="MM",
                        help="+- decentre of each lens [mm] (default 0.5)")
    parser.add_argument("--tilt", type=float, default=0.5, metavar="DEG",
                        help="+- tilt of each lens [deg] (default 0.5)")
    parser.add_argument("--focal", type=float, default=1.0, metavar="PCT",
                        help="+- focal length of each lens [%%] (default 1, a usual "
                        "catalogue tolerance)")


def add_commands(commands) -> None:
    """Register the choose and tolerance commands."""
    c = commands.add_parser("choose", help="rank four-lens designs made from a lens "
                            "inventory (CSV) under length, budget and viewing constraints")
    c.add_argument("inventory", help="lens inventory CSV (see sample_scenes/inventory.csv)")
    c.add_argument("--max-length", type=float, metavar="MM", help="longest device [mm]")
    c.add_argument("--budget", type=float, help="most the four lenses may cost")
    c.add_argument("--distance", type=float, default=1500.0, metavar="MM",
                   help="viewing distance from the front panel [mm] (default 1500)")
    c.add_argument("--zone", default="0,0,0", metavar="W,H,D",
                   help="size of the viewing zone round the eye point [mm] (default a point)")
    c.add_argument("--min-object", default="0x0", metavar="HxL",
                   help="smallest object to hide, height x length [mm]")
    c.add_argument("--top", type=int, default=10, help="designs to list (default 10)")
    c.add_argument("--workers", type=int, help="processes (default: one per core)")
    c.add_argument("--render-top", metavar="SCENE", help="render the best design in this "
                   "scene (its layers and first viewer) as top_design.png")
    c.add_argument("--out", default="cloakview-designs", metavar="DIR")
    c.add_argument("--json", action="store_true", help="print the best designs as JSON")
    c.set_defaults(run=_choose)

    t = commands.add_parser("tolerance", help="Monte Carlo over builds: yield, which "
                            "tolerance matters most, and the tolerances for 95 %% yield")
    t.add_argument("scene", help="scene file (TOML); its first viewer is the design viewer")
    add_tolerance_options(t)
    t.add_argument("--builds", type=int, default=40, help="builds per setting (default 40)")
    t.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    t.add_argument("--size", metavar="WxH", help="render size per build (default 128x72)")
    t.add_argument("--workers", type=int, help="processes (default: one per core)")
    t.add_argument("--ideal", action="store_true", help="ideal thin lenses")
    t.add_argument("--allow-outside-paths", action="store_true")
    t.add_argument("--out", default="cloakview-tolerance", metavar="DIR")
    t.add_argument("--json", action="store_true", help="print the summary as JSON")
    t.set_defaults(run=_tolerance)
