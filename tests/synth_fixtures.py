"""Small synthesized boards for the connectivity and inspect tests (an invented buck stage).

``buck_board(variant)`` describes a 2-layer board: input connector J1, input capacitor C1, switch
Q1, diode D1, inductor L1, output capacitor C2, with a bottom ground pour reached by vias.
Variants: "clean", "cut" (the output trace cut in two), "bridge" (a stray copper trace joining
VIN and SW).
"""

from __future__ import annotations

from loopcheck.synth import (SynthBoard, SynthComponent, SynthPad, SynthPour, SynthTrace, SynthVia,
                             write_fab)


def _smd(ref, value, pads):
    return SynthComponent(ref=ref, value=value,
                          pads=[SynthPad(pin=str(i + 1), net=net, x_mm=x, y_mm=y, w_mm=1.4, h_mm=1.4)
                                for i, (net, x, y) in enumerate(pads)])


def buck_board(variant: str = "clean") -> SynthBoard:
    comps = [
        SynthComponent(ref="J1", value="CONN", pads=[
            SynthPad(pin="1", net="VIN", x_mm=5, y_mm=20, w_mm=2.0, h_mm=2.0, hole_mm=1.0, shape="circle"),
            SynthPad(pin="2", net="GND", x_mm=5, y_mm=10, w_mm=2.0, h_mm=2.0, hole_mm=1.0, shape="circle")]),
        _smd("C1", "10uF", [("VIN", 15, 20), ("GND", 15, 16)]),
        _smd("Q1", "PMOS", [("VIN", 25, 20), ("SW", 29, 20), ("GATE", 27, 24)]),
        _smd("D1", "SCHOTTKY", [("SW", 29, 14), ("GND", 29, 10)]),
        _smd("L1", "22uH", [("SW", 35, 20), ("OUT", 45, 20)]),
        _smd("C2", "22uF", [("OUT", 52, 20), ("GND", 52, 16)]),
        _smd("R1", "10k", [("GATE", 27, 30), ("VIN", 22, 30)]),
    ]
    traces = [
        SynthTrace("VIN", 1, 1.0, [(5, 20), (15, 20), (25, 20)]),
        SynthTrace("VIN", 1, 0.5, [(22, 30), (22, 22), (22, 20)]),
        SynthTrace("GATE", 1, 0.4, [(27, 24), (27, 30)]),
        SynthTrace("SW", 1, 1.0, [(29, 20), (29, 14)]),
        SynthTrace("SW", 1, 1.0, [(29, 20), (35, 20)]),
    ]
    if variant == "cut":
        traces += [SynthTrace("OUT", 1, 1.0, [(45, 20), (47.5, 20)]),
                   SynthTrace("OUT", 1, 1.0, [(49.5, 20), (52, 20)])]
    else:
        traces.append(SynthTrace("OUT", 1, 1.0, [(45, 20), (52, 20)]))
    if variant == "bridge":
        traces.append(SynthTrace("VIN", 1, 0.3, [(25, 20.6), (27.0, 20.6), (29, 20.6)]))
    vias = [SynthVia("GND", 15, 13.5, 0.4, 0.8), SynthVia("GND", 29, 7.5, 0.4, 0.8),
            SynthVia("GND", 52, 13.5, 0.4, 0.8)]
    traces += [SynthTrace("GND", 1, 0.8, [(15, 16), (15, 13.5)]), SynthTrace("GND", 1, 0.8, [(29, 10), (29, 7.5)]),
               SynthTrace("GND", 1, 0.8, [(52, 16), (52, 13.5)])]
    pours = [SynthPour("GND", 2, [(1, 1), (59, 1), (59, 15), (1, 15)])]
    return SynthBoard(name="buck", width_mm=60, height_mm=35, layer_count=2, components=comps,
                      traces=traces, pours=pours, vias=vias)


def write_buck(folder, variant: str = "clean", **options):
    """Write the board's fab outputs into ``folder``; returns write_fab's paths."""
    return write_fab(buck_board(variant), folder, **options)
