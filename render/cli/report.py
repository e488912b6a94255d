"""The ``report`` command: a proposal folder with index.html, pictures, SVG and JSON."""

from __future__ import annotations

from pathlib import Path

from cloakview.render.api import report as api
from cloakview.render.cli import options as opt
from cloakview.render.planning import tolerance as tl
from cloakview.render.proposal.page import PAPERS


def _report(args) -> int:
    data = api.report(args.scene, out=args.out, inventory=args.inventory, outer=args.outer,
                      inner=args.inner, **opt.tolerances(args), builds=args.builds,
                      **opt.sight_lines(args), project=args.project, author=args.author,
                      revision=args.revision, date=args.date, paper=args.paper,
                      currency=args.currency, pdf=not args.no_pdf, workers=args.workers,
                      allow_outside_paths=args.allow_outside_paths, progress=True)
    print(f"Report written to {Path(args.out) / 'index.html'} in {data['seconds']:.1f} s.")
    print(data["pdf"] or f"Printed to {Path(args.out) / 'report.pdf'}.")
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
    r.add_argument("--project", help="project name for the title block (default: the "
                   "scene's title)")
    r.add_argument("--author", help="author for the title block")
    r.add_argument("--revision", help="revision for the title block, e.g. B or 2026-12-02a")
    r.add_argument("--date", help="date for the title block (default: today, YYYY-MM-DD)")
    r.add_argument("--paper", choices=sorted(PAPERS), default="a4",
                   help="printed page size of the page and the PDF")
    r.add_argument("--currency", metavar="CODE", help="currency of the inventory's prices, "
                   "shown in the bill (none is guessed)")
    r.add_argument("--no-pdf", action="store_true", help="do not print report.pdf")
    opt.add_sight_lines(r)
    opt.add_workers(r)
    r.add_argument("--allow-outside-paths", action="store_true",
                   help="let the scene use pictures outside its own folder")
    opt.add_out(r, "cloakview-report", "the proposal")
    r.set_defaults(run=_report)
