"""Benchmark: `loopcheck check` on each board in ../shared/realboards, each in a fresh process.

Target (issue 9, issue 11): under 10 s and 2 GB each on a 2-core machine.

    python3 benchmarks/bench_realboards.py [BOARD_DIR ...]     # default: every ../shared/realboards/*
    python3 benchmarks/bench_realboards.py --large [W H]       # and synthesized W x H mm boards (614 x 342),
                                                               # of two layers and of four (three planes)

The default large board has ten times the area of the largest corpus board (194 x 108 mm of
copper, 21,000 mm2), each side scaled by the square root of ten: issue 11 asks for memory under
2 GB on a board ten times the size of the largest corpus board.

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


def large_board(folder: Path, width_mm: float = 614.0, height_mm: float = 342.0, layers: int = 2) -> Path:
    """A discrete LED buck in one corner of a ``width_mm`` x ``height_mm`` board fed by a
    connector at the far corner through a long VIN trace: the ground path and the input path cross
    the whole board, so the routes' rasters and the DC solves must stay windowed or capped to keep
    memory bounded. Two layers: the bottom is one ground pour. Four layers: ground planes on
    inner1 and the bottom and an input-voltage plane on inner2, so that the ground net alone is
    two board-sized planes."""
    from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, SynthTrace, SynthVia, pours_with_clearance, write_fab

    def two(ref, value, a, b, size=(1.2, 1.2)):
        return SynthComponent(ref, value, [SynthPad("1", a[0], a[1], a[2], *size), SynthPad("2", b[0], b[1], b[2], *size)])

    W, H = width_mm, height_mm
    comps = [
        SynthComponent("J1", "IN", [SynthPad("1", "VIN", W - 10, H - 20, 2.0, 2.0, hole_mm=1.0),
                                    SynthPad("2", "GND", W - 20, H - 20, 2.0, 2.0, hole_mm=1.0)]),
        two("C1", "10uF", ("VIN", 10, 20), ("GND", 10, 17)),
        SynthComponent("Q1", "NMOS", [SynthPad("1", "GATE", 14.5, 22.5, 1.0, 1.0), SynthPad("2", "SW", 16, 20, 1.2, 1.2),
                                      SynthPad("3", "VIN", 13, 20, 1.2, 1.2)]),
        two("D1", "SCHOTTKY", ("SW", 16, 17), ("GND", 13, 17)),
        two("L1", "33uH", ("SW", 20, 18.5), ("LEDP", 26, 18.5), size=(2.0, 3.0)),
        two("RS1", "0.1", ("LEDP", 29, 18.5), ("LEDS", 31.5, 18.5)),
        SynthComponent("U1", "CTRL", [SynthPad("1", "VIN", 20, 28, 1.0, 0.6), SynthPad("2", "GND", 20, 27, 1.0, 0.6),
                                      SynthPad("3", "GATE", 20, 26, 1.0, 0.6), SynthPad("4", "LEDP", 24, 26, 1.0, 0.6),
                                      SynthPad("5", "LEDS", 24, 27, 1.0, 0.6), SynthPad("6", "VCC", 24, 28, 1.0, 0.6)]),
        two("C2", "1uF", ("VCC", 26, 29.5), ("GND", 28, 29.5), size=(1.0, 1.0)),
        SynthComponent("J2", "LED", [SynthPad("1", "LEDS", 37, 20, 2.0, 2.0, hole_mm=1.0),
                                     SynthPad("2", "GND", 37, 10, 2.0, 2.0, hole_mm=1.0)]),
    ]
    t = [SynthTrace("VIN", 1, 1.0, [(10, 20), (13, 20)]),
         SynthTrace("VIN", 1, 0.3, [(10, 20), (10, 28), (20, 28)]),
         SynthTrace("VIN", 1, 1.0, [(10, 28), (10, 40), (W - 10, 40), (W - 10, H - 20)]),
         SynthTrace("SW", 1, 1.0, [(16, 20), (16, 17)]), SynthTrace("SW", 1, 1.0, [(16, 18.5), (20, 18.5)]),
         SynthTrace("GND", 1, 1.0, [(13, 17), (10, 17)]), SynthTrace("GND", 1, 0.6, [(13, 17), (13, 15.5)]),
         SynthTrace("GND", 1, 0.6, [(10, 17), (10, 15.5)]), SynthTrace("GND", 1, 0.3, [(20, 27), (18.5, 27)]),
         SynthTrace("GND", 1, 0.3, [(28, 29.5), (28, 31)]),
         SynthTrace("GATE", 1, 0.3, [(14.5, 22.5), (14.5, 26), (20, 26)]),
         SynthTrace("LEDP", 1, 1.0, [(26, 18.5), (29, 18.5)]), SynthTrace("LEDS", 1, 1.0, [(31.5, 18.5), (37, 18.5), (37, 20)]),
         SynthTrace("VCC", 1, 0.3, [(24, 28), (24, 29.5), (26, 29.5)]),
         SynthTrace("LEDP", 1, 0.3, [(29, 18.5), (29, 26), (24, 26)]),
         SynthTrace("LEDS", 1, 0.3, [(31.5, 18.5), (31.5, 27), (24, 27)])]
    vias = [SynthVia("GND", 13, 15.5, 0.4, 0.8), SynthVia("GND", 10, 15.5, 0.4, 0.8),
            SynthVia("GND", 18.5, 27, 0.4, 0.8), SynthVia("GND", 28, 31, 0.4, 0.8)]
    b = SynthBoard(f"large-{W:g}x{H:g}" + ("-4layer" if layers == 4 else ""), W, H, layers, comps, t, [], vias)
    edge = [(0.5, 0.5), (W - 0.5, 0.5), (W - 0.5, H - 0.5), (0.5, H - 0.5)]
    for net, layer in ([("GND", 2)] if layers == 2 else [("GND", 2), ("VIN", 3), ("GND", 4)]):
        b.pours += pours_with_clearance(b, net, layer, edge, 0.4)
    write_fab(b, folder)
    (folder / "loopcheck.toml").write_text('[components]\nRS1 = "0.1"\n[operating_point]\nvin_v = [20, 30]\n'
                                          'vout_v = 12\niout_a = 1.0\n')
    return folder


def main(argv: list[str]) -> int:
    large = None
    if argv and argv[0] == "--large":
        dims = [float(a) for a in argv[1:3]] or [614.0, 342.0]
        large = dims
        argv = argv[3 if len(argv) >= 3 else 1:]
    boards = [Path(a) for a in argv] or sorted(p.parent for p in REALBOARDS.glob("*/expected.toml"))
    tmp = None
    if large is not None:
        tmp = tempfile.TemporaryDirectory()
        sys.path.insert(0, str(ROOT))
        boards.append(large_board(Path(tmp.name) / "large", *large))
        boards.append(large_board(Path(tmp.name) / "large-4layer", *large, layers=4))
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
