"""Time and size of each report format on the demo boards and on the largest corpus board.

    python3 benchmarks/bench_reports.py            # demo boards (runs the measurement pipeline)
    python3 benchmarks/bench_reports.py --corpus   # also a 14-layer corpus board (board only)

Prints wall time per format and output size; the pipeline itself is timed by bench_check.py.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from loopcheck.analysis import Analysis  # noqa: E402
from loopcheck.commands import check_cmd  # noqa: E402
from loopcheck.report.common import CheckResult  # noqa: E402
from loopcheck.rules import evaluate_all, load_deck  # noqa: E402

FORMATS = ("text", "json", "sarif", "junit", "html")


def bench(result: CheckResult, name: str) -> None:
    cells = []
    for fmt in FORMATS:
        t = time.perf_counter()
        out = check_cmd.renderer(fmt)(result)
        cells.append(f"{fmt} {1e3 * (time.perf_counter() - t):7.0f} ms {len(out) / 1024:7.0f} kB")
    print(f"{name:<28} " + " | ".join(cells))


def main() -> None:
    for board in ("led-driver-tidy", "led-driver-sprawl", "sync-buck-4layer"):
        path = REPO / "boards" / board
        if not path.exists():
            print(f"{board}: not made (boards/make_demo_boards.py)")
            continue
        result = check_cmd.run_check(str(path), None, "error", check_cmd.Progress(False))
        bench(result, board)
    if "--corpus" in sys.argv:
        from loopcheck.load import load_board
        from loopcheck.project import load_project

        path = REPO.parent / "shared" / "corpus" / "altium-composite-drill" / "Gerber"
        if not path.exists():
            print("corpus board absent")
            return
        project = load_project(path)
        board = load_board(project)
        a = Analysis(board=board, integrity=[])
        bench(CheckResult(a, evaluate_all(a, load_deck("default"), project), project),
              f"corpus 14-layer ({len(board.layers)} layers)")


if __name__ == "__main__":
    main()
