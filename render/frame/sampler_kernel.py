"""Compiled mip-mapped texture sampling: one pass over the rays, no gathers or scatters.

:func:`mip_sample` does what :func:`cloakview.render.frame.composite.sample_layer` does
with OpenCV and numpy (that stays the reference and the tests hold the two equal):
each ray's colour is the bilinear sample of the two pyramid levels nearest its mip level,
blended by the distance to each [1]. Bilinear weights and borders are those of OpenCV's
``remap`` with ``INTER_LINEAR``, float maps and ``BORDER_CONSTANT`` 0: pixels off the
picture count as transparent black [2].

References
----------
.. [1] L. Williams, "Pyramidal parametrics", SIGGRAPH 1983, Computer Graphics 17(3),
   1-11 (mip-mapping, trilinear blending between levels).
.. [2] OpenCV documentation, "Geometric Image Transformations: remap".
"""

from __future__ import annotations

import math

import numba
import numpy as np


def pack_pyramid(levels: list[np.ndarray]):
    """One flat float32 buffer of all levels (H, W, 4) and each level's offset and size."""
    sizes = np.array([level.shape[:2] for level in levels], np.int64)
    offsets = np.concatenate([[0], np.cumsum(sizes[:, 0] * sizes[:, 1] * 4)[:-1]])
    flat = np.concatenate([np.ascontiguousarray(level, np.float32).reshape(-1)
                           for level in levels])
    return flat, offsets.astype(np.int64), sizes[:, 0].copy(), sizes[:, 1].copy()


@numba.njit(cache=True, inline="always")
def _tap(flat, offset, height, width, tx, ty, weight, out, i):
    if 0 <= tx < width and 0 <= ty < height:
        base = offset + (ty * width + tx) * 4
        for c in range(4):
            out[i, c] += weight * flat[base + c]


@numba.njit(cache=True, inline="always")
def _bilinear_add(flat, offset, height, width, x, y, weight, out, i):
    """Add ``weight`` times the bilinear sample at pixel (x, y) of one level to ``out[i]``."""
    x0 = int(math.floor(x))
    y0 = int(math.floor(y))
    ax = np.float32(x - np.float32(x0))
    ay = np.float32(y - np.float32(y0))
    one = np.float32(1.0)
    _tap(flat, offset, height, width, x0, y0, weight * ((one - ax) * (one - ay)), out, i)
    _tap(flat, offset, height, width, x0 + 1, y0, weight * (ax * (one - ay)), out, i)
    _tap(flat, offset, height, width, x0, y0 + 1, weight * ((one - ax) * ay), out, i)
    _tap(flat, offset, height, width, x0 + 1, y0 + 1, weight * (ax * ay), out, i)


@numba.njit(parallel=True, cache=True)
def mip_sample(flat, offsets, heights, widths, u, v, level, out):
    """Premultiplied RGBA into ``out`` (N, 4) of rays at texel coordinates ``u``, ``v``.

    ``level`` is each ray's mip level (0 = full size), clamped to the pyramid; rays whose
    ``u`` is NaN (they missed the layer) get 0.
    """
    top = len(offsets) - 1
    half = np.float32(0.5)
    for i in numba.prange(len(u)):
        for c in range(4):
            out[i, c] = 0.0
        if math.isnan(u[i]) or math.isnan(v[i]):
            continue
        lv = min(max(np.float32(level[i]), np.float32(0.0)), np.float32(top))
        k0 = int(math.floor(lv))
        for k in (k0, k0 + 1):
            weight = np.float32(1.0) - np.float32(abs(lv - np.float32(k)))
            if k > top or weight <= 0.0:
                continue
            # In float32, as the reference's maps are.
            scale = np.float32(2.0 ** -k)
            x = np.float32(np.float32(np.float32(u[i]) + half) * scale) - half
            y = np.float32(np.float32(np.float32(v[i]) + half) * scale) - half
            _bilinear_add(flat, offsets[k], heights[k], widths[k], x, y, weight, out, i)
