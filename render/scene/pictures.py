"""Pictures of a scene's layers: reading a PNG or JPEG as premultiplied linear RGBA.

The header is read first: a picture larger than the pixel budget, or with more than one
frame, is refused before anything is decoded, so a small file that declares a huge image
cannot exhaust memory. Every still-image colour mode is mapped to RGB and alpha: grey,
grey with alpha, palette (with its transparency), 1-bit, 16-bit grey, RGB, RGBA; CMYK and
other colour spaces are converted to RGB without colour management.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render.color import srgb_to_linear
from cloakview.render.files import require_file
from PIL import Image, UnidentifiedImageError

#: Largest texture side [pixels].
MAX_TEXTURE_SIDE = 16384
#: Largest texture [pixels]: 25 million (e.g. 6000 x 4000) keeps one decoded layer, as
#: float32 RGBA with its mip levels, near 530 MB (our own budget).
MAX_TEXTURE_PIXELS = 25_000_000
_CONVERT_TO_RGBA = {"1": "LA", "P": "RGBA", "PA": "RGBA", "CMYK": "RGB", "YCbCr": "RGB",
                    "LAB": "RGB", "HSV": "RGB", "La": "LA", "RGBa": "RGBA", "RGBX": "RGB"}


def _straight_rgba(image: Image.Image) -> np.ndarray:
    """Straight (not premultiplied) sRGB-encoded RGBA in [0, 1], float32, (H, W, 4)."""
    mode = _CONVERT_TO_RGBA.get(image.mode)
    if mode is not None:
        image = image.convert(mode)
    if image.mode.startswith("I"):  # 16-bit grey (I;16, I;16B, ...) or 32-bit holding it
        grey = np.clip(np.asarray(image, dtype=np.float32) / 65535.0, 0.0, 1.0)
        channels = [grey, grey, grey, np.ones_like(grey)]
    elif image.mode in ("L", "LA"):
        values = np.asarray(image, dtype=np.float32) / 255.0
        grey = values if values.ndim == 2 else values[..., 0]
        alpha = np.ones_like(grey) if values.ndim == 2 else values[..., 1]
        channels = [grey, grey, grey, alpha]
    elif image.mode in ("RGB", "RGBA"):
        values = np.asarray(image, dtype=np.float32) / 255.0
        alpha = values[..., 3] if image.mode == "RGBA" else np.ones(values.shape[:2],
                                                                      np.float32)
        channels = [values[..., 0], values[..., 1], values[..., 2], alpha]
    else:
        raise ValueError(image.mode)
    return np.stack(channels, axis=-1)


def read_texture(path: Path, key: str, source: str) -> np.ndarray:
    """Read an image as premultiplied linear RGBA float32, shape (H, W, 4).

    Raises
    ------
    InputError
        If the file is missing, unreadable, animated, or over the pixel budget.
    """
    require_file(path, key, "image file", source)
    budget = (f"each side at most {MAX_TEXTURE_SIDE} pixels and at most "
              f"{MAX_TEXTURE_PIXELS / 1e6:g} million pixels in all; scale the picture down")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", Image.DecompressionBombWarning)
            image = Image.open(path)  # reads the header only
        with image:
            width, height = image.size
            if (max(width, height) > MAX_TEXTURE_SIDE or width * height > MAX_TEXTURE_PIXELS
                    or min(width, height) < 1):
                raise InputError(key, str(path), f"image is {width}x{height} pixels; {budget}",
                                 source)
            if getattr(image, "n_frames", 1) > 1:
                raise InputError(key, str(path), "is an animated image; save the one frame "
                                 "to use as a still PNG", source)
            image.load()
            straight = _straight_rgba(image)
    except Image.DecompressionBombError:
        raise InputError(key, str(path), f"image is far too large; {budget}", source) from None
    except InputError:
        raise
    except ValueError:
        raise InputError(key, str(path), f"unsupported pixel format ({image.mode}); use an "
                         "8- or 16-bit PNG or a JPEG", source) from None
    except (OSError, UnidentifiedImageError, SyntaxError, EOFError):
        raise InputError(key, str(path), "cannot read this image; use a PNG or JPEG file",
                         source) from None
    rgb = srgb_to_linear(straight[..., :3])
    alpha = straight[..., 3:4]
    return np.ascontiguousarray(np.concatenate([rgb * alpha, alpha], axis=-1))
