"""Colour arithmetic: sRGB transfer functions and colours written as ``#rrggbb``.

References
----------
.. [1] IEC 61966-2-1:1999, Multimedia systems and equipment - Colour measurement
   and management - Part 2-1: Default RGB colour space - sRGB (transfer
   function: linear below 0.04045 / 0.0031308, power 2.4 with offset 0.055 above).
"""

from __future__ import annotations

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.optics.trace import chosen_backend


def srgb_to_linear(values):
    """Decode sRGB-encoded values in [0, 1] to linear light (IEC 61966-2-1 [1])."""
    v = np.asarray(values, dtype=np.float32)
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4).astype(np.float32)


#: Arrays of at least this many values are encoded by the compiled pass (our own choice:
#: below it, numpy is as fast).
COMPILED_ENCODE_VALUES = 65_536


def linear_to_srgb(values):
    """Encode linear light in [0, 1] to sRGB values (IEC 61966-2-1 [1]).

    Large arrays go to :func:`cloakview.render.color_kernel.encode_srgb` unless the
    reference path runs (``CLOAKVIEW_TRACER=numpy``); the numpy below is the reference.
    """
    v = np.asarray(values, dtype=np.float32)
    if v.size >= COMPILED_ENCODE_VALUES and chosen_backend() != "numpy":
        from cloakview.render.color_kernel import encode_srgb

        flat = np.ascontiguousarray(v).reshape(-1)
        out = np.empty_like(flat)
        encode_srgb(flat, out)
        return out.reshape(v.shape)
    v = np.clip(v, 0.0, 1.0)
    return np.where(v <= 0.0031308, v * 12.92,
                    1.055 * np.power(v, 1.0 / 2.4) - 0.055).astype(np.float32)


def srgb_to_uint8(srgb) -> np.ndarray:
    """sRGB-encoded floats in [0, 1] (:func:`linear_to_srgb`) to an 8-bit image."""
    return np.round(np.asarray(srgb) * 255.0).astype(np.uint8)


def hex_color_linear(text: str, key: str, source: str) -> np.ndarray:
    """Parse ``#rrggbb`` into linear RGB floats."""
    value = str(text).strip()
    if len(value) != 7 or value[0] != "#":
        raise InputError(key, text, "colour must be written #rrggbb", source)
    try:
        rgb = [int(value[i:i + 2], 16) / 255.0 for i in (1, 3, 5)]
    except ValueError:
        raise InputError(key, text, "colour must be written #rrggbb", source) from None
    return srgb_to_linear(np.array(rgb, np.float32))
