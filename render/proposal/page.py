"""The proposal page: one self-contained ``index.html`` from ``report.json``'s dictionary.

Every number on the page comes from that dictionary, so a reviewer can trace each figure;
every picture is embedded as a data URI (``pictures``: name to (MIME type, bytes)), so
the page is one file that can be mailed, archived or printed. Print CSS keeps headings
with what follows them, tables, figures and the caution box whole, and scales figures to
the page; ``paper`` sets the printed page size.
"""

from __future__ import annotations

import base64
import html
import math

from cloakview.render.frame.metrics import percent

PAPERS = {"a4": "A4", "letter": "letter"}

_STYLE = """
body { font-family: Georgia, 'Times New Roman', serif; color: #222; margin: 0;
       background: #f7f5f0; }
main { max-width: 980px; margin: 0 auto; padding: 28px 36px 60px; background: #fff; }
h1 { font-size: 28px; margin: 0 0 4px; } h2 { font-size: 20px; margin: 30px 0 8px;
  border-bottom: 2px solid #2f6f6a; padding-bottom: 4px; }
p.lead { font-size: 16px; line-height: 1.5; }
table { border-collapse: collapse; margin: 8px 0 12px; font-size: 12px; }
th, td { border: 1px solid #cfcac0; padding: 3px 6px; text-align: right; vertical-align: top; }
th { background: #ece8df; } td.l, th.l { text-align: left; }
table.title td { border: none; text-align: left; padding: 1px 12px 1px 0; font-size: 14px; }
figure { margin: 12px 0; } figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: 12px; color: #555; }
.grid { display: flex; flex-wrap: wrap; gap: 12px; } .grid figure { width: 300px; }
.grid figure.half { width: 47%; }
.caution { background: #fff4e5; border-left: 5px solid #d9822b; padding: 8px 16px; }
section { margin: 0; }
@media print {
  @page { size: PAPER; margin: 14mm 12mm; }
  body { background: #fff; font-size: 11pt; } main { max-width: none; padding: 0; }
  h1, h2 { break-after: avoid; page-break-after: avoid; }
  h2 + * { break-before: avoid; page-break-before: avoid; }
  .keep { break-inside: avoid; page-break-inside: avoid; }
  table, figure, .caution, tr { break-inside: avoid; page-break-inside: avoid; }
  .grid figure { width: 31%; } .grid figure.half { width: 47%; }
  figure img { max-height: 230mm; }
  a { color: inherit; text-decoration: none; }
}
"""


def data_uri(mime: str, data: bytes) -> str:
    """``data:`` URI of ``data`` (base64)."""
    return f"data:{mime};base64,{base64.b64encode(data).decode('ascii')}"


def _table(headers, rows, left=1, cls="") -> str:
    head = "".join(f'<th class="{"l" if i < left else ""}">{html.escape(h)}</th>'
                   for i, h in enumerate(headers))
    body = "".join("<tr>" + "".join(f'<td class="{"l" if i < left else ""}">'
                                    f'{html.escape(str(c))}</td>' for i, c in enumerate(r))
                   + "</tr>" for r in rows)
    return f'<table class="{cls}"><tr>{head}</tr>{body}</table>'


def _fmt(value, pattern="{:.2f}"):
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return pattern.format(value)


def _img(pictures: dict, name: str, alt: str) -> str:
    mime, data = pictures[name]
    return f'<img src="{data_uri(mime, data)}" alt="{html.escape(alt)}">'


def _bill(data: dict) -> str:
    bill, currency = data["bill"], data.get("currency")
    unit = f" ({currency})" if currency else ""
    rows = [[b["part"], b["id"] or "-", b["quantity"], _fmt(b["focal_length_mm"], "{:.1f}"),
             _fmt(b["diameter_mm"], "{:.1f}"), b["material"], _fmt(b["unit_mass_g"], "{:.0f}"),
             _fmt(b["line_mass_g"], "{:.0f}"), _fmt(b["unit_price"]), _fmt(b["line_total"])]
            for b in bill["lines"]]
    rows.append(["total", "", sum(b["quantity"] for b in bill["lines"]), "", "", "", "",
                 _fmt(bill["total_mass_g"], "{:.0f}"), "", _fmt(bill["total_price"])])
    note = ("" if bill["total_price"] is not None else
            "<p>No prices: give the report an inventory (--inventory with --outer and "
            "--inner) to price the lenses.</p>")
    return _table(["part", "inventory id", "qty", "focal length mm", "diameter mm",
                   "material", "unit mass g", "line mass g", f"unit price{unit}",
                   f"line total{unit}"], rows, left=2) + note


def page(data: dict, pictures: dict, paper: str = "a4") -> str:
    """The report page from ``report.json``'s dictionary and the pictures it names."""
    d = data["design"]
    t = data["title_block"]
    lens_rows = [[e["label"], _fmt(e["focal_length_mm"], "{:.1f}"),
                  _fmt(e["diameter_mm"], "{:.1f}"), _fmt(e["center_thickness_mm"]),
                  _fmt(e["edge_thickness_mm"]), e.get("material", "-"),
                  _fmt(e["mass_g"], "{:.0f}"), _fmt(e["position_mm"], "{:.1f}"),
                  _fmt(e["rail_mm"], "{:.1f}")] for e in d["lenses"]]
    views = "".join(
        f'<figure>{_img(pictures, v["image"], "view from " + v["name"])}'
        f'<figcaption><b>{html.escape(v["name"])}</b>, eye at {v["eye_mm"][1]:.0f} mm height, '
        f'{-v["eye_mm"][2] / 1000:.2f} m in front: {html.escape(v["verdict"])}'
        f'</figcaption></figure>' for v in data["views"])
    tol = data["tolerance"]
    low, high = tol["yield_interval_95"]
    tol_rows = [[s["label"], _fmt(s["value"], "{:g}"), percent(s["yield_alone"]),
                 _fmt(tol["for_95_yield"][s["tolerance"]]["largest_tested_with_95_yield"],
                      "{:g}")] for s in tol["sensitivity"]]
    view_rows = [[v["name"], percent(v["replaced_fraction"]), percent(v["blocked_fraction"]),
                  percent(v["showing_fraction"]), _fmt(v["window_deg"], "{:.2f}"),
                  _fmt(v["object_outer_deg"], "{:.2f}"), _fmt(v["background_ssim"]),
                  _fmt(v["shift_median_arcmin"]), _fmt(v["color_fringe_arcmin"], "{:.1f}"),
                  _fmt(v["transmittance"], "{:.3f}"), v["verdict"]] for v in data["views"]]
    advice = "".join(f"<li>{html.escape(line)}</li>" for v in data["views"]
                     for line in v["advice"])
    floors = "".join(
        f'<figure class="half">{_img(pictures, f["image"], "floor plan " + f["name"])}'
        f'<figcaption>Floor plan at eye height {f["height_mm"]:.0f} mm '
        f'({html.escape(f["name"])}).</figcaption></figure>' for f in data["floor_plans"])
    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in data["cautions"])
    assumptions = "".join(f"<li>{html.escape(a)}</li>" for a in data["assumptions"])
    works_walk = sum(1 for w in data["walk"] if w["verdict"].startswith("works"))
    ring_rows = [[r["gap"], _fmt(r["inner_mm"], "{:.1f}"), _fmt(r["outer_mm"], "{:.1f}"),
                  _fmt(r["z_start_mm"], "{:.0f}"), _fmt(r["z_end_mm"], "{:.0f}"),
                  f'{r["height_mm"]:.0f} x {r["length_mm"]:.0f}'] for r in data["rings"]]
    style = _STYLE.replace("PAPER", PAPERS[paper])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{html.escape(t["project"])}</title>
<style>{style}</style>
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
<h1>{html.escape(t["project"])}</h1>
<table class="title">
<tr><td>Exhibit</td><td>{html.escape(data["title"])}</td></tr>
<tr><td>Date</td><td>{html.escape(t["date"])}</td></tr>
<tr><td>Author</td><td>{html.escape(t["author"] or "-")}</td></tr>
<tr><td>Revision</td><td>{html.escape(t["revision"] or "-")}</td></tr>
<tr><td>Made with</td><td>cloakview {html.escape(data["version"])}</td></tr>
</table>
<p class="lead">{html.escape(data["summary"])}</p>

<section class="keep"><h2>1. Layout</h2>
<p>Device length {d["length_mm"]:.1f} mm from the first to the last lens vertex; total lens
mass {d["total_mass_g"]:.0f} g ({d["total_mass_g"] / 1000:.2f} kg); lens spacing between
principal planes {d["outer_spacing_mm"]:.2f} mm (outer pairs) and {d["inner_spacing_mm"]:.2f}
mm (inner gap). Side view of the device, dimensions in millimetres (layout.svg beside this
page is the same drawing at full size with the eye point, for drafting tools):</p>
<figure>{_img(pictures, "layout", "lens layout drawing")}</figure>
{_table(["lens", "focal length mm", "diameter mm", "centre mm", "edge mm", "material",
         "mass g", "vertex mm", "rail mm"], lens_rows)}</section>

<section class="keep"><h2>2. Bill of lenses</h2>
{_bill(data)}</section>

<section class="keep"><h2>3. What visitors see</h2>
<div class="grid">{views}</div></section>
<div class="keep"><p>Where the object was (as seen without the lenses), the view through them
shows background ("filled"), dark tube or lens mount ("dark"), or the object ("seen"); the
three add up to 100 %. The window is the radius of the patch through which the background is
seen; the object column is how far its place reaches from that patch's centre (both in
degrees at the eye).</p>
{_table(["visitor", "filled", "dark", "seen", "window deg", "object deg", "background SSIM",
         "shift arcmin", "fringe arcmin", "light through", "verdict"], view_rows)}</div>
{f'<div class="keep"><p>What would bring the object inside the window:</p><ul>{advice}</ul></div>'
 if advice else ""}

<section class="keep"><h2>4. Walking past</h2>
<figure>{_img(pictures, "walk_strip", "walk-by strip")}<figcaption>{len(data["walk"])}
frames of a walk past at {data["walk_distance_mm"] / 1000:.2f} m (left to right, each labelled
with the eye's sideways offset), through the lenses; the effect works in {works_walk} of
them.</figcaption></figure></section>

<section class="keep"><h2>5. Where visitors can stand</h2>
<p>The effect works where {html.escape(data["works_definition"])}.</p>
<div class="grid">{floors}</div></section>
<figure class="keep">{_img(pictures, "elevation", "eye heights")}<figcaption>Eye height
against distance on the axis line.</figcaption></figure>
<p>{html.escape(data["recommendation"])}</p>

<section class="keep"><h2>6. What can be hidden</h2>
<figure>{_img(pictures, "zone", "cloaked zone")}</figure>
{_table(["gap", "inner radius mm", "outer radius mm", "from mm", "to mm", "object h x l mm"],
        ring_rows)}</section>

<section class="keep"><h2>7. Build tolerances</h2>
<p>{tol["builds"]} simulated builds with each lens within +-{tol["tolerances"]["axial_mm"]:g} mm
along the axis, +-{tol["tolerances"]["decenter_mm"]:g} mm sideways,
+-{tol["tolerances"]["tilt_deg"]:g} deg tilt and +-{tol["tolerances"]["focal_pct"]:g} % focal
length: {percent(tol["yield"])} work from the design viewer (95 % interval {percent(low)} to
{percent(high)}, Wilson score interval).</p>
{_table(["tolerance", "+- value", "yield with it alone", "largest tested for 95 % yield"],
        tol_rows)}
<figure>{_img(pictures, "histograms", "tolerance histograms")}</figure></section>

<section class="keep"><h2>8. Assumptions</h2><ul>{assumptions}</ul></section>

<section class="keep"><h2>9. Cautions</h2><div class="caution"><ul>{cautions}</ul></div></section>
</main></body></html>
"""
