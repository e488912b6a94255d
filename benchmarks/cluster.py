"""The Dask path's cost: the same sight-line sweeps on the local pool and on a LocalCluster.

Usage: python benchmarks/cluster.py [--finer 10] [--json]

Runs the gallery's default sight-line sweep, and one with a sideways step ``--finer``
times smaller (``--finer`` times the floor points), first on the local process pool (one
worker per core) and then on a 2-worker, 1-thread-per-worker Dask LocalCluster, each
computing every job afresh. Prints wall time, jobs per second, and the Dask path's overhead
per job: (cluster time - pool time) / jobs, which includes starting the cluster.
"""

from __future__ import annotations

import argparse
import json
import os
import tempfile
import time

import cloakview
from cloakview.render.sweeps.sightlines import DISTANCE_RANGE_MM, LATERAL_RANGE_MM


def _sweep(lateral_step: float, scheduler: str | None, out: str) -> tuple[float, int]:
    started = time.perf_counter()
    result = cloakview.sightlines(
        cloakview.sample_scenes.scene_path("gallery"), out=out, fresh=True,
        lateral_range_mm=(LATERAL_RANGE_MM[0], LATERAL_RANGE_MM[1], lateral_step),
        distance_range_mm=DISTANCE_RANGE_MM, scheduler=scheduler, workers=2)
    return time.perf_counter() - started, len(result["points"])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--finer", type=float, default=10.0,
                        help="how many times more floor points the second sweep has")
    parser.add_argument("--json", action="store_true", help="print only JSON")
    args = parser.parse_args()
    rows = []
    with tempfile.TemporaryDirectory() as scratch:
        os.environ["CLOAKVIEW_CACHE"] = os.path.join(scratch, "cache")
        for name, step in (("default", LATERAL_RANGE_MM[2]),
                           (f"{args.finer:g}x finer", LATERAL_RANGE_MM[2] / args.finer)):
            pool_s, jobs = _sweep(step, None, os.path.join(scratch, "pool"))
            dask_s, _ = _sweep(step, "local-cluster", os.path.join(scratch, "dask"))
            rows.append({"sweep": name, "jobs": jobs, "pool_s": round(pool_s, 2),
                         "cluster_s": round(dask_s, 2),
                         "pool_jobs_per_s": round(jobs / pool_s, 1),
                         "cluster_jobs_per_s": round(jobs / dask_s, 1),
                         "overhead_ms_per_job": round(1000 * (dask_s - pool_s) / jobs, 2)})
    if args.json:
        print(json.dumps(rows, indent=2))
        return
    print(f"{'sweep':<14}{'jobs':>7}{'pool s':>9}{'cluster s':>11}{'pool j/s':>10}"
          f"{'cluster j/s':>13}{'overhead ms/job':>17}")
    for r in rows:
        print(f"{r['sweep']:<14}{r['jobs']:>7}{r['pool_s']:>9.1f}{r['cluster_s']:>11.1f}"
              f"{r['pool_jobs_per_s']:>10.1f}{r['cluster_jobs_per_s']:>13.1f}"
              f"{r['overhead_ms_per_job']:>17.2f}")
    print("pool: local process pool, 2 workers; cluster: Dask LocalCluster, 2 workers x 1 "
          "thread, started by the run (its start-up is in the overhead)")


if __name__ == "__main__":
    main()
