"""Speed of the partial-inductance loop engine: loops of 2000 segments (4M segment pairs).

Run: python3 benchmarks/bench_inductance.py [--segments N] [--repeat K]

Prints wall and CPU time (best of K) and peak traced memory (tracemalloc) for three 2000-segment
loops: a circle (every pair at an angle: the quadrature path), a rectilinear out-and-back
route 0.2 mm over itself (many near parallel pairs: the closed-form path) and a random 3D
polyline, and the accuracy of the circle against Grover's ring formula. Target: under 1 s
per loop on a 2-core laptop CPU.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from loopcheck.physics import inductance as ind  # noqa: E402


def circle(n: int) -> np.ndarray:
    th = np.arange(n) * 2 * np.pi / n
    return np.column_stack([10e-3 * np.cos(th), 10e-3 * np.sin(th), np.zeros(n)])


def out_and_back(n: int, seed: int = 0) -> np.ndarray:
    """A random Manhattan route of n/2 steps of 0.5 mm and its return 0.2 mm above it."""
    rng = np.random.default_rng(seed)
    dirs = np.array([[1, 0, 0], [0, 1, 0], [-1, 0, 0], [0, -1, 0]]) * 0.5e-3
    steps = rng.integers(0, 4, size=n // 2 - 1)
    path = np.vstack([np.zeros(3), np.cumsum(dirs[steps], axis=0)])
    loop = np.vstack([path, path[::-1] + [0.0, 0.0, 0.2e-3]])
    keep = np.r_[True, np.linalg.norm(np.diff(loop, axis=0), axis=1) > 0]
    return loop[keep]


def random_3d(n: int, seed: int = 1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.cumsum(rng.normal(scale=0.3e-3, size=(n, 3)), axis=0)


def measure(points: np.ndarray, repeat: int) -> tuple[float, float, float, float]:
    best_wall = best_cpu = float("inf")
    value = 0.0
    for _ in range(repeat):
        t0 = time.perf_counter()
        c0 = time.process_time()
        value = ind.polyline_loop_inductance(points, 0.5e-3, 35e-6)
        best_cpu = min(best_cpu, time.process_time() - c0)
        best_wall = min(best_wall, time.perf_counter() - t0)
    tracemalloc.start()
    ind.polyline_loop_inductance(points, 0.5e-3, 35e-6)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return value, best_wall, best_cpu, peak / 2**20


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--segments", type=int, default=2000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    n = args.segments
    print(f"loop inductance, {n} segments ({n * n / 1e6:.1f}M pairs), best of {args.repeat}")
    if hasattr(os, "getloadavg"):
        print(f"  load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores "
              "(wall time suffers when other jobs run; cpu time is this process only)")
    for name, pts in (("circle R=10 mm", circle(n)), ("out-and-back route", out_and_back(n)),
                      ("random 3D polyline", random_3d(n))):
        value, wall, cpu, peak = measure(pts, args.repeat)
        print(f"  {name:22s} {len(pts):5d} seg  L = {value * 1e9:9.3f} nH  "
              f"wall {wall:6.3f} s  cpu {cpu:6.3f} s  peak memory {peak:6.1f} MiB")
    # the full matrix (what a caller needing per-segment terms uses)
    pts = circle(n)
    t0 = time.perf_counter()
    c0 = time.process_time()
    mat = ind.partial_inductance_matrix(pts, np.roll(pts, -1, axis=0),
                                        widths_m=0.5e-3, thicknesses_m=35e-6)
    print(f"  partial_inductance_matrix {n}x{n}: wall {time.perf_counter() - t0:6.3f} s  "
          f"cpu {time.process_time() - c0:6.3f} s  sum {mat.sum() * 1e9:.3f} nH")
    # accuracy at this size: the circle of strips against Grover's ring (r_eq = 0.2235 (w+t))
    ring = ind.circular_loop_inductance(10e-3, ind.strip_equivalent_radius(0.5e-3, 35e-6))
    value = ind.polyline_loop_inductance(circle(n), 0.5e-3, 35e-6)
    print(f"  circle vs Grover ring formula: {value * 1e9:.3f} nH vs {ring * 1e9:.3f} nH "
          f"({(value / ring - 1) * 100:+.3f} %)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
