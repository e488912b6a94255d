"""The ``report`` command: a proposal folder with index.html, pictures, SVG and JSON."""

from __future__ import annotations

import dataclasses
import time
from pathlib import Path

import numpy as np

from optics.errors import InputError
from render import report as rp
from render import sightlines as sl
from render import walk
from render import zone as zn
from render.cautions import CAUTIONS
from render.cli_plan import add_tolerance_options, tolerance_analysis
from render.composite import TexturePyramids
from render.design_summary import summarise
from render.images import write_json, write_png, write_text
from render.inventory import load_inventory
from render.outputs import VERSION
from render.progress import Progress
from render.scene import load_scene
from render.sweeps import run_jobs
from render.tolerance import Tolerances, histogram_image
from render.views import render_viewer


def _report(args) -> int:
    started = time.perf_counter()
    scene = load_scene(args.scene, allow_outside_paths=args.allow_outside_paths)
    prices = {}
    if args.inventory:
        if not (args.outer and args.inner):
            raise InputError("--inventory", args.inventory, "give --outer ID and --inner ID "
                             "too (ids from the inventory, e.g. from cloakview choose)")
        items = {i.id: i for i in load_inventory(args.inventory)}
        for key, ident in (("--outer", args.outer), ("--inner", args.inner)):
            if ident not in items:
                raise InputError(key, ident, f"not in {args.inventory}; ids: "
                                 f"{', '.join(items)}")
        scene = rp.scene_with_lenses(scene, items[args.outer].lens, items[args.inner].lens)
        prices = {"outer": items[args.outer].price, "inner": items[args.inner].price}
    if scene.design is None:
        raise InputError("device", str(args.scene), "the report needs a device laid out by the "
                         "designer (f_outer_mm/f_inner_mm) or --inventory with --outer/--inner")
    out = Path(args.out)
    progress = Progress(7, "report", enabled=True)
    design = summarise(scene.design)
    for entry in design["lenses"]:
        entry["price"] = prices.get("outer" if "outer" in entry["label"] else "inner")
    cost = 2 * (prices["outer"] + prices["inner"]) if prices else None
    write_text(out / "layout.svg", rp.layout_svg(design, scene))
    progress("layout")
    pyramids = TexturePyramids(scene)
    views = []
    for viewer in scene.viewers[:6]:
        r = render_viewer(scene, viewer, pyramids, ("cloaked",))
        name = f"view_{viewer.name}.png"
        write_png(out / name, r.images["cloaked"])
        shift = r.metrics["background_shift_arcmin"]
        views.append({"name": viewer.name, "image": name, "eye_mm": list(viewer.eye_mm),
                      "hidden_fraction": r.metrics["hidden_fraction"],
                      "background_ssim": r.metrics["background_ssim"],
                      "shift_median_arcmin": shift and shift["median"],
                      "transmittance": r.metrics["transmittance"],
                      "verdict": r.metrics["verdict"]})
    progress("visitor views")
    base = scene.viewers[0]
    origin, _, _, ez = scene.placement.axes()
    distance = float(scene.housing.panel_z_mm - scene.placement.to_device(
        np.asarray(base.eye_mm))[2])
    strip, walk_rows = [], []
    small = dataclasses.replace(base, width_px=240, height_px=135)
    for eye in walk.straight_path(scene, distance, base.eye_mm[1], 120.0, 5):
        r = render_viewer(scene, walk.frame_viewer(scene, small, eye), pyramids, ("cloaked",))
        strip.append(r.images["cloaked"])
        walk_rows.append({"eye_x_mm": float(eye[0]), "verdict": r.metrics["verdict"]})
    write_png(out / "walk_strip.png", np.concatenate(strip, axis=1))
    progress("walk-by")
    quick = scene.at_design_wavelength()
    state = (quick, TexturePyramids(quick))
    axis = scene.placement.axis_height_mm
    xs, ds = sl.grid(-60, 60, 10, "x"), sl.grid(600, 3000, 200, "d")
    hs = sl.grid(axis - 200, axis + 200, 25, "h")
    jobs = sl.floor_jobs(xs, ds, [axis], (96, 54)) + sl.elevation_jobs(hs, ds, (96, 54))
    rows = run_jobs(sl.measure_point, jobs, out / ".jobs" / "sightlines", lambda: state,
                    workers=1)
    floor, side = rows[:len(xs) * len(ds)], rows[len(xs) * len(ds):]
    write_png(out / "sightlines.png", sl.floor_plan_image(scene, floor, xs, ds, axis,
                                                          f"{scene.title}: where it works"))
    write_png(out / "elevation.png", sl.elevation_image(scene, side, hs, ds,
                                                        f"{scene.title}: eye heights"))
    advice = sl.recommendation({f"{axis:.0f} mm": floor}, side, axis)
    progress("sight lines")
    zone = zn.cloaked_zone(scene, np.array([base.eye_mm]))
    rings = zn.largest_rings(zone, scene)
    write_png(out / "zone.png", zn.zone_image(zone, scene, rings, f"{scene.title}: cloaked "
                                              f"zone for '{base.name}'"))
    progress("cloaked zone")
    tol = Tolerances(args.axial, args.decentre, args.tilt, args.focal)
    summary, builds = tolerance_analysis(args.scene, tol, args.builds, 1, (128, 72),
                                         out / ".jobs" / "tolerance", setup=lambda: state)
    write_png(out / "histograms.png", histogram_image(
        builds, f"{args.builds} builds: yield {summary['yield']:.0%}"))
    progress("tolerances")
    hidden = views[0]["hidden_fraction"]
    data = {
        "title": scene.title, "version": VERSION,
        "summary": (f"This proposal previews a four-lens 'vanishing' exhibit: lenses of "
                    f"{design['f_outer_mm']:.0f} mm and {design['f_inner_mm']:.0f} mm focal "
                    f"length on a {design['length_mm'] / 1000:.2f} m rail make the view "
                    "through them look like empty space, so an object placed in the ring "
                    "around the axis inside the device disappears. From the design viewing "
                    f"point ('{base.name}'), {_pct(hidden)} of the object vanishes; "
                    f"the pages below show what visitors of different heights see, from "
                    "where it works, what can be hidden, and how precisely it must be built."),
        "design": design, "lens_cost": cost, "views": views, "walk": walk_rows,
        "walk_distance_mm": distance, "recommendation": advice, "works_definition":
        "at least 90 % of the object hidden, background seen through the lenses, median "
        "background shift at most 2 arcmin",
        "rings": [dict(dataclasses.asdict(r), height_mm=r.height_mm, length_mm=r.length_mm)
                  for r in rings],
        "tolerance": summary,
        "assumptions": [
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
        ],
        "cautions": list(CAUTIONS),
        "seconds": round(time.perf_counter() - started, 2),
    }
    write_json(out / "report.json", data)
    write_text(out / "index.html", rp.page(data))
    progress("page")
    print(f"Report written to {out / 'index.html'} in {data['seconds']:.1f} s.")
    return 0


def _pct(value):
    return "-" if value is None else f"{value:.0%}"


def add_commands(commands) -> None:
    """Register the report command."""
    r = commands.add_parser("report", help="proposal folder: index.html with layout drawing "
                            "(also SVG), bill of lenses, visitor views, walk-by strip, "
                            "sight lines, cloaked zone, tolerances and cautions")
    r.add_argument("scene", help="scene file (TOML)")
    r.add_argument("--inventory", help="lens inventory CSV, to build the device from it")
    r.add_argument("--outer", metavar="ID", help="inventory id of the outer lenses")
    r.add_argument("--inner", metavar="ID", help="inventory id of the inner lenses")
    add_tolerance_options(r)
    r.add_argument("--builds", type=int, default=20, help="builds per tolerance setting")
    r.add_argument("--allow-outside-paths", action="store_true")
    r.add_argument("--out", default="cloakview-report", metavar="DIR")
    r.set_defaults(run=_report)
