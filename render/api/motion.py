"""Public functions for visitors in motion: walk-by videos, sight-line maps, the cloaked zone.

Sweeps run on the job map (:func:`cloakview.render.sweeps.jobs.run_jobs`): one process
per core, each finished job cached (outside ``out``) under a key that covers the scene
file's and pictures' bytes and every option, so an interrupted sweep resumes and an edited
scene is never answered from an old result.
Workers load the scene from its file, so these functions take the scene file's path.
"""

from __future__ import annotations

import base64
import dataclasses
import os
import time
from pathlib import Path

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render import outfolder
from cloakview.render.files import (
    atomic_write,
    run_record,
    write_csv,
    write_figure,
    write_json,
)
from cloakview.render.frame.metrics import WORKS_DEFINITION
from cloakview.render.progress import Progress
from cloakview.render.proposal import charts
from cloakview.render.scene.loader import load_scene
from cloakview.render.sweeps import sightlines as sl
from cloakview.render.sweeps import walk as wk
from cloakview.render.sweeps import zone as zn
from cloakview.render.sweeps.jobs import fingerprint, local_pool, run_jobs


def scheduler_from(scheduler: str | None) -> str | None:
    """The Dask scheduler to use: the one given, else ``$CLOAKVIEW_SCHEDULER``, else none."""
    return scheduler or os.environ.get("CLOAKVIEW_SCHEDULER") or None


def _base_viewer(scene, viewer: str | None):
    return scene.viewer(viewer) if viewer else scene.viewers[0]


def _finite(key: str, value: float, low: float, high: float) -> float:
    if not (np.isfinite(value) and low <= value <= high):
        raise InputError(key, value, f"must be a finite number from {low:g} to {high:g}")
    return float(value)


def walk(scene_path: str | Path, *, out: str | Path, path: str | Path = "straight",
         viewer: str | None = None, distance_mm: float = 1500.0,
         height_mm: float | None = None, to_height_mm: float = 1000.0,
         span_mm: float = 300.0, arc_deg: float = 20.0, seconds: float = 4.0,
         fps: float = 30.0, frames: int | None = None,
         size_px: tuple[int, int] | None = None, supersample: int | None = None,
         side_by_side: bool = False, ideal: bool | None = None,
         allow_outside_paths: bool = False, workers: int | None = None,
         fresh: bool = False, scheduler: str | None = None,
         progress: bool = False) -> dict:
    """Render a walk-by: one frame per eye point, as MP4, GIF, PNG frames and a CSV.

    Parameters
    ----------
    scene_path : path
        The scene file.
    out : path
        Output folder: ``walk.mp4``, ``walk.gif``, ``walk.csv``, ``frames/``, ``run.json``.
    path : str or path
        ``straight`` (walk past the panel), ``arc`` (round it), ``crouch`` (lower the
        eye) or a CSV file with columns ``x_mm, y_mm, z_mm`` (room frame).
    distance_mm : float
        Distance of the path from the front panel [mm].
    height_mm : float, optional
        Eye height [mm] (default the viewer's); a crouch goes down to ``to_height_mm``.
    span_mm, arc_deg : float
        Sideways length of a straight walk [mm]; angle swept by an arc [deg].
    seconds, fps, frames : float, float, int
        Video length [s] and frame rate [1/s]; ``frames`` overrides their product.
    fresh : bool
        Render every frame again instead of reusing cached results.
    scheduler : str, optional
        Run the jobs on Dask distributed: a scheduler address (``tcp://host:port``) or
        ``"local-cluster"`` (default ``$CLOAKVIEW_SCHEDULER``, else the local process pool).

    Returns
    -------
    dict
        Summary (frame count, frames where the effect works, files) and ``rows``, one
        dictionary of numbers per frame.
    """
    started = time.perf_counter()
    scene = load_scene(scene_path, allow_outside_paths=allow_outside_paths, ideal=ideal)
    base = _base_viewer(scene, viewer)
    fps = _finite("fps", fps, 1.0, 120.0)
    height = _finite("height_mm", height_mm if height_mm is not None else base.eye_mm[1],
                     0.0, 5000.0)
    if frames is None:
        count = round(_finite("seconds", seconds, 0.0, 600.0) * fps)
    else:
        count = frames
    if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= 5000:
        raise InputError("frames", count, "a video must have 1 to 5000 frames (a whole number)")
    eyes = wk.eye_path(scene, path, count, distance_mm=_finite("distance_mm", distance_mm,
                                                                1.0, 1e5),
                       height_mm=height, span_mm=_finite("span_mm", span_mm, 0.0, 1e5),
                       arc_deg=_finite("arc_deg", arc_deg, 0.0, 180.0),
                       to_height_mm=_finite("to_height_mm", to_height_mm, 0.0, 5000.0))
    inputs = [*scene.sources, *([Path(path)] if str(path) not in wk.PATHS else [])]
    with outfolder.output_folder(out, inputs) as out:
        size = size_px or (base.width_px, base.height_px)
        jobs = [{"index": i, "eye": [float(v) for v in eye], "size": list(size),
                 "supersample": supersample or scene.settings.supersample,
                 "side_by_side": side_by_side} for i, eye in enumerate(eyes)]
        frame_files = [out / "frames" / f"frame_{i:05d}.png" for i in range(len(jobs))]

        def write_frame(job, row):  # as each result arrives, so frames never pile up
            data = base64.b64decode(row["png"])
            atomic_write(frame_files[job["index"]], lambda temp: Path(temp).write_bytes(data))
            return {k: v for k, v in row.items() if k != "png"}

        bar = Progress(len(jobs), "walk-by", enabled=progress)
        setup_args = (str(scene_path), allow_outside_paths, ideal)
        rows, reused = run_jobs(wk.render_frame, jobs, "walk", wk.setup_worker, setup_args,
                                context=fingerprint(scene.sources, ideal=ideal,
                                                    allow_outside=allow_outside_paths),
                                workers=workers, progress=bar, fresh=fresh,
                                consume=write_frame, files=scene.sources,
                                scheduler=scheduler_from(scheduler))
        wk.write_videos(frame_files, out / "walk.mp4", out / "walk.gif", fps)
        write_csv(out / "walk.csv", rows)
        write_figure(out / "walk_metrics.png", charts.walk_metrics(
            rows, f"{scene.title}: walk '{path}' at {distance_mm / 1000:.2f} m, what fills "
            "the object's place"))
        summary = {"frames": len(rows), "fps": fps,
                   "works_frames": sum(r["verdict"].startswith("works") for r in rows),
                   "reused": reused,
                   "mp4": str(out / "walk.mp4"), "gif": str(out / "walk.gif"),
                   "csv": str(out / "walk.csv"),
                   "seconds": round(time.perf_counter() - started, 2)}
        run_record(out, "walk", {"scene": str(scene_path), "path": str(path),
                                 "frames": len(rows), "fps": fps, "size_px": list(size)},
                   started, summary=summary)
        return {**summary, "rows": rows}


def sightlines(scene_path: str | Path, *, out: str | Path, heights=sl.DEFAULT_HEIGHTS,
               lateral_range_mm=sl.LATERAL_RANGE_MM, distance_range_mm=sl.DISTANCE_RANGE_MM,
               height_range_mm=None, size_px: tuple[int, int] = sl.SWEEP_SIZE_PX,
               ideal: bool | None = None, allow_outside_paths: bool = False,
               workers: int | None = None, fresh: bool = False,
               scheduler: str | None = None, progress: bool = False) -> dict:
    """Map from where on the floor, and at which eye height, the effect works.

    Parameters
    ----------
    heights : sequence
        Eye heights of the floor plans: ``seated``, ``child``, ``women``, ``men`` or
        numbers [mm].
    lateral_range_mm, distance_range_mm : (start, stop, step)
        Sideways offsets from the axis and distances from the front panel [mm].
    height_range_mm : (start, stop, step), optional
        Eye heights of the elevation map [mm] (default 900 to 1800, or 400 either side
        of the axis if wider, in 25 mm steps).
    fresh : bool
        Render every point again instead of reusing cached results.
    scheduler : str, optional
        Run the jobs on Dask distributed: a scheduler address (``tcp://host:port``) or
        ``"local-cluster"`` (default ``$CLOAKVIEW_SCHEDULER``, else the local process pool).
    out : path
        Folder for ``floor_<height>.png`` per height, ``elevation.png``,
        ``sightlines.csv``, ``sightlines.json`` and ``run.json``.

    Returns
    -------
    dict
        The definition of *works*, the heights, the recommendation in words, the time
        taken and every point.
    """
    started = time.perf_counter()
    scene = load_scene(scene_path, allow_outside_paths=allow_outside_paths, ideal=ideal)
    named = sl.named_heights(heights)
    axis = scene.placement.axis_height_mm
    xs, ds, hs = sl.grids(lateral_range_mm, distance_range_mm, height_range_mm, axis)
    outfolder.check(out, scene.sources)  # before the sweep, not after it
    context = fingerprint(scene.sources, ideal=ideal, allow_outside=allow_outside_paths)
    reused = 0

    setup_args = (str(scene_path), allow_outside_paths, ideal)

    def run(jobs, label):
        nonlocal reused
        rows, count = run_jobs(sl.measure_point, jobs, "sightlines", sl.setup_worker,
                               setup_args, context=context, workers=workers,
                               progress=Progress(len(jobs), label, enabled=progress),
                               fresh=fresh, files=scene.sources,
                               scheduler=scheduler_from(scheduler), pool=pool)
        reused += count
        return rows

    with local_pool(sl.setup_worker, setup_args, workers) as pool:  # one start, two sweeps
        found = sl.sweep(run, named, xs, ds, hs, size_px, axis)
    by_height, side_rows = found["floor"], found["elevation"]
    rows = [*(r for subset in by_height.values() for r in subset), *side_rows]
    with outfolder.output_folder(out, scene.sources) as out:
        for name, h in named.items():
            write_figure(out / f"floor_{name.replace(' ', '')}.png", charts.floor_plan(
                scene, by_height[name], xs, ds, h, f"{scene.title}: where it works ({name})",
                found["spot"]))
        write_figure(out / "elevation.png", charts.elevation(
            scene, side_rows, hs, ds, f"{scene.title}: eye heights", found["spot"]))
        write_csv(out / "sightlines.csv", rows)
        result = {"definition": WORKS_DEFINITION, "heights_mm": named,
                  "works_counts": {name: sum(r["class"] == "works" for r in subset)
                                   for name, subset in by_height.items()},
                  "floor_points": {name: len(subset) for name, subset in by_height.items()},
                  "recommendation": found["recommendation"], "spot": found["spot"],
                  "reused": reused, "seconds": round(time.perf_counter() - started, 2),
                  "points": rows, "margin_points": found["margin_lines"]}
        write_json(out / "sightlines.json", result)
        run_record(out, "sightlines", {"scene": str(scene_path), "heights_mm": named,
                                       "lateral_range_mm": list(lateral_range_mm),
                                       "distance_range_mm": list(distance_range_mm),
                                       "height_range_mm": hs[:1] + hs[-1:],
                                       "size_px": list(size_px)}, started, points=len(rows))
    return result


def _box_eyes(base, viewing_box_mm) -> np.ndarray:
    """The eye point, a 3 x 3 x 3 grid over the viewing box round it, and its pupil rim."""
    if viewing_box_mm is not None and any(viewing_box_mm):
        grid = [np.linspace(-s / 2, s / 2, 3) for s in viewing_box_mm]
        eyes = np.array([np.asarray(base.eye_mm) + [dx, dy, dz]
                         for dx in grid[0] for dy in grid[1] for dz in grid[2]])
    else:
        eyes = np.array([base.eye_mm])
    if base.pupil_mm > 0:
        angles = np.linspace(0, 2 * np.pi, 6, endpoint=False)
        rim = [e + [base.pupil_mm / 2 * np.cos(a), base.pupil_mm / 2 * np.sin(a), 0.0]
               for e in eyes for a in angles]
        eyes = np.concatenate([eyes, np.array(rim)])
    return eyes


def check_viewing_box(viewing_box_mm) -> tuple[float, float, float]:
    """``(width, height, depth)`` [mm] of a viewing box, each finite and 0 to 5000."""
    values = tuple(float(v) for v in viewing_box_mm)
    if len(values) != 3:
        raise InputError("viewing_box_mm", list(values), "must be WIDTH,HEIGHT,DEPTH in mm")
    for v in values:
        _finite("viewing_box_mm", v, 0.0, 5000.0)
    return values


def zone(scene_path: str | Path, *, viewer: str | None = None,
         viewing_box_mm: tuple[float, float, float] | None = None,
         ideal: bool | None = None, allow_outside_paths: bool = False,
         out: str | Path | None = None, progress: bool = False) -> dict:
    """The cloaked zone for a viewer (or a box of eye points round it) and its largest rings.

    Parameters
    ----------
    viewer : str, optional
        The scene's viewer (default the first).
    viewing_box_mm : (width, height, depth), optional
        A box round the eye [mm]; 3 x 3 x 3 eye points spread over it.
    out : path, optional
        Folder for ``zone.png``, ``zone.json`` and ``run.json``.

    Returns
    -------
    dict
        The eye points, the largest hidden ring per gap (radii and axial span [mm]) and
        whether the axis is hidden anywhere.
    """
    started = time.perf_counter()
    scene = load_scene(scene_path, allow_outside_paths=allow_outside_paths, ideal=ideal)
    base = _base_viewer(scene, viewer)
    box = check_viewing_box(viewing_box_mm) if viewing_box_mm is not None else None
    eyes = _box_eyes(base, box)
    if out is not None:
        outfolder.check(out, scene.sources)
    bar = Progress(1, "cloaked zone", enabled=progress)
    zone_map = zn.cloaked_zone(scene, eyes)
    bar(f"{len(eyes)} eye points")
    rings = zn.largest_rings(zone_map, scene)
    result = {"viewer": base.name, "eye_points_mm": eyes.tolist(),
              "rings": [dict(dataclasses.asdict(r), height_mm=r.height_mm,
                             length_mm=r.length_mm) for r in rings],
              "axis_hidden": bool(zone_map.hidden[:, 0].any()),
              "seconds": round(time.perf_counter() - started, 2)}
    if out is not None:
        with outfolder.output_folder(out, scene.sources) as folder:
            write_figure(folder / "zone.png", charts.zone_drawing(
                zone_map, scene, rings, f"{scene.title}: cloaked zone for '{base.name}'"))
            write_json(folder / "zone.json", result)
            run_record(folder, "zone", {"scene": str(scene_path), "viewer": base.name,
                                        "viewing_box_mm": list(box) if box else None},
                       started)
    return result
