"""The compiled mip sampler against the OpenCV reference and the definition of bilinear."""

import cv2
import numpy as np
import pytest
from cloakview.render.frame.composite import sample_layer
from cloakview.render.frame.sampler_kernel import mip_sample, pack_pyramid
from hypothesis import given, settings
from hypothesis import strategies as st


def _pyramid(rng, height, width):
    levels = [rng.uniform(0, 1, (height, width, 4)).astype(np.float32)]
    while min(levels[-1].shape[:2]) >= 4:
        levels.append(cv2.pyrDown(levels[-1]))
    return levels


def _compiled(levels, u, v, level):
    out = np.empty((len(u), 4), np.float32)
    mip_sample(*pack_pyramid(levels), u, v, level, out)
    return out


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
