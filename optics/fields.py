"""How wide a view through a laid-out cloak stays true to the background.

A fan of real rays from an on-axis eye is traced through the device to a background
plane and compared with where the same rays would land with no device (free space).

References
----------
.. [1] J. S. Choi and J. C. Howell, "Paraxial ray optics cloaking", Optics Express 22,
   29465-29478 (2014): the ideal device acts as free space.
.. [2] Normal visual acuity resolves about 1 arcminute (Snellen 20/20; common practice).
"""

from __future__ import annotations

import math

import numpy as np
from cloakview.optics.cloak import CloakDesign
from cloakview.optics.materials import C_LINE_NM, D_LINE_NM, F_LINE_NM
from cloakview.optics.surfaces import Probe
from cloakview.optics.trace import Rays, trace

ARCMIN_PER_RAD = 180.0 * 60.0 / math.pi
ACUITY_ARCMIN = 1.0  # [2]


def _landing(design: CloakDesign, eye_distance_mm, background_mm, wavelength_nm, angles):
    system = design.system
    eye_z = system.front_z_mm - eye_distance_mm
    wall_z = system.back_z_mm + background_mm
    origins = np.zeros((len(angles), 3))
    origins[:, 2] = eye_z
    directions = np.stack([np.sin(angles), np.zeros_like(angles), np.cos(angles)], axis=1)
    result = trace(Rays.from_vectors(origins, directions, wavelength_nm),
                   [*system.surfaces, Probe(wall_z, "wall")])
    return result.passed, result.crossings["wall"].x, wall_z - eye_z


def view_quality(design: CloakDesign, eye_distance_mm: float, background_mm: float = 1500.0,
                 samples: int = 801) -> dict:
    """Acuity field [deg], colour fringe [arcmin] and through-window [deg] for an on-axis eye.

    The acuity field is the largest angle off the axis up to which every ray passes the
    device and lands within 1 arcminute of where free space would put it; the colour
    fringe is the largest F-to-C line spread inside that field (or inside the
    through-window when the field is empty).
    """
    semi = design.system.lenses[0].lens.diameter_mm / 2
    angles = np.linspace(0.0, math.atan(semi / eye_distance_mm), samples)
    passed, x_d, distance = _landing(design, eye_distance_mm, background_mm, D_LINE_NM, angles)
    free = np.tan(angles) * distance
    shift = np.abs(x_d - free) / distance * ARCMIN_PER_RAD
    good = passed & (shift <= ACUITY_ARCMIN)
    field = int(np.argmin(good)) if not good.all() else samples
    window = int(np.argmin(passed)) if not passed.all() else samples
    _, x_f, _ = _landing(design, eye_distance_mm, background_mm, F_LINE_NM, angles)
    _, x_c, _ = _landing(design, eye_distance_mm, background_mm, C_LINE_NM, angles)
    span = slice(0, max(field, 1) if field else max(window, 1))
    spread = np.abs(x_f - x_c)[span] / distance * ARCMIN_PER_RAD
    return {
        "acuity_field_deg": float(np.degrees(angles[field - 1])) if field else 0.0,
        "through_window_deg": float(np.degrees(angles[window - 1])) if window else 0.0,
        "color_fringe_arcmin": float(np.nanmax(spread)) if np.isfinite(spread).any() else None,
    }
