"""Sweeps: many independent renders as a map over a list of jobs.

A job is a small JSON-able dict; its result is a JSON-able dict (and possibly files it
wrote). Results are stored one file per job in the sweep's folder as they finish, so an
interrupted sweep restarted with the same arguments skips what is done. Jobs run on a
local process pool (one worker per core by default); the same ``run_jobs`` call could
hand the list to a distributed engine instead.
"""

from __future__ import annotations

import hashlib
import json
import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

from cloakview.render.files import write_json

_WORKER = {}


def job_key(job: dict) -> str:
    """A stable name for a job, from its content."""
    text = json.dumps(job, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()[:20]


def _init(setup, setup_args):
    _WORKER["state"] = setup(*setup_args)


def _run_one(args):
    fn, job = args
    return fn(_WORKER["state"], job)


def run_jobs(fn, jobs: list[dict], folder: Path, setup, setup_args=(), workers=None,
             progress=None) -> list[dict]:
    """Run ``fn(state, job)`` for every job; return results in job order.

    Parameters
    ----------
    fn : callable
        Module-level function (picklable) taking the worker state and one job.
    jobs : list of dict
        Independent jobs; equal jobs give equal results (seeds live in the job).
    folder : Path
        Where each job's result is kept as ``<key>.json``; results already there are
        reused, which makes an interrupted sweep resumable.
    setup : callable
        Module-level function building the per-worker state (e.g. loading the scene).
    workers : int, optional
        Processes to use; default the machine's cores; 1 runs in this process.
    progress : callable, optional
        Called once per finished job.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    keys = [job_key(job) for job in jobs]
    results: dict[str, dict] = {}
    todo = []
    for key, job in zip(keys, jobs, strict=True):
        path = folder / f"{key}.json"
        if path.is_file():
            try:
                results[key] = json.loads(path.read_text())
            except json.JSONDecodeError:
                todo.append((key, job))  # a damaged file is simply done again
                continue
            if progress:
                progress("cached")
        else:
            todo.append((key, job))
    workers = workers or os.cpu_count() or 1
    if todo and (workers == 1 or len(todo) == 1):
        state = setup(*setup_args)
        for key, job in todo:
            results[key] = _store(folder, key, fn(state, job), progress)
    elif todo:
        # "spawn": a forked child of a process whose compiled kernels already ran
        # threads is not safe; fresh interpreters are.
        with ProcessPoolExecutor(max_workers=min(workers, len(todo)), initializer=_init,
                                 initargs=(setup, setup_args),
                                 mp_context=multiprocessing.get_context("spawn")) as pool:
            futures = pool.map(_run_one, [(fn, job) for _, job in todo],
                               chunksize=max(1, min(4, len(todo) // (8 * workers))))
            for (key, _), result in zip(todo, futures, strict=True):
                results[key] = _store(folder, key, result, progress)
    return [results[key] for key in keys]


def _store(folder: Path, key: str, result: dict, progress) -> dict:
    write_json(folder / f"{key}.json", result)
    if progress:
        progress()
    return result
