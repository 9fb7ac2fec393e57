"""analyse() end to end on boards written as real fab outputs (loopcheck.synth) and read back."""

import numpy as np
import pytest

from loopcheck.analysis import all_quantities, analyse
from loopcheck.load import load_board
from loopcheck.measure import QUANTITIES, base_quantity
from loopcheck.measure.loopfield import PART_LIFT_MM
from loopcheck.physics.inductance import loop_mutual_inductance, rectangular_loop_inductance
from loopcheck.project import load_project
from loopcheck.synth import SynthBoard, SynthComponent, SynthPad, SynthTrace, write_fab

from measure_boards import MINI_TOML, synth_led_buck, write_synth_project


@pytest.fixture(scope="module")
def tidy(tmp_path_factory):
    proj = write_synth_project(synth_led_buck("mini-tidy", kelvin=True), tmp_path_factory.mktemp("tidy"))
    board = load_board(proj)
    return analyse(board, proj)


@pytest.fixture(scope="module")
def shared(tmp_path_factory):
    proj = write_synth_project(synth_led_buck("mini-shared", kelvin=False), tmp_path_factory.mktemp("shared"))
    return analyse(load_board(proj), proj)


def values(an):
    return {m.quantity: m for m in an.measurements}


def test_every_quantity_is_measured_or_says_why(tidy):
    assert not tidy.integrity and tidy.measurement_stopped is None
    assert [s.name for s in tidy.stages] == ["stage1"]
    ms = values(tidy)
    assert set(ms) == set(all_quantities())
    for m in tidy.measurements:
        assert base_quantity(m.quantity) in QUANTITIES
        assert m.unit == QUANTITIES[base_quantity(m.quantity)][0]
        assert (m.value is None) == (m.not_made is not None)
    made = {q for q, m in ms.items() if m.value is not None}
    # everything this board has is measured
    for q in ("hot_loop.area", "hot_loop.inductance", "input_cap.path_length", "sense.kelvin_error",
              "sense.pair_area", "controller_decoupling.path_length", "path.switch_node.resistance",
              "copper_loss", "switch_node.area", "switch_node.capacitance"):
        assert q in made, (q, ms[q].not_made)


def test_tidy_layout_figures(tidy):
    ms = values(tidy)
    # the hot loop C1.1 (10,20) -> Q1 (13..16, 20) -> D1 (16..13, 17) -> C1.2 (10,17): 6 x 3 mm
    assert ms["hot_loop.area"].value == pytest.approx(18.0, rel=0.05)
    assert ms["input_cap.path_length"].value == pytest.approx(3.0, abs=0.2)
    assert ms["input_cap.path_length"].refs == ("C1",)
    assert ms["sense.kelvin_error"].value < 0.5
    # the same loop as a rectangle through the pad centres, 6 x 3 mm, of 1 mm traces in 35 um copper
    # (the default outer copper): Grover's rectangle of round wire with the flat strip's equivalent
    # radius r = 0.2235 (w + t), the geometric mean distance of a rectangular section (F. W. Grover,
    # "Inductance Calculations", 1946, rectangle of round wire and the GMD of a rectangle; C. R. Paul,
    # "Inductance: Loop and Partial", 2010): 7.51 nH. The measurement takes the parts as strips as wide as their 1.2 mm
    # pads, so it comes out a little lower (about -9 %).
    assert tidy.board.stackup.copper_thickness_m[0] == pytest.approx(35e-6)
    hl = ms["hot_loop.inductance"]
    grover_nH = rectangular_loop_inductance(6e-3, 3e-3, 0.2235 * (1.0e-3 + 35e-6)) * 1e9
    assert grover_nH == pytest.approx(7.51, abs=0.01)
    # the field solve (the default) keeps the fast path estimate's figures under "fast"
    assert hl.detail["inductance_method"] == "field"
    fast = hl.detail["fast"]
    assert fast["free_space_nH"] == pytest.approx(grover_nH, rel=0.15)
    # the bottom GND pour 1.53 mm below carries the image current (method of images, Paul 2010):
    # the mutual inductance of the loop with its mirror image in the pour's mid-plane 1.565 mm
    # below (copper mid-planes), taken off the free-space value. The loop: the rectangle, with
    # its three parts (Q1 along the top, D1 along the bottom, C1 up the left side) carried
    # PART_LIFT_MM above their pads in their bodies
    h_m = 1.53e-3 + 35e-6
    up = PART_LIFT_MM * 1e-3
    path = np.array([(0, 3e-3, 0), (3e-3, 3e-3, 0), (3e-3, 3e-3, up), (6e-3, 3e-3, up), (6e-3, 3e-3, 0),
                     (6e-3, 0, 0), (6e-3, 0, up), (3e-3, 0, up), (3e-3, 0, 0), (0, 0, 0), (0, 0, up),
                     (0, 3e-3, up), (0, 3e-3, 0)])
    image = path * [1, 1, -1] + [0, 0, -2 * h_m]
    m_image_nH = loop_mutual_inductance(path, image) * 1e9
    assert -fast["plane_image_nH"] == pytest.approx(m_image_nH, rel=0.10)
    assert hl.detail["fast_estimate_nH"] == pytest.approx(fast["free_space_nH"] + fast["plane_image_nH"], rel=1e-9)
    assert hl.detail["fast_estimate_nH"] == pytest.approx(grover_nH - m_image_nH, rel=0.15)
    assert hl.value == pytest.approx(grover_nH - m_image_nH, rel=0.15)
    assert any("default" in a for a in tidy.board.assumptions + tidy.assumptions)
    assert any("routes:" in a for a in tidy.assumptions)


def test_shared_sense_copper_shows_kelvin_error(shared):
    k = values(shared)["sense.kelvin_error"]
    # the + tap leaves the inductor pad, 1.4 squares of 1 mm trace before RS1 (0.1 ohm); the - tap
    # leaves the power trace 3.4 squares beyond it: about (1.4 + 3.4) * 0.5 mohm / 0.1 ohm = 2.4 %
    assert k.value == pytest.approx(2.4, rel=0.1)
    assert k.value > 2.0


def test_misaligned_netlist_stops_measurement(tmp_path):
    b = synth_led_buck("mini-offset")
    write_fab(b, tmp_path, netlist_offset_mm=(7.0, 5.0))
    (tmp_path / "loopcheck.toml").write_text(MINI_TOML.format(name=b.name))
    proj = load_project(tmp_path)
    an = analyse(load_board(proj), proj)
    assert an.measurement_stopped and an.measurement_stopped.startswith("netlist misaligned: measurement stopped")
    assert any(f.rule == "netlist-alignment" for f in an.integrity)
    assert an.measurements and all(m.value is None and m.not_made == an.measurement_stopped
                                   for m in an.measurements)


def test_board_without_power_stage_gives_a_message(tmp_path):
    b = SynthBoard("no-stage", 20, 10, 2,
                   [SynthComponent("R1", "1k", [SynthPad("1", "A", 3, 5, 1, 1), SynthPad("2", "B", 6, 5, 1, 1)]),
                    SynthComponent("J1", "X", [SynthPad("1", "A", 15, 5, 1, 1), SynthPad("2", "B", 15, 8, 1, 1)])],
                   [SynthTrace("A", 1, 0.3, [(3, 5), (15, 5)]), SynthTrace("B", 1, 0.3, [(6, 5), (6, 8), (15, 8)])])
    write_fab(b, tmp_path)
    proj = load_project(tmp_path)
    an = analyse(load_board(proj), proj)
    assert an.stages == [] and an.measurements == []
    assert any("no power stage" in m for m in an.messages)


def test_stage_with_a_missing_role_lists_not_made(tmp_path):
    b = synth_led_buck("mini-nocap")
    b.components = [c for c in b.components if c.ref != "C1"]
    write_fab(b, tmp_path)
    (tmp_path / "loopcheck.toml").write_text(MINI_TOML.format(name=b.name))
    proj = load_project(tmp_path)
    an = analyse(load_board(proj), proj)
    ms = values(an)
    assert ms["input_cap.path_length"].value is None
    assert "no input capacitor" in ms["input_cap.path_length"].not_made
    assert ms["hot_loop.area"].value is None and "hot loop" in ms["hot_loop.area"].not_made
    assert ms["switch_node.area"].value is not None          # the rest still measured


def test_meaningless_net_names_measure_the_same(tmp_path, tidy):
    # every net renamed N001, N002 ...: the measurements do not lean on names
    b = synth_led_buck("mini-anon", kelvin=True)
    names = sorted({p.net for c in b.components for p in c.pads})
    rename = {n: f"N{i + 1:03d}" for i, n in enumerate(names)}
    for c in b.components:
        for p in c.pads:
            p.net = rename[p.net]
    for t in b.traces + b.pours + b.vias:
        t.net = rename[t.net]
    proj = write_synth_project(b, tmp_path)
    an = analyse(load_board(proj), proj)
    assert [s.name for s in an.stages] == ["stage1"]
    a, ref = values(an), values(tidy)
    for q in ("hot_loop.area", "hot_loop.inductance", "input_cap.path_length", "sense.kelvin_error",
              "path.switch_node.resistance", "switch_node.area"):
        assert a[q].value == pytest.approx(ref[q].value, rel=1e-6, abs=1e-9), q
