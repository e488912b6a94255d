"""Tolerance analysis by Monte Carlo over builds."""

import dataclasses

import numpy as np
import pytest
from cloakview.render.frame.views import render_viewer
from cloakview.render.planning import tolerance as tl
from cloakview.render.scene.loader import load_scene
from cloakview.render.sweeps.jobs import fingerprint
from cloakview.render.sweeps.sightlines import setup_worker
from scenes import RING_FITS as RING
from scenes import write_scene

IDEAL = "ideal = true"


def tolerance_analysis(path, tol, builds, seed, size):
    """The analysis in this process, as the ``tolerance`` command runs it."""
    summary, builds, _ = tl.analyse(tol, builds, seed, size, setup_worker,
                                    (str(path), False, None),
                                    context=fingerprint([path]), workers=1)
    return summary, builds


def test_zero_tolerances_reproduce_the_nominal_design(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    scene = load_scene(path)
    rng = np.random.default_rng(3)
    assert tl.perturbed(scene.system, tl.Tolerances(), rng) == scene.system
    summary, builds = tolerance_analysis(path, tl.Tolerances(), 6, 1, (64, 48))
    assert summary["yield"] == 1.0
    state = setup_worker(str(path), False, None)
    viewer = dataclasses.replace(state[0].viewers[0], width_px=64, height_px=48)
    nominal = render_viewer(state[0], viewer, state[1], views=(), supersample=1).metrics
    for build in builds:
        assert build["hidden_fraction"] == nominal["hidden_fraction"]
        assert build["shift_median_arcmin"] == nominal["background_shift_arcmin"]["median"]


def test_builds_are_reproducible_and_errors_stay_within_limits(tmp_path):
    scene = load_scene(write_scene(tmp_path, layers=RING))
    tol = tl.Tolerances(axial_mm=1.0, decenter_mm=0.5, tilt_deg=0.3, focal_pct=2.0)
    a = tl.perturbed(scene.system, tol, np.random.default_rng(7))
    b = tl.perturbed(scene.system, tol, np.random.default_rng(7))
    assert a == b
    for built, nominal in zip(a.lenses, scene.system.lenses, strict=True):
        assert abs(built.z_mm - nominal.z_mm) <= 1.0
        assert np.hypot(*built.decenter_mm) <= 0.5 + 1e-12
        assert max(map(abs, built.tilt_deg)) <= 0.3
        f0 = nominal.cardinal_points().efl_mm
        assert abs(built.cardinal_points().efl_mm / f0 - 1) <= 0.021


def test_yield_falls_as_a_tolerance_grows(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    yields = []
    for decenter in (0.0, 0.5, 2.0, 6.0):
        summary, _ = tolerance_analysis(path, tl.Tolerances(decenter_mm=decenter), 12, 5,
                                        (48, 36))
        yields.append(summary["yield"])
    assert yields[0] == 1.0
    assert all(b <= a + 0.1 for a, b in zip(yields, yields[1:], strict=False))  # MC noise
    assert yields[-1] < yields[0]


def test_sensitivity_ranks_the_tolerance_that_matters(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    summary, _ = tolerance_analysis(path, tl.Tolerances(axial_mm=0.1, decenter_mm=5.0), 8, 2,
                                    (48, 36))
    assert summary["sensitivity"][0]["tolerance"] == "decenter_mm"
    assert set(summary["for_95_yield"]) == {"axial_mm", "decenter_mm"}
    assert set(summary["for_95_yield"]["decenter_mm"]["scan"]) == {"1.25", "2.5", "5", "10",
                                                                   "20"}


@pytest.mark.parametrize(("passes", "builds", "low", "high"), [
    # R. G. Newcombe, "Two-sided confidence intervals for the single proportion: comparison
    # of seven methods", Statistics in Medicine 17, 857-872 (1998), Table II, method 3
    # (Wilson score, no continuity correction); values from memory of that table.
    (81, 263, 0.2553, 0.3662),
    (15, 148, 0.0624, 0.1605),
    (0, 20, 0.0, 0.1611),
    (1, 29, 0.0061, 0.1718),
])
def test_yield_interval_is_the_wilson_score_interval(passes, builds, low, high):
    assert tl.wilson_interval(passes, builds) == pytest.approx((low, high), abs=5e-5)


def test_builds_record_each_lens_sampled_errors_within_the_limits(tmp_path):
    path = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    tol = tl.Tolerances(axial_mm=1.0, decenter_mm=0.5, tilt_deg=0.3, focal_pct=2.0)
    _, builds = tolerance_analysis(path, tol, 3, 4, (32, 24))
    for build in builds:
        for lens in range(1, 5):
            assert abs(build[f"L{lens}_axial_mm"]) <= 1.0
            assert (build[f"L{lens}_decenter_x_mm"] ** 2
                    + build[f"L{lens}_decenter_y_mm"] ** 2) <= 0.5 ** 2 + 1e-12
            assert max(abs(build[f"L{lens}_tilt_x_deg"]),
                       abs(build[f"L{lens}_tilt_y_deg"])) <= 0.3
            assert abs(build[f"L{lens}_focal_pct"]) <= 2.0
    # The same seed draws the same errors as the perturbed system actually has.
    scene = load_scene(path)
    system, errors = tl.perturbation(scene.system, tol, np.random.default_rng(builds[0]["seed"]))
    assert errors == {k: v for k, v in builds[0].items() if k.startswith("L")}
    assert system.lenses[1].z_mm - scene.system.lenses[1].z_mm == pytest.approx(
        errors["L2_axial_mm"])
