"""Sweeps: many independent renders as a map over a list of jobs, with a cache that cannot lie.

A job is a small JSON-able dict; its result is a JSON-able dict (and possibly files it
wrote). Each result is stored, as soon as its job finishes, in a cache folder under a key
built from everything that can change it: the job, the function that runs it, a
*context* fingerprint (the bytes of every input file and every option the caller passes)
and the program version. A sweep run again skips what is done; after an edit to the scene,
a picture, an inventory or an option the keys differ and the work is done afresh. A job
that fails is reported with its inputs; the others' results are kept.

The key also covers a digest of the program's own code, so a changed program never
reuses an old result. The cache lives outside the deliverable folders: ``$CLOAKVIEW_CACHE``, else
``$XDG_CACHE_HOME/cloakview``, else ``~/.cache/cloakview``.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import json
import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path

from cloakview.optics.errors import InputError
from cloakview.render.files import program_version, write_json

_WORKER = {}


class JobsFailed(RuntimeError):
    """Some jobs of a sweep raised; the others' results are stored and kept.

    Attributes
    ----------
    failures : list of (dict, str)
        Each failed job and what it raised.
    finished : int
        How many jobs of the sweep have a stored result.
    """

    def __init__(self, failures: list[tuple[dict, str]], total: int):
        self.failures, self.finished = failures, total - len(failures)
        job, message = failures[0]
        text = json.dumps(job, sort_keys=True)
        super().__init__(f"{len(failures)} of {total} jobs failed, the first with "
                         f"{text[:200]}: {message[:300]}; the {self.finished} finished results "
                         "are kept, so running the command again retries only the failed ones")


def cache_root() -> Path:
    """The folder that holds every sweep's cached results."""
    if os.environ.get("CLOAKVIEW_CACHE"):
        return Path(os.environ["CLOAKVIEW_CACHE"])
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base) / "cloakview"


def fingerprint(files=(), **options) -> str:
    """A digest of the bytes of ``files`` and the JSON of ``options`` (order-free)."""
    digest = hashlib.sha256()
    for path in sorted(str(p) for p in files):
        digest.update(path.encode() + b"\0" + Path(path).read_bytes() + b"\0")
    digest.update(json.dumps(options, sort_keys=True, default=str).encode())
    return digest.hexdigest()


@functools.lru_cache(maxsize=1)
def code_digest() -> str:
    """A digest of cloakview's own optics and render code.

    A changed program, even one that keeps its version number (as between two commits),
    never reuses an old result.
    """
    root = Path(__file__).resolve().parents[2]
    digest = hashlib.sha256()
    for path in sorted([*root.joinpath("optics").rglob("*.py"),
                        *root.joinpath("render").rglob("*.py")]):
        digest.update(path.relative_to(root).as_posix().encode() + path.read_bytes())
    return digest.hexdigest()


def job_key(fn, job: dict, context: str) -> str:
    """A stable name for one job's result: job, function, context and program (version, code)."""
    text = json.dumps({"job": job, "fn": f"{fn.__module__}.{fn.__qualname__}",
                       "context": context, "version": program_version(),
                       "code": code_digest()}, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def _init(setup, setup_args, threads):
    limit_threads(threads)
    _WORKER["state"] = setup(*setup_args)


def limit_threads(threads: int) -> None:
    """Keep a worker process to ``threads`` threads (numba's and OpenCV's thread pools)."""
    import cv2
    import numba

    cv2.setNumThreads(threads)
    numba.set_num_threads(min(threads, numba.config.NUMBA_NUM_THREADS))


def _run_batch(fn, jobs):
    """Run a batch of jobs in a worker: (result, None) or (None, error text) for each."""
    done = []
    for job in jobs:
        try:
            done.append((fn(_WORKER["state"], job), None))
        except Exception as error:  # noqa: BLE001 - reported with the job's inputs
            done.append((None, describe(error)))
    return done


#: Most jobs sent to a pool worker at a time: few enough that the progress bar moves and
#: the workers finish together, enough that a short job's round trip does not dominate
#: (our choice; a sight-line point takes about 2 ms).
BATCH_JOBS = 16


def run_jobs(fn, jobs: list[dict], kind: str, setup, setup_args=(), *, context: str = "",
             workers=None, progress=None, fresh: bool = False,
             cache: Path | None = None, consume=None, scheduler: str | None = None,
             files=(), pool: ProcessPoolExecutor | None = None) -> tuple[list[dict], int]:
    """Run ``fn(state, job)`` for every job; return (results in job order, how many reused).

    Parameters
    ----------
    fn : callable
        Module-level function (picklable) taking the worker state and one job.
    jobs : list of dict
        Independent jobs; equal jobs give equal results (seeds live in the job).
    kind : str
        The sweep's name, a sub-folder of the cache (e.g. ``"sightlines"``).
    setup : callable
        Module-level function building the per-worker state (e.g. loading the scene).
    context : str
        Fingerprint of everything outside the jobs that can change a result (see
        :func:`fingerprint`).
    workers : int, optional
        Processes to use; default the machine's cores (at most that many); 1 runs in this
        process. With ``scheduler="local-cluster"``, the cluster's workers.
    progress : callable, optional
        Called once per finished or reused job.
    fresh : bool
        Run every job again instead of reusing cached results.
    cache : Path, optional
        Cache folder (default :func:`cache_root`).
    consume : callable, optional
        ``consume(job, result)`` is called with each result as soon as it is there (run
        or read from the cache), in this process; what it returns is kept instead (e.g. a
        frame written to its file and dropped from memory).
    scheduler : str, optional
        Run on Dask distributed instead of the local pool: a scheduler's address, or
        ``"local-cluster"`` for a cluster on this machine (see
        :mod:`cloakview.render.sweeps.cluster`).
    files : sequence of Path
        The input files ``setup`` reads; on a cluster they travel to the workers, so the
        workers need no shared disk.
    pool : ProcessPoolExecutor, optional
        A pool from :func:`local_pool` with the same ``setup`` and ``setup_args``, kept
        for several calls so its workers start (imports, scene, pictures) only once.

    Raises
    ------
    JobsFailed
        When any job raised; every other result is stored before.
    InputError
        For a bad ``workers`` value, or a scheduler that cannot be used.
    """
    folder = (cache or cache_root()) / "jobs" / kind
    folder.mkdir(parents=True, exist_ok=True)
    keys = [job_key(fn, job, context) for job in jobs]
    results: dict[str, dict] = {}

    def keep(job, result):
        return consume(job, result) if consume else result

    todo, queued = [], set()
    for key, job in zip(keys, jobs, strict=True):
        path = folder / f"{key}.json"
        if not fresh and path.is_file():
            try:
                results[key] = keep(job, json.loads(path.read_text()))
            except (OSError, json.JSONDecodeError, ValueError, KeyError):
                todo.append((key, job))  # a damaged file is simply done again
                continue
            if progress:
                progress("cached")
        elif key not in queued:
            queued.add(key)
            todo.append((key, job))
    reused = len(results)
    size = pool_size(workers)
    with contextlib.ExitStack() as stack:
        if scheduler:
            from cloakview.render.sweeps.cluster import run_on_cluster

            finished = run_on_cluster(fn, todo, setup, setup_args, files, scheduler, workers)
        elif size == 1 or len(todo) <= 1:
            finished = _run_here(fn, todo, setup, setup_args)
        else:
            if pool is None:
                pool = stack.enter_context(local_pool(setup, setup_args,
                                                      min(size, len(todo))))
            finished = _run_on_pool(fn, todo, pool, size)
        failures = []
        for key, job, result, error in finished:
            if error is not None:
                failures.append((job, error))
            else:
                results[key] = keep(job, _store(folder, key, result, progress))
    if failures:
        raise JobsFailed(failures, len(jobs))
    return [results[key] for key in keys], reused


def describe(error: BaseException) -> str:
    """How a failed job is reported: the exception's type and message."""
    return f"{type(error).__name__}: {error}"


def _run_here(fn, todo, setup, setup_args):
    """Run the jobs one after another in this process; yield (key, job, result, error)."""
    if not todo:
        return
    state = setup(*setup_args)
    for key, job in todo:
        try:
            yield key, job, fn(state, job), None
        except Exception as error:  # noqa: BLE001 - reported with the job's inputs
            yield key, job, None, describe(error)


def pool_size(workers: int | None) -> int:
    """How many local processes a sweep uses: ``workers``, default and at most the cores.

    Raises
    ------
    InputError
        For a ``workers`` value that is not a whole number of at least 1.
    """
    if workers is not None and not (isinstance(workers, int) and workers >= 1):
        raise InputError("workers", workers, "must be a whole number, 1 or more")
    cores = os.cpu_count() or 1
    return min(workers or cores, cores)


@contextlib.contextmanager
def local_pool(setup, setup_args=(), workers: int | None = None):
    """A local process pool whose workers each build ``setup(*setup_args)`` once.

    Give it to several :func:`run_jobs` calls of one analysis (a sweep and its follow-up)
    and the workers start once. Processes start with the first job sent, so a sweep
    answered from the cache starts none.
    """
    workers = pool_size(workers)
    threads = max(1, (os.cpu_count() or 1) // workers)
    # "spawn": a forked child of a process whose compiled kernels already ran threads is
    # not safe; fresh interpreters are.
    with ProcessPoolExecutor(max_workers=workers, initializer=_init,
                             initargs=(setup, setup_args, threads),
                             mp_context=multiprocessing.get_context("spawn")) as pool:
        yield pool


def _run_on_pool(fn, todo, pool, workers):
    """Run the jobs on a process pool; yield (key, job, result, error) as they finish."""
    size = max(1, min(BATCH_JOBS, len(todo) // (8 * workers)))
    batches = [todo[i:i + size] for i in range(0, len(todo), size)]
    futures = {pool.submit(_run_batch, fn, [job for _, job in batch]): batch
               for batch in batches}
    for future in as_completed(futures):
        batch = futures[future]
        try:
            done = future.result()
        except Exception as error:  # noqa: BLE001 - a worker died: the batch failed
            done = [(None, describe(error))] * len(batch)
        for (key, job), (result, error) in zip(batch, done, strict=True):
            yield key, job, result, error


def _store(folder: Path, key: str, result: dict, progress) -> dict:
    write_json(folder / f"{key}.json", result)
    if progress:
        progress()
    return result
