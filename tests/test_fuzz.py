"""Fuzzing the command line: every run ends in exit 0 or one clean line, and writes nothing astray.

The cases come from ``tests/fuzzing.py`` (mutated scene files, pictures, inventories, path
files and option values); hypothesis picks the seeds. ``benchmarks/fuzz.py`` runs the same
fuzzer for thousands of cases.
"""

import os
import tempfile
from pathlib import Path

from fuzzing import judge, make_case
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st


@settings(max_examples=200, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(min_value=0, max_value=2**31))
def test_every_run_ends_cleanly_and_writes_only_into_out(seed):
    with tempfile.TemporaryDirectory() as scratch:
        folder = Path(scratch) / "case"
        folder.mkdir()
        argv = make_case(folder, seed)
        outcome, detail = judge(folder, argv)
        assert outcome in ("ok", "refused"), (seed, argv, detail)
        assert os.listdir(scratch) == ["case"]  # nothing beside the case folder either
