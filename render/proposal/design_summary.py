"""A laid-out cloak as numbers for people: a JSON-ready dict and a text table."""

from __future__ import annotations

import math

from cloakview.optics.cloak import DESIGN_WAVELENGTHS_NM, CloakDesign, through_window_half_angle_deg
from cloakview.optics.lenses import ThickLens
from cloakview.optics.materials import D_LINE_NM

#: Eye distances [mm] at which the through-window is reported.
WINDOW_EYE_DISTANCES_MM = (300.0, 500.0, 1000.0, 2000.0)


def _radius(r: float):
    return None if math.isinf(r) else r


def summarise(design: CloakDesign) -> dict:
    """Everything the design command reports, in mm, g and degrees."""
    system = design.system
    lenses, materials = [], {}
    for placed in system.lenses:
        lens = placed.lens
        cp = placed.cardinal_points()
        entry = {
            "label": placed.label,
            "position_mm": placed.z_mm,
            "back_vertex_mm": placed.back_z_mm,
            "rail_mm": placed.center_z_mm,
            "focal_length_mm": cp.efl_mm,
            "bfl_mm": cp.bfl_mm,
            "diameter_mm": lens.diameter_mm,
            "center_thickness_mm": lens.center_thickness_mm,
            "edge_thickness_mm": lens.edge_thickness_mm,
            "mass_g": lens.mass_g(),
        }
        if isinstance(lens, ThickLens):
            entry.update(r1_mm=_radius(lens.r1_mm), r2_mm=_radius(lens.r2_mm),
                         material=lens.material.name)
            glass = lens.material
            materials[glass.name] = {"n_d": float(glass.index(D_LINE_NM)),
                                     "v_d": glass.abbe_number(),
                                     "density_g_cm3": glass.density_g_cm3,
                                     "source": glass.source}
        else:
            entry.update(material="ideal")
        lenses.append(entry)
    abcd = {f"{w:.1f}": system.abcd(w).tolist() for w in DESIGN_WAVELENGTHS_NM}
    return {
        "f_outer_mm": design.f_outer_mm,
        "f_inner_mm": design.f_inner_mm,
        "outer_spacing_mm": design.outer_spacing_mm,
        "inner_spacing_mm": design.inner_spacing_mm,
        "thin_lens_inner_spacing_mm": design.thin_inner_spacing_mm,
        "inner_gap_shift_mm": design.inner_gap_shift_mm,
        "vertex_gaps_mm": design.vertex_gaps_mm(),
        "length_mm": design.length_mm,
        "abcd": system.abcd().tolist(),
        "abcd_by_wavelength_nm": abcd,
        "free_space_error": design.free_space_error(),
        "total_mass_g": sum(e["mass_g"] for e in lenses),
        "through_window_deg": {
            f"{d:g}": through_window_half_angle_deg(design, d) for d in WINDOW_EYE_DISTANCES_MM
        },
        "lenses": lenses,
        "materials": materials,
    }


def _fmt(value, digits=2):
    return "-" if value is None else f"{value:.{digits}f}"


def table(summary: dict) -> str:
    """The summary as a plain-text report."""
    rows = [
        f"Four-lens cloak: f_outer {summary['f_outer_mm']:g} mm, "
        f"f_inner {summary['f_inner_mm']:g} mm",
        f"Device length (first to last vertex): {summary['length_mm']:.2f} mm; "
        f"lens mass {summary['total_mass_g']:.0f} g ({summary['total_mass_g'] / 1000:.2f} kg) "
        "for all four",
        *(f"Material {name}: n_d {m['n_d']:.4f}, V_d {m['v_d']:.1f}, density "
          f"{m['density_g_cm3']:.2f} g/cm3 ({m['source']})"
          for name, m in summary.get("materials", {}).items()),
        f"Spacings between principal planes: outer {summary['outer_spacing_mm']:.3f} mm, "
        f"inner {summary['inner_spacing_mm']:.3f} mm "
        f"(thin-lens rule {summary['thin_lens_inner_spacing_mm']:.3f} mm, "
        f"moved {summary['inner_gap_shift_mm']:+.3f} mm)",
        "Air gaps between vertices: "
        + ", ".join(f"{g:.3f}" for g in summary["vertex_gaps_mm"]) + " mm",
        "",
        f"{'lens':<12}{'vertex':>9}{'rail':>9}{'EFL':>9}{'BFL':>9}{'diam':>7}"
        f"{'centre':>8}{'edge':>7}{'R1':>9}{'R2':>9}{'mass g':>9}",
    ]
    for e in summary["lenses"]:
        rows.append(
            f"{e['label']:<12}{e['position_mm']:>9.2f}{e['rail_mm']:>9.2f}"
            f"{e['focal_length_mm']:>9.2f}{e['bfl_mm']:>9.2f}{e['diameter_mm']:>7.1f}"
            f"{e['center_thickness_mm']:>8.2f}{e['edge_thickness_mm']:>7.2f}"
            f"{_fmt(e.get('r1_mm')):>9}{_fmt(e.get('r2_mm')):>9}{e['mass_g']:>9.1f}"
        )
    rows += ["", "All positions in mm from the viewer-side vertex of L1; rail = lens centre.",
             "", "System matrix, first to last vertex (height mm, angle rad):"]
    for wavelength, m in summary["abcd_by_wavelength_nm"].items():
        rows.append(f"  {wavelength} nm  A {m[0][0]:.9f}  B {m[0][1]:.4f}  "
                    f"C {m[1][0]:+.3e}  D {m[1][1]:.9f}")
    rows.append(f"  free space over {summary['length_mm']:.2f} mm would be A 1, "
                f"B {summary['length_mm']:.4f}, C 0, D 1 "
                f"(largest deviation at 587.6 nm: {summary['free_space_error']:.1e})")
    rows += ["", "Through-window (half-angle seen by an on-axis eye through all four lenses):"]
    rows.append("  " + ", ".join(f"{float(d) / 1000:g} m: {a:.2f} deg"
                                 for d, a in summary["through_window_deg"].items()))
    return "\n".join(rows)
