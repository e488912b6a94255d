"""The through-window: the patch of view in which the background is seen through all lenses.

An ideal cloak acts on rays as empty space over its own length L (Choi and Howell [1]),
so an eye looking in sees the background only inside the far lens's aperture as seen
down an empty tube of length L: from an eye on the axis at distance d in front of the
first lens, a cone of half-angle R / (d + L) for lenses of radius R. A hidden object
at radius r, z behind the first lens, is seen (without lenses) at r / (d + z) from the
axis: background replaces it only where that direction falls inside the window,

    r / (d + z) < R / (d + L)                                            (1)

(paraxial, eye on the axis; similar triangles on the free-space equivalent of [1]).
Longer viewing distances, larger far lenses and objects nearer the inner lenses favour
it. This module measures the window from a render (any eye, real lenses) and turns (1)
into the change that would bring an object's place inside it.

References
----------
.. [1] J. S. Choi and J. C. Howell, "Paraxial ray optics cloaking", Optics Express
   22(24), 29465-29478 (2014): the four-lens system's matrix equals free space over
   the device length.
"""

from __future__ import annotations

import math

import numpy as np
from cloakview.render.frame.camera import device_direction_planes, pixel_solid_angles
from cloakview.render.scene.model import Scene, Viewer, glass_extent, opaque_radii_mm

#: Eyes farther than this from the axis [mm] get advice to move, not to resize (our choice).
OFF_AXIS_MM = 5.0


def window_measures(scene: Scene, viewer: Viewer, through: np.ndarray, entered: np.ndarray,
                    naked_object: np.ndarray) -> dict:
    """The through-window and the object's apparent size as seen from ``viewer``.

    Parameters
    ----------
    through : ndarray (H, W)
        Share of each pixel's rays that pass the whole device (cloaked view).
    entered : ndarray (H, W)
        Share of each pixel's rays that enter the viewing hole.
    naked_object : ndarray (H, W)
        Object coverage per pixel with the lenses taken out.

    Returns
    -------
    dict
        ``window_deg``: angular radius of a disc of the window's solid angle [deg];
        ``window_panel_mm``: that disc's diameter on the front panel [mm];
        ``window_share``: window solid angle over that of the first lens's clear disc as
        seen through the viewing hole; ``object_inner_deg``, ``object_outer_deg``: the
        object's nearest and farthest pixels from the window centre, without lenses
        [deg] (None without an object in view). The window centre is the solid-angle
        centroid of the through-view, or the direction of the far lens's centre when
        there is none.
    """
    rows, cols = _crop(through, entered, naked_object)
    through, entered, naked_object = (a[rows, cols] for a in (through, entered, naked_object))
    dx, dy, dz = (plane[:, cols] for plane in device_direction_planes(
        viewer, scene.placement, row_range=(rows.start, rows.stop)))
    omega = pixel_solid_angles(viewer, scene.placement, (dx, dy, dz))
    eye = scene.placement.to_device(np.asarray(viewer.eye_mm, float))
    first = scene.system.surfaces[0]
    t = (first.z_mm - eye[2]) / dz
    radius = np.hypot(eye[0] + t * dx, eye[1] + t * dy)
    on_first = (radius <= first.semi_aperture_mm) & (entered >= 0.5)
    seen = omega * through
    window = float(np.sum(seen))
    lens = float(np.sum(omega[on_first]))
    if window > 0.0:
        centre = np.array([np.sum(seen * dx), np.sum(seen * dy), np.sum(seen * dz)])
    else:
        centre = np.array([0.0, 0.0, scene.system.back_z_mm]) - eye
    centre /= np.linalg.norm(centre)
    covered = naked_object >= 0.5
    angle = np.degrees(np.arccos(np.clip(dx[covered] * centre[0] + dy[covered] * centre[1]
                                         + dz[covered] * centre[2], -1.0, 1.0)))
    half = math.sqrt(window / math.pi)
    panel_distance = (scene.housing.panel_z_mm - eye[2]) / centre[2]
    return {"window_deg": math.degrees(half),
            "window_panel_mm": 2.0 * panel_distance * math.tan(half),
            "window_share": window / lens if lens > 0.0 else None,
            "object_inner_deg": float(angle.min()) if angle.size else None,
            "object_outer_deg": float(angle.max()) if angle.size else None}


def _crop(through: np.ndarray, entered: np.ndarray, naked_object: np.ndarray):
    """Row and column slices of the box holding every pixel :func:`window_measures` counts.

    Those are the pixels with rays through the device, half their rays in the viewing
    hole, or half covered by the object without lenses; outside the box every term of
    its sums is zero, so the measures come from the box alone (empty box: empty slices).
    """
    need = (through > 0.0) | (entered >= 0.5) | (naked_object >= 0.5)
    rows, cols = np.flatnonzero(need.any(axis=1)), np.flatnonzero(need.any(axis=0))
    if not rows.size:
        return slice(0, 0), slice(0, 0)
    return slice(rows[0], rows[-1] + 1), slice(cols[0], cols[-1] + 1)


def inside_window_advice(scene: Scene, viewer: Viewer, window_deg: float) -> list[str]:
    """Changes that would bring every hidden object's place inside the window, by (1).

    The window's size is taken from the render (``window_deg`` [deg], which includes the
    vignetting of the inner lenses that the paraxial R / (d + L) leaves out) as an
    effective far-lens radius R' = tan(window) (d + L); where there is no window, R is
    the far lens's radius. For each hidden layer, its farthest visible point r sets what
    is needed: a smaller object, a longer viewing distance, an object nearer the inner
    lenses (if the first gap allows it), or proportionally larger lenses. These are
    estimates for an eye on the axis at ``viewer``'s distance; a render is the check. An
    eye more than :data:`OFF_AXIS_MM` off the axis is told to move nearer it instead.
    """
    eye = scene.placement.to_device(np.asarray(viewer.eye_mm, float))
    off_axis = math.hypot(eye[0], eye[1])
    if off_axis > OFF_AXIS_MM:
        return [f"'{viewer.name}' looks in from {off_axis:.0f} mm off the axis, where the "
                "window narrows and moves off the object's place: bring the eye nearer the "
                "axis (an eye-port or floor mark), then size the object for that viewer."]
    d = scene.system.front_z_mm - eye[2]
    length = scene.system.length_mm
    far = scene.system.surfaces[-1].semi_aperture_mm
    radius = math.tan(math.radians(window_deg)) * (d + length) if window_deg > 0 else far
    radius = min(radius, far)
    gap_end = glass_extent(scene.system.lenses[1])[0] - scene.system.front_z_mm
    panel = scene.housing.panel_z_mm - scene.system.front_z_mm
    advice = []
    for layer in scene.layers:
        if layer.role != "hidden":
            continue
        r = opaque_radii_mm(layer)[1]
        z = layer.z_mm - scene.system.front_z_mm
        fit = radius * (d + z) / (d + length)
        if r <= fit:
            continue
        steps = [f"make '{layer.name}' reach at most {fit:.0f} mm from the axis "
                 f"(now {r:.0f} mm)"]
        if r < radius:  # (1) solved for d, then measured from the panel
            need_d = (r * length - radius * z) / (radius - r)
            steps.append(f"view from at least {(need_d + panel) / 1000:.2f} m in front of the "
                         f"panel (now {(d + panel) / 1000:.2f} m)")
        need_z = (r * (d + length) - radius * d) / radius
        if z < need_z < gap_end:
            steps.append(f"move it to at least {need_z:.0f} mm behind the first lens "
                         f"(now {z:.0f} mm; the first gap ends at {gap_end:.0f} mm)")
        steps.append(f"use lenses of at least {2 * far * r / fit:.0f} mm clear diameter, all "
                     f"four in proportion (now {2 * far:.0f} mm)")
        advice.append(f"To show background where '{layer.name}' was from '{viewer.name}' "
                      "(estimate for an eye on the axis): " + "; or ".join(steps) + ".")
    return advice
