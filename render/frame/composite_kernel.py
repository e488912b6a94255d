"""Compiled compositing: sampling, over-blending, housing colour, wavelength mix, resolve.

Each kernel is one pass over the rays; the numpy and OpenCV code in
:mod:`cloakview.render.frame.composite` stays the reference.

:func:`layer_over` samples as :func:`cloakview.render.frame.composite.sample_layer` does
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
def _corner(flat, offset, height, width, tx, ty, w, acc):
    """``acc`` (4 float32) plus ``w`` times the texel at (tx, ty); 0 off the picture."""
    if 0 <= tx < width and 0 <= ty < height:
        base = offset + (ty * width + tx) * 4
        return (acc[0] + w * flat[base], acc[1] + w * flat[base + 1],
                acc[2] + w * flat[base + 2], acc[3] + w * flat[base + 3])
    return acc


@numba.njit(cache=True, inline="always")
def _floor(x, below, above):
    """``math.floor`` of float32 ``x`` clamped to [below, above], as an integer.

    A truncation and a select that stay in registers (``math.floor`` of a float32 is a
    library call); the clamp keeps the conversion in range for any finite ``x``.
    """
    x = min(max(x, np.float32(below)), np.float32(above))
    t = int(x)
    return t - 1 if x < np.float32(t) else t


@numba.njit(cache=True, inline="always")
def _bilinear(flat, offset, height, width, u, v, scale, weight, acc):
    """``acc`` plus ``weight`` times the bilinear RGBA of one pyramid level at (u, v).

    (u, v) are level-0 texels; ``scale`` (2^-k, float32) takes them to level k, whose
    texels start at ``offset`` in ``flat``.
    """
    half = np.float32(0.5)
    one = np.float32(1.0)
    # In float32, as the reference's maps are.
    x = np.float32(np.float32(np.float32(u) + half) * scale) - half
    y = np.float32(np.float32(np.float32(v) + half) * scale) - half
    x0 = _floor(x, -2, width + 1)  # a texel beyond the picture every corner is off it
    y0 = _floor(y, -2, height + 1)
    ax = np.float32(x - np.float32(x0))
    ay = np.float32(y - np.float32(y0))
    acc = _corner(flat, offset, height, width, x0, y0, weight * ((one - ax) * (one - ay)), acc)
    acc = _corner(flat, offset, height, width, x0 + 1, y0, weight * (ax * (one - ay)), acc)
    acc = _corner(flat, offset, height, width, x0, y0 + 1, weight * ((one - ax) * ay), acc)
    return _corner(flat, offset, height, width, x0 + 1, y0 + 1, weight * (ax * ay), acc)


@numba.njit(cache=True, inline="always")
def _sample_one(flat, offsets, heights, widths, scales, u, v, level):
    """The mip-mapped bilinear RGBA (4 float32) at texel (u, v), mip ``level``.

    The two nearest levels, the lower first, each weighted by one minus its distance to
    ``level``; ``scales[k]`` is 2^-k. At level 0 or below only level 0 is read, with
    weight and scale 1 written as constants (the same values, less arithmetic).
    """
    top = len(offsets) - 1
    one = np.float32(1.0)
    zero = np.float32(0.0)
    acc = (zero, zero, zero, zero)
    if not np.float32(level) > zero:
        return _bilinear(flat, offsets[0], heights[0], widths[0], u, v, one, one, acc)
    lv = min(np.float32(level), np.float32(top))
    k0 = _floor(lv, 0, top)
    weight = one - np.float32(abs(lv - np.float32(k0)))
    if weight > 0.0:
        acc = _bilinear(flat, offsets[k0], heights[k0], widths[k0], u, v, scales[k0], weight,
                        acc)
    k1 = k0 + 1
    if k1 <= top:
        weight = one - np.float32(abs(lv - np.float32(k1)))
        if weight > 0.0:
            acc = _bilinear(flat, offsets[k1], heights[k1], widths[k1], u, v, scales[k1],
                            weight, acc)
    return acc


@numba.njit(cache=True, inline="always")
def _texel(x, y, frame):
    """Texture coordinates (u, v) [texels, float32] of the point (x, y) [mm] on a layer.

    ``frame``: left and top edge [mm], width and height [mm] and [texels], as
    :attr:`cloakview.render.frame.mapper.LayerHit.frame`; the arithmetic is that of
    :meth:`~cloakview.render.frame.mapper.LayerHit.texels`.
    """
    u = np.float32((x - frame[0]) / frame[2] * frame[4] - 0.5)
    v = np.float32((frame[1] - y) / frame[3] * frame[5] - 0.5)
    return u, v


@numba.njit(cache=True, inline="always")
def _wider(footprint, u, v, i, k):
    """``footprint`` or the distance [texels] from sample ``i`` to ``k``, if larger.

    The larger distance in u or v counts; a sample that missed the layer (NaN) changes
    nothing.
    """
    du = np.float32(abs(u[k] - u[i]))
    dv = np.float32(abs(v[k] - v[i]))
    if du > footprint:
        footprint = du
    if dv > footprint:
        footprint = dv
    return footprint


@numba.njit(cache=True, inline="always")
def _grid_level(u, v, i, r, c, rows, cols):
    """Mip level of grid sample ``i`` (row ``r``, column ``c``) from its neighbours [1].

    As :func:`cloakview.render.frame.composite.footprint_levels`: the largest distance in
    u or v to the next sample along a row or a column (to the previous one where there is
    no next), at least one texel, as a base-2 logarithm.
    """
    footprint = np.float32(1.0)
    if c + 1 < cols:
        footprint = _wider(footprint, u, v, i, i + 1)
    if c > 0:
        footprint = _wider(footprint, u, v, i, i - 1)
    if r + 1 < rows:
        footprint = _wider(footprint, u, v, i, i + cols)
    if r > 0:
        footprint = _wider(footprint, u, v, i, i - cols)
    return np.float32(0.0) if footprint <= 1.0 else np.float32(math.log2(footprint))


@numba.njit(cache=True, inline="always")
def _lay_one(i, u, v, level, throughput, flat, offsets, heights, widths, scales, opacity,
             is_hidden, rgb, clear, hidden):
    """Ray ``i``'s sample of the layer at texel (``u``, ``v``), mip ``level``, laid over."""
    rgba = _sample_one(flat, offsets, heights, widths, scales, u, v, level)
    alpha = rgba[3] * opacity
    tp = np.float32(throughput[i])
    if math.isnan(tp):
        tp = np.float32(0.0)
    seen = clear[i] * tp
    for c in range(3):
        rgb[i, c] += seen * (rgba[c] * opacity)
    if is_hidden:
        hidden[i] += clear[i] * alpha
    clear[i] *= np.float32(1.0) - alpha


@numba.njit(parallel=True, cache=True)
def layer_over(x, y, throughput, frame, rows, cols, ids, levels, flat, offsets, heights,
               widths, opacity, is_hidden, rgb, clear, hidden):
    """Locate, sample and lay one layer over what is in front, in place ("over" [3]).

    For each ray: its texture coordinates from its crossing point (``x``, ``y`` [mm]; NaN:
    it missed the plane) and the layer's ``frame`` (see :func:`_texel`); its mip level;
    the layer's premultiplied colour times ``opacity`` and the ray's ``throughput`` (NaN
    counts as 0), added to ``rgb`` weighted by ``clear`` (the light the nearer layers let
    through); a hidden layer adds its coverage to ``hidden``; ``clear`` is multiplied by
    one minus the layer's alpha.

    With ``ids`` of length 0, ray i is sample i of a grid of ``rows`` x ``cols`` samples
    (times any number of pupil points): its mip level comes from its neighbours (see
    :func:`_grid_level`) and is written to ``levels[i]``. Otherwise ray i is grid sample
    ``ids[i]`` and its level is read from ``levels[ids[i]]``.

    References
    ----------
    .. [3] T. Porter and T. Duff, "Compositing digital images", SIGGRAPH 1984, Computer
       Graphics 18(3), 253-259.
    """
    n = x.shape[0]
    scales = np.empty(len(offsets), np.float32)
    for k in range(len(offsets)):
        scales[k] = np.float32(math.ldexp(1.0, -k))
    us = np.empty(n, np.float32)
    vs = np.empty(n, np.float32)
    for i in numba.prange(n):
        us[i], vs[i] = _texel(x[i], y[i], frame)
    if ids.shape[0]:
        for i in numba.prange(n):
            if not (math.isnan(us[i]) or math.isnan(vs[i])):
                _lay_one(i, us[i], vs[i], levels[ids[i]], throughput, flat, offsets, heights,
                         widths, scales, opacity, is_hidden, rgb, clear, hidden)
        return
    for g in numba.prange(n // cols):  # grid rows, so no ray needs a division for its place
        r = g % rows
        for c in range(cols):
            i = g * cols + c
            if math.isnan(us[i]) or math.isnan(vs[i]):
                levels[i] = np.float32(0.0)
                continue
            level = _grid_level(us, vs, i, r, c, rows, cols)
            levels[i] = level
            _lay_one(i, us[i], vs[i], level, throughput, flat, offsets, heights, widths,
                     scales, opacity, is_hidden, rgb, clear, hidden)


@numba.njit(parallel=True, cache=True, error_model="numpy")
def add_housing(fate, entered, x, y, z, throughput, palette, clear, rgb, codes, shading):
    """Add to ``rgb`` the colour of what each ray finally struck, times ``clear``.

    ``codes`` are the tracer's fates (passed, panel, mount); ``shading`` holds the light's
    x and y components, the panel's shade, the ambient share, the panel's axial position
    [mm] and the tube's fall-off depth [mm]. Palette rows: room, panel, tube, mount. The
    arithmetic and its float32/float64 steps are those of the numpy reference
    (``composite._housing_colour``).
    """
    passed, panel, mount = codes[0], codes[1], codes[2]
    light_x, light_y, panel_shade, ambient, panel_z, depth_mm = (
        shading[0], shading[1], shading[2], shading[3], shading[4], shading[5])
    for i in numba.prange(len(fate)):
        entry = 0
        shade = np.float32(1.0)
        if fate[i] == panel:
            entry = 1
            shade = np.float32(panel_shade)
        elif fate[i] != passed:
            if not entered[i]:
                entry = 2
                lambert = (x[i] * light_x + y[i] * light_y) / math.hypot(x[i], y[i])
                if lambert < 0.0:
                    lambert = 0.0
                elif lambert > 1.0:
                    lambert = 1.0
                shade = np.float32(ambient + (1 - ambient) * lambert)
            else:
                entry = 3 if fate[i] == mount else 2
                depth = max(z[i] - panel_z, 0.0)
                shade = np.float32(ambient * 0.6 + (1 - ambient * 0.6)
                                   * math.exp(-depth / depth_mm))
            shade = np.float32(shade * throughput[i])
        for c in range(3):
            rgb[i, c] += clear[i] * (palette[entry, c] * shade)


@numba.njit(cache=True, parallel=True)
def resolve_blocks(samples, pupil, rows, cols, s, out):
    """Mean of each pixel's ``pupil`` x ``s`` x ``s`` samples into ``out`` (H, W, C).

    ``samples`` (pupil * rows * cols, C) in sample-grid order; sums in float64, in the
    order of :func:`cloakview.render.frame.composite.resolve_samples` (pupil point, then
    sub-row, then sub-column), so the two give the same float32 values.
    """
    height, width, channels = out.shape
    scale = 1.0 / (pupil * s * s)
    for r in numba.prange(height):
        for c in range(width):
            for k in range(channels):
                total = 0.0
                for p in range(pupil):
                    for i in range(s):
                        row = (p * rows + r * s + i) * cols + c * s
                        for j in range(s):
                            total += np.float64(samples[row + j, k])
                out[r, c, k] = np.float32(total * scale)


@numba.njit(parallel=True, cache=True)
def mix_wavelength(mixed, ids, rgb, base, weight):
    """Mix one more wavelength's colours ``rgb`` of the rays ``ids`` into ``mixed``, in place.

    ``mixed[ids[k]] += weight * (rgb[k] - base[ids[k]])`` per channel, with the arithmetic
    of the numpy reference (a float32 difference, float64 weights, the sum rounded to
    float32); see :func:`cloakview.render.frame.composite.mix_wavelength`.
    """
    for k in numba.prange(ids.shape[0]):
        i = ids[k]
        for c in range(3):
            mixed[i, c] = np.float32(mixed[i, c] + weight[c] * (rgb[k, c] - base[i, c]))


@numba.njit(cache=True, parallel=True)
def resolve_coverage(hidden, entered, fate, passed, pupil, rows, cols, s, out):
    """Each pixel's mean of four per-ray coverages into ``out`` (H, W, 4).

    Per ray: ``hidden`` (float32), entered (1 or 0), through (entered and ``fate`` equal to
    ``passed``: 1 or 0) and replaced (through times one minus hidden, in float32); summed
    in float64 in the order of :func:`resolve_blocks`, so the values equal its result on
    those four columns.
    """
    height, width, _ = out.shape
    scale = 1.0 / (pupil * s * s)
    one = np.float32(1.0)
    for r in numba.prange(height):
        for c in range(width):
            t_hidden = t_entered = t_through = t_replaced = 0.0
            for p in range(pupil):
                for i in range(s):
                    row = (p * rows + r * s + i) * cols + c * s
                    for j in range(s):
                        k = row + j
                        h = hidden[k]
                        t_hidden += np.float64(h)
                        if entered[k]:
                            t_entered += 1.0
                            if fate[k] == passed:
                                t_through += 1.0
                                t_replaced += np.float64(one - h)
            out[r, c, 0] = np.float32(t_hidden * scale)
            out[r, c, 1] = np.float32(t_entered * scale)
            out[r, c, 2] = np.float32(t_through * scale)
            out[r, c, 3] = np.float32(t_replaced * scale)
