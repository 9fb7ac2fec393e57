"""Issue 10 item 4: the efficiency points the layout costs, per stage, with its parts."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from loopcheck.physics.losses import edge_loss, efficiency_points, layout_loss

BOARDS = Path(__file__).resolve().parents[1] / "boards"


def test_edge_loss_is_the_inductor_energy_once_per_period():
    # Halliday, Resnick and Walker, Fundamentals of Physics (10th ed., 2014), ch. 30: the energy
    # of an inductor U_B = L i^2 / 2: 10 nH at 10 A holds 0.5 uJ; lost once per period at
    # 500 kHz that is 0.25 W.
    assert edge_loss(10e-9, 10.0, 500e3) == pytest.approx(0.25, rel=1e-12)
    assert edge_loss(10e-9, 10.0, 0.0) == 0.0
    # it grows with the square of the current, linearly with L and f
    assert edge_loss(10e-9, 20.0, 500e3) == pytest.approx(4 * 0.25)
    assert edge_loss(20e-9, 10.0, 1e6) == pytest.approx(4 * 0.25)


def test_layout_loss_is_the_sum_of_its_parts_over_output_power():
    assert efficiency_points(0.18, 18.0) == pytest.approx(1.0)
    pts = layout_loss(0.5, 10e-9, 10.0, 500e3, 50.0)
    assert pts == pytest.approx(100 * (0.5 + 0.25) / 50.0)
    with pytest.raises(ValueError, match="output_power_w"):
        layout_loss(0.5, 10e-9, 10.0, 500e3, 0.0)
    with pytest.raises(ValueError, match="inductance_h"):
        edge_loss(-1e-9, 1.0, 1e5)


def _analysis(name):
    folder = BOARDS / name
    if not (folder / "loopcheck.toml").exists():
        pytest.skip(f"demo board {name} not built (boards/make_demo_boards.py)")
    from loopcheck.load import load_board
    from loopcheck.project import load_project
    from reportfixtures import cached_analyse

    proj = load_project(folder)
    return cached_analyse(load_board(proj), proj), proj


def test_the_demo_boards_layout_cost_adds_up_and_the_sprawl_costs_more():
    tidy, _ = _analysis("led-driver-tidy")
    sprawl, _ = _analysis("led-driver-sprawl")
    lt = tidy.measurement("stage1", "layout_loss")
    ls = sprawl.measurement("stage1", "layout_loss")
    assert lt.value is not None and ls.value is not None, (lt.not_made, ls.not_made)
    for an, m in ((tidy, lt), (sprawl, ls)):
        d = m.detail
        paths = [x.value for x in an.measurements
                 if x.stage == "stage1" and x.quantity.endswith(".loss") and x.value is not None]
        assert d["conduction_w"] == pytest.approx(sum(paths))
        L = an.measurement("stage1", "hot_loop.inductance").value * 1e-9
        op = an.stages[0].operating_point
        i_off = op.iout_a * (1 + op.ripple_ratio / 2)           # a buck: I_out (1 + r/2)
        assert d["current_off_a"] == pytest.approx(i_off)
        assert d["switching_w"] == pytest.approx(0.5 * L * i_off ** 2 * op.fsw_hz)
        assert d["output_power_w"] == pytest.approx(op.vout_v * op.iout_a)
        assert m.value == pytest.approx(100 * (d["conduction_w"] + d["switching_w"])
                                        / d["output_power_w"])
        assert m.unit == "%" and any("common practice" in a for a in m.assumptions)
    assert ls.value > 2 * lt.value
    # the layout loss includes the copper loss, which is its conduction part
    cl = tidy.measurement("stage1", "copper_loss").value
    assert lt.value > cl and lt.detail["conduction_pct"] == pytest.approx(cl, rel=1e-6)


def test_layout_loss_is_a_stated_gap_without_the_output_voltage():
    from loopcheck.findings import Measurement
    from loopcheck.measure.common import MeasurementGap
    from loopcheck.measure.layoutloss import measure_layout_loss
    from loopcheck.powerstage import OperatingPoint, Stage

    stage = Stage(name="s", topology="buck", switching="discrete", switch_node="SW",
                  input_net="VIN", output_net="OUT", ground_net="GND",
                  operating_point=OperatingPoint(vout_v=None))
    with pytest.raises(MeasurementGap, match="output voltage is not known"):
        measure_layout_loss(stage, [])
    stage.operating_point = OperatingPoint(vout_v=5.0)
    with pytest.raises(MeasurementGap, match="hot-loop inductance"):
        measure_layout_loss(stage, [])
    ind = Measurement("hot_loop.inductance", 10.0, "nH", "x", stage="s")
    with pytest.raises(MeasurementGap, match="no high-current path"):
        measure_layout_loss(stage, [ind])


def test_layout_loss_in_every_format_with_a_headline_per_stage():
    from loopcheck.report.common import CheckResult
    from loopcheck.report.html import render_html
    from loopcheck.report.jsonreport import render_json
    from loopcheck.report.junit import render_junit
    from loopcheck.report.sarif import render_sarif
    from loopcheck.report.text import render_text
    from loopcheck.rules import evaluate_all, load_deck

    an, proj = _analysis("led-driver-tidy")
    ev = evaluate_all(an, load_deck("default", proj), proj)
    r = CheckResult(analysis=an, evaluation=ev, project=proj)
    m = an.measurement("stage1", "layout_loss")
    text = render_text(r)
    head = next(x for x in text.splitlines() if "Layout cost in efficiency" in x)
    assert head.startswith("  Layout cost in efficiency: ") and "points" in head
    assert "copper conduction" in text and "loop energy per edge" in text
    st = json.loads(render_json(r))["stages"][0]["layout_loss"]
    assert st["pct"] == pytest.approx(m.value)
    assert st["switching_w"] == pytest.approx(m.detail["switching_w"])
    html = render_html(r)
    assert 'id="layout-loss-stage1"' in html and "Layout cost in efficiency" in html
    check = next(c for c in ev.checks if c.rule == "layout-loss")
    assert check.status == "pass" and check.measurement is m
    import xml.etree.ElementTree as ET

    junit = ET.fromstring(render_junit(r))
    props = {p.get("name"): p.get("value") for p in junit.iter("property")}
    assert float(props["layout_loss_pct"]) == pytest.approx(m.value, rel=1e-3)
    assert float(props["switching_w"]) == pytest.approx(m.detail["switching_w"], rel=1e-3)
    sarif = json.loads(render_sarif(r))
    (ll,) = sarif["runs"][0]["properties"]["layout_loss"]
    assert ll["pct"] == pytest.approx(m.value) and ll["conduction_w"] > 0
    assert any(x["id"] == "layout-loss" for x in sarif["runs"][0]["tool"]["driver"]["rules"])
    assert math.isfinite(m.value)


def test_the_worked_examples_in_the_docstrings_run():
    import doctest

    import loopcheck.physics.losses as losses

    res = doctest.testmod(losses)
    assert res.attempted >= 3 and res.failed == 0
