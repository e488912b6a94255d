"""Compositing: sample each layer's picture, blend front to back in linear light, add colour.

Textures are premultiplied linear RGBA. Each ray takes the colour of the layers it
crossed, nearest first, each weighted by the light that gets through the layers in
front of it ("over" operator), times the Fresnel throughput the ray carried to that
layer; what stays uncovered takes the colour of what the ray finally struck
(panel, tube or lens mount, shaded) or of the room beyond.

Pictures seen smaller than their pixels are sampled from a mip pyramid at the
level matching each ray's footprint, blended between the two nearest levels.

References
----------
.. [1] T. Porter and T. Duff, "Compositing digital images", SIGGRAPH 1984,
   Computer Graphics 18(3), 253-259 (the "over" operator, premultiplied alpha).
.. [2] L. Williams, "Pyramidal parametrics", SIGGRAPH 1983, Computer Graphics
   17(3), 1-11 (mip-mapping).
.. [3] IEC 61966-2-1 (sRGB): compositing in linear light, encoding at the end.
"""

from __future__ import annotations

import math

import cv2
import numpy as np
from cloakview.optics.trace import MOUNT, PANEL, PASSED, chosen_backend
from cloakview.render.frame import composite_kernel as kernel
from cloakview.render.frame.composite_kernel import pack_pyramid
from cloakview.render.frame.mapper import RayMap
from cloakview.render.scene.model import Scene

_REMAP_COLUMNS = 4096
#: Shading of the housing: lit from above and in front, ambient floor (our own choice).
_LIGHT = np.array([0.3, 1.0, -0.6]) / np.linalg.norm([0.3, 1.0, -0.6])
_AMBIENT = 0.35
#: Light falls off inside the tube with depth over about this length [mm] (our own choice).
_TUBE_DEPTH_MM = 600.0


class TexturePyramids:
    """Mip pyramids of the scene's layer pictures, built once per scene [2].

    Each pyramid's levels lie in one flat buffer (``levels`` holds views of it), the
    form the compiled sampler reads.
    """

    def __init__(self, scene: Scene):
        self.levels = {}
        self._packed = {}
        for layer in scene.layers:
            level = [layer.texture]
            while min(level[-1].shape[:2]) >= 16 and len(level) < 12:
                level.append(cv2.pyrDown(level[-1]))
            flat, offsets, heights, widths = pack_pyramid(level)
            self._packed[layer.name] = (flat, offsets, heights, widths)
            self.levels[layer.name] = [
                flat[o:o + h * w * 4].reshape(h, w, 4)
                for o, h, w in zip(offsets, heights, widths, strict=True)]

    def packed(self, name: str):
        """Layer ``name``'s pyramid as the compiled sampler reads it (flat, offsets, sizes)."""
        return self._packed[name]


def reference_path() -> bool:
    """Whether the reference path runs throughout (``CLOAKVIEW_TRACER=numpy``).

    That is the numpy tracer, numpy camera directions, the OpenCV sampler and numpy
    blending instead of the compiled kernels.
    """
    return chosen_backend() == "numpy"


def _remap(texture: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Bilinear samples (N, 4) of ``texture`` at pixel coordinates; 0 outside."""
    n = len(u)
    if n == 0:
        return np.zeros((0, 4), np.float32)
    rows = -(-n // _REMAP_COLUMNS)
    maps = np.full((2, rows * _REMAP_COLUMNS), -10.0, np.float32)  # -10: off the picture
    maps[0, :n] = u
    maps[1, :n] = v
    np.copyto(maps, np.float32(-10.0), where=np.isnan(maps))
    sampled = cv2.remap(texture, maps[0].reshape(rows, -1), maps[1].reshape(rows, -1),
                        interpolation=cv2.INTER_LINEAR, borderMode=cv2.BORDER_CONSTANT,
                        borderValue=(0, 0, 0, 0))
    return sampled.reshape(-1, 4)[:n]


def _neighbour_span(values: np.ndarray, axis: int) -> np.ndarray:
    """|Difference| to the next sample along ``axis``, else to the previous one.

    NaN only where both neighbours are missing.
    """
    d = np.abs(np.diff(values, axis=axis))
    span = np.empty_like(values)
    head = [slice(None)] * values.ndim
    tail = [slice(None)] * values.ndim
    last = [slice(None)] * values.ndim
    head[axis], tail[axis], last[axis] = slice(None, -1), slice(1, None), -1
    span[tuple(head)] = d
    span[tuple(last)] = np.nan
    np.fmax(span[tuple(tail)], d, out=span[tuple(tail)])
    return span


def footprint_levels(u: np.ndarray, v: np.ndarray, grid_shape) -> np.ndarray:
    """Mip level per ray from how far apart neighbouring samples land [texels] [2]."""
    footprint = None
    for values in (u.reshape(grid_shape), v.reshape(grid_shape)):
        for axis in (-1, -2):
            span = _neighbour_span(values, axis)
            footprint = span if footprint is None else np.fmax(footprint, span, out=footprint)
    # fmax turns NaN (no neighbour on this layer) and spans below a texel into 1: level 0.
    return np.log2(np.fmax(footprint.reshape(-1), np.float32(1.0)))


def sample_layer(pyramid: list[np.ndarray], u: np.ndarray, v: np.ndarray,
                 level: np.ndarray) -> np.ndarray:
    """Premultiplied RGBA (N, 4) of the rays at texture coordinates ``u``, ``v`` (reference).

    OpenCV's bilinear ``remap`` per level and numpy gathers; the compiled
    :func:`~cloakview.render.frame.composite_kernel.layer_over` samples the same way in
    one pass.

    ``level`` is each ray's mip level (see :func:`footprint_levels`), blended between
    the two nearest pyramid levels [2].
    """
    if float(np.nanmax(level, initial=0.0)) <= 0.0:
        return _remap(pyramid[0], u, v)  # nothing minified: one bilinear pass, no gathers
    out = np.zeros((len(u), 4), np.float32)
    rows = np.flatnonzero(~np.isnan(u))
    if not len(rows):
        return out
    level = np.minimum(level[rows], len(pyramid) - 1)
    top = int(math.ceil(level.max()))
    for k in range(top + 1):
        weight = 1.0 - np.abs(level - k)
        use = weight > 0.0
        if not use.any():
            continue
        pick = rows[use] if top else rows
        scale = np.float32(2.0**-k)
        samples = _remap(pyramid[k], (u[pick] + 0.5) * scale - 0.5,
                         (v[pick] + 0.5) * scale - 0.5)
        if top:
            samples *= weight[use, None]
        out[pick] += samples
    return out


def _palette(scene: Scene) -> np.ndarray:
    """Housing colours (linear RGB, float32): room, panel, tube, mount."""
    return np.stack([scene.settings.backdrop_rgb, scene.panel_rgb, scene.tube_rgb,
                     scene.tube_rgb * 1.25]).astype(np.float32)


def _housing_colour(scene: Scene, ray_map: RayMap) -> np.ndarray:
    """Linear RGB (N, 3) of what each ray finally struck (room colour if nothing).

    Each ray gets a palette entry (room, panel, tube, mount) and a shade factor:
    Lambert shading of the tube's outside, light falling off with depth inside.
    """
    r = ray_map.result
    palette = _palette(scene)
    entry = np.zeros(len(r.fate), np.intp)
    shade = np.ones(len(r.fate), np.float32)
    panel = r.fate == PANEL
    entry[panel] = 1
    shade[panel] = _AMBIENT + (1 - _AMBIENT) * max(0.0, -_LIGHT[2])
    struck = np.flatnonzero((r.fate != PASSED) & ~panel)
    if struck.size:
        inside = r.entered[struck]
        outside = struck[~inside]
        entry[outside] = 2
        x, y = r.x[outside], r.y[outside]
        lambert = np.clip((x * _LIGHT[0] + y * _LIGHT[1]) / np.hypot(x, y), 0.0, 1.0)
        shade[outside] = _AMBIENT + (1 - _AMBIENT) * lambert
        within = struck[inside]
        entry[within] = np.where(r.fate[within] == MOUNT, 3, 2)
        depth = np.maximum(r.z[within] - scene.housing.panel_z_mm, 0.0)
        shade[within] = _AMBIENT * 0.6 + (1 - _AMBIENT * 0.6) * np.exp(-depth / _TUBE_DEPTH_MM)
        shade[struck] *= r.throughput[struck]
    colour = palette[entry]
    colour *= shade[:, None]
    return colour


#: ``ids`` of a whole grid (see :func:`composite_kernel.layer_over`).
_WHOLE_GRID = np.zeros(0, np.int64)


def composite_rays(scene: Scene, ray_map: RayMap, pyramids: TexturePyramids, grid_shape,
                   levels: dict | None = None, ids: np.ndarray | None = None):
    """Linear RGB (N, 3) of every ray, hidden-object weight (N,) and mip levels used [1].

    Parameters
    ----------
    grid_shape : tuple
        (pupil, rows, columns) of the sample grid the rays belong to: texture footprints
        come from neighbouring samples.
    levels, ids : optional
        For a subset of a grid's rays: ray k is grid sample ``ids[k]``, and ``levels``
        holds each layer's mip level per grid sample (as this function returns them for
        the whole grid).

    Returns
    -------
    rgb, hidden, levels
        ``levels`` maps each layer's name to its mip level per grid sample.
    """
    n = len(ray_map.result.fate)
    _, rows, cols = grid_shape
    rgb = np.zeros((n, 3), np.float32)
    clear = np.ones(n, np.float32)
    hidden = np.zeros(n, np.float32)
    used = {}
    compiled = bool(n) and not reference_path()
    for hit in ray_map.hits:  # z order: nearest first
        name = hit.layer.name
        if compiled:
            used[name] = np.empty(n, np.float32) if ids is None else levels[name]
            kernel.layer_over(hit.x_mm, hit.y_mm, hit.throughput, hit.frame, rows, cols,
                              _WHOLE_GRID if ids is None else ids, used[name],
                              *pyramids.packed(name), np.float32(hit.layer.opacity),
                              hit.layer.role == "hidden", rgb, clear, hidden)
            continue
        u, v = hit.texels()
        used[name] = footprint_levels(u, v, grid_shape) if ids is None else levels[name]
        rgba = sample_layer(pyramids.levels[name], u, v,
                            used[name] if ids is None else used[name][ids])
        rgba *= np.float32(hit.layer.opacity)
        alpha = rgba[:, 3]
        tp = hit.throughput.astype(np.float32)
        np.copyto(tp, np.float32(0.0), where=np.isnan(tp))
        rgb += (clear * tp)[:, None] * rgba[:, :3]
        if hit.layer.role == "hidden":
            hidden += clear * alpha
        clear *= 1.0 - alpha
    if compiled:
        r = ray_map.result
        kernel.add_housing(r.fate, r.entered, r.x, r.y, r.z, r.throughput, _palette(scene),
                           clear, rgb, np.array([PASSED, PANEL, MOUNT]), np.array([
                               _LIGHT[0], _LIGHT[1],
                               _AMBIENT + (1 - _AMBIENT) * max(0.0, -_LIGHT[2]),
                               _AMBIENT, scene.housing.panel_z_mm, _TUBE_DEPTH_MM]))
    else:
        rgb += clear[:, None] * _housing_colour(scene, ray_map)
    return rgb, hidden, used


def mix_wavelength(mixed: np.ndarray, ids: np.ndarray, rgb: np.ndarray, base: np.ndarray,
                   weight: np.ndarray) -> None:
    """Mix one more wavelength into a band's colours, in place.

    ``base`` (N, 3) holds every ray's colour at the design wavelength and ``mixed`` starts
    as a copy of it; ``rgb`` (K, 3) are the colours of the rays ``ids`` at another
    wavelength (the rays that meet no glass keep their colour at every wavelength), and
    ``weight`` (3,) that wavelength's channel weights (:func:`channel_weights`). Since each
    channel's weights sum to one, after every wavelength ``mixed`` is their weighted sum.
    """
    if len(ids) and not reference_path():
        kernel.mix_wavelength(mixed, ids, rgb, base, np.asarray(weight, float))
        return
    mixed[ids] += (rgb - base[ids]) * weight


def resolve_coverage(hidden: np.ndarray, ray_map: RayMap, grid_shape,
                     supersample: int) -> np.ndarray:
    """Each pixel's share (H, W, 4) of rays hidden, entered, through and replaced.

    ``hidden`` is each ray's hidden-object weight; entered: rays that entered the viewing
    hole; through: that passed the whole device; replaced: through and not hidden (the
    background seen through the lenses).
    """
    pupil, rows, cols = grid_shape
    r = ray_map.result
    if len(hidden) and not reference_path():
        out = np.empty((rows // supersample, cols // supersample, 4), np.float32)
        kernel.resolve_coverage(hidden, r.entered, r.fate, PASSED, pupil, rows, cols,
                                supersample, out)
        return out
    through = ray_map.through_device.astype(np.float32)
    samples = np.stack([hidden, r.entered.astype(np.float32), through,
                        through * (1.0 - hidden)], axis=1)
    return resolve_samples(samples, grid_shape, supersample)


def channel_weights(wavelengths_nm) -> np.ndarray:
    """Weights (K, 3) that turn K single-wavelength images into R, G, B.

    Each wavelength feeds the channel whose band holds it (blue below 490 nm, green to
    590 nm, red above: our own split, close to where the sRGB primaries' colour-matching
    lobes cross, common practice); a channel whose band holds no wavelength takes the
    nearest one. Each channel's weights sum to 1, so a grey picture stays grey.
    """
    w = np.asarray(wavelengths_nm, float)
    bands = [(0.0, 490.0, 455.0), (490.0, 590.0, 545.0), (590.0, 1e9, 620.0)]
    weights = np.zeros((len(w), 3))
    for c, (lo, hi, centre) in enumerate(reversed(bands)):  # columns R, G, B
        inside = (w >= lo) & (w < hi)
        if inside.any():
            weights[inside, c] = 1.0 / inside.sum()
        else:
            weights[np.argmin(np.abs(w - centre)), c] = 1.0
    return weights


def resolve_samples(samples: np.ndarray, grid_shape, supersample: int) -> np.ndarray:
    """Average per-ray values (N,) or (N, C) over pupil points and supersamples: (H, W, C).

    Adds the strided sub-grids one by one into a float64 sum (the same value as a mean
    over the reshaped axes, about four times faster than ``mean`` over a 6-D view); the
    compiled path (:func:`~cloakview.render.frame.composite_kernel.resolve_blocks`) adds
    in the same order in one pass.
    """
    pupil, rows, cols = grid_shape
    s = supersample
    if pupil == 1 and s == 1:  # one sample per pixel: nothing to average
        return np.array(samples, np.float32).reshape(rows, cols, -1)
    if not reference_path():
        flat = np.ascontiguousarray(samples, np.float32).reshape(len(samples), -1)
        out = np.empty((rows // s, cols // s, flat.shape[1]), np.float32)
        kernel.resolve_blocks(flat, pupil, rows, cols, s, out)
        return out
    blocks = samples.reshape(pupil, rows // s, s, cols // s, s, -1)
    total = np.zeros((rows // s, cols // s, blocks.shape[-1]), np.float64)
    for p in range(pupil):
        for i in range(s):
            for j in range(s):
                total += blocks[p, :, i, :, j]
    total *= 1.0 / (pupil * s * s)
    return total.astype(np.float32)
