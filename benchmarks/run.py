"""cloakview benchmark: tracer throughput and frame times on this machine.

Run: python benchmarks/run.py            (prints a table, then the same as JSON)
     python benchmarks/run.py --json     (only the JSON)
     python benchmarks/run.py --profile  (also where the full-HD cloaked frame's time goes)
Not a test: the numbers depend on the machine. Every speed is measured in this run,
numpy and compiled tracer on the same rays, so the ratio is like for like.
"""

import argparse
import cProfile
import dataclasses
import io
import json
import os
import platform
import pstats
import resource
import subprocess
import sys
import tempfile
import time
from importlib import resources

import numpy as np
from cloakview.optics.cloak import LensChoice, design_cloak
from cloakview.optics.materials import MATERIALS
from cloakview.optics.trace import Rays, available_backends, trace
from cloakview.render.files import write_pngs
from cloakview.render.frame.composite import TexturePyramids
from cloakview.render.frame.mapper import SETUPS
from cloakview.render.frame.views import _trace_view, render_viewer
from cloakview.render.scene.loader import load_scene

FRAMES = [("preview", (640, 360), 1, (587.56,)),
          ("HD", (1280, 720), 2, (486.13, 587.56, 656.27)),
          ("full HD", (1920, 1080), 2, (486.13, 587.56, 656.27))]


def _best(fn, repeat=3):
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def tracer_rates(count=2_000_000):
    design = design_cloak(200, 75, LensChoice(False, MATERIALS["soda-lime"], "biconvex",
                                              50.8, 50.8))
    surfaces = design.system.surfaces
    rng = np.random.default_rng(1)
    targets = np.stack([rng.uniform(-8, 8, count), rng.uniform(-8, 8, count),
                        np.zeros(count)], axis=1)
    eye = np.array([[0.0, 0.0, -500.0]])
    rays = Rays.from_vectors(np.broadcast_to(eye, (count, 3)), targets - eye, 587.56)
    result = trace(rays, surfaces, backend="numpy")
    # Steps: a ray that passed met every surface; a stopped one is counted at half.
    steps = float(np.where(result.passed, len(surfaces), len(surfaces) / 2).sum())
    rates = {}
    for backend in available_backends():
        trace(rays, surfaces, backend=backend)  # warm-up (compilation, caches)
        rates[backend.replace("-", "_")] = steps / _best(
            lambda b=backend: trace(rays, surfaces, backend=b))
    return rates, count, len(surfaces)


def frame_times():
    scene = load_scene(str(resources.files("cloakview.sample_scenes") / "gallery" / "scene.toml"))
    pyramids = TexturePyramids(scene)
    viewer = scene.viewers[0]
    rows = []
    for label, (width, height), ss, wavelengths in FRAMES:
        v = dataclasses.replace(viewer, width_px=width, height_px=height)
        _trace_view(scene, dataclasses.replace(v, width_px=32, height_px=18),
                    SETUPS["cloaked"], wavelengths, pyramids, 1, keep_records=True)
        small = width < 1000  # best of more runs where one run is short and noisy
        frame = _best(lambda v=v, ss=ss, wl=wavelengths: _trace_view(
            scene, v, SETUPS["cloaked"], wl, pyramids, ss, keep_records=True),
            repeat=10 if small else 3)
        timed = dataclasses.replace(scene, settings=dataclasses.replace(
            scene.settings, wavelengths_nm=wavelengths))

        def all_views(v=v, ss=ss, timed=timed):
            with tempfile.TemporaryDirectory() as out:
                result = render_viewer(timed, v, pyramids, supersample=ss)
                write_pngs({os.path.join(out, f"{name}.png"): image
                            for name, image in result.images.items()})

        seconds = _best(all_views, repeat=5 if small else 2)
        rows.append({"frame": label, "size": f"{width}x{height}", "supersample": ss,
                     "wavelengths": len(wavelengths), "cloaked_frame_s": round(frame, 3),
                     "all_views_and_metrics_s": round(seconds, 3)})
    return rows


def frame_profile(lines=25) -> str:
    """cProfile of one full-HD cloaked frame (3 wavelengths, 2x2): the top functions."""
    scene = load_scene(str(resources.files("cloakview.sample_scenes") / "gallery" / "scene.toml"))
    pyramids = TexturePyramids(scene)
    label, (width, height), ss, wavelengths = FRAMES[-1]
    v = dataclasses.replace(scene.viewers[0], width_px=width, height_px=height)
    _trace_view(scene, v, SETUPS["cloaked"], wavelengths, pyramids, ss, keep_records=True)
    profile = cProfile.Profile()
    profile.runcall(_trace_view, scene, v, SETUPS["cloaked"], wavelengths, pyramids, ss,
                    keep_records=True)
    text = io.StringIO()
    pstats.Stats(profile, stream=text).sort_stats("tottime").print_stats(lines)
    return f"profile of the {label} cloaked frame, by own time:\n" + text.getvalue()


def sweep_time():
    """Wall time of the default sight-line sweep of the gallery scene, from a cold start."""
    scene = str(resources.files("cloakview.sample_scenes") / "gallery" / "scene.toml")
    with tempfile.TemporaryDirectory() as out:
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "cloakview.render.cli.main", "sightlines", scene,
                        "--out", out, "--json", "--fresh"], check=True, capture_output=True)
        return time.perf_counter() - start


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--skip-sweep", action="store_true",
                        help="leave out the default sight-line sweep (about 10 s)")
    parser.add_argument("--json", action="store_true", help="print only the JSON")
    parser.add_argument("--profile", action="store_true",
                        help="after the table, profile one full-HD cloaked frame")
    args = parser.parse_args()
    rates, count, surfaces = tracer_rates()
    frames = frame_times()
    sweep = None if args.skip_sweep else sweep_time()
    ratio = rates["compiled"] / rates["numpy"] if "compiled" in rates else None
    packets = rates["compiled"] / rates["per_ray"] if "per_ray" in rates else None
    report = {
        "date": time.strftime("%Y-%m-%d"),
        "machine": f"{platform.machine()}, {os.cpu_count()} cores",
        "tracer": {"rays": count, "surfaces": surfaces,
                   "steps_per_s": {k: round(v) for k, v in rates.items()},
                   "compiled_over_numpy": None if ratio is None else round(ratio, 2),
                   "compiled_over_per_ray": None if packets is None else round(packets, 2)},
        "frames": frames,
        "sightline_sweep_s": None if sweep is None else round(sweep, 1),
        "peak_memory_mb": round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024),
    }
    if args.json:
        print(json.dumps(report, indent=2))
        return
    print(f"{'tracer path':<12}{'ray-surface steps/s':>22}")
    for name, rate in rates.items():
        print(f"{name:<12}{rate:>22,.0f}")
    print(f"compiled (packets) / numpy: {report['tracer']['compiled_over_numpy']}; "
          f"compiled / per-ray kernel: {report['tracer']['compiled_over_per_ray']}")
    print(f"\n{'frame':<9}{'size':>11}{'ss':>4}{'wl':>4}{'cloaked s':>11}{'all + PNGs s':>14}")
    for row in frames:
        print(f"{row['frame']:<9}{row['size']:>11}{row['supersample']:>4}"
              f"{row['wavelengths']:>4}{row['cloaked_frame_s']:>11.3f}"
              f"{row['all_views_and_metrics_s']:>14.3f}")
    if sweep is not None:
        print(f"default sight-line sweep (gallery, from a cold cache): {sweep:.1f} s")
    print(f"peak memory: {report['peak_memory_mb']} MB\n")
    print(json.dumps(report, indent=2))
    if args.profile:
        print("\n" + frame_profile())


if __name__ == "__main__":
    main()
