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

import cv2
import numpy as np

from optics.errors import InputError
from render.composite import TexturePyramids
from render.scene import Scene, Viewer, load_scene
from render.views import render_viewer

#: Default eye heights [mm] and where they come from (module references).
EYE_HEIGHTS_MM = {
    "seated": 1190.0,  # middle of the ADA seated range 1090-1295 mm [1]
    "child": 1125.0,   # middle of 1000-1250 mm, from memory [3]
    "women": 1525.0,   # US women, 50th percentile [2]
    "men": 1710.0,     # US men, 50th percentile [2]
}
CLASSES = ("works", "partly", "breaks", "no view")
#: Cell colours (sRGB, our own palette): green, amber, red, grey.
CLASS_RGB = {"works": (46, 160, 90), "partly": (235, 170, 40), "breaks": (205, 60, 50),
             "no view": (150, 150, 150)}


def classify(metrics: dict) -> str:
    """Map a verdict to one of :data:`CLASSES`."""
    verdict = metrics["verdict"]
    if verdict.startswith("works"):
        return "works"
    if verdict.startswith("partly"):
        return "partly"
    if "no view" in verdict or "no object" in verdict:
        return "no view"
    return "breaks"


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
    return {**job, "hidden_fraction": metrics["hidden_fraction"],
            "background_ssim": metrics["background_ssim"],
            "shift_median_arcmin": shift and shift["median"],
            "through_pixels": metrics["through_pixels"], "verdict": metrics["verdict"],
            "class": classify(metrics)}


def grid(start: float, stop: float, step: float, key: str) -> list[float]:
    """Inclusive range of sweep values [mm]."""
    if not (step > 0 and stop >= start and (stop - start) / step <= 400):
        raise InputError(key, f"{start:g}:{stop:g}:{step:g}", "must be START:STOP:STEP in mm "
                         "with STEP > 0, STOP >= START and at most 400 steps")
    count = int(math.floor((stop - start) / step + 1e-9)) + 1
    return [start + i * step for i in range(count)]


def floor_jobs(xs, ds, heights, size) -> list[dict]:
    """Jobs of the floor-plan sweeps."""
    return [{"x": x, "d": d, "h": h, "size": list(size)} for h in heights for d in ds
            for x in xs]


def elevation_jobs(hs, ds, size) -> list[dict]:
    """Jobs of the elevation sweep on the axis line."""
    return [{"x": 0.0, "d": d, "h": h, "size": list(size)} for h in hs for d in ds]


# --- pictures -------------------------------------------------------------------------

def _text(image, text, org, scale=0.45, colour=(30, 30, 30), thickness=1):
    cv2.putText(image, text, org, cv2.FONT_HERSHEY_SIMPLEX, scale, colour, thickness,
                cv2.LINE_AA)


def _cells(image, classes: np.ndarray, centre_px, cell) -> None:
    """Fill one rectangle per sweep point with its class colour; outline where it works.

    ``centre_px(row, col)`` gives a cell's centre in pixels.
    """
    rows, cols = classes.shape
    for (r, c), cls in np.ndenumerate(classes):
        x, y = centre_px(r, c)
        cv2.rectangle(image, (int(x - cell[0] / 2), int(y - cell[1] / 2)),
                      (int(x + cell[0] / 2), int(y + cell[1] / 2)), CLASS_RGB[cls], -1)
    works = (classes == "works").astype(np.uint8) * 255
    up = 8
    mask = cv2.resize(works, None, fx=up, fy=up, interpolation=cv2.INTER_NEAREST)
    contours, _ = cv2.findContours(mask, cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_SIMPLE)
    x00, y00 = centre_px(0, 0)
    x11, y11 = centre_px(min(1, rows - 1), min(1, cols - 1))
    step_x = (x11 - x00) if cols > 1 else cell[0]
    step_y = (y11 - y00) if rows > 1 else cell[1]
    for contour in contours:
        pts = contour[:, 0, :].astype(float) / up - 0.5  # cell-index units, edges at +-0.5
        px = x00 + pts[:, 0] * step_x
        py = y00 + pts[:, 1] * step_y
        thick = 2 if min(abs(step_x), abs(step_y)) >= 14 else 1
        cv2.polylines(image, [np.stack([px, py], -1).astype(np.int32)], True, (20, 20, 20),
                      thick, cv2.LINE_AA)


def _legend(image, y, note):
    x = 12
    for cls in CLASSES:
        cv2.rectangle(image, (x, y), (x + 14, y + 14), CLASS_RGB[cls], -1)
        _text(image, cls, (x + 20, y + 12))
        x += 110
    _text(image, note, (12, y + 34), 0.4)


def floor_plan_image(scene: Scene, rows: list[dict], xs, ds, height: float, title: str):
    """Plan view: the device at the top, a cell per sweep point in front of it.

    Distances are drawn to scale; the sideways scale is stretched to fit the grid into
    the picture, and the drawing says by how much.
    """
    width_px, grid_w = 640, 520
    step_x = xs[1] - xs[0] if len(xs) > 1 else 20.0
    step_d = ds[1] - ds[0] if len(ds) > 1 else 100.0
    span_x = max(xs) - min(xs) + step_x
    device_len = scene.housing.tube_end_mm - scene.housing.panel_z_mm
    depth = max(ds) + step_d
    sv = 640.0 / (device_len + depth)
    sh = grid_w / span_x
    top = 70 + int(device_len * sv)
    image = np.full((top + int(depth * sv) + 110, width_px, 3), 250, np.uint8)
    cx = width_px // 2 + int((max(xs) + min(xs)) / -2 * sh)

    def to_px(x, d):
        return cx + x * sh, top + d * sv

    pw = min(scene.housing.panel_half_width_mm * sh, width_px)
    tube = scene.housing.tube_radius_mm * sh
    cv2.rectangle(image, (int(cx - tube), 70), (int(cx + tube), top), (90, 90, 100), -1)
    for placed in scene.system.lenses:
        z = top - (placed.centre_z_mm - scene.housing.panel_z_mm) * sv
        half = placed.lens.diameter_mm / 2 * sh
        cv2.line(image, (int(cx - half), int(z)), (int(cx + half), int(z)), (120, 200, 255), 3)
    cv2.line(image, (int(cx - pw), top), (int(cx + pw), top), (40, 40, 50), 4)
    _text(image, "device (tube, lenses in blue, front panel)", (12, 64), 0.4)
    classes = np.array([[r["class"] for r in rows if r["d"] == d] for d in ds])
    _cells(image, classes, lambda r, c: to_px(xs[c], ds[r]), (sh * step_x, sv * step_d))
    for d in ds[:: max(1, len(ds) // 8)]:
        _text(image, f"{d / 1000:.2f} m", (4, int(to_px(0, d)[1]) + 4), 0.38)
    y_ticks = top + int(depth * sv) + 16
    for x in xs[:: max(1, len(xs) // 6)]:
        px = int(to_px(x, 0)[0])
        cv2.line(image, (px, y_ticks - 10), (px, y_ticks - 4), (0, 0, 0), 1)
        _text(image, f"{x:+.0f}", (px - 14, y_ticks + 8), 0.35)
    _text(image, "sideways offset from the axis [mm]", (width_px // 2 - 110, y_ticks + 26),
          0.4)
    _text(image, title, (12, 22), 0.55)
    stretch = sh / sv
    note = f"; sideways scale stretched {stretch:.0f}x" if stretch > 1.5 else ""
    _text(image, f"eye height {height:.0f} mm; distance from the front panel to scale{note}",
          (12, 44), 0.42)
    _legend(image, image.shape[0] - 50, "outline: where the effect works (>= 90 % hidden, "
            "background shift <= 2 arcmin)")
    return image


def elevation_image(scene: Scene, rows: list[dict], hs, ds, title: str):
    """Side view on the axis line: eye height (up) against distance from the panel."""
    width_px = 640
    span_d = max(ds) + (ds[1] - ds[0] if len(ds) > 1 else 100)
    scale = (width_px - 110) / span_d
    stretch = 2.0  # heights drawn at twice the scale of distances, for legibility
    h_lo, h_hi = min(hs) - 50, max(hs) + 50
    height_px = int((h_hi - h_lo) * scale * stretch) + 140
    image = np.full((height_px, width_px, 3), 250, np.uint8)
    x_panel = width_px - 60

    def to_px(d, h):
        return x_panel - d * scale, 70 + (h_hi - h) * scale * stretch

    classes = np.array([[r["class"] for r in rows if r["h"] == h] for h in hs])
    cell = (scale * (ds[1] - ds[0] if len(ds) > 1 else 50),
            scale * stretch * (hs[1] - hs[0] if len(hs) > 1 else 50))
    _cells(image, classes, lambda r, c: to_px(ds[c], hs[r]), cell)
    axis_y = int(to_px(0, scene.placement.axis_height_mm)[1])
    cv2.line(image, (0, axis_y), (width_px, axis_y), (60, 60, 200), 1, cv2.LINE_AA)
    _text(image, "axis", (x_panel + 18, axis_y - 4), 0.4, (60, 60, 200))
    cv2.line(image, (x_panel + 8, 60), (x_panel + 8, height_px - 70), (40, 40, 50), 4)
    _text(image, "panel", (x_panel + 14, 64), 0.38)
    for name, h in EYE_HEIGHTS_MM.items():
        if h_lo <= h <= h_hi:
            y = int(to_px(0, h)[1])
            cv2.line(image, (x_panel + 2, y), (x_panel + 14, y), (0, 0, 0), 2)
            _text(image, name, (x_panel + 18, y + 4), 0.35)
    for d in ds[:: max(1, len(ds) // 6)]:
        x, _ = to_px(d, h_lo)
        _text(image, f"{d / 1000:.1f} m", (int(x) - 14, height_px - 56), 0.38)
    for h in hs[:: max(1, len(hs) // 6)]:
        _, y = to_px(0, h)
        _text(image, f"{h:.0f}", (4, int(y) + 4), 0.38)
    _text(image, title, (12, 22), 0.55)
    _text(image, "eye height [mm] against distance from the front panel, on the axis line "
          "(heights stretched 2x)", (12, 44), 0.42)
    _legend(image, height_px - 46, "grey: no view of the background through the lenses")
    return image


def recommendation(floor_rows: dict[str, list[dict]], elevation_rows: list[dict],
                   axis_height: float) -> str:
    """Where to put the floor mark and the eye-port, in words."""
    works = [r for r in elevation_rows if r["class"] == "works"]
    if not works:
        return ("No eye point on the axis line makes the effect work: revisit the lenses, "
                "the object's place or the viewing distance before building.")
    best = max(works, key=lambda r: (r["background_ssim"] or 0.0, -abs(r["h"] - axis_height)))
    at_best = [r for r in works if r["d"] == best["d"]]
    along = [r["d"] for r in works if r["h"] == best["h"]]
    heights = [r["h"] for r in at_best]
    span = (f"only at {best['h']:.0f} mm eye height (no neighbouring height of the sweep "
            "works: the eye must be placed precisely)" if min(heights) == max(heights) else
            f"from {min(heights):.0f} to {max(heights):.0f} mm eye height")
    text = (f"Put the floor mark {best['d'] / 1000:.2f} m in front of the panel and the "
            f"eye-port at {best['h']:.0f} mm: there the effect works "
            f"(background likeness {best['background_ssim']:.2f}). On the axis line it "
            f"works from {min(along) / 1000:.2f} to {max(along) / 1000:.2f} m at that "
            f"height, and {span} at that distance.")
    for name, rows in floor_rows.items():
        count = sum(r["class"] == "works" for r in rows)
        text += f" {name}: works at {count} of {len(rows)} floor points."
    text += (" Visitors whose eyes are outside that range need a step, a lower eye-port or a "
             "second device; check the arrangement against your accessibility code.")
    return text
