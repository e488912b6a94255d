"""The four-lens cloak designer: from two focal lengths to a device that equals free space.

Lenses 1 and 4 (outer) have focal length f1, lenses 2 and 3 (inner) f2.
Each outer lens and its inner neighbour form an afocal (Keplerian) pair
with spacing t1 = f1 + f2; the two pairs face each other across the inner
gap t2 = 2 f2 (f1 + f2) / (f1 - f2), which makes the whole system
[[1, L], [0, 1]] with L = 2 t1 + t2 its length.

Derivation (ideal thin lenses, Kogelnik and Li matrices): the pair matrix
is P = [[-f2/f1, t1], [0, -f1/f2]]; the mirrored pair is
Q = [[-f1/f2, t1], [0, -f2/f1]]. For any gap g,
Q T(g) P = [[1, B(g)], [0, 1]] with B(g) = -2 t1 f1/f2 + g f1^2/f2^2, and
B(g) = 2 t1 + g gives g = 2 f2 (f1 + f2) / (f1 - f2).

Thick lenses: the thin-lens spacings hold between principal planes (from H'
of one lens to H of the next), which keeps each pair afocal. The principal
planes of each lens are then a distance s apart, which adds s to the
physical length but nothing to B, so the background would sit too close.
Because B and the length are both affine in the inner gap, the corrected
gap follows from two evaluations of the real-surface matrix.

References
----------
.. [1] J. S. Choi and J. C. Howell, "Paraxial ray optics cloaking",
   Optics Express 22(24), 29465-29478 (2014).
.. [2] H. Kogelnik and T. Li, "Laser beams and resonators", Applied Optics 5,
   1550-1567 (1966).
.. [3] E. Hecht, Optics, 5th ed. (2017), sec. 6.2 (principal planes).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from cloakview.optics.errors import InputError, require_finite_positive
from cloakview.optics.lenses import ThickLens, ThinLens, lens_for_focal_length
from cloakview.optics.materials import C_LINE_NM, D_LINE_NM, F_LINE_NM, Material
from cloakview.optics.system import LensSystem, PlacedLens
from cloakview.optics.trace import Rays, trace

DESIGN_WAVELENGTHS_NM = (F_LINE_NM, D_LINE_NM, C_LINE_NM)
#: Longest inner gap laid out [mm]: 100 m, beyond any exhibit (our own limit; it also
#: keeps focal lengths that nearly agree, where the gap diverges, out of the arithmetic).
MAX_INNER_GAP_MM = 100_000.0
#: Longest focal length accepted [mm] (1 km; our own limit against overflow).
MAX_FOCAL_MM = 1_000_000.0


def ideal_spacings(f_outer_mm: float, f_inner_mm: float) -> tuple[float, float]:
    """Return (t1, t2) [mm] for ideal thin lenses (Choi and Howell [1]).

    Raises
    ------
    InputError
        For non-finite or non-positive focal lengths, or ``f_outer_mm <= f_inner_mm``.
    """
    f1 = require_finite_positive("f_outer", f_outer_mm)
    f2 = require_finite_positive("f_inner", f_inner_mm)
    for key, value in (("f_outer", f1), ("f_inner", f2)):
        if value > MAX_FOCAL_MM:
            raise InputError(key, value, f"must be at most {MAX_FOCAL_MM / 1000:g} m")
    if f1 <= f2:
        why = "infinite" if f1 == f2 else "negative"
        raise InputError(
            "f_outer", f_outer_mm,
            f"must be longer than f_inner = {f2:g} mm, or the inner gap "
            f"2 f2 (f1 + f2) / (f1 - f2) would be {why}",
        )
    ratio = f2 / f1
    t2 = 2.0 * f2 * (1.0 + ratio) / (1.0 - ratio)
    if not t2 <= MAX_INNER_GAP_MM:
        raise InputError(
            "f_outer", f_outer_mm,
            f"is too close to f_inner = {f2:.12g} mm: the inner gap 2 f2 (f1 + f2) / (f1 - f2) "
            f"would be {t2 / 1000:.3g} m (at most {MAX_INNER_GAP_MM / 1000:g} m); make the "
            "focal lengths differ more",
        )
    return f1 + f2, t2


@dataclass(frozen=True)
class LensChoice:
    """How to make the lenses: ideal, or thick lenses of a shape and material.

    Parameters
    ----------
    ideal : bool
        Ideal thin lenses (the textbook picture).
    material : Material
        Lens material (thick lenses).
    shape : str or float
        Shape name or Coddington shape factor for the viewer-side pair;
        the far pair is the mirror image.
    outer_diameter_mm, inner_diameter_mm : float
        Clear diameters [mm].
    min_edge_mm : float
        Minimum edge thickness [mm].
    """

    ideal: bool
    material: Material
    shape: str | float
    outer_diameter_mm: float
    inner_diameter_mm: float
    min_edge_mm: float = 2.0


@dataclass(frozen=True)
class CloakDesign:
    """A laid-out four-lens cloak.

    Attributes
    ----------
    system : LensSystem
        The four lenses at their vertex positions, the first at z = 0.
    outer_spacing_mm : float
        H' of lens 1 to H of lens 2 (= H' of lens 3 to H of lens 4) [mm].
    inner_spacing_mm : float
        H' of lens 2 to H of lens 3 [mm], as built.
    thin_inner_spacing_mm : float
        The ideal-lens inner gap t2 [mm], for comparison.
    """

    system: LensSystem
    f_outer_mm: float
    f_inner_mm: float
    outer_spacing_mm: float
    inner_spacing_mm: float
    thin_inner_spacing_mm: float

    @property
    def length_mm(self) -> float:
        """First to last vertex [mm]."""
        return self.system.length_mm

    @property
    def inner_gap_shift_mm(self) -> float:
        """How far the thick-lens correction moved the inner gap [mm]."""
        return self.inner_spacing_mm - self.thin_inner_spacing_mm

    def vertex_gaps_mm(self) -> list[float]:
        """The three air gaps between facing vertices [mm]."""
        lenses = self.system.lenses
        return [b.z_mm - a.back_z_mm for a, b in zip(lenses, lenses[1:], strict=False)]

    def free_space_error(self, wavelength_nm: float = D_LINE_NM) -> float:
        """Largest relative deviation of the ABCD from [[1, L], [0, 1]] at ``wavelength_nm``."""
        m = self.system.abcd(wavelength_nm)
        length = self.length_mm
        return float(max(abs(m[0, 0] - 1.0), abs(m[1, 1] - 1.0), abs(m[1, 0]) * length,
                         abs(m[0, 1] - length) / length))


def _principal_offsets(lens) -> tuple[float, float]:
    """(H - front vertex, back vertex - H') [mm] of a lens placed at z = 0."""
    cp = PlacedLens(lens, 0.0).cardinal_points()
    return cp.front_principal_z_mm, lens.center_thickness_mm - cp.rear_principal_z_mm


def _lay_out(lenses, outer_gap: float, inner_gap: float) -> tuple[PlacedLens, ...]:
    """Place lenses so that H'_i to H_{i+1} equals outer, inner, outer gap [mm]."""
    gaps = (outer_gap, inner_gap, outer_gap)
    placed, z = [], 0.0
    for index, lens in enumerate(lenses):
        front_offset, back_offset = _principal_offsets(lens)
        if index:
            z += gaps[index - 1] - front_offset
        label = f"L{index + 1} ({'outer' if index in (0, 3) else 'inner'})"
        placed.append(PlacedLens(lens, z, label))
        z += lens.center_thickness_mm - back_offset  # z of this lens's H'
    return tuple(placed)


def _efl(lens) -> float:
    if isinstance(lens, ThinLens):
        return lens.focal_length_mm
    return float(PlacedLens(lens, 0.0).cardinal_points().efl_mm)


def design_cloak(f_outer_mm: float, f_inner_mm: float, choice: LensChoice,
                 coated: bool = False) -> CloakDesign:
    """Lay out a four-lens cloak whose 587.6 nm ABCD equals free space over its length.

    Parameters
    ----------
    f_outer_mm, f_inner_mm : float
        Focal lengths of the outer and inner lenses [mm] at 587.6 nm.
    choice : LensChoice
        Ideal lenses, or shape, material and diameters of thick lenses.
    coated : bool
        Anti-reflection coating on every surface.

    Returns
    -------
    CloakDesign

    Raises
    ------
    InputError
        For impossible focal lengths or lenses that cannot be made.

    References
    ----------
    .. [1] Choi and Howell (2014), the spacing rule for thin lenses.
    """
    ideal_spacings(f_outer_mm, f_inner_mm)  # refuse impossible focal lengths first
    if choice.ideal:
        outer = ThinLens(f_outer_mm, choice.outer_diameter_mm)
        inner = ThinLens(f_inner_mm, choice.inner_diameter_mm)
    else:
        outer = _make(f_outer_mm, choice.outer_diameter_mm, choice, "outer")
        inner = _make(f_inner_mm, choice.inner_diameter_mm, choice, "inner")
    return design_from_lenses(outer, inner, coated)


def design_from_lenses(outer, inner, coated: bool = False) -> CloakDesign:
    """Lay out a cloak from two given lenses (each used twice; the far pair mirrored).

    Parameters
    ----------
    outer, inner : ThinLens or ThickLens
        The outer and inner lens as built; their focal lengths at 587.6 nm set the
        spacings (Choi and Howell), and thick lenses get the principal-plane correction.
    coated : bool
        Anti-reflection coating on every surface.

    Raises
    ------
    InputError
        If the outer lens is not longer in focal length, or the lenses would overlap.
    """
    f_outer, f_inner = _efl(outer), _efl(inner)
    t1, t2 = ideal_spacings(f_outer, f_inner)
    ideal = isinstance(outer, ThinLens) and isinstance(inner, ThinLens)
    lenses = (outer, inner, inner.mirrored(), outer.mirrored())

    def build(gap: float) -> LensSystem:
        return LensSystem(_lay_out(lenses, t1, gap), coated=coated)

    gap = t2
    if not ideal:
        # B - length is affine in the gap: two evaluations give the exact root.
        def residual(g: float) -> float:
            system = build(g)
            return float(system.abcd()[0, 1] - system.length_mm)

        r0, r1 = residual(t2), residual(t2 + 1.0)
        gap = t2 - r0 / (r1 - r0)
    system = build(gap)
    for a, b in zip(system.lenses, system.lenses[1:], strict=False):
        if b.z_mm < a.back_z_mm:
            raise InputError(
                "f_inner", f_inner,
                f"lenses {a.label} and {b.label} would overlap; the lenses are too thick "
                "for these focal lengths: use longer focal lengths or smaller diameters",
            )
    return CloakDesign(system, float(f_outer), float(f_inner), t1, gap, t2)


def _make(focal_mm: float, diameter_mm: float, choice: LensChoice, role: str) -> ThickLens:
    try:
        return lens_for_focal_length(focal_mm, diameter_mm, choice.material, choice.shape,
                                     choice.min_edge_mm)
    except InputError as error:
        key = {"diameter_mm": f"{role}_diameter", "focal_length_mm": f"f_{role}"}.get(
            error.key, error.key)
        raise InputError(key, error.value, error.rule) from None


def through_window_half_angle_deg(design: CloakDesign, eye_distance_mm: float,
                                  wavelength_nm: float = D_LINE_NM, samples: int = 4001) -> float:
    """Half-angle [deg] of the cone, seen from an on-axis eye, that passes through every lens.

    The eye sits ``eye_distance_mm`` [mm] in front of the first vertex. Found by
    tracing a fan of real rays (the tracer decides which pass), so it holds for
    thick lenses as well as ideal ones.
    """
    if not (math.isfinite(eye_distance_mm) and eye_distance_mm > 0.0):
        raise InputError("eye_distance", eye_distance_mm, "must be a positive distance in mm")
    semi = design.system.lenses[0].lens.diameter_mm / 2.0
    limit = math.atan(semi / eye_distance_mm)
    angles = np.linspace(0.0, limit, samples)
    origins = np.zeros((samples, 3))
    origins[:, 2] = design.system.front_z_mm - eye_distance_mm
    directions = np.stack([np.sin(angles), np.zeros(samples), np.cos(angles)], axis=1)
    result = trace(Rays.from_vectors(origins, directions, wavelength_nm), design.system.surfaces)
    passed = result.passed
    if not passed[0]:
        return 0.0
    first_fail = np.argmin(passed) if not passed.all() else samples - 1
    return float(np.degrees(angles[max(first_fail - 1, 0)]))
