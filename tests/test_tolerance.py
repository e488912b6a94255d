"""Tolerance analysis by Monte Carlo over builds."""

import dataclasses

import numpy as np
from scenes import RING, write_scene

from render import tolerance as tl
from render.cli_plan import tolerance_analysis
from render.scene import load_scene
from render.sightlines import setup_worker
from render.views import render_viewer

IDEAL = "ideal = true"


def test_zero_tolerances_reproduce_the_nominal_design(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING)
    scene = load_scene(path)
    rng = np.random.default_rng(3)
    assert tl.perturbed(scene.system, tl.Tolerances(), rng) == scene.system
    summary, builds = tolerance_analysis(path, tl.Tolerances(), 6, 1, (64, 48),
                                         tmp_path / "jobs", workers=1)
    assert summary["yield"] == 1.0
    state = setup_worker(str(path), False, None)
    viewer = dataclasses.replace(state[0].viewers[0], width_px=64, height_px=48)
    nominal = render_viewer(state[0], viewer, state[1], views=(), supersample=1).metrics
    for build in builds:
        assert build["hidden_fraction"] == nominal["hidden_fraction"]
        assert build["shift_median_arcmin"] == nominal["background_shift_arcmin"]["median"]


def test_builds_are_reproducible_and_errors_stay_within_limits(tmp_path):
    scene = load_scene(write_scene(tmp_path, layers=RING))
    tol = tl.Tolerances(axial_mm=1.0, decentre_mm=0.5, tilt_deg=0.3, focal_pct=2.0)
    a = tl.perturbed(scene.system, tol, np.random.default_rng(7))
    b = tl.perturbed(scene.system, tol, np.random.default_rng(7))
    assert a == b
    for built, nominal in zip(a.lenses, scene.system.lenses, strict=True):
        assert abs(built.z_mm - nominal.z_mm) <= 1.0
        assert np.hypot(*built.decentre_mm) <= 0.5 + 1e-12
        assert max(map(abs, built.tilt_deg)) <= 0.3
        f0 = nominal.cardinal_points().efl_mm
        assert abs(built.cardinal_points().efl_mm / f0 - 1) <= 0.021


def test_yield_falls_as_a_tolerance_grows(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    yields = []
    for decentre in (0.0, 0.5, 2.0, 6.0):
        summary, _ = tolerance_analysis(path, tl.Tolerances(decentre_mm=decentre), 12, 5,
                                        (48, 36), tmp_path / "jobs", workers=1)
        yields.append(summary["yield"])
    assert yields[0] == 1.0
    assert all(b <= a + 0.1 for a, b in zip(yields, yields[1:], strict=False))  # MC noise
    assert yields[-1] < yields[0]


def test_sensitivity_ranks_the_tolerance_that_matters(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    summary, _ = tolerance_analysis(path, tl.Tolerances(axial_mm=0.1, decentre_mm=5.0), 8, 2,
                                    (48, 36), tmp_path / "jobs", workers=1)
    assert summary["sensitivity"][0]["tolerance"] == "decentre_mm"
    assert set(summary["for_95_yield"]) == {"axial_mm", "decentre_mm"}
    assert set(summary["for_95_yield"]["decentre_mm"]["scan"]) == {"1.25", "2.5", "5", "10",
                                                                   "20"}
