"""The cloaked zone: the part of the device interior that no ray reaching the eyes crosses.

For a set of eye points, dense fans of rays are traced from each eye through the
viewing hole (the tracer records where they cross closely spaced probe planes). A
point at radius r and axial position z is *seen* if some ray crosses that plane at
radius r; everything inside the tube and outside the glass that is never crossed is
hidden from every one of those eyes. Between neighbouring rays of a fan the family of
rays in between covers the radii in between (continuity), so the map marks those
intervals too. The zone is a set of rings around the axis: rotating an object about
the axis does not change whether it is hidden.

References
----------
.. [1] J. S. Choi and J. C. Howell, "Paraxial ray optics cloaking", Optics Express
   22(24), 29465-29478 (2014): ring-shaped cloaked region, axis not cloaked.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from cloakview.optics.materials import D_LINE_NM
from cloakview.optics.surfaces import Probe
from cloakview.optics.trace import Rays, trace
from cloakview.render.scene.model import Scene, glass_extent

RADIAL_STEP_MM = 0.5
AXIAL_STEP_MM = 2.0


@dataclass
class ZoneMap:
    """Seen/hidden map of the interior on an (axial, radial) grid.

    Attributes
    ----------
    z_mm : ndarray (Z,)
        Probe-plane positions [mm].
    r_mm : ndarray (R,)
        Radial bin centres [mm].
    seen : ndarray of bool (Z, R)
        Crossed by at least one ray reaching an eye.
    glass : ndarray of bool (Z,)
        Planes that cut a lens.
    fans : list of ndarray
        A few meridional rays per eye for drawing: (K, Z) radius with sign, NaN after
        the ray stopped.
    """

    z_mm: np.ndarray
    r_mm: np.ndarray
    seen: np.ndarray
    glass: np.ndarray
    fans: list
    axial_step_mm: float = AXIAL_STEP_MM

    @property
    def hidden(self) -> np.ndarray:
        """Inside the tube, outside the glass, and never crossed."""
        return ~self.seen & ~self.glass[:, None]


def _fan_targets(hole_radius: float, radial: int, azimuthal: int) -> np.ndarray:
    r = np.linspace(0.0, hole_radius, radial)
    a = np.linspace(0.0, 2 * np.pi, azimuthal, endpoint=False)
    return np.stack([np.outer(np.cos(a), r), np.outer(np.sin(a), r)], axis=-1)  # (A, R, 2)


def _mark(seen: np.ndarray, radius: np.ndarray, step: float) -> None:
    """Mark the radial bins (1-D ``seen``) covered by a fan of rays (azimuth x radius).

    The gaps between neighbouring rays of the fan count as covered too.
    """
    bins = seen.shape[0]
    for axis in (0, 1):
        a = radius
        b = np.roll(radius, -1, axis=axis)
        if axis == 1:
            b[:, -1] = a[:, -1]
        lo = np.fmin(a, b)
        hi = np.fmax(a, b)
        ok = ~np.isnan(lo)
        first = np.clip((lo[ok] / step).astype(int), 0, bins - 1)
        last = np.clip((hi[ok] / step).astype(int), 0, bins - 1)
        # Mark [first, last] with a difference array, then a cumulative sum.
        diff = np.zeros(bins + 1, np.int64)
        np.add.at(diff, first, 1)
        np.add.at(diff, last + 1, -1)
        seen |= np.cumsum(diff[:-1]) > 0


def cloaked_zone(scene: Scene, eyes_room: np.ndarray, wavelength_nm: float = D_LINE_NM,
                 radial: int = 161, azimuthal: int = 48,
                 axial_step_mm: float = AXIAL_STEP_MM) -> ZoneMap:
    """Trace fans from every eye point (room frame, mm) and map the hidden interior."""
    housing = scene.housing
    z = np.arange(housing.panel_z_mm + axial_step_mm / 2, housing.tube_end_mm, axial_step_mm)
    r = np.arange(RADIAL_STEP_MM / 2, housing.tube_radius_mm, RADIAL_STEP_MM)
    seen = np.zeros((len(z), len(r)), bool)
    glass = np.zeros(len(z), bool)
    for placed in scene.system.lenses:
        lo, hi = glass_extent(placed)
        glass |= (z >= lo) & (z <= hi)
    probes = [Probe(float(zz), f"z{i}") for i, zz in enumerate(z)]
    targets = _fan_targets(housing.hole_radius_mm * 0.999, radial, azimuthal)
    fans = []
    for eye_room in np.atleast_2d(eyes_room):
        eye = scene.placement.to_device(eye_room)
        points = np.concatenate([targets, np.full(targets.shape[:2] + (1,),
                                                  housing.panel_z_mm)], axis=-1)
        directions = points.reshape(-1, 3) - eye
        rays = Rays.from_vectors(np.broadcast_to(eye, directions.shape), directions,
                                 wavelength_nm)
        result = trace(rays, [*scene.system.surfaces, *probes], housing)
        shape = targets.shape[:2]
        meridional = []
        for i, probe in enumerate(probes):
            crossing = result.crossings[probe.name]
            radius = np.hypot(crossing.x, crossing.y).reshape(shape)
            radius[~result.entered.reshape(shape)] = np.nan
            _mark(seen[i], radius, RADIAL_STEP_MM)
            # Signed radius of the rays in the fan's first and opposite azimuths, to draw.
            pick = np.concatenate([crossing.x.reshape(shape)[0, ::10],
                                   crossing.x.reshape(shape)[azimuthal // 2, ::10]])
            meridional.append(pick)
        fans.append(np.array(meridional).T)
    return ZoneMap(z, r, seen, glass, fans, axial_step_mm)


@dataclass
class Ring:
    """A hidden ring: radii [mm] and axial span [mm]."""

    gap: str
    inner_mm: float
    outer_mm: float
    z_start_mm: float
    z_end_mm: float

    @property
    def height_mm(self) -> float:
        """Radial thickness: the tallest object that fits at one side of the axis."""
        return self.outer_mm - self.inner_mm

    @property
    def length_mm(self) -> float:
        """Axial length."""
        return self.z_end_mm - self.z_start_mm


def _largest_rectangle(mask: np.ndarray) -> tuple[int, int, int, int] | None:
    """Largest all-True axis-aligned rectangle (row0, row1, col0, col1), exclusive ends."""
    rows, cols = mask.shape
    heights = np.zeros(cols, int)
    best, best_area = None, 0
    for i in range(rows):
        heights = np.where(mask[i], heights + 1, 0)
        stack: list[int] = []
        for j in range(cols + 1):
            h = heights[j] if j < cols else 0
            while stack and heights[stack[-1]] >= h:
                k = stack.pop()
                left = stack[-1] + 1 if stack else 0
                area = heights[k] * (j - left)
                if area > best_area:
                    best_area, best = area, (i - heights[k] + 1, i + 1, left, j)
            stack.append(j)
    return best


def largest_rings(zone: ZoneMap, scene: Scene) -> list[Ring]:
    """The largest hidden ring (by cross-section area) in each air gap between lenses."""
    extents = [glass_extent(p) for p in scene.system.lenses]
    edges = [(a[1], b[0]) for a, b in zip(extents, extents[1:], strict=False)]
    names = [f"L{i + 1}-L{i + 2}" for i in range(len(extents) - 1)]
    rings = []
    hidden = zone.hidden
    for name, (lo, hi) in zip(names, edges, strict=True):
        rows = np.flatnonzero((zone.z_mm > lo) & (zone.z_mm < hi))
        if rows.size == 0:
            continue
        found = _largest_rectangle(hidden[rows])
        if found is None:
            continue
        r0, r1, c0, c1 = found
        half = zone.axial_step_mm / 2
        rings.append(Ring(name, c0 * RADIAL_STEP_MM, c1 * RADIAL_STEP_MM,
                          float(zone.z_mm[rows[r0]] - half), float(zone.z_mm[rows[r1 - 1]] + half)))
    return rings
