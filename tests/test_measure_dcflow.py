"""Where DC current enters and leaves a net (issue 9 item 5): never at a capacitor."""

import math

import pytest
from shapely.geometry import box

from loopcheck.board import Pad
from loopcheck.measure.current import path_ends, rms_currents
from loopcheck.measure.dcflow import input_return, load_return, main_sink, main_source, net_flow
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.powerstage import OperatingPoint, Role, Stage

from measure_boards import make_board, smd


def _board():
    """J1 (VIN_RAW, GND) -> F1 -> VIN -> buck Q1/D1/L1 -> VOUT -> J2 (VOUT, GND) and U5's supply;
    C1 on VIN, C3 on VOUT right beside the inductor; a 3-terminal part never in series."""
    pads = [smd("VIN_RAW", "J1", 1, 0, 0), smd("GND", "J1", 2, 0, -3),
            smd("VIN_RAW", "F1", 1, 3, 0), smd("VIN", "F1", 2, 5, 0),
            smd("VIN", "C1", 1, 8, 0), smd("GND", "C1", 2, 8, -3),
            smd("VIN", "Q1", 1, 10, 0), smd("SW", "Q1", 2, 12, 0), smd("GATE", "Q1", 3, 10, 2),
            smd("SW", "D1", 1, 12, -1), smd("GND", "D1", 2, 12, -3),
            smd("SW", "L1", 1, 14, 0), smd("VOUT", "L1", 2, 18, 0),
            smd("VOUT", "C3", 1, 19, 0), smd("GND", "C3", 2, 19, -3),
            smd("VOUT", "U5", 1, 25, 5), smd("GND", "U5", 2, 25, 3),
            smd("VOUT", "J2", 1, 40, 0), smd("GND", "J2", 2, 40, -3)]
    return make_board([box(-1, -5, 41, 6), []], pads)


def _stage():
    roles = [Role("switch", "Q1"), Role("rectifier", "D1"), Role("inductor", "L1"),
             Role("input_cap", "C1", ("C1.1", "C1.2")), Role("output_cap", "C3", ("C3.1", "C3.2"))]
    op = OperatingPoint(vin_min_v=12.0, vin_max_v=12.0, vout_v=5.0, iout_a=2.0)
    return Stage("s1", "buck", "discrete", "SW", "VIN", "VOUT", "GND", roles=roles,
                 hot_loop=("C1.1", "Q1.1", "Q1.2", "D1.1", "D1.2", "C1.2"), operating_point=op)


def test_the_output_rail_leaves_at_the_load_not_the_capacitor():
    b = _board()
    ctx = MeasureContext(b, stages=[_stage()])
    flow = net_flow(ctx, "VOUT", ctx.stages[0])
    assert [e.ref for e in flow.sources] == ["L1"]
    assert {e.ref: e.kind for e in flow.sinks} == {"J2": "connector", "U5": "IC supply"}
    assert all(not e.ref.startswith("C") for e in flow.sources + flow.sinks)
    assert main_sink(flow, b.terminals["L1.2"]).ref == "J2"       # the connector stands for the load
    assert any("J2" in a for a in flow.assumptions())             # a guess, said as one


def test_the_input_rail_is_fed_through_a_fuse_from_the_connector():
    b = _board()
    ctx = MeasureContext(b, stages=[_stage()])
    flow = net_flow(ctx, "VIN", ctx.stages[0])
    src = main_source(flow, b.terminals["Q1.1"])
    assert src.kind == "upstream" and src.pads[0].terminal == "F1.2" and "J1" in src.evidence
    assert [e.ref for e in flow.sinks] == ["Q1"]
    pads, why, _ = input_return(ctx, ctx.stages[0])
    assert [p.terminal for p in pads] == ["J1.2"]


def test_a_downstream_stage_is_a_sink_and_an_upstream_stage_a_source():
    b = _board()
    first = _stage()
    second = Stage("s2", "buck", "integrated", "SW2", "VOUT", "V1", "GND", roles=[Role("switch", "U5")])
    ctx = MeasureContext(b, stages=[first, second])
    out = net_flow(ctx, "VOUT", first)
    assert {e.ref: e.kind for e in out.sinks} == {"J2": "connector", "U5": "stage input"}
    assert [e.kind for e in net_flow(ctx, "VOUT", second).sources] == ["stage output"]


def test_paths_end_where_dc_current_enters_and_leaves():
    b = _board()
    st = _stage()
    ends = path_ends(MeasureContext(b, stages=[st]), st)
    term = {k: (None if isinstance(v, str) else ([p.terminal for p in v[0]], [p.terminal for p in v[1]]))
            for k, v in ends.items()}
    assert term["input"] == (["F1.2"], ["Q1.1"])
    assert term["output"] == (["L1.2"], ["J2.1"])                  # not C3, right beside the inductor
    assert term["ground"] == (["D1.2"], ["J1.2"])                  # the input current's return
    assert term["load_return"] == (["J2.2"], ["D1.2"])             # the load's return, to the rectifier
    pads, why, _ = load_return(MeasureContext(b, stages=[st]), st)
    assert pads[0].terminal == "J2.2" and "J2" in why


def test_ground_currents_are_the_input_return_and_the_load_return():
    # buck at D = 5/12, r = 0.3: input (and its return) I sqrt(D (1 + r^2/12)); load return I
    st = _stage()
    cur, _ = rms_currents(st)
    d = 5.0 / 12.0
    assert cur["ground"] == pytest.approx(cur["input"])
    assert cur["input"] == pytest.approx(2.0 * math.sqrt(d * (1 + 0.09 / 12)))
    assert cur["load_return"] == pytest.approx(2.0)
