"""The compiled compositing kernels against the numpy reference and the definitions."""

import cv2
import numpy as np
import pytest
from cloakview.render.frame.composite import footprint_levels, sample_layer
from cloakview.render.frame.composite_kernel import layer_over, pack_pyramid
from hypothesis import given, settings
from hypothesis import strategies as st


def _pyramid(rng, height, width):
    levels = [rng.uniform(0, 1, (height, width, 4)).astype(np.float32)]
    while min(levels[-1].shape[:2]) >= 4:
        levels.append(cv2.pyrDown(levels[-1]))
    return levels


def _frame(levels):
    """A picture frame whose millimetres are texels: u = x - 0.5, v = -y - 0.5."""
    h, w = levels[0].shape[:2]
    return np.array([0.0, 0.0, w, h, w, h])


def _over(levels, u, v, level=None, grid=None, opacity=1.0, is_hidden=False, rgb=None,
          clear=None, hidden=None):
    """Lay one layer with the compiled kernel at texels (u, v): the rays' colours, the light
    left clear, the hidden weight and the mip levels. ``level`` given: the rays' levels;
    else ``grid`` (rows, columns): the rays are a grid and the kernel finds the levels."""
    n = len(u)
    rgb = np.zeros((n, 3), np.float32) if rgb is None else rgb
    clear = np.ones(n, np.float32) if clear is None else clear
    hidden = np.zeros(n, np.float32) if hidden is None else hidden
    x = u.astype(float) + 0.5
    y = -(v.astype(float) + 0.5)
    if level is None:
        ids, levels_out, (rows, cols) = np.zeros(0, np.int64), np.empty(n, np.float32), grid
    else:
        ids, levels_out, rows, cols = np.arange(n), level, 1, n
    layer_over(x, y, np.ones(n), _frame(levels), rows, cols, ids, levels_out,
               *pack_pyramid(levels), np.float32(opacity), is_hidden, rgb, clear, hidden)
    return rgb, clear, hidden, levels_out


def _compiled(levels, u, v, level):
    """The compiled sampler's RGBA: one layer laid over nothing (colour, 1 - light left)."""
    rgb, clear, _, _ = _over(levels, u, v, level)
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


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**31), pupil=st.integers(1, 3), rows=st.integers(1, 12),
       cols=st.integers(1, 12), spread=st.floats(0.1, 30.0))
def test_grid_mip_levels_and_colours_equal_the_reference(seed, pupil, rows, cols, spread):
    # The kernel's levels from each sample's neighbours must be those of footprint_levels
    # (numpy), and its colours those of the OpenCV sampler at those levels.
    rng = np.random.default_rng(seed)
    levels = _pyramid(rng, 40, 40)
    n = pupil * rows * cols
    u = (rng.uniform(0, 40, n) * rng.uniform(0.5, 1.0) + np.arange(n) % cols * spread
         ).astype(np.float32)
    v = (rng.uniform(0, 40, n) + np.arange(n) // cols % rows * spread).astype(np.float32)
    u[rng.random(n) < 0.15] = np.nan  # rays that missed the plane
    v[np.isnan(u)] = np.nan
    rgb, clear, _, got = _over(levels, u, v, grid=(rows, cols))
    expected = footprint_levels(u, v, (pupil, rows, cols))
    np.testing.assert_allclose(got, expected, rtol=1e-6, atol=1e-6)
    np.testing.assert_allclose(np.concatenate([rgb, 1 - clear[:, None]], axis=1),
                               sample_layer(levels, u, v, expected), rtol=0, atol=2e-6)


def test_mip_level_by_definition():
    # Williams (SIGGRAPH 1983): the level is log2 of the texels one sample spans; a
    # magnified picture (samples under a texel apart) is read at level 0. Samples 4 texels
    # apart along rows and 0.5 along columns span 4 texels: level 2.
    rows, cols = 5, 6
    r, c = np.divmod(np.arange(rows * cols), cols)
    texture = [np.ones((64, 64, 4), np.float32)]
    _, _, _, level = _over(texture, (4.0 * c).astype(np.float32),
                           (0.5 * r).astype(np.float32), grid=(rows, cols))
    np.testing.assert_allclose(level, 2.0)
    _, _, _, level = _over(texture, (0.5 * c).astype(np.float32),
                           (0.25 * r).astype(np.float32), grid=(rows, cols))
    np.testing.assert_allclose(level, 0.0)


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
        _over([texture], u, v, np.zeros(n, np.float32), is_hidden=is_hidden, rgb=rgb,
              clear=clear, hidden=hidden)
    np.testing.assert_allclose(rgb[1], [0.2 + 0.75 * 0.5, 0.1 + 0.75 * 0.5, 0.75 * 0.5],
                               rtol=1e-6)
    assert clear[1] == pytest.approx(0.75 * 0.5) and hidden[1] == pytest.approx(0.75 * 0.5)
    assert rgb[0].tolist() == [0, 0, 0] and clear[0] == 1 and hidden[0] == 0


def _subset(rays, ids):
    from cloakview.optics.trace import Rays
    return Rays(*(getattr(rays, name)[ids] for name in ("x", "y", "z", "dx", "dy", "dz",
                                                          "wavelength_nm", "throughput")))


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
        ids = np.flatnonzero(ray_map.result.entered)
        sub = map_rays(scene, _subset(rays, ids), SETUPS[setup])
        out = {}
        for path in ("numpy", "compiled"):
            monkeypatch.setenv("CLOAKVIEW_TRACER", path)
            rgb, hidden, levels = composite.composite_rays(scene, ray_map, pyramids, shape)
            # A subset of the grid reads the levels of the whole grid.
            sub_rgb, _, _ = composite.composite_rays(scene, sub, pyramids, shape, levels, ids)
            out[path] = rgb, hidden, *levels.values(), sub_rgb
        for reference, compiled in zip(out["numpy"], out["compiled"], strict=True):
            np.testing.assert_allclose(compiled, reference, rtol=0, atol=2e-6)
        np.testing.assert_allclose(out["compiled"][-1], out["compiled"][0][ids], atol=1e-6)
    assert out["numpy"][1].max() > 0.5  # without lenses the ring is in view


@pytest.mark.parametrize("path", ["numpy", "compiled"])
def test_wavelength_mix_is_the_weighted_sum(path, monkeypatch):
    # Three wavelengths with channel weights summing to one per channel (common
    # practice for a spectral-to-RGB mix): rays that met no glass keep the design
    # colour at every wavelength, so the mix must equal sum_k w_k * colour_k with
    # colour_k = design colour outside ``ids``.
    from cloakview.render.frame.composite import mix_wavelength
    monkeypatch.setenv("CLOAKVIEW_TRACER", path)
    rng = np.random.default_rng(3)
    n = 500
    weights = np.array([[0.0, 0.0, 1.0], [0.0, 1.0, 0.0], [1.0, 0.0, 0.0]])
    weights[:, 1] = [0.2, 0.5, 0.3]
    base = rng.random((n, 3)).astype(np.float32)
    ids = np.flatnonzero(rng.random(n) < 0.4)
    colours = [base]
    mixed = base.copy()
    for k in (1, 2):
        rgb = rng.random((len(ids), 3)).astype(np.float32)
        full = base.copy()
        full[ids] = rgb
        colours.append(full)
        mix_wavelength(mixed, ids, rgb, base, weights[k])
    assert np.allclose(weights.sum(axis=0), 1.0)
    expected = sum(weights[k] * colours[k] for k in range(3))
    np.testing.assert_allclose(mixed, expected, rtol=0, atol=1e-6)


def test_compiled_mix_and_coverage_equal_the_reference(tmp_path, monkeypatch):
    from cloakview.render.frame import composite
    from cloakview.render.frame.camera import camera_rays
    from cloakview.render.frame.mapper import SETUPS, map_rays
    from cloakview.render.scene.loader import load_scene
    from scenes import RING, write_scene

    scene = load_scene(write_scene(tmp_path, layers=RING, width=64, height=48))
    rays, grid = camera_rays(scene.viewers[0], scene.placement, 2, 587.56, (0, 96))
    shape = (grid.pupil, grid.rows, grid.columns)
    ray_map = map_rays(scene, rays, SETUPS["cloaked"])
    hidden = np.random.default_rng(1).random(len(rays)).astype(np.float32)
    ids = np.flatnonzero(ray_map.result.entered)
    rgb = np.random.default_rng(2).random((len(ids), 3)).astype(np.float32)
    base = np.random.default_rng(4).random((len(rays), 3)).astype(np.float32)
    out = {}
    for path in ("numpy", "compiled"):
        monkeypatch.setenv("CLOAKVIEW_TRACER", path)
        mixed = base.copy()
        composite.mix_wavelength(mixed, ids, rgb, base, np.array([0.5, 0.25, 0.125]))
        out[path] = mixed, composite.resolve_coverage(hidden, ray_map, shape, 2)
    np.testing.assert_array_equal(out["compiled"][0], out["numpy"][0])
    np.testing.assert_array_equal(out["compiled"][1], out["numpy"][1])
    # Coverage by definition: a pixel's share of entered rays is the mean over its 2x2.
    entered = ray_map.result.entered.reshape(grid.rows // 2, 2, grid.columns // 2, 2)
    np.testing.assert_allclose(out["numpy"][1][..., 1], entered.mean(axis=(1, 3)))
    assert 0 < out["numpy"][1][..., 2].max() <= 1
