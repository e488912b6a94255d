"""The ``cloakview`` program: builds the parser from the command modules and runs one command.

Every bad input ends in one line on stderr naming the source, the key, the value and the
rule, with exit code 2 and no traceback (``--debug``, anywhere on the line, shows it).
An error raised by the Python API names its keyword; it is reported under the option
that set it.
"""

from __future__ import annotations

import math
import os
import re
import sys

from cloakview.optics.errors import InputError
from cloakview.render.cli import frames, live, motion, planning, report
from cloakview.render.cli.options import Parser, UsageError
from cloakview.render.files import program_version
from cloakview.render.sweeps.jobs import JobsFailed

_UNITS = re.compile(r"_(mm|deg|pct|px)$")


def build_parser() -> Parser:
    """The full argument parser (also used to document the commands)."""
    parser = Parser(prog="cloakview", description=(
        "Preview a four-lens 'vanishing' exhibit with real lenses: lay it out, render what "
        "visitors see, and measure how well the effect works."))
    parser.add_argument("--memory-mb", type=float, metavar="MB",
                        help="memory one render may use [MB], checked before it starts "
                        "(default: $CLOAKVIEW_MEMORY_MB, else half of this machine's RAM)")
    parser.add_argument("--version", action="version",
                        version=f"cloakview {program_version()}",
                        help="print the installed version and exit")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=Parser,
                                     metavar="COMMAND")
    for module in (frames, motion, planning, report, live):
        module.add_commands(commands)
    return parser


def _option_for(parser: Parser, command: str, key: str) -> str:
    """The option of ``command`` that sets the API keyword ``key`` (else ``key`` itself)."""
    sub = next(a for a in parser._subparsers._group_actions).choices[command]
    options = {}
    for action in sub._actions:
        if action.option_strings:
            options.setdefault(action.dest, action.option_strings[-1])
    for dest in (key, _UNITS.sub("", key)):
        if dest in options:
            return options[dest]
    return key


def main(argv=None) -> int:
    """Run the command line; return the exit code."""
    argv = sys.argv[1:] if argv is None else argv
    debug = "--debug" in argv
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if args.memory_mb is not None:
            if not (math.isfinite(args.memory_mb) and args.memory_mb >= 64):
                raise UsageError(f"--memory-mb {args.memory_mb:g}: give at least 64 MB")
            os.environ["CLOAKVIEW_MEMORY_MB"] = str(args.memory_mb)  # sweep workers too
        return args.run(args)
    except InputError as error:
        if debug:
            raise
        if error.source is None:
            error = InputError(_option_for(parser, args.command, error.key), error.value,
                               error.rule)
        print(f"cloakview: error: {error}", file=sys.stderr)
        return 2
    except JobsFailed as error:
        if debug:
            raise
        print(f"cloakview: error: {error}", file=sys.stderr)
        return 1
    except UsageError as error:
        print(f"cloakview: error: command line: {error}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into a pager or head that closed early
        return 0
    except KeyboardInterrupt:
        print("cloakview: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
