"""Paraxial ray-transfer (ABCD) matrices and cardinal points.

Ray vector [height y (mm), angle u (rad)]; matrices act on column vectors
and compose right to left along the light path.

References
----------
.. [1] H. Kogelnik and T. Li, "Laser beams and resonators", Applied Optics 5,
   1550-1567 (1966): free space [[1, d], [0, 1]], thin lens [[1, 0], [-1/f, 1]].
.. [2] A. E. Siegman, Lasers (University Science Books, 1986), ch. 15:
   refraction at a curved interface [[1, 0], [(n1 - n2) / (n2 R), n1 / n2]].
.. [3] E. Hecht, Optics, 5th ed. (2017), sec. 6.2: cardinal points from the
   system matrix.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from cloakview.optics.materials import Material
from cloakview.optics.surfaces import IdealLens, Refracting


def free_space(distance_mm: float) -> np.ndarray:
    """Matrix of propagation over ``distance_mm`` [mm] in a uniform medium (Kogelnik and Li [1])."""
    return np.array([[1.0, distance_mm], [0.0, 1.0]])


def thin_lens(focal_length_mm: float) -> np.ndarray:
    """Matrix of an ideal thin lens of focal length ``focal_length_mm`` [mm] ([1])."""
    return np.array([[1.0, 0.0], [-1.0 / focal_length_mm, 1.0]])


def refraction(n1: float, n2: float, curvature_per_mm: float) -> np.ndarray:
    """Matrix of refraction from index ``n1`` into ``n2`` at curvature [1/mm] (Siegman [2])."""
    return np.array([[1.0, 0.0], [(n1 - n2) * curvature_per_mm / n2, n1 / n2]])


def system_matrix(elements, wavelength_nm: float, z_from_mm: float, z_to_mm: float,
                  medium: Material) -> np.ndarray:
    """ABCD matrix from plane ``z_from_mm`` to plane ``z_to_mm`` through ``elements``.

    Parameters
    ----------
    elements : sequence
        :class:`Refracting` and :class:`IdealLens` elements (others are ignored).
    wavelength_nm : float
        Wavelength [nm] at which indices are evaluated.
    z_from_mm, z_to_mm : float
        Input and output reference planes [mm]; all elements must lie between them.
    medium : Material
        The medium at the input plane (air around the device).

    Returns
    -------
    ndarray of shape (2, 2)
        Matrix for (height, angle) in the medium at each end.
    """
    optical = sorted((e for e in elements if isinstance(e, (Refracting, IdealLens))),
                     key=lambda e: e.z_mm)
    matrix = np.eye(2)
    z = z_from_mm
    n = float(medium.index(wavelength_nm))
    for element in optical:
        # Propagation in index n over distance d: the angle inside is u, height grows by d u.
        matrix = free_space(element.z_mm - z) @ matrix
        z = element.z_mm
        if isinstance(element, IdealLens):
            matrix = thin_lens(element.focal_length_mm) @ matrix
        else:
            n2 = float(element.after.index(wavelength_nm))
            matrix = refraction(n, n2, element.curvature_per_mm) @ matrix
            n = n2
    return free_space(z_to_mm - z) @ matrix


@dataclass(frozen=True)
class CardinalPoints:
    """First-order properties of a system between two reference planes (Hecht [3]).

    Attributes
    ----------
    efl_mm : float
        Effective focal length -1/C [mm] (inf for an afocal system).
    bfl_mm : float
        Back focal length, from the output plane to the rear focus [mm].
    ffl_mm : float
        Front focal length, from the front focus to the input plane [mm].
    front_principal_z_mm, rear_principal_z_mm : float
        Axial positions of the principal planes H and H' [mm].
    """

    efl_mm: float
    bfl_mm: float
    ffl_mm: float
    front_principal_z_mm: float
    rear_principal_z_mm: float


def cardinal_points(matrix: np.ndarray, z_from_mm: float, z_to_mm: float) -> CardinalPoints:
    """Cardinal points of ``matrix`` taken from ``z_from_mm`` to ``z_to_mm`` (system in air).

    For M = [[A, B], [C, D]]: f = -1/C, BFL = -A/C, FFL = -D/C,
    H at z_from + (D - 1)/C, H' at z_to + (1 - A)/C (Hecht [3]).
    """
    (a, _), (c, d) = matrix
    if c == 0.0:
        inf = float("inf")
        return CardinalPoints(inf, inf, inf, float("nan"), float("nan"))
    return CardinalPoints(
        efl_mm=-1.0 / c,
        bfl_mm=-a / c,
        ffl_mm=-d / c,
        front_principal_z_mm=z_from_mm + (d - 1.0) / c,
        rear_principal_z_mm=z_to_mm + (1.0 - a) / c,
    )
