"""Stage detection on Boards built directly from Pad lists (no files: fast)."""

from __future__ import annotations

from pathlib import Path

import pytest
from shapely.geometry import box

from loopcheck.board import Board, Outline, Pad, Stackup
from loopcheck.errors import InputError
from loopcheck.project import Project, StageSpec
from loopcheck.readers.bom import read_bom
from loopcheck.stages import component_kind, find_stages, operating_point, parse_value


def board_from(parts: dict[str, list[tuple]], rename: dict[str, str] | None = None,
               values: dict[str, str] | None = None) -> Board:
    """parts: ref -> [(pin, net, x_mm, y_mm), ...]; rename maps net names (to make them meaningless)."""
    rename = rename or {}
    pads = [Pad(rename.get(net, net), ref, str(pin), float(x), float(y), (0,))
            for ref, pins in parts.items() for pin, net, x, y in pins]
    return Board("t", [], Outline(box(0, 0, 100, 100), "test"), Stackup([35e-6, 35e-6], [], 1.6e-3), pads,
                 component_values=dict(values or {}))


def project(**kw) -> Project:
    return Project(path=None, fab=Path("."), name="t", **kw)


# The LED buck of the demo boards: P-channel high side, Schottky, sense resistor in the inductor path.
LED_BUCK = {
    "J1": [(1, "VIN", 2, 20), (2, "GND", 2, 15)],
    "C1": [(1, "VIN", 10, 22), (2, "GND", 10, 18)],
    "C2": [(1, "VIN", 30, 22), (2, "GND", 30, 18)],
    "Q1": [(1, "GATE", 14, 25), (2, "VIN", 14, 21), (3, "SW", 17, 23)],
    "D1": [(1, "SW", 17, 17), (2, "GND", 13, 17)],
    "L1": [(1, "SW", 22, 23), (2, "CS+", 30, 23)],
    "RS1": [(1, "CS+", 34, 23), (2, "LED+", 37, 23)],
    "C3": [(1, "LED+", 40, 23), (2, "GND", 40, 19)],
    "J2": [(1, "LED+", 46, 23), (2, "GND", 46, 18)],
    "U1": [(1, "VIN", 20, 40), (2, "EN", 20, 39), (3, "CS+", 20, 38), (4, "LED+", 20, 37),
           (5, "GND", 25, 37), (6, "GATE", 25, 38), (7, "VCC", 25, 39), (8, "GND", 25, 40)],
    "C4": [(1, "VCC", 28, 39), (2, "GND", 28, 41)],
    "R1": [(1, "VIN", 15, 39), (2, "EN", 17, 39)],
    "R2": [(1, "EN", 17, 36), (2, "GND", 17, 34)],
}


def roles(stage):
    return {r.name: r.ref for r in stage.roles if r.name not in ("input_cap", "output_cap")}


def test_kinds_and_values():
    assert component_kind("RS1", 2) == "resistor"
    assert component_kind("IC3", 8) == "ic"
    assert component_kind("CN2", 2) == "connector"
    assert component_kind("Q4", 3) == "transistor"
    assert component_kind("XYZ1", 16) == "ic"
    assert parse_value("0R1") == pytest.approx(0.1)
    assert parse_value("100m") == pytest.approx(0.1)
    assert parse_value("4u7") == pytest.approx(4.7e-6)
    assert parse_value("10uF") == pytest.approx(10e-6)
    assert parse_value("1k5") == pytest.approx(1500)
    assert parse_value("0.068") == pytest.approx(0.068)
    assert parse_value("DNP") is None


def test_led_buck_discrete():
    search = find_stages(board_from(LED_BUCK, values={"RS1": "0.1"}), project())
    assert len(search.stages) == 1
    st = search.stages[0]
    assert (st.topology, st.switching) == ("buck", "discrete")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("SW", "VIN", "LED+", "GND")
    assert roles(st) == {"inductor": "L1", "switch": "Q1", "rectifier": "D1", "controller": "U1",
                         "sense_resistor": "RS1", "controller_decoupling": "C4"}
    # input caps ranked by straight distance to the switch's source: C1 (4 mm) before C2
    assert [r.ref for r in st.roles_named("input_cap")] == ["C1", "C2"]
    assert [r.ref for r in st.roles_named("output_cap")] == ["C3"]
    q = st.role("switch")
    assert q.pins == {"gate": ("Q1.1",), "source": ("Q1.2",), "drain": ("Q1.3",)}   # P-channel high side
    d = st.role("rectifier")
    assert d.pins == {"cathode": ("D1.1",), "anode": ("D1.2",)}
    assert st.role("sense_resistor").terminals == ("RS1.1", "RS1.2")
    assert st.role("sense_resistor").pins == {"sense+": ("U1.3",), "sense-": ("U1.4",)}
    assert st.role("controller").pins["gate"] == ("U1.6",)
    assert st.role("controller_decoupling").pins == {"supply": ("U1.7",)}
    assert st.hot_loop == ("C1.1", "Q1.2", "Q1.3", "D1.1", "D1.2", "C1.2")
    assert st.missing == []
    for r in st.roles:
        assert 0 < r.confidence <= 1 and r.evidence
    # the enable divider R1 (VIN-EN) also joins two controller pins but is not in the power path
    assert st.operating_point.vsense_v == pytest.approx(0.1 * 1.0)
    assert "RS1" in st.operating_point.sources["vsense_v"]


def test_meaningless_net_names():
    nets = sorted({n for pins in LED_BUCK.values() for _, n, _, _ in pins})
    rename = {n: f"N{i + 1:03d}" for i, n in enumerate(nets)}
    st = find_stages(board_from(LED_BUCK, rename), project()).stages[0]
    assert (st.topology, st.switching) == ("buck", "discrete")
    assert st.switch_node == rename["SW"] and st.ground_net == rename["GND"]
    assert st.input_net == rename["VIN"] and st.output_net == rename["LED+"]
    assert roles(st) == {"inductor": "L1", "switch": "Q1", "rectifier": "D1", "controller": "U1",
                         "sense_resistor": "RS1", "controller_decoupling": "C4"}
    assert st.hot_loop == ("C1.1", "Q1.2", "Q1.3", "D1.1", "D1.2", "C1.2")
    # the usual names (SW, GND) raised the named board's confidence, and only a little
    named = find_stages(board_from(LED_BUCK), project()).stages[0]
    assert named.confidence > st.confidence >= 0.7


def test_operating_point_assumptions_in_words():
    from loopcheck.stages import operating_point_assumptions

    st = find_stages(board_from(LED_BUCK, values={"RS1": "0R1"}),
                     project(operating_point={"vin_v": [20, 40], "iout_a": 1.5})).stages[0]
    words = operating_point_assumptions(st.operating_point)
    assert "operating point: sense voltage 150 mV (RS1 value 0R1 x iout_a)" in words
    assert "operating point: switching frequency 500 kHz (default)" in words
    assert "operating point: output current 1.5 A (loopcheck.toml [operating_point])" in words


SYNC_BUCK = {
    "J1": [(1, "12V", 0, 10), (2, "0V", 0, 5)],
    "C1": [(1, "12V", 8, 12), (2, "0V", 8, 8)],
    "C2": [(1, "12V", 20, 12), (2, "0V", 20, 8)],
    "M1": [(1, "GH", 10, 16), (2, "PH", 12, 16), (3, "12V", 12, 12)],     # N-channel high side: drain on VIN
    "M2": [(1, "GL", 10, 4), (2, "0V", 12, 4), (3, "PH", 12, 8)],
    "L1": [(1, "PH", 16, 14), (2, "5V", 24, 14)],
    "C3": [(1, "5V", 26, 14), (2, "0V", 26, 10)],
    "C4": [(1, "5V", 28, 14), (2, "0V", 28, 10)],
    "CB": [(1, "BST", 14, 20), (2, "PH", 14, 18)],
    "U1": [(1, "12V", 5, 30), (2, "GH", 6, 30), (3, "PH", 7, 30), (4, "BST", 8, 30), (5, "GL", 9, 30),
           (6, "0V", 10, 30), (7, "FB", 11, 30), (8, "VDRV", 12, 30)],
    "C5": [(1, "VDRV", 13, 32), (2, "0V", 13, 34)],
    "R1": [(1, "5V", 20, 30), (2, "FB", 18, 30)],
    "R2": [(1, "FB", 18, 28), (2, "0V", 18, 26)],
    "J2": [(1, "5V", 30, 14), (2, "0V", 30, 10)],
}


def test_synchronous_buck():
    st = find_stages(board_from(SYNC_BUCK), project()).stages[0]
    assert (st.topology, st.switching) == ("buck", "synchronous")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("PH", "12V", "5V", "0V")
    assert roles(st) == {"inductor": "L1", "switch": "M1", "rectifier": "M2", "controller": "U1",
                         "controller_decoupling": "C5"}
    hs, ls = st.role("switch"), st.role("rectifier")
    assert hs.pins == {"gate": ("M1.1",), "source": ("M1.2",), "drain": ("M1.3",)}   # bootstrap: N-channel
    assert ls.pins == {"gate": ("M2.1",), "source": ("M2.2",), "drain": ("M2.3",)}
    assert st.hot_loop == ("C1.1", "M1.3", "M1.2", "M2.3", "M2.2", "C1.2")
    assert st.role("sense_resistor") is None
    # topology from several clues: the rail names' voltages (12 V in, 5 V out, compared as numbers),
    # the feedback divider R1/R2 on 5V and the bootstrap capacitor CB (behaviour change: names
    # with voltages were not read before, and the confidence was at most 0.9)
    assert st.confidence >= 0.7 and not st.unsure


def test_synchronous_pair_topology_from_operating_point():
    board = board_from(SYNC_BUCK)
    st = find_stages(board, project(operating_point={"vin_v": 5, "vout_v": 12})).stages[0]
    assert st.topology == "boost"          # the same netlist read as a boost from 5 V to 12 V
    assert st.input_net == "5V" and st.output_net == "12V"
    assert st.role("switch").ref == "M2" and st.role("rectifier").ref == "M1"
    assert st.hot_loop[0] in ("C1.1", "C2.1")     # output capacitor of the boost


INTEGRATED = {
    "J1": [(1, "VIN", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VIN", 6, 12), (2, "GND", 6, 9)],
    "U1": [(1, "VIN", 8, 12), (2, "VIN", 8, 11), (3, "LX", 8, 10), (4, "LX", 8, 9), (5, "GND", 10, 9),
           (6, "GND", 10, 10), (7, "FB", 10, 11), (8, "BST", 10, 12)],
    "C2": [(1, "BST", 12, 13), (2, "LX", 12, 11)],
    "L1": [(1, "LX", 14, 10), (2, "VOUT", 20, 10)],
    "C3": [(1, "VOUT", 22, 10), (2, "GND", 22, 6)],
    "R1": [(1, "VOUT", 18, 14), (2, "FB", 16, 14)],
    "R2": [(1, "FB", 16, 16), (2, "GND", 16, 18)],
}


def test_integrated_buck():
    st = find_stages(board_from(INTEGRATED), project()).stages[0]
    assert (st.topology, st.switching) == ("buck", "integrated")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("LX", "VIN", "VOUT", "GND")
    assert st.role("switch").ref == "U1" and st.role("controller").ref == "U1"
    assert st.role("controller").pins["vin"] == ("U1.1", "U1.2")
    # cap to the IC's VIN pin nearest it, the IC's ground pin nearest its return, back
    assert st.hot_loop == ("C1.1", "U1.1", "U1.5", "C1.2")


def test_integrated_switch_with_external_diode():
    parts = {k: v for k, v in INTEGRATED.items()}
    parts["D1"] = [("K", "LX", 12, 8), ("A", "GND", 12, 5)]
    st = find_stages(board_from(parts), project()).stages[0]
    assert (st.topology, st.switching) == ("buck", "integrated")
    assert st.role("rectifier").ref == "D1"
    assert st.role("rectifier").pins == {"cathode": ("D1.K",), "anode": ("D1.A",)}
    assert st.hot_loop[:2] == ("C1.1", "U1.1") and st.hot_loop[-3:] == ("D1.K", "D1.A", "C1.2")


BOOST = {
    "J1": [(1, "VBAT", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VBAT", 4, 12), (2, "GND", 4, 8)],
    "L1": [(1, "VBAT", 6, 12), (2, "SWB", 12, 12)],
    "Q1": [(1, "G1", 12, 6), (2, "CS", 14, 6), (3, "SWB", 14, 9)],         # N-channel low side, sense at source
    "RS1": [(1, "CS", 16, 4), (2, "GND", 18, 4)],
    "D1": [(1, "HV", 18, 12), (2, "SWB", 15, 12)],                          # pin 1 cathode on the output
    "C2": [(1, "HV", 22, 12), (2, "GND", 22, 8)],
    "C3": [(1, "HV", 26, 12), (2, "GND", 26, 8)],
    "U1": [(1, "VBAT", 5, 30), (2, "G1", 6, 30), (3, "CS", 7, 30), (4, "GND", 8, 30), (5, "FB", 9, 30),
           (6, "COMP", 10, 30)],
    "C4": [(1, "COMP", 11, 32), (2, "GND", 11, 34)],
    "R1": [(1, "HV", 20, 30), (2, "FB", 18, 30)],
    "R2": [(1, "FB", 18, 28), (2, "GND", 18, 26)],
}


def test_boost_discrete_with_source_sense():
    st = find_stages(board_from(BOOST, values={"RS1": "50m", "C4": "10nF"}), project()).stages[0]
    assert (st.topology, st.switching) == ("boost", "discrete")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("SWB", "VBAT", "HV", "GND")
    assert st.role("switch").ref == "Q1" and st.role("rectifier").ref == "D1"
    assert st.role("switch").pins == {"gate": ("Q1.1",), "source": ("Q1.2",), "drain": ("Q1.3",)}
    assert st.role("rectifier").pins == {"cathode": ("D1.1",), "anode": ("D1.2",)}
    assert st.role("sense_resistor").ref == "RS1"
    # output cap + -> rectifier -> switch -> sense resistor -> ground -> cap -
    assert st.hot_loop == ("C2.1", "D1.1", "D1.2", "Q1.3", "Q1.2", "RS1.1", "RS1.2", "C2.2")
    assert [r.ref for r in st.roles_named("input_cap")] == ["C1"]
    assert [r.ref for r in st.roles_named("output_cap")] == ["C2", "C3"]


INVERTING = {
    "J1": [(1, "N1", 0, 10), (2, "N2", 0, 5)],
    "C1": [(1, "N1", 4, 12), (2, "N2", 4, 8)],
    "Q1": [(1, "N5", 6, 16), (2, "N1", 6, 12), (3, "N3", 10, 12)],
    "L1": [(1, "N3", 12, 12), (2, "N2", 12, 6)],
    "D1": [(1, "N3", 14, 12), (2, "N4", 18, 12)],
    "C2": [(1, "N4", 20, 12), (2, "N2", 20, 8)],
    "U1": [(1, "N1", 5, 30), (2, "N5", 6, 30), (3, "N2", 7, 30), (4, "N6", 8, 30), (5, "N7", 9, 30)],
    "C3": [(1, "N7", 11, 32), (2, "N2", 11, 34)],
}


def test_inverting_buck_boost():
    st = find_stages(board_from(INVERTING), project()).stages[0]
    assert (st.topology, st.switching) == ("buck-boost", "discrete")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("N3", "N1", "N4", "N2")
    assert st.role("switch").ref == "Q1" and st.role("rectifier").ref == "D1"
    assert st.role("rectifier").pins == {"cathode": ("D1.1",), "anode": ("D1.2",)}
    assert st.hot_loop == ("C1.1", "Q1.2", "Q1.3", "D1.1", "D1.2", "C2.1", "C2.2", "C1.2")
    assert st.role("controller_decoupling").ref == "C3"


def test_missing_input_cap_is_reported():
    parts = {k: v for k, v in LED_BUCK.items() if k not in ("C1", "C2")}
    search = find_stages(board_from(parts), project())
    st = search.stages[0]
    assert st.roles_named("input_cap") == []
    assert st.hot_loop == ()
    assert any("input capacitor" in m for m in st.missing)
    assert any("hot loop" in m for m in st.missing)
    assert any("missing input capacitor" in m for m in search.messages)


def test_missing_controller_is_reported():
    parts = {k: v for k, v in LED_BUCK.items() if k not in ("U1",)}
    st = find_stages(board_from(parts), project()).stages[0]
    assert st.role("controller") is None and st.role("sense_resistor") is None
    assert any(m.startswith("controller") for m in st.missing)
    assert st.hot_loop == ("C1.1", "Q1.2", "Q1.3", "D1.1", "D1.2", "C1.2")   # the loop needs no controller


def test_no_power_stage():
    parts = {"U1": [(i, f"N{i}", i, 0) for i in range(1, 9)], "C1": [(1, "N1", 0, 2), (2, "N2", 1, 2)],
             "R1": [(1, "N3", 0, 3), (2, "N4", 1, 3)], "L1": [(1, "N1", 5, 5), (2, "N9", 6, 5)]}
    search = find_stages(board_from(parts), project())
    assert search.stages == []
    assert any("no power stage found" in m for m in search.messages)


def test_project_names_roles():
    spec = StageSpec("led", roles={"input_caps": ["C2", "C1"], "sense_resistor": "RS1", "topology": "buck"},
                     operating_point={"iout_a": 1.5})
    st = find_stages(board_from(LED_BUCK), project(stages=[spec], operating_point={"vin_v": [20, 40]})).stages[0]
    assert st.name == "led"
    assert [r.ref for r in st.roles_named("input_cap")] == ["C2", "C1"]
    assert st.role("input_cap").confidence == 1.0 and st.role("input_cap").evidence == "named in loopcheck.toml"
    assert st.hot_loop[0] == "C2.1"
    op = st.operating_point
    assert (op.vin_min_v, op.vin_max_v, op.iout_a) == (20, 40, 1.5)
    assert op.sources["iout_a"] == "loopcheck.toml [stages.led.operating_point]"
    assert op.sources["vin_min_v"] == "loopcheck.toml [operating_point]"
    assert op.sources["fsw_hz"] == "default"


def test_project_corrects_ground_and_decoupling():
    spec = StageSpec("stage1", roles={"controller_decoupling": "C3"})
    st = find_stages(board_from(LED_BUCK), project(stages=[spec])).stages[0]
    assert st.role("controller_decoupling").ref == "C3"
    assert [r.ref for r in st.roles_named("output_cap")] == []   # C3 is taken: not also an output cap?
    

@pytest.mark.parametrize("roles_, key", [
    ({"switch": "Q1", "rectifier": "Q1"}, "stages.s.rectifier"),
    ({"input_caps": ["C1"], "output_caps": ["C1"]}, "stages.s.output_caps"),
    ({"inductor": "L9"}, "stages.s.inductor"),
    ({"inductor": "L1", "switch_node": "VIN"}, "stages.s.switch_node"),
    ({"switch_node": "NOPE"}, "stages.s.switch_node"),
    ({"topology": "flyback"}, "stages.s.topology"),
    ({"colour": "red"}, "stages.s.colour"),
])
def test_contradictory_roles(roles_, key):
    with pytest.raises(InputError) as err:
        find_stages(board_from(LED_BUCK), project(stages=[StageSpec("s", roles=roles_)]))
    assert key in str(err.value)


def test_key_lines_in_the_project_file(tmp_path):
    # the lines come from the project file as loopcheck.project read it (stages no longer re-reads it)
    from loopcheck.project import load_project

    f = tmp_path / "loopcheck.toml"
    f.write_text('[board]\nname = "x"\n\n[operating_point]\niout_a = 1\n\n[stages.led]\nswitch = "Q1"\n'
                 '[stages.led.operating_point]\nfsw_hz = 1\n[stages."odd name"]\ninductor = "L1"\n')
    p = load_project(f)
    assert p.nearest_line("operating_point.iout_a") == 5
    assert p.nearest_line("stages.led.switch") == 8
    assert p.nearest_line("stages.led.operating_point.fsw_hz") == 10
    assert p.nearest_line("stages.odd name.inductor") == 12
    assert p.nearest_line("stages.led.rectifier") == 7         # not there: its table's header
    assert p.key_error("stages.led.switch", "x").line == 8


def test_operating_point_defaults_and_errors():
    op = operating_point(project(), "stage1")
    assert all(v == "default" for v in op.sources.values())
    op = operating_point(project(operating_point={"edge_ns": 10, "switch_capacitance_pf": 300}), "x")
    assert op.edge_s == pytest.approx(10e-9) and op.switch_capacitance_f == pytest.approx(300e-12)
    # the values themselves are checked when the file is read (tests/test_project.py); here they merge
    op = operating_point(project(operating_point={"vin_v": [20.0, 40.0], "vout_v": 12.0},
                                 stages=[StageSpec("x", operating_point={"vin_v": 30.0})]), "x")
    assert (op.vin_min_v, op.vin_max_v, op.vout_v) == (30.0, 30.0, 12.0)
    assert op.sources["vin_min_v"] == "loopcheck.toml [stages.x.operating_point]"
    assert op.sources["vout_v"] == "loopcheck.toml [operating_point]"



@pytest.mark.parametrize("parts, op, ok", [
    (LED_BUCK, {"vin_v": [20.0, 40.0], "vout_v": 12.0}, True),
    (LED_BUCK, {"vin_v": [20.0, 40.0], "vout_v": 20.0}, False),     # vout = vin_min: no headroom at all
    (LED_BUCK, {"vin_v": [20.0, 40.0], "vout_v": 30.0}, False),     # above vin_min
    (LED_BUCK, {"vin_v": 12.0, "vout_v": -5.0}, False),
    (LED_BUCK, {"vout_v": 15.0}, False),                            # the default input 12..24 V
    (BOOST, {"vin_v": [5.0, 12.0], "vout_v": 24.0}, True),
    (BOOST, {"vin_v": [5.0, 12.0], "vout_v": 12.0}, False),         # vout = vin_max
    (BOOST, {"vin_v": [5.0, 12.0], "vout_v": 9.0}, False),
])
def test_impossible_operating_point_is_an_input_error(tmp_path, parts, op, ok):
    f = tmp_path / "loopcheck.toml"
    f.write_text("[operating_point]\n" + "".join(f"{k} = {v}\n" for k, v in op.items()))
    from loopcheck.project import load_project
    proj = load_project(f)
    board = board_from(parts)
    topology = "boost" if parts is BOOST else "buck"
    assert find_stages(board, project()).stages[0].topology == topology     # the check is per topology
    if ok:
        st = find_stages(board, proj).stages
        assert st and st[0].operating_point.vout_v == op["vout_v"]
        return
    with pytest.raises(InputError) as info:
        find_stages(board, proj)
    msg = str(info.value)
    line = 1 + list(op).index("vout_v") + 1
    assert msg.startswith(f"{f}:{line}: operating_point.vout_v: stage stage1: ")
    assert "cannot make" in msg and "\n" not in msg


def test_impossible_operating_point_names_the_stage_key(tmp_path):
    f = tmp_path / "loopcheck.toml"
    f.write_text('[operating_point]\nvin_v = [20, 40]\n\n[stages.led.operating_point]\nvout_v = 45\n')
    from loopcheck.project import load_project
    with pytest.raises(InputError) as info:
        find_stages(board_from(LED_BUCK), load_project(f))
    assert str(info.value).startswith(f"{f}:5: stages.led.operating_point.vout_v: stage led: a buck cannot make 45 V")


def test_impossible_operating_point_cli_exit_2(tmp_path):
    """The whole program: one line naming the file, the line and the key; exit 2; no traceback."""
    import shutil

    from click.testing import CliRunner

    from loopcheck.cli import main
    # a discrete buck (Schottky rectifier: the topology is fixed by the parts, not by the voltages)
    src = Path(__file__).parents[1] / "boards" / "led-driver-tidy"
    board = tmp_path / "board"
    shutil.copytree(src, board)
    toml = board / "loopcheck.toml"
    text = toml.read_text()
    assert "vout_v = 12.0" in text and "vin_v = [20, 40]" in text
    toml.write_text(text.replace("vout_v = 12.0", "vout_v = 30.0"))
    line = 1 + toml.read_text().splitlines().index("vout_v = 30.0")
    r = CliRunner().invoke(main, ["check", str(board)])
    assert r.exit_code == 2
    out = (r.stderr if r.stderr_bytes is not None else r.output).strip()
    assert "Traceback" not in r.output and "Traceback" not in out
    assert len(out.splitlines()) == 1
    assert out.endswith(f"{toml}:{line}: operating_point.vout_v: stage stage1: a buck cannot make 30 V from a "
                        "minimum input of 20 V ([operating_point]): vout must lie between 0 and vin_min")


def test_values_from_bom_file(tmp_path):
    # the BOM is read once, by load_board, into board.component_values; stages use those values
    # (behaviour change: stages no longer re-read the CSV named in [files])
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    from synth_fixtures import write_buck

    write_buck(tmp_path)
    bom = tmp_path / "bom.csv"
    bom.write_text('Designator;Comment;Footprint\n"C1, C2";4.7uF;1210\nL1;22uH;1210\n')
    assert read_bom(bom) == {"C1": "4.7uF", "C2": "4.7uF", "L1": "22uH"}
    board = load_board(load_project(tmp_path))
    assert board.component_values["C1"] == "4.7uF"
    search = find_stages(board, load_project(tmp_path))
    assert any("part values from the fab outputs" in m for m in search.messages)
    assert search.stages[0].role("inductor").ref == "L1"


@pytest.mark.parametrize("text", ["Ref,Value\nC1\n", "Part Number,Qty\nX,1\n", "Ref,Value\n1C,4u7\n",
                                  "Ref,Value\nC1,1u\nC1,2u\n"])
def test_bad_bom(tmp_path, text):
    p = tmp_path / "b.csv"
    p.write_text(text)
    with pytest.raises(InputError) as err:
        read_bom(p)
    assert "b.csv" in str(err.value)


def test_bom_ranges_and_tabs(tmp_path):
    p = tmp_path / "bom.txt"
    p.write_text("Qty\tReference\tValue\n4\tC1-C4\t100nF\n1\tR7\t10k\n")
    assert read_bom(p) == {"C1": "100nF", "C2": "100nF", "C3": "100nF", "C4": "100nF", "R7": "10k"}


def test_placement_csv_headers(tmp_path):
    p = tmp_path / "pos.csv"
    p.write_text("# placement\nRefDes,Val,PosX,PosY,Rot\nU1,CTRL,1,2,0\nL1,22uH,3,4,90\n")
    assert read_bom(p) == {"U1": "CTRL", "L1": "22uH"}


# --------------------------------------------------------------------------------------------
# the `loopcheck stages` command, on the demo boards

BOARDS = Path(__file__).resolve().parents[1] / "boards"


def run_cli(*args):
    from click.testing import CliRunner

    from loopcheck.cli import main

    return CliRunner().invoke(main, [str(a) for a in args])


def test_cli_text_and_json():
    import json

    r = run_cli("stages", BOARDS / "led-driver-tidy")
    assert r.exit_code == 0, r.output
    assert "stage stage1: buck, discrete switching" in r.output
    assert "hot loop: C1.1 -> Q1.2 -> Q1.3 -> D1.1 -> D1.2 -> C1.2" in r.output
    assert "sense_resistor" in r.output and "why:" in r.output
    r = run_cli("stages", BOARDS / "sync-buck-4layer", "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["schema"] == "loopcheck-stages/1"
    st = data["stages"][0]
    assert (st["topology"], st["switching"]) == ("buck", "synchronous")
    assert {x["role"]: x["ref"] for x in st["roles"]}["rectifier"] == "Q2"
    assert st["hot_loop"][0] == "C1.1"
    assert st["operating_point_sources"]["ambient_c"] == "default"


def test_cli_write_project_round_trip(tmp_path):
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    target = tmp_path / "loopcheck.toml"
    r = run_cli("stages", BOARDS / "led-driver-sprawl", "--write-project", target)
    assert r.exit_code == 0, r.output
    text = target.read_text()
    assert 'sense_resistor = "RS1"' in text and 'input_caps = ["C2", "C1"]' in text
    # refused without --force, and the file is left as it was
    target.write_text(text + "# edited\n")
    r = run_cli("stages", BOARDS / "led-driver-sprawl", "--write-project", target)
    assert r.exit_code == 2 and "--force" in r.output
    assert target.read_text().endswith("# edited\n")
    r = run_cli("stages", BOARDS / "led-driver-sprawl", "--write-project", target, "--force")
    assert r.exit_code == 0 and target.read_text() == text
    # the written file loads, points at the fab outputs and names every role (confidence 1)
    project = load_project(target)
    st = find_stages(load_board(project), project).stages[0]
    assert st.name == "stage1" and st.role("switch").ref == "Q1"
    assert all(r.confidence == 1.0 for r in st.roles)
    assert st.hot_loop == ("C2.1", "Q1.2", "Q1.3", "D1.1", "D1.2", "C2.2")
    assert st.operating_point.iout_a == 1.5
    assert [p.name for p in tmp_path.iterdir()] == ["loopcheck.toml"]      # no temp files left


def test_cli_bad_inputs(tmp_path):
    r = run_cli("stages", BOARDS / "led-driver-tidy", "--write-project", tmp_path / "nope" / "x.toml")
    assert r.exit_code == 2 and "does not exist" in r.output
    assert not (tmp_path / "nope").exists()
    # contradictory roles in the project file: one line naming the key, exit code 2
    proj = tmp_path / "loopcheck.toml"
    proj.write_text(f'[board]\nfab = "{(BOARDS / "led-driver-tidy").as_posix()}"\n'
                    '[stages.s]\nswitch = "Q1"\ninput_caps = ["Q1"]\n')
    r = run_cli("stages", proj)
    assert r.exit_code == 2
    assert "stages.s.input_caps" in r.output and "Traceback" not in r.output
    assert "loopcheck.toml:5:" in r.output                 # the line of the contradicting key
    assert len(r.output.strip().splitlines()) == 1


# --------------------------------------------------------------------------------------------
# more shapes of the same stages

def relabel(parts, prefix_refs="", net_suffix=""):
    """A copy of a Pad-list board with references prefixed (U1 -> U11) and nets suffixed."""
    out = {}
    for ref, pins in parts.items():
        m = len(ref.rstrip("0123456789"))
        new_ref = ref[:m] + prefix_refs + ref[m:]
        out[new_ref] = [(pin, net + net_suffix, x + 100, y) for pin, net, x, y in pins]
    return out


def test_two_stages_on_one_board_and_a_named_one():
    parts = dict(LED_BUCK)
    parts.update(relabel(SYNC_BUCK, "9", "_B"))
    search = find_stages(board_from(parts), project())
    assert [(s.name, s.topology, s.switching, s.switch_node) for s in search.stages] == [
        ("stage1", "buck", "discrete", "SW"), ("stage2", "buck", "synchronous", "PH_B")]
    assert search.stages[1].role("switch").ref == "M91"
    # a project stage naming the second inductor takes that stage, the other keeps its default name
    spec = StageSpec("aux", roles={"inductor": "L91"}, operating_point={"iout_a": 3})
    search = find_stages(board_from(parts), project(stages=[spec]))
    assert [(s.name, s.switch_node) for s in search.stages] == [("stage1", "SW"), ("aux", "PH_B")]
    assert search.stages[1].operating_point.iout_a == 3
    assert search.stages[0].operating_point.iout_a == 1.0


def test_multi_pin_transistors_and_gate_resistors():
    """SO-8-style switches (source on pins 1-3, gate 4, drain 5-8) driven through gate resistors."""
    parts = {k: v for k, v in SYNC_BUCK.items() if k not in ("M1", "M2")}
    parts["M1"] = ([(p, "PH", 10, 16 + 0.1 * p) for p in (1, 2, 3)] + [(4, "GH1", 10, 17)]
                   + [(p, "12V", 12, 16 + 0.1 * p) for p in (5, 6, 7, 8)])
    parts["M2"] = ([(p, "0V", 10, 4 + 0.1 * p) for p in (1, 2, 3)] + [(4, "GL1", 10, 5)]
                   + [(p, "PH", 12, 4 + 0.1 * p) for p in (5, 6, 7, 8)])
    parts["R7"] = [(1, "GH", 8, 18), (2, "GH1", 8, 17)]
    parts["R8"] = [(1, "GL", 8, 6), (2, "GL1", 8, 5)]
    st = find_stages(board_from(parts), project()).stages[0]
    assert (st.topology, st.switching) == ("buck", "synchronous")
    hs, ls = st.role("switch"), st.role("rectifier")
    assert hs.pins["gate"] == ("M1.4",) and hs.pins["source"] == ("M1.1", "M1.2", "M1.3")
    assert hs.pins["drain"] == ("M1.5", "M1.6", "M1.7", "M1.8")
    assert ls.pins["source"] == ("M2.1", "M2.2", "M2.3")
    assert st.role("controller").ref == "U1" and "through R7" in st.role("controller").evidence
    assert st.role("controller").pins["gate"] == ("U1.2", "U1.5")
    assert st.hot_loop[0] == "C1.1" and st.hot_loop[-1] == "C1.2" and len(st.hot_loop) == 6


def test_pin_names_and_a_reversed_diode():
    parts = dict(LED_BUCK)
    parts["Q1"] = [("G", "GATE", 14, 25), ("S", "VIN", 14, 21), ("D", "SW", 17, 23)]
    parts["D1"] = [("A", "SW", 17, 17), ("K", "GND", 13, 17)]          # drawn backwards
    search = find_stages(board_from(parts), project())
    st = search.stages[0]
    assert st.role("switch").pins == {"gate": ("Q1.G",), "source": ("Q1.S",), "drain": ("Q1.D",)}
    assert "pin named G" in st.role("switch").evidence
    # the topology puts the cathode on the switch node; the pin names say otherwise: flagged
    assert st.role("rectifier").pins["cathode"] == ("D1.A",)
    assert st.role("rectifier").confidence < 0.9
    assert any("D1" in m and "orientation" in m for m in search.messages)


def test_diode_pins_named_a_and_c():
    parts = dict(LED_BUCK)
    parts["D1"] = [("C", "SW", 17, 17), ("A", "GND", 13, 17)]
    search = find_stages(board_from(parts), project())
    d = search.stages[0].role("rectifier")
    assert d.pins == {"cathode": ("D1.C",), "anode": ("D1.A",)} and "pin names agree" in d.evidence
    parts["D1"] = [("A", "SW", 17, 17), ("C", "GND", 13, 17)]
    search = find_stages(board_from(parts), project())
    assert any("D1 pin" in m and "orientation" in m for m in search.messages)


def test_high_side_sense_resistor_and_input_filter():
    """Buck with the sense resistor between VIN and the switch source, and an input filter inductor."""
    parts = dict(LED_BUCK)
    parts["Q1"] = [(1, "GATE", 14, 25), (2, "ISN", 14, 21), (3, "SW", 17, 23)]
    parts["RS1"] = [(1, "VIN", 12, 21), (2, "ISN", 13, 21)]
    parts["L1"] = [(1, "SW", 22, 23), (2, "LED+", 30, 23)]
    parts["U1"] = [(1, "VIN", 20, 40), (2, "EN", 20, 39), (3, "ISN", 20, 38), (4, "NC4", 20, 37),
                   (5, "GND", 25, 37), (6, "GATE", 25, 38), (7, "VCC", 25, 39), (8, "GND", 25, 40)]
    # input filter: J1 -> L2 -> VIN, a capacitor on the connector side
    parts["J1"] = [(1, "VRAW", 2, 20), (2, "GND", 2, 15)]
    parts["L2"] = [(1, "VRAW", 4, 21), (2, "VIN", 7, 21)]
    parts["C9"] = [(1, "VRAW", 4, 24), (2, "GND", 4, 26)]
    search = find_stages(board_from(parts, values={"RS1": "50m"}), project())
    assert len(search.stages) == 1
    st = search.stages[0]
    assert (st.switch_node, st.input_net, st.output_net) == ("SW", "VIN", "LED+")
    assert st.role("inductor").ref == "L1"
    assert st.role("sense_resistor").ref == "RS1"
    assert st.role("sense_resistor").terminals == ("RS1.1", "RS1.2")       # VIN side first
    assert st.role("sense_resistor").pins == {"sense+": ("U1.1",), "sense-": ("U1.3",)}
    assert st.hot_loop == ("C1.1", "RS1.1", "RS1.2", "Q1.2", "Q1.3", "D1.1", "D1.2", "C1.2")


SYNC_BOOST = {
    "J1": [(1, "VBAT", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VBAT", 4, 12), (2, "GND", 4, 8)],
    "L1": [(1, "VBAT", 6, 12), (2, "N3", 12, 12)],
    "Q1": [(1, "N4", 12, 6), (2, "GND", 14, 6), (3, "N3", 14, 9)],
    "Q2": [(1, "N5", 16, 14), (2, "N3", 16, 12), (3, "VOUT", 18, 12)],
    "C2": [(1, "VOUT", 20, 12), (2, "GND", 20, 8)],
    "CB": [(1, "N6", 16, 18), (2, "N3", 16, 16)],
    "U1": [(1, "VBAT", 5, 30), (2, "N4", 6, 30), (3, "N5", 7, 30), (4, "N6", 8, 30), (5, "GND", 9, 30),
           (6, "N3", 10, 30), (7, "N7", 11, 30)],
    "C3": [(1, "N7", 12, 32), (2, "GND", 12, 34)],
}


def test_synchronous_boost_from_net_names():
    st = find_stages(board_from(SYNC_BOOST), project()).stages[0]
    assert (st.topology, st.switching) == ("boost", "synchronous")
    assert (st.input_net, st.output_net, st.ground_net) == ("VBAT", "VOUT", "GND")
    assert st.role("switch").ref == "Q1" and st.role("rectifier").ref == "Q2"
    # the synchronous rectifier is the high side: N-channel, source on the switch node
    assert st.role("rectifier").pins == {"gate": ("Q2.1",), "source": ("Q2.2",), "drain": ("Q2.3",)}
    assert st.hot_loop == ("C2.1", "Q2.3", "Q2.2", "Q1.3", "Q1.2", "C2.2")
    assert [r.ref for r in st.roles_named("input_cap")] == ["C1"]


def test_synchronous_pair_without_names_says_it_assumed():
    rename = {n: f"N{i:03d}" for i, n in enumerate(["VBAT", "VOUT", "GND", "N3", "N4", "N5", "N6", "N7"])}
    search = find_stages(board_from(SYNC_BOOST, rename), project())
    st = search.stages[0]
    # with no names and no operating point the clues still read it as a boost (behaviour change: it
    # was read as a buck with a low confidence): nothing but the stage feeds the output rail, the
    # connector sits on the input; the bootstrap capacitor CB argues buck, weakly
    assert (st.topology, st.input_net, st.output_net) == ("boost", rename["VBAT"], rename["VOUT"])
    assert any("nothing but this stage feeds" in m and "bootstrap capacitor CB" in m for m in search.messages)
    st = find_stages(board_from(SYNC_BOOST, rename),
                     project(stages=[StageSpec("stage1", roles={"topology": "boost"})])).stages[0]
    assert (st.topology, st.input_net, st.output_net) == ("boost", rename["VBAT"], rename["VOUT"])


INTEGRATED_BOOST = {
    "J1": [(1, "VIN", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VIN", 4, 12), (2, "GND", 4, 8)],
    "L1": [(1, "VIN", 6, 12), (2, "SW", 12, 12)],
    "U1": [(1, "SW", 13, 12), (2, "SW", 13, 11), (3, "GND", 13, 10), (4, "VOUT", 15, 12), (5, "VIN", 15, 11),
           (6, "FB", 15, 10)],
    "C2": [(1, "VOUT", 18, 12), (2, "GND", 18, 9)],
    "R1": [(1, "VOUT", 20, 14), (2, "FB", 20, 12)],
    "R2": [(1, "FB", 22, 12), (2, "GND", 22, 10)],
}


def test_integrated_boost():
    st = find_stages(board_from(INTEGRATED_BOOST), project(operating_point={"vin_v": 3.3, "vout_v": 5})).stages[0]
    assert (st.topology, st.switching) == ("boost", "integrated")
    assert (st.input_net, st.output_net, st.ground_net) == ("VIN", "VOUT", "GND")
    assert st.role("switch").ref == "U1" and st.role("rectifier").ref == "U1"
    # output cap to the IC's output pin, the IC's ground pin, back
    assert st.hot_loop == ("C2.1", "U1.4", "U1.3", "C2.2")


CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus"


@pytest.mark.corpus
def test_corpus_netlist_regulator():
    """A real netlist nobody here wrote (spec-examples/ipc-d-356.ipc, an open-hardware DMX board):
    a five-pin regulator U1 with pin 1 on the supply connector's net (with C1), pin 2 to L1 whose
    far end is VCC (feeding the board's other ICs), pins 3 and 5 on GND. Unconnected pins (blank
    net) must join nothing."""
    path = CORPUS / "spec-examples" / "ipc-d-356.ipc"
    if not path.is_file():
        pytest.skip(f"corpus netlist not found at {path}")
    from loopcheck.readers.ipc356 import read_ipc356

    net = read_ipc356(path)
    pads = [Pad(p.net, p.ref, p.pin, p.x_mm, p.y_mm, (0,), is_via=p.is_via) for p in net.points]
    board = Board("corpus", [], Outline(box(0, 0, 1, 1), "test"), Stackup([35e-6], [], 1.6e-3), pads)
    search = find_stages(board, project())
    assert len(search.stages) == 1
    st = search.stages[0]
    assert (st.topology, st.switching) == ("buck", "integrated")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("N$4", "N$3", "VCC", "GND")
    assert st.role("controller").ref == "U1" and st.role("inductor").ref == "L1"
    assert [r.ref for r in st.roles_named("input_cap")] == ["C1"]
    assert st.hot_loop[:2] == ("C1.+", "U1.1") and st.hot_loop[-1] == "C1.-"
    assert "U1.6" not in st.role("controller").terminals          # pin 6 is unconnected


def test_project_defines_a_stage_detection_missed():
    """A switch with a reference prefix of no known kind (X1): no stage is found until the project
    file names the switch node, the inductor and the switch."""
    parts = {("X1" if k == "Q1" else k): v for k, v in LED_BUCK.items()}
    search = find_stages(board_from(parts), project())
    assert search.stages == [] and any("no power stage found" in m for m in search.messages)
    spec = StageSpec("led", roles={"switch_node": "SW", "inductor": "L1", "switch": "X1"})
    search = find_stages(board_from(parts), project(stages=[spec]))
    st = search.stages[0]
    assert (st.name, st.topology, st.switching) == ("led", "buck", "discrete")
    assert st.role("switch").ref == "X1" and st.role("switch").confidence == 1.0
    assert st.role("rectifier").ref == "D1" and st.role("controller").ref == "U1"
    assert st.hot_loop == ("C1.1", "X1.2", "X1.3", "D1.1", "D1.2", "C1.2")
    assert any("X1 (named switch) taken as a transistor" in m for m in search.messages)


def test_project_switch_node_without_inductor_is_an_error():
    with pytest.raises(InputError) as err:
        find_stages(board_from(LED_BUCK), project(stages=[StageSpec("s", roles={"switch_node": "GATE"})]))
    assert "stages.s.switch_node" in str(err.value) and "no inductor" in str(err.value)


def test_project_spec_matching_nothing_is_reported():
    search = find_stages(board_from(LED_BUCK), project(stages=[
        StageSpec("stage1", roles={}), StageSpec("extra", operating_point={"iout_a": 2})]))
    assert [s.name for s in search.stages] == ["stage1"]
    assert any("[stages.extra]" in m and "matches no stage" in m for m in search.messages)


def test_synchronous_buck_with_a_schottky_across_the_low_side():
    parts = dict(SYNC_BUCK)
    parts["D5"] = [(1, "PH", 13, 6), (2, "0V", 13, 3)]
    st = find_stages(board_from(parts), project()).stages[0]
    assert (st.topology, st.switching) == ("buck", "synchronous")
    assert st.role("switch").ref == "M1" and st.role("rectifier").ref == "M2"
    assert st.hot_loop == ("C1.1", "M1.3", "M1.2", "M2.3", "M2.2", "C1.2")


def test_no_pads_at_all():
    board = board_from({})
    search = find_stages(board, project())
    assert search.stages == [] and "no pads" in search.messages[0]


def test_cli_board_without_a_power_stage(tmp_path):
    """A small synthesized board with a resistor divider only: no stage, a clear note, exit 0."""
    from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, SynthTrace, write_fab

    board = SynthBoard("divider", 20, 10, 2, components=[
        SynthComponent("R1", "10k", [SynthPad("1", "IN", 4, 5, 1, 1), SynthPad("2", "MID", 8, 5, 1, 1)]),
        SynthComponent("R2", "10k", [SynthPad("1", "MID", 12, 5, 1, 1), SynthPad("2", "GND", 16, 5, 1, 1)]),
    ], traces=[SynthTrace("MID", 1, 0.3, [(8, 5), (12, 5)])])
    write_fab(board, tmp_path / "divider")
    r = run_cli("stages", tmp_path / "divider")
    assert r.exit_code == 0, r.output
    assert "0 power stage(s) found" in r.output
    assert "no power stage found: no inductor" in r.output


def test_inverting_synchronous():
    parts = {
        "J1": [(1, "N1", 0, 10), (2, "N2", 0, 5)],
        "C1": [(1, "N1", 4, 12), (2, "N2", 4, 8)],
        "Q1": [(1, "N5", 6, 16), (2, "N3", 8, 12), (3, "N1", 6, 12)],
        "Q2": [(1, "N6", 12, 16), (2, "N4", 12, 12), (3, "N3", 10, 12)],
        "L1": [(1, "N3", 10, 8), (2, "N2", 10, 4)],
        "C2": [(1, "N4", 16, 12), (2, "N2", 16, 8)],
        "J2": [(1, "N4", 20, 12), (2, "N2", 20, 8)],
        "CB": [(1, "N8", 8, 18), (2, "N3", 8, 16)],
        "U1": [(1, "N1", 5, 30), (2, "N5", 6, 30), (3, "N6", 7, 30), (4, "N2", 8, 30), (5, "N8", 9, 30)],
    }
    st = find_stages(board_from(parts), project()).stages[0]
    assert (st.topology, st.switching) == ("buck-boost", "synchronous")
    assert (st.input_net, st.output_net, st.ground_net) == ("N1", "N4", "N2")
    assert st.role("switch").ref == "Q1" and st.role("rectifier").ref == "Q2"
    assert st.hot_loop == ("C1.1", "Q1.3", "Q1.2", "Q2.3", "Q2.2", "C2.1", "C2.2", "C1.2")
    # N-channel high side (bootstrap CB): drain on the input; the rectifier's source on the negative output
    assert st.role("switch").pins == {"source": ("Q1.2",), "drain": ("Q1.3",), "gate": ("Q1.1",)}
    assert st.role("rectifier").pins == {"source": ("Q2.2",), "drain": ("Q2.3",), "gate": ("Q2.1",)}


def test_buck_with_low_side_sense_resistor():
    """Sense resistor between the diode anode and ground: in the hot loop, and the sense role."""
    parts = dict(LED_BUCK)
    parts["D1"] = [(1, "SW", 17, 17), (2, "ISL", 15, 17)]
    parts["RS1"] = [(1, "ISL", 13, 17), (2, "GND", 11, 17)]
    parts["L1"] = [(1, "SW", 22, 23), (2, "LED+", 30, 23)]
    parts["U1"] = [(1, "VIN", 20, 40), (2, "EN", 20, 39), (3, "ISL", 20, 38), (4, "NC4", 20, 37),
                   (5, "GND", 25, 37), (6, "GATE", 25, 38), (7, "VCC", 25, 39), (8, "GND", 25, 40)]
    st = find_stages(board_from(parts, values={"RS1": "0.05"}), project()).stages[0]
    assert (st.topology, st.ground_net) == ("buck", "GND")
    assert st.role("rectifier").ref == "D1" and st.role("sense_resistor").ref == "RS1"
    assert st.role("sense_resistor").terminals == ("RS1.1", "RS1.2")      # ground last
    assert st.hot_loop == ("C1.1", "Q1.2", "Q1.3", "D1.1", "D1.2", "RS1.1", "RS1.2", "C1.2")


# the mains-style LED driver: low-side switch, diode up to the input, LEDs between input and inductor
FLOATING_BUCK = {
    "J1": [(1, "VBUS", 0, 10), (2, "GND", 0, 5)],
    "C1": [(1, "VBUS", 4, 12), (2, "GND", 4, 8)],
    "D1": [(1, "VBUS", 8, 14), (2, "SW", 8, 10)],          # pin 1 cathode on the input
    "Q1": [(1, "DRV", 10, 6), (2, "CS", 12, 6), (3, "SW", 12, 9)],
    "RS1": [(1, "CS", 14, 4), (2, "GND", 16, 4)],
    "L1": [(1, "SW", 14, 10), (2, "LED-", 20, 10)],
    "C2": [(1, "VBUS", 22, 14), (2, "LED-", 22, 10)],       # across the LED string
    "J2": [(1, "VBUS", 26, 14), (2, "LED-", 26, 10)],
    "U1": [(1, "VBUS", 5, 30), (2, "DRV", 6, 30), (3, "CS", 7, 30), (4, "GND", 8, 30), (5, "VDD", 9, 30)],
    "C3": [(1, "VDD", 10, 32), (2, "GND", 10, 34)],
}


@pytest.mark.parametrize("meaningless", [False, True])
def test_floating_buck(meaningless):
    rename = {}
    if meaningless:
        nets = sorted({n for pins in FLOATING_BUCK.values() for _, n, _, _ in pins})
        rename = {n: f"N{i + 1:03d}" for i, n in enumerate(nets)}
    search = find_stages(board_from(FLOATING_BUCK, rename, values={"RS1": "1.0"}), project())
    st = search.stages[0]
    r = lambda n: rename.get(n, n)                                      # noqa: E731
    assert (st.topology, st.switching) == ("buck", "discrete")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == (r("SW"), r("VBUS"), r("LED-"), r("GND"))
    assert st.role("switch").ref == "Q1" and st.role("rectifier").ref == "D1"
    assert st.role("switch").pins == {"source": ("Q1.2",), "drain": ("Q1.3",), "gate": ("Q1.1",)}
    assert st.role("rectifier").pins == {"cathode": ("D1.1",), "anode": ("D1.2",)}
    assert [x.ref for x in st.roles_named("input_cap")] == ["C1"]
    assert [x.ref for x in st.roles_named("output_cap")] == ["C2"]
    assert st.role("output_cap").terminals == ("C2.2", "C2.1")
    assert st.role("sense_resistor").ref == "RS1"
    # input cap + -> diode -> switch node -> low-side switch -> sense resistor -> ground -> cap -
    assert st.hot_loop == ("C1.1", "D1.1", "D1.2", "Q1.3", "Q1.2", "RS1.1", "RS1.2", "C1.2")
    assert any("low-side (floating) buck" in m for m in search.messages)
