"""Design search: which pairs of lenses from an inventory make the best cloak.

Every pair (two identical outer lenses, two identical inner ones, outer focal length
longer, enough of each in stock) is laid out by the cloak designer and measured, not
guessed: the largest object its cloaked zone hides for the viewing zone, the acuity
field (how far off the axis the background stays within 1 arcminute of true), the
colour fringe, the transmittance, the mass and the cost. The Pareto front keeps the
designs that no other design beats on all of field, hidden object, cost and mass.
"""

from __future__ import annotations

import dataclasses
import itertools
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from cloakview.optics.cloak import design_from_lenses
from cloakview.optics.errors import InputError
from cloakview.optics.fields import view_quality
from cloakview.optics.materials import D_LINE_NM
from cloakview.optics.surfaces import Housing
from cloakview.optics.trace import Rays, trace
from cloakview.render.planning.inventory import Item
from cloakview.render.scene.model import Placement, Scene, Settings
from cloakview.render.sweeps import zone as zn
from cloakview.render.sweeps.jobs import fingerprint, run_jobs

_AXIS_MM = 1250.0


@dataclass(frozen=True)
class Constraints:
    """What the planner asks for (mm; budget in the inventory's currency)."""

    max_length_mm: float = float("inf")
    max_budget: float = float("inf")
    viewing_distance_mm: float = 1500.0
    zone_mm: tuple[float, float, float] = (0.0, 0.0, 0.0)
    min_object_mm: tuple[float, float] = (0.0, 0.0)


def _bench_scene(design) -> Scene:
    """A bare exhibit around a design (housing, placement) for the zone tracer."""
    system = design.system
    largest = max(p.lens.diameter_mm for p in system.lenses) / 2
    housing = Housing(system.front_z_mm - 10.0, system.lenses[0].lens.diameter_mm / 2,
                      largest * 3, largest * 3, largest + 10.0, system.back_z_mm + 10.0)
    grey = np.full(3, 0.5, np.float32)
    return Scene(Path("design-search"), "design search", system, design, housing,
                 Placement(_AXIS_MM, 0.0, 0.0, 0.0), (), (),
                 Settings((D_LINE_NM,), 1, False, grey), grey, grey)


def _eyes(constraints: Constraints, panel_z: float) -> np.ndarray:
    """The viewing zone's centre on the axis and, if it has a size, its eight corners."""
    w, h, d = constraints.zone_mm
    centre = np.array([0.0, _AXIS_MM, panel_z - constraints.viewing_distance_mm])
    offsets = [(0.0, 0.0, 0.0)]
    if any(constraints.zone_mm):
        offsets += [(sx * w / 2, sy * h / 2, sz * d / 2) for sx in (-1, 1) for sy in (-1, 1)
                    for sz in (-1, 1)]
    return centre + np.array(offsets)


def evaluate(outer: Item, inner: Item, constraints: Constraints) -> dict:
    """Lay out and measure one pair; ``reason`` says why it is infeasible (else None)."""
    row = {"outer": outer.id, "inner": inner.id, "f_outer_mm": outer.focal_length_mm,
           "f_inner_mm": inner.focal_length_mm, "cost": 2 * (outer.price + inner.price),
           "mass_g": 2 * (outer.lens.mass_g() + inner.lens.mass_g()), "reason": None}
    if outer.quantity < 2 or inner.quantity < 2:
        short = outer if outer.quantity < 2 else inner
        row["reason"] = f"only {short.quantity} of {short.id} in stock; 2 are needed"
        return row
    if row["f_outer_mm"] <= row["f_inner_mm"]:
        row["reason"] = "the outer focal length must be the longer one"
        return row
    try:
        design = design_from_lenses(outer.lens, inner.lens)
    except InputError as error:
        row["reason"] = error.rule
        return row
    row["length_mm"] = design.length_mm
    if design.length_mm > constraints.max_length_mm:
        over = design.length_mm - constraints.max_length_mm
        row["reason"] = f"{design.length_mm:.0f} mm long, {over:.0f} mm over the maximum length"
        return row
    if row["cost"] > constraints.max_budget:
        row["reason"] = f"costs {row['cost']:.0f}, {row['cost'] - constraints.max_budget:.0f} " \
                        "over the budget"
        return row
    row.update(view_quality(design, constraints.viewing_distance_mm))
    axial = trace(Rays.from_vectors([[0.0, 0.0, -100.0]], [[0.0, 0.0, 1.0]], D_LINE_NM),
                  design.system.surfaces)
    row["transmittance"] = float(axial.throughput[0])
    scene = _bench_scene(design)
    zone = zn.cloaked_zone(scene, _eyes(constraints, scene.housing.panel_z_mm), radial=61,
                           azimuthal=16, axial_step_mm=5.0)
    rings = zn.largest_rings(zone, scene)
    best = max(rings, key=lambda r: r.height_mm * r.length_mm, default=None)
    row["object_height_mm"] = best.height_mm if best else 0.0
    row["object_length_mm"] = best.length_mm if best else 0.0
    row["object_gap"] = best.gap if best else None
    need_h, need_l = constraints.min_object_mm
    fits = [r for r in rings if r.height_mm >= need_h and r.length_mm >= need_l]
    if not fits:
        row["reason"] = (f"hides at most {row['object_height_mm']:.0f} x "
                         f"{row['object_length_mm']:.0f} mm, less than the "
                         f"{need_h:.0f} x {need_l:.0f} mm asked for")
    return row


def setup_worker(inventory_path: str, constraints: dict):
    """Per-worker state: the inventory by id and the constraints."""
    from cloakview.render.planning.inventory import load_inventory

    items = {item.id: item for item in load_inventory(inventory_path)}
    fields = dict(constraints, zone_mm=tuple(constraints["zone_mm"]),
                  min_object_mm=tuple(constraints["min_object_mm"]))
    return items, Constraints(**fields)


def evaluate_job(state, job: dict) -> dict:
    """Sweep job: evaluate the pair named in ``job``."""
    items, constraints = state
    return evaluate(items[job["outer"]], items[job["inner"]], constraints)


def search(inventory_path, items: list[Item], constraints: Constraints, workers=None,
           progress=None, fresh: bool = False,
           scheduler: str | None = None) -> tuple[list[dict], int]:
    """Evaluate every pair with the longer focal length outside; feasible ones first, ranked.

    The pairs run on the sweep job map (parallel, resumable; cached under the inventory's
    bytes and the constraints). Returns (rows, how many results were reused).
    """
    jobs = [{"outer": a.id, "inner": b.id} for a, b in itertools.permutations(items, 2)
            if a.focal_length_mm > b.focal_length_mm]
    limits = {k: (v if v != float("inf") else 1e300) for k, v in
              dataclasses.asdict(constraints).items()}
    rows, reused = run_jobs(evaluate_job, jobs, "designs", setup_worker,
                            (str(inventory_path), limits),
                            context=fingerprint([inventory_path], constraints=limits),
                            workers=workers, progress=progress, fresh=fresh,
                            files=[inventory_path], scheduler=scheduler)
    feasible = [r for r in rows if r["reason"] is None]
    for r in feasible:
        r["pareto"] = not any(_dominates(o, r) for o in feasible if o is not r)
    feasible.sort(key=lambda r: (-r["acuity_field_deg"], -r["object_height_mm"] *
                                 r["object_length_mm"], r["cost"]))
    for rank, r in enumerate(feasible, start=1):
        r["rank"] = rank
    return feasible + [r for r in rows if r["reason"] is not None], reused


def pair_count(items: list[Item]) -> int:
    """How many pairs :func:`search` evaluates."""
    return sum(a.focal_length_mm > b.focal_length_mm for a, b in itertools.permutations(items, 2))


def _dominates(a: dict, b: dict) -> bool:
    better = (a["acuity_field_deg"] >= b["acuity_field_deg"],
              a["object_height_mm"] * a["object_length_mm"] >= b["object_height_mm"] *
              b["object_length_mm"], a["cost"] <= b["cost"], a["mass_g"] <= b["mass_g"])
    strictly = (a["acuity_field_deg"] > b["acuity_field_deg"],
                a["object_height_mm"] * a["object_length_mm"] > b["object_height_mm"] *
                b["object_length_mm"], a["cost"] < b["cost"], a["mass_g"] < b["mass_g"])
    return all(better) and any(strictly)


def relax_hint(rows: list[dict], constraints: Constraints) -> str:
    """Which constraint to relax, and by how much, when nothing is feasible."""
    laid = [r for r in rows if "length_mm" in r]
    hints = []
    if laid and all(r["length_mm"] > constraints.max_length_mm for r in laid):
        shortest = min(r["length_mm"] for r in laid)
        hints.append(f"raise --max-length to at least {shortest:.0f} mm")
    priced = [r for r in laid if r["length_mm"] <= constraints.max_length_mm]
    if priced and all(r["cost"] > constraints.max_budget for r in priced):
        hints.append(f"raise --budget to at least {min(r['cost'] for r in priced):.0f}")
    measured = [r for r in rows if "object_height_mm" in r]
    if measured:
        best = max(measured, key=lambda r: r["object_height_mm"] * r["object_length_mm"])
        hints.append(f"ask for an object of at most {best['object_height_mm']:.0f} x "
                     f"{best['object_length_mm']:.0f} mm (--min-object)")
    if not laid:
        hints.append("add lens pairs with a longer outer than inner focal length and at least "
                     "two of each in stock")
    return "no design meets every constraint: " + "; or ".join(hints)
