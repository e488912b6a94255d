"""The visitor's eye as a camera: one ray per sample (pixel x supersample x pupil point).

The eye is a pinhole, or a round pupil sampled on a Vogel spiral with every sample
ray aimed through the same point on the plane of focus (the look-at distance), so
that things nearer or farther than that blur as they do for an eye.

References
----------
.. [1] H. Vogel, "A better way to construct the sunflower head", Mathematical
   Biosciences 44, 179-189 (1979): evenly spread points on a disc.
.. [2] M. Pharr, W. Jakob, G. Humphreys, Physically Based Rendering, 3rd ed.
   (2016), sec. 6.2.3: thin-lens camera model (focus plane, lens samples).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from cloakview.optics.trace import Rays
from cloakview.render.frame.composite import reference_path
from cloakview.render.scene.model import Placement, Viewer


@dataclass(frozen=True)
class SampleGrid:
    """Shape of the sample array: pupil points x rows x columns (rows = height x s)."""

    pupil: int
    rows: int
    columns: int
    supersample: int

    @property
    def count(self) -> int:
        """Number of rays."""
        return self.pupil * self.rows * self.columns


def _basis(viewer: Viewer) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Forward, right and up unit vectors of the eye in the room frame.

    right = world up (0, 1, 0) x forward and up = forward x right, the cross products
    written out (a sweep point asks for the basis several times, and ``np.cross`` on
    3-vectors costs more than the arithmetic).
    """
    forward = np.subtract(viewer.look_at_mm, viewer.eye_mm, dtype=float)
    forward /= math.sqrt(forward @ forward)
    fx, fy, fz = forward
    level = math.hypot(fz, fx)
    if level < 1e-9:  # looking straight up or down
        rx, rz = 1.0, 0.0
    else:
        rx, rz = fz / level, -fx / level
    right = np.array([rx, 0.0, rz])
    return forward, right, np.array([fy * rz, fz * rx - fx * rz, -fy * rx])


def _direction_planes(viewer: Viewer, supersample: int, row_range=None, basis=None):
    """Pinhole unit directions as x, y and z planes (each rows x columns), row 0 at the top.

    ``row_range`` = (first, stop) limits the sample rows (of height x supersample);
    ``basis`` = (forward, right, up) gives the eye's axes in the wanted frame (default
    the room frame).
    """
    forward, right, up = basis if basis is not None else _basis(viewer)
    cols, rows = viewer.width_px * supersample, viewer.height_px * supersample
    first, stop = row_range or (0, rows)
    half = math.tan(math.radians(viewer.fov_deg) / 2.0)
    if not reference_path():  # the compiled pass; the numpy below is the reference
        from cloakview.render.frame import camera_kernel

        out = np.empty((3, stop - first, cols))
        camera_kernel.direction_planes(np.asarray(forward, float), np.asarray(right, float),
                                       np.asarray(up, float), half, rows, cols, first, out)
        return out[0], out[1], out[2]
    px = ((np.arange(cols) + 0.5) / cols * 2.0 - 1.0) * half
    py = (1.0 - (np.arange(first, stop) + 0.5) / rows * 2.0) * half * rows / cols
    # The basis is orthonormal, so |forward + px right + py up|^2 = 1 + px^2 + py^2.
    scale = 1.0 / np.sqrt(1.0 + px[None, :] ** 2 + py[:, None] ** 2)
    return tuple((forward[k] + px[None, :] * right[k] + py[:, None] * up[k]) * scale
                 for k in range(3))


def device_direction_planes(viewer: Viewer, placement: Placement, supersample: int = 1,
                            row_range=None):
    """The x, y and z components (each rows x columns) of :func:`device_directions`."""
    basis = tuple(placement.directions_to_device(v) for v in _basis(viewer))
    return _direction_planes(viewer, supersample, row_range, basis)


def device_directions(viewer: Viewer, placement: Placement, supersample: int = 1,
                      row_range=None) -> np.ndarray:
    """Pinhole unit directions (rows, columns, 3) of ``viewer``'s samples, in the device frame."""
    return np.stack(device_direction_planes(viewer, placement, supersample, row_range), axis=-1)


def pixel_solid_angles(viewer: Viewer, placement: Placement, planes) -> np.ndarray:
    """Solid angle [sr] of each pixel of ``viewer``, from its device-frame direction ``planes``.

    ``planes`` are the x, y and z components of the pixels' directions
    (:func:`device_direction_planes`). On the image plane at unit distance a pixel is a
    square of side 2 tan(fov/2) / width; seen from the eye it spans that area times cos^3
    of its angle off the gaze (the inverse square law and the obliquity of a flat image
    plane, e.g. Pharr, Jakob and Humphreys [2], sec. 5.5).
    """
    forward = placement.directions_to_device(_basis(viewer)[0])
    side = 2.0 * math.tan(math.radians(viewer.fov_deg) / 2.0) / viewer.width_px
    cosine = planes[0] * forward[0] + planes[1] * forward[1] + planes[2] * forward[2]
    return side * side * cosine ** 3


def _pupil_offsets(viewer: Viewer) -> np.ndarray:
    """Pupil sample points (P, 2) in mm, Vogel spiral [1]."""
    count = viewer.pupil_samples if viewer.pupil_mm > 0 else 1
    if count == 1:
        return np.zeros((1, 2))
    k = np.arange(count)
    radius = viewer.pupil_mm / 2.0 * np.sqrt((k + 0.5) / count)
    angle = k * math.pi * (3.0 - math.sqrt(5.0))
    return np.stack([radius * np.cos(angle), radius * np.sin(angle)], axis=1)


def camera_rays(viewer: Viewer, placement: Placement, supersample: int,
                wavelength_nm: float, row_range=None) -> tuple[Rays, SampleGrid]:
    """Rays for every sample of ``viewer``, in the device frame.

    Parameters
    ----------
    viewer : Viewer
        Eye point, gaze, field of view [deg], image size, pupil [mm].
    placement : Placement
        Where the device stands in the room.
    supersample : int
        Samples per pixel along each axis.
    wavelength_nm : float
        Wavelength given to every ray [nm].
    row_range : tuple of int, optional
        (first, stop) sample rows to make, for rendering in bands.
    """
    offsets = _pupil_offsets(viewer)
    eye = placement.to_device(np.asarray(viewer.eye_mm, float))
    if len(offsets) == 1:  # a pinhole: the direction planes are the rays' components
        planes = device_direction_planes(viewer, placement, supersample, row_range)
        rows, cols = planes[0].shape
        count = rows * cols
        # Values shared by every ray are read-only broadcasts, not filled arrays.
        same = [np.broadcast_to(np.float64(value), (count,))
                for value in (*eye, wavelength_nm, 1.0)]
        rays = Rays(*same[:3], *(plane.reshape(-1) for plane in planes), *same[3:])
        return rays, SampleGrid(1, rows, cols, supersample)
    directions = device_directions(viewer, placement, supersample, row_range)
    rows, cols = directions.shape[:2]
    forward, right, up = (placement.directions_to_device(v) for v in _basis(viewer))
    focus = np.linalg.norm(np.asarray(viewer.look_at_mm, float) - np.asarray(viewer.eye_mm))
    # Every pupil sample aims at the pinhole ray's point on the plane of focus [2].
    targets = eye + directions * (focus / (directions @ forward))[..., None]
    starts = eye + offsets[:, 0, None] * right + offsets[:, 1, None] * up
    origins = np.broadcast_to(starts[:, None, None, :], (len(offsets), rows, cols, 3))
    rays = Rays.from_vectors(origins.reshape(-1, 3), (targets[None] - origins).reshape(-1, 3),
                             wavelength_nm)
    return rays, SampleGrid(len(offsets), rows, cols, supersample)
