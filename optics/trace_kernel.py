"""The tracer's compiled kernel: the physics of ``cloakview.optics.trace``'s numpy path, per ray.

One loop over rays (parallel across cores) and, inside it, one walk over the
elements, so each ray's state stays in registers instead of streaming every
intermediate array through memory. The numpy path in ``cloakview.optics.trace`` is the
reference; ``tests/test_trace_kernel.py`` holds the two together (positions to
1e-9 mm, fates exactly). This module does no I/O and imports nothing of cloakview's
but the fate codes.

References
----------
.. [1] W. T. Welford, Aberrations of Optical Systems (1986), sec. 4.3
   (ray-sphere intersection).
.. [2] A. S. Glassner (ed.), An Introduction to Ray Tracing (1989), ch. 6
   (vector Snell's law).
.. [3] E. Hecht, Optics, 5th ed. (2017), sec. 4.6 (Fresnel equations).
.. [4] S. K. Lam, A. Pitrou, S. Seibert, "Numba: a LLVM-based Python JIT
   compiler", Proc. LLVM-HPC (2015).
"""

from __future__ import annotations

import math

import numba
import numpy as np

REFRACT, IDEAL, PROBE = 0, 1, 2
# Fate codes, as in optics.trace (kept equal by a test).
PASSED, MOUNT, WALL, PANEL, TIR, BACKWARD = 0, 1, 2, 3, 4, 5


@numba.njit(cache=True, inline="always")
def _advance(x, y, z, dx, dy, dz, t):
    """Position after moving ``t`` along the direction."""
    return x + t * dx, y + t * dy, z + t * dz


@numba.njit(cache=True, inline="always")
def _frame(x, y, z, dx, dy, dz, f, inverse):
    """Into a mount's frame (``inverse``: p' = R^T (p - c) + c0) or back; f = frames row.

    The same operations, in the same order, as ``optics.trace._to_frame``.
    """
    cx, cy, cz = f[10], f[11], f[12]
    if inverse:
        m00, m01, m02, m10, m11, m12, m20, m21, m22 = (f[1], f[4], f[7], f[2], f[5], f[8],
                                                       f[3], f[6], f[9])
        x1, y1, z1 = x - cx, y - cy, z - cz
    else:
        m00, m01, m02, m10, m11, m12, m20, m21, m22 = (f[1], f[2], f[3], f[4], f[5], f[6],
                                                       f[7], f[8], f[9])
        x1, y1, z1 = x, y, z - cz
    xo = m00 * x1 + m01 * y1 + m02 * z1
    yo = m10 * x1 + m11 * y1 + m12 * z1
    zo = m20 * x1 + m21 * y1 + m22 * z1 + cz
    if not inverse:
        xo += cx
        yo += cy
    return (xo, yo, zo, m00 * dx + m01 * dy + m02 * dz, m10 * dx + m11 * dy + m12 * dz,
            m20 * dx + m21 * dy + m22 * dz)


@numba.njit(cache=True, inline="always")
def _wall_hit(x, y, z, dx, dy, dz, z_plane, radius):
    """Exact tube-wall point if the ray reaches the radius before ``z_plane``, else t < 0."""
    t_plane = (z_plane - z) / dz
    xe = x + t_plane * dx
    ye = y + t_plane * dy
    if xe * xe + ye * ye > radius * radius:
        a = dx * dx + dy * dy
        b = x * dx + y * dy
        c = x * x + y * y - radius * radius
        if c < 0.0:
            return (-b + math.sqrt(max(b * b - a * c, 0.0))) / a
        return 0.0
    return -1.0


@numba.njit(cache=True, parallel=True, error_model="numpy")
def trace_rays(x0, y0, z0, dx0, dy0, dz0, tp0, wl_index,
               kind, ez, curv, semi, focal, coat, slot, n_before, n_after, frames,
               housing, panel_index,
               out_state, out_fate, out_entered, cross):
    """Trace every ray; write end states, fates, entered flags and probe crossings.

    Parameters
    ----------
    x0 ... tp0 : float64 arrays (N,)
        Start positions [mm], unit directions and throughput.
    wl_index : int64 array (N,)
        Row of ``n_before``/``n_after`` for each ray's wavelength.
    kind, ez, curv, semi, focal, coat, slot : arrays (E,)
        Elements in z order: kind code, z [mm], curvature [1/mm], semi-aperture [mm],
        focal length [mm], coating reflectance (< 0 for bare Fresnel), probe slot.
    n_before, n_after : float64 arrays (E, W)
        Indices on each side of each element per wavelength.
    frames : float64 array (E, 13)
        Mount of each element: flag, rotation R (row-major), pivot x, y, z [mm].
    housing : float64 array (7,)
        has_housing, panel z, hole radius, panel half width, half height, tube radius,
        tube end [mm].
    panel_index : int
        Elements before this index lie in front of the panel.
    out_state : float64 array (7, N)
        x, y, z, dx, dy, dz, throughput at the end.
    out_fate : int8 array (N,); out_entered : bool array (N,)
    cross : float64 array (P, 3, N)
        Probe crossings x, y, throughput (pre-filled with NaN).
    """
    n = x0.shape[0]
    n_el = kind.shape[0]
    has_housing = housing[0] > 0.5
    panel_z, hole_r, half_w, half_h = housing[1], housing[2], housing[3], housing[4]
    tube_r, tube_end_z = housing[5], housing[6]
    for i in numba.prange(n):
        x, y, z = x0[i], y0[i], z0[i]
        dx, dy, dz = dx0[i], dy0[i], dz0[i]
        tp = tp0[i]
        w = wl_index[i]
        fate = PASSED
        inside = True
        stop_z = np.inf
        tube_pending = has_housing
        done = False
        if dz <= 0.0:
            fate = BACKWARD
            done = True
        start = 0
        if has_housing and not done:
            for e in range(panel_index):
                if kind[e] != PROBE:
                    continue  # nothing but probes can stand in front of the panel
                t = (ez[e] - z) / dz
                x += t * dx
                y += t * dy
                z = ez[e]
                cross[slot[e], 0, i] = x
                cross[slot[e], 1, i] = y
                cross[slot[e], 2, i] = tp
            start = panel_index
            t = (panel_z - z) / dz
            x += t * dx
            y += t * dy
            z = panel_z
            r2 = x * x + y * y
            if r2 <= hole_r * hole_r:
                inside = True
            elif abs(x) <= half_w and abs(y) <= half_h:
                fate = PANEL
                done = True
            else:
                inside = False
                a = dx * dx + dy * dy
                b = x * dx + y * dy
                c = r2 - tube_r * tube_r
                disc = b * b - a * c
                if b < 0.0 and disc >= 0.0:
                    th = (-b - math.sqrt(disc)) / a
                    zh = z + th * dz
                    if zh >= panel_z and zh <= tube_end_z:
                        stop_z = zh
        out_entered[i] = (inside and not done) or not has_housing
        stopped = done
        if not done:
            for e in range(start, n_el):
                ze = ez[e]
                if inside:
                    if tube_pending and ze > tube_end_z:
                        th = _wall_hit(x, y, z, dx, dy, dz, tube_end_z, tube_r)
                        tube_pending = False
                        if th >= 0.0:
                            x, y, z = _advance(x, y, z, dx, dy, dz, th)
                            fate = WALL
                            stopped = True
                            break
                    if tube_pending:
                        th = _wall_hit(x, y, z, dx, dy, dz, ze, tube_r)
                        if th >= 0.0:
                            x, y, z = _advance(x, y, z, dx, dy, dz, th)
                            fate = WALL
                            stopped = True
                            break
                elif kind[e] == PROBE and stop_z <= ze:
                    th = (stop_z - z) / dz
                    x, y, z = _advance(x, y, z, dx, dy, dz, th)
                    fate = WALL
                    stopped = True
                    break
                k = kind[e]
                if k == PROBE:
                    t = (ze - z) / dz
                    x += t * dx
                    y += t * dy
                    z = ze
                    cross[slot[e], 0, i] = x
                    cross[slot[e], 1, i] = y
                    cross[slot[e], 2, i] = tp
                    continue
                if not inside:
                    continue
                mounted = frames[e, 0] > 0.5
                if mounted:
                    x, y, z, dx, dy, dz = _frame(x, y, z, dx, dy, dz, frames[e], True)
                t = (ze - z) / dz
                x += t * dx
                y += t * dy
                z = ze
                if k == IDEAL:
                    if x * x + y * y > semi[e] * semi[e]:
                        fate = MOUNT
                        stopped = True
                        break
                    f = focal[e]
                    u = dx / dz - x / f
                    v = dy / dz - y / f
                    norm = 1.0 / math.sqrt(1.0 + u * u + v * v)
                    dx, dy, dz = u * norm, v * norm, norm
                else:
                    c = curv[e]
                    if c != 0.0:
                        ff = c * (x * x + y * y)
                        g = dz - c * (x * dx + y * dy)
                        disc = g * g - c * ff
                        if disc < 0.0:
                            fate = MOUNT
                            stopped = True
                            break
                        t = ff / (g + math.sqrt(disc))
                        x, y, z = _advance(x, y, z, dx, dy, dz, t)
                    nz = 1.0 - c * (z - ze)
                    # Outside the clear aperture, or on the far side of the sphere (not the
                    # lens's own cap; also catches a non-finite t): the ray meets the mount.
                    if not (x * x + y * y <= semi[e] * semi[e] and nz > 0.0):
                        fate = MOUNT
                        stopped = True
                        break
                    nx, ny = -c * x, -c * y
                    cos_i = dx * nx + dy * ny + dz * nz
                    flip = -1.0 if cos_i < 0.0 else 1.0
                    cos_i = abs(cos_i)
                    n1 = n_before[e, w]
                    n2 = n_after[e, w]
                    eta = n1 / n2
                    kk = 1.0 - eta * eta * (1.0 - cos_i * cos_i)
                    if kk < 0.0:
                        fate = TIR
                        stopped = True
                        break
                    cos_t = math.sqrt(kk)
                    scale = (cos_t - eta * cos_i) * flip
                    dx = eta * dx + scale * nx
                    dy = eta * dy + scale * ny
                    dz = eta * dz + scale * nz
                    if coat[e] < 0.0:
                        # optics.fresnel.unpolarised_transmittance, written out for numba
                        aa = n1 * cos_i
                        bb = n2 * cos_t
                        rs = (aa - bb) / (aa + bb)
                        cc = n2 * cos_i
                        dd = n1 * cos_t
                        rp = (cc - dd) / (cc + dd)
                        tp *= 1.0 - 0.5 * (rs * rs + rp * rp)
                    else:
                        tp *= 1.0 - coat[e]
                    if dz <= 0.0:
                        fate = BACKWARD
                        stopped = True
                        break
                if mounted:
                    x, y, z, dx, dy, dz = _frame(x, y, z, dx, dy, dz, frames[e], False)
                    if dz <= 0.0:
                        fate = BACKWARD
                        stopped = True
                        break
            if not stopped:
                if inside and tube_pending:
                    th = _wall_hit(x, y, z, dx, dy, dz, tube_end_z, tube_r)
                    if th >= 0.0:
                        x, y, z = _advance(x, y, z, dx, dy, dz, th)
                        fate = WALL
                if fate == PASSED and not inside and stop_z < np.inf:
                    th = (stop_z - z) / dz
                    x, y, z = _advance(x, y, z, dx, dy, dz, th)
                    fate = WALL
        out_state[0, i] = x
        out_state[1, i] = y
        out_state[2, i] = z
        out_state[3, i] = dx
        out_state[4, i] = dy
        out_state[5, i] = dz
        out_state[6, i] = tp
        out_fate[i] = fate
