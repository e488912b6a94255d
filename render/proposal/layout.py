"""The layout drawing: the exhibit in side view at full size, in millimetres, as SVG.

One SVG user unit is one millimetre: the root's ``width`` and ``height`` are given in mm
and its ``viewBox`` spans the same numbers, so drafting tools import it at true size. The
drawing is the device's vertical section through the axis (x: along the axis from the
first lens's vertex, up: height above the axis): eye point, front panel with its viewing
hole, tube, lenses (their real surface profiles), rail positions, the hidden objects'
rings, and dimensions.
"""

from __future__ import annotations

import html

import numpy as np
from cloakview.optics.lenses import ThickLens, sag
from cloakview.render.scene.model import Scene, opaque_radii_mm

_FONT_MM = 14.0
_LINE_MM = 1.0


def _text(x, y, text, anchor="middle", size=_FONT_MM) -> str:
    return (f'<text x="{x:.1f}" y="{y:.1f}" font-size="{size:g}" text-anchor="{anchor}">'
            f'{html.escape(text)}</text>')


def _dimension(x0, x1, y, label) -> list[str]:
    """A horizontal dimension line with arrowheads and its label above it."""
    return [f'<line x1="{x0:.2f}" y1="{y:.1f}" x2="{x1:.2f}" y2="{y:.1f}" stroke="#000" '
            f'stroke-width="{_LINE_MM}" marker-start="url(#arrow)" marker-end="url(#arrow)"/>',
            _text((x0 + x1) / 2, y - 5, label)]


def layout_svg(summary: dict, scene: Scene, with_eye: bool = True) -> str:
    """The side-view drawing of ``scene``'s exhibit with ``summary``'s numbers, in mm.

    ``with_eye`` includes the first viewer's eye point and its distance to the panel (the
    drawing then spans that distance too).
    """
    housing, lenses = scene.housing, scene.system.lenses
    viewer = scene.viewers[0]
    eye = scene.placement.to_device(np.asarray(viewer.eye_mm, float))
    half_height = max(housing.panel_half_height_mm, housing.tube_radius_mm)
    left = (min(eye[2], housing.panel_z_mm) if with_eye else housing.panel_z_mm) - 80.0
    right = housing.tube_end_mm + 80.0
    top = min(-(half_height + 140.0), -eye[1] - 60.0 if with_eye else 0.0)
    bottom = max(half_height + 200.0, -eye[1] + 60.0 if with_eye else 0.0)
    width, height = right - left, bottom - top
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width:.1f}mm" '
             f'height="{height:.1f}mm" viewBox="{left:.1f} {top:.1f} {width:.1f} {height:.1f}" '
             'font-family="Helvetica, Arial, sans-serif">',
             f'<title>{html.escape(scene.title)}: side view at full size (millimetres)</title>',
             '<defs><marker id="arrow" viewBox="0 0 10 10" refX="5" refY="5" markerWidth="5" '
             'markerHeight="5" orient="auto-start-reverse"><path d="M 0 0 L 10 5 L 0 10 z"/>'
             '</marker></defs>',
             f'<line id="axis" x1="{left:.1f}" y1="0" x2="{right:.1f}" y2="0" stroke="#3355aa" '
             f'stroke-width="{_LINE_MM / 2}" stroke-dasharray="12 6"/>']
    tube_length = housing.tube_end_mm - housing.panel_z_mm
    parts.append(f'<rect id="tube" x="{housing.panel_z_mm:.2f}" y="{-housing.tube_radius_mm:.2f}" '
                 f'width="{tube_length:.2f}" height="{2 * housing.tube_radius_mm:.2f}" '
                 f'fill="none" stroke="#444" stroke-width="{2 * _LINE_MM}"/>')
    hole = housing.hole_radius_mm
    for y0, y1 in ((-housing.panel_half_height_mm, -hole), (hole, housing.panel_half_height_mm)):
        parts.append(f'<rect class="panel" x="{housing.panel_z_mm - 6:.2f}" y="{y0:.2f}" '
                     f'width="6" height="{y1 - y0:.2f}" fill="#5a6170"/>')
    parts.append(_text(housing.panel_z_mm - 10, -housing.panel_half_height_mm - 8,
                       f"front panel, viewing hole {2 * hole:.0f} mm", anchor="end"))
    rail_y = half_height + 40.0
    parts.append(f'<line id="rail" x1="{lenses[0].z_mm - 20:.1f}" y1="{rail_y:.1f}" '
                 f'x2="{lenses[-1].back_z_mm + 20:.1f}" y2="{rail_y:.1f}" stroke="#888" '
                 'stroke-width="6"/>')
    for entry, placed in zip(summary["lenses"], lenses, strict=True):
        lens = placed.lens
        h = lens.diameter_mm / 2
        ys = np.linspace(-h, h, 61)
        if isinstance(lens, ThickLens):
            front, back = placed.z_mm + sag(ys, lens.c1), placed.back_z_mm + sag(ys, lens.c2)
        else:
            front = back = np.full_like(ys, placed.z_mm)
        points = [*zip(front, -ys, strict=True), *zip(back[::-1], -ys[::-1], strict=True)]
        parts.append('<polygon class="lens" points="'
                     + " ".join(f"{z:.2f},{y:.2f}" for z, y in points)
                     + f'" fill="#b9d8f0" stroke="#2a5d8a" stroke-width="{_LINE_MM}"/>')
        rail = entry["rail_mm"]
        parts.append(f'<line x1="{rail:.2f}" y1="{h:.1f}" x2="{rail:.2f}" y2="{rail_y:.1f}" '
                     f'stroke="#555" stroke-width="{_LINE_MM}"/>')
        parts.append(_text(rail, rail_y + 22, f"{entry['label'].split()[0]} rail {rail:.1f}"))
    for layer in scene.layers:
        if layer.role != "hidden":
            continue
        r_in, r_out = opaque_radii_mm(layer)
        for sign in (1, -1):
            y0 = -sign * r_out if sign > 0 else r_in
            parts.append(f'<rect class="hidden-object" x="{layer.z_mm - 2:.2f}" y="{y0:.2f}" '
                         f'width="4" height="{r_out - r_in:.2f}" fill="#b41e5a"/>')
        parts.append(_text(layer.z_mm, -r_out - 8, f"{layer.name}: ring {r_in:.0f}-{r_out:.0f} mm"
                           f" from the axis at {layer.z_mm:.0f} mm"))
    dim = -(half_height + 40.0)
    if with_eye:
        eye_y = -(eye[1])
        parts.append(f'<circle id="eye" cx="{eye[2]:.2f}" cy="{eye_y:.2f}" r="6" fill="#000"/>')
        parts.append(_text(eye[2], eye_y - 14, f"eye of '{viewer.name}'"))
        parts += _dimension(eye[2], housing.panel_z_mm, dim,
                            f"{housing.panel_z_mm - eye[2]:.0f} eye to panel")
    for (a, b), gap in zip(zip(lenses, lenses[1:], strict=False), summary["vertex_gaps_mm"],
                           strict=True):
        parts += _dimension(a.back_z_mm, b.z_mm, dim, f"{gap:.1f}")
    total_y = rail_y + 70.0
    parts += _dimension(lenses[0].z_mm, lenses[-1].back_z_mm, total_y,
                        f"{summary['length_mm']:.1f} first to last lens vertex")
    parts.append(_text(left + 10, bottom - 16, "All dimensions in mm; drawn at full size (1 "
                       "unit = 1 mm). Rail positions are lens centres from the first vertex; "
                       "air gaps between vertices above the tube.", anchor="start", size=12))
    parts.append("</svg>")
    return "\n".join(parts)
