"""Visitors in motion: videos, both eyes, sight-line maps, the cloaked zone, resumable sweeps."""

import csv
import dataclasses
import json

import imageio.v3 as iio
import imageio_ffmpeg
import numpy as np
import pytest
from cloakview.render.cli.main import main
from cloakview.render.frame.views import render_viewer
from cloakview.render.scene.loader import load_scene
from cloakview.render.sweeps import eyes
from cloakview.render.sweeps import sightlines as sl
from cloakview.render.sweeps import zone as zn
from cloakview.render.sweeps.jobs import run_jobs
from scenes import RING, RING_FITS, write_scene

IDEAL = "ideal = true"


def test_walk_video_has_one_frame_per_point(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING, render_extra=IDEAL)
    out = tmp_path / "out"
    assert main(["walk", str(scene), "--frames", "5", "--size", "48x32", "--distance", "600",
                 "--span", "80", "--fps", "10", "--workers", "2", "--out", str(out),
                 "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["frames"] == 5
    rows = list(csv.DictReader((out / "walk.csv").read_text().splitlines()))
    assert len(rows) == 5
    gif = iio.imread(out / "walk.gif")
    assert gif.shape[0] == 5 and gif.shape[2] == 48  # at 10 fps the GIF keeps every frame
    frames, _ = imageio_ffmpeg.count_frames_and_secs(str(out / "walk.mp4"))
    assert frames == 5
    first = iio.imread(out / "frames" / "frame_00000.png")
    assert first.shape[1] == 48 and first.shape[0] > 32  # the caption strip sits below
    xs = [float(r["eye_x_mm"]) for r in rows]
    assert xs == pytest.approx(np.linspace(-40, 40, 5))


def test_walk_from_csv_path_and_bad_rows(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING)
    path = tmp_path / "path.csv"
    path.write_text("x_mm,y_mm,z_mm\n0,1150,-600\n10,1150,-700\n")
    out = tmp_path / "out"
    assert main(["walk", str(scene), "--path", str(path), "--size", "32x24", "--workers", "1",
                 "--fps", "10", "--out", str(out)]) == 0
    assert iio.imread(out / "walk.gif").shape[0] == 2
    assert main(["walk", str(scene), "--frames", "0", "--out", str(out)]) == 2
    assert "--frames = 0: a video must have 1 to 5000 frames" in capsys.readouterr().err
    path.write_text("x_mm,y_mm,z_mm\n0,1150,-600\n0,tall,-700\n")
    assert main(["walk", str(scene), "--path", str(path), "--out", str(out)]) == 2
    assert "path.csv:3" in capsys.readouterr().err


def test_anaglyph_takes_red_from_left_and_cyan_from_right():
    left = np.zeros((2, 2, 3), np.uint8)
    left[..., 0] = 200
    right = np.zeros((2, 2, 3), np.uint8)
    right[..., 1:] = 90
    out = eyes.anaglyph(left, right)
    assert (out[..., 0] == 200).all() and (out[..., 1:] == 90).all()


def test_eye_pair_is_ipd_apart_and_fixates_the_same_point(tmp_path):
    scene = load_scene(write_scene(tmp_path))
    left, right = eyes.eye_pair(scene.viewers[0], 63.0)
    # Dodgson (2004): adult mean interpupillary distance about 63 mm.
    assert np.linalg.norm(np.subtract(right.eye_mm, left.eye_mm)) == pytest.approx(63.0)
    assert left.eye_mm[0] < right.eye_mm[0]  # left eye on the visitor's left (x to the right)
    assert left.look_at_mm == right.look_at_mm


def test_eyes_command_says_when_one_eye_is_off(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING)
    out = tmp_path / "out"
    assert main(["eyes", str(scene), "--size", "64x48", "--out", str(out), "--json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert "both_eyes" in result and result["ipd_mm"] == 63.0
    for name in ("left", "right", "pair", "anaglyph"):
        assert (out / "on-axis" / f"{name}.png").is_file()
    pair = iio.imread(out / "on-axis" / "pair.png")
    assert pair.shape[1] == 128 and pair.shape[0] > 48  # two 64 px views, captioned below
    assert result["both_eyes"].startswith("fails")  # 63 mm apart at 600 mm: no overlap
    assert result["window_overlap"] is not None and result["window_overlap"] < 0.5


def test_sightline_map_of_symmetric_scene_is_symmetric(tmp_path):
    path = str(write_scene(tmp_path, layers=RING_FITS, render_extra=IDEAL))
    xs = sl.grid(-160, 160, 20, "x")
    ds = [590.0, 800.0]
    jobs = sl.floor_jobs(xs, ds, [1150.0], (48, 32))
    rows, _ = run_jobs(sl.measure_point, jobs, "t", sl.setup_worker, (path, False, None),
                       workers=1, cache=tmp_path / "jobs")
    for d in ds:
        classes = [r["class"] for r in rows if r["d"] == d]
        assert classes == classes[::-1]
        hidden = [r["hidden_fraction"] for r in rows if r["d"] == d]
        for a, b in zip(hidden, hidden[::-1], strict=True):
            if a is not None and b is not None:  # None: under a pixel of object in view
                assert a == pytest.approx(b, abs=0.02)
    on_axis = next(r for r in rows if r["x"] == 0 and r["d"] == 590.0)
    far = [r for r in rows if abs(r["x"]) == 160]
    assert on_axis["class"] == "works"
    assert all(r["class"] != "works" for r in far)


def test_sweep_resumes_with_the_same_results(tmp_path):
    path = str(write_scene(tmp_path, layers=RING))
    jobs = sl.floor_jobs([-20.0, 0.0, 20.0], [600.0, 700.0], [1150.0], (32, 24))
    whole, _ = run_jobs(sl.measure_point, jobs, "t", sl.setup_worker, (path, False, None),
                        workers=1, cache=tmp_path / "a")
    run_jobs(sl.measure_point, jobs[:3], "t", sl.setup_worker, (path, False, None),
             workers=1, cache=tmp_path / "b")  # "interrupted" after three jobs
    done = sorted((tmp_path / "b" / "jobs" / "t").glob("*.json"))
    assert len(done) == 3
    stamps = {p: p.stat().st_mtime_ns for p in done}
    resumed, reused = run_jobs(sl.measure_point, jobs, "t", sl.setup_worker,
                               (path, False, None), workers=2, cache=tmp_path / "b")
    assert resumed == whole and reused == 3
    assert all(p.stat().st_mtime_ns == t for p, t in stamps.items())  # not redone


def _zone_scene(tmp_path, layers=""):
    return load_scene(write_scene(tmp_path, layers=layers, render_extra=IDEAL))


def test_axis_is_never_in_the_cloaked_zone(tmp_path):
    # Choi and Howell (2014): for a viewer on the axis the cloaked region is ring-shaped
    # and the axis itself is not cloaked, at any viewing distance.
    scene = _zone_scene(tmp_path)
    eye = np.array(scene.viewers[0].eye_mm)
    for back in (0.0, 300.0, 1500.0):
        zone = zn.cloaked_zone(scene, eye - [0, 0, back], radial=81, azimuthal=24)
        assert not zone.hidden[:, 0].any()
        assert zone.hidden.any()


def _ring_png(path, inner_mm, outer_mm, width_mm):
    size = 400
    yy, xx = np.mgrid[0:size, 0:size]
    r = np.hypot(xx - (size - 1) / 2, yy - (size - 1) / 2) * width_mm / size
    rgba = np.zeros((size, size, 4), np.uint8)
    rgba[(r >= inner_mm) & (r <= outer_mm)] = (40, 200, 60, 255)
    iio.imwrite(path, rgba)


def test_zone_agrees_with_renders(tmp_path):
    scene = _zone_scene(tmp_path / "z")
    zone = zn.cloaked_zone(scene, np.array(scene.viewers[0].eye_mm))
    ring = next(r for r in zn.largest_rings(zone, scene) if r.gap == "L1-L2")
    assert ring.inner_mm > 0 and ring.length_mm > 20
    z_mid = (ring.z_start_mm + ring.z_end_mm) / 2
    width = 2 * scene.housing.tube_radius_mm - 1
    inside = (ring.inner_mm + 1.0, min(ring.outer_mm, scene.housing.tube_radius_mm) - 1.5)
    # "Just outside": the same ring reaching 3 mm into the crossed region at that plane.
    row = zone.hidden[np.argmin(np.abs(zone.z_mm - z_mid))]
    boundary = zone.r_mm[np.argmax(row)]  # first hidden radius there
    outside = (max(boundary - 3.0, 0.5), inside[1])
    results = {}
    for name, (r_in, r_out) in (("inside", inside), ("outside", outside)):
        folder = tmp_path / name
        write_scene(folder, render_extra=IDEAL)
        _ring_png(folder / "art" / "test_ring.png", r_in, r_out, width)
        layer = RING.replace("art/ring.png", "art/test_ring.png").replace(
            "width_mm = 44", f"width_mm = {width}").replace("z_mm = 222", f"z_mm = {z_mid}")
        scene_i = load_scene(write_scene(folder, layers=layer, render_extra=IDEAL,
                                         width=160, height=120))
        viewer = dataclasses.replace(scene_i.viewers[0], fov_deg=6)
        results[name] = render_viewer(scene_i, viewer, views=()).metrics["hidden_fraction"]
    assert results["inside"] >= 0.95
    assert results["outside"] < 0.95


def test_sightlines_and_zone_commands_write_their_files(tmp_path, capsys):
    scene = write_scene(tmp_path / "s", layers=RING)
    out = tmp_path / "sl"
    assert main(["sightlines", str(scene), "--heights", "child,1150", "--lateral-range",
                 "-20:20:20", "--distance-range", "600:700:100", "--height-range", "1100:1200:50",
                 "--size", "32x24",
                 "--workers", "1", "--out", str(out), "--json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert "recommendation" in result and result["heights_mm"]["child"] == 1125.0
    for name in ("floor_child.png", "floor_1150mm.png", "elevation.png", "sightlines.csv",
                 "sightlines.json"):
        assert (out / name).is_file()
    assert main(["zone", str(scene), "--out", str(tmp_path / "z"), "--json"]) == 0
    zone = json.loads(capsys.readouterr().out)
    assert zone["axis_hidden"] is False and zone["rings"]
    assert main(["sightlines", str(scene), "--lateral-range", "5:1:1"]) == 2
    assert "--lateral" in capsys.readouterr().err


@pytest.mark.parametrize("layers, lateral_mm, expected", [
    (RING_FITS, 0.0, "works"),    # inside the window (test_place.py)
    (RING, 0.0, "hidden"),        # reaches beyond it: a dark ring
    (RING_FITS, 6.0, None),       # a step aside: whatever it is, both must agree
])
def test_sightline_point_and_render_agree(tmp_path, layers, lateral_mm, expected):
    # The same eye point through `sightlines` (a 96 x 54 sweep render at one wavelength,
    # framing the viewing hole) and through `render` (the viewer's own 96 x 64 frame, three
    # wavelengths, 2 x 2 samples) must give the same verdict: the thresholds are shares of
    # the object's place and angles, not pixel counts.
    path = write_scene(tmp_path / "s", layers=layers, render_extra=IDEAL, supersample=2)
    scene = load_scene(path)
    panel = scene.housing.panel_z_mm
    viewer = scene.viewers[0]
    distance = panel - viewer.eye_mm[2]
    jobs = sl.floor_jobs([lateral_mm], [distance], [viewer.eye_mm[1]], sl.SWEEP_SIZE_PX)
    [point], _ = run_jobs(sl.measure_point, jobs, "t", sl.setup_worker, (str(path), False, None),
                          workers=1, cache=tmp_path / "jobs")
    moved = dataclasses.replace(viewer, eye_mm=(lateral_mm, *viewer.eye_mm[1:]))
    rendered = render_viewer(scene, moved, views=()).metrics
    assert point["class"] == rendered["verdict_class"]
    if expected:
        assert point["class"] == expected


def test_zone_rings_stay_inside_the_tube_and_hide_an_object_at_their_corner(tmp_path):
    # A tube radius of 32.9 mm is not a whole number of 0.5 mm radial bins: the ring must
    # still end at the tube. An object filling the ring from its inner radius, placed at the
    # ring's near end, then renders hidden with real (thick, dispersive) lenses, to within
    # the renderer's texture filtering at the object's edge.
    path = write_scene(tmp_path / "s")
    path.write_text(path.read_text().replace("tube_diameter_mm = 66", "tube_diameter_mm = 65.8"))
    scene = load_scene(path)
    zone = zn.cloaked_zone(scene, np.array(scene.viewers[0].eye_mm))
    rings = zn.largest_rings(zone, scene)
    assert rings and all(r.outer_mm <= scene.housing.tube_radius_mm for r in rings)
    ring = next(r for r in rings if r.gap == "L1-L2")
    width = 2 * scene.housing.tube_radius_mm - 0.2
    folder = tmp_path / "corner"
    write_scene(folder)
    _ring_png(folder / "art" / "test_ring.png", ring.inner_mm + width / 400, ring.outer_mm - 0.5,
              width)
    layer = RING.replace("art/ring.png", "art/test_ring.png").replace(
        "width_mm = 44", f"width_mm = {width}").replace(
        "z_mm = 222", f"z_mm = {ring.z_start_mm + 0.01}")
    corner_path = write_scene(folder, layers=layer, width=160, height=120)
    corner_path.write_text(corner_path.read_text().replace("tube_diameter_mm = 66",
                                                           "tube_diameter_mm = 65.8"))
    corner = load_scene(corner_path)
    metrics = render_viewer(corner, corner.viewers[0], views=()).metrics
    assert metrics["showing_fraction"] <= 0.005
