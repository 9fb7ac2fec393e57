"""The demo boards: sane geometry, committed files up to date, read back clean, stages found unaided.

The boards are invented scenarios (boards/demo_geometry.py); these tests hold them to what the
other tests and the README rely on.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
BOARDS = ROOT / "boards"
sys.path.insert(0, str(BOARDS))

import demo_geometry  # noqa: E402
from demo_geometry import BUILDERS, check  # noqa: E402

from loopcheck.connectivity import check_connectivity  # noqa: E402
from loopcheck.load import load_board  # noqa: E402
from loopcheck.project import load_project  # noqa: E402
from loopcheck.stages import find_stages  # noqa: E402

NAMES = sorted(BUILDERS)


@pytest.fixture(scope="module")
def loaded():
    out = {}
    for name in NAMES:
        project = load_project(BOARDS / name)
        out[name] = (project, load_board(project))
    return out


@pytest.mark.parametrize("name", NAMES)
def test_description_is_sane(name):
    """Our own shapely check: >= 0.2 mm between nets, pads on their net's copper, nets joined."""
    assert check(BUILDERS[name]()) == []


def test_own_check_finds_a_cut_trace_and_a_bridge():
    b = demo_geometry.led_tidy()
    b.traces = [t for t in b.traces if not (t.net == "SW" and t.points[0] == (25.3, 20.9))]
    assert any("net SW" in p and "separate copper groups" in p for p in check(b))
    b = demo_geometry.led_tidy()
    b.trace("SW", 0.5, (25.3, 20.9), (25.3, 16.7))          # diode shorted: SW onto GND
    assert any("GND and SW" in p or "SW and GND" in p for p in check(b))


@pytest.mark.parametrize("name", NAMES)
def test_committed_files_are_current(name, tmp_path):
    """Regenerating gives byte-identical files (the committed ones are what the script writes)."""
    import make_demo_boards

    make_demo_boards.main(tmp_path)
    for path in (tmp_path / name).iterdir():
        committed = BOARDS / name / path.name
        assert committed.is_file(), f"{committed} not committed"
        assert committed.read_bytes() == path.read_bytes(), (
            f"{committed} differs from what boards/make_demo_boards.py writes now (synth or the geometry "
            "changed): run python3 boards/make_demo_boards.py and commit boards/")
    size = sum(p.stat().st_size for p in (BOARDS / name).iterdir())
    assert size < 300_000


@pytest.mark.parametrize("name", NAMES)
def test_reads_back_without_open_or_short(name, loaded):
    project, board = loaded[name]
    result = check_connectivity(board)
    assert result.checked
    assert [(f.rule, f.message) for f in result.findings] == []
    assert len(board.layers) == (4 if "4layer" in name else 2)
    assert project.stages == []          # no roles named: detection must find them


LED_ROLES = {"switch": "Q1", "rectifier": "D1", "inductor": "L1", "controller": "U1",
             "sense_resistor": "RS1", "controller_decoupling": "C4"}


@pytest.mark.parametrize("name", ["led-driver-tidy", "led-driver-sprawl"])
def test_led_driver_stage_found(name, loaded):
    project, board = loaded[name]
    search = find_stages(board, project)
    assert len(search.stages) == 1
    st = search.stages[0]
    assert (st.topology, st.switching) == ("buck", "discrete")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("SW", "VIN", "LED+", "GND")
    assert {r.name: r.ref for r in st.roles if r.name in LED_ROLES} == LED_ROLES
    assert sorted(r.ref for r in st.roles_named("input_cap")) == ["C1", "C2"]
    assert [r.ref for r in st.roles_named("output_cap")] == ["C3"]
    assert st.role("switch").pins == {"gate": ("Q1.1",), "source": ("Q1.2",), "drain": ("Q1.3",)}
    assert st.role("rectifier").pins == {"cathode": ("D1.1",), "anode": ("D1.2",)}
    assert st.role("sense_resistor").pins == {"sense+": ("U1.7",), "sense-": ("U1.8",)}
    assert st.missing == []
    # the hot-loop input capacitor is the one nearest the switch: C1 on the tidy board, C2 on the sprawl
    cap = "C1" if "tidy" in name else "C2"
    assert st.hot_loop == (f"{cap}.1", "Q1.2", "Q1.3", "D1.1", "D1.2", f"{cap}.2")
    # the sense voltage comes from the resistor's value in the Gerber X3 attributes
    assert st.operating_point.vsense_v == pytest.approx(0.1 * 1.5)
    assert st.operating_point.sources["iout_a"].startswith("loopcheck.toml")


def test_sync_buck_stage_found(loaded):
    project, board = loaded["sync-buck-4layer"]
    st = find_stages(board, project).stages[0]
    assert (st.topology, st.switching) == ("buck", "synchronous")
    assert (st.switch_node, st.input_net, st.output_net, st.ground_net) == ("SW", "VIN", "VOUT", "GND")
    assert {r.name: r.ref for r in st.roles if r.name in ("switch", "rectifier", "inductor", "controller",
                                                          "controller_decoupling")} == {
        "switch": "Q1", "rectifier": "Q2", "inductor": "L1", "controller": "U1", "controller_decoupling": "C5"}
    assert st.role("sense_resistor") is None
    assert st.hot_loop == ("C1.1", "Q1.3", "Q1.2", "Q2.3", "Q2.2", "C1.2")
    assert st.role("controller").pins["gate"] == ("U1.1", "U1.2")
    assert st.missing == []


def _pad(builder, terminal):
    ref, pin = terminal.split(".")
    comp = next(c for c in builder.components if c.ref == ref)
    return next(p for p in comp.pads if p.pin == pin)


def test_design_intent_distances():
    """The geometry the sprawling layout was drawn to have, measured on the description."""
    tidy, sprawl = demo_geometry.led_tidy(), demo_geometry.led_sprawl()

    def cap_to_switch(b, cap):
        a, q = _pad(b, f"{cap}.1"), _pad(b, "Q1.2")
        return math.hypot(a.x_mm - q.x_mm, a.y_mm - q.y_mm)

    assert cap_to_switch(tidy, "C1") < 5
    assert cap_to_switch(sprawl, "C2") > 20

    def sense_taps(b):
        """Length along the high-current trace from each sense trace's start to the sense-resistor
        pad centre (0 when the sense trace leaves the pad itself)."""
        from shapely.geometry import LineString, Point

        pads = {p.net: p for p in (_pad(b, "RS1.1"), _pad(b, "RS1.2"))}
        out = []
        for t in b.traces:
            if t.width_mm <= 0.3 and t.net in pads and t.layer == 1:
                tap, pad = Point(t.points[0]), pads[t.net]
                centre = Point(pad.x_mm, pad.y_mm)
                if tap.distance(centre) < 1e-9:
                    out.append(0.0)
                    continue
                for w in b.traces:
                    line = LineString(w.points)
                    if w.net == t.net and w.width_mm >= 1.0 and line.distance(tap) < 1e-9 \
                            and line.distance(centre) < 1e-9:
                        out.append(abs(line.project(tap) - line.project(centre)))
        return out

    assert sense_taps(tidy) == [0.0, 0.0]
    taps = sense_taps(sprawl)
    assert len(taps) == 2 and min(taps) > 8.5       # 8.9 mm (CS+) and 10.2 mm (CS-) of 1 mm trace


@pytest.mark.parametrize("name", NAMES)
def test_detection_holds_with_meaningless_net_names(name, loaded):
    """The same roles when every net is renamed N001, N002 ... (names are evidence, never required)."""
    import dataclasses

    project, board = loaded[name]
    nets = sorted(board.nets)
    rename = {n: f"N{i + 1:03d}" for i, n in enumerate(nets)}
    renamed = dataclasses.replace(board, pads=[dataclasses.replace(p, net=rename[p.net]) for p in board.pads])
    a = find_stages(board, project).stages
    b = find_stages(renamed, project).stages
    assert len(a) == len(b) == 1
    assert [(r.name, r.ref, r.terminals, r.pins) for r in a[0].roles] == \
        [(r.name, r.ref, r.terminals, r.pins) for r in b[0].roles]
    assert a[0].hot_loop == b[0].hot_loop
    assert (b[0].switch_node, b[0].ground_net) == (rename[a[0].switch_node], rename[a[0].ground_net])
