"""The tracer's compiled kernel: the physics of ``cloakview.optics.trace``'s numpy path, per ray.

One loop over rays (parallel across cores) and, inside it, one walk over the
elements, so each ray's state stays in registers instead of streaming every
intermediate array through memory. The numpy path in ``cloakview.optics.trace`` is the
reference; ``tests/test_trace_kernel.py`` holds the two together (positions to
1e-9 mm, fates exactly). The one difference of method: the kernels meet a sphere from
the ray's own point (:func:`_sphere_step`), the numpy path from the vertex plane. This
module does no I/O and imports nothing of cloakview's but the fate codes.

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
def _fresnel_transmittance(n1, n2, cos_i, cos_t):
    """``optics.fresnel.unpolarised_transmittance``, written out for numba (Hecht [3])."""
    aa = n1 * cos_i
    bb = n2 * cos_t
    rs = (aa - bb) / (aa + bb)
    cc = n2 * cos_i
    dd = n1 * cos_t
    rp = (cc - dd) / (cc + dd)
    return 1.0 - 0.5 * (rs * rs + rp * rp)


@numba.njit(cache=True, inline="always")
def _sphere_step(x, y, z, dx, dy, dz, ze, c, inv_c):
    """Distance along the ray to a spherical surface, from wherever the ray stands.

    The surface has its vertex at ``ze`` [mm] and curvature ``c`` [1/mm] (``inv_c`` is
    1 / c). With p the ray's point relative to the vertex and d its unit direction, the
    point p + s d lies on the surface c |q|^2 - 2 q_z = 0 [a] where
    c s^2 - 2 B s + F = 0, B = d_z - c (p . d), F = c |p|^2 - 2 p_z. The root taken is
    the one that tends to the vertex plane as c goes to 0, Welford's root [a] (he starts
    from the vertex plane, where F = c (x^2 + y^2); the numpy path does so), written so
    that nothing cancels [b]: F / (B + sqrt(D)) for B >= 0, else (B - sqrt(D)) / c, with
    D = B^2 - c F. Returns (distance [mm], D); D < 0: the ray misses the sphere.

    Starting from the ray's own point spares the step to the vertex plane, and its
    division, on every spherical surface.

    References
    ----------
    .. [a] W. T. Welford, Aberrations of Optical Systems (1986), sec. 4.3.
    .. [b] W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, Numerical
       Recipes, 3rd ed. (2007), sec. 5.6 (roots of a quadratic without cancellation).
    """
    pz = z - ze
    ff = c * (x * x + y * y + pz * pz) - 2.0 * pz
    gg = dz - c * (x * dx + y * dy + pz * dz)
    disc = gg * gg - c * ff
    root = math.sqrt(disc)
    return (ff / (gg + root) if gg >= 0.0 else (gg - root) * inv_c), disc


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
        Probe crossings x, y, throughput; NaN where a ray did not reach the probe (the
        kernel fills them, so the array may start uninitialised).
    """
    n = x0.shape[0]
    n_el = kind.shape[0]
    has_housing = housing[0] > 0.5
    panel_z, hole_r, half_w, half_h = housing[1], housing[2], housing[3], housing[4]
    tube_r, tube_end_z = housing[5], housing[6]
    for i in numba.prange(n):
        for k in range(cross.shape[0]):
            cross[k, 0, i] = cross[k, 1, i] = cross[k, 2, i] = np.nan
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
                c = curv[e]
                sphere = k != IDEAL and c != 0.0
                t = disc = 0.0
                if sphere:
                    t, disc = _sphere_step(x, y, z, dx, dy, dz, ze, c, 1.0 / c)
                if not sphere or disc < 0.0:  # a plane, or a sphere missed at its vertex plane
                    t = (ze - z) / dz
                    x += t * dx
                    y += t * dy
                    z = ze
                    if sphere:
                        fate = MOUNT
                        stopped = True
                        break
                else:
                    x, y, z = _advance(x, y, z, dx, dy, dz, t)
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
                        tp *= _fresnel_transmittance(n1, n2, cos_i, cos_t)
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


#: Rays per packet of :func:`trace_packets` (32 to 128 measured about equal; our choice),
#: and packets per parallel chunk (their scratch lanes are allocated once per chunk).
LANES = 64
CHUNK = 16
#: Rows of a chunk's scratch buffer: one row of LANES values per lane quantity. Flags and
#: fate codes are held as 0.0/1.0 and small whole numbers in the same float64 buffer, so
#: every lane access is one base pointer plus a constant offset: the compiler can see that
#: no two rows overlap and vectorises the loops without run-time alias checks.
_X, _Y, _Z, _DX, _DY, _DZ, _TP, _STOP, _FATE, _ACT, _INS, _PEND, _HIT = range(13)
_ROWS = 13
#: Element shapes for :func:`_element_lanes` (a constant at each call, so each call
#: compiles to its own loop with no shape branch inside).
_IDEAL, _SPHERE, _FLAT = 0, 1, 2


@numba.njit(cache=True, inline="always")
def _ray(order, k):
    """The ray at packet position ``k``: ``order[k]``, or ``k`` itself if ``order`` is empty."""
    return k if order.shape[0] == 0 else order[k]


@numba.njit(cache=True, inline="always")
def _wall_lanes(L, zt, past_end, tube_r):
    """Stop at the tube wall the lanes inside the tube that reach its radius before ``zt``.

    :func:`_wall_hit` for every lane, in two passes: the test (where the ray stands at
    ``zt``) for all lanes, then, only if some lane failed it, the exact wall point for
    those lanes. The square root and second division of the wall point are paid only in
    packets that meet the wall. Lanes whose tube ends at ``zt`` (``past_end``) stop
    looking for it.
    """
    hits = 0
    for j in range(LANES):
        x, y, z = L[_X * LANES + j], L[_Y * LANES + j], L[_Z * LANES + j]
        dx, dy, dz = L[_DX * LANES + j], L[_DY * LANES + j], L[_DZ * LANES + j]
        look = (L[_ACT * LANES + j] > 0.5) & (L[_INS * LANES + j] > 0.5) & (
            L[_PEND * LANES + j] > 0.5)
        t_plane = (zt - z) / dz
        xe = x + t_plane * dx
        ye = y + t_plane * dy
        wall = look & (xe * xe + ye * ye > tube_r * tube_r)
        L[_HIT * LANES + j] = 1.0 if wall else 0.0
        hits += 1 if wall else 0
        L[_PEND * LANES + j] = 0.0 if (look & past_end) else L[_PEND * LANES + j]
    if hits > 0:
        for j in range(LANES):
            if L[_HIT * LANES + j] > 0.5:
                x, y, z = L[_X * LANES + j], L[_Y * LANES + j], L[_Z * LANES + j]
                dx, dy, dz = L[_DX * LANES + j], L[_DY * LANES + j], L[_DZ * LANES + j]
                th = _wall_hit(x, y, z, dx, dy, dz, zt, tube_r)
                L[_X * LANES + j] = x + th * dx
                L[_Y * LANES + j] = y + th * dy
                L[_Z * LANES + j] = z + th * dz
                L[_FATE * LANES + j] = float(WALL)
                L[_ACT * LANES + j] = 0.0


@numba.njit(cache=True, inline="always")
def _probe_lanes(L, ze, zt, past_end, tube_r, housing, cross, probe, order, first, count):
    """The tube wall up to a probe plane, then the crossing of every travelling lane."""
    if housing:
        _wall_lanes(L, zt, past_end, tube_r)
    for j in range(LANES):
        x, y, z = L[_X * LANES + j], L[_Y * LANES + j], L[_Z * LANES + j]
        dx, dy, dz = L[_DX * LANES + j], L[_DY * LANES + j], L[_DZ * LANES + j]
        go = L[_ACT * LANES + j] > 0.5
        if housing:  # rays beside the tube stop where they meet its outside
            stop_z = L[_STOP * LANES + j]
            outer = go & (L[_INS * LANES + j] < 0.5) & (stop_z <= ze)
            th = (stop_z - z) / dz
            x = x + th * dx if outer else x
            y = y + th * dy if outer else y
            z = z + th * dz if outer else z
            L[_FATE * LANES + j] = float(WALL) if outer else L[_FATE * LANES + j]
            go = go & (not outer)
        t = (ze - z) / dz
        L[_X * LANES + j] = x + t * dx if go else x
        L[_Y * LANES + j] = y + t * dy if go else y
        L[_Z * LANES + j] = ze if go else z
        L[_ACT * LANES + j] = 1.0 if go else 0.0
    for j in range(count):  # every packet meets every probe: all entries are written
        reached = L[_ACT * LANES + j] > 0.5
        i = _ray(order, first + j)
        cross[probe, 0, i] = L[_X * LANES + j] if reached else np.nan
        cross[probe, 1, i] = L[_Y * LANES + j] if reached else np.nan
        cross[probe, 2, i] = L[_TP * LANES + j] if reached else np.nan


@numba.njit(cache=True, inline="always")
def _finish_lanes(L, tube_end_z, tube_r):
    """The housing's last stops after the elements, for the lanes still travelling.

    Rays inside the tube that reach its radius before its end stop on the wall
    (:func:`_wall_lanes`); rays beside the tube that meet its outside stop there.
    """
    _wall_lanes(L, tube_end_z, True, tube_r)
    for j in range(LANES):
        x, y, z = L[_X * LANES + j], L[_Y * LANES + j], L[_Z * LANES + j]
        dx, dy, dz = L[_DX * LANES + j], L[_DY * LANES + j], L[_DZ * LANES + j]
        stop_z = L[_STOP * LANES + j]
        outer = (L[_ACT * LANES + j] > 0.5) & (L[_INS * LANES + j] < 0.5) & (stop_z < np.inf)
        th = (stop_z - z) / dz
        L[_X * LANES + j] = x + th * dx if outer else x
        L[_Y * LANES + j] = y + th * dy if outer else y
        L[_Z * LANES + j] = z + th * dz if outer else z
        L[_FATE * LANES + j] = float(WALL) if outer else L[_FATE * LANES + j]


@numba.njit(cache=True, inline="always")
def _any_inside(L):
    """Whether any lane of the packet is still travelling inside the tube."""
    live = 0  # integer counts here and below: a float sum would not vectorise
    for j in range(LANES):
        live += 1 if (L[_ACT * LANES + j] > 0.5) & (L[_INS * LANES + j] > 0.5) else 0
    return live > 0


@numba.njit(cache=True, inline="always")
def _element_lanes(L, ze, shape, c, inv_c, semi2, focal, coat, n1, n2, mounted, fr):
    """A lens surface for every lane of a packet (the tube wall is :func:`_wall_lanes`).

    The arithmetic of :func:`trace_rays` for one element, lane by lane, with selects in
    place of its early exits; ``shape`` and ``mounted`` are constants at each call site.
    Lanes that miss a sphere stop where they cross its vertex plane, as in
    :func:`trace_rays`: a second pass, run only if some lane missed, moves them there.
    """
    bare = coat < 0.0
    eta = n1 / n2
    misses = 0  # an integer count (see _any_inside)
    for j in range(LANES):
        x, y, z = L[_X * LANES + j], L[_Y * LANES + j], L[_Z * LANES + j]
        dx, dy, dz = L[_DX * LANES + j], L[_DY * LANES + j], L[_DZ * LANES + j]
        tp = L[_TP * LANES + j]
        fate = L[_FATE * LANES + j]
        go = L[_ACT * LANES + j] > 0.5
        ins = L[_INS * LANES + j] > 0.5
        g = go & ins  # rays outside the tube pass beside the lenses
        ux, uy, uz, udx, udy, udz, utp = x, y, z, dx, dy, dz, tp
        if mounted:
            ux, uy, uz, udx, udy, udz = _frame(ux, uy, uz, udx, udy, udz, fr, True)
        if shape != _SPHERE:
            t = (ze - uz) / udz
            ux = ux + t * udx
            uy = uy + t * udy
            uz = ze
        if shape == _IDEAL:
            s = ux * ux + uy * uy > semi2
            u = udx / udz - ux / focal
            v = udy / udz - uy / focal
            norm = 1.0 / math.sqrt(1.0 + u * u + v * v)
            udx = udx if s else u * norm
            udy = udy if s else v * norm
            udz = udz if s else norm
            code = MOUNT
        else:
            s = False
            if shape == _SPHERE:
                ts, disc = _sphere_step(ux, uy, uz, udx, udy, udz, ze, c, inv_c)
                s = disc < 0.0
                missed = g & s
                L[_HIT * LANES + j] = 1.0 if missed else 0.0
                misses += 1 if missed else 0
                ux = ux if s else ux + ts * udx
                uy = uy if s else uy + ts * udy
                uz = uz if s else uz + ts * udz
            nz = 1.0 - c * (uz - ze)
            off_cap = not ((ux * ux + uy * uy <= semi2) & (nz > 0.0))
            s = s | off_cap
            nx, ny = -c * ux, -c * uy
            cos_i = udx * nx + udy * ny + udz * nz
            flip = -1.0 if cos_i < 0.0 else 1.0
            cos_i = abs(cos_i)
            kk = 1.0 - eta * eta * (1.0 - cos_i * cos_i)
            tir = (not s) & (kk < 0.0)
            code = TIR if tir else MOUNT
            s = s | tir
            cos_t = math.sqrt(kk)
            scale = (cos_t - eta * cos_i) * flip
            ndx = eta * udx + scale * nx
            ndy = eta * udy + scale * ny
            ndz = eta * udz + scale * nz
            ntp = utp * _fresnel_transmittance(n1, n2, cos_i, cos_t) if bare else utp * (
                1.0 - coat)
            udx = udx if s else ndx
            udy = udy if s else ndy
            udz = udz if s else ndz
            utp = utp if s else ntp
            backward = (not s) & (udz <= 0.0)
            code = BACKWARD if backward else code
            s = s | backward
        if mounted:
            bx, by, bz, bdx, bdy, bdz = _frame(ux, uy, uz, udx, udy, udz, fr, False)
            keep = not s
            ux = bx if keep else ux
            uy = by if keep else uy
            uz = bz if keep else uz
            udx = bdx if keep else udx
            udy = bdy if keep else udy
            udz = bdz if keep else udz
            backward = keep & (udz <= 0.0)
            code = BACKWARD if backward else code
            s = s | backward
        L[_X * LANES + j] = ux if g else x
        L[_Y * LANES + j] = uy if g else y
        L[_Z * LANES + j] = uz if g else z
        L[_DX * LANES + j] = udx if g else dx
        L[_DY * LANES + j] = udy if g else dy
        L[_DZ * LANES + j] = udz if g else dz
        L[_TP * LANES + j] = utp if g else tp
        L[_FATE * LANES + j] = float(code) if (g & s) else fate
        L[_ACT * LANES + j] = 0.0 if (g & s) else (1.0 if go else 0.0)
    if misses > 0:
        for j in range(LANES):
            if L[_HIT * LANES + j] > 0.5:
                t = (ze - L[_Z * LANES + j]) / L[_DZ * LANES + j]
                L[_X * LANES + j] = L[_X * LANES + j] + t * L[_DX * LANES + j]
                L[_Y * LANES + j] = L[_Y * LANES + j] + t * L[_DY * LANES + j]
                L[_Z * LANES + j] = ze


@numba.njit(cache=True, parallel=True, error_model="numpy")
def trace_packets(x0, y0, z0, dx0, dy0, dz0, tp0, order, packet_first, packet_count,
                  packet_w, kind, ez, curv, semi, focal, coat, slot, n_before, n_after,
                  frames, housing, panel_index, out_state, out_fate, out_entered, cross):
    """:func:`trace_rays` on packets of :data:`LANES` rays of one wavelength each.

    Each packet's rays sit in one scratch buffer and walk the elements together; inside an
    element every lane computes the same straight-line arithmetic and keeps its result
    only where it is still travelling (selects instead of early exits), so the compiler
    uses the processor's vector units. The operations and their order are those of
    :func:`trace_rays`, lane by lane, so the results are identical.

    Parameters
    ----------
    order : int64 array (N,) or (0,)
        Ray indices in packet order (grouped by wavelength); empty when that is the rays'
        own order.
    packet_first, packet_count, packet_w : int64 arrays (P,)
        Each packet's first position in ``order``, its ray count (1 to LANES) and its
        wavelength's column of ``n_before``/``n_after``.

    The other arguments and the results are those of :func:`trace_rays`.
    """
    n_el = kind.shape[0]
    has_housing = housing[0] > 0.5
    panel_z, hole_r, half_w, half_h = housing[1], housing[2], housing[3], housing[4]
    tube_r, tube_end_z = housing[5], housing[6]
    packets = packet_first.shape[0]
    chunks = (packets + CHUNK - 1) // CHUNK
    for q in numba.prange(chunks):  # one scratch buffer per chunk of packets
        L = np.empty(_ROWS * LANES)
        for p in range(q * CHUNK, min((q + 1) * CHUNK, packets)):
            first = packet_first[p]
            count = packet_count[p]
            w = packet_w[p]
            for j in range(LANES):
                i = _ray(order, first + (j if j < count else 0))  # spare lanes repeat a ray
                L[_X * LANES + j], L[_Y * LANES + j], L[_Z * LANES + j] = x0[i], y0[i], z0[i]
                L[_DX * LANES + j], L[_DY * LANES + j] = dx0[i], dy0[i]
                L[_DZ * LANES + j] = dz0[i]
                L[_TP * LANES + j] = tp0[i]
                L[_ACT * LANES + j] = 1.0 if dz0[i] > 0.0 else 0.0
                L[_FATE * LANES + j] = float(PASSED if dz0[i] > 0.0 else BACKWARD)
                L[_INS * LANES + j] = 1.0
                L[_PEND * LANES + j] = 1.0 if has_housing else 0.0
                L[_STOP * LANES + j] = np.inf
            start = 0
            if has_housing:
                for e in range(panel_index):
                    if kind[e] == PROBE:  # nothing else can stand in front of the panel
                        _probe_lanes(L, ez[e], ez[e], False, tube_r, False, cross, slot[e],
                                     order, first, count)
                start = panel_index
                for j in range(LANES):
                    go = L[_ACT * LANES + j] > 0.5
                    dx, dy, dz = L[_DX * LANES + j], L[_DY * LANES + j], L[_DZ * LANES + j]
                    t = (panel_z - L[_Z * LANES + j]) / dz
                    x = L[_X * LANES + j] + t * dx
                    y = L[_Y * LANES + j] + t * dy
                    r2 = x * x + y * y
                    in_hole = r2 <= hole_r * hole_r
                    on_panel = (not in_hole) & (abs(x) <= half_w) & (abs(y) <= half_h)
                    outside = (not in_hole) & (not on_panel)
                    a = dx * dx + dy * dy
                    b = x * dx + y * dy
                    c = r2 - tube_r * tube_r
                    disc = b * b - a * c
                    th = (-b - math.sqrt(disc)) / a
                    zh = panel_z + th * dz
                    hits = (outside & (b < 0.0) & (disc >= 0.0) & (zh >= panel_z)
                            & (zh <= tube_end_z))
                    L[_X * LANES + j] = x if go else L[_X * LANES + j]
                    L[_Y * LANES + j] = y if go else L[_Y * LANES + j]
                    L[_Z * LANES + j] = panel_z if go else L[_Z * LANES + j]
                    L[_STOP * LANES + j] = zh if (go & hits) else L[_STOP * LANES + j]
                    L[_INS * LANES + j] = 0.0 if (go & outside) else L[_INS * LANES + j]
                    L[_FATE * LANES + j] = float(PANEL) if (go & on_panel) else L[
                        _FATE * LANES + j]
                    L[_ACT * LANES + j] = 1.0 if (go & (not on_panel)) else 0.0
            for j in range(count):
                out_entered[_ray(order, first + j)] = ((L[_INS * LANES + j] > 0.5)
                                                 and (L[_ACT * LANES + j] > 0.5)) or not has_housing
            for e in range(start, n_el):
                ze = ez[e]
                past_end = ze > tube_end_z
                zt = tube_end_z if past_end else ze  # the one wall plane this step can meet
                if kind[e] == PROBE:
                    _probe_lanes(L, ze, zt, past_end, tube_r, has_housing, cross, slot[e],
                                 order, first, count)
                    continue
                if not _any_inside(L):
                    continue  # walls and lenses act only on travelling rays inside the tube
                f = frames[e]
                fr = (f[0], f[1], f[2], f[3], f[4], f[5], f[6], f[7], f[8], f[9], f[10],
                      f[11], f[12])
                mounted = f[0] > 0.5
                c, semi2, fe, ce = curv[e], semi[e] * semi[e], focal[e], coat[e]
                ic = 1.0 / c if c != 0.0 else 0.0  # 1 / curvature, for _sphere_step
                n1, n2 = n_before[e, w], n_after[e, w]
                if has_housing:
                    _wall_lanes(L, zt, past_end, tube_r)
                if kind[e] == IDEAL:
                    if mounted:
                        _element_lanes(L, ze, _IDEAL, c, ic, semi2, fe, ce, n1, n2, True, fr)
                    else:
                        _element_lanes(L, ze, _IDEAL, c, ic, semi2, fe, ce, n1, n2, False, fr)
                elif c != 0.0:
                    if mounted:
                        _element_lanes(L, ze, _SPHERE, c, ic, semi2, fe, ce, n1, n2, True, fr)
                    else:
                        _element_lanes(L, ze, _SPHERE, c, ic, semi2, fe, ce, n1, n2, False, fr)
                elif mounted:
                    _element_lanes(L, ze, _FLAT, c, ic, semi2, fe, ce, n1, n2, True, fr)
                else:
                    _element_lanes(L, ze, _FLAT, c, ic, semi2, fe, ce, n1, n2, False, fr)
            if has_housing:
                _finish_lanes(L, tube_end_z, tube_r)
            for j in range(count):
                i = _ray(order, first + j)
                out_state[0, i] = L[_X * LANES + j]
                out_state[1, i] = L[_Y * LANES + j]
                out_state[2, i] = L[_Z * LANES + j]
                out_state[3, i] = L[_DX * LANES + j]
                out_state[4, i] = L[_DY * LANES + j]
                out_state[5, i] = L[_DZ * LANES + j]
                out_state[6, i] = L[_TP * LANES + j]
                out_fate[i] = np.int8(L[_FATE * LANES + j])


def packet_table(wl_index, one_wavelength=False):
    """Packets of at most :data:`LANES` rays sharing one wavelength.

    Parameters
    ----------
    wl_index : int64 array (N,)
        Each ray's wavelength column.
    one_wavelength : bool
        Whether all rays share one wavelength (then ``wl_index`` is not read: the packets
        are the rays in their own order).

    Returns
    -------
    order, packet_first, packet_count, packet_w : int64 arrays
        The arguments of the same names of :func:`trace_packets`.
    """
    n = wl_index.shape[0]
    if n == 0:
        empty = np.zeros(0, np.int64)
        return empty, empty, empty, empty
    if one_wavelength:
        first = np.arange(0, n, LANES, dtype=np.int64)
        return (np.zeros(0, np.int64), first, np.minimum(first + LANES, n) - first,
                np.zeros(len(first), np.int64))
    if np.all(wl_index[1:] >= wl_index[:-1]):
        order = np.zeros(0, np.int64)  # already grouped: packets follow the rays' order
        sorted_w = wl_index
    else:
        order = np.argsort(wl_index, kind="stable").astype(np.int64)
        sorted_w = wl_index[order]
    starts = np.flatnonzero(np.r_[True, sorted_w[1:] != sorted_w[:-1]])
    ends = np.r_[starts[1:], n]
    first, count, wave = [], [], []
    for s, e in zip(starts, ends, strict=True):
        f = np.arange(s, e, LANES, dtype=np.int64)
        first.append(f)
        count.append(np.minimum(f + LANES, e) - f)
        wave.append(np.full(len(f), sorted_w[s], np.int64))
    return order, np.concatenate(first), np.concatenate(count), np.concatenate(wave)
