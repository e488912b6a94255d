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

import itertools
from dataclasses import dataclass

import numpy as np
from cloakview.optics.surfaces import Probe
from cloakview.optics.trace import Rays, trace
from cloakview.render.scene.model import Layer, Scene, glass_extent, opaque_radii_mm

RADIAL_STEP_MM = 0.5
AXIAL_STEP_MM = 2.0


@dataclass
class ZoneMap:
    """Seen/hidden map of the interior on an (axial, radial) grid.

    Attributes
    ----------
    z_mm : ndarray (Z,)
        Slab centres [mm]; each slab spans ``axial_step_mm``.
    r_mm : ndarray (R,)
        Radial bin centres [mm].
    seen : ndarray of bool (Z, R)
        Crossed by at least one ray reaching an eye.
    glass : ndarray of bool (Z,)
        Slabs that hold any glass of a lens.
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


def _mark(seen: np.ndarray, lo: np.ndarray, hi: np.ndarray, step: float) -> None:
    """Mark the radial bins (1-D ``seen``) that a fan of rays (azimuth x radius) covers.

    Ray k covers radii ``lo[k]`` to ``hi[k]`` within the slab; the family of rays between
    two neighbours of the fan covers the span of both (continuity), so that counts too.
    """
    bins = seen.shape[0]
    for axis in (0, 1):
        lo_b = np.roll(lo, -1, axis=axis)
        hi_b = np.roll(hi, -1, axis=axis)
        if axis == 1:
            lo_b[:, -1], hi_b[:, -1] = lo[:, -1], hi[:, -1]
        first_r = np.fmin(lo, lo_b)
        last_r = np.fmax(hi, hi_b)
        ok = ~np.isnan(first_r) & ~np.isnan(last_r)
        first = np.clip((first_r[ok] / step).astype(int), 0, bins - 1)
        last = np.clip((last_r[ok] / step).astype(int), 0, bins - 1)
        # Mark [first, last] with a difference array, then a cumulative sum.
        diff = np.zeros(bins + 1, np.int64)
        np.add.at(diff, first, 1)
        np.add.at(diff, last + 1, -1)
        seen |= np.cumsum(diff[:-1]) > 0


def _fan_rays(eye, radii: np.ndarray, azimuths: np.ndarray, panel_z: float,
              wavelength_nm: float) -> Rays:
    """Rays from ``eye`` (device frame) aimed at points (radius, azimuth) of the panel plane."""
    points = np.stack([radii * np.cos(azimuths), radii * np.sin(azimuths),
                       np.full(radii.shape, panel_z)], axis=-1).reshape(-1, 3)
    directions = points - eye
    return Rays.from_vectors(np.broadcast_to(eye, directions.shape), directions, wavelength_nm)


def _reach(scene: Scene, rays: Rays, edges: np.ndarray) -> np.ndarray:
    """How many slab edges each ray crosses before it stops (all of them if it passes)."""
    result = trace(rays, scene.system.surfaces, scene.housing)
    stop = np.where(result.passed, np.inf, result.z)
    stop[~result.entered] = -np.inf
    return np.searchsorted(edges, stop)


def _edge_radii(scene: Scene, eye, radii: np.ndarray, azimuths: np.ndarray, edges,
                wavelength_nm: float, iterations: int = 40) -> list[np.ndarray]:
    """Per azimuth, the fan's radii plus the radii where a ray stops reaching a slab edge.

    Wherever two neighbouring rays of the fan cross different numbers of slab edges (one
    clipped by the panel hole, a lens rim or the tube, the other not), the boundary
    between them is found by bisection, and the rays on both sides of it join the fan:
    the ray grazing an aperture's edge is the one that reaches farthest out.
    """
    panel = scene.housing.panel_z_mm
    grid_r = np.broadcast_to(radii, (len(azimuths), len(radii)))
    grid_a = np.broadcast_to(azimuths[:, None], grid_r.shape)
    reach = _reach(scene, _fan_rays(eye, grid_r, grid_a, panel, wavelength_nm),
                   edges).reshape(grid_r.shape)
    rows, cols = np.nonzero(reach[:, :-1] != reach[:, 1:])
    lo, hi = radii[cols].copy(), radii[cols + 1].copy()
    angle, inner = azimuths[rows], reach[rows, cols]
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        same = _reach(scene, _fan_rays(eye, mid, angle, panel, wavelength_nm), edges) == inner
        lo, hi = np.where(same, mid, lo), np.where(same, hi, mid)
    per_azimuth = []
    for a in range(len(azimuths)):
        pick = rows == a
        per_azimuth.append(np.unique(np.concatenate([radii, lo[pick], hi[pick]])))
    return per_azimuth


def cloaked_zone(scene: Scene, eyes_room: np.ndarray, wavelengths_nm=None,
                 radial: int = 161, azimuthal: int = 48,
                 axial_step_mm: float = AXIAL_STEP_MM) -> ZoneMap:
    """Trace fans from every eye point (room frame, mm) and map the hidden interior.

    A point is seen if a ray of any of ``wavelengths_nm`` (default the scene's) crosses
    it: colours bend differently in real glass, and each is seen.

    The interior is cut into slabs ``axial_step_mm`` long; a slab counts as seen at a
    radius if any ray crosses that radius anywhere inside it: each ray covers the
    radii from its closest approach to the axis within the slab to the larger of its
    radii where it enters and leaves it (or where it stops, on the tube wall), and
    fans include the rays that graze every aperture edge (:func:`_edge_radii`).
    """
    housing = scene.housing
    edges = np.arange(housing.panel_z_mm, housing.tube_end_mm + axial_step_mm / 2,
                      axial_step_mm)
    z = 0.5 * (edges[:-1] + edges[1:])
    r = np.arange(RADIAL_STEP_MM / 2, housing.tube_radius_mm, RADIAL_STEP_MM)
    seen = np.zeros((len(z), len(r)), bool)
    glass = np.zeros(len(z), bool)
    for placed in scene.system.lenses:
        lo, hi = glass_extent(placed)
        glass |= (edges[1:] >= lo) & (edges[:-1] <= hi)
    probes = [Probe(float(zz), f"z{i}") for i, zz in enumerate(edges)]
    # The fan reaches just past the hole, so its edge is among the bisected boundaries.
    radii = np.append(np.linspace(0.0, housing.hole_radius_mm * 0.999, radial),
                      housing.hole_radius_mm * 1.02)
    azimuths = np.linspace(0.0, 2 * np.pi, azimuthal, endpoint=False)
    fans = []
    wavelengths = scene.settings.wavelengths_nm if wavelengths_nm is None else wavelengths_nm
    for eye_room, wavelength_nm in itertools.product(np.atleast_2d(eyes_room), wavelengths):
        eye = scene.placement.to_device(eye_room)
        per_azimuth = _edge_radii(scene, eye, radii, azimuths, edges, wavelength_nm)
        width = max(len(p) for p in per_azimuth)
        fan_r = np.stack([np.pad(p, (0, width - len(p)), mode="edge") for p in per_azimuth])
        fan_a = np.broadcast_to(azimuths[:, None], fan_r.shape)
        result = trace(_fan_rays(eye, fan_r, fan_a, housing.panel_z_mm, wavelength_nm),
                       [*scene.system.surfaces, *probes], housing)
        shape = fan_r.shape
        stop_z = np.where(result.passed, np.inf, result.z).reshape(shape)
        stop_x, stop_y = result.x.reshape(shape), result.y.reshape(shape)
        entered = result.entered.reshape(shape)
        xs = [result.crossings[p.name].x.reshape(shape) for p in probes]
        ys = [result.crossings[p.name].y.reshape(shape) for p in probes]
        meridional = []
        for i in range(len(z)):
            ax, ay = xs[i], ys[i]
            inside = (stop_z > edges[i]) & (stop_z < edges[i + 1])
            bx = np.where(np.isnan(xs[i + 1]) & inside, stop_x, xs[i + 1])
            by = np.where(np.isnan(ys[i + 1]) & inside, stop_y, ys[i + 1])
            dx, dy = bx - ax, by - ay
            with np.errstate(invalid="ignore", divide="ignore"):
                s = np.clip(-(ax * dx + ay * dy) / (dx * dx + dy * dy), 0.0, 1.0)
            s = np.where(np.isfinite(s), s, 0.0)
            hi = np.fmax(np.hypot(ax, ay), np.hypot(bx, by))
            lo = np.hypot(ax + s * dx, ay + s * dy)
            lo[~entered | np.isnan(ax)] = np.nan
            hi[~entered | np.isnan(ax)] = np.nan
            _mark(seen[i], lo, hi, RADIAL_STEP_MM)
            # Signed radius of a few rays in the fan's first and opposite azimuths, to draw.
            centre = 0.5 * (ax + xs[i + 1])
            meridional.append(np.concatenate([centre[0, ::10], centre[azimuthal // 2, ::10]]))
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
        rings.append(Ring(name, c0 * RADIAL_STEP_MM,
                          min(c1 * RADIAL_STEP_MM, scene.housing.tube_radius_mm),
                          float(zone.z_mm[rows[r0]] - half), float(zone.z_mm[rows[r1 - 1]] + half)))
    return rings


def object_fit(zone: ZoneMap, layer: Layer) -> tuple[bool, float]:
    """Whether a hidden layer's visible radii lie in the hidden zone at its own slab.

    Returns (fits, by how many mm the seen region reaches into the object's radial span:
    0 when it fits).
    """
    r_in, r_out = opaque_radii_mm(layer)
    i = int(np.argmin(np.abs(zone.z_mm - layer.z_mm)))
    lo = zone.r_mm - RADIAL_STEP_MM / 2
    hi = zone.r_mm + RADIAL_STEP_MM / 2
    inside = (hi > r_in) & (lo < r_out)
    seen = inside & ~zone.hidden[i]
    if not seen.any():
        return True, 0.0
    from_inner = min(float(hi[seen].max()), r_out) - r_in
    from_outer = r_out - max(float(lo[seen].min()), r_in)
    return False, min(from_inner, from_outer)
