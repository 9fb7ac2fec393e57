"""Stage detection on the real boards in ../shared/realboards: seconds per board for
find_stages alone (the board is loaded first and not timed), and the stages found.

    python3 benchmarks/bench_stages_real.py [REPEATS]

Skips, saying so, when ../shared/realboards is absent.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from loopcheck.load import load_board  # noqa: E402
from loopcheck.project import load_project  # noqa: E402
from loopcheck.stages import find_stages  # noqa: E402

ROOT = Path(__file__).resolve().parents[1].parent / "shared" / "realboards"


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    if not ROOT.is_dir():
        print(f"no real boards at {ROOT}: nothing to measure")
        return
    for folder in sorted(p for p in ROOT.iterdir() if (p / "expected.toml").is_file()):
        project = load_project(folder)
        board = load_board(project)
        best = float("inf")
        for _ in range(repeats):
            t0 = time.perf_counter()
            search = find_stages(board, project)
            best = min(best, time.perf_counter() - t0)
        found = ", ".join(f"{s.topology}@{s.switch_node}" for s in search.stages)
        print(f"{folder.name:<28} {len(board.components):>4} parts  {best * 1e3:7.1f} ms  {found}")


if __name__ == "__main__":
    main()
