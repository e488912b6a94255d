"""The four-lens cloak against sympy.physics.optics and Choi and Howell (2014)."""

import numpy as np
import pytest
from cloakview.optics.cloak import (
    LensChoice,
    design_cloak,
    ideal_spacings,
    through_window_half_angle_deg,
)
from cloakview.optics.errors import InputError
from cloakview.optics.lenses import ThinLens as CloakThinLens
from cloakview.optics.materials import AIR, MATERIALS
from cloakview.optics.paraxial import system_matrix
from cloakview.optics.system import LensSystem, PlacedLens
from sympy.physics.optics import FreeSpace, ThinLens


def _sympy_cloak(f1, f2, t1, t2):
    # sympy matrices compose right to left along the light path, like ours.
    m = ThinLens(f1) * FreeSpace(t1) * ThinLens(f2) * FreeSpace(t2) * ThinLens(f2) \
        * FreeSpace(t1) * ThinLens(f1)
    return np.array(m.evalf(), dtype=float)


def _ideal(f1, f2):
    return design_cloak(f1, f2, LensChoice(True, MATERIALS["soda-lime"], "biconvex", 50, 50))


@pytest.mark.parametrize("f1, f2", [(200, 75), (150, 50), (300, 100), (500, 40), (120, 119)])
def test_ideal_cloak_matrix_matches_sympy(f1, f2):
    # J. S. Choi and J. C. Howell, Opt. Express 22, 29465 (2014): t1 = f1 + f2,
    # t2 = 2 f2 (f1 + f2) / (f1 - f2) makes the system free space over its length.
    design = _ideal(f1, f2)
    t1, t2 = ideal_spacings(f1, f2)
    reference = _sympy_cloak(f1, f2, t1, t2)
    np.testing.assert_allclose(design.system.abcd(), reference, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(reference, [[1, 2 * t1 + t2], [0, 1]], rtol=1e-9, atol=1e-12)
    assert design.length_mm == pytest.approx(2 * t1 + t2)


@pytest.mark.parametrize("f1, f2, t1, t2, length", [(200, 75, 275, 330, 880),
                                                    (150, 50, 200, 200, 600)])
def test_reference_spacings(f1, f2, t1, t2, length):
    # Computed from J. S. Choi and J. C. Howell, Optics Express 22(24), 29465 (2014):
    # t1 = f1 + f2, t2 = 2 f2 (f1 + f2) / (f1 - f2), L = 2 t1 + t2.
    design = _ideal(f1, f2)
    assert design.outer_spacing_mm == pytest.approx(t1)
    assert design.inner_spacing_mm == pytest.approx(t2)
    assert design.length_mm == pytest.approx(length)
    assert design.vertex_gaps_mm() == pytest.approx([t1, t2, t1])


def test_dropping_the_factor_two_does_not_cloak():
    # Computed with Kogelnik and Li's matrices (Applied Optics 5, 1550, 1966): t2 = 165 mm for
    # 200/75 gives a 715 mm device whose B is about -293 mm. Checked with sympy.
    # The system our tracer's paraxial path builds from placed lenses must give the same.
    reference = _sympy_cloak(200, 75, 275, 165)
    assert reference[0, 1] == pytest.approx(-293.3, abs=0.1)
    lenses = [PlacedLens(CloakThinLens(f, 50.0), z) for f, z in
              ((200.0, 0.0), (75.0, 275.0), (75.0, 440.0), (200.0, 715.0))]
    np.testing.assert_allclose(LensSystem(tuple(lenses)).abcd(), reference, atol=1e-9)


@pytest.mark.parametrize("shape", ["biconvex", "plano-convex", "convex-plano", "meniscus"])
@pytest.mark.parametrize("material", ["soda-lime", "acrylic", "fused-silica"])
def test_thick_cloak_is_free_space_over_its_length(shape, material):
    choice = LensChoice(False, MATERIALS[material], shape, 60.0, 40.0)
    design = design_cloak(250, 100, choice)
    m = design.system.abcd()
    length = design.length_mm
    assert m[0, 0] == pytest.approx(1, abs=1e-9)
    assert m[1, 1] == pytest.approx(1, abs=1e-9)
    assert m[1, 0] * length == pytest.approx(0, abs=1e-9)
    assert m[0, 1] == pytest.approx(length, rel=1e-9)
    assert design.free_space_error() < 1e-9


def test_thick_lens_correction_moves_the_inner_gap_the_predicted_amount():
    # With principal planes s apart in each lens, B is short of the length by sum(s);
    # the inner gap must grow by sum(s) f2^2 / (f1^2 - f2^2) (derived from the
    # Kogelnik and Li matrices, see optics.cloak).
    choice = LensChoice(False, MATERIALS["soda-lime"], "biconvex", 50.8, 50.8)
    design = design_cloak(200, 75, choice)
    s = 0.0
    for placed in design.system.lenses:
        cp = placed.cardinal_points()
        s += cp.rear_principal_z_mm - cp.front_principal_z_mm
    assert design.inner_gap_shift_mm == pytest.approx(s * 75**2 / (200**2 - 75**2), rel=1e-9)


def test_thick_cloak_pairs_are_afocal_at_every_wavelength_only_at_design():
    # Dispersion: away from 587.6 nm the pairs are no longer afocal (C != 0).
    choice = LensChoice(False, MATERIALS["acrylic"], "biconvex", 50.8, 50.8)
    design = design_cloak(200, 75, choice)
    assert abs(design.system.abcd(486.13)[1, 0]) > 1e-6
    assert abs(design.system.abcd(656.27)[1, 0]) > 1e-6


@pytest.mark.parametrize("f1, f2, match", [
    (75, 200, "negative"), (100, 100, "infinite"), (-200, 75, "greater than 0"),
    (float("nan"), 75, "finite"), (200, float("inf"), "finite"), (200, 0, "greater than 0")])
def test_impossible_focal_lengths(f1, f2, match):
    with pytest.raises(InputError, match=match):
        ideal_spacings(f1, f2)


def test_overlapping_lenses_are_refused():
    choice = LensChoice(False, MATERIALS["acrylic"], "plano-convex", 20.0, 20.0, min_edge_mm=400)
    with pytest.raises(InputError, match="overlap"):
        design_cloak(110, 100, choice)


def test_through_window_matches_free_space_geometry():
    # An ideal cloak is free space over L (Choi and Howell 2014), so the ray that just
    # grazes the far lens's rim leaves the eye at atan(a / (D + L)) when the far lens is the
    # limiting aperture: 25 / (500 + 880) rad for 50 mm lenses (design.md quotes about 1 deg).
    design = _ideal(200, 75)
    expected = np.degrees(np.arctan(25.0 / (500 + 880)))
    assert through_window_half_angle_deg(design, 500.0, samples=20001) == pytest.approx(
        expected, abs=1e-3)


def test_paraxial_system_matrix_sorts_elements_by_z():
    design = _ideal(200, 75)
    shuffled = list(reversed(design.system.surfaces))
    np.testing.assert_allclose(system_matrix(shuffled, 587.56, 0.0, 880.0, AIR),
                               design.system.abcd())
