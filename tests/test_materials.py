"""Refractive indices against published data."""

import pytest
from cloakview.optics.errors import InputError
from cloakview.optics.materials import (
    C_LINE_NM,
    D_LINE_NM,
    F_LINE_NM,
    MATERIALS,
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


# N. Sultanova, S. Kasarova, I. Nikolov, "Dispersion properties of optical polymers", Acta
# Physica Polonica A 116, 585-587 (2009), table of measured indices (three decimals; the
# first wavelength printed as 436.8 nm, read as the mercury g line 435.8 nm), and the Abbe
# numbers printed beside them: PMMA, then polycarbonate (V_d 29.1).
SULTANOVA_NM = (435.8, 486.1, 587.6, 632.8, 703.0, 833.0, 879.0, 1052.0)
SULTANOVA_PMMA = (1.502, 1.497, 1.491, 1.489, 1.486, 1.484, 1.483, 1.481)
SULTANOVA_PC = (1.612, 1.599, 1.585, 1.580, 1.575, 1.569, 1.568, 1.565)
SULTANOVA_PC_VD = 29.1


@pytest.mark.parametrize("wavelength, expected", list(zip(SULTANOVA_NM, SULTANOVA_PMMA,
                                                          strict=True)))
def test_acrylic_kasarova_formula_matches_sultanova_measurements(wavelength, expected):
    # Our acrylic uses the independent Kasarova et al. (2007) formula; the measurements are
    # accurate to about 0.001 (Sultanova et al.).
    assert float(MATERIALS["acrylic"].index(wavelength)) == pytest.approx(expected, abs=6e-4)


def test_acrylic_kasarova_d_line_and_abbe():
    # Kasarova et al., Optical Materials 29, 1481 (2007): n_d about 1.4914, V_d about 52.6
    # (computed from the published formula).
    acrylic = MATERIALS["acrylic"]
    assert float(acrylic.index(D_LINE_NM)) == pytest.approx(1.4914, abs=1e-4)
    assert acrylic.abbe_number() == pytest.approx(52.6, abs=0.1)


@pytest.mark.parametrize("wavelength, expected", list(zip(SULTANOVA_NM, SULTANOVA_PC,
                                                          strict=True)))
def test_polycarbonate_fits_every_sultanova_point(wavelength, expected):
    # A three-term model over eight points: each within the 0.001 the measurements carry.
    assert float(MATERIALS["polycarbonate"].index(wavelength)) == pytest.approx(expected,
                                                                               abs=1e-3)


def test_polycarbonate_abbe_number_against_sultanova():
    # Indices printed to three decimals fix n_F - n_C (about 0.02) only to about +-0.0007,
    # so V_d = (n_d - 1) / (n_F - n_C) only to about +-1.4 around the paper's 29.1.
    assert MATERIALS["polycarbonate"].abbe_number() == pytest.approx(SULTANOVA_PC_VD, abs=1.5)


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


@pytest.mark.parametrize("text, density, estimated", [
    ("1.52/60/2.6", 2.6, False),
    # Gladstone and Dale, Phil. Trans. R. Soc. 153, 317 (1863): (n - 1) / density nearly
    # constant; for the soda-lime glass of Rubin (1985), n_d 1.5234 at about 2.5 g/cm^3
    # (handbook density, from memory), so n_d 1.5234 must come out close to 2.5.
    ("1.5234/64", 2.5, True),
])
def test_nd_vd_glass_density(text, density, estimated):
    glass = material_by_name(text)
    assert glass.density_g_cm3 == pytest.approx(density, abs=0.02)
    assert ("estimated" in glass.source) is estimated


@pytest.mark.parametrize("name, match", [
    ("unobtainium", "unknown material"),
    ("1.5/abc", "unknown material"),
    ("0.9/60", "n_d must lie in 1.3-2.1"),
    ("1.5/500", "V_d in 15-100"),
    ("1.5/10", "V_d in 15-100"),
    ("1.5/60/30", "density must lie in 0.8-7"),
])
def test_bad_material_names(name, match):
    with pytest.raises(InputError, match=match):
        material_by_name(name)
