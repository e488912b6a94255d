"""The compiled compositing kernels against the numpy reference and the definitions."""

import cv2
import numpy as np
import pytest
from cloakview.render.frame.composite import sample_layer
from cloakview.render.frame.composite_kernel import pack_pyramid, sample_over
from hypothesis import given, settings
from hypothesis import strategies as st


def _pyramid(rng, height, width):
    levels = [rng.uniform(0, 1, (height, width, 4)).astype(np.float32)]
    while min(levels[-1].shape[:2]) >= 4:
        levels.append(cv2.pyrDown(levels[-1]))
    return levels


def _compiled(levels, u, v, level):
    """The compiled sampler's RGBA: one layer laid over nothing (colour, 1 - light left)."""
    rgb = np.zeros((len(u), 3), np.float32)
    clear = np.ones(len(u), np.float32)
    sample_over(*pack_pyramid(levels), u, v, level, np.float32(1.0), np.ones(len(u)), False,
                rgb, clear, np.zeros(len(u), np.float32))
    return np.concatenate([rgb, 1 - clear[:, None]], axis=1)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**31), height=st.integers(2, 40), width=st.integers(2, 40),
       n=st.integers(1, 400), whole_levels=st.booleans())
def test_compiled_sampler_equals_the_reference(seed, height, width, n, whole_levels):
    rng = np.random.default_rng(seed)
    levels = _pyramid(rng, height, width)
    u = rng.uniform(-3, width + 3, n).astype(np.float32)
    v = rng.uniform(-3, height + 3, n).astype(np.float32)
    u[rng.random(n) < 0.1] = np.nan  # rays that missed the layer
    level = rng.uniform(0, len(levels) + 1, n).astype(np.float32)
    if whole_levels:
        level = np.floor(level)
    level[rng.random(n) < 0.3] = 0.0
    np.testing.assert_allclose(_compiled(levels, u, v, level),
                               sample_layer(levels, u, v, level), rtol=0, atol=2e-6)


def test_bilinear_by_definition():
    # Bilinear interpolation (common practice; e.g. W. H. Press et al., Numerical Recipes,
    # 3rd ed., sec. 3.6): at a texel centre the texel itself, half-way between four
    # centres their mean, and beyond the picture's edge transparent black is blended in.
    texture = np.arange(2 * 3 * 4, dtype=np.float32).reshape(2, 3, 4)
    u = np.array([1.0, 0.5, 2.5], np.float32)
    v = np.array([1.0, 0.5, 0.0], np.float32)
    out = _compiled([texture], u, v, np.zeros(3, np.float32))
    np.testing.assert_allclose(out[0], texture[1, 1])
    np.testing.assert_allclose(out[1], texture[:2, :2].mean(axis=(0, 1)))
    np.testing.assert_allclose(out[2], 0.5 * texture[0, 2])


def test_levels_blend_by_distance():
    # Mip-mapping (L. Williams, SIGGRAPH 1983): level 1.25 is 3/4 of level 1 and 1/4 of
    # level 2, each sampled at the same point of the picture.
    flat = [np.full((8, 8, 4), value, np.float32) for value in (1.0, 10.0, 100.0, 1000.0)]
    flat = [level[: 8 >> k, : 8 >> k] for k, level in enumerate(flat)]
    u = v = np.array([3.5], np.float32)
    out = _compiled(flat, u, v, np.array([1.25], np.float32))
    assert out[0, 0] == pytest.approx(0.75 * 10 + 0.25 * 100)


def test_over_operator_in_one_pass():
    # Porter and Duff, "Compositing digital images", SIGGRAPH 1984: with premultiplied
    # colours, A over B = A + (1 - alpha_A) B. Two flat layers of alpha 0.25 and 0.5 over
    # an empty start give colour c1 + 0.75 c2 and leave 0.75 * 0.5 of the light clear;
    # the hidden layer (the second) covers 0.75 * 0.5 of the ray.
    n = 5
    rgb = np.zeros((n, 3), np.float32)
    clear = np.ones(n, np.float32)
    hidden = np.zeros(n, np.float32)
    u = v = np.full(n, 1.0, np.float32)
    u[0] = np.nan  # this ray misses both layers
    for colour, alpha, is_hidden in (((0.2, 0.1, 0.0), 0.25, False),
                                     ((0.5, 0.5, 0.5), 0.5, True)):
        texture = np.empty((3, 3, 4), np.float32)
        texture[..., :3] = colour
        texture[..., 3] = alpha
        sample_over(*pack_pyramid([texture]), u, v, np.zeros(n, np.float32),
                    np.float32(1.0), np.ones(n), is_hidden, rgb, clear, hidden)
    np.testing.assert_allclose(rgb[1], [0.2 + 0.75 * 0.5, 0.1 + 0.75 * 0.5, 0.75 * 0.5],
                               rtol=1e-6)
    assert clear[1] == pytest.approx(0.75 * 0.5) and hidden[1] == pytest.approx(0.75 * 0.5)
    assert rgb[0].tolist() == [0, 0, 0] and clear[0] == 1 and hidden[0] == 0


def test_compiled_compositing_equals_the_reference(tmp_path, monkeypatch):
    from cloakview.optics.trace import PASSED
    from cloakview.render.frame import composite
    from cloakview.render.frame.camera import camera_rays
    from cloakview.render.frame.mapper import SETUPS, map_rays
    from cloakview.render.scene.loader import load_scene
    from scenes import RING, write_scene

    scene = load_scene(write_scene(tmp_path, layers=RING, width=64, height=48))
    pyramids = composite.TexturePyramids(scene)
    rays, grid = camera_rays(scene.viewers[0], scene.placement, 2, 587.56, (0, 96))
    shape = (grid.pupil, grid.rows, grid.columns)
    for setup in ("cloaked", "naked"):
        ray_map = map_rays(scene, rays, SETUPS[setup])
        assert (ray_map.result.fate != PASSED).any()  # the housing colour is in it too
        out = {}
        for path in ("numpy", "compiled"):
            monkeypatch.setenv("CLOAKVIEW_TRACER", path)
            out[path] = composite.composite_rays(scene, ray_map, pyramids, shape)[:2]
        for reference, compiled in zip(out["numpy"], out["compiled"], strict=True):
            np.testing.assert_allclose(compiled, reference, rtol=0, atol=2e-6)
    assert out["numpy"][1].max() > 0.5  # without lenses the ring is in view
