"""Time and peak memory of the hot-loop field solve: each demo board's loop, and all loops of each
board in ../shared/realboards together (loading, stage search and routing not counted).

    python3 benchmarks/bench_loopsolve.py [--convergence] [board folders...]

Targets (issue 10): a demo loop in under 5 s, all loops of a real board in under 10 s, under
2 GB. ``--convergence`` also solves each loop with the cells halved (cap raised) and prints the
change. The fast path estimate is printed beside each field value (they should agree within 15 %).
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

from loopcheck.measure.hotloop import loop_inductance  # noqa: E402
from loopcheck.measure.loopfield import FieldSolveError, solve_field_loop  # noqa: E402


def boards(args) -> list[Path]:
    if args:
        return [Path(a) for a in args]
    out = sorted(p for p in (ROOT / "boards").iterdir() if (p / "loopcheck.toml").exists())
    real = ROOT.parent / "shared" / "realboards"
    if real.is_dir():
        out += sorted(p for p in real.iterdir() if p.is_dir())
    else:
        print(f"({real} absent: real boards skipped)")
    return out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--convergence", action="store_true")
    ap.add_argument("boards", nargs="*")
    a = ap.parse_args()
    for folder in boards(a.boards):
        try:
            ctx, loops = board_loops(str(folder))
        except Exception as exc:          # a board that does not load is reported, not fatal
            print(f"{folder.name}: not loaded ({type(exc).__name__}: {exc})")
            continue
        # times from a plain run: the traced-memory probe slows numpy's allocations several-fold,
        # so the peak comes from a second, traced run of the same solves
        t0 = time.perf_counter()
        c0 = time.process_time()
        rows = []
        for st, loop in loops:
            t = time.perf_counter()
            try:
                res = solve_field_loop(ctx, loop)
                L = res.inductance_h
                cells = res.detail["mesh"]["cells"]
            except FieldSolveError as exc:
                L, cells = None, f"not made: {exc}"
            rows.append((st.name, L, cells, time.perf_counter() - t, loop))
        total = time.perf_counter() - t0
        cpu = time.process_time() - c0
        tracemalloc.start()
        for st, loop in loops:
            try:
                solve_field_loop(ctx, loop)
            except FieldSolveError:
                pass
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        print(f"{folder.name}: {len(loops)} loops, field solve {total:.2f} s together (CPU {cpu:.2f} s), "
              f"peak traced memory {peak / 2**20:.0f} MB, process max RSS "
              f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")
        for name, L, cells, dt, loop in rows:
            fast = loop_inductance(ctx, loop)[0]
            line = f"  {name}: {dt:.2f} s, cells {cells}, "
            if L is None:
                print(line + f"fast {fast * 1e9:.2f} nH")
                continue
            line += f"field {L * 1e9:.2f} nH, fast {fast * 1e9:.2f} nH ({100 * (fast / L - 1):+.1f} %)"
            if a.convergence:
                half = solve_field_loop(ctx, loop, scale=0.5, max_branches=10**6).inductance_h
                line += f", cells halved {half * 1e9:.2f} nH ({100 * (half / L - 1):+.1f} %)"
            print(line, flush=True)


if __name__ == "__main__":
    main()
