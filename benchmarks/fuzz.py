"""Fuzz the command line: N mutated cases, then the count of each outcome (see tests/fuzzing.py).

Usage: python benchmarks/fuzz.py [--cases N] [--start SEED] [--show K]
Prints one line per failing case (seed, command, what went wrong) and the totals. Runs in
a temporary folder with its own sweep cache; nothing is written elsewhere.
"""

from __future__ import annotations

import argparse
import collections
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from fuzzing import OUTCOMES, judge, make_case  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=1000)
    parser.add_argument("--start", type=int, default=0, help="first seed")
    parser.add_argument("--show", type=int, default=20, help="failing cases to print")
    args = parser.parse_args()
    counts = collections.Counter()
    by_command = collections.Counter()
    shown = 0
    started = time.perf_counter()
    with tempfile.TemporaryDirectory() as scratch:
        os.environ["CLOAKVIEW_CACHE"] = str(Path(scratch) / "cache")
        for seed in range(args.start, args.start + args.cases):
            folder = Path(scratch) / f"case{seed}"
            folder.mkdir()
            argv = make_case(folder, seed)
            outcome, detail = judge(folder, argv)
            counts[outcome] += 1
            by_command[argv[0]] += 1
            if outcome not in ("ok", "refused") and shown < args.show:
                shown += 1
                last = detail.strip().splitlines()[-1] if detail.strip() else ""
                print(f"seed {seed}: {outcome}: cloakview {' '.join(argv)[:160]}\n    {last[:300]}",
                      flush=True)
            if (seed - args.start + 1) % 500 == 0:
                print(f"... {seed - args.start + 1} cases, {dict(counts)}", file=sys.stderr,
                      flush=True)
            for path in sorted(folder.rglob("*"), reverse=True):
                path.unlink() if path.is_file() or path.is_symlink() else path.rmdir()
            folder.rmdir()
    print(f"{args.cases} cases in {time.perf_counter() - started:.0f} s "
          f"(commands: {dict(sorted(by_command.items()))})")
    for outcome in OUTCOMES:
        print(f"{outcome:>15}: {counts[outcome]}")


if __name__ == "__main__":
    main()
