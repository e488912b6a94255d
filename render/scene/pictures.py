"""Pictures of a scene's layers: reading a PNG or JPEG as premultiplied linear RGBA."""

from __future__ import annotations

from pathlib import Path

import imageio.v3 as iio
import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render.color import srgb_to_linear

#: Largest texture side we accept [pixels]; larger files are refused as absurd.
MAX_TEXTURE_SIDE = 16384


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
