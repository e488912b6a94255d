"""Commands for planning a build: ``choose`` and ``tolerance``."""

from __future__ import annotations

import json
import sys
from pathlib import Path

from cloakview.optics.errors import InputError
from cloakview.render.api import planning as api
from cloakview.render.cli import options as opt
from cloakview.render.planning import tolerance as tl
from cloakview.render.planning.tolerance import LABELS


def _min_object(text: str) -> tuple[float, float]:
    if "x" in text.lower():  # the old HxL form, accepted until the next release
        print("cloakview: warning: --min-object HxL is now H,L; the old form will be refused "
              "in the next release", file=sys.stderr)
        text = text.lower().replace("x", ",")
    values = opt.numbers(text, 2, "--min-object", "20,100")
    if min(values) < 0:
        raise InputError("--min-object", text, "sizes must be 0 or more mm")
    return values


def _choose(args) -> int:
    result = api.choose(
        args.inventory, out=args.out, max_length_mm=args.max_length, budget=args.budget,
        distance_mm=args.distance,
        viewing_box_mm=opt.box(args.viewing_box, "--viewing-box"),
        min_object_mm=_min_object(args.min_object), render_in=args.render_in,
        currency=args.currency, workers=args.workers, fresh=args.fresh, scheduler=args.scheduler,
        progress=not args.json)
    feasible = [r for r in result["designs"] if r["reason"] is None]
    shown = feasible[:args.top]
    if args.json:
        print(json.dumps(shown, indent=2))
        return 0
    cost = f"cost {args.currency}" if args.currency else "cost"
    rows = [[str(r["rank"]), r["outer"], r["inner"], f"{r['length_mm']:.0f}",
             f"{r['acuity_field_deg']:.2f}",
             f"{r['object_height_mm']:.0f} x {r['object_length_mm']:.0f}",
             f"{r['color_fringe_arcmin'] or 0:.2f}", f"{r['transmittance']:.3f}",
             f"{r['mass_g'] / 1000:.2f}", f"{r['cost']:.2f}", "yes" if r["pareto"] else "",
             r["flag"] or ""] for r in shown]
    header = ["rank", "outer", "inner", "length mm", "field deg", "object mm", "fringe '",
              "trans", "kg", cost, "Pareto", "note"]
    widths = [max(len(row[i]) for row in [header, *rows]) for i in range(len(header))]
    left = {1, 2, 10, 11}
    for row in [header, *rows]:
        print("  ".join(cell.ljust(w) if i in left else cell.rjust(w)
                        for i, (cell, w) in enumerate(zip(row, widths, strict=True))).rstrip())
    rejected = len(result["designs"]) - len(feasible)
    print(f"Top {len(shown)} of {len(feasible)} feasible designs ({rejected} pairs rejected; "
          "reasons in designs.csv). field: degrees off the axis with the background within "
          "1 arcmin; object: largest hidden ring, height x length; fringe in arcmin; "
          f"cost of the four lenses{' in ' + args.currency if args.currency else ''}.")
    print(f"Wrote {Path(args.out) / 'designs.csv'}, pareto.csv, pareto.png and designs.json "
          f"in {result['seconds']:.1f} s." + opt.reuse_note(result, len(result["designs"])))
    return 0


def _tolerance(args) -> int:
    summary = api.tolerance(
        args.scene, out=args.out, **opt.tolerances(args), builds=args.builds,
        seed=args.seed, size_px=opt.size(args.size), ideal=True if args.ideal else None,
        allow_outside_paths=args.allow_outside_paths, workers=args.workers,
        fresh=args.fresh, scheduler=args.scheduler, progress=not args.json)
    summary.pop("rows")
    if args.json:
        print(json.dumps(summary, indent=2))
        return 0
    low, high = summary["yield_interval_95"]
    print(f"Yield: {summary['yield']:.0%} of {args.builds} builds work from the design viewer "
          f"(95 % interval {low:.0%} to {high:.0%}, Wilson score; "
          f"{summary['definition']}).")
    print("Which tolerance costs most (yield with that tolerance alone):")
    for s in summary["sensitivity"]:
        scan = summary["for_95_yield"][s["tolerance"]]
        keep = scan["largest_tested_with_95_yield"]
        hint = (f"keep within +-{keep:g} for 95 % yield" if keep is not None else
                f"even +-{scan['smallest_tested']:g} misses 95 % yield")
        print(f"  {LABELS[s['tolerance']]:<22} +-{s['value']:<6g} yield "
              f"{s['yield_alone']:>4.0%}; {hint}")
    print(f"Wrote tolerance.json, builds.csv and histograms.png to {args.out} in "
          f"{summary['seconds']:.1f} s.")
    if summary["reused"]:
        print(f"{summary['reused']} build results were reused from the cache (--fresh "
              "recomputes them).")
    return 0


def add_commands(commands) -> None:
    """Register choose and tolerance."""
    c = commands.add_parser("choose", help="rank four-lens designs made from a lens "
                            "inventory (CSV) under length, budget and viewing constraints")
    c.add_argument("inventory", help="lens inventory CSV (cloakview samples writes an "
                   "example, inventory.csv)")
    c.add_argument("--max-length", type=float, metavar="MM",
                   help="longest device [mm] (default: no limit)")
    c.add_argument("--budget", type=float, help="most the four lenses may cost, in the "
                   "inventory's currency (default: no limit)")
    c.add_argument("--distance", type=float, default=1500.0, metavar="MM",
                   help="viewing distance from the front panel [mm]")
    c.add_argument("--viewing-box", default="0,0,0", metavar="W,H,D",
                   help="size of the viewing zone round the eye point [mm]; 0,0,0 is a point")
    c.add_argument("--zone", dest="viewing_box", action=opt.RenamedOption,
                   new_name="--viewing-box", metavar="W,H,D")
    c.add_argument("--min-object", default="0,0", metavar="H,L",
                   help="smallest object to hide, height and length [mm]")
    c.add_argument("--top", type=int, default=10, metavar="N", help="designs to list")
    c.add_argument("--currency", metavar="CODE", help="currency of the inventory's prices, "
                   "printed with the costs, e.g. EUR (default: none printed)")
    c.add_argument("--render-in", metavar="SCENE", help="render the best design in this "
                   "scene (its layers and first viewer) as top_design.png")
    c.add_argument("--render-top", dest="render_in", action=opt.RenamedOption,
                   new_name="--render-in", metavar="SCENE")
    opt.add_workers(c)
    opt.add_out(c, "cloakview-designs", "the ranked designs and the Pareto chart")
    opt.add_json(c, "the best designs")
    c.set_defaults(run=_choose)

    t = commands.add_parser("tolerance", help="Monte Carlo over builds: yield, which "
                            "tolerance matters most, and the tolerances for 95 %% yield")
    opt.add_scene(t, viewer=False)
    opt.add_tolerances(t)
    t.add_argument("--builds", type=int, default=tl.DEFAULT_BUILDS, metavar="N",
                   help="builds per setting, 1-10000; the default keeps the yield's 95 %% "
                   "interval within +-10 %%")
    t.add_argument("--seed", type=int, default=1, help="random seed, 0 or more")
    t.add_argument("--size", default="{}x{}".format(*tl.BUILD_SIZE_PX), metavar="WxH",
                   help="render size of each build in pixels")
    opt.add_workers(t)
    opt.add_out(t, "cloakview-tolerance", "the yield table, builds and histograms")
    opt.add_json(t, "the summary")
    t.set_defaults(run=_tolerance)
