"""The layout drawing: lenses on their rail, side view, to scale, as SVG."""

from __future__ import annotations

import html

import numpy as np
from cloakview.optics.lenses import ThickLens, sag
from cloakview.render.scene.model import Scene


def layout_svg(summary: dict, scene: Scene) -> str:
    """Side view of the lenses on their rail, to scale, with dimensions (mm)."""
    lenses = scene.system.lenses
    z0, z1 = lenses[0].z_mm, lenses[-1].back_z_mm
    radius = max(p.lens.diameter_mm for p in lenses) / 2
    scale = 900.0 / (z1 - z0 + 120)
    height = 2 * radius * scale + 190

    def x(z):
        return 60 + (z - z0) * scale

    mid = 40 + radius * scale
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{1020}" height="{height:.0f}" '
             f'viewBox="0 0 1020 {height:.0f}" font-family="Helvetica, Arial, sans-serif" '
             'font-size="12">',
             '<title>Lens layout, side view, to scale (millimetres)</title>',
             f'<line x1="20" y1="{mid:.1f}" x2="1000" y2="{mid:.1f}" stroke="#3355aa" '
             'stroke-dasharray="6 4"/>']
    rail_y = mid + radius * scale + 30
    parts.append(f'<rect x="{x(z0) - 20:.1f}" y="{rail_y:.1f}" width="{(z1 - z0) * scale + 40:.1f}"'
                 ' height="8" fill="#8a8a8a"/>')
    for entry, placed in zip(summary["lenses"], lenses, strict=True):
        lens = placed.lens
        h = lens.diameter_mm / 2
        ys = np.linspace(-h, h, 41)
        if isinstance(lens, ThickLens):
            front = placed.z_mm + sag(ys, lens.c1)
            back = placed.back_z_mm + sag(ys, lens.c2)
        else:
            front = back = np.full_like(ys, placed.z_mm)
        pts = [(x(z), mid - y * scale) for z, y in zip(front, ys, strict=True)]
        pts += [(x(z), mid - y * scale) for z, y in zip(back[::-1], ys[::-1], strict=True)]
        d = " ".join(f"{px:.1f},{py:.1f}" for px, py in pts)
        parts.append(f'<polygon points="{d}" fill="#b9d8f0" stroke="#2a5d8a" '
                     'stroke-width="1.2"/>')
        rail = x(entry["rail_mm"])
        parts.append(f'<line x1="{rail:.1f}" y1="{mid + h * scale:.1f}" x2="{rail:.1f}" '
                     f'y2="{rail_y:.1f}" stroke="#555" stroke-width="2"/>')
        parts.append(f'<text x="{rail:.1f}" y="{rail_y + 24:.1f}" text-anchor="middle">'
                     f'{html.escape(entry["label"].split()[0])} rail {entry["rail_mm"]:.1f}'
                     '</text>')
    dim_y = 22
    for (a, b), gap in zip(zip(lenses, lenses[1:], strict=False), summary["vertex_gaps_mm"],
                           strict=True):
        xa, xb = x(a.back_z_mm), x(b.z_mm)
        parts.append(f'<line x1="{xa:.1f}" y1="{dim_y}" x2="{xb:.1f}" y2="{dim_y}" '
                     'stroke="#000" marker-start="url(#a)" marker-end="url(#a)"/>')
        parts.append(f'<text x="{(xa + xb) / 2:.1f}" y="{dim_y - 6}" text-anchor="middle">'
                     f'{gap:.1f}</text>')
    total_y = rail_y + 56
    parts.append(f'<line x1="{x(z0):.1f}" y1="{total_y:.1f}" x2="{x(z1):.1f}" y2="{total_y:.1f}"'
                 ' stroke="#000"/>')
    parts.append(f'<text x="{(x(z0) + x(z1)) / 2:.1f}" y="{total_y + 16:.1f}" '
                 f'text-anchor="middle">overall {summary["length_mm"]:.1f} mm, first to last '
                 'vertex; rail positions from the first vertex; air gaps between vertices above'
                 '</text>')
    parts.insert(1, '<defs><marker id="a" viewBox="0 0 10 10" refX="5" refY="5" markerWidth="6"'
                 ' markerHeight="6" orient="auto-start-reverse"><path d="M 0 0 L 10 5 L 0 10 z"'
                 '/></marker></defs>')
    parts.append("</svg>")
    return "\n".join(parts)
