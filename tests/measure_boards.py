"""Boards built directly from shapely geometry and pad lists, for the measurement tests (no files)."""

from __future__ import annotations

from shapely.geometry import LineString, box
from shapely.ops import unary_union

from loopcheck.board import Board, CopperLayer, Dielectric, Outline, Pad, Stackup

OZ1_M = 35e-6


def trace(points, width_mm):
    """A straight-segment trace with mitred corners and flat ends [mm]."""
    return LineString(points).buffer(width_mm / 2, cap_style="flat", join_style="mitre", mitre_limit=3)


def square_pad(x, y, size):
    return box(x - size / 2, y - size / 2, x + size / 2, y + size / 2)


def smd(net, ref, pin, x, y, size=1.0, layer=0):
    return Pad(net=net, ref=ref, pin=str(pin), x_mm=x, y_mm=y, layers=(layer,), width_mm=size, height_mm=size)


def make_board(layer_geoms, pads, dielectric_mm=None, name="synthetic", copper_m=OZ1_M, eps_r=4.5,
               holes=(), values=None):
    """A Board with the given copper per layer (top first) and pads; stackup from the arguments."""
    n = len(layer_geoms)
    names = ["top"] + [f"inner{k}" for k in range(1, n - 1)] + (["bottom"] if n > 1 else [])
    if dielectric_mm is None:
        dielectric_mm = [1.5] * (n - 1)
    layers = [CopperLayer(index=k, name=names[k], file=None, geometry=unary_union(g) if isinstance(g, list) else g,
                          thickness_m=copper_m) for k, g in enumerate(layer_geoms)]
    allg = unary_union([l.geometry for l in layers])
    minx, miny, maxx, maxy = allg.bounds
    outline = Outline(box(minx - 5, miny - 5, maxx + 5, maxy + 5), "test", from_extent=True)
    stackup = Stackup(copper_thickness_m=[copper_m] * n,
                      dielectrics=[Dielectric(d * 1e-3, eps_r) for d in dielectric_mm],
                      finished_thickness_m=sum(dielectric_mm) * 1e-3 + n * copper_m)
    return Board(name=name, layers=layers, outline=outline, stackup=stackup, pads=list(pads),
                 holes=list(holes), component_values=dict(values or {}))


# --------------------------------------------------------------------------------------------
# A small LED buck written as real fab outputs (synth), for the end-to-end analysis tests

def synth_led_buck(name="mini-led-buck", kelvin=True):
    """A discrete LED buck on 2 layers: J1 in, C1, Q1 high side, D1, L1, RS1 high-side sense,
    U1 controller with C2 on its supply pin, J2 to the LED string; GND pour on the bottom.

    ``kelvin``: the sense traces leave the resistor's own pads; else they tap the power trace
    6 mm before each pad (shared copper)."""
    from loopcheck.synth import (SynthBoard, SynthComponent, SynthPad, SynthTrace, SynthVia,
                                 pours_with_clearance)

    def smd2(ref, value, a, b, size=(1.2, 1.2)):
        return SynthComponent(ref, value, [SynthPad("1", a[0], a[1], a[2], *size),
                                           SynthPad("2", b[0], b[1], b[2], *size)])

    comps = [
        SynthComponent("J1", "IN", [SynthPad("1", "VIN", 3, 20, 2.0, 2.0, hole_mm=1.0),
                                    SynthPad("2", "GND", 3, 10, 2.0, 2.0, hole_mm=1.0)]),
        smd2("C1", "10uF", ("VIN", 10, 20), ("GND", 10, 17)),
        SynthComponent("Q1", "NMOS", [SynthPad("1", "GATE", 14.5, 22.5, 1.0, 1.0),
                                      SynthPad("2", "SW", 16, 20, 1.2, 1.2),
                                      SynthPad("3", "VIN", 13, 20, 1.2, 1.2)]),
        smd2("D1", "SCHOTTKY", ("SW", 16, 17), ("GND", 13, 17)),
        smd2("L1", "33uH", ("SW", 20, 18.5), ("LEDP", 26, 18.5), size=(2.0, 3.0)),
        smd2("RS1", "0.1", ("LEDP", 29, 18.5), ("LEDS", 31.5, 18.5)),
        SynthComponent("U1", "CTRL", [
            SynthPad("1", "VIN", 20, 28, 1.0, 0.6), SynthPad("2", "GND", 20, 27, 1.0, 0.6),
            SynthPad("3", "GATE", 20, 26, 1.0, 0.6), SynthPad("4", "LEDP", 24, 26, 1.0, 0.6),
            SynthPad("5", "LEDS", 24, 27, 1.0, 0.6), SynthPad("6", "VCC", 24, 28, 1.0, 0.6)]),
        smd2("C2", "1uF", ("VCC", 26, 29.5), ("GND", 28, 29.5), size=(1.0, 1.0)),
        SynthComponent("J2", "LED", [SynthPad("1", "LEDS", 37, 20, 2.0, 2.0, hole_mm=1.0),
                                     SynthPad("2", "GND", 37, 10, 2.0, 2.0, hole_mm=1.0)]),
    ]
    t = [
        SynthTrace("VIN", 1, 1.0, [(3, 20), (13, 20)]),
        SynthTrace("VIN", 1, 0.3, [(10, 20), (10, 28), (20, 28)]),
        SynthTrace("SW", 1, 1.0, [(16, 20), (16, 17)]),
        SynthTrace("SW", 1, 1.0, [(16, 18.5), (20, 18.5)]),
        SynthTrace("GND", 1, 1.0, [(13, 17), (10, 17)]),
        SynthTrace("GND", 1, 0.6, [(13, 17), (13, 15.5)]),
        SynthTrace("GND", 1, 0.6, [(10, 17), (10, 15.5)]),
        SynthTrace("GND", 1, 0.3, [(20, 27), (18.5, 27)]),
        SynthTrace("GND", 1, 0.3, [(28, 29.5), (28, 31)]),
        SynthTrace("GATE", 1, 0.3, [(14.5, 22.5), (14.5, 26), (20, 26)]),
        SynthTrace("LEDP", 1, 1.0, [(26, 18.5), (29, 18.5)]),
        SynthTrace("LEDS", 1, 1.0, [(31.5, 18.5), (37, 18.5), (37, 20)]),
        SynthTrace("VCC", 1, 0.3, [(24, 28), (24, 29.5), (26, 29.5)]),
    ]
    if kelvin:
        t += [SynthTrace("LEDP", 1, 0.3, [(29, 18.5), (29, 26), (24, 26)]),
              SynthTrace("LEDS", 1, 0.3, [(31.5, 18.5), (31.5, 27), (24, 27)])]
    else:
        # the + tap leaves the inductor's pad (1.4 squares of power trace before RS1.1), the - tap
        # the power trace 3.4 mm beyond RS1.2
        t += [SynthTrace("LEDP", 1, 0.3, [(26, 18.5), (26, 23), (25, 23), (25, 26), (24, 26)]),
              SynthTrace("LEDS", 1, 0.3, [(35.5, 18.5), (35.5, 27), (24, 27)])]
    vias = [SynthVia("GND", 13, 15.5, 0.4, 0.8), SynthVia("GND", 10, 15.5, 0.4, 0.8),
            SynthVia("GND", 18.5, 27, 0.4, 0.8), SynthVia("GND", 28, 31, 0.4, 0.8)]
    b = SynthBoard(name, 40, 33, 2, comps, t, [], vias)
    b.pours += pours_with_clearance(b, "GND", 2, [(0.5, 0.5), (39.5, 0.5), (39.5, 32.5), (0.5, 32.5)], 0.4)
    return b


MINI_TOML = """
[board]
name = "{name}"

[components]
RS1 = "0.1"

[operating_point]
vin_v = [20, 30]
vout_v = 12
iout_a = 1.0
fsw_hz = 400e3
edge_ns = 20
"""


def write_synth_project(board, folder):
    """Write a synth board's fab outputs and a loopcheck.toml into ``folder``; return the Project."""
    from pathlib import Path

    from loopcheck.project import load_project
    from loopcheck.synth import write_fab

    folder = Path(folder)
    write_fab(board, folder)
    (folder / "loopcheck.toml").write_text(MINI_TOML.format(name=board.name))
    return load_project(folder)
