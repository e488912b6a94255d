"""Writing output files safely: a temporary file in the same folder, then a rename.

An interrupted run never leaves a half-written file and never destroys an older good one.
"""

from __future__ import annotations

import csv
import functools
import io
import json
import os
import platform
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from importlib import metadata
from pathlib import Path

import cv2
import numpy as np
from cloakview.optics.errors import InputError

#: Largest text input read [bytes] (scene files, inventories, path files; our own limit).
MAX_TEXT_BYTES = 10_000_000


#: Longest name of one file or folder [bytes] (the usual file-system limit).
NAME_MAX_BYTES = 255


def check_path_text(text: str, key: str, source: str | None = None) -> Path:
    """``text`` as a path, refused in one line when no file system could hold it."""
    if not text or "\0" in text:
        raise InputError(key, text, "must name a file", source)
    if len(os.fsencode(text)) > 4000 or any(len(os.fsencode(part)) > NAME_MAX_BYTES
                                             for part in Path(text).parts):
        raise InputError(key, text, f"path too long (each name at most {NAME_MAX_BYTES} "
                         "bytes)", source)
    return Path(text)


def require_file(path: Path, key: str, what: str, source: str | None = None) -> Path:
    """``path`` if it is a readable file, else a one-line InputError saying why not."""
    path = check_path_text(str(path), key, source)
    try:
        if path.is_file():
            return path
    except OSError as error:
        raise InputError(key, str(path), f"cannot open the {what} ({error.strerror})",
                         source) from None
    raise InputError(key, str(path), f"{what} not found", source)


def read_text(path: Path, key: str, what: str) -> str:
    """A text input file decoded as UTF-8 (a byte-order mark is allowed), or an InputError.

    ``key`` names the option or file key that gave the path; ``what`` says what the file is.
    """
    path = require_file(Path(path), key, what)
    try:
        if path.stat().st_size > MAX_TEXT_BYTES:
            raise InputError(key, str(path), f"{what} is larger than "
                             f"{MAX_TEXT_BYTES / 1e6:g} MB; is it the right file?")
        return path.read_bytes().decode("utf-8-sig")
    except OSError as error:
        raise InputError(key, str(path), f"cannot read the {what} ({error.strerror})") \
            from None
    except UnicodeDecodeError as error:
        raise InputError(key, str(path), f"{what} is not UTF-8 text (byte {error.start}); save "
                         "it as UTF-8") from None


#: Marks the temporary files of :func:`atomic_write` (a killed run's are removed later).
TEMP_MARK = ".cloakview-tmp-"


#: Paths written by :func:`atomic_write` while an output folder records them (see
#: :mod:`cloakview.render.outfolder`); None when nothing records.
WRITTEN: list[Path] | None = None


def atomic_write(path: Path, write) -> None:
    """Call ``write(temp_path)`` then rename the temporary file onto ``path``."""
    path = Path(path)
    if WRITTEN is not None:
        WRITTEN.append(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temp = tempfile.mkstemp(prefix=f".{path.name[:100]}{TEMP_MARK}", suffix=path.suffix,
                                    dir=path.parent)
    os.close(handle)
    try:
        write(temp)
        os.chmod(temp, 0o644)  # mkstemp makes 0600; outputs are for sharing
        os.replace(temp, path)
    except BaseException:
        if os.path.exists(temp):
            os.unlink(temp)
        raise


#: zlib level of the PNGs we write: 1 is fast and lossless like every level (our choice).
PNG_COMPRESSION = 1
#: Every row filtered with the PNG "Up" filter (filter type 2, W3C PNG specification,
#: sec. 9.2): on our renders as small as libpng's per-row choice and 2-3 times faster to
#: encode (measured on the gallery sample at 1920 x 1080; our choice).
PNG_FILTER = cv2.IMWRITE_PNG_FILTER_UP


def png_bytes(image_uint8: np.ndarray) -> bytes:
    """An 8-bit grey, RGB or RGBA image as PNG bytes, encoded by OpenCV at a low zlib level."""
    image = np.ascontiguousarray(image_uint8)
    if image.ndim == 3:  # OpenCV wants BGR or BGRA
        order = [2, 1, 0, 3][:image.shape[2]]
        image = np.ascontiguousarray(image[..., order])
    ok, encoded = cv2.imencode(".png", image, [cv2.IMWRITE_PNG_COMPRESSION, PNG_COMPRESSION,
                                               cv2.IMWRITE_PNG_FILTER, PNG_FILTER])
    if not ok:
        raise ValueError("could not encode the picture as PNG")
    return encoded.tobytes()


def write_pngs(pictures: dict) -> None:
    """Write several 8-bit images (path: image) as PNGs, each via a temporary file.

    The images are encoded on one thread per processor core (OpenCV's encoder releases
    Python's lock while it works), at most one per picture.
    """
    items = list(pictures.items())
    if len(items) > 1:
        with ThreadPoolExecutor(min(len(items), os.cpu_count() or 1)) as pool:
            encoded = list(pool.map(png_bytes, (image for _, image in items)))
    else:
        encoded = [png_bytes(image) for _, image in items]
    for (path, _), data in zip(items, encoded, strict=True):
        atomic_write(Path(path), lambda temp, data=data: Path(temp).write_bytes(data))


def figure_bytes(figure, fmt: str) -> bytes:
    """A matplotlib figure as ``png`` (150 dpi) or ``svg`` bytes; SVG text stays text."""
    import matplotlib  # loaded already: the figure is one of its objects

    buffer = io.BytesIO()
    fast = {"pil_kwargs": {"compress_level": PNG_COMPRESSION}} if fmt == "png" else {}
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        figure.savefig(buffer, format=fmt, dpi=150, **fast)
    return buffer.getvalue()


def write_figure(path_png: Path, figure) -> list[Path]:
    """Write a matplotlib figure as PNG at ``path_png`` and as SVG beside it (vector, for print).

    Returns both paths.
    """
    written = []
    for path in (Path(path_png), Path(path_png).with_suffix(".svg")):
        data = figure_bytes(figure, path.suffix[1:])
        atomic_write(path, lambda temp, data=data: Path(temp).write_bytes(data))
        written.append(path)
    return written


def write_json(path: Path, data) -> None:
    """Write JSON via a temporary file and a rename."""
    def write(temp):
        with open(temp, "w", encoding="utf-8") as handle:
            json.dump(data, handle, indent=2, allow_nan=False)
            handle.write("\n")
    atomic_write(Path(path), write)


def write_text(path: Path, text: str) -> None:
    """Write text via a temporary file and a rename."""
    def write(temp):
        with open(temp, "w", encoding="utf-8") as handle:
            handle.write(text)
    atomic_write(Path(path), write)


def write_csv(path: Path, rows: list[dict], columns=None) -> None:
    """Rows of dicts as CSV (columns: given, else the first row's keys), written safely."""
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=list(columns or rows[0]), lineterminator="\n",
                            extrasaction="ignore")
    writer.writeheader()
    writer.writerows(rows)
    write_text(path, buffer.getvalue())


@functools.lru_cache(maxsize=1)
def program_version() -> str:
    """The installed cloakview version (from the package metadata; read once per process)."""
    return metadata.version("cloakview")


def run_record(out_dir: Path, command: str, options: dict, started: float, **extra) -> None:
    """Write ``run.json``: what produced this folder (command, options, version, timings).

    ``started`` is a :func:`time.perf_counter` reading taken when the work began.
    """
    write_json(Path(out_dir) / "run.json", {
        "program": "cloakview", "version": program_version(), "command": command,
        "options": options, "python": platform.python_version(),
        "machine": platform.machine(),
        "seconds": round(time.perf_counter() - started, 3), **extra})
