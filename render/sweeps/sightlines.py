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
from cloakview.render.frame.views import render_viewer
from cloakview.render.scene.loader import load_scene
from cloakview.render.scene.model import Scene, Viewer

#: Default eye heights [mm] and where they come from (module references).
EYE_HEIGHTS_MM = {
    "seated": 1190.0,  # middle of the ADA seated range 1090-1295 mm [1]
    "child": 1125.0,   # middle of 1000-1250 mm, from memory [3]
    "women": 1525.0,   # US women, 50th percentile [2]
    "men": 1710.0,     # US men, 50th percentile [2]
}
CLASSES = ("works", "partly", "breaks", "no view")

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
