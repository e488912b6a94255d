"""Frame time of the bundled gallery scene's eye-port view at several sizes.

Run: python benchmarks/frame_time.py
Prints JSON: seconds per frame for the cloaked view alone and for the full viewer
(cloaked, naked and reference traces, metrics and all images).
"""

import dataclasses
import json
import time
from importlib import resources

from render.composite import TexturePyramids
from render.mapper import SETUPS
from render.scene import load_scene
from render.views import _trace_view, render_viewer

CASES = [((640, 360), 1, (587.56,)), ((1280, 720), 2, (486.13, 587.56, 656.27)),
         ((1920, 1080), 2, (486.13, 587.56, 656.27))]


def main():
    scene = load_scene(str(resources.files("sample_scenes") / "gallery" / "scene.toml"))
    pyramids = TexturePyramids(scene)
    rows = []
    for (width, height), ss, wavelengths in CASES:
        viewer = dataclasses.replace(scene.viewers[0], width_px=width, height_px=height)
        start = time.perf_counter()
        _trace_view(scene, viewer, SETUPS["cloaked"], wavelengths, pyramids, ss)
        cloaked = time.perf_counter() - start
        timed = dataclasses.replace(scene, settings=dataclasses.replace(
            scene.settings, wavelengths_nm=wavelengths))
        start = time.perf_counter()
        render_viewer(timed, viewer, pyramids, supersample=ss)
        full = time.perf_counter() - start
        rows.append({"size": f"{width}x{height}", "supersample": ss,
                     "wavelengths": len(wavelengths), "cloaked_view_s": round(cloaked, 3),
                     "all_views_and_metrics_s": round(full, 3)})
    print(json.dumps(rows, indent=2))


if __name__ == "__main__":
    main()
