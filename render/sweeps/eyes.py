"""Both eyes: the left and right eye of a visitor, each eye's verdict and one for the pair.

A visitor with both eyes open fuses the two views only where both eyes see the same
thing in the same direction. Both eyes fixate one point, so a pixel of the left image
and the same pixel of the right image look in corresponding directions; the share of
through-window pixels that the two images have in common (intersection over union)
says whether the background seen through the lenses can be fused.

References
----------
.. [1] N. A. Dodgson, "Variation and extrema of human interpupillary distance",
   Proc. SPIE 5291, 36-46 (2004): adult mean about 63 mm, most adults 50-75 mm.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from cloakview.render.frame.metrics import percent
from cloakview.render.frame.overlays import caption, corner_label
from cloakview.render.scene.model import Viewer

DEFAULT_IPD_MM = 63.0  # adult mean, Dodgson (2004) [1]
#: Least overlap (intersection over union) of the two eyes' through-windows for the
#: pair to be fused (our own choice).
MIN_OVERLAP = 0.5


def eye_pair(viewer: Viewer, ipd_mm: float) -> tuple[Viewer, Viewer]:
    """Left and right eyes, ``ipd_mm`` apart along the viewer's horizontal right direction.

    Both eyes fixate the viewer's look-at point, as eyes converge on what they look at.
    """
    eye = np.asarray(viewer.eye_mm, float)
    look = np.asarray(viewer.look_at_mm, float)
    forward = look - eye
    right = np.array([forward[2], 0.0, -forward[0]])
    if np.linalg.norm(right) < 1e-9:
        right = np.array([1.0, 0.0, 0.0])
    right /= np.linalg.norm(right)
    offset = right * ipd_mm / 2
    left = dataclasses.replace(viewer, name=f"{viewer.name}-left", eye_mm=tuple(eye - offset))
    right_eye = dataclasses.replace(viewer, name=f"{viewer.name}-right",
                                    eye_mm=tuple(eye + offset))
    return left, right_eye


def anaglyph(left: np.ndarray, right: np.ndarray) -> np.ndarray:
    """Red-cyan anaglyph: red from the left eye's image, green and blue from the right's."""
    out = right.copy()
    out[..., 0] = left[..., 0]
    return out


def pair_picture(images: list[np.ndarray], verdicts: list[str]) -> np.ndarray:
    """Left and right images side by side, lettered L and R, each captioned with its verdict."""
    sides = [caption(corner_label(image, side), [f"{name} eye: {verdict}"])
             for side, name, image, verdict in zip("LR", ("left", "right"), images, verdicts,
                                                   strict=True)]
    return np.concatenate(sides, axis=1)


def window_overlap(left_through: np.ndarray, right_through: np.ndarray) -> float | None:
    """Intersection over union of the two through-window masks (None if neither has one)."""
    a, b = left_through >= 0.5, right_through >= 0.5
    union = int(np.count_nonzero(a | b))
    return None if union == 0 else int(np.count_nonzero(a & b)) / union


def binocular_verdict(left: dict, right: dict, overlap: float | None) -> str:
    """One verdict for a visitor with both eyes open, from each eye's metrics and the overlap.

    It works only when each eye's own verdict works and the two windows overlap by at
    least :data:`MIN_OVERLAP`; otherwise it says which eye fails, or that the windows
    cannot be fused, and what a visitor must do.
    """
    works = [m["verdict_class"] == "works" for m in (left, right)]
    share = "-" if overlap is None else percent(overlap)
    if all(works) and overlap is not None and overlap >= MIN_OVERLAP:
        return (f"works with both eyes open: each eye sees the object's place filled with "
                f"background, and the two through-windows overlap by {share}")
    if all(works):
        return (f"fails with both eyes open: each eye alone sees the effect, but the two "
                f"through-windows overlap by only {share} (at least {percent(MIN_OVERLAP)} "
                "needed), so the two views do not fuse; visitors must close one eye (an "
                "eye-port for one eye helps)")
    if any(works):
        good, bad = ("left", "right") if works[0] else ("right", "left")
        failing = (right if works[0] else left)["verdict"]
        return (f"works for the {good} eye only: the {bad} eye sees '{failing}'; visitors "
                f"must close the {bad} eye (an eye-port for one eye helps), or the lenses "
                "must be larger")
    return ("fails for both eyes: neither eye sees the effect from here (left: "
            f"{left['verdict_class']}, right: {right['verdict_class']}); move the viewing "
            "point or use larger lenses")
