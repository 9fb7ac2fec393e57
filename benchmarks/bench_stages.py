"""Stage detection speed: find_stages on a netlist of many copies of the LED buck (no files).

    python3 benchmarks/bench_stages.py [copies ...]

Prints parts, pads, stages found and seconds per run. Detection works on the netlist only, so
this measures the topology search, not any file reading.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from test_stages import LED_BUCK, board_from, project  # noqa: E402

from loopcheck.stages import find_stages  # noqa: E402


def many(copies: int) -> dict:
    parts = {}
    for k in range(copies):
        for ref, pins in LED_BUCK.items():
            m = len(ref.rstrip("0123456789"))
            new = f"{ref[:m]}{k + 1}{ref[m:]:0>2}" if k else ref
            # shared ground and input: the copies hang on one supply like a multi-channel driver
            pins2 = [(pin, net if net in ("GND", "VIN") else f"{net}_{k}", x + 60 * k, y) for pin, net, x, y in pins]
            parts[new] = pins2
    return parts


def filler(count: int) -> dict:
    """Logic-side parts: decoupling capacitors and pull-ups on a 3.3 V rail, as on a busy board."""
    out = {}
    for i in range(count):
        out[f"C{1000 + i}"] = [(1, "3V3", 200 + i % 50, i // 50), (2, "GND", 200.5 + i % 50, i // 50)]
        out[f"R{1000 + i}"] = [(1, "3V3", 200 + i % 50, 100 + i // 50), (2, f"SIG{i}", 200.5 + i % 50, 100 + i // 50)]
    return out


def main(counts, extra=0):
    for n in counts:
        parts = many(n)
        parts.update(filler(extra))
        board = board_from(parts)
        t = time.perf_counter()
        search = find_stages(board, project())
        dt = time.perf_counter() - t
        print(f"{n:5d} stages' worth: {len(board.components):6d} parts, {len(board.pads):6d} pads -> "
              f"{len(search.stages):5d} stages in {dt:.3f} s")


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [1, 10, 50, 200])
    print("with 1000 logic-side capacitors and 1000 resistors besides:")
    main([1, 8, 32], extra=1000)
