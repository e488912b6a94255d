"""The exact tracer against published aberration values, Fresnel optics and first-order optics."""

import math

import numpy as np
import pytest
from cloakview.optics import trace as trace_module
from cloakview.optics.cloak import LensChoice, design_cloak
from cloakview.optics.lenses import ThickLens, ThinLens
from cloakview.optics.materials import AIR, MATERIALS, ConstantIndex, Material
from cloakview.optics.surfaces import Housing, IdealLens, Probe, Refracting
from cloakview.optics.system import LensSystem, PlacedLens
from cloakview.optics.trace import MOUNT, PANEL, PASSED, TIR, WALL, Rays, trace
from hypothesis import given, settings
from hypothesis import strategies as st


def _parallel_rays(heights, z0=-10.0, wavelength=587.56):
    heights = np.asarray(heights, float)
    origins = np.stack([np.zeros_like(heights), heights, np.full_like(heights, z0)], axis=1)
    return Rays.from_vectors(origins, [0.0, 0.0, 1.0], wavelength)


def _axis_crossing(result):
    return result.z - result.y * result.dz / result.dy


def _exact_crossing_after_sphere(h, radius, n):
    """Closed form: where a ray parallel to the axis at height h, refracted into index n by
    a sphere of radius R (vertex at 0), crosses the axis.

    Incidence angle i = asin(h / R), refraction angle r = asin(h / (n R)); the refracted
    ray meets the axis R sin(r) / sin(i - r) beyond the centre of curvature (sine rule in
    the triangle of surface point, centre and axis crossing: the trigonometric ray trace of
    one spherical surface, e.g. F. A. Jenkins and H. E. White, Fundamentals of Optics,
    chapter on spherical surfaces). Independent of the tracer's vector intersection.
    """
    i = math.asin(h / radius)
    r = math.asin(h / (n * radius))
    return radius + radius * math.sin(r) / math.sin(i - r)


def test_single_surface_spherical_aberration(glass_n15):
    # n = 1.5, R = 50 mm, object at infinity: the tracer's axis crossings against the
    # closed form above at 1 / 5 / 10 / 20 mm, and third-order theory (Jenkins and White)
    # h^2 / (2 n (n - 1) R) for the longitudinal aberration at small h.
    surface = Refracting(0.0, 1 / 50.0, 30.0, AIR, glass_n15)
    heights = [1.0, 5.0, 10.0, 20.0]
    result = trace(_parallel_rays(heights), [surface])
    exact = np.array([_exact_crossing_after_sphere(h, 50.0, 1.5) for h in heights])
    np.testing.assert_allclose(_axis_crossing(result), exact, rtol=0, atol=1e-9)
    paraxial_focus = 1.5 * 50.0 / 0.5  # n R / (n - 1)
    third_order = np.array(heights) ** 2 / (2 * 1.5 * 0.5 * 50.0)
    assert paraxial_focus - exact[0] == pytest.approx(third_order[0], rel=1e-3)


@pytest.mark.parametrize("backend", ["numpy", "per-ray", "compiled"])
@pytest.mark.parametrize("radius", [50.0, -40.0])
@pytest.mark.parametrize("start_z", [-10.0, -600.0, -3000.0])
def test_sphere_met_from_far_in_front(glass_n15, backend, radius, start_z):
    # The compiled paths meet a sphere from wherever the ray stands (no step to the vertex
    # plane first), taking the root on the vertex's side without cancellation; a concave
    # surface seen from farther than its radius takes the other form of that root. Every
    # path must give the closed-form axis crossing above (Jenkins and White) to 1e-9 mm,
    # from near and far.
    if backend not in trace_module.available_backends():
        pytest.skip("numba is not installed")
    heights = [1.0, 5.0, 10.0, 20.0]
    surface = Refracting(0.0, 1 / radius, 30.0, AIR, glass_n15)
    result = trace(_parallel_rays(heights, z0=start_z), [surface], backend=backend)
    assert (result.fate == PASSED).all()
    exact = [_exact_crossing_after_sphere(h, radius, 1.5) for h in heights]
    np.testing.assert_allclose(_axis_crossing(result), exact, rtol=0, atol=1e-9)


def _exact_plano_convex_crossing(h, radius, thickness, n, curved_first):
    """Closed form for a ray parallel to the axis at height h through a plano-convex lens.

    Curved side first: refraction at the sphere (above), straight on to the flat face at
    z = thickness, Snell's law sin(u') = n sin(u) there. Flat side first: no bending at the
    flat face; at the sphere (vertex at z = thickness, centre at thickness - R) the ray
    leaves glass for air: incidence asin(h / R), exit asin(n h / R).
    """
    if curved_first:
        i = math.asin(h / radius)
        u = i - math.asin(h / (n * radius))  # slope angle toward the axis, inside the glass
        z_surface = radius - math.sqrt(radius ** 2 - h ** 2)
        height = h - (thickness - z_surface) * math.tan(u)
        u_out = math.asin(n * math.sin(u))
        return thickness + height / math.tan(u_out)
    i = math.asin(h / radius)
    u_out = math.asin(n * h / radius) - i
    z_surface = thickness - (radius - math.sqrt(radius ** 2 - h ** 2))
    return z_surface + h / math.tan(u_out)


@pytest.mark.parametrize("curved_first, third_order", [(True, 1.17), (False, 4.5)])
def test_plano_convex_orientation(glass_n15, curved_first, third_order):
    # Plano-convex R = 50, centre 5 mm, n = 1.5 (f = 100 mm), h = 10 mm from infinity:
    # the tracer against the closed form above; the longitudinal aberration against
    # thin-lens third-order theory (Jenkins and White: about 1.17 h^2/f curved side first,
    # 4.5 h^2/f flat side first, within the 10 % that third order allows at h = f / 10).
    lens = ThickLens(50.0, math.inf, 5.0, 40.0, glass_n15)
    if not curved_first:
        lens = lens.mirrored()
    placed = PlacedLens(lens, 0.0)
    # Back focal length from Hecht ch. 6: f (1 - (n - 1) d / (n R1)).
    r1 = lens.r1_mm
    bfl = 100.0 * (1 - 0.5 * 5.0 / (1.5 * r1)) if not math.isinf(r1) else 100.0
    assert placed.cardinal_points().bfl_mm == pytest.approx(bfl, rel=1e-12)
    result = trace(_parallel_rays([10.0]), placed.surfaces(AIR, False))
    exact = _exact_plano_convex_crossing(10.0, 50.0, 5.0, 1.5, curved_first)
    assert _axis_crossing(result)[0] == pytest.approx(exact, abs=1e-9)
    aberration = 5.0 + bfl - exact
    assert aberration == pytest.approx(third_order * 10.0 ** 2 / 100.0, rel=0.1)


def test_ray_on_the_far_side_of_the_sphere_meets_the_mount(glass_n15):
    # Closed-form line-sphere intersection: a ray from (70, 0, 0) with slope dx/dz = -0.35
    # meets the sphere of radius 50 centred at z = 50 first at z = 60.1, x = 48.96: past the
    # centre, on the far hemisphere. The lens's cap (semi-aperture 49.5 mm) ends at
    # z = 50 - sqrt(50^2 - 49.5^2) = 42.9 mm, so the ray never meets the lens's surface;
    # it runs into the rim, not through glass that is not there.
    direction = np.array([-0.35, 0.0, 1.0])
    a = 1 + 0.35 ** 2
    b = 2 * (70 * -0.35 - 50)
    c = 70 ** 2 + 50 ** 2 - 50 ** 2
    z_hit = (-b - math.sqrt(b * b - 4 * a * c)) / (2 * a)
    assert z_hit > 50.0 and math.hypot(70 - 0.35 * z_hit, 0) < 49.5
    surface = Refracting(0.0, 1 / 50.0, 49.5, AIR, glass_n15)
    for backend in trace_module.available_backends():
        result = trace(Rays.from_vectors([[70.0, 0.0, 0.0]], [direction], 587.56), [surface],
                       backend=backend)
        assert result.fate[0] == MOUNT, backend
    # A ray that does meet the cap still refracts there, on both paths.
    inside = Rays.from_vectors([[20.0, 0.0, -5.0]], [[0.0, 0.0, 1.0]], 587.56)
    for backend in trace_module.available_backends():
        assert trace(inside, [surface], backend=backend).fate[0] == PASSED


def test_uncoated_plate_transmits_fresnel_product(glass_n15):
    # Hecht sec. 4.6: normal incidence R = 0.04 at n = 1.5; two faces pass 0.96^2 = 0.9216.
    plate = PlacedLens(ThickLens(math.inf, math.inf, 8.0, 40.0, glass_n15), 0.0)
    bare = trace(_parallel_rays([0.0, 3.0]), plate.surfaces(AIR, False))
    coated = trace(_parallel_rays([0.0, 3.0]), plate.surfaces(AIR, True))
    np.testing.assert_allclose(bare.throughput, 0.9216, atol=1e-12)
    assert np.all(coated.throughput > bare.throughput)  # a coating reflects less


def test_total_internal_reflection_ends_the_ray(glass_n15):
    # A ray inside n = 1.5 glass meeting a plane exit face at 45 deg exceeds the critical
    # angle asin(1/1.5) = 41.8 deg (Hecht sec. 4.7) and stops with fate TIR.
    exit_face = Refracting(0.0, 0.0, 50.0, glass_n15, AIR)
    rays = Rays.from_vectors([[0, 0, -5], [0, 0, -5]], [[1, 0, 1], [0.5, 0, 1]], 587.56)
    result = trace(rays, [exit_face])
    assert list(result.fate) == [TIR, PASSED]


def test_aperture_clips_and_probe_records(glass_n15):
    lens = PlacedLens(ThickLens(60.0, -60.0, 6.0, 20.0, glass_n15), 0.0)
    probe = Probe(100.0, "screen")
    result = trace(_parallel_rays([0.0, 5.0, 11.0]), [*lens.surfaces(AIR, False), probe])
    assert list(result.fate) == [PASSED, PASSED, MOUNT]
    crossing = result.crossings["screen"]
    assert list(crossing.reached) == [True, True, False]
    assert crossing.y[0] == 0.0 and crossing.y[1] < 5.0


def test_housing_panel_tube_and_bypass():
    housing = Housing(panel_z_mm=0.0, hole_radius_mm=20.0, panel_half_width_mm=60.0,
                      panel_half_height_mm=60.0, tube_radius_mm=30.0, tube_end_mm=500.0)
    lens = IdealLens(10.0, 1e9, 25.0)  # a window: rays keep their direction
    background = Probe(1000.0, "wall")
    origins = np.array([[0, 0, -100.0]] * 4 + [[0, 0, -100.0]])
    directions = np.array([
        [0, 0, 1.0],            # straight down the axis: passes
        [0.3, 0, 1.0],          # lands on the panel at x = 30: stopped
        [0.7, 0, 1.0],          # passes beside the panel at x = 70, never meets the lens
        [0.195, 0, 1.0],        # enters (x = 19.5), misses nothing until the tube wall
        [-0.9, 0, 1.0],         # beside the device on the far side
    ])
    result = trace(Rays.from_vectors(origins, directions, 550.0), [lens, background], housing)
    assert list(result.fate) == [PASSED, PANEL, PASSED, WALL, PASSED]
    assert list(result.entered) == [True, False, False, True, False]
    assert result.crossings["wall"].x[2] == pytest.approx(0.7 * 1100)
    assert math.hypot(result.x[3], result.y[3]) == pytest.approx(30.0)


def test_ray_striking_tube_outside_stops_there():
    housing = Housing(0.0, 20.0, 40.0, 40.0, 30.0, 500.0)
    # Starts beside the panel above the tube and dives toward the axis.
    rays = Rays.from_vectors([[0, 45.0, -10.0]], [[0, -0.1, 1.0]], 550.0)
    result = trace(rays, [Probe(1000.0, "wall")], housing)
    assert result.fate[0] == WALL
    assert result.y[0] == pytest.approx(30.0)
    assert not result.crossings["wall"].reached[0]


# --- property tests -----------------------------------------------------------------------

def _random_system(draw):
    count = draw(st.integers(1, 3))
    lenses, z = [], 0.0
    for i in range(count):
        radius1 = draw(st.floats(30, 400)) * draw(st.sampled_from([1, -1]))
        radius2 = draw(st.floats(30, 400)) * draw(st.sampled_from([1, -1]))
        n = draw(st.floats(1.4, 1.8))
        glass = Material(f"g{i}", ConstantIndex(n), 2.5, "test")
        diameter = 20.0
        try:
            lens = ThickLens(radius1, radius2, draw(st.floats(6, 12)), diameter, glass)
        except ValueError:
            lens = ThickLens(math.inf, math.inf, 5.0, diameter, glass)
        lenses.append(PlacedLens(lens, z))
        z += lens.center_thickness_mm + draw(st.floats(5, 80))
    return LensSystem(tuple(lenses))


@st.composite
def systems(draw):
    return _random_system(draw)


def _mirror(surfaces):
    return [Refracting(-s.z_mm, -s.curvature_per_mm, s.semi_aperture_mm, s.after, s.before)
            for s in reversed(surfaces)]


@settings(max_examples=60, deadline=None)
@given(system=systems(), height=st.floats(-4, 4), slope=st.floats(-0.03, 0.03))
def test_trace_is_reversible(system, height, slope):
    # Reversibility of ray paths (Fermat's principle; Hecht sec. 4.4): a ray traced through
    # a system and sent back along its final direction returns to its start.
    start = np.array([[0.0, height, -50.0]])
    direction = np.array([[0.0, slope, 1.0]])
    forward = trace(Rays.from_vectors(start, direction, 587.56), system.surfaces)
    if forward.fate[0] != PASSED:
        return
    end = np.array([forward.x[0], forward.y[0], -forward.z[0]])
    back_dir = np.array([-forward.dx[0], -forward.dy[0], forward.dz[0]])
    back_start = end - 5.0 * back_dir
    back = trace(Rays.from_vectors(back_start, back_dir, 587.56),
                 [*_mirror(system.surfaces), Probe(50.0, "start")])
    assert back.fate[0] == PASSED
    assert back.crossings["start"].y[0] == pytest.approx(height, abs=1e-9)
    unit = direction[0] / np.linalg.norm(direction[0])
    assert back.dy[0] == pytest.approx(-unit[1], abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(system=systems(), height=st.floats(-1, 1), slope=st.floats(-1, 1))
def test_small_rays_follow_abcd(system, height, slope):
    # At small heights and angles the exact trace agrees with the ray-transfer matrix
    # (Kogelnik and Li 1966): scale the ray down to 1e-4 mm and 1e-6 rad.
    y0, u0 = height * 1e-4, slope * 1e-6
    z0 = system.front_z_mm - 10.0
    rays = Rays.from_vectors([[0.0, y0, z0]], [[0.0, math.tan(u0), 1.0]], 587.56)
    result = trace(rays, [*system.surfaces, Probe(system.back_z_mm + 10.0, "out")])
    from cloakview.optics.paraxial import system_matrix
    m = system_matrix(system.surfaces, 587.56, z0, system.back_z_mm + 10.0, AIR)
    y1, u1 = m @ [y0, u0]
    assert result.crossings["out"].y[0] == pytest.approx(y1, abs=1e-10)
    assert result.dy[0] / result.dz[0] == pytest.approx(u1, abs=1e-11)


@settings(max_examples=60, deadline=None)
@given(f_inner=st.floats(20, 150), ratio=st.floats(1.2, 4.0),
       x=st.floats(-10, 10), y=st.floats(-10, 10), u=st.floats(-0.01, 0.01),
       v=st.floats(-0.01, 0.01))
def test_ideal_cloak_is_free_space_for_every_ray(f_inner, ratio, x, y, u, v):
    # Choi and Howell (2014): the ideal four-lens cloak acts as free space, so a ray that
    # passes leaves with its own direction, where free space would have put it.
    design = design_cloak(f_inner * ratio, f_inner,
                          LensChoice(True, MATERIALS["acrylic"], "biconvex", 60.0, 60.0))
    system = design.system
    rays = Rays.from_vectors([[x, y, -1.0]], [[u, v, 1.0]], 550.0)
    result = trace(rays, system.surfaces)
    if result.fate[0] != PASSED:
        return
    length = system.back_z_mm + 1.0
    assert result.dx[0] / result.dz[0] == pytest.approx(u, abs=1e-12)
    assert result.dy[0] / result.dz[0] == pytest.approx(v, abs=1e-12)
    assert result.x[0] == pytest.approx(x + length * u, abs=1e-9)
    assert result.y[0] == pytest.approx(y + length * v, abs=1e-9)


def test_real_cloak_passes_on_axis_rays_like_free_space():
    # Thick lenses laid out by the designer behave as free space to first order: a
    # near-axis ray leaves almost parallel to its input at 587.6 nm.
    design = design_cloak(200, 75, LensChoice(False, MATERIALS["soda-lime"], "biconvex",
                                              50.8, 50.8))
    rays = Rays.from_vectors([[0.0, 0.01, -1.0]], [[0.0, 1e-5, 1.0]], 587.56)
    result = trace(rays, design.system.surfaces)
    assert result.dy[0] / result.dz[0] == pytest.approx(1e-5, abs=1e-9)


@pytest.mark.parametrize("backend", ["numpy", "compiled"])
@pytest.mark.parametrize("tilt_deg", [5.0, 20.0, 40.0])
def test_tilted_plate_displaces_rays_as_the_textbook_says(glass_n15, tilt_deg, backend):
    # W. J. Smith, Modern Optical Engineering, 4th ed., ch. 4 (plane-parallel plate): a plate
    # of thickness t tilted by theta shifts a ray sideways by
    # D = t sin(theta) (1 - cos(theta) / sqrt(n^2 - sin^2(theta))), without deviating it.
    t = 10.0
    plate = PlacedLens(ThickLens(math.inf, math.inf, t, 80.0, glass_n15), 0.0,
                       tilt_deg=(0.0, tilt_deg))
    result = trace(_parallel_rays([0.0]), [*plate.surfaces(AIR, False), Probe(50.0, "screen")],
                   backend=backend)
    theta = math.radians(tilt_deg)
    expected = t * math.sin(theta) * (1 - math.cos(theta) / math.sqrt(1.5**2 - math.sin(theta)
                                                                       ** 2))
    assert abs(result.crossings["screen"].x[0]) == pytest.approx(expected, rel=1e-9)
    assert result.dx[0] == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize("backend", ["numpy", "compiled"])
def test_decentred_lens_deviates_by_prentices_rule(backend):
    # Prentice's rule (ophthalmic optics, e.g. M. Jalie, The Principles of Ophthalmic Lenses):
    # a lens decentred by c deviates an axial ray by c / f (prism = decentration x power).
    lens = PlacedLens(ThinLens(250.0, 60.0), 0.0, decenter_mm=(3.0, 0.0))
    result = trace(_parallel_rays([0.0]), lens.surfaces(AIR, False), backend=backend)
    assert result.dx[0] / result.dz[0] == pytest.approx(3.0 / 250.0, rel=1e-12)
