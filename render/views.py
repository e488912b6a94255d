"""Render one viewer's views and measure them.

Views: ``cloaked`` (the exhibit as built), ``naked`` (the same housing and objects
with the lenses taken out), ``reference`` (the room with no device and no hidden
objects: what a perfect cloak would show), ``difference`` (a heat map of cloaked
against reference) and ``vanish`` (the cloaked view with the object's outline as it
would be seen without lenses, and which parts of it vanish or still show).
"""

from __future__ import annotations

import dataclasses
import time
from dataclasses import dataclass

import cv2
import numpy as np

from optics.materials import nearest_to_d_line
from optics.surfaces import Refracting
from optics.trace import Rays
from render import metrics as m
from render.camera import camera_rays
from render.composite import (
    TexturePyramids,
    channel_weights,
    composite_rays,
    resolve_samples,
)
from render.images import linear_to_srgb, to_uint8
from render.mapper import SETUPS, map_rays
from render.scene import Scene, Viewer

VIEW_NAMES = ("cloaked", "reference", "naked", "difference", "vanish")
#: Overlay colours of the vanish view (sRGB, our own palette).
VANISHED_RGB = (0.12, 0.71, 0.66)
SHOWING_RGB = (0.91, 0.33, 0.23)
OUTLINE_RGB = (1.0, 0.86, 0.25)


@dataclass
class ViewerRender:
    """Images (8-bit sRGB) and metrics of one viewer."""

    viewer: Viewer
    images: dict[str, np.ndarray]
    metrics: dict
    seconds: float


#: Rays per band: frames are traced and composited in bands of rows of about this many
#: rays, so a 4K frame stays within a few hundred megabytes (our own choice).
BAND_RAYS = 400_000


@dataclass
class RayRecord:
    """What the metrics need of the kept rays at one wavelength, over all bands.

    ``index`` numbers the rays of the frame (the same in every view); the cloaked view
    keeps only rays that pass through the device, the others keep every ray.
    """

    index: np.ndarray
    throughput: np.ndarray
    wall_x: np.ndarray
    wall_y: np.ndarray


@dataclass
class TracedView:
    """One traced view: linear image, per-pixel coverages and per-ray records."""

    image: np.ndarray
    hidden: np.ndarray
    entered: np.ndarray
    through: np.ndarray
    records: dict[float, RayRecord]


def _bands(viewer: Viewer, supersample: int):
    rows = viewer.height_px * supersample
    per_row = viewer.width_px * supersample * max(viewer.pupil_samples, 1)
    step = max(supersample, BAND_RAYS // per_row // supersample * supersample)
    return [(r, min(r + step, rows)) for r in range(0, rows, step)]


def _subset(rays: Rays, rows: np.ndarray) -> Rays:
    return Rays(*(getattr(rays, f.name)[rows] for f in dataclasses.fields(Rays)))


def _trace_view(scene, viewer, setup, wavelengths, pyramids, supersample) -> TracedView:
    """Trace and composite one view band by band; keep what the metrics need.

    With real lenses, the design wavelength is traced first for every ray; the other
    wavelengths re-trace only the rays that entered the device (the rest meet no
    glass, so their colour does not depend on wavelength) and reuse its mip levels.
    """
    weights = channel_weights(wavelengths)
    dispersive = setup.lenses and any(isinstance(s, Refracting) for s in scene.system.surfaces)
    design = nearest_to_d_line(wavelengths)
    order = sorted(wavelengths if dispersive else (design,), key=lambda w: w != design)
    kept = {design, min(order), max(order)}
    wall = _front_background(scene).name
    h, w = viewer.height_px, viewer.width_px
    image = np.zeros((h, w, 3), np.float32)
    cover = {name: np.zeros((h, w), np.float32) for name in ("hidden", "entered", "through")}
    parts = {wl: [] for wl in kept}
    offset = 0
    for r0, r1 in _bands(viewer, supersample):
        rays, grid = camera_rays(viewer, scene.placement, supersample, design, (r0, r1))
        shape = (grid.pupil, grid.rows, grid.columns)
        rows = slice(r0 // supersample, r1 // supersample)
        ray_map = map_rays(scene, rays, setup)
        base, hidden, levels = composite_rays(scene, ray_map, pyramids, shape)
        entered = np.flatnonzero(ray_map.result.entered)
        cover["hidden"][rows] = resolve_samples(hidden, shape, supersample)[..., 0]
        for name, values in (("entered", ray_map.result.entered),
                             ("through", ray_map.through_device)):
            cover[name][rows] = resolve_samples(values.astype(np.float32), shape,
                                                supersample)[..., 0]
        for wl in order:
            if wl == design:
                rgb, sub_map, ids = base, ray_map, np.arange(len(rays))
            else:
                sub = _subset(rays, entered)
                sub.wavelength_nm[:] = wl
                sub_map = map_rays(scene, sub, setup)
                sub_rgb, _, _ = composite_rays(scene, sub_map, pyramids, levels={
                    name: level[entered] for name, level in levels.items()})
                rgb = base.copy()
                rgb[entered] = sub_rgb
                ids = entered
            weight = weights[list(wavelengths).index(wl)] if dispersive else 1.0
            image[rows] += resolve_samples(rgb, shape, supersample) * weight
            if wl in kept:
                through = np.flatnonzero(sub_map.through_device) if setup.lenses else slice(None)
                crossing = sub_map.result.crossings[wall]
                parts[wl].append((offset + ids[through], sub_map.result.throughput[through],
                                  crossing.x[through], crossing.y[through]))
        offset += grid.count
    records = {wl: RayRecord(*(np.concatenate(column) for column in zip(*chunks,
                                                                        strict=True)))
               for wl, chunks in parts.items()}
    return TracedView(image, cover["hidden"], cover["entered"], cover["through"], records)


def _front_background(scene: Scene):
    return min((layer for layer in scene.layers if layer.role == "background"),
               key=lambda layer: layer.z_mm)


def _difference_image(cloaked_srgb, reference_srgb, inside_hole) -> np.ndarray:
    """Heat map of cloaked against reference where the eye looks into the viewing hole.

    Elsewhere (panel, tube, room) the cloaked view in dim grey, for orientation.
    """
    diff = np.abs(cloaked_srgb - reference_srgb).max(axis=-1)
    heat = cv2.applyColorMap(np.round(np.clip(diff, 0, 1) * 255).astype(np.uint8),
                             cv2.COLORMAP_INFERNO)[..., ::-1]
    grey = np.round(255 * (0.15 + 0.35 * cloaked_srgb.mean(axis=-1))).astype(np.uint8)
    image = np.where(inside_hole[..., None], heat, grey[..., None])
    return _with_legend(image, "in the viewing hole: black = unchanged, yellow = fully "
                        "different")


def _with_legend(image: np.ndarray, text: str) -> np.ndarray:
    h, w = image.shape[:2]
    strip = max(14, h // 18)
    out = np.concatenate([image, np.full((strip, w, 3), 24, np.uint8)], axis=0)
    scale = strip / 30.0
    width = cv2.getTextSize(text, cv2.FONT_HERSHEY_SIMPLEX, scale, 1)[0][0]
    scale *= min(1.0, (w - 8) / width)  # shrink to fit narrow images
    cv2.putText(out, text, (4, h + int(strip * 0.72)), cv2.FONT_HERSHEY_SIMPLEX, scale,
                (235, 235, 235), 1, cv2.LINE_AA)
    return out


def _vanish_image(cloaked_srgb, cloaked_cov, naked_cov) -> np.ndarray:
    base = 0.2 + 0.6 * cloaked_srgb  # the view itself, softened so the overlay reads
    outline_mask = (naked_cov >= 0.5).astype(np.uint8)
    vanished = (naked_cov >= 0.5) & (cloaked_cov < 0.5)
    showing = cloaked_cov >= 0.5
    out = base.copy()
    out[vanished] = 0.45 * out[vanished] + 0.55 * np.array(VANISHED_RGB)
    out[showing] = 0.3 * out[showing] + 0.7 * np.array(SHOWING_RGB)
    image = np.round(np.clip(out, 0, 1) * 255).astype(np.uint8)
    contours, _ = cv2.findContours(outline_mask, cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    colour = tuple(int(c * 255) for c in OUTLINE_RGB)
    cv2.drawContours(image, contours, -1, colour, max(1, image.shape[0] // 240), cv2.LINE_AA)
    return _with_legend(image, "outline: object without lenses   teal: vanished   "
                        "red: still seen")


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
    traced = {}
    for name, setup in SETUPS.items():
        traced[name] = _trace_view(scene, viewer, setup, scene.settings.wavelengths_nm,
                                   pyramids, ss)
        if progress:
            progress(f"{viewer.name}: {name}")
    srgb = {name: linear_to_srgb(t.image) for name, t in traced.items()}
    metrics = _measure(scene, viewer, traced, srgb)
    images = {}
    for name in views:
        if name in traced:
            images[name] = to_uint8(traced[name].image)
        elif name == "difference":
            images[name] = _difference_image(srgb["cloaked"], srgb["reference"],
                                             traced["cloaked"].entered >= 0.5)
        elif name == "vanish":
            images[name] = _vanish_image(srgb["cloaked"], traced["cloaked"].hidden,
                                         traced["naked"].hidden)
    return ViewerRender(viewer, images, metrics, time.perf_counter() - start)


def _measure(scene, viewer, traced, srgb) -> dict:
    cloaked = traced["cloaked"]
    records = cloaked.records
    seen = records[nearest_to_d_line(list(records))]
    ref = next(iter(traced["reference"].records.values()))
    through_px = cloaked.through >= 0.999
    hidden, ratio = m.hidden_fraction(cloaked.hidden, traced["naked"].hidden)
    wall = _front_background(scene)
    eye = scene.placement.to_device(np.asarray(viewer.eye_mm, float))
    rx, ry = ref.wall_x[seen.index], ref.wall_y[seen.index]
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
        "hidden_fraction": hidden,
        "object_seen_ratio": ratio,
        "background_ssim": m.background_ssim(srgb["cloaked"], srgb["reference"], through_px),
        "background_shift_arcmin": m.percentiles(shift),
        "background_shift_mm": m.percentiles(shift_mm),
        "transmittance": float(np.mean(seen.throughput)) if any_through else None,
        "color_fringe_arcmin": fringe if any_through else None,
        "through_pixels": int(through_px.sum()),
        "background_layer": wall.name,
    }
    result["verdict"] = m.verdict(result)
    return result
