"""Tracer throughput: ray-surface steps per second through the thick-lens cloak.

Run: python benchmarks/trace_throughput.py [--rays N] [--repeat K]
Prints one JSON object. Not a test: numbers depend on the machine.
"""

import argparse
import json
import os
import platform
import time

import numpy as np

from optics.cloak import LensChoice, design_cloak
from optics.materials import MATERIALS
from optics.trace import Rays, trace


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rays", type=int, default=1_000_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    design = design_cloak(200, 75, LensChoice(False, MATERIALS["soda-lime"], "biconvex",
                                              50.8, 50.8))
    surfaces = design.system.surfaces
    rng = np.random.default_rng(1)
    # An on-axis eye 500 mm in front, rays filling the near lens (most pass all surfaces).
    n = args.rays
    targets = np.stack([rng.uniform(-8, 8, n), rng.uniform(-8, 8, n), np.zeros(n)], axis=1)
    origins = np.array([[0.0, 0.0, -500.0]])
    rays = Rays.from_vectors(np.broadcast_to(origins, (n, 3)), targets - origins, 587.56)
    times = []
    for _ in range(args.repeat):
        start = time.perf_counter()
        result = trace(rays, surfaces)
        times.append(time.perf_counter() - start)
    best = min(times)
    passed = int(result.passed.sum())
    # Steps: every surface a ray reached (a stopped ray counts up to where it stopped).
    steps = passed * len(surfaces) + (n - passed) * len(surfaces) / 2
    print(json.dumps({
        "machine": f"{platform.processor() or platform.machine()}, {os.cpu_count()} cores",
        "rays": n, "surfaces": len(surfaces), "passed": passed,
        "best_seconds": round(best, 4),
        "ray_surface_steps_per_second": round(steps / best),
        "rays_per_second": round(n / best),
    }, indent=2))


if __name__ == "__main__":
    main()
