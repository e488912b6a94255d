"""The output folder: checked before any work, held by one run at a time, never over an input.

A command that writes files calls :func:`output_folder` once its inputs are read and
checked. It refuses, in one line, a folder that cannot be one (empty name, a file, a path
too long, nowhere writable) and a folder that holds any of the run's input files, so no
output can replace an input. While the run writes, a lock file keeps a second run out of
the same folder; temporary files left by a killed run are removed first. If the run ends
in an input error and the folder did not exist before, the folder is removed again, so a
refused run leaves nothing behind.
"""

from __future__ import annotations

import contextlib
import errno
import os
import shutil
from pathlib import Path

from cloakview.optics.errors import InputError
from cloakview.render import files
from cloakview.render.files import TEMP_MARK

LOCK_NAME = ".cloakview-lock"
#: Lists what the last run wrote at the top of the folder, so the next run into the same
#: folder removes it first and the folder never mixes two runs' outputs.
MANIFEST_NAME = ".cloakview-outputs"


def check(out, inputs=()) -> Path:
    """The output folder as an absolute path, or a one-line :class:`InputError`.

    Parameters
    ----------
    out : str or Path
        The folder (created if missing).
    inputs : iterable of Path
        Every file the run reads; none may lie inside ``out``.
    """
    text = str(out)
    if not text.strip() or "\0" in text:
        raise InputError("out", text, "must name a folder")
    folder = files.check_path_text(str(Path(text).expanduser().absolute()), "out")
    if folder.exists() and not folder.is_dir():
        raise InputError("out", text, "is a file, not a folder; give a folder")
    existing = next(p for p in (folder, *folder.parents) if p.exists())
    if not existing.is_dir() or not os.access(existing, os.W_OK | os.X_OK):
        raise InputError("out", text, f"cannot write in {existing}; choose a writable folder")
    resolved = folder.resolve()
    for path in inputs:
        source = Path(path).resolve()
        if source.is_relative_to(resolved):
            raise InputError("out", text, f"holds the input file {source.name}; write the "
                             "outputs to a folder that holds none of the inputs")
    return folder


def _running(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _lock(folder: Path) -> Path:
    lock = folder / LOCK_NAME
    for _ in range(2):
        try:
            handle = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            try:
                pid = int(lock.read_text().strip() or 0)
            except (OSError, ValueError):
                pid = 0
            if pid and pid != os.getpid() and _running(pid):
                raise InputError("out", str(folder), f"another cloakview run (process {pid}) "
                                 "is writing into this folder; wait for it to finish or "
                                 "choose another folder") from None
            lock.unlink(missing_ok=True)  # left by a run that was killed
            continue
        with os.fdopen(handle, "w") as stream:
            stream.write(str(os.getpid()))
        return lock
    raise InputError("out", str(folder), "could not take the folder's lock file")


def _remove_stale_temporaries(folder: Path) -> None:
    for path in folder.rglob(f".*{TEMP_MARK}*"):
        with contextlib.suppress(OSError):
            path.unlink()


def _remove_previous_outputs(folder: Path) -> None:
    """Remove what the folder's last run wrote (its manifest's names), nothing else."""
    for name in _manifest_names(folder):
        path = folder / name
        if not name or "/" in name or name in (".", "..", LOCK_NAME, MANIFEST_NAME):
            continue
        if path.is_dir() and not path.is_symlink():
            shutil.rmtree(path, ignore_errors=True)
        else:
            with contextlib.suppress(OSError):
                path.unlink()
    (folder / MANIFEST_NAME).unlink(missing_ok=True)


def _manifest_names(folder: Path) -> list[str]:
    manifest = folder / MANIFEST_NAME
    if not manifest.is_file():
        return []
    return manifest.read_text(encoding="utf-8", errors="replace").splitlines()


def _write_manifest(folder: Path, written: list[Path], earlier=()) -> None:
    names = sorted({p.resolve().relative_to(folder.resolve()).parts[0] for p in written
                    if p.resolve().is_relative_to(folder.resolve())}.union(earlier)
                   - {MANIFEST_NAME, ""})
    files.atomic_write(folder / MANIFEST_NAME, lambda temp: Path(temp).write_text(
        "".join(f"{name}\n" for name in names), encoding="utf-8"))


@contextlib.contextmanager
def output_folder(out, inputs=(), keep_previous: bool = False):
    """Check ``out`` (see :func:`check`), create it, hold its lock while the run writes.

    With ``keep_previous``, what the folder's earlier runs wrote stays and the manifest
    lists it with this run's files (views saved one by one add up in one folder).
    Yields the folder as a :class:`Path`.
    """
    folder = check(out, inputs)
    missing = [p for p in (folder, *folder.parents) if not p.exists()]
    created = missing[-1] if missing else None
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        reason = "path too long" if error.errno == errno.ENAMETOOLONG else error.strerror
        raise InputError("out", str(out), f"cannot create the folder ({reason})") from None
    lock = _lock(folder)
    written: list[Path] = []
    try:
        _remove_stale_temporaries(folder)
        earlier = _manifest_names(folder) if keep_previous else []
        if not keep_previous:
            _remove_previous_outputs(folder)
        files.WRITTEN = written
        yield folder
        files.WRITTEN = None
        _write_manifest(folder, written, earlier)
    except InputError:
        if created is not None:
            lock.unlink(missing_ok=True)
            shutil.rmtree(created, ignore_errors=True)
        raise
    finally:
        files.WRITTEN = None
        lock.unlink(missing_ok=True)
