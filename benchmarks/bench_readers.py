"""Reader speed: MB/s of copper Gerber into one unioned shapely geometry, and peak memory.

Usage:
    python3 benchmarks/bench_readers.py [--top N] [--reference] [files...]

Without files it takes the N largest copper layers of ../shared/corpus (default 6). Each file is
read once in a fresh child process, so that the peak resident memory (resource.getrusage
VmHWM of that child, i.e. its maxrss) belongs to that one read. Times are CPU seconds of that process
(time.process_time: robust when other jobs share the machine), with the wall time beside; the
parse column is gerbonara's parsing alone, the total is the whole read_gerber (parse + geometry). With --reference it also renders each file with gerbv (anti-aliased
PNG, coverage summed) and prints the area difference. Target: at least 1 MB/s.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

CHILD = r"""
import json, resource, sys, time
sys.path.insert(0, {root!r})
from pathlib import Path
from loopcheck.readers import gerber as G
from loopcheck.limits import DEFAULT_LIMITS
p = Path({path!r})
c0, t0 = time.process_time(), time.perf_counter()
text = G._read_text(p, DEFAULT_LIMITS, "Gerber")
target, parser, notes = G._parse(p, text, DEFAULT_LIMITS)
c1, t1 = time.process_time(), time.perf_counter()
layer = G.read_gerber(p)
c2, t2 = time.process_time(), time.perf_counter()
# VmHWM is this process's own peak; ru_maxrss would include the parent's peak at fork time
hwm = [l for l in open("/proc/self/status") if l.startswith("VmHWM:")]
peak_mb = int(hwm[0].split()[1]) / 1024 if hwm else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps(dict(parse_s=c1 - c0, read_s=c2 - c1, wall_s=t2 - t1, area=layer.geometry.area,
                      objects=layer.object_count, maxrss_mb=peak_mb)))
"""


def corpus_copper() -> list[Path]:
    from test_reader_gerber import CORPUS_COPPER  # the test's explicit list of copper layers

    corpus = ROOT.parent / "shared" / "corpus"
    return [corpus / rel for rel in CORPUS_COPPER if (corpus / rel).exists()]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("files", nargs="*", type=Path)
    ap.add_argument("--top", type=int, default=6)
    ap.add_argument("--all", action="store_true", help="every corpus copper layer, not only the largest")
    ap.add_argument("--reference", action="store_true", help="compare areas with gerbv")
    args = ap.parse_args()
    files = args.files or sorted(corpus_copper(), key=lambda p: p.stat().st_size, reverse=True)
    if not args.files and not args.all:
        files = files[: args.top]
    if not files:
        print("no files (corpus absent?)")
        return 1
    print(f"{'file':58s} {'MB':>6s} {'objects':>8s} {'parse s':>8s} {'total s':>8s} {'wall s':>7s} {'MB/s':>6s} "
          f"{'peak MB':>9s}" + ("  gerbv diff" if args.reference else ""))
    total_mb = total_s = 0.0
    for p in files:
        out = subprocess.run([sys.executable, "-c", CHILD.format(root=str(ROOT), path=str(p))],
                             capture_output=True, text=True, check=True)
        r = json.loads(out.stdout.strip().splitlines()[-1])
        mb = p.stat().st_size / 1e6
        total_mb += mb
        total_s += r["read_s"]
        line = (f"{str(p)[-58:]:58s} {mb:6.2f} {r['objects']:8d} {r['parse_s']:8.2f} {r['read_s']:8.2f} {r['wall_s']:7.2f} "
                f"{mb / r['read_s']:6.2f} {r['maxrss_mb']:9.0f}")
        if args.reference:
            import references as ref

            from loopcheck.readers.gerber import read_gerber

            b = read_gerber(p).geometry.bounds
            dpi = ref.choose_dpi(b[2] - b[0], b[3] - b[1])
            g = ref.gerbv_area_mm2(p, dpi)
            if g > 0:
                line += f"  {100 * (r['area'] - g) / g:+.2f} % ({r['area']:.1f} vs {g:.1f} mm2, {dpi} dpi)"
            else:
                line += "  gerbv draws nothing (e.g. a thermal macro primitive it does not support)"
        print(line, flush=True)
    print(f"overall: {total_mb:.2f} MB in {total_s:.1f} CPU s = {total_mb / total_s:.2f} MB/s "
          f"(read_gerber, parse + geometry); target 1 MB/s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
