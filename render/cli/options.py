"""The command line's shared vocabulary: one parser class, one syntax per kind of value.

- a point or a box: three numbers with commas, ``X,Y,Z`` or ``W,H,D`` [mm];
- an image size: ``WIDTHxHEIGHT`` [pixels] (the only place an ``x`` separates numbers);
- a sweep range: ``START:STOP:STEP`` [mm], negatives allowed without ``=``;
- a list: comma-separated.
Every option has help text and shows its default; ``--debug`` is accepted anywhere.
"""

from __future__ import annotations

import argparse
import math
import re
import sys

from cloakview.optics.errors import InputError
from cloakview.render.sweeps import sightlines as sl


class UsageError(Exception):
    """A command-line usage error, reported in one line."""


class _HelpFormatter(argparse.HelpFormatter):
    """Help text with the default appended where there is one to show."""

    def _get_help_string(self, action):
        text = action.help or ""
        if ("%(default)" not in text and action.option_strings
                and action.default not in (None, False, argparse.SUPPRESS)):
            text += " (default: %(default)s)"
        return text


class Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line and exit 2.

    Values that start with a minus sign and hold only digits, dots, commas, colons and
    exponents (``-150:150:10``, ``-100,1250,-1500``) are values, not options.
    """

    def __init__(self, *args, **kwargs):
        kwargs.setdefault("formatter_class", _HelpFormatter)
        super().__init__(*args, **kwargs)
        self._negative_number_matcher = re.compile(r"^-[\d.][\d.,:eE+-]*$")
        self.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                          help="show the full traceback on errors")

    def error(self, message):  # noqa: D102 - argparse hook
        raise UsageError(f"{self.prog}: {message} (see --help)")


class RenamedOption(argparse.Action):
    """An old option name, still accepted for one release with a warning on stderr."""

    def __init__(self, option_strings, dest, new_name: str, convert=None, **kwargs):
        self.new_name, self.convert = new_name, convert
        kwargs.setdefault("help", f"old name of {new_name}; accepted until the next release")
        super().__init__(option_strings, dest, **kwargs)

    def __call__(self, parser, namespace, values, option_string=None):  # noqa: D102
        print(f"cloakview: warning: {option_string} is now {self.new_name}; the old name "
              "will be refused in the next release", file=sys.stderr)
        setattr(namespace, self.dest, self.convert(values) if self.convert else values)


def _short(text: str, limit: int = 60) -> str:
    return text if len(text) <= limit else text[:limit] + "..."


def numbers(text: str, count: int, option: str, example: str) -> tuple[float, ...]:
    """``count`` finite numbers from comma-separated ``text``."""
    try:
        values = tuple(float(v) for v in text.split(","))
    except ValueError:
        values = ()
    if len(values) != count or not all(math.isfinite(v) for v in values):
        count_word = {2: "two", 3: "three"}.get(count, str(count))
        raise InputError(option, _short(text), f"must be {count_word} finite numbers with "
                         f"commas, like {example}")
    return values


def point(text: str, option: str) -> tuple[float, float, float]:
    """A point [mm] from ``"x,y,z"``."""
    return numbers(text, 3, option, "0,1250,-1500")


def box(text: str, option: str) -> tuple[float, float, float]:
    """A box size [mm] from ``"w,h,d"``, each 0 or more."""
    values = numbers(text, 3, option, "20,20,200")
    if min(values) < 0:
        raise InputError(option, text, "sizes must be 0 or more mm")
    return values


def size(text: str, option: str = "--size") -> tuple[int, int]:
    """(width, height) in pixels from ``"WxH"``."""
    try:
        width, height = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise InputError(option, _short(text), "must be WIDTHxHEIGHT in pixels, like "
                         "640x360") from None
    if not (16 <= width <= 8192 and 16 <= height <= 8192):
        raise InputError(option, text, "each side must be 16 to 8192 pixels")
    return width, height


def sweep_range(text: str, option: str) -> tuple[float, float, float]:
    """``(start, stop, step)`` [mm] from ``"START:STOP:STEP"``."""
    try:
        values = tuple(float(v) for v in text.split(":"))
    except ValueError:
        values = ()
    if len(values) != 3 or not all(math.isfinite(v) for v in values):
        raise InputError(option, _short(text), "must be START:STOP:STEP in mm, like "
                         "-150:150:10")
    return values


def words(text: str) -> list[str]:
    """Comma-separated items, blanks dropped."""
    return [item.strip() for item in text.split(",") if item.strip()]


def add_scene(parser, viewer: bool = True) -> None:
    """The scene file and the options every scene command shares."""
    parser.add_argument("scene", help="scene file (TOML)")
    if viewer:
        parser.add_argument("--viewer", metavar="NAME",
                            help="which of the scene's viewers (default: the first)")
    parser.add_argument("--ideal", action="store_true",
                        help="ideal thin lenses instead of the scene's real ones")
    parser.add_argument("--allow-outside-paths", action="store_true",
                        help="let the scene use pictures outside its own folder")


def add_out(parser, default: str, what: str) -> None:
    """``--out DIR``: where the command writes, with its default."""
    parser.add_argument("--out", default=default, metavar="DIR",
                        help=f"output folder for {what}")


def add_workers(parser) -> None:
    """``--workers N``, ``--scheduler ADDRESS`` and ``--fresh`` for sweeps."""
    parser.add_argument("--workers", type=int, metavar="N",
                        help="worker processes, at most one per core (default: one per core)")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="run the jobs on Dask distributed: a scheduler's tcp://HOST:PORT, "
                        "or local-cluster for a cluster on this machine (default: "
                        "$CLOAKVIEW_SCHEDULER, else a process pool here); needs "
                        "pip install 'cloakview[cluster]'")
    parser.add_argument("--fresh", action="store_true",
                        help="compute every job again instead of reusing cached results "
                        "(the cache is keyed on the input files' bytes and every option, so "
                        "this is only needed to time a run or after a crash mid-write)")


def reuse_note(result: dict, total: int) -> str:
    """A sentence saying how many results came from the cache."""
    if not result["reused"]:
        return ""
    return (f" {result['reused']} of {total} results were reused from the cache "
            "(--fresh recomputes them).")


def add_json(parser, what: str) -> None:
    """``--json``: print machine-readable output instead of a table."""
    parser.add_argument("--json", action="store_true", help=f"print {what} as JSON")


def add_sight_lines(parser) -> None:
    """The sight-line sweep's options (``sightlines`` and ``report`` share them)."""
    parser.add_argument("--heights", default=",".join(sl.DEFAULT_HEIGHTS), metavar="LIST",
                        help="eye heights of the floor plans: seated, child, women, men or "
                        "numbers in mm")
    parser.add_argument("--lateral-range", metavar="START:STOP:STEP",
                        default="{:g}:{:g}:{:g}".format(*sl.LATERAL_RANGE_MM),
                        help="sideways offsets from the axis [mm]")
    parser.add_argument("--distance-range", metavar="START:STOP:STEP",
                        default="{:g}:{:g}:{:g}".format(*sl.DISTANCE_RANGE_MM),
                        help="distances from the front panel [mm]")
    parser.add_argument("--height-range", metavar="START:STOP:STEP",
                        help="eye heights of the elevation map [mm] (default: 900 to 1800, "
                        "or 400 either side of the axis if wider, in 25 mm steps)")
    parser.add_argument("--size", default="{}x{}".format(*sl.SWEEP_SIZE_PX), metavar="WxH",
                        help="render size of each sight-line point in pixels")


def sight_lines(args) -> dict:
    """Keyword arguments of the sight-line sweep from the parsed options."""
    return {"heights": words(args.heights),
            "lateral_range_mm": sweep_range(args.lateral_range, "--lateral-range"),
            "distance_range_mm": sweep_range(args.distance_range, "--distance-range"),
            "height_range_mm": sweep_range(args.height_range, "--height-range")
            if args.height_range else None,
            "size_px": size(args.size)}


def add_tolerances(parser) -> None:
    """The four +- tolerance options, shared by ``tolerance`` and ``report``."""
    parser.add_argument("--axial", type=float, default=1.0, metavar="MM",
                        help="+- axial position of each lens [mm]")
    parser.add_argument("--decenter", type=float, default=0.5, metavar="MM",
                        help="+- sideways decenter of each lens [mm]")
    parser.add_argument("--decentre", dest="decenter", action=RenamedOption,
                        new_name="--decenter", type=float, metavar="MM")
    parser.add_argument("--tilt", type=float, default=0.5, metavar="DEG",
                        help="+- tilt of each lens [deg]")
    parser.add_argument("--focal", type=float, default=1.0, metavar="PCT",
                        help="+- focal length of each lens [%%], 1 is a usual catalogue "
                        "tolerance")


def tolerances(args) -> dict:
    """The API's keyword arguments for the four tolerance options."""
    return {"axial_mm": args.axial, "decenter_mm": args.decenter, "tilt_deg": args.tilt,
            "focal_pct": args.focal}
