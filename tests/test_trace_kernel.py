"""The compiled tracing kernel against the numpy reference path."""

import math

import numpy as np
import pytest
from cloakview.optics import trace as trace_module
from cloakview.optics import trace_kernel
from cloakview.optics.lenses import ThickLens, ThinLens
from cloakview.optics.materials import MATERIALS
from cloakview.optics.surfaces import Housing, Probe
from cloakview.optics.system import LensSystem, PlacedLens
from cloakview.optics.trace import FATE_NAMES, Rays, trace
from hypothesis import given, settings
from hypothesis import strategies as st

pytestmark = pytest.mark.skipif("compiled" not in trace_module.available_backends(),
                                reason="numba is not installed")


def test_fate_codes_agree():
    for code, name in enumerate(FATE_NAMES):
        assert getattr(trace_kernel, name.upper()) == code


@st.composite
def scenes(draw):
    lenses, z = [], 0.0
    for i in range(draw(st.integers(1, 4))):
        diameter = draw(st.floats(10, 60))
        if draw(st.booleans()):
            lens = ThinLens(draw(st.floats(20, 400)), diameter)
        else:
            material = MATERIALS[draw(st.sampled_from(sorted(MATERIALS)))]
            r1 = draw(st.floats(35, 500)) * draw(st.sampled_from([1, -1]))
            r2 = draw(st.sampled_from([math.inf, draw(st.floats(35, 500)) *
                                       draw(st.sampled_from([1, -1]))]))
            try:
                lens = ThickLens(r1, r2, draw(st.floats(8, 20)), diameter, material)
            except ValueError:
                lens = ThinLens(100.0, diameter)
        mount = {}
        if draw(st.booleans()):
            mount = {"decenter_mm": (draw(st.floats(-2, 2)), draw(st.floats(-2, 2))),
                     "tilt_deg": (draw(st.floats(-3, 3)), draw(st.floats(-3, 3)))}
        lenses.append(PlacedLens(lens, z, f"L{i}", **mount))
        z += lens.center_thickness_mm + draw(st.floats(5, 200))
    system = LensSystem(tuple(lenses), coated=draw(st.booleans()))
    probes = [Probe(draw(st.floats(-40, z + 300)), f"p{k}") for k in range(draw(st.integers(0, 3)))]
    housing = None
    if draw(st.booleans()):
        tube = max(p.lens.diameter_mm for p in lenses) / 2 + draw(st.floats(0, 20))
        housing = Housing(-20.0, draw(st.floats(3, tube)), tube + draw(st.floats(0, 80)),
                          tube + draw(st.floats(0, 80)), tube, system.back_z_mm + 5)
    return system, probes, housing


def _rays_for(seed, n=3000):
    rng = np.random.default_rng(seed)
    origins = np.stack([rng.normal(0, 30, n), rng.normal(0, 30, n), np.full(n, -600.0)], 1)
    targets = np.stack([rng.uniform(-60, 60, n), rng.uniform(-60, 60, n), np.zeros(n)], 1)
    directions = targets - origins
    directions[:5, 2] *= -1  # a few rays start backward
    return Rays.from_vectors(origins, directions, rng.choice([486.13, 587.56, 656.27], n))


@settings(max_examples=60, deadline=None)
@given(scene=scenes(), seed=st.integers(0, 2**31), n=st.integers(0, 300))
def test_packet_kernel_is_identical_to_the_per_ray_kernel(scene, seed, n):
    # The same arithmetic lane by lane: every number must be bit for bit the same, for any
    # ray count (none at all, packets of 64 with a partial last one).
    system, probes, housing = scene
    rays = _rays_for(seed, n)
    elements = [*system.surfaces, *probes]
    a = trace(rays, elements, housing, backend="per-ray")
    b = trace(rays, elements, housing, backend="compiled")
    np.testing.assert_array_equal(a.fate, b.fate)
    np.testing.assert_array_equal(a.entered, b.entered)
    for name in ("x", "y", "z", "dx", "dy", "dz", "throughput"):
        np.testing.assert_array_equal(getattr(b, name), getattr(a, name))
    for probe in probes:
        for field in ("x", "y", "throughput"):
            np.testing.assert_array_equal(getattr(b.crossings[probe.name], field),
                                          getattr(a.crossings[probe.name], field))


@settings(max_examples=40, deadline=None)
@given(scene=scenes(), seed=st.integers(0, 2**31))
def test_compiled_matches_numpy(scene, seed):
    system, probes, housing = scene
    rng = np.random.default_rng(seed)
    n = 3000
    origins = np.stack([rng.normal(0, 30, n), rng.normal(0, 30, n), np.full(n, -600.0)], 1)
    targets = np.stack([rng.uniform(-60, 60, n), rng.uniform(-60, 60, n), np.zeros(n)], 1)
    directions = targets - origins
    directions[:5, 2] *= -1  # a few rays start backward
    wavelengths = rng.choice([486.13, 587.56, 656.27], n)
    rays = Rays.from_vectors(origins, directions, wavelengths)
    elements = [*system.surfaces, *probes]
    a = trace(rays, elements, housing, backend="numpy")
    b = trace(rays, elements, housing, backend="compiled")
    np.testing.assert_array_equal(a.fate, b.fate)
    np.testing.assert_array_equal(a.entered, b.entered)
    for name in ("x", "y", "z", "dx", "dy", "dz", "throughput"):
        np.testing.assert_allclose(getattr(b, name), getattr(a, name), rtol=0, atol=1e-9)
    for probe in probes:
        ca, cb = a.crossings[probe.name], b.crossings[probe.name]
        np.testing.assert_array_equal(ca.reached, cb.reached)
        np.testing.assert_allclose(cb.x, ca.x, rtol=0, atol=1e-9)
        np.testing.assert_allclose(cb.y, ca.y, rtol=0, atol=1e-9)
        np.testing.assert_allclose(cb.throughput, ca.throughput, rtol=0, atol=1e-12)


def test_environment_switch(monkeypatch):
    monkeypatch.setenv("CLOAKVIEW_TRACER", "numpy")
    assert trace_module.chosen_backend(None) == "numpy"
    monkeypatch.setenv("CLOAKVIEW_TRACER", "fast")
    with pytest.raises(ValueError, match="must be auto, numpy, per-ray or compiled"):
        trace_module.chosen_backend(None)


def test_renders_agree_between_paths(tmp_path, monkeypatch):
    from cloakview.render.frame.views import render_viewer
    from cloakview.render.scene.loader import load_scene
    from scenes import RING, write_scene

    scene = load_scene(write_scene(tmp_path, layers=RING, width=80, height=60))
    images = {}
    for backend in ("numpy", "compiled"):
        monkeypatch.setenv("CLOAKVIEW_TRACER", backend)
        images[backend] = render_viewer(scene, scene.viewers[0], views=("cloaked",)).images
    diff = np.abs(images["numpy"]["cloaked"].astype(int) - images["compiled"]["cloaked"])
    assert diff.max() <= 1


@pytest.mark.parametrize("n", [0, 1, 63, 64, 65, 1000])
def test_packet_table_of_one_wavelength_is_the_general_one(n):
    # The shortcut for rays of one wavelength must give the packets the general grouping
    # gives the same rays.
    wl_index = np.zeros(n, np.int64)
    for fast, general in zip(trace_kernel.packet_table(wl_index, True),
                             trace_kernel.packet_table(wl_index), strict=True):
        np.testing.assert_array_equal(fast, general)
        assert fast.dtype == general.dtype
