"""Single lenses: the ideal thin lens and the thick spherical lens.

Sign convention: light (and our backward rays) travel toward +z; a radius
is positive when its centre of curvature lies on the +z side of its vertex;
a plane surface has radius ``math.inf`` (curvature 0). Lengths in mm.

References
----------
.. [1] E. Hecht, Optics, 5th ed. (2017), ch. 6: thick-lens lensmaker's
   equation 1/f = (n - 1)[1/R1 - 1/R2 + (n - 1) d / (n R1 R2)].
.. [2] W. J. Smith, Modern Optical Engineering, 4th ed. (2008), ch. 2-3:
   sag of a sphere, Coddington shape factor q = (R2 + R1) / (R2 - R1).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from cloakview.optics.errors import InputError, require_finite_positive
from cloakview.optics.materials import D_LINE_NM, Material

#: Shape names and their Coddington shape factors q = (R2 + R1)/(R2 - R1) (Smith [2]).
#: "plano-convex" has its curved face toward the viewer (-z), "convex-plano" its flat face.
SHAPES: dict[str, float] = {
    "biconvex": 0.0,
    "plano-convex": 1.0,
    "convex-plano": -1.0,
    "meniscus": 2.5,
}


def sag(height_mm, curvature_per_mm):
    """Sag of a spherical surface [mm] at radial ``height_mm`` [mm] (Smith [2]).

    ``z = c h^2 / (1 + sqrt(1 - c^2 h^2))``; NaN where the height exceeds the radius.
    """
    h2 = np.asarray(height_mm, dtype=np.float64) ** 2
    arg = 1.0 - curvature_per_mm**2 * h2
    arg = np.where(arg > -1e-12, np.maximum(arg, 0.0), np.nan)  # rounding at h = R is 0
    return curvature_per_mm * h2 / (1.0 + np.sqrt(arg))


def _curvature(radius_mm: float) -> float:
    return 0.0 if math.isinf(radius_mm) else 1.0 / radius_mm


def _under_surface_volume(semi_diameter_mm: float, curvature_per_mm: float) -> float:
    """Signed volume between a surface's vertex plane and the surface, inside the clear radius."""
    if curvature_per_mm == 0.0:
        return 0.0
    radius = 1.0 / abs(curvature_per_mm)
    depth = abs(float(sag(semi_diameter_mm, curvature_per_mm)))
    cap = math.pi * depth**2 * (3.0 * radius - depth) / 3.0
    return math.copysign(math.pi * semi_diameter_mm**2 * depth - cap, curvature_per_mm)


@dataclass(frozen=True)
class ThinLens:
    """An ideal thin lens (the textbook picture): a plane that deflects rays perfectly.

    Parameters
    ----------
    focal_length_mm : float
        Focal length [mm], the same at every wavelength.
    diameter_mm : float
        Clear diameter [mm].
    """

    focal_length_mm: float
    diameter_mm: float

    def __post_init__(self):
        require_finite_positive("focal_length_mm", self.focal_length_mm)
        require_finite_positive("diameter_mm", self.diameter_mm)

    center_thickness_mm = 0.0
    edge_thickness_mm = 0.0

    def mass_g(self) -> float:
        """An ideal lens has no glass."""
        return 0.0

    def mirrored(self) -> ThinLens:
        """The lens turned round (identical for a thin lens)."""
        return self


@dataclass(frozen=True)
class ThickLens:
    """A thick lens with two spherical (or plane) faces.

    Parameters
    ----------
    r1_mm, r2_mm : float
        Radii of the viewer-side and far-side faces [mm]; ``math.inf`` for a plane.
    center_thickness_mm : float
        Vertex-to-vertex thickness on the axis [mm].
    diameter_mm : float
        Clear diameter [mm].
    material : Material
        Lens material.

    Raises
    ------
    InputError
        If the diameter is larger than a face's sphere, or the edge thickness is negative.
    """

    r1_mm: float
    r2_mm: float
    center_thickness_mm: float
    diameter_mm: float
    material: Material

    def __post_init__(self):
        require_finite_positive("center_thickness_mm", self.center_thickness_mm)
        require_finite_positive("diameter_mm", self.diameter_mm)
        for key, radius in (("r1_mm", self.r1_mm), ("r2_mm", self.r2_mm)):
            if radius != radius or radius == 0.0:
                raise InputError(key, radius, "radius must be non-zero (inf for a plane face)")
            if abs(radius) < self.diameter_mm / 2.0:
                raise InputError(
                    "diameter_mm",
                    self.diameter_mm,
                    f"half the diameter exceeds |{key}| = {abs(radius):.3f} mm: the sag "
                    "would exceed the radius; use a smaller diameter or a longer focal length",
                )
        if self.edge_thickness_mm < 0.0:
            raise InputError(
                "center_thickness_mm",
                self.center_thickness_mm,
                f"edge thickness would be {self.edge_thickness_mm:.3f} mm (negative); "
                "use a thicker lens or a smaller diameter",
            )

    @property
    def c1(self) -> float:
        """Curvature of the viewer-side face [1/mm]."""
        return _curvature(self.r1_mm)

    @property
    def c2(self) -> float:
        """Curvature of the far-side face [1/mm]."""
        return _curvature(self.r2_mm)

    @property
    def edge_thickness_mm(self) -> float:
        """Thickness at the rim of the clear diameter [mm]."""
        h = self.diameter_mm / 2.0
        return float(self.center_thickness_mm - sag(h, self.c1) + sag(h, self.c2))

    def volume_mm3(self) -> float:
        """Glass volume inside the clear diameter [mm^3] (spherical caps, exact)."""
        h = self.diameter_mm / 2.0
        return (
            math.pi * h * h * self.center_thickness_mm
            - _under_surface_volume(h, self.c1)
            + _under_surface_volume(h, self.c2)
        )

    def mass_g(self) -> float:
        """Mass of the glass inside the clear diameter [g]."""
        return self.volume_mm3() * 1e-3 * self.material.density_g_cm3

    def mirrored(self) -> ThickLens:
        """The same lens turned round (faces swapped)."""
        return replace(self, r1_mm=-self.r2_mm, r2_mm=-self.r1_mm)


def _power_for_thickness(power, n, thickness, q):
    """Solve the thick lensmaker's equation (Hecht [1]) for K = c1 - c2 at shape factor q."""
    a = (n - 1.0) ** 2 * thickness * (q * q - 1.0) / (4.0 * n)
    b = n - 1.0
    disc = b * b + 4.0 * a * power
    if disc < 0.0:
        return None
    return 2.0 * power / (b + math.sqrt(disc))


def lens_for_focal_length(
    focal_length_mm: float,
    diameter_mm: float,
    material: Material,
    shape: str | float = "biconvex",
    min_edge_mm: float = 2.0,
    wavelength_nm: float = D_LINE_NM,
) -> ThickLens:
    """Make a thick lens of the requested focal length at ``wavelength_nm``.

    The centre thickness is the smallest that keeps ``min_edge_mm`` of glass
    at the rim of the clear diameter; the radii solve the thick lensmaker's
    equation exactly for that thickness.

    Parameters
    ----------
    focal_length_mm : float
        Wanted effective focal length [mm] at ``wavelength_nm``.
    diameter_mm : float
        Clear diameter [mm].
    material : Material
        Lens material.
    shape : str or float
        A name in :data:`SHAPES` or a Coddington shape factor q.
    min_edge_mm : float
        Minimum edge thickness [mm], >= 0.
    wavelength_nm : float
        Design wavelength [nm] (d line by default).

    Returns
    -------
    ThickLens

    Raises
    ------
    InputError
        If no such lens exists (diameter too large for the focal length).

    References
    ----------
    .. [1] Hecht, Optics, ch. 6 (thick-lens lensmaker's equation).
    .. [2] Smith, Modern Optical Engineering, ch. 2 (sag, shape factor).
    """
    f = require_finite_positive("focal_length_mm", focal_length_mm)
    diameter = require_finite_positive("diameter_mm", diameter_mm)
    if not (math.isfinite(min_edge_mm) and min_edge_mm >= 0.0):
        raise InputError("min_edge_mm", min_edge_mm, "minimum edge thickness must be >= 0 mm")
    q = _shape_factor(shape)
    n = float(material.index(wavelength_nm))
    h = diameter / 2.0
    power = 1.0 / f
    thickness = max(min_edge_mm, 0.1) + h * h * power / (n - 1.0) / 2.0
    too_big = InputError(
        "diameter_mm",
        diameter,
        f"no {shape} lens of f = {f:g} mm in {material.name} can be {diameter:g} mm wide "
        f"with {min_edge_mm:g} mm of glass at the edge (its faces' sag would exceed their "
        "radius); use a longer focal length, a smaller diameter or a thinner edge",
    )
    for _ in range(500):
        k = _power_for_thickness(power, n, thickness, q)
        if k is None:
            raise too_big
        c1, c2 = k * (1.0 + q) / 2.0, k * (q - 1.0) / 2.0
        if max(abs(c1), abs(c2)) * h >= 1.0:
            raise too_big
        new = min_edge_mm + float(sag(h, c1) - sag(h, c2))
        new = max(new, 1e-3)
        if abs(new - thickness) < 1e-13 * max(1.0, thickness):
            thickness = new
            break
        thickness = new
    else:
        raise too_big
    return ThickLens(*_radii(power, n, thickness, q), thickness, diameter, material)


def _radii(power: float, n: float, thickness: float, q: float) -> tuple[float, float]:
    """Radii [mm] of a lens of ``power`` [1/mm], index ``n``, thickness and shape factor q."""
    k = _power_for_thickness(power, n, thickness, q)
    if k is None:
        raise InputError("center_thickness_mm", thickness, "no lens of this shape and "
                         "focal length can be this thick")
    c1, c2 = k * (1.0 + q) / 2.0, k * (q - 1.0) / 2.0
    return (math.inf if c1 == 0.0 else 1.0 / c1), (math.inf if c2 == 0.0 else 1.0 / c2)


def lens_with_thickness(focal_length_mm: float, diameter_mm: float, material: Material,
                        shape: str | float, center_thickness_mm: float,
                        wavelength_nm: float = D_LINE_NM) -> ThickLens:
    """A thick lens of given focal length, shape and centre thickness (a catalogue lens).

    The radii solve the thick lensmaker's equation (Hecht) for that thickness.

    Raises
    ------
    InputError
        If no such lens exists or its edge would be thinner than zero.
    """
    f = require_finite_positive("focal_length_mm", focal_length_mm)
    thickness = require_finite_positive("center_thickness_mm", center_thickness_mm)
    n = float(material.index(wavelength_nm))
    r1, r2 = _radii(1.0 / f, n, thickness, _shape_factor(shape))
    return ThickLens(r1, r2, thickness, require_finite_positive("diameter_mm", diameter_mm),
                     material)


def _shape_factor(shape) -> float:
    if isinstance(shape, str):
        key = shape.strip().lower()
        if key in SHAPES:
            return SHAPES[key]
        try:
            return float(key)
        except ValueError:
            names = ", ".join(SHAPES)
            raise InputError(
                "shape", shape, f"unknown lens shape; use one of {names} or a shape factor"
            ) from None
    if isinstance(shape, bool) or not isinstance(shape, (int, float)):
        raise InputError("shape", shape, f"must be one of {', '.join(SHAPES)} or a shape "
                         "factor (a number)")
    try:
        q = float(shape)
    except OverflowError:
        q = math.inf
    if not math.isfinite(q):
        raise InputError("shape", shape, "shape factor must be finite")
    return q
