"""High-current paths, input capacitor and controller decoupling distances, switch node
(boards built from geometry)."""

import math

import pytest
from shapely.geometry import box
from shapely.ops import unary_union

from loopcheck.board import Pad
from loopcheck.measure.current import measure_paths, rms_currents
from loopcheck.measure.decoupling import measure_controller_decoupling, measure_input_cap
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.measure.routes import route
from loopcheck.measure.switchnode import measure_switch_node
from loopcheck.powerstage import OperatingPoint, Role, Stage

from measure_boards import OZ1_M, make_board, smd, square_pad, trace

RHO20 = 1.7241e-8
ALPHA20 = 0.00393
EPS0 = 8.8541878128e-12


def sw_trace_board(width=0.300, length=25.4):
    t = unary_union([trace([(0, 0), (length, 0)], width), square_pad(0, 0, 1), square_pad(length, 0, 1)])
    pads = [smd("SW", "Q1", 2, 0, 0), smd("SW", "L1", 1, length, 0)]
    return make_board([t, []], pads)


def sw_stage(**op):
    roles = [Role("switch", "Q1", ("Q1.2",)), Role("inductor", "L1", ("L1.1",))]
    return Stage("s1", "buck", "discrete", "SW", "VIN", "OUT", "GND", roles=roles,
                 operating_point=OperatingPoint(**op))


def test_switch_node_path_resistance_and_ipc2221_rise():
    ms = {m.quantity: m for m in measure_paths(MeasureContext(sw_trace_board()),
                                               sw_stage(iout_a=1.0, ripple_ratio=0.0, vout_v=5.0,
                                                        ambient_c=25.0))}
    rise = ms["path.switch_node.temperature_rise"]
    # IPC-2221 check value (IPC-2221 sec. 6.2, from I = 0.048 dT^0.44 A^0.725): 1 A, 10 C rise, external,
    # 1 oz = 1.378 mil -> A = 16.30 mil^2 = 11.83 mil wide = 0.300 mm
    assert rise.value == pytest.approx(10.0, rel=0.02)
    assert rise.detail["width_mm"] == pytest.approx(0.300, rel=0.01)
    R = ms["path.switch_node.resistance"]
    T = R.detail["temperature_c"]
    assert T == pytest.approx(25.0 + rise.value)
    # uniform strip between the pad edges (1 mm pads): R = Rs(T) * L / W, L = 24.4 mm
    rs = RHO20 * (1 + ALPHA20 * (T - 20)) / OZ1_M
    assert R.value * 1e-3 == pytest.approx(rs * 24.4 / 0.300, rel=0.03)
    loss = ms["path.switch_node.loss"]
    assert loss.value == pytest.approx(1.0 ** 2 * R.value * 1e-3, rel=1e-9)
    c = ms["copper_loss"]
    assert c.value == pytest.approx(100 * loss.value / 5.0, rel=1e-9)
    assert any("lower bound" in a for a in c.assumptions)
    # the paths without ends say why
    assert ms["path.input.resistance"].value is None and ms["path.input.resistance"].not_made


# RMS currents (derived in docs/physics.md "RMS currents"; the waveform shapes are common practice):
# while a path conducts (a fraction F of the period: D for the buck's input, 1 - D for a boost's
# rectifier, 1 for an inductor) its current ramps linearly from I (1 - r/2) to I (1 + r/2), r the
# peak-to-peak ripple over the inductor's mean current I; the mean square of that ramp is
# I^2 * integral_0^1 (1 + r (u - 1/2))^2 du = I^2 (1 + r^2/12), so I_rms = I sqrt(F (1 + r^2/12)).


def test_rms_currents_of_a_buck():
    st = sw_stage(vin_min_v=12, vin_max_v=24, vout_v=3.0, iout_a=2.0, ripple_ratio=0.3)
    cur, notes = rms_currents(st)
    d = 3.0 / 12
    assert cur["input"] == pytest.approx(2.0 * math.sqrt(d * (1 + 0.09 / 12)))
    assert cur["output"] == 2.0
    assert cur["switch_node"] == pytest.approx(2.0 * math.sqrt(1 + 0.09 / 12))


def decoupling_board():
    # VIN: Q1.3 drain at (10, 0); C1 3 mm away on a straight trace, C2 20 mm of meander away.
    # Controller U1 supply pin U1.6 at (0, 10), its capacitor C3 2.5 mm along a trace.
    vin = unary_union([trace([(7, 0), (10, 0)], 0.8), trace([(10, 0), (10, -8), (0, -8), (0, -3)], 0.5),
                       square_pad(7, 0, 1), square_pad(10, 0, 1), square_pad(0, -3, 1)])
    vcc = unary_union([trace([(0, 10), (2.5, 10)], 0.3), square_pad(0, 10, 0.6), square_pad(2.5, 10, 0.8)])
    gnd = unary_union([trace([(7, 2), (12, 2)], 0.8), square_pad(7, 2, 1), square_pad(12, 2, 1),
                       square_pad(0, -1, 1), square_pad(2.5, 12, 0.8)])
    pads = [smd("VIN", "Q1", 3, 10, 0), smd("SW", "Q1", 2, 13, 0), smd("VIN", "C1", 1, 7, 0),
            smd("GND", "C1", 2, 7, 2), smd("VIN", "C2", 1, 0, -3), smd("GND", "C2", 2, 0, -1),
            smd("GND", "D1", 2, 12, 2), smd("VCC", "U1", 6, 0, 10, 0.6), smd("VCC", "C3", 1, 2.5, 10, 0.8),
            smd("GND", "C3", 2, 2.5, 12, 0.8)]
    return make_board([[vin, vcc, gnd], []], pads)


def decoupling_stage():
    roles = [Role("switch", "Q1", ("Q1.3", "Q1.2")), Role("rectifier", "D1", ("D1.2",)),
             Role("input_cap", "C2", ("C2.1", "C2.2")), Role("input_cap", "C1", ("C1.1", "C1.2")),
             Role("controller", "U1", ("U1.6",)),
             Role("controller_decoupling", "C3", ("C3.1", "C3.2"), pins={"supply": ("U1.6",)})]
    return Stage("s1", "buck", "discrete", "SW", "VIN", "OUT", "GND", roles=roles,
                 hot_loop=("C1.1", "Q1.3", "Q1.2", "D1.1", "D1.2", "C1.2"))


def test_input_caps_ranked_by_copper_path():
    ms = {m.quantity: m for m in measure_input_cap(MeasureContext(decoupling_board()), decoupling_stage())}
    p = ms["input_cap.path_length"]
    assert p.refs == ("C1",)                      # the nearer by copper, whatever the role order
    assert p.value == pytest.approx(3.0, abs=0.1)
    rank = p.detail["ranking"]
    assert [r["ref"] for r in rank] == ["C1", "C2"]
    assert rank[0]["rail_path_mm"] == pytest.approx(3.0, abs=0.1)
    # C2 is farther in a straight line (rail + ground) than C1 by copper: not routed, and said so
    assert rank[1]["path_length_mm"] is None and "straight line" in rank[1]["not_routed"]
    # its copper path: centreline 23 mm; the route may cut each of the two corners inside the 0.5 mm trace
    b = decoupling_board()
    r2 = route(MeasureContext(b), b.terminals["C2.1"], b.terminals["Q1.3"])
    assert 23 - 2 * 0.5 <= r2.length_mm <= 23.1
    assert ms["input_cap.straight_distance"].value == pytest.approx(3.0)
    assert p.detail["ground_path_mm"] == pytest.approx(5.0, abs=0.1)      # C1.2 (7, 2) to D1.2 (12, 2)
    L = ms["input_cap.inductance"]
    assert L.value is not None and 0.5 < L.value < 10


def test_controller_decoupling_path():
    m = measure_controller_decoupling(MeasureContext(decoupling_board()), decoupling_stage())[0]
    assert m.value == pytest.approx(2.5, abs=0.1)
    assert m.refs == ("C3",)


def test_missing_roles_are_not_made():
    st = Stage("s1", "buck", "discrete", "SW", "VIN", "OUT", "GND")
    ctx = MeasureContext(decoupling_board())
    assert all(m.value is None and m.not_made for m in measure_input_cap(ctx, st))
    assert measure_controller_decoupling(ctx, st)[0].not_made.startswith("no controller supply decoupling")
    ms = measure_paths(ctx, st)
    assert all(m.value is None and m.not_made for m in ms)


def test_switch_node_area_and_capacitance_over_a_plane():
    sw = unary_union([box(0, 0, 10, 10), square_pad(1, 1, 1), square_pad(9, 9, 1)])
    gnd = box(-5, -5, 15, 15)
    pads = [smd("SW", "Q1", 2, 1, 1), smd("SW", "L1", 1, 9, 9), Pad("GND", "J1", "2", 12, 12, (1,), width_mm=1,
                                                                     height_mm=1)]
    b = make_board([sw, gnd], pads, dielectric_mm=[1.5], eps_r=4.5)
    ms = {m.quantity: m for m in measure_switch_node(MeasureContext(b), sw_stage())}
    assert ms["switch_node.area"].value == pytest.approx(100 - 2, rel=1e-6)     # two 1 mm2 pads inside
    c = ms["switch_node.capacitance"]
    # without fringing, parallel plates: eps0 * 4.5 * 100 mm2 / 1.5 mm = 2.656 pF (a lower bound)
    assert c.detail["capacitance_no_fringing_pf"] == pytest.approx(EPS0 * 4.5 * 100e-6 / 1.5e-3 * 1e12, rel=1e-6)
    assert c.detail["capacitance_no_fringing_pf"] == pytest.approx(2.656, rel=1e-3)
    # with the edge correction over the 10 mm square's 40 mm outline, first order in d/a:
    # C = eps0 eps_r [A/d + P/(2 pi) (1 + ln(2 pi a/d))], a = 4A/P = 10 mm
    # (H. B. Palmer, Trans. AIEE 56(3), 1937, rectangle formula expanded; its form FROM MEMORY)
    a_m, d_m = 10e-3, 1.5e-3
    first_order = EPS0 * 4.5 * (a_m * a_m / d_m + 4 * a_m / (2 * math.pi) * (1 + math.log(2 * math.pi * a_m / d_m)))
    assert c.value == pytest.approx(first_order * 1e12, rel=1e-3)
    # ... and within the neglected second-order term (x^2, x = d/(pi a)(1 + ln(2 pi a/d)) = 0.23) of
    # Palmer's full product for a square (3.5 % here)
    from loopcheck.physics.capacitance import rectangular_plate_capacitance
    full = rectangular_plate_capacitance(a_m, a_m, d_m, 4.5) * 1e12
    assert c.value < full and c.value == pytest.approx(full, rel=0.05)
    assert any("fringing: Palmer" in s for s in c.assumptions)


def test_rms_currents_of_a_boost_and_its_switch_current():
    from loopcheck.measure.common import switch_current
    st = Stage("s1", "boost", "discrete", "SW", "VIN", "OUT", "GND",
               operating_point=OperatingPoint(vin_min_v=12, vin_max_v=12, vout_v=24, iout_a=1.0, ripple_ratio=0.4))
    cur, _ = rms_currents(st)
    d = 1 - 12 / 24                           # D = 1 - Vin/Vout
    il = 1.0 / (1 - d)                        # inductor (input) current 2 A
    r2 = 0.4 ** 2 / 12                        # the ripple term (above), 1.33 %
    assert cur["input"] == pytest.approx(il * math.sqrt(1 + r2), rel=1e-12)               # 2.0133 A
    assert cur["input"] != pytest.approx(il, rel=1e-3)                                   # the term counts
    assert cur["output"] == pytest.approx(il * math.sqrt((1 - d) * (1 + r2)), rel=1e-12)  # the rectifier's
    i_sw, v_sw, _ = switch_current(st, st.operating_point)
    assert i_sw == pytest.approx(il * (1 + 0.4 / 2)) and v_sw == 24                      # the peak, 2.4 A


@pytest.mark.parametrize("text, value", [("0.068", 0.068), ("68m", 0.068), ("68mR", 0.068), ("0R068", 0.068),
                                         ("10uF", 10e-6), ("4u7", 4.7e-6), ("2.2k", 2200.0), ("100nF", 100e-9),
                                         ("1R5", 1.5), ("junk", None), (None, None)])
def test_part_values(text, value):
    from loopcheck.values import parse_value
    got = parse_value(text)
    assert got == (None if value is None else pytest.approx(value))
