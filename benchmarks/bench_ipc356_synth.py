"""Time the synth writer and the IPC-D-356 reader on a large invented board.

Run: python3 benchmarks/bench_ipc356_synth.py [pads]   (default 20000 pads, 2000 vias)
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from loopcheck.readers.ipc356 import read_ipc356  # noqa: E402
from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, SynthVia, write_fab  # noqa: E402


def big_board(n_pads: int) -> SynthBoard:
    comps = []
    per = 50
    for c in range(n_pads // per):
        cx, cy = 5 + (c % 40) * 7.0, 5 + (c // 40) * 7.0
        pads = [SynthPad(str(i + 1), f"N{(c * per + i) % 3000}", cx + 0.1 * i, cy, 0.08, 0.5)
                for i in range(per)]
        comps.append(SynthComponent(f"U{c + 1}", "X", pads))
    vias = [SynthVia("GND", 3 + (i % 90) * 3.1, 2 + (i // 90) * 3.1, 0.3, 0.6)
            for i in range(n_pads // 10)]
    return SynthBoard("big", 300.0, 300.0, 4, components=comps, vias=vias)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 20000
    board = big_board(n)
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        paths = write_fab(board, tmp)
        t1 = time.perf_counter()
        netlist = read_ipc356(paths["netlist"])
        t2 = time.perf_counter()
    print(f"write_fab: {len(netlist.points)} netlist points, {t1 - t0:.2f} s")
    print(f"read_ipc356: {len(netlist.points)} points, {t2 - t1:.2f} s "
          f"({len(netlist.points) / (t2 - t1):.0f} records/s)")


if __name__ == "__main__":
    main()
