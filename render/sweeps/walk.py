"""Visitors in motion: eye paths and walk-by videos.

A path is a list of eye points (room frame, mm). Every point becomes one frame,
rendered as a job of a sweep (:mod:`cloakview.render.sweeps.jobs`), so a long video
runs on all cores and an interrupted one picks up where it stopped.
"""

from __future__ import annotations

import base64
import csv
import dataclasses
import io
import math
from pathlib import Path

import cv2
import imageio.v2 as iio2
import imageio.v3 as iio
import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render.files import atomic_write, png_bytes, read_text
from cloakview.render.frame.composite import TexturePyramids
from cloakview.render.frame.overlays import caption
from cloakview.render.frame.views import POINT_KEYS, render_viewer
from cloakview.render.scene.loader import load_scene
from cloakview.render.scene.model import Scene, Viewer


def straight_path(scene: Scene, distance_mm, height_mm, span_mm, count) -> np.ndarray:
    """Walk past the front panel, ``distance_mm`` away, across ``span_mm`` sideways."""
    origin, ex, _, ez = scene.placement.axes()
    xs = np.linspace(-span_mm / 2, span_mm / 2, count)
    points = origin + np.outer(xs, ex) + ez * (scene.housing.panel_z_mm - distance_mm)
    points[:, 1] = height_mm
    return points


def arc_path(scene: Scene, distance_mm, height_mm, arc_deg, count) -> np.ndarray:
    """Walk round the front panel's centre at ``distance_mm``, over +-``arc_deg`` / 2."""
    origin, ex, _, ez = scene.placement.axes()
    centre = origin + ez * scene.housing.panel_z_mm
    angles = np.radians(np.linspace(-arc_deg / 2, arc_deg / 2, count))
    points = centre + distance_mm * (np.outer(np.sin(angles), ex) - np.outer(np.cos(angles), ez))
    points[:, 1] = height_mm
    return points


def crouch_path(scene: Scene, distance_mm, from_mm, to_mm, count) -> np.ndarray:
    """Stand on the axis line and lower the eye from ``from_mm`` to ``to_mm``."""
    origin, _, _, ez = scene.placement.axes()
    points = np.repeat((origin + ez * (scene.housing.panel_z_mm - distance_mm))[None], count, 0)
    points[:, 1] = np.linspace(from_mm, to_mm, count)
    return points


def path_from_csv(path: Path) -> np.ndarray:
    """Eye points from a CSV file with columns x_mm, y_mm, z_mm (room frame)."""
    text = read_text(path, "path", "path file")
    points = []
    with io.StringIO(text, newline="") as handle:
        reader = csv.DictReader(handle)
        missing = {"x_mm", "y_mm", "z_mm"} - set(reader.fieldnames or [])
        if missing:
            raise InputError("--path", str(path), f"needs the columns x_mm, y_mm, z_mm "
                             f"(missing {', '.join(sorted(missing))})")
        for line, row in enumerate(reader, start=2):
            try:
                point = [float(row[k]) for k in ("x_mm", "y_mm", "z_mm")]
            except (TypeError, ValueError):
                raise InputError(f"{path}:{line}", row, "x_mm, y_mm and z_mm must be "
                                 "numbers") from None
            if not all(math.isfinite(v) for v in point):
                raise InputError(f"{path}:{line}", row, "coordinates must be finite")
            points.append(point)
    if not 1 <= len(points) <= 10000:
        raise InputError("--path", str(path), "must hold 1 to 10000 points")
    return np.array(points)


#: Named paths; anything else is read as a CSV file of eye points.
PATHS = ("straight", "arc", "crouch")


def eye_path(scene: Scene, path: str | Path, count: int, *, distance_mm: float,
             height_mm: float, span_mm: float, arc_deg: float, to_height_mm: float):
    """Eye points [mm, room frame] of a named path or a CSV file, all before the panel.

    Raises
    ------
    InputError
        For an unknown path name or file, or a point at or behind the front panel.
    """
    if path == "straight":
        eyes = straight_path(scene, distance_mm, height_mm, span_mm, count)
    elif path == "arc":
        eyes = arc_path(scene, distance_mm, height_mm, arc_deg, count)
    elif path == "crouch":
        eyes = crouch_path(scene, distance_mm, height_mm, to_height_mm, count)
    elif Path(path).suffix.lower() == ".csv" or Path(path).is_file():
        eyes = path_from_csv(Path(path))
    else:
        raise InputError("path", str(path), f"unknown path; choose {', '.join(PATHS)} or a "
                         "CSV file with columns x_mm, y_mm, z_mm")
    for eye in eyes:
        if scene.placement.to_device(eye)[2] >= scene.housing.panel_z_mm:
            raise InputError("path", [round(float(v)) for v in eye], "every eye point must be "
                             "in front of the device's front panel")
    return eyes


def frame_viewer(scene: Scene, base: Viewer, eye, name="walk") -> Viewer:
    """``base`` moved to ``eye``, looking at the viewing hole."""
    origin, _, _, ez = scene.placement.axes()
    target = origin + ez * scene.housing.panel_z_mm
    return dataclasses.replace(base, name=name, eye_mm=tuple(float(v) for v in eye),
                               look_at_mm=tuple(float(v) for v in target))


# --- sweep job: one video frame ---------------------------------------------------------

def setup_worker(scene_path: str, allow_outside: bool, ideal: bool | None):
    """Per-worker state: the scene and its texture pyramids."""
    scene = load_scene(scene_path, allow_outside_paths=allow_outside, ideal=ideal)
    return scene, TexturePyramids(scene)


def render_frame(state, job: dict) -> dict:
    """Render one frame (cloaked, optionally beside naked) and caption it.

    Returns the frame's numbers and, under ``"png"``, the captioned picture as PNG bytes in
    base64, so the job writes no file: whoever runs the sweep writes the frames (and the
    cache keeps them).
    """
    scene, pyramids = state
    base = scene.viewers[0]
    viewer = dataclasses.replace(frame_viewer(scene, base, job["eye"]),
                                 width_px=job["size"][0], height_px=job["size"][1])
    views = ("cloaked", "naked") if job["side_by_side"] else ("cloaked",)
    result = render_viewer(scene, viewer, pyramids, views, job["supersample"])
    m = result.metrics
    image = result.images["cloaked"]
    if job["side_by_side"]:
        image = np.concatenate([image, result.images["naked"]], axis=1)
    eye = job["eye"]
    shift = m["background_shift_arcmin"]
    place = ("no object in view" if m["hidden_fraction"] is None else
             f"object's place: background {m['replaced_fraction']:.0%}, dark "
             f"{m['blocked_fraction']:.0%}, object {m['showing_fraction']:.0%}")
    lines = [f"eye x {eye[0]:+.0f} mm, height {eye[1]:.0f} mm, z {eye[2]:.0f} mm   {place}   "
             f"shift {'-' if shift is None else format(shift['median'], '.1f')} arcmin",
             m["verdict"] + ("   (left: through lenses, right: lenses removed)"
                             if job["side_by_side"] else "")]
    encoded = png_bytes(caption(image, lines))
    return {"frame": job["index"], "eye_x_mm": eye[0], "eye_y_mm": eye[1], "eye_z_mm": eye[2],
            **{key: m[key] for key in POINT_KEYS},
            "shift_median_arcmin": shift and shift["median"], "class": m["verdict_class"],
            "png": base64.b64encode(encoded).decode("ascii")}


def write_videos(frames: list[Path], mp4: Path, gif: Path, fps: float,
                 gif_width: int = 480, gif_fps: float = 10.0) -> None:
    """MP4 (H.264) of every frame and a lighter GIF for slides, each written safely."""
    def write_mp4(temp):
        writer = iio2.get_writer(temp, format="FFMPEG", fps=fps, codec="libx264",
                                 quality=8, macro_block_size=2, pixelformat="yuv420p")
        try:
            for path in frames:
                writer.append_data(iio.imread(path))
        finally:
            writer.close()

    atomic_write(mp4, write_mp4)
    step = max(1, round(fps / gif_fps))
    picked = frames[::step]
    small = []
    for path in picked:
        image = iio.imread(path)
        scale = min(1.0, gif_width / image.shape[1])
        small.append(cv2.resize(image, None, fx=scale, fy=scale, interpolation=cv2.INTER_AREA))
    duration = 1000.0 * step / fps
    atomic_write(gif, lambda temp: iio.imwrite(temp, np.stack(small), extension=".gif",
                                               duration=duration, loop=0))
