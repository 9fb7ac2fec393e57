"""Benchmark: load_board + analyse() on each demo board, each in a fresh process (as the CLI runs).

Target (issue 5): under 10 s and 2 GB each on a 2-core laptop-class machine.

    python3 benchmarks/bench_check.py [BOARD ...]      # default: the demo boards in boards/

Prints wall time (imports, load, analyse, per step) and peak resident memory per board.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMOS = ("led-driver-tidy", "led-driver-sprawl", "sync-buck-4layer")
TARGET_S = 10.0
TARGET_MB = 2048.0

CHILD = r"""
import json, resource, sys, time
t0 = time.perf_counter()
from loopcheck.analysis import analyse
from loopcheck.load import load_board
from loopcheck.project import load_project
t1 = time.perf_counter()
proj = load_project(sys.argv[1])
board = load_board(proj)
t2 = time.perf_counter()
an = analyse(board, proj)
t3 = time.perf_counter()
made = sum(m.value is not None for m in an.measurements)
print(json.dumps({"import_s": t1 - t0, "load_s": t2 - t1, "analyse_s": t3 - t2, "total_s": t3 - t0,
                  "steps": an.timings_s, "measurements": len(an.measurements), "made": made,
                  "stages": len(an.stages),
                  "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""


def run(board: Path) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, str(board)], cwd=ROOT, capture_output=True, text=True,
                         env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"})
    if out.returncode != 0:
        raise SystemExit(f"{board}: failed\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv: list[str]) -> int:
    boards = [Path(a) for a in argv] or [ROOT / "boards" / d for d in DEMOS]
    worst = 0
    for b in boards:
        if not b.exists():
            print(f"{b}: missing, skipped")
            continue
        r = run(b)
        ok = r["total_s"] < TARGET_S and r["peak_mb"] < TARGET_MB
        worst |= not ok
        print(f"{b.name:22s} total {r['total_s']:5.1f} s (import {r['import_s']:.1f}, load {r['load_s']:.1f}, "
              f"analyse {r['analyse_s']:.1f})  peak {r['peak_mb']:6.0f} MB  "
              f"{r['made']}/{r['measurements']} measured, {r['stages']} stage(s)  {'ok' if ok else 'OVER TARGET'}")
        for k, v in r["steps"].items():
            print(f"    {k:36s} {v:5.2f} s")
    return 1 if worst else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
