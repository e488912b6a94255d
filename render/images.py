"""Image files and colour: sRGB transfer functions, reading textures, writing files safely.

References
----------
.. [1] IEC 61966-2-1:1999, Multimedia systems and equipment - Colour measurement
   and management - Part 2-1: Default RGB colour space - sRGB (transfer
   function: linear below 0.04045 / 0.0031308, power 2.4 with offset 0.055 above).
"""

from __future__ import annotations

import csv
import io
import json
import os
import tempfile
from pathlib import Path

import imageio.v3 as iio
import numpy as np

from optics.errors import InputError

#: Largest texture side we accept [pixels]; larger files are refused as absurd.
MAX_TEXTURE_SIDE = 16384


def srgb_to_linear(values):
    """Decode sRGB-encoded values in [0, 1] to linear light (IEC 61966-2-1 [1])."""
    v = np.asarray(values, dtype=np.float32)
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4).astype(np.float32)


def linear_to_srgb(values):
    """Encode linear light in [0, 1] to sRGB values (IEC 61966-2-1 [1])."""
    v = np.clip(np.asarray(values, dtype=np.float32), 0.0, 1.0)
    return np.where(v <= 0.0031308, v * 12.92,
                    1.055 * np.power(v, 1.0 / 2.4) - 0.055).astype(np.float32)


def to_uint8(linear_rgb) -> np.ndarray:
    """Linear RGB floats to an 8-bit sRGB image."""
    return np.round(linear_to_srgb(linear_rgb) * 255.0).astype(np.uint8)


def hex_colour_linear(text: str, key: str, source: str) -> np.ndarray:
    """Parse ``#rrggbb`` into linear RGB floats."""
    value = str(text).strip()
    if len(value) != 7 or value[0] != "#":
        raise InputError(key, text, "colour must be written #rrggbb", source)
    try:
        rgb = [int(value[i:i + 2], 16) / 255.0 for i in (1, 3, 5)]
    except ValueError:
        raise InputError(key, text, "colour must be written #rrggbb", source) from None
    return srgb_to_linear(np.array(rgb, np.float32))


def read_texture(path: Path, key: str, source: str) -> np.ndarray:
    """Read an image as premultiplied linear RGBA float32, shape (H, W, 4).

    Raises
    ------
    InputError
        If the file is missing, unreadable, or absurdly large.
    """
    if not path.is_file():
        raise InputError(key, str(path), "image file not found", source)
    encoded = path.read_bytes()
    unreadable = InputError(key, str(path), "cannot read this image; use a PNG or JPEG file",
                            source)
    try:
        shape = iio.improps(encoded).shape
    except Exception:  # noqa: BLE001 - any decoder failure is the user's file
        raise unreadable from None
    if len(shape) < 2 or max(shape[:2]) > MAX_TEXTURE_SIDE or min(shape[:2]) < 1:
        raise InputError(key, str(path), f"image is {shape[:2]} pixels; each side must be "
                         f"between 1 and {MAX_TEXTURE_SIDE}", source)
    try:
        data = iio.imread(encoded)
    except Exception:  # noqa: BLE001
        raise unreadable from None
    if data.ndim == 2:
        data = np.stack([data] * 3, axis=-1)
    if data.dtype == np.uint16:
        scale = 65535.0
    elif data.dtype == np.uint8:
        scale = 255.0
    else:
        raise InputError(key, str(path), f"unsupported pixel type {data.dtype}; use 8- or "
                         "16-bit PNG or JPEG", source)
    data = data.astype(np.float32) / scale
    rgb = srgb_to_linear(data[..., :3])
    alpha = data[..., 3:4] if data.shape[-1] == 4 else np.ones_like(rgb[..., :1])
    return np.ascontiguousarray(np.concatenate([rgb * alpha, alpha], axis=-1))


def atomic_write(path: Path, write) -> None:
    """Call ``write(temp_path)`` then rename the temporary file onto ``path``."""
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix,
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


def write_png(path: Path, image_uint8: np.ndarray) -> None:
    """Write an 8-bit image as PNG via a temporary file and a rename."""
    atomic_write(Path(path), lambda temp: iio.imwrite(temp, image_uint8, extension=".png"))


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
