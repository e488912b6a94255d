"""The job map on Dask distributed: the same jobs, the same results, more machines.

:func:`run_on_cluster` is the Dask engine behind
:func:`cloakview.render.sweeps.jobs.run_jobs` (which keeps the cache, the progress and
the failure report, exactly as on the local pool). The input files the workers' state is
built from (the scene file and its pictures, or the inventory) are sent to the workers as
bytes, once per worker, and written to a private folder there with their relative layout,
so the workers need no shared disk; each worker builds its state (scene, texture
pyramids, warmed compiled kernel) once per sweep and keeps to the threads Dask gave it.
Results come back as data; the process that runs the command writes every file.

Dask distributed is an optional dependency: ``pip install 'cloakview[cluster]'``.

References
----------
.. [1] M. Rocklin, "Dask: parallel computation with blocked algorithms and task
   scheduling", Proc. 14th Python in Science Conference, 130-136 (2015).
"""

from __future__ import annotations

import hashlib
import logging
import os
import tempfile
from pathlib import Path

from cloakview.optics.errors import InputError
from cloakview.render.sweeps.jobs import describe, limit_threads

#: Seconds to wait for a scheduler before giving up.
CONNECT_TIMEOUT_S = 5
LOCAL_CLUSTER = "local-cluster"
#: Most jobs sent to a worker in one Dask task (our own choice, from benchmarks/cluster.py).
CHUNK_JOBS = 32
_STATES: dict[str, object] = {}


def _distributed():
    try:
        import distributed
    except ImportError:
        raise InputError("scheduler", LOCAL_CLUSTER, "running on Dask needs the cluster "
                         "extra: pip install 'cloakview[cluster]'") from None
    return distributed


def bundle(files, setup_args) -> tuple[dict[str, bytes], tuple]:
    """The files as {relative path: bytes} and ``setup_args`` with their paths made relative.

    Paths keep their layout below the files' common folder, so a scene's relative picture
    paths still hold where the files are written out again.
    """
    resolved = sorted({str(Path(f).resolve()) for f in files})
    if not resolved:
        return {}, tuple(setup_args)
    root = Path(os.path.commonpath([str(Path(f).parent) for f in resolved]))
    data = {str(Path(f).relative_to(root)): Path(f).read_bytes() for f in resolved}
    args = []
    for arg in setup_args:
        path = str(Path(arg).resolve()) if isinstance(arg, str) and arg else None
        args.append(("file", str(Path(path).relative_to(root))) if path in resolved else arg)
    return data, tuple(args)


def _worker_state(setup, setup_args, files: dict[str, bytes], digest: str):
    """Build the worker state once per worker and sweep, from the files sent with it."""
    if digest not in _STATES:
        from distributed import get_worker

        limit_threads(max(1, get_worker().state.nthreads))
        root = Path(tempfile.mkdtemp(prefix="cloakview-worker-"))
        for name, data in files.items():
            (root / name).parent.mkdir(parents=True, exist_ok=True)
            (root / name).write_bytes(data)
        args = [str(root / arg[1]) if isinstance(arg, tuple) and arg[:1] == ("file",) else arg
                for arg in setup_args]
        _STATES.clear()  # one sweep's state at a time per worker
        _STATES[digest] = setup(*args)
    return _STATES[digest]


def _task(fn, jobs, setup, setup_args, files, digest):
    """Run a chunk of jobs on one worker; a failing job does not stop the others."""
    state = _worker_state(setup, setup_args, files, digest)
    done = []
    for job in jobs:
        try:
            done.append((fn(state, job), None))
        except Exception as error:  # noqa: BLE001 - reported with the job's inputs
            done.append((None, describe(error)))
    return done


def _client(distributed, scheduler: str, workers: int | None):
    """A client of the scheduler at ``scheduler``, or of a new cluster on this machine."""
    if scheduler == LOCAL_CLUSTER:
        cluster = distributed.LocalCluster(
            n_workers=min(workers or os.cpu_count() or 1, os.cpu_count() or 1),
            threads_per_worker=1, processes=True, dashboard_address=":0",
            silence_logs=logging.CRITICAL)
        return distributed.Client(cluster), cluster
    try:
        return distributed.Client(scheduler, timeout=CONNECT_TIMEOUT_S), None
    except (OSError, TimeoutError, ValueError) as error:
        reason = " ".join(str(error).split())[:120]
        raise InputError("scheduler", scheduler, f"cannot reach a Dask scheduler there within "
                         f"{CONNECT_TIMEOUT_S} s ({reason}); start one with 'dask scheduler' "
                         "or give its address as tcp://HOST:PORT") from None


def run_on_cluster(fn, todo, setup, setup_args, files, scheduler: str, workers=None):
    """Run the jobs on Dask; yield (key, job, result, error) as each finishes.

    Parameters
    ----------
    fn, setup : callable
        Module-level functions, as for the local pool (the workers import cloakview).
    todo : list of (str, dict)
        Cache keys and jobs still to run.
    files : sequence of Path
        The input files ``setup`` reads (sent to every worker).
    scheduler : str
        A scheduler address (``tcp://host:port``) or ``"local-cluster"``.
    workers : int, optional
        Workers of a local cluster (default one per core).
    """
    distributed = _distributed()
    if not todo:
        return
    data, args = bundle(files, setup_args)
    # The state's identity: the files, the arguments and which setup builds it (two
    # sweeps' setups may share a name and arguments but build different states).
    digest = hashlib.sha256(repr((sorted(data.items()), args, setup.__module__,
                                  setup.__qualname__)).encode()).hexdigest()
    client, cluster = _client(distributed, scheduler, workers)
    try:
        shipped = client.scatter(data, broadcast=True, hash=False) if data else {}
        # Jobs go in chunks, so Dask's few milliseconds per task are shared by several jobs,
        # with chunks enough for every worker and a fine-grained progress bar.
        count = max(1, len(client.scheduler_info()["workers"]))
        size = max(1, min(CHUNK_JOBS, len(todo) // (8 * count)))
        chunks = [todo[i:i + size] for i in range(0, len(todo), size)]
        futures = {client.submit(_task, fn, [job for _, job in chunk], setup, args, shipped,
                                 digest, pure=False, retries=1): chunk for chunk in chunks}
        for future in distributed.as_completed(futures):
            chunk = futures[future]
            try:
                done = future.result()
            except Exception as error:  # noqa: BLE001 - e.g. a worker lost too often
                done = [(None, describe(error))] * len(chunk)
            for (key, job), (result, error) in zip(chunk, done, strict=True):
                yield key, job, result, error
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
