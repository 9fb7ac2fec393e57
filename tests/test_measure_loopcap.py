"""The hot loop's capacitor: the one nearest the switch by copper across the loop's rails
(issue 9 item 4), on boards built from geometry."""

import pytest
from shapely.ops import unary_union

from loopcheck.measure.decoupling import measure_input_cap
from loopcheck.measure.loopcap import choose_loop_capacitor, settle_loop_capacitor
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.powerstage import Role, Stage

from measure_boards import make_board, smd, square_pad, trace


def _board():
    """An IC buck U1 (VIN pin at (10, 0), GND pin at (10, -3), SW at (12, 0)) with a VIN rail and
    a GND rail running left along y = 0 and y = -3; C1 across them 18 mm away, C2 2 mm away,
    C3 (the controller's supply capacitor) on its own VCC pin, and a 0.6 mm pad."""
    vin = unary_union([trace([(-10, 0), (10, 0)], 0.8), square_pad(10, 0, 1), square_pad(8, 0, 1),
                       square_pad(-8, 0, 1)])
    gnd = unary_union([trace([(-10, -3), (10, -3)], 0.8), square_pad(10, -3, 1), square_pad(8, -3, 1),
                       square_pad(-8, -3, 1), square_pad(14, -3, 1)])
    sw = square_pad(12, 0, 1)
    vcc = unary_union([trace([(14, 2), (14, 5)], 0.3), square_pad(14, 2, 0.6), square_pad(14, 5, 0.6)])
    pads = [smd("VIN", "U1", 1, 10, 0), smd("GND", "U1", 2, 10, -3), smd("SW", "U1", 3, 12, 0),
            smd("VCC", "U1", 4, 14, 2, 0.6),
            smd("VIN", "C1", 1, -8, 0), smd("GND", "C1", 2, -8, -3),
            smd("VIN", "C2", 1, 8, 0), smd("GND", "C2", 2, 8, -3),
            smd("VCC", "C3", 1, 14, 5, 0.6), smd("GND", "C3", 2, 14, -3)]
    return make_board([[vin, gnd, sw, vcc], []], pads)


def _stage(roles_extra=(), loop_cap="C1"):
    roles = [Role("switch", "U1"), Role("rectifier", "U1"), Role("controller", "U1"),
             Role("input_cap", "C1", ("C1.1", "C1.2"))] + list(roles_extra)
    return Stage("s1", "buck", "integrated", "SW", "VIN", "OUT", "GND", roles=roles,
                 hot_loop=(f"{loop_cap}.1", "U1.1", "U1.2", f"{loop_cap}.2"))


def test_a_nearer_capacitor_across_the_rails_closes_the_loop():
    # the stage names only C1; C2 sits across the same two rails, 2 mm from the pins
    b = _board()
    ctx = MeasureContext(b)
    st = _stage()
    choice = settle_loop_capacitor(ctx, st)
    assert choice is not None and choice.ref == "C2"
    assert choice.rail_route.length_mm == pytest.approx(2.0, abs=0.1)
    assert choice.ground_route.length_mm == pytest.approx(2.0, abs=0.1)
    assert st.hot_loop == ("C2.1", "U1.1", "U1.2", "C2.2")
    # the chosen one leads the stage's input capacitors, with why
    caps = st.roles_named("input_cap")
    assert caps[0].ref == "C2" and "least copper" in caps[0].evidence
    ranked = {r["ref"]: r for r in choice.ranking}
    assert set(ranked) == {"C1", "C2"}          # C3 is not across VIN and GND
    assert ranked["C1"]["path_length_mm"] is None or ranked["C1"]["path_length_mm"] > 30


def test_the_input_cap_measurement_names_the_loop_capacitor():
    b = _board()
    ctx = MeasureContext(b)
    st = _stage()
    settle_loop_capacitor(ctx, st)
    ms = {m.quantity: m for m in measure_input_cap(ctx, st)}
    assert ms["input_cap.path_length"].refs == ("C2",)
    assert ms["input_cap.path_length"].value == pytest.approx(2.0, abs=0.1)
    assert ms["input_cap.path_length"].detail["ground_path_mm"] == pytest.approx(2.0, abs=0.1)
    assert ms["input_cap.inductance"].value is not None


def test_a_controller_decoupling_capacitor_far_away_is_not_the_loop_capacitor():
    # detection closed the loop through the controller's decoupling capacitor on VIN (far);
    # the input capacitor beside the pins takes the switching current
    b = _board()
    st = _stage([Role("controller_decoupling", "C1", ("C1.1", "C1.2"))], loop_cap="C1")
    st.roles = [r for r in st.roles if r.name != "input_cap"] + [Role("input_cap", "C2", ("C2.1", "C2.2"))]
    choice = choose_loop_capacitor(MeasureContext(b), st)
    assert choice.ref == "C2"
    assert choice.ranking[0]["ref"] == "C2"


def test_no_candidate_leaves_the_stage_as_found():
    b = _board()
    st = Stage("s1", "buck", "integrated", "SW", "NOPE", "OUT", "GND", roles=[Role("switch", "U1")],
               hot_loop=())
    assert settle_loop_capacitor(MeasureContext(b), st) is None
    assert st.hot_loop == ()
