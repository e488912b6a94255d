"""Charts for people: sight-line maps, the cloaked-zone drawing, the Pareto chart, histograms.

Each function takes the numbers an analysis produced and returns an 8-bit RGB picture;
none of them computes a result of its own. Colours are our own palette.
"""

from __future__ import annotations

import cv2
import numpy as np
from cloakview.render.frame.metrics import CLASSES
from cloakview.render.scene.model import Scene, glass_extent
from cloakview.render.sweeps.sightlines import EYE_HEIGHTS_MM
from cloakview.render.sweeps.zone import RADIAL_STEP_MM, Ring, ZoneMap

#: Cell colours (sRGB, our own palette): green, amber, violet, red, grey.
CLASS_RGB = {"works": (46, 160, 90), "partly": (235, 170, 40), "hidden": (130, 80, 200),
             "breaks": (205, 60, 50), "no view": (150, 150, 150)}


def _text(image, text, org, scale=0.45, colour=(30, 30, 30), thickness=1):
    cv2.putText(image, text, org, cv2.FONT_HERSHEY_SIMPLEX, scale, colour, thickness,
                cv2.LINE_AA)


def _cells(image, classes: np.ndarray, centre_px, cell) -> None:
    """Fill one rectangle per sweep point with its class colour; outline where it works.

    ``centre_px(row, col)`` gives a cell's centre in pixels.
    """
    rows, cols = classes.shape
    for (r, c), cls in np.ndenumerate(classes):
        x, y = centre_px(r, c)
        cv2.rectangle(image, (int(x - cell[0] / 2), int(y - cell[1] / 2)),
                      (int(x + cell[0] / 2), int(y + cell[1] / 2)), CLASS_RGB[cls], -1)
    works = (classes == "works").astype(np.uint8) * 255
    up = 8
    mask = cv2.resize(works, None, fx=up, fy=up, interpolation=cv2.INTER_NEAREST)
    contours, _ = cv2.findContours(mask, cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_SIMPLE)
    x00, y00 = centre_px(0, 0)
    x11, y11 = centre_px(min(1, rows - 1), min(1, cols - 1))
    step_x = (x11 - x00) if cols > 1 else cell[0]
    step_y = (y11 - y00) if rows > 1 else cell[1]
    for contour in contours:
        pts = contour[:, 0, :].astype(float) / up - 0.5  # cell-index units, edges at +-0.5
        px = x00 + pts[:, 0] * step_x
        py = y00 + pts[:, 1] * step_y
        thick = 2 if min(abs(step_x), abs(step_y)) >= 14 else 1
        cv2.polylines(image, [np.stack([px, py], -1).astype(np.int32)], True, (20, 20, 20),
                      thick, cv2.LINE_AA)


def _legend(image, y, note):
    x = 12
    for cls in CLASSES:
        cv2.rectangle(image, (x, y), (x + 14, y + 14), CLASS_RGB[cls], -1)
        _text(image, cls, (x + 20, y + 12))
        x += 110
    _text(image, note, (12, y + 34), 0.4)


def floor_plan_image(scene: Scene, rows: list[dict], xs, ds, height: float, title: str):
    """Plan view: the device at the top, a cell per sweep point in front of it.

    Distances are drawn to scale; the sideways scale is stretched to fit the grid into
    the picture, and the drawing says by how much.
    """
    width_px, grid_w = 640, 520
    step_x = xs[1] - xs[0] if len(xs) > 1 else 20.0
    step_d = ds[1] - ds[0] if len(ds) > 1 else 100.0
    span_x = max(xs) - min(xs) + step_x
    device_len = scene.housing.tube_end_mm - scene.housing.panel_z_mm
    depth = max(ds) + step_d
    sv = 640.0 / (device_len + depth)
    sh = grid_w / span_x
    top = 70 + int(device_len * sv)
    image = np.full((top + int(depth * sv) + 110, width_px, 3), 250, np.uint8)
    cx = width_px // 2 + int((max(xs) + min(xs)) / -2 * sh)

    def to_px(x, d):
        return cx + x * sh, top + d * sv

    pw = min(scene.housing.panel_half_width_mm * sh, width_px)
    tube = scene.housing.tube_radius_mm * sh
    cv2.rectangle(image, (int(cx - tube), 70), (int(cx + tube), top), (90, 90, 100), -1)
    for placed in scene.system.lenses:
        z = top - (placed.center_z_mm - scene.housing.panel_z_mm) * sv
        half = placed.lens.diameter_mm / 2 * sh
        cv2.line(image, (int(cx - half), int(z)), (int(cx + half), int(z)), (120, 200, 255), 3)
    cv2.line(image, (int(cx - pw), top), (int(cx + pw), top), (40, 40, 50), 4)
    _text(image, "device (tube, lenses in blue, front panel)", (12, 64), 0.4)
    classes = np.array([[r["class"] for r in rows if r["d"] == d] for d in ds])
    _cells(image, classes, lambda r, c: to_px(xs[c], ds[r]), (sh * step_x, sv * step_d))
    for d in ds[:: max(1, len(ds) // 8)]:
        _text(image, f"{d / 1000:.2f} m", (4, int(to_px(0, d)[1]) + 4), 0.38)
    y_ticks = top + int(depth * sv) + 16
    for x in xs[:: max(1, len(xs) // 6)]:
        px = int(to_px(x, 0)[0])
        cv2.line(image, (px, y_ticks - 10), (px, y_ticks - 4), (0, 0, 0), 1)
        _text(image, f"{x:+.0f}", (px - 14, y_ticks + 8), 0.35)
    _text(image, "sideways offset from the axis [mm]", (width_px // 2 - 110, y_ticks + 26),
          0.4)
    _text(image, title, (12, 22), 0.55)
    stretch = sh / sv
    note = f"; sideways scale stretched {stretch:.0f}x" if stretch > 1.5 else ""
    _text(image, f"eye height {height:.0f} mm; distance from the front panel to scale{note}",
          (12, 44), 0.42)
    _legend(image, image.shape[0] - 50, "outline: where it works (object's place shows "
            "background; hidden: a dark patch replaces it)")
    return image


def elevation_image(scene: Scene, rows: list[dict], hs, ds, title: str):
    """Side view on the axis line: eye height (up) against distance from the panel."""
    width_px = 640
    span_d = max(ds) + (ds[1] - ds[0] if len(ds) > 1 else 100)
    scale = (width_px - 110) / span_d
    stretch = 2.0  # heights drawn at twice the scale of distances, for legibility
    h_lo, h_hi = min(hs) - 50, max(hs) + 50
    height_px = int((h_hi - h_lo) * scale * stretch) + 140
    image = np.full((height_px, width_px, 3), 250, np.uint8)
    x_panel = width_px - 60

    def to_px(d, h):
        return x_panel - d * scale, 70 + (h_hi - h) * scale * stretch

    classes = np.array([[r["class"] for r in rows if r["h"] == h] for h in hs])
    cell = (scale * (ds[1] - ds[0] if len(ds) > 1 else 50),
            scale * stretch * (hs[1] - hs[0] if len(hs) > 1 else 50))
    _cells(image, classes, lambda r, c: to_px(ds[c], hs[r]), cell)
    axis_y = int(to_px(0, scene.placement.axis_height_mm)[1])
    cv2.line(image, (0, axis_y), (width_px, axis_y), (60, 60, 200), 1, cv2.LINE_AA)
    _text(image, "axis", (x_panel + 18, axis_y - 4), 0.4, (60, 60, 200))
    cv2.line(image, (x_panel + 8, 60), (x_panel + 8, height_px - 70), (40, 40, 50), 4)
    _text(image, "panel", (x_panel + 14, 64), 0.38)
    for name, h in EYE_HEIGHTS_MM.items():
        if h_lo <= h <= h_hi:
            y = int(to_px(0, h)[1])
            cv2.line(image, (x_panel + 2, y), (x_panel + 14, y), (0, 0, 0), 2)
            _text(image, name, (x_panel + 18, y + 4), 0.35)
    for d in ds[:: max(1, len(ds) // 6)]:
        x, _ = to_px(d, h_lo)
        _text(image, f"{d / 1000:.1f} m", (int(x) - 14, height_px - 56), 0.38)
    for h in hs[:: max(1, len(hs) // 6)]:
        _, y = to_px(0, h)
        _text(image, f"{h:.0f}", (4, int(y) + 4), 0.38)
    _text(image, title, (12, 22), 0.55)
    _text(image, "eye height [mm] against distance from the front panel, on the axis line "
          "(heights stretched 2x)", (12, 44), 0.42)
    _legend(image, height_px - 46, "hidden: a dark patch replaces the object; no view: the "
            "object is out of sight even without the lenses")
    return image




def zone_image(zone: ZoneMap, scene: Scene, rings: list[Ring], title: str) -> np.ndarray:
    """Side elevation: tube, lenses, ray fans, hidden zone shaded, largest rings marked."""
    width, margin = 960, 40
    z0, z1 = scene.housing.panel_z_mm, scene.housing.tube_end_mm
    sz = (width - 2 * margin) / (z1 - z0)
    radius = scene.housing.tube_radius_mm
    sr = 150.0 / radius
    mid = 90 + 150
    image = np.full((mid + 150 + 110, width, 3), 250, np.uint8)

    def px(z, r):
        return int(margin + (z - z0) * sz), int(mid - r * sr)

    hidden = zone.hidden
    for i, zz in enumerate(zone.z_mm):
        for sign in (1, -1):
            col = hidden[i]
            if not col.any():
                continue
            x0 = px(zz - zone.axial_step_mm / 2, 0)[0]
            x1 = max(px(zz + zone.axial_step_mm / 2, 0)[0], x0 + 1)
            ys = np.flatnonzero(col)
            for start, stop in _runs(ys):
                ya = px(0, sign * zone.r_mm[start] - sign * RADIAL_STEP_MM / 2)[1]
                yb = px(0, sign * zone.r_mm[stop] + sign * RADIAL_STEP_MM / 2)[1]
                cv2.rectangle(image, (x0, min(ya, yb)), (x1, max(ya, yb)), (150, 215, 205), -1)
    overlay = image.copy()
    for fan in zone.fans:
        for ray in fan:
            pts = [px(zz, rr) for zz, rr in zip(zone.z_mm, ray, strict=True) if rr == rr]
            if len(pts) > 1:
                cv2.polylines(overlay, [np.array(pts, np.int32)], False, (230, 120, 40), 1,
                              cv2.LINE_AA)
    image = cv2.addWeighted(overlay, 0.55, image, 0.45, 0)
    for placed in scene.system.lenses:
        lo, hi = glass_extent(placed)
        half = placed.lens.diameter_mm / 2
        cv2.rectangle(image, px(lo, half), px(max(hi, lo + 1), -half), (110, 170, 230), -1)
        cv2.rectangle(image, px(lo, half), px(max(hi, lo + 1), -half), (40, 80, 140), 1)
        cv2.putText(image, placed.label.split()[0], (px(lo, 0)[0] - 8, mid - 160),
                    cv2.FONT_HERSHEY_SIMPLEX, 0.4, (40, 40, 40), 1, cv2.LINE_AA)
    for sign in (1, -1):
        cv2.line(image, px(z0, sign * radius), px(z1, sign * radius), (60, 60, 60), 2)
    cv2.line(image, px(z0, 0), px(z1, 0), (90, 90, 200), 1, cv2.LINE_AA)
    for ring in rings:
        for sign in (1, -1):
            cv2.rectangle(image, px(ring.z_start_mm, sign * ring.inner_mm),
                          px(ring.z_end_mm, sign * ring.outer_mm), (20, 110, 100), 2)
    bar = 100.0 * sz
    cv2.line(image, (width - margin - int(bar), image.shape[0] - 20),
             (width - margin, image.shape[0] - 20), (0, 0, 0), 2)
    cv2.putText(image, "100 mm", (width - margin - int(bar), image.shape[0] - 26),
                cv2.FONT_HERSHEY_SIMPLEX, 0.4, (0, 0, 0), 1, cv2.LINE_AA)
    for row, text in enumerate((
            title,
            f"side view, axial scale to scale, radial scale stretched {sr / sz:.0f}x; "
            "teal: hidden from these eyes; orange: rays that reach the eye",
            "boxes: largest hidden ring in each gap (see zone.json)")):
        cv2.putText(image, text, (12, 22 + 20 * row), cv2.FONT_HERSHEY_SIMPLEX,
                    0.55 if row == 0 else 0.42, (30, 30, 30), 1, cv2.LINE_AA)
    y = mid + 175
    for ring in rings:
        cv2.putText(image, f"{ring.gap}: ring {ring.inner_mm:.1f}-{ring.outer_mm:.1f} mm from "
                    f"the axis over {ring.z_start_mm:.0f}-{ring.z_end_mm:.0f} mm "
                    f"(object up to {ring.height_mm:.0f} x {ring.length_mm:.0f} mm)",
                    (12, y), cv2.FONT_HERSHEY_SIMPLEX, 0.42, (30, 30, 30), 1, cv2.LINE_AA)
        y += 18
    return image


def _runs(indices: np.ndarray):
    """Consecutive runs (start, stop inclusive) in sorted integer indices."""
    if indices.size == 0:
        return []
    breaks = np.flatnonzero(np.diff(indices) > 1)
    starts = np.concatenate([[indices[0]], indices[breaks + 1]])
    stops = np.concatenate([indices[breaks], [indices[-1]]])
    return list(zip(starts, stops, strict=True))


def pareto_image(rows: list[dict]) -> np.ndarray:
    """Cost against acuity field for every feasible design; the Pareto front in colour."""
    feasible = [r for r in rows if r["reason"] is None]
    w, h, m = 640, 420, 60
    image = np.full((h, w, 3), 250, np.uint8)
    if not feasible:
        return image
    costs = np.array([r["cost"] for r in feasible])
    fields = np.array([r["acuity_field_deg"] for r in feasible])
    c0, c1 = costs.min() * 0.9, costs.max() * 1.1 + 1e-9
    f1 = fields.max() * 1.15 + 1e-9

    def px(cost, field):
        return int(m + (cost - c0) / (c1 - c0) * (w - 2 * m)), int(h - m - field / f1 *
                                                                    (h - 2 * m))

    cv2.rectangle(image, (m, m), (w - m, h - m), (120, 120, 120), 1)
    for r in feasible:
        colour = (200, 70, 40) if r["pareto"] else (150, 150, 150)
        cv2.circle(image, px(r["cost"], r["acuity_field_deg"]), 6, colour, -1, cv2.LINE_AA)
        if r["pareto"]:
            cv2.putText(image, f"{r['outer']}+{r['inner']}", (px(r["cost"],
                        r["acuity_field_deg"])[0] + 8, px(r["cost"], r["acuity_field_deg"])[1]
                        - 6), cv2.FONT_HERSHEY_SIMPLEX, 0.35, (60, 30, 20), 1, cv2.LINE_AA)
    for text, org in (("design search: lens cost against acuity field", (12, 22)),
                      ("red: on the Pareto front of field, hidden object, cost and mass; "
                       "grey: beaten on all four", (12, 42)),
                      (f"cost {c0:.0f} to {c1:.0f}", (m, h - m + 20)),
                      (f"acuity field 0 to {f1:.2f} deg", (m, m - 8))):
        cv2.putText(image, text, org, cv2.FONT_HERSHEY_SIMPLEX, 0.45, (30, 30, 30), 1,
                    cv2.LINE_AA)
    return image


def histogram_image(rows: list[dict], title: str) -> np.ndarray:
    """Histograms of hidden fraction and background shift over the builds."""
    w, h = 640, 300
    image = np.full((h, w, 3), 250, np.uint8)
    panels = (("hidden fraction", [r["hidden_fraction"] for r in rows], 0.0, 1.0),
              ("median background shift [arcmin]",
               [r["shift_median_arcmin"] for r in rows], 0.0, None))
    for p, (label, values, lo, hi) in enumerate(panels):
        values = np.array([v for v in values if v is not None], float)
        x0 = 20 + p * 310
        cv2.putText(image, label, (x0, 56), cv2.FONT_HERSHEY_SIMPLEX, 0.42, (30, 30, 30), 1,
                    cv2.LINE_AA)
        if values.size == 0:
            continue
        top = hi if hi is not None else max(float(values.max()) * 1.05, 1e-6)
        counts, edges = np.histogram(values, bins=20, range=(lo, top))
        peak = max(int(counts.max()), 1)
        for i, count in enumerate(counts):
            bh = int(180 * count / peak)
            cv2.rectangle(image, (x0 + i * 14, 250 - bh), (x0 + i * 14 + 12, 250),
                          (60, 120, 190), -1)
        cv2.putText(image, f"{lo:g}", (x0, 268), cv2.FONT_HERSHEY_SIMPLEX, 0.38, (0, 0, 0), 1,
                    cv2.LINE_AA)
        cv2.putText(image, f"{top:.2g}", (x0 + 250, 268), cv2.FONT_HERSHEY_SIMPLEX, 0.38,
                    (0, 0, 0), 1, cv2.LINE_AA)
    cv2.putText(image, title, (12, 24), cv2.FONT_HERSHEY_SIMPLEX, 0.5, (30, 30, 30), 1,
                cv2.LINE_AA)
    return image
