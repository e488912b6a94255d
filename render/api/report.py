"""Public function for the proposal folder: ``index.html`` with its pictures, SVG and JSON."""

from __future__ import annotations

import dataclasses
import datetime
import time
from pathlib import Path

import numpy as np
from cloakview.optics.errors import InputError
from cloakview.render import outfolder
from cloakview.render.api.planning import check_tolerances
from cloakview.render.cautions import CAUTIONS
from cloakview.render.files import (
    figure_bytes,
    png_bytes,
    program_version,
    run_record,
    write_json,
    write_text,
)
from cloakview.render.frame.composite import TexturePyramids
from cloakview.render.frame.metrics import WORKS_DEFINITION, percent
from cloakview.render.frame.overlays import caption, inset_view, view_caption
from cloakview.render.frame.views import render_viewer
from cloakview.render.planning import tolerance as tl
from cloakview.render.planning.inventory import load_inventory
from cloakview.render.progress import Progress
from cloakview.render.proposal import charts
from cloakview.render.proposal.design_summary import summarise
from cloakview.render.proposal.layout import layout_svg
from cloakview.render.proposal.page import PAPERS, page
from cloakview.render.proposal.pdf import print_pdf
from cloakview.render.scene.loader import load_scene
from cloakview.render.scene.relayout import scene_with_lenses
from cloakview.render.sweeps import sightlines as sl
from cloakview.render.sweeps import walk as wk
from cloakview.render.sweeps import zone as zn
from cloakview.render.sweeps.jobs import fingerprint, local_pool, run_jobs

#: The numbers of each visitor view the report keeps.
REPORTED = ("replaced_fraction", "blocked_fraction", "showing_fraction", "hidden_fraction",
            "window_deg", "window_panel_mm", "object_outer_deg", "background_ssim",
            "transmittance", "color_fringe_arcmin", "verdict", "advice")

ASSUMPTIONS = (
    "Geometric optics: exact ray tracing through spherical lens surfaces, Fresnel "
    "reflection losses, dispersion at 486, 588 and 656 nm; no diffraction, no "
    "scattering, no ghost reflections.",
    "Visitors are modelled as one eye (a pinhole unless a pupil is given); two-eye "
    "viewing is checked separately with 'cloakview eyes'.",
    "Layers are flat pictures perpendicular to the axis; a solid object is "
    "approximated by its picture at one depth.",
    "Tolerances: each lens's errors drawn uniformly within the stated limits; "
    "focal-length errors scale both radii.",
    "Lens data come from the scene file or the inventory; check them against the "
    "supplier's drawings before ordering.",
)


def _with_inventory_lenses(scene, inventory, outer, inner):
    """The scene rebuilt from two inventory lenses, and their items by role (or none)."""
    if inventory is None:
        if outer or inner:
            raise InputError("outer" if outer else "inner", outer or inner, "needs an "
                             "inventory (the ids are looked up in it)")
        return scene, {}
    if not (outer and inner):
        raise InputError("inventory", str(inventory), "give the outer and inner lens ids "
                         "too (ids from the inventory, e.g. from cloakview choose)")
    items = {i.id: i for i in load_inventory(inventory)}
    for key, ident in (("outer", outer), ("inner", inner)):
        if ident not in items:
            raise InputError(key, ident, f"not in {inventory}; ids: {', '.join(items)}")
    scene = scene_with_lenses(scene, items[outer].lens, items[inner].lens)
    return scene, {"outer": items[outer], "inner": items[inner]}


def report_state(scene_path: str, allow_outside: bool, inventory: str | None,
                 outer: str | None, inner: str | None):
    """Per-worker state of the report's sweeps: its scene at the design wavelength, pyramids.

    The same device as the report's (rebuilt from inventory lenses where given), so the
    sweeps can run on the process pool.
    """
    scene = load_scene(scene_path, allow_outside_paths=allow_outside)
    quick = _with_inventory_lenses(scene, inventory, outer, inner)[0].at_design_wavelength()
    return quick, TexturePyramids(quick)


def bill_of_lenses(design: dict, items: dict) -> dict:
    """Lines of the bill: per part (outer, inner) the inventory id, quantity, mass and price.

    ``items`` maps ``outer``/``inner`` to inventory items (empty without an inventory:
    then ids and prices are None). Masses [g] come from the design's lenses.
    """
    lines = []
    for part in ("outer", "inner"):
        lenses = [e for e in design["lenses"] if part in e["label"]]
        item = items.get(part)
        unit_price = item.price if item else None
        lines.append({"part": part, "id": item.id if item else None, "quantity": len(lenses),
                      "focal_length_mm": lenses[0]["focal_length_mm"],
                      "diameter_mm": lenses[0]["diameter_mm"],
                      "material": lenses[0].get("material", "-"),
                      "unit_mass_g": lenses[0]["mass_g"],
                      "line_mass_g": sum(e["mass_g"] for e in lenses),
                      "unit_price": unit_price,
                      "line_total": None if unit_price is None else unit_price * len(lenses)})
    prices = [line["line_total"] for line in lines]
    return {"lines": lines, "total_mass_g": sum(line["line_mass_g"] for line in lines),
            "total_price": None if None in prices else sum(prices)}


def _walk_strip(scene, base, pyramids, distance):
    """Five frames of a walk past the panel, each labelled with its sideways offset."""
    frames, rows = [], []
    small = dataclasses.replace(base, width_px=240, height_px=135)
    for eye in wk.straight_path(scene, distance, base.eye_mm[1], 120.0, 5):
        r = render_viewer(scene, wk.frame_viewer(scene, small, eye), pyramids, ("cloaked",))
        offset = float(scene.placement.to_device(eye)[0])
        frames.append(caption(r.images["cloaked"], [f"eye {offset:+.0f} mm: "
                                                    f"{r.metrics['verdict_class']}"]))
        rows.append({"eye_x_mm": float(eye[0]), "verdict": r.metrics["verdict"]})
    return np.concatenate(frames, axis=1), rows


def report(scene_path: str | Path, *, out: str | Path, inventory: str | Path | None = None,
           outer: str | None = None, inner: str | None = None, axial_mm: float = 1.0,
           decenter_mm: float = 0.5, tilt_deg: float = 0.5, focal_pct: float = 1.0,
           builds: int = tl.DEFAULT_BUILDS, heights=sl.DEFAULT_HEIGHTS,
           lateral_range_mm=sl.LATERAL_RANGE_MM, distance_range_mm=sl.DISTANCE_RANGE_MM,
           height_range_mm=None, size_px: tuple[int, int] = sl.SWEEP_SIZE_PX,
           project: str | None = None, author: str | None = None,
           revision: str | None = None, date: str | None = None, paper: str = "a4",
           currency: str | None = None, pdf: bool = True, workers: int | None = None,
           allow_outside_paths: bool = False, progress: bool = False) -> dict:
    """Write a proposal folder and return the dictionary behind its page (``report.json``).

    The folder holds ``index.html`` (one self-contained page, every picture embedded),
    ``report.pdf`` (that page printed by headless Chromium, when installed),
    ``report.json``, ``layout.svg`` (full size, in mm) and ``run.json``.

    Parameters
    ----------
    scene_path : path
        The scene file; its first viewer is the design viewer.
    out : path
        The report folder.
    inventory, outer, inner : optional
        Build the device from these inventory lenses (ids) instead of the scene's.
    axial_mm, decenter_mm, tilt_deg, focal_pct : float
        Build tolerances (+-) for the tolerance section [mm, mm, deg, %].
    builds : int
        Builds per tolerance setting (1 to 10000).
    heights, lateral_range_mm, distance_range_mm, height_range_mm, size_px
        The sight-line sweep, as for :func:`cloakview.sightlines` (the same defaults, so
        the report and ``cloakview sightlines`` give the same numbers).
    project, author, revision, date : str, optional
        The title block (project defaults to the scene's title, date to today, ISO 8601).
    paper : {"a4", "letter"}
        Printed page size.
    currency : str, optional
        Currency code of the inventory's prices, shown in the bill (none is guessed).
    pdf : bool
        Print ``report.pdf`` with headless Chromium.
    workers : int, optional
        Processes for the sweeps (default one per core).
    """
    started = time.perf_counter()
    tol = check_tolerances(axial_mm, decenter_mm, tilt_deg, focal_pct)
    if not 1 <= builds <= 10000:
        raise InputError("builds", builds, "must be 1 to 10000")
    if paper not in PAPERS:
        raise InputError("paper", paper, f"choose {' or '.join(PAPERS)}")
    title_block = _title_block(project, author, revision, date)
    scene = load_scene(scene_path, allow_outside_paths=allow_outside_paths)
    scene, items = _with_inventory_lenses(scene, inventory, outer, inner)
    title_block["project"] = title_block["project"] or scene.title
    axis = scene.placement.axis_height_mm
    named = sl.named_heights(heights)
    xs, ds, hs = sl.grids(lateral_range_mm, distance_range_mm, height_range_mm, axis)
    if scene.design is None:
        raise InputError("device", str(scene_path), "the report needs a device laid out by the "
                         "designer (f_outer_mm/f_inner_mm) or inventory lenses (outer/inner)")
    inputs = [*scene.sources, *([Path(inventory)] if inventory else [])]
    with outfolder.output_folder(out, inputs) as out:
        bar = Progress(8, "report", enabled=progress)
        pictures = {}
        design = summarise(scene.design)
        write_text(out / "layout.svg", layout_svg(design, scene))
        pictures["layout"] = ("image/svg+xml",
                              layout_svg(design, scene, with_eye=False).encode("utf-8"))
        bar("layout")
        pyramids = TexturePyramids(scene)
        views = []
        for viewer in scene.viewers[:6]:
            r = render_viewer(scene, viewer, pyramids, ("cloaked",))
            image = view_caption(inset_view(r.images["cloaked"], r), viewer, r.metrics)
            name = f"view_{viewer.name}"
            pictures[name] = ("image/png", png_bytes(image))
            shift = r.metrics["background_shift_arcmin"]
            views.append({"name": viewer.name, "image": name, "eye_mm": list(viewer.eye_mm),
                          **{key: r.metrics[key] for key in REPORTED},
                          "shift_median_arcmin": shift and shift["median"]})
        bar("visitor views")
        base = scene.viewers[0]
        distance = float(scene.housing.panel_z_mm - scene.placement.to_device(
            np.asarray(base.eye_mm))[2])
        strip, walk_rows = _walk_strip(scene, base, pyramids, distance)
        pictures["walk_strip"] = ("image/png", png_bytes(strip))
        bar("walk-by")
        # The same grids, render size and heights as `cloakview sightlines` by default, so
        # one scene gives one set of numbers.
        context = fingerprint([*scene.sources, *([inventory] if inventory else [])],
                              outer=outer, inner=inner, allow_outside=allow_outside_paths)
        setup_args = (str(scene_path), allow_outside_paths,
                      str(inventory) if inventory else None, outer, inner)

        def run(jobs, label):
            return run_jobs(sl.measure_point, jobs, "sightlines", report_state, setup_args,
                            context=context, files=inputs, workers=workers, pool=pool)[0]

        with local_pool(report_state, setup_args, workers) as pool:  # one start, two sweeps
            found = sl.sweep(run, named, xs, ds, hs, size_px, axis)
        floor_plans = []
        for name, h in named.items():
            key = f"floor_{name.replace(' ', '')}"
            pictures[key] = _svg(charts.floor_plan(scene, found["floor"][name], xs, ds, h,
                                                   f"{scene.title}: where it works ({name})",
                                                   found["spot"]))
            floor_plans.append({"name": name, "height_mm": h, "image": key})
        pictures["elevation"] = _svg(charts.elevation(scene, found["elevation"], hs, ds,
                                                      f"{scene.title}: eye heights",
                                                      found["spot"]))
        bar("sight lines")
        zone_map = zn.cloaked_zone(scene, np.array([base.eye_mm]))
        rings = zn.largest_rings(zone_map, scene)
        pictures["zone"] = _svg(charts.zone_drawing(
            zone_map, scene, rings, f"{scene.title}: cloaked zone for '{base.name}'"))
        bar("cloaked zone")
        summary, build_rows, _ = tl.analyse(tol, builds, 1, tl.BUILD_SIZE_PX, report_state,
                                            setup_args, context=context, files=inputs,
                                            workers=workers)
        low, high = summary["yield_interval_95"]
        pictures["histograms"] = _svg(charts.tolerance_histograms(
            build_rows, f"{scene.title}: {builds} builds, yield {percent(summary['yield'])} "
            f"(95 % interval {percent(low)} to {percent(high)})"))
        bar("tolerances")
        data = {
            "title": scene.title, "version": program_version(), "title_block": title_block,
            "summary": (f"This proposal previews a four-lens 'vanishing' exhibit: lenses of "
                        f"{design['f_outer_mm']:.0f} mm and {design['f_inner_mm']:.0f} mm focal "
                        f"length on a {design['length_mm'] / 1000:.2f} m rail bend light as "
                        "empty space would, so an object in the ring around the axis inside "
                        "the device drops out of sight; background takes its place only where "
                        "the object lies inside the through-window. From the design viewing "
                        f"point ('{base.name}'), background fills "
                        f"{percent(views[0]['replaced_fraction'])} of the object's place, dark "
                        f"housing {percent(views[0]['blocked_fraction'])} and the object itself "
                        f"{percent(views[0]['showing_fraction'])} (verdict: "
                        f"{views[0]['verdict']}). The pages below show what visitors of "
                        "different heights see, from where it works, what can be hidden, and "
                        "how precisely it must be built."),
            "design": design, "bill": bill_of_lenses(design, items), "currency": currency,
            "views": views, "walk": walk_rows,
            "walk_distance_mm": distance, "recommendation": found["recommendation"],
            "spot": found["spot"], "floor_plans": floor_plans,
            "works_definition": WORKS_DEFINITION.removeprefix("works: "),
            "rings": [dict(dataclasses.asdict(r), height_mm=r.height_mm, length_mm=r.length_mm)
                      for r in rings],
            "tolerance": summary, "assumptions": list(ASSUMPTIONS), "cautions": list(CAUTIONS),
        }
        write_text(out / "index.html", page(data, pictures, paper))
        bar("page")
        data["pdf"] = print_pdf(out / "index.html", out / "report.pdf") if pdf else \
            "report.pdf not asked for"
        bar("pdf")
        data["seconds"] = round(time.perf_counter() - started, 2)
        write_json(out / "report.json", data)
        run_record(out, "report", {"scene": str(scene_path), "inventory": str(inventory)
                                   if inventory else None, "outer": outer, "inner": inner,
                                   **dataclasses.asdict(tol), "builds": builds,
                                   "paper": paper, "currency": currency, **title_block},
                   started)
        return data


def _svg(figure) -> tuple[str, bytes]:
    return "image/svg+xml", figure_bytes(figure, "svg")


def _title_block(project, author, revision, date) -> dict:
    """Title-block fields, each a short single line; the date defaults to today."""
    fields = {"project": project, "author": author, "revision": revision,
              "date": date or datetime.date.today().isoformat()}
    for key, value in fields.items():
        if value is not None and (len(value) > 120 or "\n" in value or "\r" in value):
            raise InputError(key, value, "must be one line of at most 120 characters")
    return fields
