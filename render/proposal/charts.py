"""Charts for people: sight-line maps, the cloaked zone, the Pareto front, tolerance and walk plots.

Each function takes the numbers an analysis produced and returns a matplotlib
:class:`~matplotlib.figure.Figure` with axes, ticks and units, a legend for every colour
and the pass marks drawn where there are any; none computes a result of its own.
:func:`cloakview.render.files.write_figure` writes a figure as PNG and SVG. Figures are
made without pyplot (no global state, no window). Colours are our own palette.
"""

from __future__ import annotations

import numpy as np
from cloakview.render.frame.metrics import (
    CLASSES,
    WORKS_REPLACED,
    WORKS_SHIFT_ARCMIN,
    percent,
)
from cloakview.render.scene.model import Scene, glass_extent, opaque_radii_mm
from cloakview.render.sweeps.sightlines import EYE_HEIGHTS_MM
from cloakview.render.sweeps.zone import RADIAL_STEP_MM, Ring, ZoneMap, object_fit
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.patches import Patch, Rectangle
from matplotlib.ticker import MaxNLocator

#: Class colours (our own palette): green, amber, violet, red, grey.
CLASS_COLOURS = {"works": "#2ea05a", "partly": "#ebaa28", "hidden": "#8250c8",
                 "breaks": "#cd3c32", "no view": "#969696"}
CLASS_MEANING = {
    "works": "works: background fills the object's place",
    "partly": "partly: background displaced, or some of the object shows",
    "hidden": "hidden: a dark patch stands where the object was",
    "breaks": "breaks: the object shows",
    "no view": "no view: the object is out of sight even without lenses",
}
LENS_COLOUR, TUBE_COLOUR, HIDDEN_COLOUR, RAY_COLOUR = "#6ea8e6", "#4a4a52", "#96d7cd", "#e6782a"


def _figure(width_in: float, height_in: float) -> Figure:
    return Figure(figsize=(width_in, height_in), dpi=110, layout="constrained")


def _class_grid(rows: list[dict], row_key: str, row_values, col_key: str, col_values):
    index = {cls: i for i, cls in enumerate(CLASSES)}
    grid = np.full((len(row_values), len(col_values)), np.nan)
    for r in rows:
        if r[row_key] in row_values and r[col_key] in col_values:
            grid[row_values.index(r[row_key]), col_values.index(r[col_key])] = index[r["class"]]
    return grid


def _edges(values) -> np.ndarray:
    v = np.asarray(values, float)
    step = v[1] - v[0] if len(v) > 1 else 10.0
    return np.concatenate([v - step / 2, [v[-1] + step / 2]])


def _class_legend(ax, extra=()) -> None:
    handles = [Patch(color=CLASS_COLOURS[c], label=CLASS_MEANING[c]) for c in CLASSES]
    ax.legend(handles=[*handles, *extra], loc="upper left", bbox_to_anchor=(1.02, 1.0),
              fontsize=8, frameon=False)


def _class_mesh(ax, x_edges, y_edges, grid) -> None:
    cmap = ListedColormap([CLASS_COLOURS[c] for c in CLASSES])
    ax.pcolormesh(x_edges, y_edges, np.ma.masked_invalid(grid), cmap=cmap, vmin=-0.5,
                  vmax=len(CLASSES) - 0.5, shading="flat")


def _star(ax, x, y, label):
    """Mark the recommended point; return its legend handle."""
    return ax.plot([x], [y], marker="*", ms=14, color="white", mec="black", ls="none",
                   label=label)[0]


def floor_plan(scene: Scene, rows: list[dict], xs, ds, height_mm: float, title: str,
               spot: dict | None = None) -> Figure:
    """Plan view: where on the floor the effect works at one eye height.

    Sideways offset from the axis [mm] across, distance from the front panel [m] up the
    page, the device drawn behind the panel to the same scales; ``spot`` (the recommended
    point, if it lies in this plan) is marked.
    """
    fig = _figure(9.0, 5.2)
    ax = fig.add_subplot()
    grid = _class_grid(rows, "d", list(ds), "x", list(xs))
    _class_mesh(ax, _edges(xs), _edges(np.asarray(ds) / 1000.0), grid)
    tube = scene.housing.tube_radius_mm
    length = (scene.housing.tube_end_mm - scene.housing.panel_z_mm) / 1000.0
    ax.add_patch(Rectangle((-tube, -length), 2 * tube, length, color=TUBE_COLOUR))
    for placed in scene.system.lenses:
        y = -(placed.center_z_mm - scene.housing.panel_z_mm) / 1000.0
        half = placed.lens.diameter_mm / 2
        ax.plot([-half, half], [y, y], color=LENS_COLOUR, lw=3)
    panel = scene.housing.panel_half_width_mm
    ax.plot([-panel, panel], [0, 0], color="black", lw=3)
    extra = [Patch(color=TUBE_COLOUR, label="device: tube, lenses (blue), front panel (black)")]
    if spot is not None and spot["h"] == height_mm:
        extra.append(_star(ax, spot["x"], spot["d"] / 1000.0, "recommended floor mark"))
    ax.set_xlim(min(min(xs), -panel) - 10, max(max(xs), panel) + 10)
    ax.set_ylim(-length - 0.05, max(ds) / 1000.0 + 0.1)
    ax.set_xlabel("sideways offset of the eye from the axis [mm]")
    ax.set_ylabel("distance of the eye from the front panel [m]")
    ax.set_title(f"{title}\neye height {height_mm:.0f} mm (the two axes have different scales)",
                 fontsize=10)
    _class_legend(ax, extra)
    return fig


def elevation(scene: Scene, rows: list[dict], hs, ds, title: str,
              spot: dict | None = None) -> Figure:
    """Side view on the axis line: eye height against distance from the panel."""
    fig = _figure(9.0, 5.2)
    ax = fig.add_subplot()
    grid = _class_grid(rows, "h", list(hs), "d", list(ds))
    _class_mesh(ax, _edges(np.asarray(ds) / 1000.0), _edges(hs), grid)
    axis = scene.placement.axis_height_mm
    axis_line = ax.axhline(axis, color="#3c3cc8", lw=1, label="device axis height")
    for name, h in EYE_HEIGHTS_MM.items():
        if min(hs) <= h <= max(hs):
            ax.axhline(h, color="black", lw=0.6, ls=":")
            ax.annotate(f"{name} {h:.0f} mm", (max(ds) / 1000.0, h), fontsize=7,
                        xytext=(3, 2), textcoords="offset points")
    extra = [axis_line]
    if spot is not None:
        extra.append(_star(ax, spot["d"] / 1000.0, spot["h"], "recommended spot"))
    ax.invert_xaxis()  # the panel on the right, as seen from the side
    ax.set_xlabel("distance of the eye from the front panel [m] (panel to the right)")
    ax.set_ylabel("eye height above the floor [mm]")
    ax.set_title(f"{title}\neye heights on the axis line (dotted: standard eye heights)",
                 fontsize=10)
    _class_legend(ax, extra)
    return fig


def zone_drawing(zone: ZoneMap, scene: Scene, rings: list[Ring], title: str) -> Figure:
    """Side view of the interior: hidden region, rays, lenses, largest rings, the object."""
    fig = _figure(10.0, 4.6)
    ax = fig.add_subplot()
    hidden = zone.hidden.T.astype(float)
    edges_z = np.concatenate([zone.z_mm - zone.axial_step_mm / 2,
                              [zone.z_mm[-1] + zone.axial_step_mm / 2]])
    edges_r = np.concatenate([zone.r_mm - RADIAL_STEP_MM / 2,
                              [zone.r_mm[-1] + RADIAL_STEP_MM / 2]])
    cmap = ListedColormap(["#ffffff", HIDDEN_COLOUR])
    for sign in (1, -1):
        ax.pcolormesh(edges_z, sign * edges_r, hidden, cmap=cmap, vmin=0, vmax=1,
                      shading="flat", rasterized=True)
    for fan in zone.fans:
        for ray in fan:
            ok = np.isfinite(ray)
            ax.plot(zone.z_mm[ok], ray[ok], color=RAY_COLOUR, lw=0.4, alpha=0.5)
    for placed in scene.system.lenses:
        lo, hi = glass_extent(placed)
        half = placed.lens.diameter_mm / 2
        ax.add_patch(Rectangle((lo, -half), max(hi - lo, 1.0), 2 * half, color=LENS_COLOUR,
                               ec="#284c8c"))
        ax.annotate(placed.label.split()[0], (lo, half), xytext=(0, 4),
                    textcoords="offset points", fontsize=8)
    radius = scene.housing.tube_radius_mm
    for sign in (1, -1):
        ax.axhline(sign * radius, color=TUBE_COLOUR, lw=2)
    ax.axhline(0.0, color="#3c3cc8", lw=0.8)
    for ring in rings:
        for sign in (1, -1):
            ax.add_patch(Rectangle((ring.z_start_mm, sign * ring.inner_mm),
                                   ring.length_mm, sign * ring.height_mm, fill=False,
                                   ec="#146e64", lw=1.5))
    notes = []
    for layer in scene.layers:
        if layer.role != "hidden":
            continue
        r_in, r_out = opaque_radii_mm(layer)
        fits, by = object_fit(zone, layer)
        for sign in (1, -1):
            ax.plot([layer.z_mm, layer.z_mm], [sign * r_in, sign * r_out], color="#b41e5a",
                    lw=3, solid_capstyle="butt")
        notes.append(f"'{layer.name}' ({r_in:.0f}-{r_out:.0f} mm from the axis at z = "
                     f"{layer.z_mm:.0f} mm): " + ("fits" if fits else
                                                  f"does not fit, by {by:.1f} mm"))
    handles = [Patch(color=HIDDEN_COLOUR, label="hidden from these eyes"),
               Patch(color="#ffffff", ec="#999999", label="crossed by rays that reach the eye"),
               Patch(color=RAY_COLOUR, label="some of those rays"),
               Patch(color=LENS_COLOUR, label="lens glass"),
               Patch(fill=False, ec="#146e64", label="largest hidden ring per gap"),
               Patch(color="#b41e5a", label="the scene's hidden object")]
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
              frameon=False)
    ax.set_xlim(scene.housing.panel_z_mm, scene.housing.tube_end_mm)
    ax.set_ylim(-radius * 1.08, radius * 1.08)
    ax.set_xlabel("position along the axis from the first lens [mm]")
    ax.set_ylabel("distance from the axis [mm]")
    ax.set_title(title + ("\n" + "; ".join(notes) if notes else ""), fontsize=9)
    return fig


def pareto(rows: list[dict], currency: str | None = None) -> Figure:
    """Lens cost against acuity field for every feasible design, the Pareto front marked."""
    fig = _figure(8.0, 4.8)
    ax = fig.add_subplot()
    feasible = [r for r in rows if r["reason"] is None]
    for on_front, colour, label in ((False, "#a0a0a0", "feasible, not on the front"),
                                    (True, "#c8462a", "on the Pareto front")):
        pick = [r for r in feasible if bool(r["pareto"]) is on_front]
        ax.scatter([r["cost"] for r in pick], [r["acuity_field_deg"] for r in pick], s=36,
                   color=colour, label=label, zorder=2 + on_front)
        if on_front:
            for r in pick:
                ax.annotate(f"{r['outer']} + {r['inner']}", (r["cost"], r["acuity_field_deg"]),
                            xytext=(5, 4), textcoords="offset points", fontsize=7)
    unit = f" [{currency}]" if currency else " [inventory price units]"
    ax.set_xlabel("cost of the four lenses" + unit)
    ax.set_ylabel("acuity field: half-angle where the effect holds [deg]")
    ax.set_title("Design search: on the front, no other design is at least as good on field, "
                 "hidden object,\ncost and mass and better on one of them", fontsize=9)
    ax.legend(fontsize=8, frameon=False)
    ax.grid(alpha=0.3)
    return fig


def tolerance_histograms(rows: list[dict], title: str) -> Figure:
    """Over the builds: background share of the object's place, and the background shift."""
    fig = _figure(9.0, 3.8)
    panels = (("replaced_fraction", "object's place filled by background", WORKS_REPLACED,
               f"pass: at least {percent(WORKS_REPLACED)}"),
              ("shift_median_arcmin", "median background shift [arcmin]", WORKS_SHIFT_ARCMIN,
               f"pass: at most {WORKS_SHIFT_ARCMIN:g} arcmin"))
    axes = fig.subplots(1, 2)
    for ax, (key, label, mark, mark_label) in zip(axes, panels, strict=True):
        values = np.array([r[key] for r in rows if r.get(key) is not None], float)
        if values.size:
            ax.hist(values, bins=20, color="#3c78be")
        ax.axvline(mark, color="#cd3c32", ls="--", label=mark_label)
        ax.set_xlabel(label)
        ax.set_ylabel("builds")
        ax.yaxis.set_major_locator(MaxNLocator(integer=True))
        ax.legend(fontsize=8, frameon=False)
    fig.suptitle(title, fontsize=10)
    return fig


def walk_metrics(rows: list[dict], title: str) -> Figure:
    """Along a walk: what fills the object's place, frame by frame, and the verdict."""
    fig = _figure(9.0, 3.8)
    ax = fig.add_subplot()
    frames = np.array([r["frame"] for r in rows])
    shares = [np.array([np.nan if r[k] is None else r[k] for r in rows], float)
              for k in ("replaced_fraction", "blocked_fraction", "showing_fraction")]
    ax.stackplot(frames, *[np.nan_to_num(s) for s in shares],
                 colors=["#1fb5a8", "#8450d8", "#e8543a"],
                 labels=["background", "dark housing", "the object"])
    ax.axhline(WORKS_REPLACED, color="black", ls="--", lw=1,
               label=f"works: background at least {percent(WORKS_REPLACED)}")
    works = [r["frame"] for r in rows if r["class"] == "works"]
    if works:
        ax.plot(works, [1.02] * len(works), ls="none", marker="v", color=CLASS_COLOURS["works"],
                label="frames where it works")
    ax.set_xlim(frames.min(), max(frames.max(), frames.min() + 1))
    ax.set_ylim(0, 1.06)
    ax.set_xlabel("frame")
    ax.set_ylabel("share of the object's place")
    ax.set_title(title, fontsize=10)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8, frameon=False)
    return fig

