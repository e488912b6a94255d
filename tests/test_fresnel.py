"""Fresnel reflection against E. Hecht, Optics, 5th ed., sec. 4.6."""

import numpy as np
import pytest
from cloakview.optics.fresnel import cos_transmission, reflectance_sp, unpolarised_transmittance


def _cosines(n1, n2, angle_deg):
    cos_i = np.cos(np.radians(angle_deg))
    return cos_i, cos_transmission(n1, n2, cos_i)


def test_normal_incidence_four_percent():
    # Hecht sec. 4.6: R = ((n - 1)/(n + 1))^2 = 0.0400 at n = 1.5.
    cos_i, cos_t = _cosines(1.0, 1.5, 0.0)
    assert 1 - unpolarised_transmittance(1.0, 1.5, cos_i, cos_t) == pytest.approx(0.04, abs=1e-12)


@pytest.mark.parametrize("n, expected", [(1.4585, 0.0348), (1.4914, 0.0389), (1.585, 0.0512)])
def test_normal_incidence_other_indices(n, expected):
    # Computed from R = ((n - 1)/(n + 1))^2 (E. Hecht, Optics, 5th ed., sec. 4.6), four
    # decimals.
    cos_i, cos_t = _cosines(1.0, n, 0.0)
    assert 1 - unpolarised_transmittance(1.0, n, cos_i, cos_t) == pytest.approx(expected,
                                                                              abs=5e-5)


def test_45_degrees_s_and_p():
    # E. Hecht, Optics, 5th ed., sec. 4.6 (Fresnel equations): at 45 deg and n = 1.5,
    # Rs = 0.0920, Rp = 0.00847.
    cos_i, cos_t = _cosines(1.0, 1.5, 45.0)
    rs, rp = reflectance_sp(1.0, 1.5, cos_i, cos_t)
    assert rs == pytest.approx(0.0920, abs=5e-5)
    assert rp == pytest.approx(0.00847, abs=5e-6)


def test_brewster_angle_has_no_p_reflection():
    # Hecht sec. 4.6: tan(theta_B) = n2 / n1, 56.31 deg for n = 1.5.
    cos_i, cos_t = _cosines(1.0, 1.5, np.degrees(np.arctan(1.5)))
    assert reflectance_sp(1.0, 1.5, cos_i, cos_t)[1] == pytest.approx(0.0, abs=1e-15)


@pytest.mark.parametrize("n1, n2", [(1.0, 1.5), (1.5, 1.0), (1.0, 1.585)])
def test_energy_conservation_from_transmission_coefficients(n1, n2):
    # Hecht eqs. 4.44-4.45 and 4.60: T = (n2 cos_t)/(n1 cos_i) t^2 computed independently
    # from the amplitude transmission coefficients; R + T = 1 below total internal reflection.
    critical = np.degrees(np.arcsin(min(1.0, n2 / n1)))
    angles = np.linspace(0.0, min(89.0, critical - 0.5), 40)
    cos_i, cos_t = _cosines(n1, n2, angles)
    ts = 2 * n1 * cos_i / (n1 * cos_i + n2 * cos_t)
    tp = 2 * n1 * cos_i / (n2 * cos_i + n1 * cos_t)
    factor = n2 * cos_t / (n1 * cos_i)
    rs, rp = reflectance_sp(n1, n2, cos_i, cos_t)
    np.testing.assert_allclose(rs + factor * ts**2, 1.0, atol=1e-12)
    np.testing.assert_allclose(rp + factor * tp**2, 1.0, atol=1e-12)


def test_beyond_critical_angle_is_nan():
    cos_i = np.cos(np.radians(60.0))
    assert np.isnan(cos_transmission(1.5, 1.0, cos_i))
