"""The three invented demo boards as plain geometry, built into ``loopcheck.synth`` descriptions.

Invented scenario (no real product): a constant-current LED driver (buck, P-channel high-side
switch, Schottky rectifier, sense resistor in the inductor path, 20-40 V in, 1.5 A, 400 kHz) laid
out tidily and sprawling on 2 layers, and a 4-layer synchronous buck (12 V to 5 V, 3 A, 500 kHz)
with a solid ground plane on layer 2 under its switching loop.

Coordinates in mm, board origin at the lower left, seen from the top. Footprints are invented and
generic (pad sizes close to common packages). Pours are cut back around other nets' copper here,
in shapely, so that the written pour is exactly the copper meant.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from shapely.geometry import LineString, MultiPolygon, Point, Polygon, box
from shapely.ops import unary_union

from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, SynthPour, SynthTrace, SynthVia

CLEARANCE_MM = 0.3          # pour cut-back around other nets' copper
VIA_DRILL_MM = 0.4
VIA_PAD_MM = 0.8


# --------------------------------------------------------------------------------------------
# footprints: pin -> (dx, dy, w, h) at rotation 0; rotation in 90 degree steps, counter-clockwise

def _rot(dx, dy, w, h, rot):
    rot %= 360
    if rot == 0:
        return dx, dy, w, h
    if rot == 90:
        return -dy, dx, h, w
    if rot == 180:
        return -dx, -dy, w, h
    if rot == 270:
        return dy, -dx, h, w
    raise ValueError(rot)


# a three-terminal power transistor package (DPAK-like): gate and source leads, drain tab
POWER3 = {"1": (-2.3, -3.8, 1.2, 2.0), "2": (2.3, -3.8, 1.2, 2.0), "3": (0.0, 0.9, 6.0, 6.2)}
# a small three-terminal power package (3 mm class): gate and wide source pads, drain pad
POWER3_SMALL = {"1": (-1.0, -1.35, 0.7, 0.8), "2": (0.6, -1.35, 1.6, 1.0), "3": (0.0, 0.55, 3.0, 2.2)}
# SMA-like diode, vertical: pin 1 (cathode) on top
DIODE_V = {"1": (0.0, 2.1, 1.5, 2.2), "2": (0.0, -2.1, 1.5, 2.2)}
# 1210 capacitor: horizontal (pin 1 left) and vertical (pin 1 on top)
CAP1210_H = {"1": (-1.5, 0.0, 1.2, 2.6), "2": (1.5, 0.0, 1.2, 2.6)}
CAP1210_V = {"1": (0.0, 1.5, 2.6, 1.2), "2": (0.0, -1.5, 2.6, 1.2)}
# 0603 passives
P0603_H = {"1": (0.8, 0.0, 0.9, 0.9), "2": (-0.8, 0.0, 0.9, 0.9)}     # pin 1 right
P0603_V = {"1": (0.0, 0.8, 0.9, 0.9), "2": (0.0, -0.8, 0.9, 0.9)}     # pin 1 on top
# 2512 resistor, horizontal (pin 1 left) and vertical (pin 1 on top)
R2512_H = {"1": (-2.9, 0.0, 1.4, 3.4), "2": (2.9, 0.0, 1.4, 3.4)}
R2512_V = {"1": (0.0, 2.9, 3.4, 1.4), "2": (0.0, -2.9, 3.4, 1.4)}
# power inductor, pads 8 mm apart, horizontal
IND_H = {"1": (-4.0, 0.0, 2.6, 3.6), "2": (4.0, 0.0, 2.6, 3.6)}
# SOIC-8: pins 1-4 down the left side, 5-8 up the right side
SOIC8 = {str(i + 1): (-2.7, 1.905 - 1.27 * i, 1.55, 0.6) for i in range(4)}
SOIC8.update({str(i + 5): (2.7, -1.905 + 1.27 * i, 1.55, 0.6) for i in range(4)})


@dataclass
class Builder:
    name: str
    width_mm: float
    height_mm: float
    layer_count: int = 2
    components: list[SynthComponent] = field(default_factory=list)
    traces: list[SynthTrace] = field(default_factory=list)
    vias: list[SynthVia] = field(default_factory=list)
    pour_regions: list[tuple[str, int, Polygon]] = field(default_factory=list)

    def part(self, ref, value, footprint, x, y, nets: dict[str, str], rot=0, layer="top"):
        pads = []
        for pin, (dx, dy, w, h) in footprint.items():
            dx, dy, w, h = _rot(dx, dy, w, h, rot)
            pads.append(SynthPad(pin, nets[pin], round(x + dx, 4), round(y + dy, 4), w, h, layer))
        self.components.append(SynthComponent(ref, value, pads))
        return {p.pin: (p.x_mm, p.y_mm) for p in pads}

    def tht(self, ref, value, pins: list[tuple[str, str, float, float]], pad=2.2, hole=1.1):
        pads = [SynthPad(pin, net, x, y, pad, pad, "top", hole_mm=hole, shape="circle")
                for pin, net, x, y in pins]
        self.components.append(SynthComponent(ref, value, pads))

    def trace(self, net, width, *points, layer=1):
        self.traces.append(SynthTrace(net, layer, width, [tuple(map(float, p)) for p in points]))

    def via(self, net, x, y):
        self.vias.append(SynthVia(net, x, y, VIA_DRILL_MM, VIA_PAD_MM))

    def pour(self, net, layer, polygon: Polygon):
        self.pour_regions.append((net, layer, polygon))

    # -- geometry ---------------------------------------------------------------------------
    def copper(self, include_pours=True) -> dict[int, dict[str, object]]:
        """layer (1..N) -> net -> shapely geometry of that net's copper."""
        out: dict[int, dict[str, list]] = {i: {} for i in range(1, self.layer_count + 1)}
        for comp in self.components:
            for p in comp.pads:
                if p.hole_mm is not None:
                    layers = range(1, self.layer_count + 1)
                    shape = Point(p.x_mm, p.y_mm).buffer(p.w_mm / 2, 32)
                else:
                    layers = [1 if p.layer == "top" else self.layer_count]
                    shape = box(p.x_mm - p.w_mm / 2, p.y_mm - p.h_mm / 2, p.x_mm + p.w_mm / 2, p.y_mm + p.h_mm / 2)
                for i in layers:
                    out[i].setdefault(p.net, []).append(shape)
        for t in self.traces:
            out[t.layer].setdefault(t.net, []).append(LineString(t.points).buffer(t.width_mm / 2, 16))
        for v in self.vias:
            for i in out:
                out[i].setdefault(v.net, []).append(Point(v.x_mm, v.y_mm).buffer(v.pad_mm / 2, 32))
        if include_pours:
            for pour in self.pours():
                shape = Polygon(pour.polygon, pour.holes)
                out[pour.layer].setdefault(pour.net, []).append(shape)
        return {i: {n: unary_union(g) for n, g in nets.items()} for i, nets in out.items()}

    def pours(self) -> list[SynthPour]:
        if not hasattr(self, "_pours"):
            base = self.copper(include_pours=False)
            result = []
            for net, layer, region in self.pour_regions:
                others = [g for n, g in base[layer].items() if n != net]
                # through holes and vias of other nets cut every layer
                cut = unary_union(others).buffer(CLEARANCE_MM, 16) if others else Polygon()
                shape = region.difference(cut)
                own = base[layer].get(net)
                pieces = list(shape.geoms) if isinstance(shape, MultiPolygon) else [shape]
                for piece in pieces:
                    if piece.is_empty or piece.area < 0.5:
                        continue
                    if own is None or not piece.intersects(own):
                        continue          # an island that joins nothing: left out
                    piece = piece.simplify(0.01)
                    result.append(SynthPour(net, layer, [tuple(c) for c in piece.exterior.coords[:-1]],
                                            [[tuple(c) for c in r.coords[:-1]] for r in piece.interiors]))
            # outer pours first: a clear hole written after a pour clears only what came before
            result.sort(key=lambda p: -Polygon(p.polygon).area)
            self._pours = result
        return self._pours

    def board(self) -> SynthBoard:
        return SynthBoard(self.name, self.width_mm, self.height_mm, self.layer_count, list(self.components),
                          list(self.traces), self.pours(), list(self.vias))


# --------------------------------------------------------------------------------------------
# the LED driver circuit (same netlist on both 2-layer boards)

LED_VALUES = {"J1": "2-PIN 5.0MM", "J2": "2-PIN 5.0MM", "C1": "4.7uF", "C2": "4.7uF", "C3": "2.2uF",
              "C4": "1uF", "Q1": "PMOS 60V", "D1": "SCHOTTKY 60V 3A", "L1": "33uH", "RS1": "0.1",
              "U1": "CC-BUCK-CTRL", "R1": "100k"}
# controller pins: 1 VIN, 2 enable, 3 own supply (VCC), 4 gate drive, 5-6 ground, 7 CS+, 8 CS-;
# CS- sits on LED+, the sense resistor's far side
U1_NETS = {"1": "VIN", "2": "EN", "3": "VCC", "4": "GATE", "5": "GND", "6": "GND", "7": "CS+", "8": "LED+"}


def led_tidy() -> Builder:
    b = Builder("led-driver-tidy", 62.0, 36.0)
    V = LED_VALUES
    b.tht("J1", V["J1"], [("1", "VIN", 4.0, 8.8), ("2", "GND", 4.0, 3.8)])
    b.part("C2", V["C2"], CAP1210_H, 23.8, 8.8, {"1": "VIN", "2": "GND"})
    b.part("C1", V["C1"], CAP1210_H, 23.8, 12.6, {"1": "VIN", "2": "GND"})
    b.part("Q1", V["Q1"], POWER3, 20.0, 20.0, {"1": "GATE", "2": "VIN", "3": "SW"})
    b.part("D1", V["D1"], DIODE_V, 25.3, 18.8, {"1": "SW", "2": "GND"})
    b.part("L1", V["L1"], IND_H, 35.0, 20.9, {"1": "SW", "2": "CS+"})
    b.part("RS1", V["RS1"], R2512_H, 46.4, 20.9, {"1": "CS+", "2": "LED+"})
    b.part("C3", V["C3"], CAP1210_V, 53.0, 19.4, {"1": "LED+", "2": "GND"})
    b.tht("J2", V["J2"], [("1", "LED+", 58.0, 20.9), ("2", "GND", 58.0, 15.9)])
    b.part("U1", V["U1"], SOIC8, 36.0, 28.0, U1_NETS)
    b.part("C4", V["C4"], P0603_H, 30.2, 27.365, {"1": "VCC", "2": "GND"})
    b.part("R1", V["R1"], P0603_V, 30.5, 30.8, {"1": "VIN", "2": "EN"})
    # input: connector -> C2 -> C1 -> switch source, wide
    b.trace("VIN", 1.5, (4.0, 8.8), (22.3, 8.8))
    b.trace("VIN", 1.5, (22.3, 8.8), (22.3, 12.6), (22.3, 16.2))
    # ground of the hot loop on top, straight from the diode anode to the capacitors
    b.trace("GND", 1.5, (25.3, 16.7), (25.3, 12.6), (25.3, 8.8))
    # switch node: drain tab -> diode cathode -> inductor, 2 mm
    b.trace("SW", 2.0, (20.0, 20.9), (25.3, 20.9))
    b.trace("SW", 2.0, (25.3, 20.9), (31.0, 20.9))
    # inductor -> sense resistor -> output capacitor -> LED connector, 1.5 mm
    b.trace("CS+", 1.5, (39.0, 20.9), (43.5, 20.9))
    b.trace("LED+", 1.5, (49.3, 20.9), (53.0, 20.9))
    b.trace("LED+", 1.5, (53.0, 20.9), (58.0, 20.9))
    b.trace("GND", 1.0, (53.0, 17.9), (53.0, 16.3))
    b.via("GND", 53.0, 16.3)
    # Kelvin sense: from the resistor's own pads, the pair running together to the controller
    b.trace("CS+", 0.3, (43.5, 20.9), (43.5, 22.2), (44.38, 23.08), (44.38, 28.635), (38.7, 28.635))
    b.trace("LED+", 0.3, (49.3, 20.9), (44.9, 20.9), (44.9, 29.135), (39.9, 29.135), (39.9, 29.905),
            (38.7, 29.905))
    # gate drive
    b.trace("GATE", 0.4, (17.7, 16.2), (15.5, 16.2), (15.5, 26.095), (33.3, 26.095))
    # controller supply decoupling and ground
    b.trace("VCC", 0.4, (31.0, 27.365), (33.3, 27.365))
    b.trace("GND", 0.4, (29.4, 27.365), (27.9, 27.365))
    b.via("GND", 27.9, 27.365)
    b.trace("GND", 0.4, (38.7, 26.095), (38.7, 27.365))
    b.trace("GND", 0.4, (38.7, 26.095), (40.8, 26.095))
    b.via("GND", 40.8, 26.095)
    # controller VIN and enable pull-up
    b.trace("VIN", 0.4, (4.0, 8.8), (4.0, 33.0), (32.0, 33.0), (32.0, 29.905), (33.3, 29.905))
    b.trace("VIN", 0.3, (30.5, 31.6), (30.5, 33.0))
    b.trace("EN", 0.3, (30.5, 30.0), (30.5, 28.635), (33.3, 28.635))
    # ground stitching: beside the hot-loop ground and across the board
    for x, y in [(25.3, 10.7), (25.3, 14.6), (27.2, 16.7), (27.2, 12.6), (27.2, 8.8),
                 (10.0, 20.0), (10.0, 28.0), (20.0, 4.0), (35.0, 12.0), (45.0, 12.0), (55.0, 8.0),
                 (48.0, 32.0), (22.0, 30.0)]:
        b.via("GND", x, y)
    b.trace("GND", 1.0, (25.3, 16.7), (27.2, 16.7))
    b.trace("GND", 1.0, (25.3, 12.6), (27.2, 12.6))
    b.trace("GND", 1.0, (25.3, 8.8), (27.2, 8.8))
    b.pour("GND", 2, box(0.5, 0.5, 61.5, 35.5))
    return b


def led_sprawl() -> Builder:
    b = Builder("led-driver-sprawl", 70.0, 40.0)
    V = LED_VALUES
    b.tht("J1", V["J1"], [("1", "VIN", 4.0, 14.0), ("2", "GND", 4.0, 9.0)])
    b.part("C1", V["C1"], CAP1210_V, 9.0, 12.5, {"1": "VIN", "2": "GND"})
    b.part("C2", V["C2"], CAP1210_V, 13.0, 12.5, {"1": "VIN", "2": "GND"})
    b.part("Q1", V["Q1"], POWER3, 38.0, 24.0, {"1": "GATE", "2": "VIN", "3": "SW"})
    b.part("D1", V["D1"], DIODE_V, 44.5, 22.8, {"1": "SW", "2": "GND"})
    b.part("L1", V["L1"], IND_H, 56.0, 24.9, {"1": "SW", "2": "CS+"})
    b.part("RS1", V["RS1"], R2512_V, 62.0, 13.1, {"1": "CS+", "2": "LED+"})
    # C3 vertical with pin 1 (LED+) at the bottom
    b.part("C3", V["C3"], CAP1210_V, 50.0, 7.5, {"1": "LED+", "2": "GND"}, rot=180)
    b.tht("J2", V["J2"], [("1", "LED+", 66.5, 6.0), ("2", "GND", 66.5, 1.8)])
    b.part("U1", V["U1"], SOIC8, 26.0, 29.0, U1_NETS)
    b.part("C4", V["C4"], P0603_H, 20.2, 28.365, {"1": "VCC", "2": "GND"})
    b.part("R1", V["R1"], P0603_H, 18.8, 29.635, {"1": "EN", "2": "VIN"})
    # input: the capacitors sit at the connector, 25 mm from the switch, thin copper
    b.trace("VIN", 0.6, (4.0, 14.0), (9.0, 14.0), (13.0, 14.0))
    b.trace("VIN", 0.6, (13.0, 14.0), (40.3, 14.0), (40.3, 20.2))
    # ground return the long way round, along the bottom edge
    b.trace("GND", 0.6, (4.0, 9.0), (9.0, 9.0), (9.0, 11.0))
    b.trace("GND", 0.6, (9.0, 11.0), (13.0, 11.0))
    b.trace("GND", 0.6, (13.0, 11.0), (13.0, 4.0), (44.5, 4.0), (44.5, 20.7))
    b.trace("GND", 0.6, (50.0, 9.0), (44.5, 9.0))
    b.trace("GND", 0.6, (66.5, 1.8), (44.5, 1.8), (44.5, 4.0))
    # switch node, 1 mm
    b.trace("SW", 1.0, (38.0, 24.9), (44.5, 24.9))
    b.trace("SW", 1.0, (44.5, 24.9), (52.0, 24.9))
    # inductor -> sense resistor -> output, 1 mm traces of 1 oz copper
    b.trace("CS+", 1.0, (60.0, 24.9), (62.0, 24.9), (62.0, 16.0))
    b.trace("LED+", 1.0, (62.0, 10.2), (62.0, 6.0), (50.0, 6.0))
    b.trace("LED+", 1.0, (62.0, 6.0), (66.5, 6.0))
    # sense traces tap the high-current copper ~8-10 mm from the resistor's pads
    b.trace("CS+", 0.3, (62.0, 24.9), (62.0, 33.0), (31.5, 33.0), (31.5, 29.635), (28.7, 29.635))
    b.trace("LED+", 0.3, (56.0, 6.0), (56.0, 8.0))
    b.via("LED+", 56.0, 8.0)
    b.trace("LED+", 0.3, (56.0, 8.0), (56.0, 30.905), (30.0, 30.905), layer=2)
    b.via("LED+", 30.0, 30.905)
    b.trace("LED+", 0.3, (30.0, 30.905), (28.7, 30.905))
    # gate drive, controller supply and enable
    b.trace("GATE", 0.4, (23.3, 27.095), (21.5, 27.095), (21.5, 20.2), (35.7, 20.2))
    b.trace("VIN", 0.4, (18.0, 14.0), (18.0, 30.905), (23.3, 30.905))
    b.trace("EN", 0.3, (19.6, 29.635), (23.3, 29.635))
    b.trace("VCC", 0.4, (21.0, 28.365), (23.3, 28.365))
    b.trace("GND", 0.4, (28.7, 27.095), (28.7, 28.365))
    b.trace("GND", 0.4, (28.7, 27.095), (30.6, 27.095), (30.6, 27.7))
    b.via("GND", 30.6, 27.7)
    b.trace("GND", 0.4, (19.4, 28.365), (19.4, 26.6))
    b.via("GND", 19.4, 26.6)
    # a bottom ground pour at the connector and under the controller only: it joins nothing
    # near the switch, so the hot loop's return stays on the long top trace
    b.pour("GND", 2, Polygon([(0.5, 0.5), (21.0, 0.5), (21.0, 22.0), (33.0, 22.0), (33.0, 39.5), (0.5, 39.5)]))
    return b


# --------------------------------------------------------------------------------------------
# the 4-layer synchronous buck

SYNC_VALUES = {"J1": "2-PIN 5.0MM", "J2": "2-PIN 5.0MM", "C1": "10uF", "C2": "10uF", "C3": "22uF",
               "C4": "22uF", "C5": "1uF", "C6": "100nF", "Q1": "NMOS 30V", "Q2": "NMOS 30V",
               "L1": "4.7uH", "U1": "SYNC-BUCK-CTRL", "R1": "52.3k", "R2": "10k"}


def sync_buck() -> Builder:
    b = Builder("sync-buck-4layer", 50.0, 27.0, layer_count=4)
    V = SYNC_VALUES
    b.tht("J1", V["J1"], [("1", "VIN", 3.0, 16.55), ("2", "GND", 3.0, 11.55)])
    b.part("C2", V["C2"], CAP1210_V, 7.0, 15.05, {"1": "VIN", "2": "GND"})
    # the hot loop: C1 straddles the high-side drain tab (VIN) and the low-side source (GND)
    b.part("Q1", V["Q1"], POWER3_SMALL, 14.0, 16.0, {"1": "GH", "2": "SW", "3": "VIN"})
    b.part("Q2", V["Q2"], POWER3_SMALL, 19.0, 13.9, {"1": "GL", "2": "GND", "3": "SW"}, rot=180)
    b.part("C1", V["C1"], CAP1210_H, 16.8, 18.9, {"1": "VIN", "2": "GND"})
    b.part("L1", V["L1"], IND_H, 30.0, 7.7, {"1": "SW", "2": "VOUT"})
    b.part("C3", V["C3"], CAP1210_V, 38.0, 6.2, {"1": "VOUT", "2": "GND"})
    b.part("C4", V["C4"], CAP1210_V, 42.0, 6.2, {"1": "VOUT", "2": "GND"})
    b.tht("J2", V["J2"], [("1", "VOUT", 47.0, 7.7), ("2", "GND", 47.0, 2.7)])
    u1 = {"1": "GH", "2": "GL", "3": "BST", "4": "SW", "5": "GND", "6": "VCC", "7": "FB", "8": "VIN"}
    b.part("U1", V["U1"], SOIC8, 28.0, 17.0, u1)
    b.part("C6", V["C6"], P0603_V, 23.0, 15.8, {"1": "BST", "2": "SW"})
    b.part("C5", V["C5"], P0603_H, 33.8, 16.365, {"1": "GND", "2": "VCC"})
    b.part("R1", V["R1"], P0603_V, 38.0, 16.835, {"1": "FB", "2": "VOUT"})
    b.part("R2", V["R2"], P0603_H, 40.4, 17.635, {"1": "GND", "2": "FB"})
    # input
    b.trace("VIN", 2.0, (3.0, 16.55), (7.0, 16.55), (14.0, 16.55))
    b.trace("VIN", 1.5, (14.0, 16.55), (15.3, 18.9))
    b.trace("GND", 1.0, (7.0, 13.55), (7.0, 12.0))
    b.via("GND", 7.0, 12.0)
    # switch node: high-side source -> low-side drain -> inductor
    b.trace("SW", 1.0, (14.6, 14.65), (14.6, 13.6))
    b.trace("SW", 1.5, (14.6, 13.6), (16.3, 13.35), (19.0, 13.35))
    b.trace("SW", 2.0, (19.0, 13.35), (19.0, 7.7))
    b.trace("SW", 2.5, (19.0, 7.7), (26.0, 7.7))
    # hot-loop ground: capacitor to low-side source on top, both into the layer-2 plane
    b.trace("GND", 1.5, (18.3, 18.9), (18.4, 16.0))
    b.trace("GND", 1.0, (18.4, 16.0), (18.4, 15.25))
    b.trace("GND", 1.0, (18.3, 18.9), (18.3, 21.0))
    b.via("GND", 18.3, 21.0)
    b.trace("GND", 1.4, (17.9, 15.45), (16.8, 15.6))     # from inside the source pad
    b.via("GND", 16.8, 15.6)
    # output
    b.trace("VOUT", 2.5, (34.0, 7.7), (38.0, 7.7), (42.0, 7.7), (47.0, 7.7))
    for x in (38.0, 42.0):
        b.trace("GND", 1.0, (x, 4.7), (x, 3.0))
        b.via("GND", x, 3.0)
    # gate drives through vias and the bottom layer
    b.trace("GH", 0.4, (13.0, 14.65), (13.0, 12.8))
    b.via("GH", 13.0, 12.8)
    b.trace("GH", 0.3, (25.3, 18.905), (23.6, 18.905))
    b.via("GH", 23.6, 18.905)
    b.trace("GH", 0.4, (23.6, 18.905), (13.0, 18.905), (13.0, 12.8), layer=4)
    b.trace("GL", 0.3, (25.3, 17.635), (23.6, 17.635))
    b.via("GL", 23.6, 17.635)
    b.trace("GL", 0.4, (23.6, 17.635), (21.0, 16.4), layer=4)
    b.via("GL", 21.0, 16.4)
    b.trace("GL", 0.4, (21.0, 16.4), (20.0, 15.25))
    # bootstrap capacitor and the controller's switch-node pin
    b.trace("BST", 0.3, (25.3, 16.365), (23.0, 16.6))
    b.trace("SW", 0.4, (25.3, 15.095), (23.0, 15.0))
    b.trace("SW", 0.4, (23.0, 15.0), (21.5, 13.35), (19.0, 13.35))
    # controller supply, ground, feedback
    b.trace("VIN", 0.4, (30.7, 18.905), (32.5, 18.905), (32.5, 22.5), (14.0, 22.5), (14.0, 17.0))
    b.trace("VCC", 0.4, (30.7, 16.365), (33.0, 16.365))
    b.trace("GND", 0.4, (34.6, 16.365), (34.6, 14.8))
    b.via("GND", 34.6, 14.8)
    b.trace("GND", 0.4, (30.7, 15.095), (30.7, 13.5))
    b.via("GND", 30.7, 13.5)
    b.trace("FB", 0.3, (30.7, 17.635), (38.0, 17.635), (39.6, 17.635))
    b.trace("VOUT", 0.3, (38.0, 16.035), (38.0, 7.7))
    b.trace("GND", 0.3, (41.2, 17.635), (41.2, 19.2))
    b.via("GND", 41.2, 19.2)
    for x, y in [(4.0, 5.0), (12.0, 4.0), (24.0, 3.0), (30.0, 24.5), (45.0, 22.0), (36.0, 12.0),
                 (25.0, 11.0), (45.0, 13.0), (8.0, 22.0), (4.0, 22.0)]:
        b.via("GND", x, y)
    outline = box(0.3, 0.3, 49.7, 26.7)
    for layer in (2, 3, 4):
        b.pour("GND", layer, outline)
    return b


BUILDERS = {"led-driver-tidy": led_tidy, "led-driver-sprawl": led_sprawl, "sync-buck-4layer": sync_buck}


# --------------------------------------------------------------------------------------------
# a plain shapely check of the description: clearances, pads on their net's copper, every net joined

def check(b: Builder, min_clearance_mm: float = 0.2) -> list[str]:
    """Problems in words (empty: sane): nets closer than ``min_clearance_mm`` on a layer, copper
    outside the board, a net whose pads are not all joined by its copper (across layers through
    vias and through-hole pads)."""
    from itertools import combinations

    problems = []
    cu = b.copper()
    outline = box(0, 0, b.width_mm, b.height_mm)
    for layer, nets in cu.items():
        for (n1, g1), (n2, g2) in combinations(sorted(nets.items()), 2):
            d = g1.distance(g2)
            if d < min_clearance_mm:
                problems.append(f"layer {layer}: {n1} and {n2} {d:.3f} mm apart")
        for net, g in nets.items():
            if not outline.contains(g):
                problems.append(f"layer {layer}: {net} copper outside the board")
    # connectivity: islands per layer joined by vias and through-hole pads
    nodes: dict[tuple[int, str, int], int] = {}
    parent: list[int] = []

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    islands: dict[tuple[int, str], list] = {}
    for layer, nets in cu.items():
        for net, g in nets.items():
            polys = list(g.geoms) if hasattr(g, "geoms") else [g]
            islands[(layer, net)] = polys
            for k in range(len(polys)):
                nodes[(layer, net, k)] = len(parent)
                parent.append(len(parent))

    def island_at(layer, net, x, y):
        for k, poly in enumerate(islands.get((layer, net), [])):
            if poly.buffer(1e-6).contains(Point(x, y)):
                return nodes[(layer, net, k)]
        return None

    joints = [(v.net, v.x_mm, v.y_mm) for v in b.vias]
    joints += [(p.net, p.x_mm, p.y_mm) for c in b.components for p in c.pads if p.hole_mm is not None]
    for net, x, y in joints:
        ids = [island_at(layer, net, x, y) for layer in cu]
        ids = [i for i in ids if i is not None]
        for i in ids[1:]:
            parent[find(i)] = find(ids[0])
    groups: dict[str, set[int]] = {}
    for c in b.components:
        for p in c.pads:
            layer = 1 if (p.hole_mm is not None or p.layer == "top") else b.layer_count
            i = island_at(layer, p.net, p.x_mm, p.y_mm)
            if i is None:
                problems.append(f"{c.ref}.{p.pin}: pad centre not on {p.net} copper")
                continue
            groups.setdefault(p.net, set()).add(find(i))
    for net, g in sorted(groups.items()):
        if len(g) > 1:
            problems.append(f"net {net}: its pads fall in {len(g)} separate copper groups")
    return problems
