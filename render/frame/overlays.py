"""Pictures drawn over a rendered view: the difference map, the vanish view, captions."""

from __future__ import annotations

import cv2
import numpy as np

#: Overlay colours of the vanish view (sRGB, our own palette).
REPLACED_RGB = (0.12, 0.71, 0.66)
BLOCKED_RGB = (0.52, 0.30, 0.85)
SHOWING_RGB = (0.91, 0.33, 0.23)
OUTLINE_RGB = (1.0, 0.86, 0.25)


def difference_image(cloaked_srgb, reference_srgb, inside_hole) -> np.ndarray:
    """Heat map of cloaked against reference where the eye looks into the viewing hole.

    Elsewhere (panel, tube, room) the cloaked view in dim grey, for orientation.
    """
    d = cv2.absdiff(cloaked_srgb, reference_srgb)
    diff = np.maximum(np.maximum(d[..., 0], d[..., 1]), d[..., 2])
    heat = cv2.cvtColor(cv2.applyColorMap(np.round(np.clip(diff, 0, 1) * 255).astype(np.uint8),
                                          cv2.COLORMAP_INFERNO), cv2.COLOR_BGR2RGB)
    c = cloaked_srgb
    grey = np.round(255 * (0.15 + 0.35 * ((c[..., 0] + c[..., 1] + c[..., 2]) / np.float32(3))))
    image = cv2.cvtColor(grey.astype(np.uint8), cv2.COLOR_GRAY2RGB)
    cv2.copyTo(heat, inside_hole.astype(np.uint8), image)  # the heat map inside the hole
    return with_legend(image, "in the viewing hole: black = unchanged, yellow = fully "
                        "different")


def _fit_scale(text: str, scale: float, width_px: int) -> float:
    """The largest font scale up to ``scale`` at which ``text`` fits in ``width_px``.

    OpenCV's text width is not proportional to the scale at small sizes, so shrink until
    the measured width fits.
    """
    while scale > 0.2 and cv2.getTextSize(text, cv2.FONT_HERSHEY_SIMPLEX, scale,
                                          1)[0][0] > width_px:
        scale *= 0.95
    return scale


def with_legend(image: np.ndarray, text: str) -> np.ndarray:
    """``image`` with a one-line legend strip below it."""
    h, w = image.shape[:2]
    strip = max(14, h // 18)
    out = np.concatenate([image, np.full((strip, w, 3), 24, np.uint8)], axis=0)
    scale = _fit_scale(text, strip / 30.0, w - 8)
    cv2.putText(out, text, (4, h + int(strip * 0.72)), cv2.FONT_HERSHEY_SIMPLEX, scale,
                (235, 235, 235), 1, cv2.LINE_AA)
    return out


def vanish_image(cloaked_srgb, cloaked_object, cloaked_replaced, naked_object) -> np.ndarray:
    """The view softened, the object's outline without lenses, and what took its place.

    Inside the outline: teal where background seen through the lenses replaced the
    object, violet where the tube or a lens mount hides it (a dark patch in the view);
    red wherever the object itself is still seen.
    """
    base = 0.2 + 0.6 * cloaked_srgb  # the view itself, softened so the overlay reads
    place = naked_object >= 0.5
    showing = cloaked_object >= 0.5
    replaced = place & ~showing & (cloaked_replaced >= 0.5)
    blocked = place & ~showing & ~replaced
    out = base.copy()
    rows, cols = np.nonzero((place | showing).any(axis=1))[0], np.nonzero(
        (place | showing).any(axis=0))[0]
    if rows.size:  # every mask lies in this box: blend inside it only
        box = np.s_[rows[0]:rows[-1] + 1, cols[0]:cols[-1] + 1]
        part = out[box]
        for mask, colour, keep in ((replaced, REPLACED_RGB, 0.45),
                                   (blocked, BLOCKED_RGB, 0.35), (showing, SHOWING_RGB, 0.3)):
            inside = mask[box]
            part[inside] = keep * part[inside] + (1.0 - keep) * np.array(colour)
    image = np.round(np.clip(out, 0, 1) * 255).astype(np.uint8)
    contours, _ = cv2.findContours(place.astype(np.uint8), cv2.RETR_EXTERNAL,
                                   cv2.CHAIN_APPROX_NONE)
    colour = tuple(int(c * 255) for c in OUTLINE_RGB)
    cv2.drawContours(image, contours, -1, colour, max(1, image.shape[0] // 240), cv2.LINE_AA)
    return with_legend(image, "outline: object without lenses | in it, teal: background, "
                       "violet: dark housing | red: object seen")


def corner_label(image: np.ndarray, text: str) -> np.ndarray:
    """A copy of ``image`` with ``text`` in large white letters on a dark box, top left."""
    out = image.copy()
    scale = max(0.6, image.shape[0] / 360)
    (w, h), base = cv2.getTextSize(text, cv2.FONT_HERSHEY_SIMPLEX, scale, 2)
    cv2.rectangle(out, (4, 4), (16 + w, 16 + h + base), (28, 28, 28), -1)
    cv2.putText(out, text, (10, 10 + h), cv2.FONT_HERSHEY_SIMPLEX, scale, (255, 255, 255), 2,
                cv2.LINE_AA)
    return out


def with_inset(image: np.ndarray, focus: np.ndarray, deg_per_px: float,
               small: float = 0.25) -> np.ndarray:
    """``image`` with an enlarged inset of ``focus`` (a mask) when it looks small.

    ``focus`` is the through-window (or the viewing hole when no background is seen);
    when it spans less than ``small`` of the frame's height, a square around it is
    enlarged into the top right corner, framed, with a scale bar in degrees at the eye
    (``deg_per_px``: the picture's angular pixel size). Otherwise ``image`` is returned.
    """
    rows, cols = np.nonzero(focus >= 0.5)
    h, w = image.shape[:2]
    if rows.size == 0 or (rows.max() - rows.min() + 1) >= small * h:
        return image
    size = int(max(rows.max() - rows.min(), cols.max() - cols.min()) * 1.6) + 4
    cy, cx = (rows.max() + rows.min()) // 2, (cols.max() + cols.min()) // 2
    y0 = int(np.clip(cy - size // 2, 0, max(h - size, 0)))
    x0 = int(np.clip(cx - size // 2, 0, max(w - size, 0)))
    crop = image[y0:y0 + size, x0:x0 + size]
    side = int(0.55 * min(h, w))
    zoom = side / crop.shape[0]
    inset = cv2.resize(crop, (side, side), interpolation=cv2.INTER_NEAREST)
    out = image.copy()
    x1, y1 = w - side - 6, 6
    out[y1:y1 + side, x1:x1 + side] = inset
    cv2.rectangle(out, (x1 - 1, y1 - 1), (x1 + side, y1 + side), (255, 255, 255), 2)
    span_deg = crop.shape[0] * deg_per_px
    bar_deg = float(next(v for v in (0.05, 0.1, 0.2, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0)
                         if v >= span_deg / 4 or v == 10.0))
    bar = bar_deg / deg_per_px * zoom
    yb, xb = y1 + side - 12, x1 + 10
    cv2.rectangle(out, (x1 + 2, yb - 20), (x1 + 2 + int(bar) + 150, yb + 6), (28, 28, 28), -1)
    cv2.line(out, (xb, yb), (xb + int(bar), yb), (255, 255, 255), 2)
    cv2.putText(out, f"{bar_deg:g} deg at the eye, x{zoom:.1f}", (xb, yb - 6),
                cv2.FONT_HERSHEY_SIMPLEX, 0.4, (255, 255, 255), 1, cv2.LINE_AA)
    return out


def inset_view(image: np.ndarray, render) -> np.ndarray:
    """:func:`with_inset` on a render's through-window (or its viewing hole if none)."""
    focus = render.through if (render.through >= 0.5).any() else render.entered
    return with_inset(image, focus, render.viewer.fov_deg / render.viewer.width_px)


def view_caption(image: np.ndarray, viewer, metrics: dict) -> np.ndarray:
    """``image`` captioned with the viewer, its eye point [mm, room frame] and the verdict."""
    x, y, z = viewer.eye_mm
    return caption(image, [f"{viewer.name}: eye at x {x:+.0f}, height {y:.0f}, z {z:.0f} mm",
                           metrics["verdict"]])


def caption(image: np.ndarray, lines: list[str]) -> np.ndarray:
    """``image`` with a dark strip of text ``lines`` below it, shrunk to fit the width."""
    h, w = image.shape[:2]
    rows = 22 * len(lines) + 8
    rows += (h + rows) % 2  # an even total height, as video encoders want
    strip = np.full((rows, w, 3), 28, np.uint8)
    for i, text in enumerate(lines):
        scale = _fit_scale(text, 0.45, w - 12)
        cv2.putText(strip, text, (6, 20 + 22 * i), cv2.FONT_HERSHEY_SIMPLEX, scale,
                    (235, 235, 235), 1, cv2.LINE_AA)
    return np.concatenate([image, strip], axis=0)
