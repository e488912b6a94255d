"""Lenses placed on one axis, turned into the surfaces the tracer and the ABCD code use.

References
----------
.. [1] E. Hecht, Optics, 5th ed. (2017), sec. 6.2 (principal planes of a
   thick lens and of a system of lenses).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from cloakview.optics.lenses import ThickLens, ThinLens
from cloakview.optics.materials import AIR, D_LINE_NM, Material
from cloakview.optics.paraxial import CardinalPoints, cardinal_points, system_matrix
from cloakview.optics.surfaces import IdealLens, Mount, Refracting

#: Residual reflectance per surface of a broadband multilayer anti-reflection coating
#: in the visible (about 0.5 %; common practice, value from memory).
AR_COATING_REFLECTANCE = 0.005


@dataclass(frozen=True)
class PlacedLens:
    """A lens with its viewer-side vertex at ``z_mm`` [mm] on the device axis.

    ``decenter_mm`` and ``tilt_deg`` describe a placement error (for tolerancing); the
    paraxial matrices ignore them, the tracer honours them.
    """

    lens: ThinLens | ThickLens
    z_mm: float
    label: str = ""
    decenter_mm: tuple[float, float] = (0.0, 0.0)
    tilt_deg: tuple[float, float] = (0.0, 0.0)

    def _mount(self) -> Mount | None:
        if self.decenter_mm == (0.0, 0.0) and self.tilt_deg == (0.0, 0.0):
            return None
        return Mount(*self.decenter_mm, *self.tilt_deg, self.center_z_mm)

    @property
    def back_z_mm(self) -> float:
        """Axial position of the far-side vertex [mm]."""
        return self.z_mm + self.lens.center_thickness_mm

    @property
    def center_z_mm(self) -> float:
        """Axial position of the lens centre, where a rail carriage holds it [mm]."""
        return self.z_mm + 0.5 * self.lens.center_thickness_mm

    def surfaces(self, medium: Material, coated: bool) -> list[Refracting | IdealLens]:
        """The lens's surfaces in z order."""
        lens = self.lens
        semi = lens.diameter_mm / 2.0
        mount = self._mount()
        if isinstance(lens, ThinLens):
            return [IdealLens(self.z_mm, lens.focal_length_mm, semi, self.label, mount)]
        coat = AR_COATING_REFLECTANCE if coated else None
        return [
            Refracting(self.z_mm, lens.c1, semi, medium, lens.material, coat,
                       f"{self.label} front", mount),
            Refracting(self.back_z_mm, lens.c2, semi, lens.material, medium, coat,
                       f"{self.label} back", mount),
        ]

    def cardinal_points(self, wavelength_nm: float = D_LINE_NM,
                        medium: Material = AIR) -> CardinalPoints:
        """EFL, BFL and principal planes of this lens alone (positions in device z) [mm]."""
        m = system_matrix(self.surfaces(medium, False), wavelength_nm, self.z_mm,
                          self.back_z_mm, medium)
        return cardinal_points(m, self.z_mm, self.back_z_mm)


@dataclass(frozen=True)
class LensSystem:
    """Lenses on one axis, viewer side first.

    Parameters
    ----------
    lenses : tuple of PlacedLens
        In order of increasing ``z_mm``, not overlapping.
    medium : Material
        Surrounding medium (air).
    coated : bool
        Whether every lens surface carries an anti-reflection coating.
    """

    lenses: tuple[PlacedLens, ...]
    medium: Material = AIR
    coated: bool = False
    _surfaces: tuple = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        surfaces = []
        for placed in self.lenses:
            surfaces.extend(placed.surfaces(self.medium, self.coated))
        object.__setattr__(self, "_surfaces", tuple(surfaces))

    @property
    def surfaces(self) -> tuple[Refracting | IdealLens, ...]:
        """All surfaces in z order."""
        return self._surfaces

    @property
    def front_z_mm(self) -> float:
        """Viewer-side vertex of the first lens [mm]."""
        return self.lenses[0].z_mm

    @property
    def back_z_mm(self) -> float:
        """Far-side vertex of the last lens [mm]."""
        return self.lenses[-1].back_z_mm

    @property
    def length_mm(self) -> float:
        """Physical length from the first to the last vertex [mm]."""
        return self.back_z_mm - self.front_z_mm

    def abcd(self, wavelength_nm: float = D_LINE_NM) -> np.ndarray:
        """System matrix from the first to the last vertex at ``wavelength_nm`` [nm]."""
        return system_matrix(self.surfaces, wavelength_nm, self.front_z_mm, self.back_z_mm,
                             self.medium)

    def cardinal_points(self, wavelength_nm: float = D_LINE_NM) -> CardinalPoints:
        """Cardinal points of the whole system [mm] (Hecht [1])."""
        return cardinal_points(self.abcd(wavelength_nm), self.front_z_mm, self.back_z_mm)
