"""Fresnel reflection at a boundary between two dielectrics.

References
----------
.. [1] E. Hecht, Optics, 5th ed. (2017), sec. 4.6 (Fresnel equations).
.. [2] W. J. Smith, Modern Optical Engineering, 4th ed. (2008), ch. 11.
"""

from __future__ import annotations

import numpy as np


def reflectance_sp(n1, n2, cos_incidence, cos_transmission):
    """Power reflectances (R_s, R_p) for given cosines of the incidence and refraction angles.

    Parameters
    ----------
    n1, n2 : array_like
        Indices of the incident and transmitting media [dimensionless].
    cos_incidence, cos_transmission : array_like
        Cosines of the angles from the surface normal [dimensionless], >= 0.

    Returns
    -------
    tuple of ndarray
        ``(R_s, R_p)`` [fraction], Hecht [1] eqs. 4.42-4.43 squared.
    """
    a = n1 * cos_incidence
    b = n2 * cos_transmission
    rs = (a - b) / (a + b)
    c = n2 * cos_incidence
    d = n1 * cos_transmission
    rp = (c - d) / (c + d)
    return rs * rs, rp * rp


def unpolarised_transmittance(n1, n2, cos_incidence, cos_transmission):
    """Power transmittance 1 - (R_s + R_p) / 2 of unpolarised light [fraction] (Hecht [1])."""
    rs, rp = reflectance_sp(n1, n2, cos_incidence, cos_transmission)
    return 1.0 - 0.5 * (rs + rp)


def cos_transmission(n1, n2, cos_incidence):
    """Cosine of the refraction angle from Snell's law; NaN beyond total internal reflection."""
    sin2 = (n1 / n2) ** 2 * (1.0 - np.asarray(cos_incidence, float) ** 2)
    with np.errstate(invalid="ignore"):
        return np.sqrt(1.0 - sin2)
