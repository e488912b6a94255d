"""Compiled sRGB encoding: :func:`cloakview.render.color.linear_to_srgb` in one parallel pass.

The numpy code in :mod:`cloakview.render.color` stays the reference; the steps and their
float32 rounding are the same (clip to [0, 1], linear segment at or below 0.0031308, else
1.055 v^(1/2.4) - 0.055, IEC 61966-2-1 [1]). The power comes from the C library's
``powf`` here and from numpy's own routine there, so the two may differ in the last
bit of a float32.

References
----------
.. [1] IEC 61966-2-1:1999, Multimedia systems and equipment - Colour measurement and
   management - Part 2-1: Default RGB colour space - sRGB.
"""

from __future__ import annotations

import numba
import numpy as np


@numba.njit(parallel=True, cache=True)
def encode_srgb(linear, out):
    """Encode the float32 linear values ``linear`` (1-D) to sRGB in ``out`` (float32)."""
    zero, one = np.float32(0.0), np.float32(1.0)
    knee, slope = np.float32(0.0031308), np.float32(12.92)
    gain, offset, power = np.float32(1.055), np.float32(0.055), np.float32(1.0 / 2.4)
    for i in numba.prange(linear.shape[0]):
        v = linear[i]
        v = zero if v < zero else (one if v > one else v)  # NaN stays NaN, as np.clip
        out[i] = v * slope if v <= knee else np.float32(gain * v ** power) - offset
