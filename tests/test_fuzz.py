"""The fuzz run of the test suite: 200 damaged boards through the command line, fixed seed.

Each case is a demo board, a real board from ../shared/realboards (inspected only here: a check
of one takes up to half a minute; left out when the folder is absent) or a loopcheck.synth board,
copied and damaged one to three ways (see benchmarks/fuzz_boards.py for the kinds), then run
through ``loopcheck check`` / ``inspect`` / the zip form. A case fails on a traceback, an exit
code other than 0/1/2 (3 only with an internal-error message naming the module; such cases are
listed as warnings: bugs to fix, though the contract holds), more than 60 s
of CPU, anything written beside the inputs, temporary files left behind, or a report written on
exit 2. The 10,000-case run is ``python3 benchmarks/fuzz_boards.py --seed S --count 10000``.

Reproduce a failing case of this run:
    python3 benchmarks/fuzz_boards.py --seed 2026 --only N --no-real-check --subprocess-every 25 --show
"""

from __future__ import annotations

import importlib.util
import os
import sys
import warnings
from pathlib import Path

import pytest

REPO = Path(__file__).parents[1]
SEED = 2026
COUNT = 200

pytestmark = pytest.mark.fuzz


def load_harness():
    spec = importlib.util.spec_from_file_location("fuzz_boards", REPO / "benchmarks" / "fuzz_boards.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules["fuzz_boards"] = module           # its dataclasses look their module up
    spec.loader.exec_module(module)
    return module


def test_fuzzed_boards_keep_the_bad_input_contract(tmp_path):
    fb = load_harness()
    if not hasattr(os, "fork"):
        pytest.skip("the fuzz harness forks a child per case (POSIX only)")
    keep = tmp_path / "failures"
    keep.mkdir()
    outcomes = fb.run_cases(SEED, list(range(COUNT)), jobs=min(os.cpu_count() or 1, 4), keep=keep,
                            workdir=tmp_path / "work", subprocess_every=25, real_check=False)
    assert len(outcomes) == COUNT
    # the run must have reached all three outcomes a damaged board can have, or it tested little
    verdicts = {o.verdict for o in outcomes}
    assert {"exit-2"} <= verdicts and verdicts & {"exit-0", "exit-1"}, fb.summary(outcomes)
    # exit 3 with loopcheck's internal-error message is within the contract, but each is a bug:
    # say so in the test summary
    for o in outcomes:
        if o.verdict == "exit-3-internal":
            warnings.warn(f"fuzz case {o.case.index} ({'; '.join(o.case.details)}): {fb.signature(o)}")
    failed = [o for o in outcomes if o.failures]
    report = "\n".join(
        f"case {o.case.index} ({o.case.source}, {o.case.command}; {'; '.join(o.case.details)}): "
        f"{', '.join(o.failures)}, exit {o.rc}\n    {fb.signature(o)}" for o in failed)
    assert not failed, f"{len(failed)} of {COUNT} fuzzed cases broke the contract:\n{report}\n\n" \
                       f"{fb.summary(outcomes)}"
