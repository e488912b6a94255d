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


@numba.njit(cache=True, inline="always")
def _probe_lanes(X, Y, Z, DX, DY, DZ, TP, ACT, ze, cross, probe, first, count):
    """Move the travelling lanes to the probe plane at ``ze`` and record their crossings."""
    for j in range(LANES):
        t = (ze - Z[j]) / DZ[j]
        go = ACT[j]
        X[j] = X[j] + t * DX[j] if go else X[j]
        Y[j] = Y[j] + t * DY[j] if go else Y[j]
        Z[j] = ze if go else Z[j]
    for j in range(count):
        if ACT[j]:
            cross[probe, 0, first + j] = X[j]
            cross[probe, 1, first + j] = Y[j]
            cross[probe, 2, first + j] = TP[j]


@numba.njit(cache=True, inline="always")
def _wall_time(x, y, z, dx, dy, dz, z_plane, radius):
    """Branch-free :func:`_wall_hit`: the same value, computed for every lane."""
    t_plane = (z_plane - z) / dz
    xe = x + t_plane * dx
    ye = y + t_plane * dy
    a = dx * dx + dy * dy
    b = x * dx + y * dy
    c = x * x + y * y - radius * radius
    root = (-b + math.sqrt(max(b * b - a * c, 0.0))) / a
    beyond = xe * xe + ye * ye > radius * radius
    return root if (beyond & (c < 0.0)) else (0.0 if beyond else -1.0)


@numba.njit(cache=True, parallel=True, error_model="numpy")
def trace_packets(x0, y0, z0, dx0, dy0, dz0, tp0, wl_index,
                  kind, ez, curv, semi, focal, coat, slot, n_before, n_after, frames,
                  housing, panel_index,
                  out_state, out_fate, out_entered, cross):
    """:func:`trace_rays` on packets of :data:`LANES` rays, with the same arguments and results.

    Each packet's rays sit in small lane arrays and walk the elements together; inside an
    element every lane computes the same straight-line arithmetic and keeps its result
    only where it is still travelling (masks and selects instead of early exits), so the
    compiler can use the processor's vector units. The operations and their order are
    those of :func:`trace_rays`, lane by lane, so the results are identical.
    """
    n = x0.shape[0]
    n_el = kind.shape[0]
    has_housing = housing[0] > 0.5
    panel_z, hole_r, half_w, half_h = housing[1], housing[2], housing[3], housing[4]
    tube_r, tube_end_z = housing[5], housing[6]
    packets = (n + LANES - 1) // LANES
    chunks = (packets + CHUNK - 1) // CHUNK
    for q in numba.prange(chunks):  # scratch lanes allocated once per chunk of packets
        X = np.empty(LANES)
        Y = np.empty(LANES)
        Z = np.empty(LANES)
        DX = np.empty(LANES)
        DY = np.empty(LANES)
        DZ = np.empty(LANES)
        TP = np.empty(LANES)
        STOP = np.empty(LANES)
        W = np.empty(LANES, np.int64)
        FATE = np.empty(LANES, np.int8)
        ACT = np.empty(LANES, np.bool_)
        INS = np.empty(LANES, np.bool_)
        PEND = np.empty(LANES, np.bool_)
        N1 = np.empty(LANES)
        N2 = np.empty(LANES)
        UX = np.empty(LANES)
        UY = np.empty(LANES)
        UZ = np.empty(LANES)
        UDX = np.empty(LANES)
        UDY = np.empty(LANES)
        UDZ = np.empty(LANES)
        UTP = np.empty(LANES)
        G = np.empty(LANES, np.bool_)
        S = np.empty(LANES, np.bool_)
        F = np.empty(LANES, np.int8)
        for p in range(q * CHUNK, min((q + 1) * CHUNK, packets)):
            first = p * LANES
            count = min(LANES, n - first)
            for j in range(LANES):
                i = first + (j if j < count else 0)  # spare lanes repeat the first ray
                X[j], Y[j], Z[j] = x0[i], y0[i], z0[i]
                DX[j], DY[j], DZ[j] = dx0[i], dy0[i], dz0[i]
                TP[j] = tp0[i]
                W[j] = wl_index[i]
                ACT[j] = dz0[i] > 0.0
                FATE[j] = PASSED if dz0[i] > 0.0 else BACKWARD
                INS[j] = True
                PEND[j] = has_housing
                STOP[j] = np.inf
            start = 0
            if has_housing:
                for e in range(panel_index):
                    if kind[e] != PROBE:
                        continue
                    ze = ez[e]
                    _probe_lanes(X, Y, Z, DX, DY, DZ, TP, ACT, ze, cross, slot[e], first,
                                 count)
                start = panel_index
                for j in range(LANES):
                    go = ACT[j]
                    t = (panel_z - Z[j]) / DZ[j]
                    x = X[j] + t * DX[j]
                    y = Y[j] + t * DY[j]
                    r2 = x * x + y * y
                    in_hole = r2 <= hole_r * hole_r
                    on_panel = (not in_hole) & (abs(x) <= half_w) & (abs(y) <= half_h)
                    outside = (not in_hole) & (not on_panel)
                    a = DX[j] * DX[j] + DY[j] * DY[j]
                    b = x * DX[j] + y * DY[j]
                    c = r2 - tube_r * tube_r
                    disc = b * b - a * c
                    th = (-b - math.sqrt(disc)) / a
                    zh = panel_z + th * DZ[j]
                    hits = (outside & (b < 0.0) & (disc >= 0.0) & (zh >= panel_z)
                            & (zh <= tube_end_z))
                    X[j] = x if go else X[j]
                    Y[j] = y if go else Y[j]
                    Z[j] = panel_z if go else Z[j]
                    STOP[j] = zh if (go & hits) else STOP[j]
                    INS[j] = False if (go & outside) else INS[j]
                    FATE[j] = PANEL if (go & on_panel) else FATE[j]
                    ACT[j] = go & (not on_panel)
            for j in range(count):
                out_entered[first + j] = (INS[j] and ACT[j]) or not has_housing
            for e in range(start, n_el):
                ze = ez[e]
                k = kind[e]
                if has_housing:  # the tube wall before this element (none without)
                    for j in range(LANES):
                        go = ACT[j]
                        x, y, z, dx, dy, dz = X[j], Y[j], Z[j], DX[j], DY[j], DZ[j]
                        c1 = go & INS[j] & PEND[j] & (ze > tube_end_z)
                        th1 = _wall_time(x, y, z, dx, dy, dz, tube_end_z, tube_r)
                        hit1 = c1 & (th1 >= 0.0)
                        pend = PEND[j] & (not c1)
                        c2 = go & INS[j] & pend & (not hit1)
                        th2 = _wall_time(x, y, z, dx, dy, dz, ze, tube_r)
                        hit2 = c2 & (th2 >= 0.0)
                        c3 = go & (not INS[j]) & (k == PROBE) & (STOP[j] <= ze)
                        th3 = (STOP[j] - z) / dz
                        stop = hit1 | hit2 | c3
                        th = th1 if hit1 else (th2 if hit2 else th3)
                        X[j] = x + th * dx if stop else x
                        Y[j] = y + th * dy if stop else y
                        Z[j] = z + th * dz if stop else z
                        FATE[j] = WALL if stop else FATE[j]
                        PEND[j] = pend
                        ACT[j] = go & (not stop)
                if k == PROBE:
                    _probe_lanes(X, Y, Z, DX, DY, DZ, TP, ACT, ze, cross, slot[e], first,
                                 count)
                    continue
                mounted = frames[e, 0] > 0.5
                f = frames[e]
                bare = coat[e] < 0.0
                for j in range(LANES):  # copies to work on; each lane's indices gathered
                    G[j] = ACT[j] & INS[j]  # rays outside the tube pass beside the lenses
                    S[j] = False
                    F[j] = PASSED
                    UX[j], UY[j], UZ[j] = X[j], Y[j], Z[j]
                    UDX[j], UDY[j], UDZ[j] = DX[j], DY[j], DZ[j]
                    UTP[j] = TP[j]
                    N1[j] = n_before[e, W[j]]
                    N2[j] = n_after[e, W[j]]
                if mounted:
                    for j in range(LANES):
                        UX[j], UY[j], UZ[j], UDX[j], UDY[j], UDZ[j] = _frame(
                            UX[j], UY[j], UZ[j], UDX[j], UDY[j], UDZ[j], f, True)
                for j in range(LANES):
                    t = (ze - UZ[j]) / UDZ[j]
                    UX[j] = UX[j] + t * UDX[j]
                    UY[j] = UY[j] + t * UDY[j]
                    UZ[j] = ze
                if k == IDEAL:
                    for j in range(LANES):
                        x, y, dx, dy, dz = UX[j], UY[j], UDX[j], UDY[j], UDZ[j]
                        miss = x * x + y * y > semi[e] * semi[e]
                        u = dx / dz - x / focal[e]
                        v = dy / dz - y / focal[e]
                        norm = 1.0 / math.sqrt(1.0 + u * u + v * v)
                        UDX[j] = dx if miss else u * norm
                        UDY[j] = dy if miss else v * norm
                        UDZ[j] = dz if miss else norm
                        F[j] = MOUNT if miss else F[j]
                        S[j] = miss
                else:
                    c = curv[e]
                    if c != 0.0:
                        for j in range(LANES):
                            x, y, z, dx, dy, dz = UX[j], UY[j], UZ[j], UDX[j], UDY[j], UDZ[j]
                            ff = c * (x * x + y * y)
                            g = dz - c * (x * dx + y * dy)
                            disc = g * g - c * ff
                            miss = disc < 0.0
                            ts = ff / (g + math.sqrt(disc))
                            UX[j] = x if miss else x + ts * dx
                            UY[j] = y if miss else y + ts * dy
                            UZ[j] = z if miss else z + ts * dz
                            S[j] = miss
                    for j in range(LANES):
                        x, y, z, dx, dy, dz = UX[j], UY[j], UZ[j], UDX[j], UDY[j], UDZ[j]
                        stopped = S[j]
                        nz = 1.0 - c * (z - ze)
                        off_cap = not ((x * x + y * y <= semi[e] * semi[e]) & (nz > 0.0))
                        fate = MOUNT if (stopped | off_cap) else PASSED
                        stopped = stopped | off_cap
                        nx, ny = -c * x, -c * y
                        cos_i = dx * nx + dy * ny + dz * nz
                        flip = -1.0 if cos_i < 0.0 else 1.0
                        cos_i = abs(cos_i)
                        n1 = N1[j]
                        n2 = N2[j]
                        eta = n1 / n2
                        kk = 1.0 - eta * eta * (1.0 - cos_i * cos_i)
                        tir = (not stopped) & (kk < 0.0)
                        fate = TIR if tir else fate
                        stopped = stopped | tir
                        cos_t = math.sqrt(kk)
                        scale = (cos_t - eta * cos_i) * flip
                        ndx = eta * dx + scale * nx
                        ndy = eta * dy + scale * ny
                        ndz = eta * dz + scale * nz
                        fresnel = UTP[j] * _fresnel_transmittance(n1, n2, cos_i, cos_t)
                        coated = UTP[j] * (1.0 - coat[e])
                        ntp = fresnel if bare else coated
                        UDX[j] = dx if stopped else ndx
                        UDY[j] = dy if stopped else ndy
                        UDZ[j] = dz if stopped else ndz
                        UTP[j] = UTP[j] if stopped else ntp
                        backward = (not stopped) & (UDZ[j] <= 0.0)
                        F[j] = BACKWARD if backward else fate
                        S[j] = stopped | backward
                if mounted:
                    for j in range(LANES):
                        bx, by, bz, bdx, bdy, bdz = _frame(UX[j], UY[j], UZ[j], UDX[j], UDY[j],
                                                           UDZ[j], f, False)
                        keep = not S[j]
                        UX[j] = bx if keep else UX[j]
                        UY[j] = by if keep else UY[j]
                        UZ[j] = bz if keep else UZ[j]
                        UDX[j] = bdx if keep else UDX[j]
                        UDY[j] = bdy if keep else UDY[j]
                        UDZ[j] = bdz if keep else UDZ[j]
                        backward = keep & (UDZ[j] <= 0.0)
                        F[j] = BACKWARD if backward else F[j]
                        S[j] = S[j] | backward
                for j in range(LANES):
                    go = G[j]
                    X[j] = UX[j] if go else X[j]
                    Y[j] = UY[j] if go else Y[j]
                    Z[j] = UZ[j] if go else Z[j]
                    DX[j] = UDX[j] if go else DX[j]
                    DY[j] = UDY[j] if go else DY[j]
                    DZ[j] = UDZ[j] if go else DZ[j]
                    TP[j] = UTP[j] if go else TP[j]
                    FATE[j] = F[j] if (go & S[j]) else FATE[j]
                    ACT[j] = ACT[j] & (not (go & S[j]))
            for j in range(count):
                x, y, z, dx, dy, dz = X[j], Y[j], Z[j], DX[j], DY[j], DZ[j]
                fate = FATE[j]
                if ACT[j]:
                    if INS[j] and PEND[j]:
                        th = _wall_hit(x, y, z, dx, dy, dz, tube_end_z, tube_r)
                        if th >= 0.0:
                            x, y, z = _advance(x, y, z, dx, dy, dz, th)
                            fate = WALL
                    if fate == PASSED and not INS[j] and STOP[j] < np.inf:
                        th = (STOP[j] - z) / dz
                        x, y, z = _advance(x, y, z, dx, dy, dz, th)
                        fate = WALL
                i = first + j
                out_state[0, i] = x
                out_state[1, i] = y
                out_state[2, i] = z
                out_state[3, i] = dx
                out_state[4, i] = dy
                out_state[5, i] = dz
                out_state[6, i] = TP[j]
                out_fate[i] = fate
