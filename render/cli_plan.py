"""The ``choose`` command: from a lens inventory to ranked four-lens designs."""

from __future__ import annotations

import json
import time
from pathlib import Path

from optics.errors import InputError
from render import planning
from render.images import write_csv, write_json, write_png
from render.inventory import load_inventory
from render.progress import Progress

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


def add_commands(commands) -> None:
    """Register the choose command."""
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
    c.add_argument("--out", default="cloakview-designs", metavar="DIR")
    c.add_argument("--json", action="store_true", help="print the best designs as JSON")
    c.set_defaults(run=_choose)
