"""Time the connectivity check: the real boards (../shared/realboards) and a large invented one.

Run: python3 benchmarks/bench_connectivity.py [pads]   (default 5000 pads and 500 vias on 10 layers)

Loading is not timed; only ``check_connectivity`` (pads on islands, groups, findings), best of 3.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_ipc356_synth import big_board  # noqa: E402

from loopcheck.connectivity import check_connectivity  # noqa: E402
from loopcheck.load import load_board  # noqa: E402
from loopcheck.project import load_project  # noqa: E402
from loopcheck.synth import write_fab  # noqa: E402

REALBOARDS = Path(__file__).resolve().parents[2] / "shared" / "realboards"


def best_of(board, n: int = 3) -> tuple[float, int]:
    times = []
    for _ in range(n):
        t0 = time.perf_counter()
        r = check_connectivity(board)
        times.append(time.perf_counter() - t0)
    return min(times), len(r.findings)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 5000
    if REALBOARDS.is_dir():
        for folder in sorted(p for p in REALBOARDS.iterdir() if p.is_dir()):
            b = load_board(load_project(folder))
            t, k = best_of(b)
            print(f"{folder.name:28s} {len(b.pads):6d} pads  {t:6.2f} s  {k} findings")
    synth = big_board(n)
    synth.layer_count = 10
    with tempfile.TemporaryDirectory() as tmp:
        write_fab(synth, tmp)
        b = load_board(load_project(tmp))
        t, k = best_of(b)
        print(f"{'invented, ' + str(len(b.layers)) + ' layers':28s} {len(b.pads):6d} pads  {t:6.2f} s  {k} findings")


if __name__ == "__main__":
    main()
