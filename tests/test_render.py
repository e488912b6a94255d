"""Rendering: what a visitor sees through the device, checked against optics facts."""

import dataclasses
import json

import numpy as np
import pytest
from cloakview.render.cli.main import main
from cloakview.render.color import linear_to_srgb, srgb_to_linear
from cloakview.render.frame.composite import channel_weights
from cloakview.render.frame.views import render_viewer
from cloakview.render.scene.loader import load_scene
from scenes import DOT, RING, write_scene

IDEAL = "ideal = true"


def _metrics(tmp_path, **kwargs):
    scene = load_scene(write_scene(tmp_path, **kwargs))
    return render_viewer(scene, scene.viewers[0], views=()).metrics


def test_transparent_device_equals_reference_pixel_for_pixel(tmp_path):
    # Ideal lenses of enormous focal length and a housing far larger than the view: the
    # full cloaked pipeline (camera, tracer, housing split, layers) must reproduce the
    # no-device reference exactly.
    device = """
[device]
axis_height_mm = 1150
[[device.lens]]
z_mm = 0
focal_length_mm = 1e15
diameter_mm = 20000
[[device.lens]]
z_mm = 300
focal_length_mm = 1e15
diameter_mm = 20000

[housing]
tube_diameter_mm = 20000
hole_diameter_mm = 20000
panel_width_mm = 20000
panel_height_mm = 20000
"""
    path = write_scene(tmp_path)
    text = path.read_text()
    path.write_text(text[:text.index("[device]")] + device + text[text.index("[[layer]]"):])
    scene = load_scene(path)
    images = render_viewer(scene, scene.viewers[0], views=("cloaked", "reference")).images
    assert np.array_equal(images["cloaked"], images["reference"])
    assert images["cloaked"].std() > 10  # the poster is really in view


def test_ideal_cloak_shows_background_as_free_space(tmp_path):
    # Choi and Howell (2014): the ideal four-lens cloak is free space, so the through-view
    # matches the no-device reference: SSIM (Wang et al. 2004) near 1, no shift, no fringe.
    m = _metrics(tmp_path, render_extra=IDEAL, width=160, height=120)
    assert m["through_pixels"] > 200
    assert m["background_ssim"] > 0.99
    assert m["background_shift_arcmin"]["p95"] < 1e-6
    assert m["color_fringe_arcmin"] == 0.0


def test_ring_vanishes_on_axis_but_axis_object_shows(tmp_path):
    # Choi and Howell (2014): the cloaked region is a ring around the axis; the axis itself
    # is not cloaked.
    ring = _metrics(tmp_path / "ring", layers=RING, render_extra=IDEAL)
    dot = _metrics(tmp_path / "dot", layers=DOT, render_extra=IDEAL)
    assert ring["hidden_fraction"] >= 0.95
    assert dot["hidden_fraction"] < 0.2


def test_ring_reappears_off_axis(tmp_path):
    # Moving the eye 30 mm sideways moves its image through the first lens about
    # 30 * f1 / (D - f1) = 13 mm off axis, onto the ring (radius 7 to 21 mm).
    scene = load_scene(write_scene(tmp_path, layers=RING, render_extra=IDEAL))
    on = render_viewer(scene, scene.viewers[0], views=()).metrics
    viewer = dataclasses.replace(scene.viewers[0], eye_mm=(30.0, 1150.0, -600.0))
    side = render_viewer(scene, viewer, views=()).metrics
    assert on["hidden_fraction"] >= 0.95
    assert side["hidden_fraction"] < 0.5


def test_real_lenses_hide_the_ring_and_show_colour_fringes(tmp_path):
    m = _metrics(tmp_path, layers=RING, render_extra="wavelengths_nm = [486.13, 587.56, "
                 "656.27]", width=128, height=96)
    assert m["hidden_fraction"] >= 0.95
    assert m["color_fringe_arcmin"] > 0.0


def test_fresnel_dimming(tmp_path):
    # Hecht, Optics sec. 4.6: R = ((n - 1)/(n + 1))^2 per bare surface at normal incidence,
    # eight surfaces: (1 - R)^8 with the acrylic index n_d = 1.4914 (Kasarova et al. 2007).
    # An anti-reflection coating reflects less, so coated lenses pass more.
    bare = _metrics(tmp_path / "bare", device_extra="coated = false",
                    render_extra="wavelengths_nm = [587.56]")
    assert bare["transmittance"] == pytest.approx((1 - (0.4914 / 2.4914) ** 2) ** 8, rel=0.01)
    coated = _metrics(tmp_path / "coated", device_extra="coated = true",
                      render_extra="wavelengths_nm = [587.56]")
    assert coated["transmittance"] > bare["transmittance"]


def test_srgb_transfer_function():
    # IEC 61966-2-1: sRGB 0.5 decodes to 0.21404 linear; the two pieces meet at 0.04045.
    assert float(srgb_to_linear(0.5)) == pytest.approx(0.21404, abs=1e-5)
    assert float(srgb_to_linear(0.04045)) == pytest.approx(0.04045 / 12.92, rel=1e-6)
    values = np.linspace(0, 1, 1001, dtype=np.float32)
    np.testing.assert_allclose(linear_to_srgb(srgb_to_linear(values)), values, atol=2e-6)


@pytest.mark.parametrize("tracer", ["numpy", "auto"])
def test_srgb_encoding_of_a_frame_follows_the_standard(monkeypatch, tracer):
    # IEC 61966-2-1 encoding, written out in float64: 12.92 v up to 0.0031308, else
    # 1.055 v^(1/2.4) - 0.055, after clipping to [0, 1]. A frame-sized array takes the
    # compiled pass unless the reference path is chosen; both stay within float32 rounding.
    monkeypatch.setenv("CLOAKVIEW_TRACER", tracer)
    values = np.linspace(-0.1, 1.1, 300_000, dtype=np.float32)
    v = np.clip(values.astype(np.float64), 0.0, 1.0)
    expected = np.where(v <= 0.0031308, 12.92 * v, 1.055 * v ** (1 / 2.4) - 0.055)
    encoded = linear_to_srgb(values.reshape(3, -1)).reshape(-1)
    assert encoded.dtype == np.float32
    np.testing.assert_allclose(encoded, expected, rtol=0, atol=3e-7)
    assert np.isnan(linear_to_srgb(np.full(70_000, np.nan, np.float32))).all()


@pytest.mark.parametrize("wavelengths", [[587.56], [486.13, 587.56, 656.27],
                                         [450, 500, 550, 600, 650]])
def test_channel_weights_keep_grey_grey(wavelengths):
    weights = channel_weights(wavelengths)
    np.testing.assert_allclose(weights.sum(axis=0), 1.0)


def test_three_lines_map_to_blue_green_red():
    np.testing.assert_array_equal(channel_weights([486.13, 587.56, 656.27]),
                                  [[0, 0, 1], [0, 1, 0], [1, 0, 0]])


def test_render_command_writes_views_and_metrics(tmp_path, capsys):
    path = write_scene(tmp_path / "scene", layers=RING)
    out = tmp_path / "out"
    assert main(["render", str(path), "--out", str(out), "--size", "64x48", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert printed[0]["viewer"] == "on-axis"
    for view in ("cloaked", "reference", "naked", "difference", "vanish"):
        assert (out / "on-axis" / f"{view}.png").is_file()
    saved = json.loads((out / "on-axis" / "metrics.json").read_text())
    assert saved["hidden_fraction"] == printed[0]["hidden_fraction"]
    assert (out / "metrics.csv").read_text().count("\n") == 2
    run = json.loads((out / "run.json").read_text())
    assert run["options"]["viewers"] == ["on-axis"] and len(run["scene_sha256"]) == 64


def test_render_from_a_typed_eye_point(tmp_path, capsys):
    path = write_scene(tmp_path / "scene", layers=RING)
    out = tmp_path / "out"
    assert main(["render", str(path), "--eye", "30,1150,-600", "--views", "cloaked",
                 "--out", str(out), "--size", "48x32"]) == 0
    assert (out / "custom" / "cloaked.png").is_file()
    assert not (out / "custom" / "naked.png").exists()
    assert main(["render", str(path), "--eye", "0,1150", "--out", str(out)]) == 2
    assert "--eye = '0,1150': must be three finite numbers" in capsys.readouterr().err


def test_a_render_over_the_memory_budget_is_refused_before_it_starts(tmp_path, capsys):
    path = write_scene(tmp_path, layers=RING, width=640, height=360)
    out = tmp_path / "o"
    assert main(["--memory-mb", "64", "render", str(path), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "viewer 'on-axis'" in err and "over the budget of 64 MB" in err
    assert "rendering [" not in err and not out.exists()
    scene = load_scene(path)
    wide = dataclasses.replace(scene.viewers[0], width_px=8192, pupil_samples=64)
    with pytest.raises(ValueError, match="rays per image row"):
        render_viewer(scene, wide, supersample=8)


def test_metrics_from_every_kth_ray_match_the_full_frame(tmp_path, monkeypatch):
    # A frame with more rays than the record budget keeps a regular sample of them; the
    # same eye must get (nearly) the same numbers either way.
    path = write_scene(tmp_path, layers=RING, width=192, height=128, supersample=2)
    scene = load_scene(path)
    full = render_viewer(scene, scene.viewers[0], views=()).metrics
    from cloakview.render.frame import views

    monkeypatch.setattr(views, "RECORD_RAYS", 25_000)  # 98,304 rays: every 4th is kept
    sampled = render_viewer(scene, scene.viewers[0], views=()).metrics
    assert sampled["hidden_fraction"] == full["hidden_fraction"]  # coverage is per pixel
    for key in ("median", "p95"):
        assert sampled["background_shift_arcmin"][key] == pytest.approx(
            full["background_shift_arcmin"][key], rel=0.05)
    assert sampled["transmittance"] == pytest.approx(full["transmittance"], rel=0.01)


@pytest.mark.parametrize("path", ["numpy", "compiled"])
def test_resolving_samples_equals_the_mean_over_the_grid(path, monkeypatch):
    # Both paths (the strided float64 sum and the compiled one-pass sum) must give the
    # plain mean over pupil points and supersamples, and the same float32 values.
    from cloakview.optics.trace import available_backends
    from cloakview.render.frame.composite import resolve_samples
    if path not in available_backends():
        pytest.skip("numba is not installed")
    rng = np.random.default_rng(5)
    for pupil, s, channels in ((1, 1, 1), (1, 2, 3), (3, 2, 3), (2, 3, 1)):
        rows, cols = 4 * s, 6 * s
        samples = rng.random((pupil * rows * cols, channels)).astype(np.float32)
        expected = samples.reshape(pupil, rows // s, s, cols // s, s, channels).mean(
            axis=(0, 2, 4), dtype=np.float64)
        monkeypatch.setenv("CLOAKVIEW_TRACER", path)
        got = resolve_samples(samples, (pupil, rows, cols), s)
        np.testing.assert_allclose(got, expected, rtol=1e-6, atol=1e-7)
        monkeypatch.setenv("CLOAKVIEW_TRACER", "numpy")
        np.testing.assert_array_equal(got, resolve_samples(samples, (pupil, rows, cols), s))
        flat = resolve_samples(samples[:, 0].copy(), (pupil, rows, cols), s)
        monkeypatch.setenv("CLOAKVIEW_TRACER", path)
        np.testing.assert_array_equal(resolve_samples(samples[:, 0].copy(),
                                                      (pupil, rows, cols), s), flat)


def test_background_ssim_on_the_crop_equals_the_whole_picture():
    # Wang et al. (2004): SSIM of a pixel depends on its 7 x 7 window only, so scoring a
    # crop that keeps every masked pixel's window gives the same mean as the whole picture.
    from cloakview.render.frame.metrics import background_ssim
    from skimage.metrics import structural_similarity
    rng = np.random.default_rng(2)
    reference = rng.random((90, 160, 3))
    cloaked = np.clip(reference + rng.normal(0, 0.1, reference.shape), 0, 1)
    mask = np.zeros((90, 160), bool)
    mask[30:52, 70:101] = True
    test = np.where(mask[..., None], cloaked, reference)
    _, full = structural_similarity(reference, test, channel_axis=-1, data_range=1.0,
                                    full=True, win_size=7)
    assert background_ssim(cloaked, reference, mask) == pytest.approx(
        float(full.mean(axis=-1)[mask].mean()), abs=1e-12)


def test_skipping_the_reference_without_a_through_view_changes_no_number(tmp_path):
    # A viewer far off the axis sees no background through the lenses: the reference view
    # is then not traced unless a picture needs it, and every metric must stay the same.
    path = write_scene(tmp_path, layers=RING, width=64, height=48)
    scene = load_scene(path)
    viewer = dataclasses.replace(scene.viewers[0], eye_mm=(140.0, 1150.0, -600.0),
                                 look_at_mm=(0.0, 1150.0, 0.0))
    skipped = render_viewer(scene, viewer, views=()).metrics
    traced = render_viewer(scene, viewer, views=("reference",)).metrics
    assert skipped["window_deg"] == 0.0
    assert json.dumps(skipped, sort_keys=True) == json.dumps(traced, sort_keys=True)


@pytest.mark.parametrize("supersample, rows", [(1, None), (2, (6, 31))])
def test_compiled_camera_directions_equal_the_reference(supersample, rows, tmp_path,
                                                        monkeypatch):
    # The compiled pass must give the numpy reference's directions exactly; and by the
    # pinhole model (Pharr, Jakob and Humphreys, Physically Based Rendering, 3rd ed.,
    # sec. 6.1) every direction is a unit vector and the horizontal field of view spans
    # the viewer's fov_deg between the outer columns' edges.
    import dataclasses
    import math

    from cloakview.render.frame.camera import device_direction_planes
    from cloakview.render.scene.loader import load_scene
    from scenes import RING, write_scene

    scene = load_scene(write_scene(tmp_path, layers=RING, width=33, height=21))
    viewer = dataclasses.replace(scene.viewers[0], eye_mm=(37.0, 1290.0, -1400.0))
    planes = {}
    for path in ("numpy", "compiled"):
        monkeypatch.setenv("CLOAKVIEW_TRACER", path)
        planes[path] = device_direction_planes(viewer, scene.placement, supersample, rows)
    for a, b in zip(planes["numpy"], planes["compiled"], strict=True):
        np.testing.assert_array_equal(a, b)
    dx, dy, dz = planes["compiled"]
    np.testing.assert_allclose(dx**2 + dy**2 + dz**2, 1.0, atol=1e-12)
    if rows is None:
        cols = 33
        middle = np.array([dx[10, 16], dy[10, 16], dz[10, 16]])
        left, right = (np.array([dx[10, c], dy[10, c], dz[10, c]]) for c in (0, cols - 1))
        # Column centres sit (cols - 1) / cols of the way to the edges: tan scales so.
        half = math.tan(math.radians(viewer.fov_deg) / 2) * (cols - 1) / cols
        for side in (left, right):
            assert math.degrees(math.acos(side @ middle)) == pytest.approx(
                math.degrees(math.atan(half)), rel=1e-9)
