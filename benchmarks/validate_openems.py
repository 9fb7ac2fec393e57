"""Outside check of the field solve: openEMS (FDTD) on a 20 x 10 mm loop of 0.5 mm strips.

    /usr/bin/python3 benchmarks/validate_openems.py [--steps N] [--fine MM]

Needs the Debian package python3-openems (for the system python3); its Python module still uses
numpy.float, aliased to float here before importing. A zero-thickness perfectly conducting loop
(centre line 20 x 10 mm, strips 0.5 mm) with a 50 ohm lumped port across a 0.5 mm gap in one
side; L(f) = Im(Z_in) / (2 pi f) from 20 to 400 MHz, compared with loopcheck's field solve of the
same loop (inductive limit, thin strips) and with Grover's rectangle (equivalent radius
0.2235 w for a zero-thickness strip). The FDTD mesh follows the usual rule for thin strips: mesh
lines a third of a cell inside and two thirds outside each strip edge.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

np.float = float          # the openEMS module still refers to numpy.float

ROOT = Path(__file__).resolve().parent.parent


def run_openems(a=20.0, b=10.0, w=0.5, gap=0.5, fine=0.125, steps=80000, end=1e-4):
    from CSXCAD import ContinuousStructure
    from openEMS import openEMS

    fdtd = openEMS(NrTS=steps, EndCriteria=end)
    f0, fc = 210e6, 190e6
    fdtd.SetGaussExcite(f0, fc)
    fdtd.SetBoundaryCond(["MUR"] * 6)
    csx = ContinuousStructure()
    fdtd.SetCSX(csx)
    mesh = csx.GetGrid()
    mesh.SetDeltaUnit(1e-3)
    metal = csx.AddMetal("loop")
    ha, hb = a / 2, b / 2
    # four strips (zero thickness, z = 0), the bottom one cut by the port gap at x = 0
    metal.AddBox(priority=10, start=[-ha - w / 2, hb - w / 2, 0], stop=[ha + w / 2, hb + w / 2, 0])
    metal.AddBox(priority=10, start=[-ha - w / 2, -hb - w / 2, 0], stop=[-ha + w / 2, hb + w / 2, 0])
    metal.AddBox(priority=10, start=[ha - w / 2, -hb - w / 2, 0], stop=[ha + w / 2, hb + w / 2, 0])
    metal.AddBox(priority=10, start=[-ha - w / 2, -hb - w / 2, 0], stop=[-gap / 2, -hb + w / 2, 0])
    metal.AddBox(priority=10, start=[gap / 2, -hb - w / 2, 0], stop=[ha + w / 2, -hb + w / 2, 0])
    port = fdtd.AddLumpedPort(1, 50.0, [-gap / 2, -hb - w / 2, 0], [gap / 2, -hb + w / 2, 0], "x", 1.0,
                              priority=5)
    third = fine / 3
    xs, ys = [0.0, -gap / 2, gap / 2], [0.0]
    for c in (-ha, ha):
        for e, s in ((c - w / 2, -1), (c + w / 2, 1)):
            xs += [e - s * third, e + s * 2 * third]
    for c in (-hb, hb):
        for e, s in ((c - w / 2, -1), (c + w / 2, 1)):
            ys += [e - s * third, e + s * 2 * third]
    span = 60.0
    mesh.AddLine("x", xs + [-span, span])
    mesh.AddLine("y", ys + [-span, span])
    mesh.AddLine("z", [-span, -fine, 0.0, fine, span])
    mesh.SmoothMeshLines("all", 4.0, 1.3)
    path = tempfile.mkdtemp(prefix="openems-loop-")
    t0 = time.time()
    fdtd.Run(path, verbose=0, cleanup=True)
    f = np.linspace(20e6, 400e6, 96)
    port.CalcPort(path, f)
    z = port.uf_tot / port.if_tot
    return f, z.imag / (2 * math.pi * f), time.time() - t0, [len(mesh.GetLines(d)) for d in "xyz"]


def loopcheck_value(a=20e-3, b=10e-3, w=0.5e-3):
    sys.path.insert(0, str(ROOT))
    from loopcheck.physics import closedforms as cf
    from loopcheck.physics import loopsolve as ls

    con = ls.rectangular_loop_conductors(a, b, w, 1e-6, cells_across=4)
    return ls.solve_loop(con, 0).inductance_h, cf.rectangular_loop_inductance(a, b, 0.2235 * w)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--steps", type=int, default=80000)
    ap.add_argument("--fine", type=float, default=0.125)
    args = ap.parse_args()
    L_ls, L_gr = loopcheck_value()
    print(f"loopcheck field solve {L_ls * 1e9:.2f} nH; Grover (r = 0.2235 w) {L_gr * 1e9:.2f} nH")
    f, L, dt, lines = run_openems(fine=args.fine, steps=args.steps)
    print(f"openEMS: {dt:.0f} s, mesh lines x/y/z {lines}")
    for fi, li in zip(f[::10], L[::10]):
        print(f"  {fi / 1e6:6.1f} MHz: {li * 1e9:7.2f} nH")
    mid = L[(f >= 50e6) & (f <= 300e6)]
    Lm = float(np.median(mid))
    print(f"openEMS median 50-300 MHz {Lm * 1e9:.2f} nH (spread {np.ptp(mid) / Lm * 100:.1f} %); "
          f"loopcheck vs openEMS {100 * (L_ls / Lm - 1):+.1f} %")


if __name__ == "__main__":
    main()
