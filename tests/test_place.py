"""What a visitor sees where the object was, and the through-window, against paraxial optics.

The ideal four-lens cloak acts on rays as free space over its length L (J. S. Choi and
J. C. Howell, "Paraxial ray optics cloaking", Optics Express 22(24), 29465-29478, 2014).
So from an eye on the axis at distance d in front of the first lens, the background is
seen only inside the far lens (radius R) as seen down an empty tube: a cone of
half-angle R / (d + L). An object point at radius r, z behind the first lens, seen at
r / (d + z), is replaced by background when r / (d + z) < R / (d + L); it is hidden from
the eye when r > (R / d) (d + z - d z / f1) (the rays that passed the first lens converge
towards its focus). Both follow from the thin-lens and free-space matrices (H. Kogelnik
and T. Li, Applied Optics 5, 1550-1567, 1966) by similar triangles.

The test bench: ideal lenses f1 = 180, f2 = 60 mm, R = 25 mm, so t1 = 240, t2 = 240,
L = 720 mm; the eye 600 mm in front of the first lens; a ring 7-21 mm at z = 222 mm.
"""

import math

import numpy as np
import pytest
from cloakview.render.frame.views import render_viewer
from cloakview.render.scene.loader import load_scene
from cloakview.render.sweeps import eyes as both_eyes
from scenes import RING, write_scene

IDEAL = "ideal = true"
R, D, L, F1, Z = 25.0, 600.0, 720.0, 180.0, 222.0
WINDOW = R / (D + L)  # rad, paraxial


def _render(tmp_path, layers=RING, width=240, height=160, **kwargs):
    scene = load_scene(write_scene(tmp_path, layers=layers, render_extra=IDEAL, width=width,
                                   height=height, **kwargs))
    return render_viewer(scene, scene.viewers[0], views=("vanish",))


def test_window_matches_the_free_space_cone(tmp_path):
    m = _render(tmp_path).metrics
    # One pixel of this 8 deg x 240 px view is 0.033 deg; the window is about 1.08 deg.
    assert m["window_deg"] == pytest.approx(math.degrees(math.atan(WINDOW)), abs=0.02)
    # The window's share of the first lens's disc: (R / (d + L))^2 / (R / d)^2.
    assert m["window_share"] == pytest.approx((D / (D + L)) ** 2, rel=0.03)
    # Its diameter where it crosses the front panel (10 mm in front of the first lens).
    panel = D - 10.0
    assert m["window_panel_mm"] == pytest.approx(2 * panel * WINDOW, rel=0.03)


def test_ring_beyond_the_window_leaves_a_dark_ring(tmp_path):
    # Inner radius 7 mm > (R / d)(d + z - d z / f1) = 3.4 mm: hidden entirely. Only radii
    # below WINDOW (d + z) = 15.6 mm are replaced by background; by area of the ring
    # (7 to 21 mm), (15.57^2 - 7^2) / (21^2 - 7^2) = 0.493 of its place.
    hide_limit = R / D * (D + Z - D * Z / F1)
    assert hide_limit < 7.0
    fit = WINDOW * (D + Z)
    expected = (fit ** 2 - 7.0 ** 2) / (21.0 ** 2 - 7.0 ** 2)
    result = _render(tmp_path)
    m = result.metrics
    assert m["hidden_fraction"] > 0.99
    assert m["replaced_fraction"] == pytest.approx(expected, abs=0.03)
    assert m["blocked_fraction"] == pytest.approx(1 - expected, abs=0.03)
    assert m["replaced_fraction"] + m["blocked_fraction"] + m["showing_fraction"] == \
        pytest.approx(1.0, abs=1e-9)
    assert m["verdict"].startswith("hidden, but a dark ring shows where it was")
    # Seen from the eye, the object's place reaches 21 / (d + z) from the window centre.
    assert m["object_outer_deg"] == pytest.approx(math.degrees(21.0 / (D + Z)), abs=0.05)
    assert m["advice"] and f"at most {fit:.0f} mm from the axis" in m["advice"][0]
    # The vanish view shows both: teal (background) and violet (dark housing) pixels.
    image = result.images["vanish"].astype(int)
    teal = (np.abs(image - [int(0.12 * 255), int(0.71 * 255), int(0.66 * 255)]).sum(-1) < 90)
    violet = (np.abs(image - [int(0.52 * 255), int(0.30 * 255), int(0.85 * 255)]).sum(-1) < 90)
    assert teal.sum() > 50 and violet.sum() > 50


def test_ring_inside_the_window_is_replaced_and_works(tmp_path):
    # The same ring scaled by 2/3 (4.7 to 14 mm) fits inside WINDOW (d + z) = 15.6 mm and
    # stays outside the 3.4 mm the eye can see past the first lens: background replaces it.
    small = RING.replace("width_mm = 44", f"width_mm = {44 * 2 / 3:.4f}")
    m = _render(tmp_path, layers=small).metrics
    assert m["replaced_fraction"] > 0.97
    assert m["verdict"].startswith("works")
    assert m["advice"] == []


def test_binocular_verdict_needs_overlapping_windows(tmp_path):
    # Eyes 2 mm apart share the window; eyes 16 mm apart (both fixating the first lens) see
    # windows whose centres differ by 2 e (1 / d - 1 / (d + L)) = 0.0145 rad, 0.77 of the
    # window radius R / (d + L): they overlap by less than half, and the pair fails.
    small = RING.replace("width_mm = 44", f"width_mm = {44 * 2 / 3:.4f}")
    scene = load_scene(write_scene(tmp_path, layers=small, render_extra=IDEAL, width=240,
                                   height=160))
    shift = 16.0 * (1 / D - 1 / (D + L)) / WINDOW
    assert 0.7 < shift < 0.8
    for ipd, fuses in ((2.0, True), (16.0, False)):
        left, right = both_eyes.eye_pair(scene.viewers[0], ipd)
        renders = [render_viewer(scene, v, views=()) for v in (left, right)]
        overlap = both_eyes.window_overlap(renders[0].through, renders[1].through)
        verdict = both_eyes.binocular_verdict(renders[0].metrics, renders[1].metrics, overlap)
        if fuses:
            assert overlap > 0.8 and verdict.startswith("works with both eyes open")
        else:
            assert overlap < both_eyes.MIN_OVERLAP
            assert verdict.startswith("fails")


def test_binocular_verdict_when_each_eye_works_alone():
    # Each eye's own verdict works, but the windows overlap by 30 %: the pair does not fuse.
    works = {"verdict_class": "works", "verdict": "works: object replaced by background"}
    verdict = both_eyes.binocular_verdict(works, works, 0.3)
    assert verdict.startswith("fails with both eyes open") and "close one eye" in verdict
    hidden = {"verdict_class": "hidden", "verdict": "hidden, but a dark ring shows"}
    one = both_eyes.binocular_verdict(works, hidden, 0.9)
    assert one.startswith("works for the left eye only") and "close the right eye" in one


def test_an_object_in_view_is_named_before_a_missing_background():
    # A walk-by frame that sees the object but no background through the lenses must say
    # that the object shows, not only that the background is missing.
    from cloakview.render.frame.metrics import verdict
    metrics = {"hidden_fraction": 0.0, "showing_fraction": 1.0, "object_seen_ratio": 1.0,
               "replaced_fraction": 0.0, "blocked_fraction": 0.0, "window_deg": 0.0,
               "background_shift_arcmin": None, "color_fringe_arcmin": None}
    assert verdict(metrics).startswith("breaks: the object shows")
