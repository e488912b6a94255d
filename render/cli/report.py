"""The ``report`` command: a proposal folder with index.html, pictures, SVG and JSON."""

from __future__ import annotations

from pathlib import Path

from cloakview.render.api import report as api
from cloakview.render.cli import options as opt
from cloakview.render.planning import tolerance as tl


def _report(args) -> int:
    data = api.report(args.scene, out=args.out, inventory=args.inventory, outer=args.outer,
                      inner=args.inner, **opt.tolerances(args), builds=args.builds,
                      **opt.sight_lines(args), workers=args.workers,
                      allow_outside_paths=args.allow_outside_paths, progress=True)
    print(f"Report written to {Path(args.out) / 'index.html'} in {data['seconds']:.1f} s.")
    return 0


def add_commands(commands) -> None:
    """Register the report command."""
    r = commands.add_parser("report", help="proposal folder: index.html with layout drawing "
                            "(also SVG), bill of lenses, visitor views, walk-by strip, "
                            "sight lines, cloaked zone, tolerances and cautions")
    r.add_argument("scene", help="scene file (TOML); its first viewer is the design viewer")
    r.add_argument("--inventory", metavar="CSV",
                   help="lens inventory, to build the device from two of its lenses "
                   "(with --outer and --inner)")
    r.add_argument("--outer", metavar="ID", help="inventory id of the outer lenses (needs "
                   "--inventory)")
    r.add_argument("--inner", metavar="ID", help="inventory id of the inner lenses (needs "
                   "--inventory)")
    opt.add_tolerances(r)
    r.add_argument("--builds", type=int, default=tl.DEFAULT_BUILDS, metavar="N",
                   help="builds per tolerance setting, 1-10000")
    opt.add_sight_lines(r)
    opt.add_workers(r)
    r.add_argument("--allow-outside-paths", action="store_true",
                   help="let the scene use pictures outside its own folder")
    opt.add_out(r, "cloakview-report", "the proposal")
    r.set_defaults(run=_report)
