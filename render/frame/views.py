"""Render one viewer's views and measure them.

Views: ``cloaked`` (the exhibit as built), ``naked`` (the same housing and objects
with the lenses taken out), ``reference`` (the room with no device and no hidden
objects: what a perfect cloak would show), ``difference`` (a heat map of cloaked
against reference) and ``vanish`` (the cloaked view with the object's outline as it
would be seen without lenses, and which parts of it vanish or still show).
"""

from __future__ import annotations

import dataclasses
import os
import time
from dataclasses import dataclass

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.optics.materials import nearest_to_d_line
from cloakview.optics.surfaces import Refracting
from cloakview.optics.trace import Rays
from cloakview.render.color import linear_to_srgb, srgb_to_uint8
from cloakview.render.frame import metrics as m
from cloakview.render.frame import overlays
from cloakview.render.frame.camera import camera_rays
from cloakview.render.frame.composite import (
    TexturePyramids,
    channel_weights,
    composite_rays,
    mix_wavelength,
    resolve_coverage,
    resolve_samples,
)
from cloakview.render.frame.mapper import SETUPS, map_rays
from cloakview.render.frame.window import inside_window_advice, window_measures
from cloakview.render.scene.model import Scene, Viewer

VIEW_NAMES = ("cloaked", "reference", "naked", "difference", "vanish")
#: The metrics of what is seen where the object was (see :func:`metrics.place_split`).
PLACE_KEYS = ("replaced_fraction", "blocked_fraction", "showing_fraction", "hidden_fraction",
              "object_seen_ratio")
#: The numbers a sweep keeps of each render (a sight-line point, a walk-by frame).
POINT_KEYS = (*PLACE_KEYS, "background_ssim", "window_deg", "through_pixels", "verdict")

@dataclass
class ViewerRender:
    """Images (8-bit sRGB) and metrics of one viewer.

    ``through`` is the share of each pixel's rays (H, W) that pass the whole device in
    the cloaked view (the through-window as a mask); ``entered`` the share that enter the
    viewing hole (where the hole is in the picture).
    """

    viewer: Viewer
    images: dict[str, np.ndarray]
    metrics: dict
    seconds: float
    through: np.ndarray
    entered: np.ndarray


#: Rays per band: frames are traced and composited in bands of rows of about this many
#: rays, so a band's arrays stay within a few hundred megabytes (our own choice).
BAND_RAYS = 400_000
#: Most rays whose landing points the metrics keep per view and wavelength. A frame with
#: more keeps every k-th ray of the frame (the same rays in every view), so the metrics'
#: medians, percentiles and means come from a regular sample of at least this many rays
#: (our own choice; it bounds their memory at about 64 MB per view and wavelength).
RECORD_RAYS = 2_000_000
#: Most rays in one band: one output row (all its samples) must fit.
MAX_ROW_RAYS = 2_000_000
#: Estimated bytes per output pixel of a whole render (images, coverages, 8-bit views)
#: and per ray of a band (the tracer's and compositor's arrays), measured on the
#: gallery sample (our own calibration; see memory_estimate_bytes).
PIXEL_BYTES = 130
BAND_RAY_BYTES = 400
RECORD_BYTES = 32


def record_stride(viewer: Viewer, supersample: int) -> int:
    """Keep every k-th ray of a frame for the metrics, so at most :data:`RECORD_RAYS`."""
    rays = viewer.width_px * viewer.height_px * supersample ** 2 * max(viewer.pupil_samples, 1)
    return max(1, -(-rays // RECORD_RAYS))


def memory_estimate_bytes(viewer: Viewer, supersample: int, wavelengths: int) -> int:
    """Peak memory of :func:`render_viewer` beyond the scene, estimated before allocating."""
    rays = viewer.width_px * viewer.height_px * supersample ** 2 * max(viewer.pupil_samples, 1)
    band = min(rays, max(BAND_RAYS, viewer.width_px * supersample ** 2
                         * max(viewer.pupil_samples, 1)))
    records = min(rays, RECORD_RAYS) * RECORD_BYTES * (min(wavelengths, 3) + 1)
    return viewer.width_px * viewer.height_px * PIXEL_BYTES + band * BAND_RAY_BYTES + records


def memory_budget_bytes() -> int:
    """The memory one render may use: ``$CLOAKVIEW_MEMORY_MB``, else half the machine's RAM."""
    text = os.environ.get("CLOAKVIEW_MEMORY_MB")
    if text:
        return int(float(text) * 2 ** 20)
    return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") // 2


def check_memory(viewer: Viewer, supersample: int, wavelengths: int) -> None:
    """Refuse, before allocating, a render that would not fit the memory budget.

    Raises
    ------
    InputError
        Naming the viewer, what it would need and what to lower.
    """
    per_row = viewer.width_px * supersample ** 2 * max(viewer.pupil_samples, 1)
    what = (f"{viewer.width_px}x{viewer.height_px} pixels, supersample {supersample}, "
            f"{viewer.pupil_samples} pupil samples")
    if per_row > MAX_ROW_RAYS:
        raise InputError(f"viewer '{viewer.name}'", what, f"needs {per_row:,} rays per image "
                         f"row, at most {MAX_ROW_RAYS:,}: lower the width, the supersampling "
                         "or the pupil samples")
    need, budget = memory_estimate_bytes(viewer, supersample, wavelengths), memory_budget_bytes()
    if need > budget:
        raise InputError(f"viewer '{viewer.name}'", what, f"needs about {need / 2**20:,.0f} MB, "
                         f"over the budget of {budget / 2**20:,.0f} MB (CLOAKVIEW_MEMORY_MB or "
                         "--memory-mb sets it): lower the size, supersampling or pupil samples")


@dataclass
class RayRecord:
    """What the metrics need of the kept rays at one wavelength, over all bands.

    ``index`` numbers the rays of the frame (the same in every view), in increasing
    order; only rays whose index is a multiple of the frame's record stride are kept. The
    cloaked view keeps those that pass through the device; the reference keeps them all.
    """

    index: np.ndarray
    throughput: np.ndarray
    wall_x: np.ndarray
    wall_y: np.ndarray


@dataclass
class TracedView:
    """One traced view: linear image, per-pixel coverages (0 to 1) and per-ray records.

    ``hidden``: covered by a hidden object; ``entered``: rays that entered the viewing
    hole; ``through``: rays that passed the whole device; ``replaced``: rays that passed
    the whole device and were not covered by a hidden object (background seen through).
    """

    image: np.ndarray
    hidden: np.ndarray
    entered: np.ndarray
    through: np.ndarray
    replaced: np.ndarray
    records: dict[float, RayRecord]


def _bands(viewer: Viewer, supersample: int):
    rows = viewer.height_px * supersample
    per_row = viewer.width_px * supersample * max(viewer.pupil_samples, 1)
    step = max(supersample, BAND_RAYS // per_row // supersample * supersample)
    return [(r, min(r + step, rows)) for r in range(0, rows, step)]


def _subset(rays: Rays, rows: np.ndarray) -> Rays:
    return Rays(*(getattr(rays, f.name)[rows] for f in dataclasses.fields(Rays)))


def _trace_view(scene, viewer, setup, wavelengths, pyramids, supersample,
                keep_records: bool) -> TracedView:
    """Trace and composite one view band by band; keep what the metrics need.

    With real lenses, the design wavelength is traced first for every ray; the other
    wavelengths re-trace only the rays that entered the device (the rest meet no
    glass, so their colour does not depend on wavelength) and reuse its mip levels.
    Each ray's colours are mixed over the wavelengths before the band is resolved into
    pixels, once.
    """
    weights = channel_weights(wavelengths)
    dispersive = setup.lenses and any(isinstance(s, Refracting) for s in scene.system.surfaces)
    design = nearest_to_d_line(wavelengths)
    order = sorted(wavelengths if dispersive else (design,), key=lambda w: w != design)
    kept = {design, min(order), max(order)} if keep_records else set()
    stride = record_stride(viewer, supersample)
    wall = _front_background(scene).name
    h, w = viewer.height_px, viewer.width_px
    image = np.zeros((h, w, 3), np.float32)
    cover = np.zeros((h, w, 4), np.float32)  # hidden, entered, through, replaced
    parts = {wl: [] for wl in kept}
    offset = 0
    for r0, r1 in _bands(viewer, supersample):
        rays, grid = camera_rays(viewer, scene.placement, supersample, design, (r0, r1))
        shape = (grid.pupil, grid.rows, grid.columns)
        rows = slice(r0 // supersample, r1 // supersample)
        ray_map = map_rays(scene, rays, setup)
        base, hidden, levels = composite_rays(scene, ray_map, pyramids, shape)
        cover[rows] = resolve_coverage(hidden, ray_map, shape, supersample)
        entered = np.flatnonzero(ray_map.result.entered)
        mixed = base.copy() if len(order) > 1 else base
        for wl in order:
            if wl == design:
                sub_map, ids = ray_map, None  # every ray, in order
            else:
                sub = _subset(rays, entered)
                sub.wavelength_nm[:] = wl
                sub_map = map_rays(scene, sub, setup)
                sub_rgb, _, _ = composite_rays(scene, sub_map, pyramids, shape, levels, entered)
                mix_wavelength(mixed, entered, sub_rgb, base,
                               weights[list(wavelengths).index(wl)])
                ids = entered
            if wl in kept:
                pick = _record_rows(ids, offset, stride, len(rays),
                                    sub_map.through_device if setup.lenses else None)
                crossing = sub_map.result.crossings[wall]
                index = offset + (pick if ids is None else ids[pick])
                parts[wl].append((index, sub_map.result.throughput[pick], crossing.x[pick],
                                  crossing.y[pick]))
        image[rows] = resolve_samples(mixed, shape, supersample)
        offset += grid.count
    records = {wl: RayRecord(*(np.concatenate(column) for column in zip(*chunks,
                                                                        strict=True)))
               for wl, chunks in parts.items()}
    hidden, entered, through, replaced = (np.ascontiguousarray(cover[..., k]) for k in range(4))
    return TracedView(image, hidden, entered, through, replaced, records)


def _record_rows(ids, offset: int, stride: int, count: int, through) -> np.ndarray:
    """Rows of a band's trace whose rays are kept: frame index a multiple of ``stride``.

    ``ids`` maps the trace's rows to the band's rays (None: row i is ray i of ``count``);
    with ``through`` (lenses present), only rays that passed the device are kept.
    """
    if ids is None and through is None:
        return np.arange((-offset) % stride, count, stride)
    rows = np.flatnonzero(through) if through is not None else np.arange(len(ids))
    frame = offset + (rows if ids is None else ids[rows])
    return rows[frame % stride == 0]


def _front_background(scene: Scene):
    return min((layer for layer in scene.layers if layer.role == "background"),
               key=lambda layer: layer.z_mm)


def _reference_unneeded(cloaked: TracedView, views) -> bool:
    """Whether the reference view can be left untraced: no ray passed the device.

    Then the metrics that use the reference (background likeness and shift) have nothing
    to measure, and unless a picture needs it, tracing it would change no number.
    """
    return not (cloaked.through > 0.0).any() and not {"reference", "difference"} & set(views)


def _unlit(cloaked: TracedView) -> TracedView:
    """A stand-in reference view with no pixels lit and no ray records (see above)."""
    empty = RayRecord(*(np.zeros(0, dtype) for dtype in (np.int64, float, float, float)))
    zeros = np.zeros_like(cloaked.hidden)
    return TracedView(np.zeros_like(cloaked.image), zeros, zeros, zeros, zeros,
                      {wl: empty for wl in cloaked.records})


def render_viewer(scene: Scene, viewer: Viewer, pyramids: TexturePyramids | None = None,
                  views=VIEW_NAMES, supersample: int | None = None,
                  progress=None) -> ViewerRender:
    """Render and measure ``viewer``'s views of ``scene``.

    Parameters
    ----------
    views : sequence of str
        Which images to return (all three traces run regardless: the metrics need them).
    supersample : int, optional
        Override the scene's supersampling.
    progress : callable, optional
        Called with a short label after each traced view.
    """
    start = time.perf_counter()
    pyramids = pyramids or TexturePyramids(scene)
    ss = supersample or scene.settings.supersample
    check_memory(viewer, ss, len(scene.settings.wavelengths_nm))
    traced = {}
    for name, setup in SETUPS.items():
        if name == "reference" and _reference_unneeded(traced["cloaked"], views):
            traced[name] = _unlit(traced["cloaked"])
        else:
            traced[name] = _trace_view(scene, viewer, setup, scene.settings.wavelengths_nm,
                                       pyramids, ss, keep_records=name != "naked")
        if progress:
            progress(f"{viewer.name}: {name}")
    metrics = _measure(scene, viewer, traced)
    srgb = _Encoded(traced)
    images = {name: _picture(name, traced, srgb) for name in views}
    return ViewerRender(viewer, images, metrics, time.perf_counter() - start,
                        traced["cloaked"].through, traced["cloaked"].entered)


class _Encoded(dict):
    """The sRGB encoding of each traced view's image, made on first use only.

    A view's picture and the overlay pictures share it (``difference`` and ``vanish``
    both use the cloaked view's); a render that makes no picture encodes nothing.
    """

    def __init__(self, traced: dict[str, TracedView]):
        super().__init__()
        self._traced = traced

    def __missing__(self, name: str) -> np.ndarray:
        value = self[name] = linear_to_srgb(self._traced[name].image)
        return value


#: The traced views each picture is made from.
PICTURE_NEEDS = {"cloaked": ("cloaked",), "naked": ("naked",), "reference": ("reference",),
                 "difference": ("cloaked", "reference"), "vanish": ("cloaked", "naked")}


def _picture(name: str, traced: dict[str, TracedView], srgb: dict) -> np.ndarray:
    """One view's 8-bit picture from the traced views it needs (:data:`PICTURE_NEEDS`)."""
    if name in SETUPS:
        return srgb_to_uint8(srgb[name])
    cloaked = traced["cloaked"]
    if name == "difference":
        return overlays.difference_image(srgb["cloaked"], srgb["reference"],
                                         cloaked.entered >= 0.5)
    return overlays.vanish_image(srgb["cloaked"], cloaked.hidden, cloaked.replaced,
                                 traced["naked"].hidden)


def render_picture(scene: Scene, viewer: Viewer, pyramids: TexturePyramids, view: str,
                   supersample: int = 1) -> np.ndarray:
    """Only the picture of one view (8-bit sRGB), no metrics: the fastest look.

    Traces just the views the picture is made from (one for ``cloaked``, two for
    ``difference`` and ``vanish``) and keeps no ray records.
    """
    check_memory(viewer, supersample, len(scene.settings.wavelengths_nm))
    traced = {name: _trace_view(scene, viewer, SETUPS[name], scene.settings.wavelengths_nm,
                                pyramids, supersample, keep_records=False)
              for name in PICTURE_NEEDS[view]}
    return _picture(view, traced, _Encoded(traced))


def _measure(scene, viewer, traced) -> dict:
    cloaked, naked = traced["cloaked"], traced["naked"]
    records = cloaked.records
    seen = records[nearest_to_d_line(list(records))]
    ref = next(iter(traced["reference"].records.values()))
    through_px = cloaked.through >= 0.999
    place = m.place_split(naked.hidden, cloaked.hidden, cloaked.replaced)
    wall = _front_background(scene)
    eye = scene.placement.to_device(np.asarray(viewer.eye_mm, float))
    at = np.searchsorted(ref.index, seen.index)  # the same rays in the reference view
    rx, ry = ref.wall_x[at], ref.wall_y[at]
    ok = ~np.isnan(seen.wall_x) & ~np.isnan(rx)
    shift = m.angular_shift_arcmin(eye, seen.wall_x[ok], seen.wall_y[ok], rx[ok], ry[ok],
                                   wall.z_mm)
    shift_mm = np.hypot(seen.wall_x[ok] - rx[ok], seen.wall_y[ok] - ry[ok])
    fringe = 0.0
    if len(records) > 1:
        a, b = records[min(records)], records[max(records)]
        _, ia, ib = np.intersect1d(a.index, b.index, assume_unique=True, return_indices=True)
        spread = m.angular_shift_arcmin(eye, a.wall_x[ia], a.wall_y[ia], b.wall_x[ib],
                                        b.wall_y[ib], wall.z_mm)
        spread = spread[np.isfinite(spread)]
        fringe = float(np.percentile(spread, 95)) if spread.size else None
    any_through = seen.index.size > 0
    result = {
        "viewer": viewer.name,
        "eye_mm": list(viewer.eye_mm),
        "wavelengths_nm": list(scene.settings.wavelengths_nm),
        **(place or dict.fromkeys(PLACE_KEYS)),
        "background_ssim": m.background_ssim(cloaked.image, traced["reference"].image,
                                             through_px, encode=linear_to_srgb),
        "background_shift_arcmin": m.percentiles(shift),
        "background_shift_mm": m.percentiles(shift_mm),
        "transmittance": float(np.mean(seen.throughput)) if any_through else None,
        "color_fringe_arcmin": fringe if any_through else None,
        "through_pixels": int(through_px.sum()),
        "background_layer": wall.name,
        **window_measures(scene, viewer, cloaked.through, cloaked.entered, naked.hidden),
    }
    result["verdict"] = m.verdict(result)
    result["verdict_class"] = m.verdict_class(result["verdict"])
    blocked = place is not None and place["blocked_fraction"] > 1.0 - m.WORKS_REPLACED
    result["advice"] = (inside_window_advice(scene, viewer, result["window_deg"]) if blocked
                        else [])
    return result
