"""How well the effect works, in numbers a planner can compare, and the verdict.

Where the object was: over the object's *place* (the pixels it covers when the lenses
are taken out, each weighted by the object's coverage there), the cloaked view shows one
of three things, and the three shares add up to 1:

- ``replaced_fraction``: background seen through all four lenses (the illusion works);
- ``blocked_fraction``: the tube, a lens mount or the dark interior (the object is gone,
  but a dark patch or ring stands where it was);
- ``showing_fraction``: the object itself.

``hidden_fraction`` = replaced + blocked = 1 - showing. ``object_seen_ratio`` is the
object's coverage anywhere in the cloaked view over its coverage without lenses (above
1: magnified into view; it catches an object that the lenses move off its place).

The background, over the pixels whose rays pass through the whole device:

- background SSIM: structural similarity [1] of the cloaked and reference views;
- background shift: how far each ray lands on the nearest background plane from where
  the same eye ray lands with no device, as an angle at the eye [arcmin];
- transmittance: mean power fraction carried by through-device rays (Fresnel losses);
- colour fringe: 95th percentile of the angle at the eye between the landing points of
  the shortest and longest wavelengths [arcmin].

Normal visual acuity resolves about 1 arcminute (the Snellen 20/20 criterion, common
practice); the verdict's thresholds below are our own choice and are stated wherever a
verdict is shown.

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
#: Verdict thresholds (our own choice, stated in the README and every verdict's definition).
WORKS_HIDDEN = 0.90     # at least this share of the object's place no longer shows it
WORKS_REPLACED = 0.90   # ... and at least this share shows background through the lenses
WORKS_SHIFT_ARCMIN = 2.0
PARTLY_HIDDEN = 0.5
FRINGE_VISIBLE_ARCMIN = 2.0  # colour fringes named in the verdict above this (p95)
#: What *works* means, in words, for every output that uses the verdict.
WORKS_DEFINITION = (
    f"works: at least {WORKS_REPLACED:.0%} of the object's place (as seen without the "
    f"lenses) shows background through the lenses, at most {1 - WORKS_HIDDEN:.0%} of the "
    f"object is seen anywhere, and the median background shift is at most "
    f"{WORKS_SHIFT_ARCMIN:g} arcmin; colour fringes above {FRINGE_VISIBLE_ARCMIN:g} arcmin "
    "(95th percentile) are named in the verdict (thresholds: our own choice)"
).replace("%", " %")
#: Verdict classes, best first: the first word of every verdict.
CLASSES = ("works", "partly", "hidden", "breaks", "no view")
#: Fewest pixels of through-view for the SSIM score to mean anything.
MIN_THROUGH_PIXELS = 25
#: Smallest through-window that counts as a view of the background: a disc of this
#: radius [arcmin], ten times what normal vision resolves across (our own choice). An
#: angle, not a pixel count, so that a small sweep render and a large one agree.
MIN_WINDOW_ARCMIN = 5.0


def place_split(naked_object: np.ndarray, cloaked_object: np.ndarray,
                cloaked_replaced: np.ndarray) -> dict | None:
    """What the cloaked view shows over the object's place: the three shares.

    Parameters
    ----------
    naked_object : ndarray (H, W)
        Object coverage per pixel with the lenses taken out (0 to 1): the weights.
    cloaked_object : ndarray (H, W)
        Object coverage per pixel through the lenses.
    cloaked_replaced : ndarray (H, W)
        Share of each pixel's rays that pass the whole device and are not covered by
        the object: background seen through the lenses.

    Returns
    -------
    dict or None
        ``replaced_fraction``, ``blocked_fraction``, ``showing_fraction``,
        ``hidden_fraction`` and ``object_seen_ratio``; None when less than one pixel's
        worth of object is in view without lenses (nothing to hide).
    """
    weight = naked_object.astype(np.float64)
    total = float(weight.sum())
    if total < 1.0:
        return None
    showing = float((weight * cloaked_object).sum()) / total
    replaced = float((weight * cloaked_replaced).sum()) / total
    showing, replaced = min(max(showing, 0.0), 1.0), min(max(replaced, 0.0), 1.0)
    blocked = max(0.0, 1.0 - showing - replaced)
    return {"replaced_fraction": replaced, "blocked_fraction": blocked,
            "showing_fraction": showing, "hidden_fraction": replaced + blocked,
            "object_seen_ratio": float(np.sum(cloaked_object, dtype=np.float64)) / total}


def background_ssim(cloaked_srgb: np.ndarray, reference_srgb: np.ndarray,
                    through_mask: np.ndarray, encode=None):
    """Mean SSIM [1] over ``through_mask`` pixels (None when the through-view is tiny).

    Pixels outside the mask are copied from the reference first, so the housing
    around the through-view does not enter the score. Only a crop round the mask is
    scored: its margin of half the 7-pixel window keeps every masked pixel's window
    inside it, so the value is the one the whole picture would give. ``encode``, if
    given, turns the two images into the values to score (e.g. linear light into sRGB),
    applied to the crop only.
    """
    if through_mask.sum() < MIN_THROUGH_PIXELS:
        return None
    h, w = through_mask.shape
    size = min(7, *[s - (1 - s % 2) for s in (h, w)])
    margin = size // 2
    rows, cols = np.nonzero(through_mask)
    r0, r1 = max(rows.min() - margin, 0), min(rows.max() + margin + 1, h)
    c0, c1 = max(cols.min() - margin, 0), min(cols.max() + margin + 1, w)
    if r1 - r0 < size or c1 - c0 < size:  # too small a crop: score the whole picture
        r0, r1, c0, c1 = 0, h, 0, w
    mask = through_mask[r0:r1, c0:c1]
    reference, cloaked = reference_srgb[r0:r1, c0:c1], cloaked_srgb[r0:r1, c0:c1]
    if encode is not None:
        reference, cloaked = encode(reference), encode(cloaked)
    test = np.where(mask[..., None], cloaked, reference)
    _, ssim_map = structural_similarity(reference, test, channel_axis=-1, data_range=1.0,
                                        full=True, win_size=size)
    return float(ssim_map.mean(axis=-1)[mask].mean())


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


def percent(value: float | None) -> str:
    """A share as a whole percentage with a space before the sign (``0.46`` -> ``46 %``).

    None (nothing measured) gives ``-``.
    """
    return "-" if value is None else f"{value:.0%}".replace("%", " %")


def sees_background(metrics: dict) -> bool:
    """Whether the through-window is at least :data:`MIN_WINDOW_ARCMIN` in radius."""
    return metrics["window_deg"] * 60.0 >= MIN_WINDOW_ARCMIN


def verdict(metrics: dict) -> str:
    """One word (one of :data:`CLASSES`) and a plain reason, from the thresholds above."""
    through = sees_background(metrics)
    if metrics["hidden_fraction"] is None:
        view = "" if through else "; no background is seen through the lenses from here either"
        return f"no view: the object is out of sight even without the lenses{view}"
    seen = max(metrics["showing_fraction"], min(metrics["object_seen_ratio"], 1.0))
    dark = "" if through else "; no background is seen through the lenses from here"
    if seen > 1.0 - PARTLY_HIDDEN:
        return f"breaks: the object shows ({percent(seen)} of it in view){dark}"
    if seen > 1.0 - WORKS_HIDDEN:
        return f"partly: parts of the object show ({percent(seen)} of it in view){dark}"
    if not through:
        return ("hidden, but dark housing shows where it was: no background is seen "
                "through the lenses from here")
    if metrics["replaced_fraction"] < WORKS_REPLACED:
        return ("hidden, but a dark ring shows where it was "
                f"({percent(metrics['blocked_fraction'])} of its place is tube or lens "
                f"mount; background fills {percent(metrics['replaced_fraction'])})")
    shift = metrics["background_shift_arcmin"]
    if shift is None or shift["median"] > WORKS_SHIFT_ARCMIN:
        amount = "" if shift is None else f" (median {shift['median']:.1f} arcmin)"
        return ("partly: object replaced by background, but the background is visibly "
                f"displaced{amount}")
    fringe = metrics["color_fringe_arcmin"]
    if fringe is not None and fringe > FRINGE_VISIBLE_ARCMIN:
        return ("works, with visible colour fringes: object replaced by background in "
                f"place; blue and red land {fringe:.1f} arcmin apart (95th percentile)")
    return "works: object replaced by background, background in place"


def verdict_class(text: str) -> str:
    """The class of a verdict: its first word, one of :data:`CLASSES`."""
    for cls in CLASSES:
        if text.startswith(cls):
            return cls
    raise ValueError(f"not a verdict: {text!r}")
