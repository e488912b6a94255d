"""The ``cloakview`` command line.

Every bad input ends in one line on stderr naming the source, the key, the
value and the rule, with exit code 2 and no traceback (``--debug`` shows it).
"""

from __future__ import annotations

import argparse
import json
import sys

from optics.cloak import LensChoice, design_cloak
from optics.errors import InputError, require_finite_positive
from optics.lenses import SHAPES
from optics.materials import MATERIALS, material_by_name
from render.cautions import cautions_text
from render.design_summary import summarise, table


class _UsageError(Exception):
    """A command-line usage error, reported in one line."""


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line and exit 2."""

    def error(self, message):  # noqa: D102 - argparse hook
        raise _UsageError(f"{self.prog}: {message} (see --help)")


def _design(args) -> int:
    diameter = require_finite_positive("--diameter", args.diameter)
    choice = LensChoice(
        ideal=args.ideal,
        material=material_by_name(args.material, "--material"),
        shape=args.shape,
        outer_diameter_mm=require_finite_positive(
            "--outer-diameter", args.outer_diameter or diameter),
        inner_diameter_mm=require_finite_positive(
            "--inner-diameter", args.inner_diameter or diameter),
        min_edge_mm=args.min_edge,
    )
    try:
        design = design_cloak(args.f_outer, args.f_inner, choice, coated=args.coated)
    except InputError as error:
        given = {"outer_diameter": args.outer_diameter, "inner_diameter": args.inner_diameter}
        if error.key in given and given[error.key] is None:
            raise InputError("--diameter", error.value, error.rule) from None
        raise
    summary = summarise(design)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(table(summary))
        print()
        print(cautions_text())
    return 0


_OPTION_NAMES = {"f_outer": "--f-outer", "f_inner": "--f-inner", "outer_diameter":
                 "--outer-diameter", "inner_diameter": "--inner-diameter", "min_edge_mm":
                 "--min-edge", "shape": "--shape"}


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (also used to document the commands)."""
    parser = _Parser(prog="cloakview", description=(
        "Preview a four-lens 'vanishing' exhibit with real lenses: lay it out, render what "
        "visitors see, and measure how well the effect works."))
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    design = commands.add_parser("design", help="lay out four lenses so the device acts as "
                                 "empty space; print positions, spacings and the matrix")
    design.add_argument("--f-outer", type=float, required=True, metavar="MM",
                        help="focal length of the two outer lenses [mm]")
    design.add_argument("--f-inner", type=float, required=True, metavar="MM",
                        help="focal length of the two inner lenses [mm]; shorter than outer")
    design.add_argument("--diameter", type=float, default=50.8, metavar="MM",
                        help="clear diameter of every lens [mm] (default 50.8)")
    design.add_argument("--outer-diameter", type=float, metavar="MM",
                        help="clear diameter of the outer lenses [mm] (default --diameter)")
    design.add_argument("--inner-diameter", type=float, metavar="MM",
                        help="clear diameter of the inner lenses [mm] (default --diameter)")
    design.add_argument("--material", default="soda-lime",
                        help=f"lens material: {', '.join(MATERIALS)}, or ND/VD "
                        "(default soda-lime)")
    design.add_argument("--shape", default="biconvex",
                        help=f"lens shape: {', '.join(SHAPES)}, or a shape factor "
                        "(default biconvex); the far pair is mirrored")
    design.add_argument("--min-edge", type=float, default=2.0, metavar="MM",
                        help="minimum edge thickness of a lens [mm] (default 2)")
    design.add_argument("--ideal", action="store_true",
                        help="use ideal thin lenses (the textbook picture)")
    design.add_argument("--coated", action="store_true",
                        help="anti-reflection coating on every surface")
    design.add_argument("--json", action="store_true", help="print JSON instead of a table")
    design.set_defaults(run=_design)
    return parser


def main(argv=None) -> int:
    """Run the command line; return the exit code."""
    argv = sys.argv[1:] if argv is None else argv
    debug = "--debug" in argv
    try:
        args = build_parser().parse_args(argv)
        return args.run(args)
    except InputError as error:
        if debug:
            raise
        key = _OPTION_NAMES.get(error.key, error.key)
        line = InputError(key, error.value, error.rule, error.source)
        print(f"cloakview: error: {line}", file=sys.stderr)
        return 2
    except _UsageError as error:
        print(f"cloakview: error: command line: {error}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("cloakview: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
