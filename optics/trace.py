"""The exact real-ray tracer: the one place in cloakview where rays meet surfaces.

Rays travel toward +z (from the visitor's eye into the scene: backward with
respect to the light, which geometric optics allows because paths and
Fresnel losses are reversible). Each ray is a row in a structure of arrays;
the trace is vectorised over rays and walks the elements in z order.

A ray that cannot go on is not an error: it stops, and its *fate* says why.

================  =====  ======================================================
fate              code   meaning
================  =====  ======================================================
``PASSED``        0      went through every element
``MOUNT``         1      landed outside a lens's clear aperture (its mount)
``WALL``          2      struck the tube, from inside or from outside
``PANEL``         3      struck the front panel around the viewing hole
``TIR``           4      total internal reflection
``BACKWARD``      5      direction turned away from +z
================  =====  ======================================================

References
----------
.. [1] W. T. Welford, Aberrations of Optical Systems (Adam Hilger, 1986),
   sec. 4.3: ray-sphere intersection t = F / (G + sqrt(G^2 - c F)) with
   F = c (x^2 + y^2), G = N - c (x L + y M) at the vertex plane.
.. [2] A. S. Glassner (ed.), An Introduction to Ray Tracing (1989), ch. 6
   (Heckbert): vector form of Snell's law
   t = eta d + (eta cos_i - cos_t) n with eta = n1 / n2 (here with the
   normal oriented along the ray).
.. [3] E. Hecht, Optics, 5th ed. (2017), sec. 4.6 (Fresnel equations).
"""

from __future__ import annotations

import functools
import os
from dataclasses import dataclass

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.optics.fresnel import unpolarised_transmittance
from cloakview.optics.materials import Material
from cloakview.optics.surfaces import Housing, IdealLens, Probe, Refracting

PASSED, MOUNT, WALL, PANEL, TIR, BACKWARD = range(6)
FATE_NAMES = ("passed", "mount", "wall", "panel", "tir", "backward")


@dataclass
class Rays:
    """Rays as a structure of arrays (all 1-D, one entry per ray, float64).

    Attributes
    ----------
    x, y, z : ndarray
        Start points [mm] in the device frame.
    dx, dy, dz : ndarray
        Unit direction cosines.
    wavelength_nm : ndarray
        Wavelength of each ray [nm].
    throughput : ndarray
        Carried power fraction (1 at the start).
    """

    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    dx: np.ndarray
    dy: np.ndarray
    dz: np.ndarray
    wavelength_nm: np.ndarray
    throughput: np.ndarray

    @classmethod
    def from_vectors(cls, origins, directions, wavelength_nm) -> Rays:
        """Build rays from (N, 3) origins [mm] and directions (normalised here).

        ``wavelength_nm`` is a scalar or an (N,) array [nm].
        """
        o = np.asarray(origins, dtype=np.float64).reshape(-1, 3)
        d = np.asarray(directions, dtype=np.float64).reshape(-1, 3)
        o, d = np.broadcast_arrays(o, d)
        d = d / np.linalg.norm(d, axis=1, keepdims=True)
        count = len(d)
        wl = np.broadcast_to(np.asarray(wavelength_nm, np.float64), (count,)).copy()
        return cls(*(np.ascontiguousarray(o[:, i]) for i in range(3)),
                   *(np.ascontiguousarray(d[:, i]) for i in range(3)),
                   wl, np.ones(count))

    def __len__(self) -> int:
        return len(self.x)


@dataclass
class Crossing:
    """Where each ray crossed a probe plane: NaN for rays that did not reach it.

    Attributes
    ----------
    x, y : ndarray
        Crossing point [mm] in the device frame.
    throughput : ndarray
        Power fraction the ray carried there.
    """

    x: np.ndarray
    y: np.ndarray
    throughput: np.ndarray

    @property
    def reached(self) -> np.ndarray:
        """Mask of the rays that reached the plane."""
        return ~np.isnan(self.x)


@dataclass
class TraceResult:
    """End state of every ray.

    Attributes
    ----------
    x, y, z, dx, dy, dz : ndarray
        Where each ray stopped (or, if it passed, where it met the last
        element) [mm], and its direction there.
    throughput : ndarray
        Power fraction at the end.
    fate : ndarray of int8
        Why the ray stopped (see the module table).
    entered : ndarray of bool
        True for rays that went through the viewing hole into the device
        (all rays when there is no housing).
    crossings : dict of str to Crossing
        One record per probe plane.
    """

    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    dx: np.ndarray
    dy: np.ndarray
    dz: np.ndarray
    throughput: np.ndarray
    fate: np.ndarray
    entered: np.ndarray
    crossings: dict[str, Crossing]

    @property
    def passed(self) -> np.ndarray:
        """Mask of rays that went through every element."""
        return self.fate == PASSED


class _Bundle:
    """Compact arrays of the rays still travelling in one group."""

    __slots__ = ("ids", "x", "y", "z", "dx", "dy", "dz", "tp", "wl", "stop_z")

    def __init__(self, ids, x, y, z, dx, dy, dz, tp, wl, stop_z):
        self.ids, self.x, self.y, self.z = ids, x, y, z
        self.dx, self.dy, self.dz, self.tp, self.wl, self.stop_z = dx, dy, dz, tp, wl, stop_z

    def take(self, keep: np.ndarray) -> _Bundle:
        return _Bundle(*(getattr(self, name)[keep] for name in self.__slots__))

    def __len__(self) -> int:
        return len(self.ids)

    def move_to_plane(self, z_mm: float) -> None:
        t = (z_mm - self.z) / self.dz
        self.x += t * self.dx
        self.y += t * self.dy
        self.z[:] = z_mm

    def move_by(self, t: np.ndarray, rows: np.ndarray) -> None:
        self.x[rows] += t * self.dx[rows]
        self.y[rows] += t * self.dy[rows]
        self.z[rows] += t * self.dz[rows]


class _Output:
    """Full-size result arrays that rays are written into as they stop."""

    def __init__(self, count: int):
        self.state = {name: np.full(count, np.nan) for name in
                      ("x", "y", "z", "dx", "dy", "dz", "tp")}
        self.fate = np.zeros(count, np.int8)

    def retire(self, bundle: _Bundle, rows: np.ndarray, fate: int) -> _Bundle:
        """Write ``rows`` of ``bundle`` as stopped with ``fate``; return the rest."""
        if not rows.any():
            return bundle
        ids = bundle.ids[rows]
        for name in ("x", "y", "z", "dx", "dy", "dz"):
            self.state[name][ids] = getattr(bundle, name)[rows]
        self.state["tp"][ids] = bundle.tp[rows]
        self.fate[ids] = fate
        return bundle.take(~rows)


def _index_table(material: Material, wavelengths: np.ndarray):
    """Indices per distinct wavelength; a scalar when there is one wavelength."""
    values = np.asarray(material.index(wavelengths), dtype=np.float64)
    return float(values[0]) if values.size == 1 else values


def _lookup(table, bundle: _Bundle):
    return table if np.isscalar(table) else table[bundle.wl]


def _refract(bundle: _Bundle, surface: Refracting, wavelengths, out: _Output) -> _Bundle:
    """Intersect a sphere or plane, clip at the aperture, refract; Welford [1], Glassner [2]."""
    bundle.move_to_plane(surface.z_mm)
    c = surface.curvature_per_mm
    x, y = bundle.x, bundle.y
    if c != 0.0:
        f = c * (x * x + y * y)
        g = bundle.dz - c * (x * bundle.dx + y * bundle.dy)
        disc = g * g - c * f
        missed = disc < 0.0
        bundle = out.retire(bundle, missed, MOUNT)
        if missed.any():
            f, g, disc = f[~missed], g[~missed], disc[~missed]
        t = f / (g + np.sqrt(disc))
        bundle.x += t * bundle.dx
        bundle.y += t * bundle.dy
        bundle.z += t * bundle.dz
    x, y = bundle.x, bundle.y
    r2 = x * x + y * y
    # Outside the clear aperture, or on the far side of the sphere (not the lens's own cap,
    # where the normal's z part 1 - c (z - z_vertex) is not positive; also catches a
    # non-finite t): the ray meets the mount.
    on_cap = (r2 <= surface.semi_aperture_mm**2) & (1.0 - c * (bundle.z - surface.z_mm) > 0.0)
    bundle = out.retire(bundle, ~on_cap, MOUNT)
    x, y = bundle.x, bundle.y
    # Unit normal along the ray's travel: (-c x, -c y, 1 - c (z - z_vertex)).
    nx, ny, nz = -c * x, -c * y, 1.0 - c * (bundle.z - surface.z_mm)
    cos_i = bundle.dx * nx + bundle.dy * ny + bundle.dz * nz
    flip = np.where(cos_i < 0.0, -1.0, 1.0)
    cos_i = np.abs(cos_i)
    n1 = _lookup(_index_table(surface.before, wavelengths), bundle)
    n2 = _lookup(_index_table(surface.after, wavelengths), bundle)
    eta = n1 / n2
    k = 1.0 - eta * eta * (1.0 - cos_i * cos_i)
    tir = k < 0.0
    if tir.any():
        bundle = out.retire(bundle, tir, TIR)
        keep = ~tir
        nx, ny, nz, flip, cos_i, k = nx[keep], ny[keep], nz[keep], flip[keep], cos_i[keep], k[keep]
        eta = eta if np.isscalar(eta) else eta[keep]
        n1 = n1 if np.isscalar(n1) else n1[keep]
        n2 = n2 if np.isscalar(n2) else n2[keep]
    cos_t = np.sqrt(k)
    scale = (cos_t - eta * cos_i) * flip
    bundle.dx = eta * bundle.dx + scale * nx
    bundle.dy = eta * bundle.dy + scale * ny
    bundle.dz = eta * bundle.dz + scale * nz
    if surface.coating_reflectance is None:
        bundle.tp *= unpolarised_transmittance(n1, n2, cos_i, cos_t)
    else:
        bundle.tp *= 1.0 - surface.coating_reflectance
    return out.retire(bundle, bundle.dz <= 0.0, BACKWARD)


def _ideal(bundle: _Bundle, lens: IdealLens, out: _Output) -> _Bundle:
    """Deflect at an ideal thin lens: slopes u' = u - x / f, v' = v - y / f (exact)."""
    bundle.move_to_plane(lens.z_mm)
    r2 = bundle.x**2 + bundle.y**2
    bundle = out.retire(bundle, r2 > lens.semi_aperture_mm**2, MOUNT)
    u = bundle.dx / bundle.dz - bundle.x / lens.focal_length_mm
    v = bundle.dy / bundle.dz - bundle.y / lens.focal_length_mm
    norm = 1.0 / np.sqrt(1.0 + u * u + v * v)
    bundle.dx, bundle.dy, bundle.dz = u * norm, v * norm, norm
    return bundle


def _to_frame(bundle: _Bundle, r: np.ndarray, c, inverse: bool) -> None:
    """Move rays into a mount's frame (``inverse``) or back: p' = R^T (p - c) + c0."""
    m = r.T if inverse else r
    cx, cy, cz = c
    if inverse:
        x, y, z = bundle.x - cx, bundle.y - cy, bundle.z - cz
    else:
        x, y, z = bundle.x, bundle.y, bundle.z - cz
    bundle.x = m[0, 0] * x + m[0, 1] * y + m[0, 2] * z
    bundle.y = m[1, 0] * x + m[1, 1] * y + m[1, 2] * z
    bundle.z = m[2, 0] * x + m[2, 1] * y + m[2, 2] * z + cz
    if not inverse:
        bundle.x += cx
        bundle.y += cy
    dx, dy, dz = bundle.dx, bundle.dy, bundle.dz
    bundle.dx = m[0, 0] * dx + m[0, 1] * dy + m[0, 2] * dz
    bundle.dy = m[1, 0] * dx + m[1, 1] * dy + m[1, 2] * dz
    bundle.dz = m[2, 0] * dx + m[2, 1] * dy + m[2, 2] * dz


def _in_mount(bundle: _Bundle, element, wavelengths, out: _Output) -> _Bundle:
    """Meet a decentred or tilted surface: work in its frame, then come back.

    Rays that stop at this surface are recorded where they stopped in the lens's own
    frame (off by at most the placement error; used only to shade the mount).
    """
    mount = element.mount
    r = mount.rotation()
    c = (mount.dx_mm, mount.dy_mm, mount.pivot_z_mm)
    _to_frame(bundle, r, c, inverse=True)
    if isinstance(element, IdealLens):
        bundle = _ideal(bundle, element, out)
    else:
        bundle = _refract(bundle, element, wavelengths, out)
    _to_frame(bundle, r, c, inverse=False)
    return out.retire(bundle, bundle.dz <= 0.0, BACKWARD)


def _wall_from_inside(bundle: _Bundle, z_mm: float, radius: float, out: _Output) -> _Bundle:
    """Stop rays that reach the tube radius before plane ``z_mm``, at the exact wall point."""
    t_plane = (z_mm - bundle.z) / bundle.dz
    xe = bundle.x + t_plane * bundle.dx
    ye = bundle.y + t_plane * bundle.dy
    hits = xe * xe + ye * ye > radius * radius
    if not hits.any():
        return bundle
    dx, dy = bundle.dx[hits], bundle.dy[hits]
    x, y = bundle.x[hits], bundle.y[hits]
    a = dx * dx + dy * dy
    b = x * dx + y * dy
    c = x * x + y * y - radius * radius
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.where(c < 0.0, (-b + np.sqrt(np.maximum(b * b - a * c, 0.0))) / a, 0.0)
    bundle.move_by(t, hits)
    return out.retire(bundle, hits, WALL)


def _tube_outside_stop(bundle: _Bundle, housing: Housing) -> None:
    """Set ``stop_z`` where rays passing beside the device strike the tube's outside."""
    r = housing.tube_radius_mm
    a = bundle.dx**2 + bundle.dy**2
    b = bundle.x * bundle.dx + bundle.y * bundle.dy
    c = bundle.x**2 + bundle.y**2 - r * r
    disc = b * b - a * c
    with np.errstate(invalid="ignore", divide="ignore"):
        t = (-b - np.sqrt(disc)) / a
    z_hit = bundle.z + t * bundle.dz
    ok = (b < 0.0) & (disc >= 0.0) & (z_hit >= housing.panel_z_mm) & (
        z_hit <= housing.tube_end_mm)
    bundle.stop_z = np.where(ok, z_hit, np.inf)


def _stop_at_outside_wall(bundle: _Bundle, before_z: float, out: _Output) -> _Bundle:
    rows = np.isfinite(bundle.stop_z) & (bundle.stop_z <= before_z)
    if not rows.any():
        return bundle
    t = (bundle.stop_z[rows] - bundle.z[rows]) / bundle.dz[rows]
    bundle.move_by(t, rows)
    return out.retire(bundle, rows, WALL)


def _wavelength_table(wavelength_nm: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct wavelengths and each ray's row among them (fast when all are one)."""
    if len(wavelength_nm) and np.all(wavelength_nm == wavelength_nm[0]):
        return wavelength_nm[:1].copy(), np.zeros(len(wavelength_nm), np.int64)
    values, index = np.unique(wavelength_nm, return_inverse=True)
    return values, index.reshape(-1).astype(np.int64)


def available_backends() -> tuple[str, ...]:
    """The tracing paths this machine can run.

    Always "numpy" (the reference); with numba also "per-ray" (the compiled kernel that
    walks one ray at a time) and "compiled" (packets of rays in vector lanes, the default).
    """
    try:
        import cloakview.optics.trace_kernel  # noqa: F401
    except ImportError:
        return ("numpy",)
    return ("numpy", "per-ray", "compiled")


def chosen_backend(backend: str | None = None) -> str:
    """The tracing path to use: ``backend``, else ``$CLOAKVIEW_TRACER``, else the fastest.

    Raises
    ------
    InputError
        For an unknown name, or a compiled path on a machine without numba.
    """
    choice = (backend or os.environ.get("CLOAKVIEW_TRACER") or "auto").lower()
    if choice not in ("auto", "numpy", "per-ray", "compiled"):
        raise InputError("CLOAKVIEW_TRACER", choice, "must be auto, numpy, per-ray or "
                         "compiled")
    if choice == "auto":
        return available_backends()[-1]
    if choice not in available_backends():
        raise InputError("CLOAKVIEW_TRACER", choice, "the compiled tracer needs numba "
                         "(pip install numba)")
    return choice


def trace(rays: Rays, elements, housing: Housing | None = None,
          backend: str | None = None) -> TraceResult:
    """Trace ``rays`` through ``elements`` (in z order) and the optional ``housing``.

    Parameters
    ----------
    rays : Rays
        Start state; every ray must start in front of the first element.
    elements : sequence of Refracting, IdealLens or Probe
        Sorted here by ``z_mm`` (stable, so ties keep their order).
    housing : Housing, optional
        Panel and tube; without it every ray is inside the device.
    backend : {"auto", "numpy", "per-ray", "compiled"}, optional
        Which path runs; default from the ``CLOAKVIEW_TRACER`` environment variable,
        else "auto" (compiled when numba is installed). All give the same result.

    Returns
    -------
    TraceResult
    """
    ordered = sorted(elements, key=lambda e: e.z_mm)
    choice = chosen_backend(backend)
    if choice == "numpy":
        return _trace_numpy(rays, ordered, housing)
    return _trace_compiled(rays, ordered, housing, packets=choice == "compiled")


@functools.lru_cache(maxsize=64)
def _element_table(ordered: tuple, housing: Housing | None, wavelengths: tuple) -> tuple:
    """The compiled kernels' description of the elements, the housing and the indices.

    Built once per distinct system and wavelength set (elements are frozen, so equal
    systems share it); a sweep traces the same system thousands of times. The kernels
    only read these arrays.
    """
    from cloakview.optics import trace_kernel as kernel

    codes = {Refracting: kernel.REFRACT, IdealLens: kernel.IDEAL, Probe: kernel.PROBE}
    n_el = len(ordered)
    kind = np.array([codes[type(e)] for e in ordered], np.int8)
    ez = np.array([e.z_mm for e in ordered], float)
    curv = np.array([getattr(e, "curvature_per_mm", 0.0) for e in ordered], float)
    semi = np.array([getattr(e, "semi_aperture_mm", np.inf) for e in ordered], float)
    focal = np.array([getattr(e, "focal_length_mm", np.inf) for e in ordered], float)
    coat = np.array([-1.0 if getattr(e, "coating_reflectance", None) is None
                     else e.coating_reflectance for e in ordered], float)
    frames = np.zeros((max(n_el, 1), 13))  # flag, R (row-major 3x3), pivot (3)
    for i, e in enumerate(ordered):
        mount = getattr(e, "mount", None)
        if mount is not None:
            frames[i, 0] = 1.0
            frames[i, 1:10] = mount.rotation().reshape(-1)
            frames[i, 10:] = (mount.dx_mm, mount.dy_mm, mount.pivot_z_mm)
    probes = [e for e in ordered if isinstance(e, Probe)]
    slot = np.array([probes.index(e) if isinstance(e, Probe) else -1 for e in ordered],
                    np.int64)
    n_before = np.ones((max(n_el, 1), len(wavelengths)))
    n_after = np.ones((max(n_el, 1), len(wavelengths)))
    for i, e in enumerate(ordered):
        if isinstance(e, Refracting):
            n_before[i] = e.before.index(np.array(wavelengths))
            n_after[i] = e.after.index(np.array(wavelengths))
    if housing is None:
        box, panel_index = np.zeros(7), 0
    else:
        box = np.array([1.0, housing.panel_z_mm, housing.hole_radius_mm,
                        housing.panel_half_width_mm, housing.panel_half_height_mm,
                        housing.tube_radius_mm, housing.tube_end_mm])
        panel_index = sum(1 for e in ordered if e.z_mm < housing.panel_z_mm)
    return (kind, ez, curv, semi, focal, coat, slot, n_before, n_after, frames, box,
            panel_index)


def _trace_compiled(rays: Rays, ordered, housing: Housing | None,
                    packets: bool = True) -> TraceResult:
    from cloakview.optics import trace_kernel as kernel

    count = len(rays)
    wavelengths, wl_index = _wavelength_table(rays.wavelength_nm)
    table = _element_table(tuple(ordered), housing, tuple(wavelengths.tolist()))
    probes = [e for e in ordered if isinstance(e, Probe)]
    state = np.empty((7, count))
    fate = np.empty(count, np.int8)
    entered = np.empty(count, bool)
    cross = np.empty((len(probes), 3, count))  # the kernels write every entry
    elements = (*table, state, fate, entered, cross)
    start = (rays.x, rays.y, rays.z, rays.dx, rays.dy, rays.dz, rays.throughput)
    if packets:
        kernel.trace_packets(*start, *kernel.packet_table(wl_index, len(wavelengths) == 1),
                             *elements)
    else:
        kernel.trace_rays(*start, wl_index, *elements)
    crossings = {p.name: Crossing(cross[k, 0], cross[k, 1], cross[k, 2])
                 for k, p in enumerate(probes)}
    return TraceResult(*state[:6], state[6], fate, entered, crossings)


def _trace_numpy(rays: Rays, ordered, housing: Housing | None) -> TraceResult:
    count = len(rays)
    out = _Output(count)
    wavelengths, wl_index = _wavelength_table(rays.wavelength_nm)
    start = _Bundle(np.arange(count), rays.x.copy(), rays.y.copy(), rays.z.copy(),
                    rays.dx.copy(), rays.dy.copy(), rays.dz.copy(), rays.throughput.copy(),
                    wl_index, np.full(count, np.inf))
    start = out.retire(start, start.dz <= 0.0, BACKWARD)
    crossings = {e.name: Crossing(np.full(count, np.nan), np.full(count, np.nan),
                                  np.full(count, np.nan)) for e in ordered
                 if isinstance(e, Probe)}
    entered = np.zeros(count, bool)
    inside, beside = start, None
    if housing is None:
        entered[:] = True
    else:
        # Elements in front of the panel see every ray; the panel then splits them.
        front = [e for e in ordered if e.z_mm < housing.panel_z_mm]
        for element in front:
            if isinstance(element, Probe):
                _record(inside, element, crossings)
        ordered = ordered[len(front):]
        inside.move_to_plane(housing.panel_z_mm)
        r2 = inside.x**2 + inside.y**2
        through = r2 <= housing.hole_radius_mm**2
        on_panel = (~through & (np.abs(inside.x) <= housing.panel_half_width_mm)
                    & (np.abs(inside.y) <= housing.panel_half_height_mm))
        inside = out.retire(inside, on_panel, PANEL)
        through = through[~on_panel]
        beside = inside.take(~through)
        inside = inside.take(through)
        entered[inside.ids] = True
        _tube_outside_stop(beside, housing)
    tube_end = housing.tube_end_mm if housing is not None else None
    for element in ordered:
        z = element.z_mm
        if tube_end is not None and z > tube_end:
            inside = _wall_from_inside(inside, tube_end, housing.tube_radius_mm, out)
            tube_end = None
        if tube_end is not None:
            inside = _wall_from_inside(inside, z, housing.tube_radius_mm, out)
        if isinstance(element, Probe):
            _record(inside, element, crossings)
            if beside is not None:
                beside = _stop_at_outside_wall(beside, z, out)
                _record(beside, element, crossings)
        elif element.mount is not None:
            inside = _in_mount(inside, element, wavelengths, out)
        elif isinstance(element, IdealLens):
            inside = _ideal(inside, element, out)
        else:
            inside = _refract(inside, element, wavelengths, out)
    if tube_end is not None:
        inside = _wall_from_inside(inside, tube_end, housing.tube_radius_mm, out)
    for group in (inside, beside):
        if group is not None:
            group = _stop_at_outside_wall(group, np.inf, out)
            out.retire(group, np.ones(len(group), bool), PASSED)
    s = out.state
    return TraceResult(s["x"], s["y"], s["z"], s["dx"], s["dy"], s["dz"], s["tp"], out.fate,
                       entered, crossings)


def _record(bundle: _Bundle, probe: Probe, crossings: dict[str, Crossing]) -> None:
    if not len(bundle):
        return
    bundle.move_to_plane(probe.z_mm)
    record = crossings[probe.name]
    record.x[bundle.ids] = bundle.x
    record.y[bundle.ids] = bundle.y
    record.throughput[bundle.ids] = bundle.tp
