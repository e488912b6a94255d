"""What rays can meet, as plain specifications (the tracer gives them meaning).

All elements sit perpendicular to the device axis (z) at ``z_mm`` in the
device frame: x, y transverse, z toward the background, millimetres.

References
----------
.. [1] W. T. Welford, Aberrations of Optical Systems (Adam Hilger, 1986),
   ch. 4: a spherical surface of curvature c through its vertex,
   c (x^2 + y^2 + z^2) - 2 z = 0.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from cloakview.optics.materials import Material


@dataclass(frozen=True)
class Mount:
    """A lens's rigid placement error: decentred sideways and tilted about its centre.

    Parameters
    ----------
    dx_mm, dy_mm : float
        Decentre of the lens [mm].
    tilt_x_deg, tilt_y_deg : float
        Rotation about the x axis, then about the y axis [deg], about the lens centre.
    pivot_z_mm : float
        Axial position of the lens centre [mm].
    """

    dx_mm: float = 0.0
    dy_mm: float = 0.0
    tilt_x_deg: float = 0.0
    tilt_y_deg: float = 0.0
    pivot_z_mm: float = 0.0

    def rotation(self) -> np.ndarray:
        """R = R_y(tilt_y) R_x(tilt_x): local (lens) to device directions."""
        a, b = np.radians(self.tilt_x_deg), np.radians(self.tilt_y_deg)
        rx = np.array([[1, 0, 0], [0, np.cos(a), -np.sin(a)], [0, np.sin(a), np.cos(a)]])
        ry = np.array([[np.cos(b), 0, np.sin(b)], [0, 1, 0], [-np.sin(b), 0, np.cos(b)]])
        return ry @ rx


@dataclass(frozen=True)
class Refracting:
    """A spherical (or plane, curvature 0) boundary between two media.

    Parameters
    ----------
    z_mm : float
        Axial position of the vertex [mm].
    curvature_per_mm : float
        1 / radius [1/mm]; positive when the centre lies toward +z.
    semi_aperture_mm : float
        Clear radius [mm]; rays landing farther from the axis hit the mount.
    before, after : Material
        Media on the -z and +z sides.
    coating_reflectance : float or None
        None for a bare surface (Fresnel reflection); otherwise the residual
        reflectance of an anti-reflection coating [fraction].
    label : str
        Name used in reports.
    mount : Mount, optional
        Decentre and tilt of the lens this surface belongs to (None: perfectly placed).
    """

    z_mm: float
    curvature_per_mm: float
    semi_aperture_mm: float
    before: Material
    after: Material
    coating_reflectance: float | None = None
    label: str = ""
    mount: Mount | None = None


@dataclass(frozen=True)
class IdealLens:
    """An ideal thin lens: a plane at ``z_mm`` mapping ray slopes u' = u - h / f exactly.

    Parameters
    ----------
    z_mm : float
        Axial position [mm].
    focal_length_mm : float
        Focal length [mm].
    semi_aperture_mm : float
        Clear radius [mm].
    label : str
        Name used in reports.
    """

    z_mm: float
    focal_length_mm: float
    semi_aperture_mm: float
    label: str = ""
    mount: Mount | None = None


@dataclass(frozen=True)
class Probe:
    """A plane that records where each live ray crosses it and changes nothing.

    Parameters
    ----------
    z_mm : float
        Axial position [mm].
    name : str
        Key of the crossing record in the trace result.
    """

    z_mm: float
    name: str


@dataclass(frozen=True)
class Housing:
    """The device's opaque body: a front panel with a round viewing hole, and a tube.

    Rays reaching the panel plane inside the hole enter the device and meet
    every lens; rays landing on the panel stop there; rays passing outside the
    panel's rectangle go past the device (they meet no lens) and stop only if
    they strike the tube's outside. Inside the device, a ray that reaches the
    tube radius stops on the tube wall.

    Parameters
    ----------
    panel_z_mm : float
        Axial position of the front panel [mm].
    hole_radius_mm : float
        Radius of the viewing hole [mm].
    panel_half_width_mm, panel_half_height_mm : float
        Half extents of the panel rectangle [mm], centred on the axis.
    tube_radius_mm : float
        Tube radius [mm] (inner and outer taken equal: the wall is thin).
    tube_end_mm : float
        Far end of the tube [mm]; the tube starts at the panel.
    """

    panel_z_mm: float
    hole_radius_mm: float
    panel_half_width_mm: float
    panel_half_height_mm: float
    tube_radius_mm: float
    tube_end_mm: float
