"""The difference map and the vanish view against their definitions."""

import numpy as np
from cloakview.render.frame.overlays import (
    BLOCKED_RGB,
    REPLACED_RGB,
    SHOWING_RGB,
    difference_image,
    vanish_image,
)
from matplotlib import colormaps


def test_difference_map_is_inferno_of_the_largest_channel_difference():
    # Inside the viewing hole: the inferno colour map (N. Smith and S. van der Walt, the
    # matplotlib colour maps of 2015) of the largest per-channel difference; outside it,
    # grey from the cloaked view's channel mean. OpenCV's table of the map rounds to
    # 8 bits, so allow 2 levels.
    rng = np.random.default_rng(5)
    h, w = 40, 60
    cloaked = rng.random((h, w, 3), dtype=np.float32)
    reference = rng.random((h, w, 3), dtype=np.float32)
    hole = np.zeros((h, w), bool)
    hole[10:30, 15:45] = True
    image = difference_image(cloaked, reference, hole)[:h]  # below: the legend strip
    diff = np.abs(cloaked - reference).max(axis=-1)
    expected = colormaps["inferno"](np.round(diff * 255).astype(np.uint8))[..., :3] * 255
    assert np.abs(image[hole].astype(float) - expected[hole]).max() <= 2
    grey = np.round(255 * (0.15 + 0.35 * cloaked.mean(axis=-1)))
    outside = image[~hole].astype(float)
    assert np.abs(outside - grey[~hole][:, None]).max() <= 0.5


def test_vanish_view_blends_each_class_by_its_share():
    # Linear blending (common practice): inside the object's place, keep k of the
    # softened view and 1 - k of the class colour (replaced 0.45, blocked 0.35, showing
    # 0.3); outside every mask, the softened view 0.2 + 0.6 x alone.
    rng = np.random.default_rng(6)
    h, w = 48, 64
    view = rng.random((h, w, 3), dtype=np.float32)
    naked = np.zeros((h, w), np.float32)
    naked[10:30, 20:50] = 1.0
    cloaked_object = np.zeros((h, w), np.float32)
    cloaked_object[12:16, 22:30] = 1.0
    replaced = np.zeros((h, w), np.float32)
    replaced[10:30, 35:50] = 1.0
    image = vanish_image(view, cloaked_object, replaced, naked)[:h].astype(float)
    soft = 0.2 + 0.6 * view.astype(float)
    for (r, c), colour, keep in (((20, 40), REPLACED_RGB, 0.45), ((25, 25), BLOCKED_RGB, 0.35),
                                 ((13, 25), SHOWING_RGB, 0.3)):
        expected = 255 * (keep * soft[r, c] + (1 - keep) * np.array(colour))
        assert np.abs(image[r, c] - expected).max() <= 0.6
    far = image[40:, :10]  # away from the outline drawn round the place
    assert np.abs(far - 255 * soft[40:, :10]).max() <= 0.6
