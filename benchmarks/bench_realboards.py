"""Benchmark: `loopcheck check` on each board in ../shared/realboards, each in a fresh process.

Target (issue 9, issue 11): under 10 s and 2 GB each on a 2-core machine.

    python3 benchmarks/bench_realboards.py [BOARD_DIR ...]     # default: every ../shared/realboards/*

Per board: wall time of the whole check (imports, reading, analysis, the JSON report), the peak
resident memory of the checking process (VmHWM from /proc/self/status) and of the largest reader
subprocess (the copper layers are read in parallel), the CPU time, how many measurements were
made, and whether a measurement failed. The load average is printed too: on a shared machine the
wall time grows with it, the CPU time much less.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
REALBOARDS = ROOT.parent / "shared" / "realboards"
TARGET_S = 10.0
TARGET_MB = 2048.0

CHILD = r"""
import contextlib, io, json, os, resource, sys, time
t0 = time.perf_counter()
from loopcheck.cli import main
out = io.StringIO()
code = 0
with contextlib.redirect_stdout(out):
    try:
        main(["check", sys.argv[1], "--format", "json", "--fail-on", "never"], standalone_mode=True)
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else 1
t1 = time.perf_counter()
hwm = next(int(l.split()[1]) for l in open("/proc/self/status") if l.startswith("VmHWM"))
ru_self = resource.getrusage(resource.RUSAGE_SELF)
ru_kids = resource.getrusage(resource.RUSAGE_CHILDREN)
made = failed = total = 0
try:
    rep = json.loads(out.getvalue())
    for m in rep.get("measurements", []):
        total += 1
        made += m.get("value") is not None
        failed += "failed" in str(m.get("not_made") or "")
except ValueError:
    pass
json.dump({"exit": code, "wall_s": t1 - t0, "peak_mb": hwm / 1024, "reader_peak_mb": ru_kids.ru_maxrss / 1024,
           "cpu_s": ru_self.ru_utime + ru_self.ru_stime + ru_kids.ru_utime + ru_kids.ru_stime,
           "measurements": total, "made": made, "failed": failed}, open(sys.argv[2], "w"))
"""


def run(board: Path) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        res = Path(tmp) / "result.json"
        env = dict(os.environ)
        env["PYTHONPATH"] = str(ROOT) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, "-c", CHILD, str(board), str(res)], env=env,
                              capture_output=True, text=True)
        wall = time.perf_counter() - t0
        if not res.exists():
            return {"error": (proc.stderr.strip().splitlines() or ["no output"])[-1], "process_s": wall}
        out = json.loads(res.read_text())
        out["process_s"] = wall
        return out


def main(argv: list[str]) -> int:
    boards = [Path(a) for a in argv] or sorted(p.parent for p in REALBOARDS.glob("*/expected.toml"))
    if not boards:
        print(f"no boards (looked in {REALBOARDS})")
        return 0
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    print(f"{'board':28s} {'process s':>9s} {'check s':>8s} {'cpu s':>6s} {'peak MB':>8s} {'reader MB':>9s} "
          f"{'made':>9s} {'failed':>6s}  verdict")
    worst = 0
    for b in boards:
        r = run(b)
        if "error" in r:
            print(f"{b.name:28s} error: {r['error']}")
            worst = 1
            continue
        ok = r["process_s"] < TARGET_S and max(r["peak_mb"], r["reader_peak_mb"]) < TARGET_MB and r["failed"] == 0
        worst |= not ok
        print(f"{b.name:28s} {r['process_s']:9.1f} {r['wall_s']:8.1f} {r['cpu_s']:6.1f} {r['peak_mb']:8.0f} "
              f"{r['reader_peak_mb']:9.0f} {r['made']:4d}/{r['measurements']:<4d} {r['failed']:6d}  "
              f"{'ok' if ok else 'over target or failed'}")
    print(f"target: under {TARGET_S:g} s and {TARGET_MB:g} MB a board, no failed measurement")
    return worst


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
