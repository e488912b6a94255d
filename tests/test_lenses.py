"""Single lenses against the lensmaker's equation (Hecht ch. 6) and sympy.physics.optics."""

import math

import numpy as np
import pytest
import sympy
from cloakview.optics.errors import InputError
from cloakview.optics.lenses import SHAPES, ThickLens, ThinLens, lens_for_focal_length, sag
from cloakview.optics.materials import MATERIALS
from cloakview.optics.system import PlacedLens
from sympy.physics.optics import lens_makers_formula


def _hecht_focal_length(n, r1, r2, d):
    # Hecht, Optics, 5th ed., ch. 6: 1/f = (n - 1)[1/R1 - 1/R2 + (n - 1) d / (n R1 R2)].
    c1 = 0.0 if math.isinf(r1) else 1 / r1
    c2 = 0.0 if math.isinf(r2) else 1 / r2
    return 1.0 / ((n - 1) * (c1 - c2 + (n - 1) * d * c1 * c2 / n))


def test_worked_biconvex_example(glass_n15):
    # Computed from the thick-lens equation (E. Hecht, Optics, 5th ed., ch. 6): R1 = 50,
    # R2 = -50, d = 10, n = 1.5:
    # f = 51.724 mm, principal planes 3.448 mm inside each vertex, BFL 48.276 mm.
    placed = PlacedLens(ThickLens(50.0, -50.0, 10.0, 40.0, glass_n15), 0.0)
    cp = placed.cardinal_points()
    assert cp.efl_mm == pytest.approx(51.724, abs=5e-4)
    assert cp.bfl_mm == pytest.approx(48.276, abs=5e-4)
    assert cp.front_principal_z_mm == pytest.approx(3.448, abs=5e-4)
    assert cp.rear_principal_z_mm == pytest.approx(10.0 - 3.448, abs=5e-4)


@pytest.mark.parametrize("r1, r2, d", [(50, -50, 10), (80, math.inf, 6), (40, 120, 5),
                                       (-300, -60, 8), (200, -90, 3)])
def test_thick_focal_length_against_sympy(glass_n15, r1, r2, d):
    # sympy.physics.optics.lens_makers_formula (with thickness d) as the reference library.
    placed = PlacedLens(ThickLens(r1, r2, d, 20.0, glass_n15), 0.0)
    expected = float(lens_makers_formula(1.5, 1.0, r1, sympy.oo if math.isinf(r2) else r2, d))
    assert placed.cardinal_points().efl_mm == pytest.approx(expected, rel=1e-10)


def test_thin_limit_against_sympy(glass_n15):
    # sympy lens_makers_formula with d = 0 is the thin-lens limit; a 1e-4 mm thick lens
    # must agree to a few parts in 1e7 (the thickness term is that small).
    placed = PlacedLens(ThickLens(60.0, -90.0, 1e-4, 0.1, glass_n15), 0.0)
    expected = float(lens_makers_formula(1.5, 1.0, 60.0, -90.0))
    assert placed.cardinal_points().efl_mm == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("shape", list(SHAPES))
@pytest.mark.parametrize("material", ["soda-lime", "acrylic", "fused-silica", "polycarbonate"])
def test_lens_for_focal_length_solves_hecht(shape, material):
    glass = MATERIALS[material]
    lens = lens_for_focal_length(250.0, 60.0, glass, shape, min_edge_mm=3.0)
    n = float(glass.index(587.56))
    assert _hecht_focal_length(n, lens.r1_mm, lens.r2_mm, lens.center_thickness_mm) == \
        pytest.approx(250.0, rel=1e-10)
    assert lens.edge_thickness_mm == pytest.approx(3.0, abs=1e-9)
    q = SHAPES[shape]
    c1, c2 = lens.c1, lens.c2
    # Coddington shape factor q = (c1 + c2) / (c1 - c2) (Smith, Modern Optical Engineering).
    assert (c1 + c2) / (c1 - c2) == pytest.approx(q, abs=1e-12)


def test_sag_of_hemisphere_is_radius():
    assert float(sag(10.0, 0.1)) == pytest.approx(10.0)
    assert np.isnan(sag(11.0, 0.1))


def test_volume_against_numerical_quadrature(glass_n15):
    lens = ThickLens(70.0, -140.0, 9.0, 50.0, glass_n15)
    r = np.linspace(0.0, 25.0, 200001)
    thickness = lens.center_thickness_mm - sag(r, lens.c1) + sag(r, lens.c2)
    integrand = thickness * 2 * np.pi * r
    numeric = np.sum((integrand[1:] + integrand[:-1]) * np.diff(r)) / 2
    assert lens.volume_mm3() == pytest.approx(numeric, rel=1e-8)
    assert lens.mass_g() == pytest.approx(numeric * 1e-3 * 2.5, rel=1e-8)


def test_flat_plate_mass(glass_n15):
    # A 10 mm plate, 100 mm across, at 2.5 g/cm^3: pi * 50^2 * 10 mm^3 * 2.5e-3 g/mm^3.
    plate = ThickLens(math.inf, math.inf, 10.0, 100.0, glass_n15)
    assert plate.mass_g() == pytest.approx(math.pi * 2500 * 10 * 2.5e-3)


def test_mirrored_lens_has_same_focal_length(glass_n15):
    lens = ThickLens(40.0, 300.0, 6.0, 30.0, glass_n15)
    a = PlacedLens(lens, 0.0).cardinal_points().efl_mm
    b = PlacedLens(lens.mirrored(), 0.0).cardinal_points().efl_mm
    assert a == pytest.approx(b, rel=1e-12)


def test_sag_exceeding_radius_is_refused(glass_n15):
    with pytest.raises(InputError, match="sag would exceed the radius"):
        ThickLens(20.0, -20.0, 30.0, 50.0, glass_n15)


def test_negative_edge_is_refused(glass_n15):
    with pytest.raises(InputError, match=r"edge thickness would be -6.348 mm \(negative\)"):
        ThickLens(50.0, -50.0, 2.0, 40.0, glass_n15)


def test_impossible_focal_length_for_diameter():
    with pytest.raises(InputError, match="can be 200 mm wide"):
        lens_for_focal_length(50.0, 200.0, MATERIALS["acrylic"])


@pytest.mark.parametrize("kwargs, match", [
    ({"focal_length_mm": -5.0}, "greater than 0"),
    ({"focal_length_mm": float("nan")}, "finite"),
    ({"min_edge_mm": -1.0}, "edge thickness must be >= 0"),
    ({"shape": "pear"}, "unknown lens shape"),
])
def test_lens_helper_bad_input(kwargs, match):
    args = {"focal_length_mm": 100.0, "diameter_mm": 30.0, "material": MATERIALS["acrylic"]}
    args.update(kwargs)
    with pytest.raises(InputError, match=match):
        lens_for_focal_length(**args)


def test_thin_lens_rejects_bad_focal_length():
    with pytest.raises(InputError, match="focal_length_mm"):
        ThinLens(0.0, 10.0)
