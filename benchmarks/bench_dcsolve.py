"""Speed of the DC sheet solver (a script, not a test).

Case: a 50 x 50 mm two-layer copper pour (1 oz, Rs ~ 0.5 mohm/sq) with 24 clearance holes per
layer, joined by six vias, current in at a pad on the top layer and out at a pad on the bottom
layer, at 0.05 mm pitch (1000 x 1000 cells per layer, about 2 million unknowns).
Targets (this 2-core machine): under 20 s and under 4 GB peak memory.

Also measures the sparse direct solver (SuperLU) against algebraic multigrid at smaller sizes.

Run:  python3 benchmarks/bench_dcsolve.py [--quick]
Each size runs in a fresh process so peak memory (getrusage maxrss) is per case.
"""

from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))


def pour_case(pitch_mm: float, solver: str) -> dict:
    import shapely

    from loopcheck.physics.dcsolve import Contact, SheetLayer, ViaLink, solve_dc

    size = 50.0
    holes = [shapely.Point(6 + 8 * i + (j % 2) * 3, 6 + 8 * j).buffer(0.8, quad_segs=16)
             for i in range(6) for j in range(4)]
    pour = shapely.box(0, 0, size, size).difference(shapely.union_all(holes))
    rs = 0.000492  # 35 um copper at 20 C [ohm/sq]
    layers = [SheetLayer(pour, rs), SheetLayer(pour, rs)]
    contacts = [
        Contact("in", 0, shapely.box(1, 1, 3, 3), current_a=10.0),
        Contact("out", 1, shapely.box(size - 3, size - 3, size - 1, size - 1), potential_v=0.0),
    ]
    vias = [ViaLink(x, y, 0, 1, 0.0008, radius_mm=0.3)
            for x, y in ((10, 40), (25, 25), (40, 10), (12, 27), (27, 45), (45, 30))]
    ru0 = resource.getrusage(resource.RUSAGE_SELF)
    t0 = time.perf_counter()
    sol = solve_dc(layers, contacts, vias, pitch_mm=pitch_mm, solver=solver)
    wall = time.perf_counter() - t0
    ru1 = resource.getrusage(resource.RUSAGE_SELF)
    cpu = (ru1.ru_utime - ru0.ru_utime) + (ru1.ru_stime - ru0.ru_stime)
    peak = sol.peak_current_density
    return {
        "pitch_mm": pitch_mm,
        "cells_per_layer": sol.grid.cell_count,
        "unknowns": sol.solver.unknowns,
        "solver": sol.solver.method,
        "iterations": sol.solver.iterations,
        "relative_residual": sol.solver.relative_residual,
        "raster_s": round(sol.solver.raster_s, 2),
        "assemble_s": round(sol.solver.assemble_s, 2),
        "setup_s": round(sol.solver.setup_s, 2),
        "solve_s": round(sol.solver.solve_s, 2),
        "total_s": round(wall, 2),
        "cpu_s": round(cpu, 2),
        "resistance_mohm": round(1e3 * sol.voltage("in", "out") / 10.0, 5),
        "peak_A_per_m": round(peak[0], 1),
        "peak_rss_MB": round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, 1),
    }


def many_vias_case() -> dict:
    """A ground-pour-like case: 1600 clearance holes per layer, 400 vias with lands, capped grid."""
    import shapely

    from loopcheck.physics.dcsolve import Contact, SheetLayer, ViaLink, solve_dc

    holes = [shapely.Point(1 + 1.2 * i, 1 + 1.2 * j).buffer(0.35, quad_segs=8)
             for i in range(40) for j in range(40)]
    pour = shapely.box(0, 0, 50, 50).difference(shapely.union_all(holes))
    vias = [ViaLink(1.6 + 1.2 * i, 1.6 + 1.2 * j, 0, 1, 1e-3, radius_mm=0.15)
            for i in range(0, 40, 2) for j in range(0, 40, 2)]
    contacts = [Contact("a", 0, shapely.box(0, 0, 2, 2), potential_v=1.0),
                Contact("b", 1, shapely.box(48, 48, 50, 50), potential_v=0.0)]
    ru0 = resource.getrusage(resource.RUSAGE_SELF)
    t0 = time.perf_counter()
    sol = solve_dc([SheetLayer(pour, 5e-4), SheetLayer(pour, 5e-4)], contacts, vias, max_cells=300_000)
    wall = time.perf_counter() - t0
    ru1 = resource.getrusage(resource.RUSAGE_SELF)
    return {"pitch_mm": round(sol.pitch_mm, 4), "unknowns": sol.solver.unknowns,
            "iterations": sol.solver.iterations, "raster_s": round(sol.solver.raster_s, 2),
            "assemble_s": round(sol.solver.assemble_s, 2), "setup_s": round(sol.solver.setup_s, 2),
            "solve_s": round(sol.solver.solve_s, 2), "total_s": round(wall, 2),
            "cpu_s": round(ru1.ru_utime - ru0.ru_utime + ru1.ru_stime - ru0.ru_stime, 2),
            "peak_rss_MB": round(ru1.ru_maxrss / 1024, 1)}


def main() -> None:
    if len(sys.argv) >= 2 and sys.argv[1] == "--vias":
        print(json.dumps(many_vias_case()))
        return
    if len(sys.argv) >= 4 and sys.argv[1] == "--one":
        print(json.dumps(pour_case(float(sys.argv[2]), sys.argv[3])))
        return
    quick = "--quick" in sys.argv
    print("load average at start (1, 5, 15 min):", " ".join(f"{v:.2f}" for v in os.getloadavg()))
    print("wall times grow with other load on the machine; cpu s is this process's user+sys time")
    cases = [(0.4, "direct"), (0.4, "amg"), (0.2, "direct"), (0.2, "amg"),
             (0.1, "direct"), (0.1, "amg")]
    if not quick:
        cases += [(0.05, "amg")]
    print(f"{'pitch':>6} {'solver':>7} {'unknowns':>9} {'raster':>7} {'asm':>6} {'setup':>6} "
          f"{'solve':>6} {'total s':>8} {'cpu s':>6} {'it':>4} {'R mohm':>9} {'RSS MB':>8}")
    for pitch, solver in cases:
        out = subprocess.run([sys.executable, __file__, "--one", str(pitch), solver],
                             capture_output=True, text=True, check=True)
        r = json.loads(out.stdout.strip().splitlines()[-1])
        print(f"{pitch:6.2f} {solver:>7} {r['unknowns']:9d} {r['raster_s']:7.2f} "
              f"{r['assemble_s']:6.2f} {r['setup_s']:6.2f} {r['solve_s']:6.2f} {r['total_s']:8.2f} "
              f"{r['cpu_s']:6.2f} {r['iterations']:4d} {r['resistance_mohm']:9.5f} {r['peak_rss_MB']:8.1f}", flush=True)
    print("targets for 0.05 mm / amg: total < 20 s, peak RSS < 4096 MB")
    out = subprocess.run([sys.executable, __file__, "--vias"], capture_output=True, text=True, check=True)
    print("400 vias, 1600 holes per layer, 300k-cell cap:", out.stdout.strip().splitlines()[-1])


if __name__ == "__main__":
    main()
