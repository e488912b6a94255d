"""Sight-line maps: from where on the floor, at which eye height, the effect works.

Eye points sweep a floor grid in front of the device (sideways offset x distance from
the front panel) at several eye heights, and a height x distance grid on the axis
line; each point is a small render measured like any view. A point *works* when the
verdict of :mod:`render.metrics` says so (at least 90 % of the object hidden and the
median background shift at most 2 arcminutes, with a view through the lenses).

References
----------
.. [1] U.S. Access Board, ADA Accessibility Guidelines, Appendix Fig. A3: seated
   (wheelchair) eye level 1090-1295 mm (43-51 in).
.. [2] Standing eye heights, 50th percentile: US women 1525 mm, US men 1710 mm
   (anthropometry compendium; from memory that it derives from S. Pheasant,
   Bodyspace).
.. [3] Children aged about 6 to 10: standing eye height roughly 1000-1250 mm (from
   memory; no published table checked).
"""

from __future__ import annotations

import math

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render.frame.composite import TexturePyramids
from cloakview.render.frame.views import POINT_KEYS, render_viewer
from cloakview.render.scene.loader import load_scene
from cloakview.render.scene.model import Scene, Viewer

#: Default eye heights [mm] and where they come from (module references).
EYE_HEIGHTS_MM = {
    "seated": 1190.0,  # middle of the ADA seated range 1090-1295 mm [1]
    "child": 1125.0,   # middle of 1000-1250 mm, from memory [3]
    "women": 1525.0,   # US women, 50th percentile [2]
    "men": 1710.0,     # US men, 50th percentile [2]
}#: Default sweep grids: (start, stop, step) [mm], and the render size of one point [px].
LATERAL_RANGE_MM = (-150.0, 150.0, 10.0)
DISTANCE_RANGE_MM = (600.0, 3000.0, 150.0)
SWEEP_SIZE_PX = (96, 54)
#: Default eye heights of the floor plans (names of :data:`EYE_HEIGHTS_MM`).
DEFAULT_HEIGHTS = ("seated", "child", "women", "men")


def named_heights(heights) -> dict[str, float]:
    """Named eye heights [mm]: names of :data:`EYE_HEIGHTS_MM` or numbers from 0 to 5000."""
    chosen = {}
    for item in heights:
        if isinstance(item, str) and item in EYE_HEIGHTS_MM:
            chosen[item] = EYE_HEIGHTS_MM[item]
            continue
        try:
            value = float(item)
        except (TypeError, ValueError):
            raise InputError("heights", item, "use seated, child, women, men or a height "
                             "in mm") from None
        if not (math.isfinite(value) and 0.0 <= value <= 5000.0):
            raise InputError("heights", value, "must be a finite number from 0 to 5000")
        chosen[f"{value:.0f} mm"] = value
    if not chosen:
        raise InputError("heights", list(heights), "give at least one eye height")
    return chosen


def grids(lateral_range_mm, distance_range_mm, height_range_mm, axis_height_mm: float):
    """Checked sweep values [mm]: sideways offsets, distances from the panel, eye heights.

    ``height_range_mm`` None means 900 to 1800 mm, or 400 mm either side of the axis if
    that is wider, in 25 mm steps.
    """
    xs = grid(*lateral_range_mm, "lateral_range_mm", -20_000.0, 20_000.0)
    ds = grid(*distance_range_mm, "distance_range_mm", -100_000.0, 100_000.0)
    if min(ds) <= 0:
        raise InputError("distance_range_mm", list(distance_range_mm),
                         "distances from the panel must be greater than 0")
    hs = grid(*(height_range_mm or (min(900.0, axis_height_mm - 400.0),
                                    max(1800.0, axis_height_mm + 400.0), 25.0)),
              "height_range_mm", 0.0, 5000.0)
    return xs, ds, hs


def eye_point(scene: Scene, lateral_mm: float, distance_mm: float, height_mm: float):
    """Room point at ``lateral_mm`` right of the axis, ``distance_mm`` in front of the panel."""
    origin, ex, _, ez = scene.placement.axes()
    point = origin + ex * lateral_mm + ez * (scene.housing.panel_z_mm - distance_mm)
    point[1] = height_mm
    return point


def sweep_viewer(scene: Scene, eye, size=(96, 54)) -> Viewer:
    """A low-resolution viewer at ``eye`` looking at the viewing hole, which fills the frame."""
    origin, _, _, ez = scene.placement.axes()
    target = origin + ez * scene.housing.panel_z_mm
    distance = float(np.linalg.norm(np.asarray(eye) - target))
    fov = 2 * math.degrees(math.atan(1.25 * scene.housing.hole_radius_mm / distance))
    return Viewer("sweep", tuple(float(v) for v in eye), tuple(float(v) for v in origin),
                  fov * size[0] / size[1], size[0], size[1])


def setup_worker(scene_path: str, allow_outside: bool, ideal: bool | None):
    """Per-worker state: the scene (design wavelength only) and its texture pyramids."""
    scene = load_scene(scene_path, allow_outside_paths=allow_outside,
                       ideal=ideal).at_design_wavelength()
    return scene, TexturePyramids(scene)


def measure_point(state, job: dict) -> dict:
    """Render one sweep point; return its key numbers."""
    scene, pyramids = state
    eye = eye_point(scene, job["x"], job["d"], job["h"])
    viewer = sweep_viewer(scene, eye, tuple(job["size"]))
    metrics = render_viewer(scene, viewer, pyramids, views=(), supersample=1).metrics
    shift = metrics["background_shift_arcmin"]
    return {**job, **{key: metrics[key] for key in POINT_KEYS},
            "shift_median_arcmin": shift and shift["median"], "class": metrics["verdict_class"]}


def grid(start: float, stop: float, step: float, key: str, low: float = -1e5,
         high: float = 1e5) -> list[float]:
    """Inclusive range of sweep values [mm], all within ``[low, high]``."""
    if not (step > 0 and stop >= start and (stop - start) / step <= 400):
        raise InputError(key, f"{start:g}:{stop:g}:{step:g}", "must be START:STOP:STEP in mm "
                         "with STEP > 0, STOP >= START and at most 400 steps")
    if not (low <= start and stop <= high):
        raise InputError(key, f"{start:g}:{stop:g}:{step:g}", f"must lie within {low:g} to "
                         f"{high:g} mm")
    count = int(math.floor((stop - start) / step + 1e-9)) + 1
    return [start + i * step for i in range(count)]


def floor_jobs(xs, ds, heights, size) -> list[dict]:
    """Jobs of the floor-plan sweeps."""
    return [{"x": x, "d": d, "h": h, "size": list(size)} for h in heights for d in ds
            for x in xs]


def elevation_jobs(hs, ds, size) -> list[dict]:
    """Jobs of the elevation sweep on the axis line."""
    return [{"x": 0.0, "d": d, "h": h, "size": list(size)} for h in hs for d in ds]


def run_margin(values: list[float], works: set[float], at: float) -> tuple[float, bool]:
    """How far one may move from ``at`` either way and stay at working sweep points.

    ``values`` are a sweep's grid values [mm] in order, ``works`` those where the effect
    works. Returns the smaller of the two distances to the last working value of the
    unbroken run through ``at`` [mm], and whether that side ran to the grid's end (then
    the true margin may be larger).
    """
    i = values.index(at)
    lo = i
    while lo > 0 and values[lo - 1] in works:
        lo -= 1
    hi = i
    while hi < len(values) - 1 and values[hi + 1] in works:
        hi += 1
    below, above = values[i] - values[lo], values[hi] - values[i]
    edge = (lo == 0) if below <= above else (hi == len(values) - 1)
    return min(below, above), edge


def candidates(elevation_rows: list[dict], axis_height: float, count: int = 3) -> list[dict]:
    """The ``count`` working points on the axis line with the largest height margin.

    Ties go to the larger margin along the axis, then to eye heights nearer the axis.
    Each returned row gets ``coarse_height_margin_mm`` (on the elevation grid) and
    ``distance_margin_mm``.
    """
    hs = sorted({r["h"] for r in elevation_rows})
    ds = sorted({r["d"] for r in elevation_rows})
    works = {(r["d"], r["h"]) for r in elevation_rows if r["class"] == "works"}
    ranked = []
    for r in elevation_rows:
        if (r["d"], r["h"]) not in works:
            continue
        up_down = run_margin(hs, {h for d, h in works if d == r["d"]}, r["h"])[0]
        along = run_margin(ds, {d for d, h in works if h == r["h"]}, r["d"])[0]
        ranked.append({**r, "coarse_height_margin_mm": up_down, "distance_margin_mm": along})
    ranked.sort(key=lambda r: (-r["coarse_height_margin_mm"], -r["distance_margin_mm"],
                               abs(r["h"] - axis_height), r["d"]))
    return ranked[:count]


def cross_jobs(offsets, points: list[dict], size) -> list[dict]:
    """Jobs of a sideways line and an up-down line through each candidate point.

    ``offsets`` [mm] (the sideways sweep values) are applied along x and along the eye
    height, so both margins are measured at the same, finer step than the elevation map.
    """
    jobs = []
    for p in points:
        jobs += [{"x": x, "d": p["d"], "h": p["h"], "size": list(size)} for x in offsets]
        jobs += [{"x": 0.0, "d": p["d"], "h": p["h"] + dh, "size": list(size)}
                 for dh in offsets if p["h"] + dh >= 0.0 and dh != 0.0]
    return jobs


def best_spot(points: list[dict], cross_rows: list[dict], offsets) -> dict | None:
    """The candidate with the largest margin, sideways and in height, whichever is smaller.

    Margins come from the lines of :func:`cross_jobs`; each returned dictionary has
    ``sideways_margin_mm`` and ``height_margin_mm`` and whether the line ran out first
    (``..._at_edge``: the true margin may be larger).
    """
    offsets = sorted(offsets)
    best, best_key = None, None
    for p in points:
        at = [r for r in cross_rows if r["d"] == p["d"]]
        sideways = {r["x"] for r in at if r["h"] == p["h"] and r["class"] == "works"}
        upright = {r["h"] - p["h"] for r in at if r["x"] == 0.0 and r["class"] == "works"}
        if 0.0 not in sideways:
            continue
        side, side_edge = run_margin(offsets, sideways, 0.0)
        up = [o for o in offsets if p["h"] + o >= 0.0]
        height, height_edge = run_margin(up, upright | {0.0}, 0.0)
        spot = {**p, "sideways_margin_mm": side, "sideways_at_edge": side_edge,
                "height_margin_mm": height, "height_at_edge": height_edge}
        key = (min(side, height), p["distance_margin_mm"])
        if best is None or key > best_key:
            best, best_key = spot, key
    return best


def recommendation(floor_rows: dict[str, list[dict]], spot: dict | None, xs, ds) -> str:
    """Where to put the floor mark and the eye-port, with the margins, in words."""
    if spot is None:
        return ("No eye point on the axis line makes the effect work: revisit the lenses, "
                "the object's place or the viewing distance before building.")
    steps = (f"measured in steps of {_step(xs):g} mm sideways and in height, "
             f"{_step(ds):g} mm in distance")
    more = " or more (the sweep ended there)"
    text = (f"Put the floor mark {spot['d'] / 1000:.2f} m in front of the panel and the "
            f"eye-port at {spot['h']:.0f} mm: there the effect works with a margin of "
            f"+-{spot['sideways_margin_mm']:.0f} mm sideways"
            f"{more if spot['sideways_at_edge'] else ''}, +-{spot['height_margin_mm']:.0f} mm "
            f"in eye height{more if spot['height_at_edge'] else ''} and +-"
            f"{spot['distance_margin_mm']:.0f} mm along the axis ({steps}).")
    if min(spot["sideways_margin_mm"], spot["height_margin_mm"]) == 0:
        text += (" A margin of 0 means no neighbouring point of the sweep works: the eye "
                 "must be placed precisely, so an eye-port or chin rest is needed.")
    for name, rows in floor_rows.items():
        count = sum(r["class"] == "works" for r in rows)
        text += f" {name}: works at {count} of {len(rows)} floor points."
    text += (" Visitors whose eyes are outside that range need a step, a lower eye-port or a "
             "second device; check the arrangement against your accessibility code.")
    return text


def _step(values) -> float:
    return values[1] - values[0] if len(values) > 1 else 0.0


def sweep(run, named_heights: dict[str, float], xs, ds, hs, size, axis_height: float) -> dict:
    """The whole sight-line analysis: floor plans, elevation, margins and the advice.

    ``run(jobs, label)`` runs :func:`measure_point` over the jobs and returns their rows
    in order (the caller chooses the engine and cache). The same grids and render size
    give the same numbers whoever calls it (``cloakview sightlines`` and the report).

    Returns
    -------
    dict
        ``floor`` (rows per height name), ``elevation`` rows, ``margin_lines`` (rows of
        the sideways and up-down lines through the best candidates), ``spot`` (the
        recommended point with its margins, or None) and ``recommendation`` in words.
    """
    floor = floor_jobs(xs, ds, list(named_heights.values()), size)
    side = elevation_jobs(hs, ds, size)
    rows = run(floor + side, "sight lines")
    floor_rows, side_rows = rows[:len(floor)], rows[len(floor):]
    by_height = {name: [r for r in floor_rows if r["h"] == h]
                 for name, h in named_heights.items()}
    points = candidates(side_rows, axis_height)
    offsets = [x - xs[len(xs) // 2] for x in xs] if len(xs) > 1 else [0.0]
    offsets = sorted({*offsets, *(-o for o in offsets), 0.0})
    cross = run(cross_jobs(offsets, points, size), "margins") if points else []
    spot = best_spot(points, cross, offsets)
    return {"floor": by_height, "elevation": side_rows, "margin_lines": cross, "spot": spot,
            "recommendation": recommendation(by_height, spot, xs, ds)}
