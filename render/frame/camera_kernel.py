"""Compiled camera: the pinhole directions of a band of sample rows in one pass.

:func:`direction_planes` computes what :func:`cloakview.render.frame.camera._direction_planes`
computes with numpy (that stays the reference), in the same order of operations, so the
two give the same values.
"""

from __future__ import annotations

import math

import numba


@numba.njit(parallel=True, cache=True)
def direction_planes(forward, right, up, half, rows, cols, first, out):
    """Unit directions of sample rows ``first`` onward into ``out`` (3, band rows, cols).

    ``forward``, ``right`` and ``up`` are the eye's orthonormal axes, ``half`` the tangent
    of half the horizontal field of view, ``rows`` and ``cols`` the whole sample grid's
    size. Sample (r, c) looks along forward + px right + py up, normalised, with px and py
    its centre on the image plane at unit distance (row 0 at the top).
    """
    for r in numba.prange(out.shape[1]):
        py = (1.0 - (first + r + 0.5) / rows * 2.0) * half * rows / cols
        for c in range(cols):
            px = ((c + 0.5) / cols * 2.0 - 1.0) * half
            scale = 1.0 / math.sqrt(1.0 + px * px + py * py)
            for k in range(3):
                out[k, r, c] = (forward[k] + px * right[k] + py * up[k]) * scale
