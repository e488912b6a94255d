"""How well the effect works, in numbers a planner can compare.

- hidden fraction: 1 - (hidden-object coverage seen through the device) /
  (coverage seen through the same housing with the lenses taken out), summed over
  pixels, weighted by alpha; clipped to [0, 1] (the unclipped ratio is reported too:
  above 1 means the lenses magnify the object into view).
- background SSIM: structural similarity [1] of the cloaked and reference views over
  the pixels whose rays pass through the whole device.
- background shift: how far each through-device ray lands on the nearest background
  plane from where the same eye ray lands with no device, as an angle at the eye in
  arcminutes (1 arcminute is normal visual acuity, common practice).
- transmittance: mean power fraction carried by through-device rays (Fresnel losses).
- colour fringe: 95th percentile of the distance between the landing points of the
  shortest and longest wavelengths, as an angle at the eye [arcmin].

References
----------
.. [1] Z. Wang, A. C. Bovik, H. R. Sheikh, E. P. Simoncelli, "Image quality
   assessment: from error visibility to structural similarity", IEEE Trans.
   Image Processing 13(4), 600-612 (2004).
"""

from __future__ import annotations

import numpy as np
from skimage.metrics import structural_similarity

ARCMIN_PER_RAD = 180.0 * 60.0 / np.pi
#: Verdict thresholds (our own choice, stated in the README).
WORKS_HIDDEN = 0.90
WORKS_SHIFT_ARCMIN = 2.0
PARTLY_HIDDEN = 0.5
#: What *works* means, in words, for every output that uses the verdict.
WORKS_DEFINITION = (f"works: at least {WORKS_HIDDEN:.0%} of the object hidden, a view of the "
                    "background through the lenses, median background shift at most "
                    f"{WORKS_SHIFT_ARCMIN:g} arcmin").replace("%", " %")
#: Fewest pixels of through-view for the background scores to mean anything.
MIN_THROUGH_PIXELS = 25


def hidden_fraction(cloaked_coverage: np.ndarray, naked_coverage: np.ndarray):
    """Return (hidden fraction in [0, 1], seen ratio) or (None, None) if nothing to hide."""
    naked = float(np.sum(naked_coverage, dtype=np.float64))
    if naked < 1.0:  # less than one pixel's worth of object in view without lenses
        return None, None
    ratio = float(np.sum(cloaked_coverage, dtype=np.float64)) / naked
    return float(np.clip(1.0 - ratio, 0.0, 1.0)), ratio


def background_ssim(cloaked_srgb: np.ndarray, reference_srgb: np.ndarray,
                    through_mask: np.ndarray):
    """Mean SSIM [1] over ``through_mask`` pixels (None when the through-view is tiny).

    Pixels outside the mask are copied from the reference first, so the housing
    around the through-view does not enter the score.
    """
    if through_mask.sum() < MIN_THROUGH_PIXELS:
        return None
    test = np.where(through_mask[..., None], cloaked_srgb, reference_srgb)
    size = min(7, *[s - (1 - s % 2) for s in test.shape[:2]])
    _, ssim_map = structural_similarity(reference_srgb, test, channel_axis=-1,
                                        data_range=1.0, full=True, win_size=size)
    return float(ssim_map.mean(axis=-1)[through_mask].mean())


def angular_shift_arcmin(eye_mm, x_a, y_a, x_b, y_b, plane_z_mm: float) -> np.ndarray:
    """Angle at the eye [arcmin] between landing points a and b on a plane at ``plane_z_mm``."""
    eye = np.asarray(eye_mm, float)
    distance = np.sqrt((x_b - eye[0]) ** 2 + (y_b - eye[1]) ** 2 + (plane_z_mm - eye[2]) ** 2)
    return np.hypot(x_a - x_b, y_a - y_b) / distance * ARCMIN_PER_RAD


def percentiles(values: np.ndarray) -> dict | None:
    """Median and 95th percentile, or None for no values."""
    values = values[np.isfinite(values)]
    if values.size == 0:
        return None
    return {"median": float(np.median(values)), "p95": float(np.percentile(values, 95))}


def verdict(metrics: dict) -> str:
    """One word and a reason, from the thresholds above."""
    hidden = metrics["hidden_fraction"]
    shift = metrics["background_shift_arcmin"]
    if metrics["through_pixels"] < MIN_THROUGH_PIXELS:
        return "breaks: no view of the background through the lenses from here"
    if hidden is None:
        return "no object in view: the object is out of sight even without lenses"
    if hidden >= WORKS_HIDDEN and shift is not None and shift["median"] <= WORKS_SHIFT_ARCMIN:
        return "works: object hidden, background in place"
    if hidden >= WORKS_HIDDEN:
        return "partly: object hidden, but the background is visibly displaced"
    if hidden >= PARTLY_HIDDEN:
        return "partly: parts of the object show"
    return "breaks: the object shows"
