"""The switching loop against closed forms, on boards built from geometry.

References used below (computed here independently of loopcheck.physics):
- F. W. Grover, "Inductance Calculations" (1946), rectangular loop of round wire, as given in
  C. R. Paul, "Inductance: Loop and Partial" (2010), ch. 5:
  L = (mu0/pi) [a ln(2a/r) + b ln(2b/r) - a ln((a+c)/b) - b ln((b+c)/a) + 2c - 2(a+b)],
  c = sqrt(a^2 + b^2), with the flat strip's equivalent radius r = 0.2235 (w + t) (Grover, GMD of
  a rectangle).
- E. O. Hammerstad, "Equations for microstrip circuit design", 1975: Z0 of a microstrip in air,
  u = w/h <= 1: 60 ln(8/u + u/4); u >= 1: 120 pi / (u + 1.393 + 0.667 ln(u + 1.444)); the
  inductance per length L' = Z0_air / c0.
"""

import math

import pytest
from shapely.geometry import box
from shapely.ops import unary_union

from loopcheck.board import Pad
from loopcheck.measure.hotloop import build_loop, enclosed_area, loop_inductance, measure_hot_loop
from loopcheck.measure.loopfield import PART_LIFT_MM
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.powerstage import OperatingPoint, Stage

from measure_boards import OZ1_M, make_board, smd, square_pad, trace

MU0 = 4e-7 * math.pi
C0 = 299_792_458.0
W = 0.5           # trace width [mm]
LOOP = ("C1.1", "Q1.1", "Q1.2", "D1.1", "D1.2", "C1.2")


def grover_rectangle_h(a_m, b_m, r_m):
    c = math.hypot(a_m, b_m)
    return MU0 / math.pi * (a_m * math.log(2 * a_m / r_m) + b_m * math.log(2 * b_m / r_m)
                            - a_m * math.log((a_m + c) / b_m) - b_m * math.log((b_m + c) / a_m)
                            + 2 * c - 2 * (a_m + b_m))


def hammerstad_l_per_m(w, h):
    u = w / h
    z0 = 60 * math.log(8 / u + u / 4) if u <= 1 else 120 * math.pi / (u + 1.393 + 0.667 * math.log(u + 1.444))
    return z0 / C0


def rect_loop_copper():
    """30 x 15 mm through the pad centres: C1 at the left (pads 2 mm apart), Q1 and D1 on the right."""
    vin = unary_union([trace([(0, 15), (30, 15)], W), square_pad(0, 15, W), square_pad(30, 15, W)])
    sw = unary_union([trace([(30, 13), (30, 2)], W), square_pad(30, 13, W), square_pad(30, 2, W)])
    gnd = unary_union([trace([(30, 0), (0, 0), (0, 13)], W), square_pad(30, 0, W), square_pad(0, 13, W)])
    pads = [smd("VIN", "C1", 1, 0, 15, W), smd("GND", "C1", 2, 0, 13, W), smd("VIN", "Q1", 1, 30, 15, W),
            smd("SW", "Q1", 2, 30, 13, W), smd("SW", "D1", 1, 30, 2, W), smd("GND", "D1", 2, 30, 0, W)]
    return [vin, sw, gnd], pads


def stage(loop=LOOP, **op):
    return Stage("s1", "buck", "discrete", "SW", "VIN", "OUT", "GND", hot_loop=loop,
                 operating_point=OperatingPoint(**op))


def test_rectangular_loop_area_and_inductance_vs_grover():
    cu, pads = rect_loop_copper()
    b = make_board([cu, []], pads)
    ctx = MeasureContext(b)
    loop = build_loop(ctx, LOOP)
    area, _ = enclosed_area(loop.projected())
    assert area == pytest.approx(450.0, rel=0.02)
    L, notes, det = loop_inductance(ctx, loop)
    r = 0.2235 * (W * 1e-3 + OZ1_M)
    ref = grover_rectangle_h(30e-3, 15e-3, r)          # 78.39 nH
    assert ref == pytest.approx(78.39e-9, rel=1e-3)
    assert L == pytest.approx(ref, rel=0.10)
    assert det["segments_over_plane"] == 0


@pytest.mark.parametrize("h_mm", [1.5, 0.2])
def test_loop_over_solid_plane_vs_microstrip(h_mm):
    cu, pads = rect_loop_copper()
    plane = box(-10, -10, 40, 25)
    b = make_board([cu, plane], pads, dielectric_mm=[h_mm])
    ctx = MeasureContext(b)
    loop = build_loop(ctx, LOOP)
    L, notes, det = loop_inductance(ctx, loop)
    ref = 90e-3 * hammerstad_l_per_m(W, h_mm)          # perimeter x L' (Hammerstad 1975)
    assert L == pytest.approx(ref, rel=0.15)
    assert det["segments_over_plane"] >= 6
    assert any("solid plane" in n for n in notes)
    # the plane lowers the loop inductance below its free-space value
    assert L < det["free_space_nH"] * 1e-9


def test_switching_consequences_follow_from_the_inductance():
    cu, pads = rect_loop_copper()
    b = make_board([cu, []], pads)
    op = dict(vin_min_v=12, vin_max_v=24, vout_v=5, iout_a=2.0, edge_s=10e-9, ripple_ratio=0.4,
              switch_capacitance_f=1e-9)
    ms = {m.quantity: m for m in measure_hot_loop(MeasureContext(b), stage(**op))}
    L = ms["hot_loop.inductance"].value * 1e-9
    i_sw = 2.0 * (1 + 0.4 / 2)                      # the inductor's peak current
    assert ms["hot_loop.overshoot"].value == pytest.approx(100 * L * i_sw / 10e-9 / 24, rel=1e-9)
    assert ms["hot_loop.ringing_frequency"].value == pytest.approx(1 / (2 * math.pi * math.sqrt(L * 1e-9)) / 1e6,
                                                                   rel=1e-9)
    assert ms["hot_loop.edge_energy"].value == pytest.approx(0.5 * L * i_sw ** 2 * 1e9, rel=1e-9)
    assert ms["hot_loop.vias"].value == 0
    a = ms["hot_loop.area"]
    assert a.unit == "mm2" and a.terminals == LOOP and a.drawings and a.assumptions
    assert len(a.detail["path"]) >= 6


def test_vias_in_the_loop_are_counted():
    # the ground leg runs on the bottom layer, down and up through two vias
    vin = unary_union([trace([(0, 15), (30, 15)], W), square_pad(0, 15, W), square_pad(30, 15, W)])
    sw = unary_union([trace([(30, 13), (30, 2)], W), square_pad(30, 13, W), square_pad(30, 2, W)])
    gtop = unary_union([trace([(30, 0), (28, 0)], W), square_pad(30, 0, W), trace([(0, 13), (0, 11)], W),
                        square_pad(0, 13, W)] + [box(x - .4, y - .4, x + .4, y + .4) for x, y in ((28, 0), (0, 11))])
    gbot = unary_union([trace([(28, 0), (0, 0), (0, 11)], W)] +
                       [box(x - .4, y - .4, x + .4, y + .4) for x, y in ((28, 0), (0, 11))])
    pads = [smd("VIN", "C1", 1, 0, 15, W), smd("GND", "C1", 2, 0, 13, W), smd("VIN", "Q1", 1, 30, 15, W),
            smd("SW", "Q1", 2, 30, 13, W), smd("SW", "D1", 1, 30, 2, W), smd("GND", "D1", 2, 30, 0, W),
            Pad("GND", "", "", 28, 0, (0, 1), hole_mm=0.3, is_via=True),
            Pad("GND", "", "", 0, 11, (0, 1), hole_mm=0.3, is_via=True)]
    b = make_board([[vin, sw, gtop], gbot], pads)
    ms = {m.quantity: m for m in measure_hot_loop(MeasureContext(b), stage())}
    assert ms["hot_loop.vias"].value == 2
    assert ms["hot_loop.area"].value == pytest.approx(450, rel=0.02)


def test_return_in_a_plane_runs_under_the_outgoing_conductor_and_a_slot_is_reported():
    # outgoing VIN and SW on top; the ground return in a bottom-layer GND plane, joined by vias
    # at C1.2 and D1.2. A continuous plane lets the return run under the outgoing path (small
    # area); a slot across it forces a detour that is reported.
    def board(slot):
        vin = unary_union([trace([(0, 15), (30, 15)], W), square_pad(0, 15, W), square_pad(30, 15, W)])
        sw = unary_union([trace([(30, 13), (30, 2)], W), square_pad(30, 13, W), square_pad(30, 2, W)])
        gtop = unary_union([square_pad(0, 13, 0.8), square_pad(30, 0, 0.8)])
        plane = box(-5, -5, 35, 20)
        if slot:
            plane = plane.difference(box(14, 8, 16, 21))       # cuts under the VIN trace
        pads = [smd("VIN", "C1", 1, 0, 15, W), smd("GND", "C1", 2, 0, 13, W), smd("VIN", "Q1", 1, 30, 15, W),
                smd("SW", "Q1", 2, 30, 13, W), smd("SW", "D1", 1, 30, 2, W), smd("GND", "D1", 2, 30, 0, W),
                Pad("GND", "", "", 0, 13, (0, 1), hole_mm=0.3, is_via=True),
                Pad("GND", "", "", 30, 0, (0, 1), hole_mm=0.3, is_via=True)]
        return make_board([[vin, sw, gtop], plane], pads, dielectric_mm=[0.3])

    ok = {m.quantity: m for m in measure_hot_loop(MeasureContext(board(False)), stage())}
    cut = {m.quantity: m for m in measure_hot_loop(MeasureContext(board(True)), stage())}
    assert ok["hot_loop.area"].value < 60          # the return hugs the outgoing path
    assert not any("gap" in a for a in ok["hot_loop.area"].assumptions)
    assert cut["hot_loop.area"].value > ok["hot_loop.area"].value + 15
    assert any("gap in the GND copper" in a for a in cut["hot_loop.area"].assumptions)
    assert cut["hot_loop.inductance"].value > ok["hot_loop.inductance"].value


def test_enclosed_area_of_self_crossing_and_folded_paths():
    eight = [(0, 0), (10, 10), (10, 0), (0, 10)]       # a bow tie: two triangles of 25 mm2
    assert enclosed_area(eight)[0] == pytest.approx(50.0)
    assert enclosed_area([(0, 0), (10, 0), (20, 0), (10, 0)])[0] == 0.0


def test_no_hot_loop_is_not_made_with_reason():
    cu, pads = rect_loop_copper()
    b = make_board([cu, []], pads)
    st = stage(loop=())
    st.missing = ["input capacitor"]
    ms = measure_hot_loop(MeasureContext(b), st)
    assert len(ms) == 6 and all(m.value is None for m in ms)
    assert all("hot loop was not found" in m.not_made and "input capacitor" in m.not_made for m in ms)
    ms = measure_hot_loop(MeasureContext(b), stage(loop=("C1.1", "X9.1", "D1.2")))
    assert all(m.value is None and "X9.1" in m.not_made for m in ms)


def test_circular_loop_vs_the_closed_form():
    # a ring trace of radius 10 mm, 0.5 mm wide, cut at 0 and 180 degrees into two nets joined by
    # two small parts: the loop through copper and parts against the circular loop of Grover
    # (1946), L = mu0 R [ln(8R/r) - 2], with the strip's equivalent radius
    from shapely.geometry import Point
    R, gap = 10.0, 1.0
    ring = Point(0, 0).buffer(R + W / 2, quad_segs=64).difference(Point(0, 0).buffer(R - W / 2, quad_segs=64))
    upper = ring.intersection(box(-20, gap / 2, 20, 20))
    lower = ring.intersection(box(-20, -20, 20, -gap / 2))
    pads = [smd("N2", "P1", 1, R, -gap / 2 - W / 2, W), smd("N1", "P1", 2, R, gap / 2 + W / 2, W),
            smd("N1", "P2", 1, -R, gap / 2 + W / 2, W), smd("N2", "P2", 2, -R, -gap / 2 - W / 2, W)]
    b = make_board([[upper, lower], []], pads)
    ctx = MeasureContext(b)
    loop = build_loop(ctx, ("P1.1", "P1.2", "P2.1", "P2.2"))
    area, _ = enclosed_area(loop.projected())
    assert area == pytest.approx(math.pi * R ** 2, rel=0.02)
    L, _, _ = loop_inductance(ctx, loop)
    r = 0.2235 * (W + OZ1_M * 1e3) * 1e-3
    ref = MU0 * R * 1e-3 * (math.log(8 * R * 1e-3 / r) - 2)       # 56.6 nH
    assert L == pytest.approx(ref, rel=0.05)


def test_switches_inside_the_controller_loop():
    # cap + -> the IC's VIN pin, through the IC to its GND pin, back to cap -: a 6 x 4 mm loop
    vin = unary_union([trace([(0, 4), (6, 4)], W), square_pad(0, 4, W), square_pad(6, 4, W)])
    gnd = unary_union([trace([(6, 0), (0, 0)], W), square_pad(6, 0, W), square_pad(0, 0, W)])
    pads = [smd("VIN", "C1", 1, 0, 4, W), smd("GND", "C1", 2, 0, 0, W),
            smd("VIN", "U1", 1, 6, 4, W), smd("GND", "U1", 2, 6, 0, W)]
    b = make_board([[vin, gnd], []], pads)
    st = Stage("s1", "buck", "integrated", "SW", "VIN", "OUT", "GND", hot_loop=("C1.1", "U1.1", "U1.2", "C1.2"))
    ms = {m.quantity: m for m in measure_hot_loop(MeasureContext(b), st)}
    assert ms["hot_loop.area"].value == pytest.approx(24.0, rel=0.02)
    ref = grover_rectangle_h(6e-3, 4e-3, 0.2235 * (W * 1e-3 + OZ1_M))
    assert ms["hot_loop.inductance"].value * 1e-9 == pytest.approx(ref, rel=0.10)
    assert any("through a part" in a for a in ms["hot_loop.inductance"].assumptions)


@pytest.mark.parametrize("h_mm", [0.2, 0.5, 1.5])
def test_return_in_own_plane_vs_microstrip(h_mm):
    # VIN and SW out on top (30 + 2 + 11 + 2 mm through parts and traces), the ground return in
    # the bottom GND plane h_mm below, joined by vias at C1.2 and D1.2: the loop is a 45 mm
    # microstrip over its return plane, 45 mm x L'(Hammerstad 1975) plus the two vias
    vin = unary_union([trace([(0, 15), (30, 15)], W), square_pad(0, 15, W), square_pad(30, 15, W)])
    sw = unary_union([trace([(30, 13), (30, 2)], W), square_pad(30, 13, W), square_pad(30, 2, W)])
    gtop = unary_union([square_pad(0, 13, 0.8), square_pad(30, 0, 0.8)])
    pads = [smd("VIN", "C1", 1, 0, 15, W), smd("GND", "C1", 2, 0, 13, W), smd("VIN", "Q1", 1, 30, 15, W),
            smd("SW", "Q1", 2, 30, 13, W), smd("SW", "D1", 1, 30, 2, W), smd("GND", "D1", 2, 30, 0, W),
            Pad("GND", "", "", 0, 13, (0, 1), hole_mm=0.3, is_via=True),
            Pad("GND", "", "", 30, 0, (0, 1), hole_mm=0.3, is_via=True)]
    b = make_board([[vin, sw, gtop], box(-5, -5, 35, 20)], pads, dielectric_mm=[h_mm])
    ctx = MeasureContext(b)
    loop = build_loop(ctx, LOOP)
    assert enclosed_area(loop.projected())[0] < 5          # the return runs under the outgoing path
    L, notes, det = loop_inductance(ctx, loop)
    assert det["return_plane"] == "bottom"
    # the three parts (6 of the 45 mm) carry their current in their bodies, PART_LIFT_MM above
    # the pads: microstrip at that height there, Hammerstad's formula at each height
    lift = PART_LIFT_MM
    ref = 39e-3 * hammerstad_l_per_m(W, h_mm) + 6e-3 * hammerstad_l_per_m(W, h_mm + lift)
    assert L == pytest.approx(ref, rel=0.15)
