"""The proposal report: one folder with a self-contained ``index.html`` and its pictures.

Every number on the page comes from ``report.json`` beside it (the page is written
from that dictionary and nothing else), so a reviewer can trace each figure.
"""

from __future__ import annotations

import dataclasses
import html
import math

import numpy as np

from optics.cloak import design_from_lenses
from optics.errors import InputError
from optics.lenses import ThickLens, sag
from render.scene import Scene, _lens_glass_extent

_STYLE = """
body { font-family: Georgia, 'Times New Roman', serif; color: #222; margin: 0;
       background: #f7f5f0; }
main { max-width: 980px; margin: 0 auto; padding: 28px 36px 60px; background: #fff; }
h1 { font-size: 28px; margin: 0 0 4px; } h2 { font-size: 20px; margin: 34px 0 8px;
  border-bottom: 2px solid #2f6f6a; padding-bottom: 4px; }
p.lead { font-size: 16px; line-height: 1.5; }
table { border-collapse: collapse; margin: 8px 0 12px; font-size: 13px; }
th, td { border: 1px solid #cfcac0; padding: 4px 8px; text-align: right; }
th { background: #ece8df; } td.l, th.l { text-align: left; }
figure { margin: 12px 0; } figure img { max-width: 100%; border: 1px solid #ddd; }
figcaption { font-size: 13px; color: #555; }
.grid { display: flex; flex-wrap: wrap; gap: 12px; } .grid figure { width: 300px; }
.caution { background: #fff4e5; border-left: 5px solid #d9822b; padding: 10px 16px; }
@media print { body { background: #fff; } main { padding: 0; } h2 { break-after: avoid; }
  figure { break-inside: avoid; } }
"""


def scene_with_lenses(scene: Scene, outer, inner) -> Scene:
    """The scene with its device rebuilt from two given lenses (e.g. from an inventory).

    Raises
    ------
    InputError
        If the scene's layers or housing no longer fit the new device.
    """
    design = design_from_lenses(outer, inner, scene.system.coated)
    system = design.system
    housing = scene.housing
    first = _lens_glass_extent(system.lenses[0])[0]
    last = _lens_glass_extent(system.lenses[-1])[1]
    gap = _lens_glass_extent(scene.system.lenses[0])[0] - housing.panel_z_mm
    extension = housing.tube_end_mm - _lens_glass_extent(scene.system.lenses[-1])[1]
    housing = dataclasses.replace(housing, panel_z_mm=first - gap, tube_end_mm=last + extension)
    if max(p.lens.diameter_mm for p in system.lenses) / 2 > housing.tube_radius_mm:
        raise InputError("--outer/--inner", f"{outer.diameter_mm:g} mm",
                         "the lenses are wider than the scene's tube", str(scene.path))
    for layer in scene.layers:
        for placed in system.lenses:
            lo, hi = _lens_glass_extent(placed)
            if lo <= layer.z_mm <= hi:
                raise InputError(f"layer '{layer.name}'", layer.z_mm, f"now lies inside "
                                 f"{placed.label}; move it in the scene file", str(scene.path))
        if layer.role == "background" and layer.z_mm <= housing.tube_end_mm:
            raise InputError(f"layer '{layer.name}'", layer.z_mm, "now stands inside the "
                             "longer device; move it back in the scene file", str(scene.path))
    return dataclasses.replace(scene, system=system, design=design, housing=housing)


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


def _table(headers, rows, left=1) -> str:
    head = "".join(f'<th class="{"l" if i < left else ""}">{html.escape(h)}</th>'
                   for i, h in enumerate(headers))
    body = "".join("<tr>" + "".join(f'<td class="{"l" if i < left else ""}">'
                                    f'{html.escape(str(c))}</td>' for i, c in enumerate(r))
                   + "</tr>" for r in rows)
    return f"<table><tr>{head}</tr>{body}</table>"


def _fmt(value, pattern="{:.2f}"):
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return pattern.format(value)


def page(data: dict) -> str:
    """The report page, from ``report.json``'s dictionary alone."""
    d = data["design"]
    lens_rows = [[e["label"], _fmt(e["focal_length_mm"], "{:.1f}"),
                  _fmt(e["diameter_mm"], "{:.1f}"), _fmt(e["center_thickness_mm"]),
                  _fmt(e["edge_thickness_mm"]), e.get("material", "-"),
                  _fmt(e["mass_g"], "{:.0f}"), _fmt(e["position_mm"], "{:.1f}"),
                  _fmt(e["rail_mm"], "{:.1f}"), _fmt(e.get("price"), "{:.2f}")]
                 for e in d["lenses"]]
    views = "".join(
        f'<figure><img src="{html.escape(v["image"])}" alt="view from {html.escape(v["name"])}">'
        f'<figcaption><b>{html.escape(v["name"])}</b>, eye at {v["eye_mm"][1]:.0f} mm height, '
        f'{-v["eye_mm"][2] / 1000:.2f} m in front: {_fmt(v["hidden_fraction"], "{:.0%}")} of '
        f'the object hidden; {html.escape(v["verdict"])}</figcaption></figure>'
        for v in data["views"])
    tol = data["tolerance"]
    tol_rows = [[s["label"], _fmt(s["value"], "{:g}"), _fmt(s["yield_alone"], "{:.0%}"),
                 _fmt(tol["for_95_yield"][s["tolerance"]]["largest_tested_with_95_yield"],
                      "{:g}")] for s in tol["sensitivity"]]
    view_rows = [[v["name"], _fmt(v["hidden_fraction"], "{:.0%}"),
                  _fmt(v["background_ssim"]), _fmt(v["shift_median_arcmin"]),
                  _fmt(v["transmittance"], "{:.3f}"), v["verdict"]] for v in data["views"]]
    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in data["cautions"])
    assumptions = "".join(f"<li>{html.escape(a)}</li>" for a in data["assumptions"])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{html.escape(data["title"])}</title>
<style>{_STYLE}</style>
<script>
window.addEventListener("load", function () {{
  var broken = 0;
  for (var i = 0; i < document.images.length; i++) {{
    var img = document.images[i];
    if (!(img.complete && img.naturalWidth > 0)) broken++;
  }}
  document.body.setAttribute("data-broken-images", String(broken));
}});
</script></head><body><main>
<h1>{html.escape(data["title"])}</h1>
<p>Proposal preview made with cloakview {html.escape(data["version"])}.</p>
<p class="lead">{html.escape(data["summary"])}</p>

<h2>1. Layout</h2>
<p>Device length {d["length_mm"]:.1f} mm from the first to the last lens vertex; total lens
mass {d["total_mass_g"] / 1000:.2f} kg; lens spacing between principal planes
{d["outer_spacing_mm"]:.2f} mm (outer pairs) and {d["inner_spacing_mm"]:.2f} mm (inner gap).
Drawing to scale (also as <a href="layout.svg">layout.svg</a> for drafting tools):</p>
<figure><img src="layout.svg" alt="lens layout drawing"></figure>

<h2>2. Bill of lenses</h2>
{_table(["lens", "focal length mm", "diameter mm", "centre mm", "edge mm", "material",
         "mass g", "vertex mm", "rail mm", "unit price"], lens_rows)}
<p>Lens cost: {_fmt(data["lens_cost"], "{:.2f}")}.</p>

<h2>3. What visitors see</h2>
<div class="grid">{views}</div>
{_table(["visitor", "hidden", "background SSIM", "shift arcmin", "light through", "verdict"],
        view_rows)}

<h2>4. Walking past</h2>
<figure><img src="walk_strip.png" alt="walk-by strip"><figcaption>{len(data["walk"])}
frames of a walk past at {data["walk_distance_mm"] / 1000:.2f} m (left to right), through the
lenses; the effect works in {sum(1 for w in data["walk"] if w["verdict"].startswith("works"))}
of them.</figcaption></figure>

<h2>5. Where visitors can stand</h2>
<figure><img src="sightlines.png" alt="sight-line map"><figcaption>Floor plan at the axis
height: green where the effect works ({html.escape(data["works_definition"])}).
</figcaption></figure>
<figure><img src="elevation.png" alt="eye heights"><figcaption>Eye height against distance on
the axis line.</figcaption></figure>
<p>{html.escape(data["recommendation"])}</p>

<h2>6. What can be hidden</h2>
<figure><img src="zone.png" alt="cloaked zone"></figure>
{_table(["gap", "inner radius mm", "outer radius mm", "from mm", "to mm", "object h x l mm"],
        [[r["gap"], _fmt(r["inner_mm"], "{:.1f}"), _fmt(r["outer_mm"], "{:.1f}"),
          _fmt(r["z_start_mm"], "{:.0f}"), _fmt(r["z_end_mm"], "{:.0f}"),
          f'{r["height_mm"]:.0f} x {r["length_mm"]:.0f}'] for r in data["rings"]])}

<h2>7. Build tolerances</h2>
<p>{tol["builds"]} simulated builds with each lens within +-{tol["tolerances"]["axial_mm"]:g} mm
along the axis, +-{tol["tolerances"]["decentre_mm"]:g} mm sideways,
+-{tol["tolerances"]["tilt_deg"]:g} deg tilt and +-{tol["tolerances"]["focal_pct"]:g} % focal
length: {tol["yield"]:.0%} work from the design viewer.</p>
{_table(["tolerance", "+- value", "yield with it alone", "largest tested for 95 % yield"],
        tol_rows)}
<figure><img src="histograms.png" alt="tolerance histograms"></figure>

<h2>8. Assumptions</h2><ul>{assumptions}</ul>

<h2>9. Cautions</h2><div class="caution"><ul>{cautions}</ul></div>
</main></body></html>
"""
