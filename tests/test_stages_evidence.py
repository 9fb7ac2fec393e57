"""Stage detection's clues, each alone, and the classes of real-board mistakes they mend
(issue 9): integrated synchronous bucks read as boosts, RF inductors, motor H-bridges, heater and
LED switches, transformer stages; sense resistors behind an RC filter; designator prefixes.

Most boards here are Pad lists (fast); the integrated buck with meaningless names and the
half-bridge are also written as fab outputs by loopcheck/synth.py and read back."""

from __future__ import annotations

from pathlib import Path

import pytest
from shapely.geometry import box

from loopcheck.board import Board, Outline, Pad, Stackup
from loopcheck.project import Project
from loopcheck.stages import Netlist, component_kind, find_stages, package_in, value_in
from loopcheck.stages import evidence as E


def board(parts: dict[str, list[tuple]], values: dict[str, str] | None = None,
          rename: dict[str, str] | None = None) -> Board:
    """parts: ref -> [(pin, net, x, y[, w, h]), ...] (pad size in mm, default 1.0 x 1.2)."""
    rename = rename or {}
    pads = []
    for ref, pins in parts.items():
        for pin, net, x, y, *size in pins:
            w, h = size if size else (1.0, 1.2)
            pads.append(Pad(rename.get(net, net), ref, str(pin), float(x), float(y), (0,), width_mm=w, height_mm=h))
    return Board("t", [], Outline(box(0, 0, 100, 100), "test"), Stackup([35e-6, 35e-6], [], 1.6e-3), pads,
                 component_values=dict(values or {}))


def project(**kw) -> Project:
    return Project(path=None, fab=Path("."), name="t", **kw)


def nl_of(parts, values=None) -> Netlist:
    b = board(parts, values)
    return Netlist(b, b.component_values)


# --------------------------------------------------------------------------------------------
# An integrated synchronous buck (switches inside U1), bootstrap capacitor C2 from SW to BST,
# feedback divider R1/R2 on the output; the IC has two wide input pins and an exposed ground pad.
INT_BUCK = {
    "J1": [(1, "VIN", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VIN", 6, 12), (2, "GND", 6, 9)],
    "U1": [(1, "VIN", 8, 12, 0.3, 0.8), (2, "VIN", 8, 11.5, 0.3, 0.8), (3, "SW", 8, 10, 0.3, 0.8),
           (4, "SW", 8, 9.5, 0.3, 0.8), (5, "BST", 10, 12, 0.3, 0.8), (6, "FB", 10, 11, 0.3, 0.8),
           (7, "EN", 10, 10, 0.3, 0.8), (8, "GND", 10, 9, 0.3, 0.8), (9, "GND", 9, 10.5, 2.0, 2.0)],
    "C2": [(1, "BST", 12, 13), (2, "SW", 12, 11)],
    "L1": [(1, "SW", 14, 10, 2.0, 2.5), (2, "VOUT", 20, 10, 2.0, 2.5)],
    "C3": [(1, "VOUT", 22, 10), (2, "GND", 22, 6)],
    "C4": [(1, "VOUT", 24, 10), (2, "GND", 24, 6)],
    "R1": [(1, "VOUT", 18, 14), (2, "FB", 16, 14)],
    "R2": [(1, "FB", 16, 16), (2, "GND", 16, 18)],
    "R3": [(1, "VIN", 4, 16), (2, "EN", 6, 16)],
    "C5": [(1, "EN", 6, 18), (2, "GND", 6, 20)],
    "U2": [(1, "VOUT", 30, 10), (2, "GND", 30, 8), (3, "X1", 31, 10), (4, "X2", 31, 8), (5, "X3", 32, 8)],
}
MEANINGLESS = {n: f"N{i:03d}" for i, n in enumerate(["VIN", "GND", "SW", "BST", "FB", "EN", "VOUT"])}


def test_clue_bootstrap_capacitor():
    nl = nl_of(INT_BUCK)
    assert [c.ref for c in E.bootstrap_caps(nl, "SW")] == ["C2"]
    assert E.bootstrap_nets(nl, "SW") == {"BST"}
    assert E.bootstrap_caps(nl, "VOUT") == []         # C3/C4 go to ground, a rail


@pytest.mark.parametrize("name, volts", [("+24V", 24.0), ("3V3", 3.3), ("+3.3V", 3.3), ("+5V", 5.0),
                                         ("/POWER/12V0", 12.0), ("VBUS", 5.0), ("-12V", -12.0),
                                         ("1V8_CORE", 1.8), ("SW", None), ("VOUT", None), ("NET-(U2-SW)", None)])
def test_clue_rail_voltage(name, volts):
    assert E.rail_voltage(name) == (pytest.approx(volts) if volts is not None else None)


def test_clue_feedback_divider():
    nl = nl_of(INT_BUCK)
    top, bottom = E.feedback_divider(nl, "VOUT", nl.parts["U1"], "GND")
    assert (top.ref, bottom.ref) == ("R1", "R2")
    assert E.feedback_divider(nl, "VIN", nl.parts["U1"], "GND") is None   # R3/C5 is an enable RC, not a divider


def test_clue_pins_and_pad_area():
    nl = nl_of(INT_BUCK)
    u1 = nl.parts["U1"]
    assert E.pin_weight(u1, "VIN") == (2, pytest.approx(0.48))
    assert E.pin_weight(u1, "FB") == (1, pytest.approx(0.24))
    assert E.exposed_pad_net(u1) == "GND"


def test_clue_inductor_class():
    rf = {"U1": [(i, f"P{i}", i, 0, 0.3, 0.3) for i in range(1, 9)] + [(9, "PA", 9, 0, 0.3, 0.3)],
          "L1": [(1, "PA", 10, 0, 0.55, 0.6), (2, "ANT", 11, 0, 0.55, 0.6)],
          "C1": [(1, "ANT", 12, 0, 0.55, 0.6), (2, "GND", 12, 1, 0.55, 0.6)]}
    nl = nl_of(rf, {"L1": "2n7", "C1": "8p2"})
    cls, why = E.inductor_class(nl, nl.parts["L1"], "ANT")
    assert cls == "rf" and "2.7 nH" in why[0]
    nl = nl_of(rf, {"C1": "8p2"})                       # no inductor value: its size and the pF capacitor
    assert E.inductor_class(nl, nl.parts["L1"], "ANT")[0] == "rf"
    nl = nl_of(rf)                                      # no values at all: small pads only: unknown
    assert E.inductor_class(nl, nl.parts["L1"], "ANT")[0] == "unknown"
    nl = nl_of(INT_BUCK, {"L1": "4.7uH"})
    assert E.inductor_class(nl, nl.parts["L1"], "VOUT")[0] == "power"


def test_clue_rail_sources_and_load_drive():
    nl = nl_of(INT_BUCK)
    own = {"U1", "L1"}
    assert E.rail_sources(nl, "VIN", own) == ["J1"]
    assert E.rail_sources(nl, "VOUT", own) == ["U2"]           # an IC: a load or a source
    assert E.rail_sources(nl, "FB", own) == []
    motor = {"J1": [(1, "M+", 0, 0), (2, "M-", 0, 2)], "L1": [(1, "OUTA", 2, 0), (2, "M+", 3, 0)]}
    assert E.load_only_far_end(nl_of(motor), "M+")
    assert not E.load_only_far_end(nl, "VOUT")


@pytest.mark.parametrize("ref, pins, kind", [
    ("CIN1", 2, "capacitor"), ("COUT3", 2, "capacitor"), ("RSNS1", 2, "resistor"), ("RSENSE2", 2, "resistor"),
    ("CR4", 2, "diode"), ("TR1", 3, "transistor"), ("VR1", 3, "ic"), ("PS1", 4, "ic"), ("FB2", 2, "ferrite"),
    ("T1", 6, "transformer"), ("T2", 3, "transformer"), ("CB1", 2, "capacitor"), ("BT1", 2, "battery"),
    ("LED3", 2, "led"), ("Q1", 3, "transistor"), ("C7", 2, "capacitor")])
def test_designator_prefixes(ref, pins, kind):
    assert component_kind(ref, pins) == kind          # T is a transformer, never a transistor


def test_values_and_packages_from_footprint_style_values():
    assert value_in("L_0805_2u2") == pytest.approx(2.2e-6)
    assert value_in("C_0402_100nf_X7R") == pytest.approx(100e-9)
    assert value_in("4.7uF 50V") == pytest.approx(4.7e-6)
    assert value_in("4Ω3") == pytest.approx(4.3)
    assert value_in("TPS62172DSGR") is None
    assert package_in("L_0402_2n7") == "0402" and package_in("22uH") is None


# --------------------------------------------------------------------------------------------
# The classes

def test_integrated_synchronous_buck_is_a_buck_with_any_names():
    for rename in ({}, MEANINGLESS):
        st = find_stages(board(INT_BUCK, rename=rename), project()).stages[0]
        r = rename.get
        assert (st.topology, st.switching) == ("buck", "integrated")
        assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == (
            r("SW", "SW"), r("VIN", "VIN"), r("VOUT", "VOUT"), r("GND", "GND"))
        assert r("BST", "BST") not in (st.input_net, st.output_net)      # the bootstrap pin is no rail
        assert st.hot_loop[0].startswith("C1.")
        assert not st.unsure


def test_integrated_buck_written_as_fab_outputs(tmp_path):
    """The same buck through synth.py's Gerber X2 + IPC-D-356 and load_board, names meaningless."""
    from loopcheck.load import load_board
    from loopcheck.project import load_project
    from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, write_fab

    comps = []
    for ref, pins in INT_BUCK.items():
        pads = []
        for pin, net, x, y, *size in pins:
            w, h = size if size else (1.0, 1.2)
            pads.append(SynthPad(pin=str(pin), net=MEANINGLESS.get(net, net), x_mm=x * 2 + 5, y_mm=y * 2 + 5,
                                 w_mm=w, h_mm=h))
        comps.append(SynthComponent(ref=ref, value="", pads=pads))
    write_fab(SynthBoard(name="ib", width_mm=90, height_mm=60, components=comps), tmp_path)
    p = load_project(tmp_path)
    st = find_stages(load_board(p), p).stages[0]
    assert (st.topology, st.input_net, st.output_net) == ("buck", MEANINGLESS["VIN"], MEANINGLESS["VOUT"])


SYNC_BOOST_NAMED = {
    "J1": [(1, "+5V", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "+5V", 4, 12), (2, "GND", 4, 8)],
    "L1": [(1, "+5V", 6, 12), (2, "SW", 12, 12)],
    "Q1": [(1, "GL", 12, 6), (2, "GND", 14, 6), (3, "SW", 14, 9)],
    "Q2": [(1, "GH", 16, 14), (2, "SW", 16, 12), (3, "+12V", 18, 12)],
    "C2": [(1, "+12V", 20, 12), (2, "GND", 20, 8)],
    "CB": [(1, "BST", 16, 18), (2, "SW", 16, 16)],
    "U1": [(1, "+5V", 5, 30), (2, "GL", 6, 30), (3, "GH", 7, 30), (4, "BST", 8, 30), (5, "GND", 9, 30),
           (6, "SW", 10, 30), (7, "FB", 11, 30)],
    "R1": [(1, "+12V", 20, 20), (2, "FB", 20, 22)],
    "R2": [(1, "FB", 22, 22), (2, "GND", 22, 24)],
    "U2": [(1, "+12V", 30, 10), (2, "GND", 30, 8), (3, "A", 31, 10), (4, "B", 31, 8), (5, "C", 32, 8)],
}


def test_synchronous_boost_named_5v_to_12v():
    """A bootstrap capacitor (argues buck) does not outweigh the rail voltages, the divider and
    the connector: a synchronous boost from +5V to +12V."""
    search = find_stages(board(SYNC_BOOST_NAMED), project())
    st = search.stages[0]
    assert (st.topology, st.switching, st.input_net, st.output_net) == ("boost", "synchronous", "+5V", "+12V")
    assert st.role("switch").ref == "Q1" and st.role("rectifier").ref == "Q2"
    assert st.hot_loop[0].startswith("C2.")
    msg = next(m for m in search.messages if m.startswith("stage1:"))
    assert "+5V 5 V" in msg or "+12V 12 V" in msg


RADIO = {
    "J1": [(1, "3V3", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "3V3", 4, 12), (2, "GND", 4, 8)],
    "U1": [(1, "3V3", 8, 12, 0.3, 0.6), (2, "PA", 8, 11, 0.3, 0.6), (3, "GND", 8, 10, 0.3, 0.6),
           (4, "MISO", 8, 9, 0.3, 0.6), (5, "MOSI", 8, 8, 0.3, 0.6), (6, "GND", 9, 10, 2.0, 2.0)],
    "L1": [(1, "PA", 10, 11, 0.55, 0.6), (2, "RFOUT", 11, 11, 0.55, 0.6)],
    "C2": [(1, "RFOUT", 12, 11, 0.55, 0.6), (2, "GND", 12, 10, 0.55, 0.6)],
    "C3": [(1, "RFOUT", 13, 11, 0.55, 0.6), (2, "ANT", 14, 11, 0.55, 0.6)],
    "J2": [(1, "ANT", 16, 11), (2, "GND", 16, 10)],
}


@pytest.mark.parametrize("values", [{"L1": "2n7", "C2": "8p2", "C3": "22p"}, {}])
def test_radio_matching_inductor_is_not_a_stage(values):
    search = find_stages(board(RADIO, values), project())
    assert search.stages == []
    assert any("L1: net PA is not taken as a switch node" in m for m in search.messages)


H_BRIDGE = {
    "J1": [(1, "VM", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VM", 4, 12), (2, "GND", 4, 8)],
    "Q1": [(1, "G1", 10, 14), (2, "OUTA", 12, 14), (3, "VM", 12, 16)],
    "Q2": [(1, "G2", 10, 10), (2, "GND", 12, 10), (3, "OUTA", 12, 12)],
    "Q3": [(1, "G3", 20, 14), (2, "OUTB", 22, 14), (3, "VM", 22, 16)],
    "Q4": [(1, "G4", 20, 10), (2, "GND", 22, 10), (3, "OUTB", 22, 12)],
    "L1": [(1, "OUTA", 14, 13), (2, "MA", 16, 13)],            # EMI chokes in the motor leads
    "L2": [(1, "OUTB", 24, 13), (2, "MB", 26, 13)],
    "J2": [(1, "MA", 30, 13), (2, "MB", 30, 11)],               # the motor
    "U1": [(1, "G1", 5, 30), (2, "G2", 6, 30), (3, "G3", 7, 30), (4, "G4", 8, 30), (5, "GND", 9, 30),
           (6, "VM", 10, 30)],
}


def test_motor_h_bridge_is_not_a_stage():
    search = find_stages(board(H_BRIDGE), project())
    assert search.stages == []
    assert any("drives a load" in m for m in search.messages)
    # without the chokes there is no inductor at all: no stage either
    parts = {k: v for k, v in H_BRIDGE.items() if k not in ("L1", "L2")}
    assert find_stages(board(parts), project()).stages == []


def test_integrated_motor_driver_is_not_a_stage():
    parts = {"J1": [(1, "VM", 0, 10), (2, "GND", 0, 5)], "C1": [(1, "VM", 4, 12), (2, "GND", 4, 8)],
             "U1": [(1, "VM", 8, 12), (2, "OUT1", 8, 11), (3, "OUT2", 8, 10), (4, "GND", 8, 9), (5, "IN1", 9, 9),
                    (6, "IN2", 9, 10)],
             "L1": [(1, "OUT1", 12, 11, 1.5, 1.5), (2, "M1", 14, 11, 1.5, 1.5)],
             "L2": [(1, "OUT2", 12, 9, 1.5, 1.5), (2, "M2", 14, 9, 1.5, 1.5)],
             "J2": [(1, "M1", 18, 11), (2, "M2", 18, 9)]}
    assert find_stages(board(parts), project()).stages == []


@pytest.mark.parametrize("load", ["heater", "led"])
def test_heater_and_led_pwm_switches_are_not_stages(load):
    parts = {"J1": [(1, "VIN", 0, 10), (2, "GND", 0, 5)], "C1": [(1, "VIN", 4, 12), (2, "GND", 4, 8)],
             "Q1": [(1, "PWM", 10, 10), (2, "GND", 12, 8), (3, "LOW", 12, 12)],
             "U1": [(1, "VIN", 20, 20), (2, "PWM", 21, 20), (3, "GND", 22, 20), (4, "A", 23, 20), (5, "B", 24, 20)]}
    if load == "heater":
        parts["J2"] = [(1, "VIN", 14, 14), (2, "LOW", 14, 12)]
    else:
        parts["LED1"] = [(1, "VIN", 14, 16), (2, "K1", 14, 14)]
        parts["LED2"] = [(1, "K1", 15, 16), (2, "K2", 15, 14)]
        parts["R1"] = [(1, "K2", 16, 14), (2, "LOW", 16, 12)]
    search = find_stages(board(parts), project())
    assert search.stages == [] and any("no power stage found" in m for m in search.messages)


HALF_BRIDGE = {
    "J1": [(1, "HV", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "HV", 4, 12), (2, "GND", 4, 8)],
    "Q1": [(1, "GH", 10, 14), (2, "SW", 12, 14), (3, "HV", 12, 16)],
    "Q2": [(1, "GL", 10, 10), (2, "GND", 12, 10), (3, "SW", 12, 12)],
    "C2": [(1, "HV", 16, 16), (2, "MID", 16, 14)],
    "C3": [(1, "MID", 18, 14), (2, "GND", 18, 12)],
    "T1": [(1, "SW", 20, 14), (2, "MID", 20, 12), (3, "S1", 24, 14), (4, "S2", 24, 12), (5, "SCT", 24, 13)],
    "D1": [(1, "OUT", 26, 14), (2, "S1", 25, 14)],
    "D2": [(1, "OUT", 26, 12), (2, "S2", 25, 12)],
    "L1": [(1, "SCT", 28, 13), (2, "SGND", 30, 13)],
    "L2": [(1, "OUT", 28, 16), (2, "VO", 30, 16)],
    "C4": [(1, "VO", 32, 16), (2, "SGND", 32, 14)],
    "U1": [(1, "GH", 5, 30), (2, "GL", 6, 30), (3, "GND", 7, 30), (4, "HV", 8, 30), (5, "SW", 9, 30)],
}


def test_half_bridge_with_a_transformer_is_reported_not_measured():
    search = find_stages(board(HALF_BRIDGE), project())
    assert [s.topology for s in search.stages] == ["half-bridge"]
    st = search.stages[0]
    assert st.switch_node == "SW" and st.not_measured and "not measured" in st.not_measured
    assert {r.ref for r in st.roles} >= {"Q1", "Q2", "T1"}
    assert not any(s.topology in ("buck", "boost", "buck-boost") for s in search.stages)


def test_resonant_and_flyback_stages():
    llc = dict(HALF_BRIDGE)
    llc["T1"] = [(1, "LR", 20, 14), (2, "MID", 20, 12), (3, "S1", 24, 14), (4, "S2", 24, 12), (5, "SCT", 24, 13)]
    llc["L3"] = [(1, "SW", 18, 16), (2, "LR", 19, 16)]
    st = find_stages(board(llc), project()).stages
    assert [s.topology for s in st] == ["resonant"] and st[0].role("inductor").ref == "L3"
    fly = {"J1": [(1, "HV", 0, 10), (2, "GND", 0, 5)], "C1": [(1, "HV", 4, 12), (2, "GND", 4, 8)],
           "T1": [(1, "HV", 10, 16), (2, "DRAIN", 10, 12), (3, "S1", 14, 16), (4, "SGND", 14, 12)],
           "Q1": [(1, "G", 8, 10), (2, "CS", 10, 8), (3, "DRAIN", 10, 10)],
           "R1": [(1, "CS", 10, 6), (2, "GND", 10, 4)],
           "D1": [(1, "VO", 16, 16), (2, "S1", 15, 16)], "C2": [(1, "VO", 18, 16), (2, "SGND", 18, 12)],
           "U1": [(1, "G", 2, 30), (2, "CS", 3, 30), (3, "GND", 4, 30), (4, "HV", 5, 30), (5, "FB", 6, 30)]}
    st = find_stages(board(fly), project()).stages
    assert [s.topology for s in st] == ["flyback"] and st[0].not_measured


def test_sense_resistor_behind_an_rc_filter():
    """Peak-current-mode boost: RS1 from the switch's source to ground reaches the controller's CS
    pin through R5 (with C6 to ground), not directly."""
    parts = {"J1": [(1, "VIN", 0, 10), (2, "GND", 0, 5)], "C1": [(1, "VIN", 4, 12), (2, "GND", 4, 8)],
             "L1": [(1, "VIN", 6, 12), (2, "SW", 12, 12)],
             "Q1": [(1, "GATE", 12, 6), (2, "SRC", 14, 6), (3, "SW", 14, 9)],
             "RS1": [(1, "SRC", 14, 4), (2, "GND", 14, 2)],
             "R5": [(1, "SRC", 16, 4), (2, "CS", 18, 4)], "C6": [(1, "CS", 18, 2), (2, "GND", 18, 0)],
             "D1": [(1, "VOUT", 18, 12), (2, "SW", 16, 12)], "C2": [(1, "VOUT", 20, 12), (2, "GND", 20, 8)],
             "U1": [(1, "VIN", 5, 30), (2, "GATE", 6, 30), (3, "CS", 7, 30), (4, "GND", 8, 30), (5, "FB", 9, 30)],
             "R1": [(1, "VOUT", 20, 20), (2, "FB", 20, 22)], "R2": [(1, "FB", 22, 22), (2, "GND", 22, 24)]}
    st = find_stages(board(parts, {"RS1": "0.05", "R5": "1k"}), project()).stages[0]
    assert st.topology == "boost"
    sense = st.role("sense_resistor")
    assert sense is not None and sense.ref == "RS1"
    assert sense.pins["sense+"] == ("U1.3",) and "R5.1" in sense.pins["filter"]
    assert "R5" in sense.evidence and "RC filter" in sense.evidence


def test_a_rail_another_stage_makes_is_this_stage_input():
    """Two integrated stages: a buck to 3V3 and a Bluetooth chip's own small buck fed from 3V3
    whose output only returns to the chip (as on underglow2): not a boost."""
    parts = dict(INT_BUCK)
    parts["U2"] = [(1, "VOUT", 30, 10), (2, "GND", 30, 8), (3, "LX2", 31, 10), (4, "VLOW", 31, 8),
                   (5, "X3", 32, 8), (6, "X4", 32, 9)]
    parts["L2"] = [(1, "LX2", 34, 10, 1.0, 1.2), (2, "VLOW", 36, 10, 1.0, 1.2)]
    parts["C7"] = [(1, "VLOW", 38, 10), (2, "GND", 38, 8)]
    parts["U3"] = [(1, "VOUT", 40, 10), (2, "GND", 40, 8), (3, "Y1", 41, 10), (4, "Y2", 41, 8), (5, "Y3", 42, 8)]
    search = find_stages(board(parts, rename=MEANINGLESS), project())
    by_sw = {s.switch_node: s for s in search.stages}
    st = by_sw["LX2"]
    assert (st.topology, st.input_net, st.output_net) == ("buck", MEANINGLESS["VOUT"], "VLOW")


# a synchronous pair with nothing to tell buck from boost (meaningless names, no values)
UNDECIDED_SYNC_PAIR = {
    "Q1": [(1, "GA", 10, 14), (2, "N1", 12, 14), (3, "NA", 12, 16)],
    "Q2": [(1, "GB", 10, 10), (2, "N0", 12, 10), (3, "N1", 12, 12)],
    "L1": [(1, "N1", 14, 12), (2, "NB", 16, 12)],
    "C1": [(1, "NA", 4, 12), (2, "N0", 4, 8)], "C2": [(1, "NB", 20, 12), (2, "N0", 20, 8)],
    "U1": [(1, "GA", 5, 30), (2, "GB", 6, 30), (3, "N0", 7, 30), (4, "X", 8, 30), (5, "Y", 9, 30)]}


def test_unsure_stage_says_so_and_counts_as_incomplete():
    """A synchronous pair with nothing to tell buck from boost: reported unsure, with the
    loopcheck.toml lines that would settle it, and a check over it is INCOMPLETE."""
    from loopcheck.analysis import Analysis
    from loopcheck.report.common import CheckResult

    b = board(UNDECIDED_SYNC_PAIR)
    st = find_stages(b, project()).stages[0]
    assert st.unsure and "topology" in st.unsure[0]
    assert st.confirm_lines[0] == "[stages.stage1]" and 'switch_node = "N1"' in st.confirm_lines
    text = st.unsure_text()
    assert 'topology = "buck"' in text and "loopcheck.toml" in text

    class _Eval:
        findings: list = []

        def failing(self, fail_on):
            return []

    result = CheckResult(Analysis(board=b, integrity=[], stages=[st]), _Eval())
    assert any(g.startswith("stage1: unsure") for g in result.gaps)


def test_bom_footprints_and_placement_sides(tmp_path):
    """Grouped and ranged designators, a footprint column, and a placement file's sides."""
    from loopcheck.readers.bom import read_bom_parts

    bom = tmp_path / "bom.csv"
    bom.write_text('Designator,Footprint,Quantity,Value\n"C1, C14, C15",0402,3,100n\nL1-L3,L_0805_2012Metric,3,2u2\n')
    parts = read_bom_parts(bom)
    assert parts.values == {"C1": "100n", "C14": "100n", "C15": "100n", "L1": "2u2", "L2": "2u2", "L3": "2u2"}
    assert parts.footprints["C15"] == "0402" and parts.footprints["L2"] == "L_0805_2012Metric"
    pos = tmp_path / "positions.csv"
    pos.write_text("Designator,Mid X,Mid Y,Rotation,Layer\nC1,1.0,2.0,90.0,top\nL1,3,4,180,bottom\n")
    place = read_bom_parts(pos, need_value=False)
    assert place.sides == {"C1": "top", "L1": "bottom"} and place.rotations_deg["C1"] == 90.0
    with pytest.raises(Exception):
        read_bom_parts(pos)                       # not a BOM: no value column


def test_package_from_the_bom_footprint_marks_an_rf_inductor():
    b = board(RADIO)
    b.component_packages = {"L1": "L_0402_1005Metric", "C2": "C_0402_1005Metric"}
    b.component_values = {"C2": "8p2", "C3": "22p"}
    nl = Netlist(b, b.component_values)
    assert nl.parts["L1"].package == "0402"
    assert E.inductor_class(nl, nl.parts["L1"], "RFOUT")[0] == "rf"


@pytest.mark.skipif(not (Path(__file__).resolve().parents[2] / "shared" / "realboards").is_dir(),
                    reason="../shared/realboards not present")
def test_real_board_placement_file_is_read():
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    p = load_project(Path(__file__).resolve().parents[2] / "shared" / "realboards" / "led-boost-motionlight")
    b = load_board(p)
    assert b.component_packages.get("C1") == "1206" and b.component_sides.get("C1") == "bottom"


def test_snubber_and_bootstrap_resistor_keep_the_switch_node():
    """An RC snubber from SW to ground and a bootstrap capacitor reaching BST through a resistor
    are no rail capacitors: the integrated buck is still found, and still a buck."""
    parts = dict(INT_BUCK)
    parts["C2"] = [(1, "BR", 12, 13), (2, "SW", 12, 11)]
    parts["R9"] = [(1, "BR", 13, 13), (2, "BST", 14, 13)]
    parts["C9"] = [(1, "SW", 12, 8), (2, "SN", 12, 7)]
    parts["R8"] = [(1, "SN", 13, 7), (2, "GND", 14, 7)]
    nl = nl_of(parts)
    assert [c.ref for c in E.bootstrap_caps(nl, "SW")] == ["C2"] and [c.ref for c in E.snubber_caps(nl, "SW")] == ["C9"]
    st = find_stages(board(parts), project()).stages[0]
    assert (st.topology, st.switch_node, st.input_net, st.output_net) == ("buck", "SW", "VIN", "VOUT")


def test_inductor_leading_to_an_antenna_is_rf():
    parts = dict(RADIO)
    parts["L1"] = [(1, "PA", 10, 11, 0.8, 0.9), (2, "RFOUT", 11, 11, 0.8, 0.9)]     # 0603-size pads
    parts["AE1"] = [(1, "ANT", 18, 11)]
    del parts["J2"]
    search = find_stages(board(parts), project())
    assert search.stages == [] and any("antenna AE1" in m for m in search.messages)


def _write(parts, folder, scale=2.0):
    from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, write_fab

    comps = []
    for ref, pins in parts.items():
        pads = [SynthPad(pin=str(pin), net=net, x_mm=x * scale + 5, y_mm=y * scale + 5,
                         w_mm=(size[0] if size else 1.0), h_mm=(size[1] if size else 1.2))
                for pin, net, x, y, *size in pins]
        comps.append(SynthComponent(ref=ref, value="", pads=pads))
    write_fab(SynthBoard(name="b", width_mm=100, height_mm=80, components=comps), folder)


def test_half_bridge_check_says_not_measured_and_incomplete(tmp_path):
    """Through the whole pipeline: the half-bridge is listed, every measurement of it is 'not
    made' with the reason, and the check is INCOMPLETE rather than a clean pass."""
    from loopcheck.analysis import analyse
    from loopcheck.load import load_board
    from loopcheck.project import load_project
    from loopcheck.report.common import CheckResult
    from loopcheck.rules import evaluate_all, load_deck

    _write(HALF_BRIDGE, tmp_path)
    p = load_project(tmp_path)
    a = analyse(load_board(p), p)
    assert [s.topology for s in a.stages] == ["half-bridge"]
    made = a.measurements_for(a.stages[0].name)
    assert made and all(m.value is None and "not measured" in m.not_made for m in made)
    result = CheckResult(a, evaluate_all(a, load_deck(None, p), p))
    assert any("half-bridge stage" in g for g in result.gaps)


def test_stages_report_prints_the_lines_that_settle_an_unsure_stage(tmp_path):
    from loopcheck.report.stages import project_text, render_text, stages_data

    b = board(UNDECIDED_SYNC_PAIR)
    p = project()
    search = find_stages(b, p)
    text = render_text("t", search)
    assert "unsure: topology buck" in text and '    topology = "buck"' in text and "--write-project" in text
    assert stages_data("t", search)["stages"][0]["confirm_lines"][0] == "[stages.stage1]"
    toml = project_text(p, b, search, tmp_path / "loopcheck.toml")
    assert "# unsure: topology buck" in toml
    hb = find_stages(board(HALF_BRIDGE), p)
    assert "not measured: a half-bridge stage" in render_text("t", hb)
    assert {r.name: r.ref for r in hb.stages[0].roles}["controller"] == "U1"
    assert "# stage1: half-bridge at SW" in project_text(p, board(HALF_BRIDGE), hb, tmp_path / "x.toml")


def test_h_bridge_with_filter_capacitors_is_not_a_stage():
    """Chokes and EMI capacitors at the motor connector give the far end a capacitor: the bridge
    is known from the load's other end being switched too."""
    parts = dict(H_BRIDGE)
    parts["C7"] = [(1, "MA", 28, 15), (2, "GND", 28, 17)]
    parts["C8"] = [(1, "MB", 28, 9), (2, "GND", 28, 7)]
    search = find_stages(board(parts), project())
    assert search.stages == []
    assert any("a bridge (a motor H-bridge)" in m for m in search.messages)


def test_four_switch_buck_boost_is_reported_not_measured():
    parts = {"J1": [(1, "VBAT", 0, 10), (2, "GND", 0, 5)], "C1": [(1, "VBAT", 4, 12), (2, "GND", 4, 8)],
             "U1": [(1, "VBAT", 8, 12), (2, "L1A", 8, 11), (3, "L1B", 8, 10), (4, "VOUT", 8, 9), (5, "GND", 9, 9),
                    (6, "FB", 9, 10)],
             "L1": [(1, "L1A", 12, 11), (2, "L1B", 12, 10)],
             "C2": [(1, "VOUT", 14, 9), (2, "GND", 14, 7)],
             "R1": [(1, "VOUT", 16, 9), (2, "FB", 16, 11)], "R2": [(1, "FB", 17, 11), (2, "GND", 17, 13)]}
    search = find_stages(board(parts), project())
    assert [s.topology for s in search.stages] == ["four-switch"]
    assert "four-switch buck-boost" in search.stages[0].not_measured


def test_exposed_pad_raises_the_ground_confidence():
    st = find_stages(board(INT_BUCK, rename=MEANINGLESS), project()).stages[0]
    assert st.ground_net == MEANINGLESS["GND"]
    assert any("exposed pad" in e for e in st.evidence)


def test_signal_and_gate_drive_transformers_are_not_stages():
    """An Ethernet PHY's transformer (the IC drives both ends of a winding) and a gate-drive
    transformer (the winding drives a gate) switch no power."""
    eth = {"U1": [(1, "TXP", 0, 0), (2, "TXN", 1, 0), (3, "RXP", 2, 0), (4, "RXN", 3, 0), (5, "GND", 4, 0),
                  (6, "AVDD", 5, 0)],
           "C1": [(1, "AVDD", 6, 0), (2, "GND", 6, 1)], "C2": [(1, "CT", 7, 0), (2, "GND", 7, 1)],
           "T1": [(1, "TXP", 10, 0), (2, "CT", 10, 1), (3, "TXN", 10, 2), (4, "RXP", 11, 0), (5, "RXN", 11, 2),
                  (6, "L1", 12, 0), (7, "L2", 12, 2)],
           "J1": [(1, "L1", 14, 0), (2, "L2", 14, 2)]}
    assert find_stages(board(eth), project()).stages == []
    gdt = {"U1": [(1, "DRV", 0, 0), (2, "GND", 1, 0), (3, "VCC", 2, 0), (4, "X", 3, 0), (5, "Y", 4, 0)],
           "C1": [(1, "VCC", 5, 0), (2, "GND", 5, 1)],
           "C2": [(1, "DRV", 6, 0), (2, "P1", 6, 1)],
           "T1": [(1, "P1", 8, 0), (2, "GND", 8, 1), (3, "G", 9, 0), (4, "S", 9, 1)],
           "Q1": [(1, "G", 11, 0), (2, "S", 11, 1), (3, "HV", 11, 2)],
           "C3": [(1, "HV", 12, 2), (2, "GND", 12, 3)], "R1": [(1, "S", 13, 1), (2, "LOAD", 13, 2)],
           "J1": [(1, "HV", 14, 2), (2, "GND", 14, 3)]}
    assert find_stages(board(gdt), project()).stages == []


@pytest.mark.parametrize("name", ["int_buck_meaningless", "sync_boost", "radio", "h_bridge", "half_bridge"])
def test_classes_through_synthesized_fab_outputs(tmp_path, name):
    """Each class read back from Gerber X2 + Excellon + IPC-D-356 written by synth.py, with the
    same result as from the Pad lists above (the netlist reader's view, not the test's)."""
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    parts, values = {
        "int_buck_meaningless": ({r: [(pn, MEANINGLESS.get(n, n), *rest) for pn, n, *rest in pins]
                                  for r, pins in INT_BUCK.items()}, {}),
        "sync_boost": (SYNC_BOOST_NAMED, {}),
        "radio": (RADIO, {}),
        "h_bridge": (H_BRIDGE, {}),
        "half_bridge": (HALF_BRIDGE, {}),
    }[name]
    _write(parts, tmp_path)
    p = load_project(tmp_path)
    got = [(s.topology, s.switch_node, s.input_net, s.output_net) for s in find_stages(load_board(p), p).stages]
    want = {
        "int_buck_meaningless": [("buck", MEANINGLESS["SW"], MEANINGLESS["VIN"], MEANINGLESS["VOUT"])],
        "sync_boost": [("boost", "SW", "+5V", "+12V")],
        "radio": [],
        "h_bridge": [],
        "half_bridge": [("half-bridge", "SW", None, None)],
    }[name]
    assert got == want


def test_x3_footprint_attribute_gives_the_package(tmp_path):
    """A Gerber X3 %TO.CFtp% component attribute on a copper pad reaches Board.component_packages."""
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    _write(RADIO, tmp_path)
    top = next(tmp_path.glob("*copper-L1-top.gbr"))
    text = top.read_text()
    marker = "%TO.C,L1*%"
    assert marker in text
    top.write_text(text.replace(marker, marker + "\n%TO.CFtp,L_0402_1005Metric*%", 1))
    b = load_board(load_project(tmp_path))
    assert b.component_packages.get("L1") == "L_0402_1005Metric"


def test_clue_power_connectors():
    nl = nl_of({"J1": [(1, "VIN", 0, 0), (2, "GND", 0, 1)],
                "J2": [(1, "VCC", 2, 0), (2, "GND", 2, 1), (3, "SDA", 2, 2), (4, "SCL", 2, 3), (5, "INT", 2, 4)],
                "J3": [("A4", "VBUS", 4, 0), ("B4", "VBUS", 4, 1), ("A1", "GND", 4, 2), ("B1", "GND", 4, 3),
                       ("A6", "DP", 4, 4), ("A7", "DN", 4, 5), ("A5", "CC1", 4, 6)]})
    assert E.power_connectors(nl, "VIN", "GND") == ["J1"]
    assert E.power_connectors(nl, "VCC", "GND") == []           # an I/O header that also carries VCC
    assert E.power_connectors(nl, "VBUS", "GND") == ["J3"]       # USB-C: VBUS and GND on several pins


def test_findings_on_an_unsure_stage_say_so():
    """A verdict on a stage found from weak evidence carries what is unsure (issue: an unsure
    stage never yields a silent verdict)."""
    from loopcheck.analysis import Analysis
    from loopcheck.findings import Measurement
    from loopcheck.rules.deck import load_deck
    from loopcheck.rules.evaluate import evaluate

    b = board(UNDECIDED_SYNC_PAIR)
    st = find_stages(b, project()).stages[0]
    assert st.unsure
    area = Measurement("hot_loop.area", 400.0, "mm2", "hot-loop area", stage=st.name)
    an = Analysis(board=b, integrity=[], stages=[st], measurements=[area])
    f = next(f for f in evaluate(an, load_deck("default")) if f.rule == "hot-loop-area")
    assert f.severity == "error" and "the stage itself is unsure" in f.message
    st.unsure = []
    f = next(f for f in evaluate(an, load_deck("default")) if f.rule == "hot-loop-area")
    assert "unsure" not in f.message
