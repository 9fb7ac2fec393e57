"""Read plus connectivity (what ``loopcheck inspect`` does) on the largest corpus boards and the
demo boards: wall time per step, copper Gerber throughput and peak memory.

Each board runs in its own process so that its peak resident memory is its own.

    python3 benchmarks/bench_inspect.py              # the 4 largest corpus boards + demo boards
    python3 benchmarks/bench_inspect.py --all        # every corpus board folder
    python3 benchmarks/bench_inspect.py PATH ...     # given boards (folder, zip or loopcheck.toml)

Targets (issue 2, this 2-core machine): any corpus board inspected in under 15 s and 2 GB.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
CORPUS = REPO.parent / "shared" / "corpus"
TARGET_S = 15.0
TARGET_MB = 2048.0
# corpus folders holding several boards: the board measured (as in tests/test_inspect.py)
MAPPINGS = {
    "diptrace": {"mainboard_Top.gbr": "copper:1", "mainboard_Bottom.gbr": "copper:2",
                 "mainboard_BoardOutline.gbr": "outline", "mainboard.drl": "drill"},
    "geda": {"driver.top.gbr": "copper:1", "driver.bottom.gbr": "copper:2",
             "driver.plated-drill.cnc": "drill:plated", "driver.unplated-drill.cnc": "drill:nonplated"},
}


def measure_one(target: str) -> dict:
    import resource

    sys.path.insert(0, str(REPO))
    from loopcheck.connectivity import check_connectivity
    from loopcheck.load import load_board
    from loopcheck.project import load_project
    from loopcheck.readers.discover import discover

    def cpu() -> float:
        # this process and its reaped workers: robust against other jobs on the machine
        me, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
        return me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime

    c0 = cpu()
    t0 = time.perf_counter()
    project = load_project(target)
    with discover(project.fab, project.files) as fab:
        copper_bytes = sum(os.path.getsize(p) for p, _ in fab.copper)
    t1 = time.perf_counter()
    board = load_board(project)
    t2 = time.perf_counter()
    result = check_connectivity(board)
    t3 = time.perf_counter()
    return {
        "board": target,
        "layers": len(board.layers),
        "pads": len(board.pads),
        "holes": len(board.holes),
        "copper_mb": copper_bytes / 1e6,
        "discover_s": t1 - t0,
        "read_s": t2 - t1,
        "connectivity_s": t3 - t2,
        "total_s": t3 - t0,
        "cpu_s": cpu() - c0,
        "copper_mb_per_s": copper_bytes / 1e6 / max(t2 - t1, 1e-9),
        "findings": len(result.findings),
        "checked": result.checked,
        # copper layers may be read in worker processes: the peak is the larger of ours and theirs
        "peak_mb": max(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
                       resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss) / 1024.0,
    }


def corpus_targets(all_boards: bool, tmp: Path) -> list[str]:
    if not CORPUS.is_dir():
        return []
    boards = []
    for d in sorted(CORPUS.iterdir()):
        if not d.is_dir():
            continue
        subs = [d / s.name for s in sorted(d.iterdir()) if s.is_dir()] if d.name == "kicad-x2-tests" else [d]
        for b in subs:
            size = sum(p.stat().st_size for p in b.rglob("*") if p.is_file())
            target = str(b)
            if b.name in MAPPINGS:
                toml = tmp / f"{b.name}.toml"
                lines = ["[board]", f'fab = "{b}"', "[files]"] + [f'"{k}" = "{v}"' for k, v in MAPPINGS[b.name].items()]
                toml.write_text("\n".join(lines) + "\n")
                target = str(toml)
            boards.append((size, target))
    boards.sort(reverse=True)
    chosen = boards if all_boards else boards[:4]
    return [t for _, t in chosen]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("boards", nargs="*")
    ap.add_argument("--all", action="store_true", help="every corpus board folder")
    ap.add_argument("--one", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.one:
        print(json.dumps(measure_one(args.one)))
        return 0
    import tempfile

    load0 = os.getloadavg()
    with tempfile.TemporaryDirectory(prefix="loopcheck-bench-") as tmp:
        targets = list(args.boards)
        if not targets:
            targets = corpus_targets(args.all, Path(tmp))
            targets += [str(p) for p in sorted((REPO / "boards").iterdir())
                        if p.is_dir() and (p / "loopcheck.toml").is_file()] if (REPO / "boards").is_dir() else []
        rows = []
        for t in targets:
            res = subprocess.run([sys.executable, __file__, "--one", t], capture_output=True, text=True)
            if res.returncode != 0:
                print(f"{t}: failed: {res.stderr.strip().splitlines()[-1] if res.stderr.strip() else res.returncode}")
                continue
            rows.append(json.loads(res.stdout))
    print(f"load average before: {load0[0]:.2f} {load0[1]:.2f} {load0[2]:.2f}, after: "
          f"{os.getloadavg()[0]:.2f} (2 cores: above ~0.3 before, other jobs share the machine)")
    print(f"{'board':<58} {'lay':>3} {'Cu MB':>6} {'read s':>7} {'conn s':>7} {'total s':>8} {'cpu s':>6} "
          f"{'MB/s':>5} {'peak MB':>8}  ok")
    worst_ok = True
    for r in rows:
        ok = r["total_s"] < TARGET_S and r["peak_mb"] < TARGET_MB
        worst_ok &= ok
        name = r["board"].replace(str(CORPUS) + "/", "corpus/").replace(str(REPO) + "/", "")
        print(f"{name[-58:]:<58} {r['layers']:>3} {r['copper_mb']:>6.2f} {r['read_s']:>7.2f} "
              f"{r['connectivity_s']:>7.2f} {r['total_s']:>8.2f} {r['cpu_s']:>6.1f} {r['copper_mb_per_s']:>5.2f} "
              f"{r['peak_mb']:>8.0f}  {'yes' if ok else 'NO'}")
    print(f"targets: under {TARGET_S:g} s and {TARGET_MB:g} MB per board: {'met' if worst_ok else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
