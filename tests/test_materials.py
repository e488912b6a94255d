"""Refractive indices against published data."""

import pytest
from cloakview.optics.errors import InputError
from cloakview.optics.materials import (
    C_LINE_NM,
    D_LINE_NM,
    F_LINE_NM,
    MATERIALS,
    Cauchy,
    material_by_name,
)


# Malitson, J. Opt. Soc. Am. 55, 1205 (1965): Sellmeier formula, values evaluated at the
# F, d, C lines (computed from the published formula).
@pytest.mark.parametrize("wavelength, expected", [
    (F_LINE_NM, 1.463126), (D_LINE_NM, 1.458464), (C_LINE_NM, 1.456367)])
def test_fused_silica_malitson(wavelength, expected):
    assert float(MATERIALS["fused-silica"].index(wavelength)) == pytest.approx(expected, abs=2e-6)


def test_fused_silica_abbe_number_malitson():
    # Malitson (1965) formula gives V_d = 67.8 (computed from the published formula).
    assert MATERIALS["fused-silica"].abbe_number() == pytest.approx(67.8, abs=0.05)


# Sultanova, Kasarova, Nikolov, Acta Physica Polonica A 116, 585 (2009): measured PMMA
# indices, printed to three decimals. Our acrylic uses the independent Kasarova (2007) formula.
@pytest.mark.parametrize("wavelength, expected", [(486.1, 1.497), (587.6, 1.491), (632.8, 1.489)])
def test_acrylic_kasarova_formula_matches_sultanova_measurements(wavelength, expected):
    assert float(MATERIALS["acrylic"].index(wavelength)) == pytest.approx(expected, abs=6e-4)


def test_acrylic_kasarova_d_line_and_abbe():
    # Kasarova et al., Optical Materials 29, 1481 (2007): n_d about 1.4914, V_d about 52.6
    # (computed from the published formula).
    acrylic = MATERIALS["acrylic"]
    assert float(acrylic.index(D_LINE_NM)) == pytest.approx(1.4914, abs=1e-4)
    assert acrylic.abbe_number() == pytest.approx(52.6, abs=0.1)


# Sultanova et al. (2009), polycarbonate measured indices (three decimals).
@pytest.mark.parametrize("wavelength, expected", [(486.1, 1.599), (587.6, 1.585), (632.8, 1.580)])
def test_polycarbonate_sultanova(wavelength, expected):
    assert float(MATERIALS["polycarbonate"].index(wavelength)) == pytest.approx(expected,
                                                                               abs=5e-4)


def test_polycarbonate_is_a_high_dispersion_plastic():
    # Common practice (value from memory): polycarbonate has V_d of about 30, far below
    # crown glass; the three-point fit must land in that class.
    assert 25 < MATERIALS["polycarbonate"].abbe_number() < 34


def test_soda_lime_rubin():
    # Rubin, Solar Energy Materials 12, 275 (1985): n = 1.5130 - 0.003169 L^2 + 0.003962 / L^2;
    # computed from that formula: n_d about 1.5234, V_d about 64.
    glass = MATERIALS["soda-lime"]
    assert float(glass.index(D_LINE_NM)) == pytest.approx(1.5234, abs=1e-4)
    assert glass.abbe_number() == pytest.approx(64, abs=0.5)


def test_abbe_model_reproduces_its_nd_and_vd():
    # Definition of the Abbe number, W. J. Smith, Modern Optical Engineering, ch. 7.
    model = material_by_name("1.52/60")
    assert float(model.index(D_LINE_NM)) == pytest.approx(1.52, abs=1e-12)
    assert model.abbe_number() == pytest.approx(60, rel=1e-10)


def test_cauchy_through_points_is_exact():
    model = Cauchy.through_points((450.0, 550.0, 650.0), (1.52, 1.51, 1.505))
    assert [float(model.index(w)) for w in (450.0, 550.0, 650.0)] == pytest.approx(
        [1.52, 1.51, 1.505], abs=1e-12)


@pytest.mark.parametrize("name, match", [
    ("unobtainium", "unknown material"),
    ("1.5/abc", "unknown material"),
    ("0.9/60", "n_d must lie in 1.3-2.1"),
    ("1.5/500", "V_d in 15-100"),
])
def test_bad_material_names(name, match):
    with pytest.raises(InputError, match=match):
        material_by_name(name)
