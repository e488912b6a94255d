"""Pictures drawn over a rendered view: the difference map, the vanish view, captions."""

from __future__ import annotations

import cv2
import numpy as np

#: Overlay colours of the vanish view (sRGB, our own palette).
VANISHED_RGB = (0.12, 0.71, 0.66)
SHOWING_RGB = (0.91, 0.33, 0.23)
OUTLINE_RGB = (1.0, 0.86, 0.25)


def difference_image(cloaked_srgb, reference_srgb, inside_hole) -> np.ndarray:
    """Heat map of cloaked against reference where the eye looks into the viewing hole.

    Elsewhere (panel, tube, room) the cloaked view in dim grey, for orientation.
    """
    diff = np.abs(cloaked_srgb - reference_srgb).max(axis=-1)
    heat = cv2.applyColorMap(np.round(np.clip(diff, 0, 1) * 255).astype(np.uint8),
                             cv2.COLORMAP_INFERNO)[..., ::-1]
    grey = np.round(255 * (0.15 + 0.35 * cloaked_srgb.mean(axis=-1))).astype(np.uint8)
    image = np.where(inside_hole[..., None], heat, grey[..., None])
    return with_legend(image, "in the viewing hole: black = unchanged, yellow = fully "
                        "different")


def with_legend(image: np.ndarray, text: str) -> np.ndarray:
    """``image`` with a one-line legend strip below it."""
    h, w = image.shape[:2]
    strip = max(14, h // 18)
    out = np.concatenate([image, np.full((strip, w, 3), 24, np.uint8)], axis=0)
    scale = strip / 30.0
    width = cv2.getTextSize(text, cv2.FONT_HERSHEY_SIMPLEX, scale, 1)[0][0]
    scale *= min(1.0, (w - 8) / width)  # shrink to fit narrow images
    cv2.putText(out, text, (4, h + int(strip * 0.72)), cv2.FONT_HERSHEY_SIMPLEX, scale,
                (235, 235, 235), 1, cv2.LINE_AA)
    return out


def vanish_image(cloaked_srgb, cloaked_cov, naked_cov) -> np.ndarray:
    """The view softened, the object's outline without lenses, vanished and seen parts."""
    base = 0.2 + 0.6 * cloaked_srgb  # the view itself, softened so the overlay reads
    outline_mask = (naked_cov >= 0.5).astype(np.uint8)
    vanished = (naked_cov >= 0.5) & (cloaked_cov < 0.5)
    showing = cloaked_cov >= 0.5
    out = base.copy()
    out[vanished] = 0.45 * out[vanished] + 0.55 * np.array(VANISHED_RGB)
    out[showing] = 0.3 * out[showing] + 0.7 * np.array(SHOWING_RGB)
    image = np.round(np.clip(out, 0, 1) * 255).astype(np.uint8)
    contours, _ = cv2.findContours(outline_mask, cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    colour = tuple(int(c * 255) for c in OUTLINE_RGB)
    cv2.drawContours(image, contours, -1, colour, max(1, image.shape[0] // 240), cv2.LINE_AA)
    return with_legend(image, "outline: object without lenses   teal: vanished   "
                        "red: still seen")


def caption(image: np.ndarray, lines: list[str]) -> np.ndarray:
    """``image`` with a dark strip of text ``lines`` below it, shrunk to fit the width."""
    h, w = image.shape[:2]
    strip = np.full((22 * len(lines) + 8, w, 3), 28, np.uint8)
    for i, text in enumerate(lines):
        scale = 0.45 * min(1.0, (w - 10) / max(1, cv2.getTextSize(
            text, cv2.FONT_HERSHEY_SIMPLEX, 0.45, 1)[0][0]))
        cv2.putText(strip, text, (6, 20 + 22 * i), cv2.FONT_HERSHEY_SIMPLEX, scale,
                    (235, 235, 235), 1, cv2.LINE_AA)
    return np.concatenate([image, strip], axis=0)
