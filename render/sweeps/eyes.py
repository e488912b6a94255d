"""Both eyes: the left and right eye of a visitor, and whether both see through the lenses.

References
----------
.. [1] N. A. Dodgson, "Variation and extrema of human interpupillary distance",
   Proc. SPIE 5291, 36-46 (2004): adult mean about 63 mm, most adults 50-75 mm.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from cloakview.render.frame.metrics import MIN_THROUGH_PIXELS
from cloakview.render.scene.model import Viewer

DEFAULT_IPD_MM = 63.0  # adult mean, Dodgson (2004) [1]


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


def statement(left_metrics: dict, right_metrics: dict) -> str:
    """Whether both eyes see the background through the lenses, in words."""
    sees = [m["through_pixels"] >= MIN_THROUGH_PIXELS for m in (left_metrics, right_metrics)]
    if all(sees):
        return "Both eyes see the background through the lenses: the effect works with both " \
               "eyes open."
    if any(sees):
        which = "left" if sees[0] else "right"
        return (f"Only the {which} eye sees the background through the lenses: visitors must "
                "close one eye (an eye-port helps), or the lenses must be larger.")
    return ("Neither eye sees the background through the lenses from here: move the viewing "
            "point or use larger lenses.")
