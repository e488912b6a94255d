"""Public functions for planning a build: choose lenses from an inventory, tolerance a build."""

from __future__ import annotations

import dataclasses
import time
from pathlib import Path

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render import outfolder
from cloakview.render.api.motion import check_viewing_box, scheduler_from
from cloakview.render.files import run_record, write_csv, write_figure, write_json, write_pngs
from cloakview.render.frame.metrics import WORKS_DEFINITION, percent
from cloakview.render.frame.views import render_viewer
from cloakview.render.planning import search
from cloakview.render.planning import tolerance as tl
from cloakview.render.planning.inventory import load_inventory
from cloakview.render.progress import Progress
from cloakview.render.proposal import charts
from cloakview.render.scene.loader import load_scene
from cloakview.render.scene.relayout import scene_with_lenses
from cloakview.render.sweeps import sightlines as sl
from cloakview.render.sweeps.jobs import fingerprint

#: Columns of ``designs.csv`` and ``pareto.csv``.
DESIGN_COLUMNS = ("rank", "pareto", "outer", "inner", "f_outer_mm", "f_inner_mm", "length_mm",
                  "acuity_field_deg", "through_window_deg", "object_height_mm",
                  "object_length_mm", "object_gap", "color_fringe_arcmin", "transmittance",
                  "mass_g", "cost", "flag", "reason")
#: A device longer than this is flagged even without a length limit [mm]: longer than most
#: gallery rooms allow for one exhibit plus its viewing distance (our own choice).
PRACTICAL_LENGTH_MM = 3000.0


def _limit(key: str, value, low: float) -> float:
    """An optional upper limit: None means none; otherwise finite and above ``low``."""
    if value is None:
        return float("inf")
    if not (np.isfinite(value) and value > low):
        raise InputError(key, value, f"must be a finite number greater than {low:g} "
                         "(leave it out for no limit)")
    return float(value)


def choose(inventory: str | Path, *, out: str | Path, max_length_mm: float | None = None,
           budget: float | None = None, distance_mm: float = 1500.0,
           viewing_box_mm=(0.0, 0.0, 0.0), min_object_mm=(0.0, 0.0),
           render_in: str | Path | None = None, currency: str | None = None,
           workers: int | None = None, fresh: bool = False, scheduler: str | None = None,
           progress: bool = False) -> dict:
    """Rank four-lens designs made from a lens inventory under the planner's constraints.

    Parameters
    ----------
    inventory : path
        Lens inventory CSV (see :mod:`cloakview.render.planning.inventory`).
    out : path
        Folder for ``designs.csv``, ``designs.json``, ``pareto.csv``, ``pareto.png``.
    max_length_mm, budget : float, optional
        Longest device [mm] and most the four lenses may cost; None for no limit.
    distance_mm : float
        Viewing distance from the front panel [mm].
    viewing_box_mm : (width, height, depth)
        Size of the viewing zone round the eye point [mm] (zeros: a point).
    min_object_mm : (height, length)
        Smallest object to hide [mm].
    currency : str, optional
        Currency code of the inventory's prices, for the Pareto chart's axis.
    render_in : path, optional
        A scene file: render the best design in it (its layers and first viewer) as
        ``top_design.png`` and ``top_design_vanish.png``.
    fresh : bool
        Evaluate every pair again instead of reusing cached results.
    scheduler : str, optional
        Run the jobs on Dask distributed: a scheduler address (``tcp://host:port``) or
        ``"local-cluster"`` (default ``$CLOAKVIEW_SCHEDULER``, else the local process pool).

    Returns
    -------
    dict
        ``designs``: every pair, feasible ones first and ranked (rejected ones with the
        reason); ``feasible``: how many; ``reused``: results taken from the cache;
        ``constraints``; ``seconds``.

    Raises
    ------
    InputError
        For bad constraints, or when no design meets them (the message says which
        constraint to relax and by how much).
    """
    started = time.perf_counter()
    items = load_inventory(inventory)
    if not (np.isfinite(distance_mm) and distance_mm > 0):
        raise InputError("distance_mm", distance_mm, "must be a finite number greater than 0")
    need = tuple(float(v) for v in min_object_mm)
    if len(need) != 2 or not all(np.isfinite(v) and v >= 0 for v in need):
        raise InputError("min_object_mm", list(min_object_mm), "must be HEIGHT,LENGTH in mm "
                         "(finite, 0 or more)")
    constraints = search.Constraints(
        max_length_mm=_limit("max_length_mm", max_length_mm, 0.0),
        max_budget=_limit("budget", budget, -1e-300),
        viewing_distance_mm=float(distance_mm),
        zone_mm=check_viewing_box(viewing_box_mm), min_object_mm=need)
    render_scene = load_scene(render_in) if render_in is not None else None
    inputs = [Path(inventory), *(render_scene.sources if render_scene else ())]
    outfolder.check(out, inputs)
    bar = Progress(search.pair_count(items), "design search", enabled=progress)
    rows, reused = search.search(inventory, items, constraints, workers, bar, fresh,
                                 scheduler_from(scheduler))
    feasible = [r for r in rows if r["reason"] is None]
    for r in rows:
        r["flag"] = (f"longer than {PRACTICAL_LENGTH_MM / 1000:g} m" if max_length_mm is None
                     and r.get("length_mm", 0) > PRACTICAL_LENGTH_MM else None)
    if not feasible:
        raise InputError("constraints", str(inventory), search.relax_hint(rows, constraints))
    summary = {"constraints": {"max_length_mm": max_length_mm, "budget": budget,
                               "distance_mm": distance_mm,
                               "viewing_box_mm": list(constraints.zone_mm),
                               "min_object_mm": list(need)},
               "designs": rows, "feasible": len(feasible), "reused": reused,
               "seconds": round(time.perf_counter() - started, 2)}
    top = None
    if render_scene is not None:  # may be refused (lenses wider than its tube): before writing
        by_id = {i.id: i for i in items}
        scene = scene_with_lenses(render_scene, by_id[feasible[0]["outer"]].lens,
                                  by_id[feasible[0]["inner"]].lens)
        top = render_viewer(scene, scene.viewers[0], views=("cloaked", "vanish"))
    with outfolder.output_folder(out, inputs) as folder:
        write_csv(folder / "designs.csv", rows, DESIGN_COLUMNS)
        write_json(folder / "designs.json", summary)
        write_csv(folder / "pareto.csv", [r for r in feasible if r["pareto"]], DESIGN_COLUMNS)
        write_figure(folder / "pareto.png", charts.pareto(rows, currency))
        if top is not None:
            write_pngs({folder / "top_design.png": top.images["cloaked"],
                        folder / "top_design_vanish.png": top.images["vanish"]})
            write_json(folder / "top_design_metrics.json", top.metrics)
        run_record(folder, "choose", {"inventory": str(inventory), **summary["constraints"],
                                      "render_in": str(render_in) if render_in else None},
                   started)
    return summary


def check_tolerances(axial_mm: float, decenter_mm: float, tilt_deg: float,
                     focal_pct: float) -> tl.Tolerances:
    """The four +- tolerances, each finite and within a sane range."""
    tol = tl.Tolerances(axial_mm, decenter_mm, tilt_deg, focal_pct)
    highs = {"axial_mm": 100.0, "decenter_mm": 100.0, "tilt_deg": 45.0, "focal_pct": 50.0}
    for key, value in dataclasses.asdict(tol).items():
        if not (np.isfinite(value) and 0.0 <= value <= highs[key]):
            raise InputError(key, value, f"must be a number from 0 to {highs[key]:g}")
    return tol


def tolerance(scene_path: str | Path, *, out: str | Path, axial_mm: float = 1.0,
              decenter_mm: float = 0.5, tilt_deg: float = 0.5, focal_pct: float = 1.0,
              builds: int = tl.DEFAULT_BUILDS, seed: int = 1,
              size_px: tuple[int, int] = tl.BUILD_SIZE_PX,
              ideal: bool | None = None, allow_outside_paths: bool = False,
              workers: int | None = None, fresh: bool = False,
              scheduler: str | None = None, progress: bool = False) -> dict:
    """Monte Carlo over builds: yield, which tolerance matters most, tolerances for 95 %.

    Parameters
    ----------
    scene_path : path
        The scene file; its first viewer is the design viewer.
    axial_mm, decenter_mm, tilt_deg, focal_pct : float
        Plus-or-minus limits of each lens's axial position [mm], sideways decenter
        [mm], tilt [deg] and focal length [%], each drawn uniformly.
    builds : int
        Builds per setting (1 to 10000).
    seed : int
        Random seed (0 or more): the same seed gives the same builds.
    fresh : bool
        Render every build again instead of reusing cached results.
    scheduler : str, optional
        Run the jobs on Dask distributed: a scheduler address (``tcp://host:port``) or
        ``"local-cluster"`` (default ``$CLOAKVIEW_SCHEDULER``, else the local process pool).
    out : path
        Folder for ``tolerance.json``, ``builds.csv``, ``histograms.png``, ``run.json``.

    Returns
    -------
    dict
        Yield, sensitivity ranking, the largest tested tolerance of each kind that keeps
        95 % yield, and ``rows`` (one dictionary per build of the specified tolerances).
    """
    started = time.perf_counter()
    tol = check_tolerances(axial_mm, decenter_mm, tilt_deg, focal_pct)
    if not 1 <= builds <= 10000:
        raise InputError("builds", builds, "must be 1 to 10000")
    if not 0 <= seed < 2 ** 32:
        raise InputError("seed", seed, "must be a whole number from 0 to 4294967295")
    scene = load_scene(scene_path, allow_outside_paths=allow_outside_paths, ideal=ideal)
    outfolder.check(out, scene.sources)
    bar = Progress(1, "tolerance", enabled=progress)
    summary, rows, reused = tl.analyse(
        tol, builds, seed, size_px, sl.setup_worker,
        (str(scene_path), allow_outside_paths, ideal),
        context=fingerprint(scene.sources, ideal=ideal, allow_outside=allow_outside_paths),
        workers=workers, progress=bar, fresh=fresh, files=scene.sources,
        scheduler=scheduler_from(scheduler))
    summary.update(seed=seed, definition=WORKS_DEFINITION, reused=reused,
                   seconds=round(time.perf_counter() - started, 2))
    with outfolder.output_folder(out, scene.sources) as folder:
        write_json(folder / "tolerance.json", summary)
        write_csv(folder / "builds.csv", rows)
        low, high = summary["yield_interval_95"]
        write_figure(folder / "histograms.png", charts.tolerance_histograms(
            rows, f"{scene.title}: {builds} builds, yield {percent(summary['yield'])} (95 % "
            f"interval {percent(low)} to {percent(high)})"))
        run_record(folder, "tolerance", {"scene": str(scene_path), **dataclasses.asdict(tol),
                                         "builds": builds, "seed": seed,
                                         "size_px": list(size_px)}, started)
    return {**summary, "rows": rows}
