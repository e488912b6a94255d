"""The proposal page: ``index.html`` written from ``report.json``'s dictionary alone.

Every number on the page comes from that dictionary, so a reviewer can trace each figure.
"""

from __future__ import annotations

import html
import math

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
        f'{-v["eye_mm"][2] / 1000:.2f} m in front: {html.escape(v["verdict"])}'
        f'</figcaption></figure>'
        for v in data["views"])
    tol = data["tolerance"]
    tol_rows = [[s["label"], _fmt(s["value"], "{:g}"), _fmt(s["yield_alone"], "{:.0%}"),
                 _fmt(tol["for_95_yield"][s["tolerance"]]["largest_tested_with_95_yield"],
                      "{:g}")] for s in tol["sensitivity"]]
    view_rows = [[v["name"], _fmt(v["replaced_fraction"], "{:.0%}"),
                  _fmt(v["blocked_fraction"], "{:.0%}"), _fmt(v["showing_fraction"], "{:.0%}"),
                  _fmt(v["window_deg"], "{:.2f}"), _fmt(v["object_outer_deg"], "{:.2f}"),
                  _fmt(v["background_ssim"]), _fmt(v["shift_median_arcmin"]),
                  _fmt(v["color_fringe_arcmin"], "{:.1f}"),
                  _fmt(v["transmittance"], "{:.3f}"), v["verdict"]] for v in data["views"]]
    advice = "".join(f"<li>{html.escape(line)}</li>" for v in data["views"]
                     for line in v["advice"])
    floors = "".join(
        f'<figure><img src="{html.escape(f["image"])}" alt="floor plan at '
        f'{f["height_mm"]:.0f} mm"><figcaption>Floor plan, eye height {f["height_mm"]:.0f} mm '
        f'({html.escape(f["name"])}): green where the effect works.</figcaption></figure>'
        for f in data["floor_plans"])
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
<p>Where the object was (as seen without the lenses), the view through them shows background
("filled"), dark tube or lens mount ("dark"), or the object ("seen"); the three add up to
100 %. The window is the radius of the patch through which the background is seen; the object
column is how far its place reaches from that patch's centre (both in degrees at the eye).</p>
{_table(["visitor", "filled", "dark", "seen", "window deg", "object deg", "background SSIM",
         "shift arcmin", "fringe arcmin", "light through", "verdict"], view_rows)}
{f"<p>What would bring the object inside the window:</p><ul>{advice}</ul>" if advice else ""}

<h2>4. Walking past</h2>
<figure><img src="walk_strip.png" alt="walk-by strip"><figcaption>{len(data["walk"])}
frames of a walk past at {data["walk_distance_mm"] / 1000:.2f} m (left to right), through the
lenses; the effect works in {sum(1 for w in data["walk"] if w["verdict"].startswith("works"))}
of them.</figcaption></figure>

<h2>5. Where visitors can stand</h2>
<p>The effect works where {html.escape(data["works_definition"])}.</p>
<div class="grid">{floors}</div>
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
along the axis, +-{tol["tolerances"]["decenter_mm"]:g} mm sideways,
+-{tol["tolerances"]["tilt_deg"]:g} deg tilt and +-{tol["tolerances"]["focal_pct"]:g} % focal
length: {tol["yield"]:.0%} work from the design viewer.</p>
{_table(["tolerance", "+- value", "yield with it alone", "largest tested for 95 % yield"],
        tol_rows)}
<figure><img src="histograms.png" alt="tolerance histograms"></figure>

<h2>8. Assumptions</h2><ul>{assumptions}</ul>

<h2>9. Cautions</h2><div class="caution"><ul>{cautions}</ul></div>
</main></body></html>
"""
