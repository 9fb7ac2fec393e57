"""Mesh convergence of the hot-loop field solve (issue 10: halving the mesh should change the
loop inductance by less than 3 %).

For each demo board's loop (and the traced loop of ../shared/realboards/underglow2-tps62172),
the inductance at the default mesh and with the cells halved (``scale=0.5``); where the halved
mesh exceeds ``--cap`` cells it is coarsened by the solver's own plan until it fits (the
"as fine as fits" mesh; its finest cell is printed). Each row gives the cells, the wall time,
the CPU time and the peak traced memory (numpy arrays included) of each solve, and the fast
route-based estimate beside the field value.

    python3 benchmarks/bench_loopsolve_convergence.py [--cap N] [--edge-first R] [board folders...]

``--edge-first R`` makes the first cell at every copper edge R times the finest cell (edge
grading towards the copper edges where the current crowds), for comparison with the default.
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from loopsolve_common import board_loops  # noqa: E402

import loopcheck.measure.loopfield as loopfield  # noqa: E402
from loopcheck.measure.hotloop import loop_inductance  # noqa: E402


def default_boards() -> list[Path]:
    out = sorted(p for p in (ROOT / "boards").iterdir() if (p / "loopcheck.toml").exists())
    real = ROOT.parent / "shared" / "realboards" / "underglow2-tps62172"
    if real.is_dir():
        out.append(real)
    else:
        print(f"({real} absent: skipped)")
    return out


def timed_solve(ctx, loop, scale: float, cap: int, plan_index: int | None = None):
    tracemalloc.start()
    t0, c0 = time.perf_counter(), time.process_time()
    try:
        res = loopfield.solve_field_loop(ctx, loop, scale=scale, max_branches=cap, plan_index=plan_index)
        out = (res.inductance_h, res.detail["mesh"])
    except loopfield.FieldSolveError as exc:
        out = (None, {"error": str(exc)})
    wall, cpu = time.perf_counter() - t0, time.process_time() - c0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return out[0], out[1], wall, cpu, peak / 2**20


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--cap", type=int, default=9000, help="most cells of the halved mesh (memory ~ 8 N^2 bytes)")
    ap.add_argument("--edge-first", type=float, default=None)
    ap.add_argument("boards", nargs="*")
    a = ap.parse_args()
    if a.edge_first is not None:
        loopfield.EDGE_FIRST = a.edge_first
    folders = [Path(b) for b in a.boards] or default_boards()
    print(f"default cap {loopfield.MAX_BRANCHES} cells, halved cap {a.cap} cells, "
          f"first cell at copper edges x{loopfield.EDGE_FIRST}")
    for folder in folders:
        try:
            ctx, loops = board_loops(str(folder))
        except Exception as exc:          # a board that does not load is reported, not fatal
            print(f"{folder.name}: not loaded ({type(exc).__name__}: {exc})")
            continue
        for st, loop in loops:
            fast = loop_inductance(ctx, loop)[0]
            L1, m1, w1, c1, p1 = timed_solve(ctx, loop, 1.0, loopfield.MAX_BRANCHES)
            if L1 is None:
                print(f"{folder.name} {st.name}: field solve not made ({m1['error']}); fast {fast * 1e9:.2f} nH")
                continue
            print(f"{folder.name} {st.name}: default {L1 * 1e9:.3f} nH, {m1['cells']} cells, fine "
                  f"{m1['fine_mm']} mm, coarse {m1['coarse_mm']} mm, {w1:.1f} s (CPU {c1:.1f} s), "
                  f"peak {p1:.0f} MB; fast {fast * 1e9:.2f} nH ({100 * (fast / L1 - 1):+.1f} %)", flush=True)
            # the same mesh plan as the default (window, feature lines, growth), every cell halved
            L2, m2, w2, c2, p2 = timed_solve(ctx, loop, 0.5, a.cap, m1["plan_step"])
            if L2 is None:
                print(f"  halved: not made ({m2['error']})")
                continue
            halved = abs(m2["fine_mm"] - m1["fine_mm"] / 2) < 0.02 * m1["fine_mm"] and \
                abs(m2["coarse_mm"] - m1["coarse_mm"] / 2) < 0.02 * m1["coarse_mm"]
            print(f"  {'halved' if halved else 'as fine as fits'}: {L2 * 1e9:.3f} nH "
                  f"({100 * (L2 / L1 - 1):+.1f} %), {m2['cells']} cells, fine {m2['fine_mm']} mm, "
                  f"coarse {m2['coarse_mm']} mm, {w2:.1f} s (CPU {c2:.1f} s), peak {p2:.0f} MB", flush=True)
    print(f"process max RSS {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
