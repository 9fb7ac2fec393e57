"""The sense resistor: Kelvin error by DC solve against the squares of shared copper, the sense-pair
area, and the clearance to switch-node copper (boards built from geometry)."""

import pytest
from shapely.geometry import box
from shapely.ops import unary_union

from loopcheck.board import Pad
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.measure.sense import measure_sense
from loopcheck.powerstage import OperatingPoint, Role, Stage

from measure_boards import OZ1_M, make_board, square_pad

RHO20 = 1.7241e-8      # IACS annealed copper at 20 C [ohm m]
ALPHA20 = 0.00393      # IACS temperature coefficient [1/K]


def sense_board(tap_mm, kelvin_pad_taps=False, sw_copper=None, sw_layer=0):
    """RS1 (0.1 ohm) with 1 x 1 mm pads at x 0..1 and 2..3; 1 mm power traces on both sides (25 mm);
    0.3 mm sense traces to U1 tapped ``tap_mm`` from each pad's edge (their centrelines),
    or from the pads themselves (Kelvin)."""
    xa, xb = (0.5, 2.5) if kelvin_pad_taps else (-tap_mm, 3 + tap_mm)
    a = unary_union([box(-26, -0.5, 1, 0.5), box(xa - 0.15, 0, xa + 0.15, 10), square_pad(xa, 10, 0.6)])
    b = unary_union([box(2, -0.5, 28, 0.5), box(xb - 0.15, 0, xb + 0.15, 10), square_pad(xb, 10, 0.6)])
    pads = [Pad("ISP", "L1", "2", -25.5, 0, (0,), width_mm=1, height_mm=1),
            Pad("ISP", "RS1", "1", 0.5, 0, (0,), width_mm=1, height_mm=1),
            Pad("ISN", "RS1", "2", 2.5, 0, (0,), width_mm=1, height_mm=1),
            Pad("ISN", "J1", "1", 27.5, 0, (0,), width_mm=1, height_mm=1),
            Pad("ISP", "U1", "3", xa, 10, (0,), width_mm=.6, height_mm=.6),
            Pad("ISN", "U1", "4", xb, 10, (0,), width_mm=.6, height_mm=.6),
            Pad("SW", "L1", "1", -30, 0, (0,), width_mm=1, height_mm=1)]
    top = [a, b, square_pad(-30, 0, 1)]
    bottom = []
    if sw_copper is not None:
        (top if sw_layer == 0 else bottom).append(sw_copper)
        pads.append(Pad("SW", "Q1", "2", sw_copper.centroid.x, sw_copper.centroid.y, (sw_layer,),
                        width_mm=0.5, height_mm=0.5))
    return make_board([top, bottom], pads, values={"RS1": "0.1"})


def sense_stage(with_resistor=True):
    roles = [Role("inductor", "L1", ("L1.1", "L1.2")), Role("controller", "U1", ())]
    if with_resistor:
        roles.append(Role("sense_resistor", "RS1", ("RS1.1", "RS1.2"),
                          pins={"sense+": ("U1.3",), "sense-": ("U1.4",)}))
    return Stage("s1", "buck", "discrete", "SW", "VIN", "ISN", "GND", roles=roles,
                 operating_point=OperatingPoint(iout_a=1.5, ambient_c=25.0))


def test_kelvin_error_is_five_squares_per_tap_side():
    ms = {m.quantity: m for m in measure_sense(MeasureContext(sense_board(5.0)), sense_stage())}
    k = ms["sense.kelvin_error"]
    # expected: each tap sits 5 squares of 1 mm trace (5 mm) before its pad, so the load current
    # adds Rs * 5 * I per side. Rs = rho20 (1 + alpha20 (25 - 20)) / t = 5.0228e-4 ohm/sq for
    # t = 35 um at 25 C; error = 2 * 5 * Rs * I / (I * 0.1 ohm) = 5.0228 %
    rs = RHO20 * (1 + ALPHA20 * 5.0) / OZ1_M
    expected_pct = 100 * 2 * 5 * rs / 0.1                   # 5.0228 %
    assert k.value == pytest.approx(expected_pct, rel=0.05)
    # per tap side: Rs * 5 * I volts
    assert k.detail["error_plus_v"] == pytest.approx(rs * 5 * 1.5, rel=0.05)
    assert k.detail["error_minus_v"] == pytest.approx(rs * 5 * 1.5, rel=0.05)
    assert k.detail["current_in"] == ["L1.2"] and k.detail["current_out"] == ["J1.1"]
    assert k.unit == "%" and k.refs == ("RS1",)


def test_kelvin_error_scales_with_tap_distance_and_vanishes_at_the_pads():
    e2 = measure_sense(MeasureContext(sense_board(2.0)), sense_stage())[0].value
    e5 = measure_sense(MeasureContext(sense_board(5.0)), sense_stage())[0].value
    assert e5 / e2 == pytest.approx(2.5, rel=0.05)
    kelvin = measure_sense(MeasureContext(sense_board(0, kelvin_pad_taps=True)), sense_stage())[0]
    assert kelvin.value < 0.05


def test_sense_pair_area_is_the_polygon_between_the_routes():
    ms = {m.quantity: m for m in measure_sense(MeasureContext(sense_board(5.0)), sense_stage())}
    # resistor pads at x = 0.5, 2.5; taps at x = -5 and x = 8 up to y = 10: a 13 x 10 mm rectangle
    assert ms["sense.pair_area"].value == pytest.approx(130.0, rel=0.02)


def test_switch_node_clearance_same_layer_and_over_it():
    near = box(-8, 3, -6, 6)          # 0.85 mm left of the + tap trace (x = -5.15 .. -4.85)
    ms = {m.quantity: m for m in measure_sense(MeasureContext(sense_board(5.0, sw_copper=near)), sense_stage())}
    c = ms["sense.switch_node_clearance"]
    assert c.value == pytest.approx(0.85, abs=0.05)
    assert c.detail["where"] == "same layer"
    under = box(-6, 3, -4, 6)         # on the bottom layer, under the + tap trace
    ms = {m.quantity: m for m in measure_sense(MeasureContext(sense_board(5.0, sw_copper=under, sw_layer=1)),
                                               sense_stage())}
    assert ms["sense.switch_node_clearance"].value == 0.0


def test_no_sense_resistor_is_not_made():
    ms = {m.quantity: m for m in measure_sense(MeasureContext(sense_board(5.0)), sense_stage(False))}
    assert ms["sense.kelvin_error"].value is None
    assert ms["sense.kelvin_error"].not_made == "no sense resistor in this stage"
    assert ms["sense.pair_area"].not_made == "no sense resistor in this stage"


def test_unknown_resistor_value_is_not_made():
    b = sense_board(5.0)
    b.component_values.clear()
    k = measure_sense(MeasureContext(b), sense_stage())[0]
    assert k.value is None and "value of RS1 is not known" in k.not_made
