"""The text and JSON reports: what they show, and the JSON against its shipped schema."""

from __future__ import annotations

import json
import jsonschema
import pytest

from loopcheck.findings import Finding
from loopcheck.report.inspect import inspect_data
from loopcheck.connectivity import ConnectivityResult
from loopcheck.report.common import write_atomic
from loopcheck.report.jsonreport import SCHEMA_VERSION, load_schema, render_json
from loopcheck.report.text import render_text
from reportfixtures import make_result


def schema():
    return load_schema()


def test_json_validates_against_the_shipped_schema():
    for variant in ("sprawl", "tidy"):
        data = json.loads(render_json(make_result(variant, waivers=[("sense-kelvin", "RS1",
                                                                      "rev B")])))
        jsonschema.validate(data, schema())
        assert data["schema"] == SCHEMA_VERSION


def test_schema_rejects_a_broken_report():
    data = json.loads(render_json(make_result("sprawl")))
    del data["findings"][0]["severity"]
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(data, schema())
    data = json.loads(render_json(make_result("sprawl")))
    data["stages"][0]["hot_loop"]["area_mm2"] = "big"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(data, schema())


def test_json_measurement_contract():
    r = make_result("sprawl")
    data = json.loads(render_json(r))
    (st,) = data["stages"]
    assert st["name"] == "stage1" and st["topology"] == "buck"
    assert st["hot_loop"] == {"terminals": ["C1.1", "U1.1", "U1.2", "D1.1", "D1.2", "C1.2"],
                              "area_mm2": 182.0, "inductance_nH": 17.2, "vias": 1,
                              "inductance_method": None}     # the fixture's measurement says none
    assert st["input_cap"] == {"ref": "C1", "distance_mm": 18.4}
    assert st["sense"] == {"ref": "RS1", "kelvin_error_pct": 3.1}
    assert st["copper_loss_pct"] == 1.4
    # every measurement is there, with its drawings
    assert len(data["measurements"]) == len(r.analysis.measurements)
    loop = next(m for m in data["measurements"] if m["quantity"] == "hot_loop.area")
    assert loop["drawings"][0]["kind"] == "polygon"
    # the board keys shared with inspect: made by inspect's own function
    ins = inspect_data(r.analysis.board, ConnectivityResult(findings=[], checked=True))
    for key in ("board", "source", "layers", "nets", "components", "holes", "outline",
                "netlist", "stackup", "connectivity_checked"):
        assert data[key] == json.loads(json.dumps(ins[key])), key
    assert data["layers"][0]["name"] == "top" and data["layers"][0]["file"] == "board-F_Cu.gbr"
    assert data["layers"][0]["copper_area_mm2"] == pytest.approx(
        r.analysis.board.layers[0].geometry.area, abs=1e-3)
    assert data["nets"] == 5 and data["components"] == 5


def test_json_findings_carry_the_contract_keys():
    r = make_result("sprawl", waivers=[("sense-kelvin", "RS1", "rev B")])
    data = json.loads(render_json(r))
    assert len(data["findings"]) == len(r.findings)
    keys = {"rule", "severity", "message", "value", "limit", "unit", "stage", "x_mm", "y_mm",
            "layer", "waived"}
    for f in data["findings"]:
        assert keys <= set(f)
    kel = next(f for f in data["findings"] if f["rule"] == "sense-kelvin")
    assert kel["waived"] is True and kel["waiver_reason"] == "rev B"
    assert (kel["value"], kel["limit"], kel["unit"]) == (3.1, 2.0, "%")
    nm = next(f for f in data["findings"] if f["rule"] == "controller-decoupling")
    assert nm["value"] is None and nm["not_made"]
    assert data["result"]["failed"] is True
    assert data["result"]["failing"] == 4     # area, inductance, input cap, output temp rise
    assert data["result"]["counts"]["waived"] == 1


def test_sense_is_null_for_a_stage_without_one():
    r = make_result("tidy")
    r.analysis.stages[0].roles = [x for x in r.analysis.stages[0].roles
                                  if x.name != "sense_resistor"]
    r.analysis.measurements = [m for m in r.analysis.measurements
                               if not m.quantity.startswith("sense.")]
    data = json.loads(render_json(r))
    assert data["stages"][0]["sense"] is None
    jsonschema.validate(data, schema())


def test_text_report_shows_numbers_limits_findings_assumptions():
    r = make_result("sprawl", waivers=[("sense-kelvin", "RS1", "Kelvin pads in rev B")])
    t = render_text(r)
    assert "Stage stage1: buck" in t
    line = next(x for x in t.splitlines() if x.strip().startswith("hot-loop area"))
    assert "182 mm²" in line and "error > 150" in line and "ERROR" in line
    # what was not measured: one line per module and reason, under the stage's table
    assert "    controller decoupling (1): no controller decoupling capacitor found" in t
    assert "Findings: 4 errors, 3 warnings, 3 notes; 1 waived" in t
    # most severe first, waived last
    idx = [t.index(s) for s in ("  error    hot-loop-area", "  warning  sense-pair-area",
                                "  note     hot-loop-vias", "  waived   sense-kelvin")]
    assert idx == sorted(idx)
    assert "waived: Kelvin pads in rev B" in t
    assert "Assumptions" in t and "edge time 20 ns (default)" in t
    assert "output current 1.5 A (loopcheck.toml)" in t
    assert "Result: FAIL, 4 unwaived findings at or above error" in t
    assert t.rstrip().split("\n\n")[-1].splitlines()[-2].startswith("Caution:")
    assert max(len(x) for x in t.splitlines()) <= 100       # fits a 100-column terminal


def test_text_report_tidy_passes_and_names_integrity_problems():
    t = render_text(make_result("tidy"))
    assert "Result: pass" in t
    integ = [Finding("netlist-short", "error", "nets GND and VIN joined by copper at C1",
                     nets=("GND", "VIN"))]
    t = render_text(make_result("tidy", integrity=integ))
    assert "netlist-short" in t and "Result: FAIL" in t


def test_fail_on_levels_change_the_verdict():
    assert not make_result("tidy", fail_on="error").failed
    assert not make_result("tidy", fail_on="warning").failed
    assert make_result("tidy", fail_on="note").failed          # vias/capacitance notes
    assert not make_result("sprawl", fail_on="never").failed


def test_write_atomic_leaves_nothing_on_failure(tmp_path):
    p = tmp_path / "r.json"
    write_atomic(p, "whole\n")
    assert p.read_text() == "whole\n"

    class Boom:
        def __len__(self):
            return 1

    with pytest.raises(TypeError):
        write_atomic(p, Boom())            # the write fails half way
    assert p.read_text() == "whole\n"       # the old file is untouched
    assert [x.name for x in tmp_path.iterdir()] == ["r.json"]   # no temp file left


def test_every_format_renders_a_board_whose_measurement_stopped(tmp_path):
    """A misaligned netlist: integrity finding, no stages, measurement stopped: still whole
    reports that say so."""
    from loopcheck.report.html import render_html
    from loopcheck.report.junit import render_junit
    from loopcheck.report.sarif import render_sarif

    integ = [Finding("netlist-alignment", "error", "312 of 320 netlist pads land on no copper; "
                     "a shift of (+25.4, 0) mm would align them")]
    r = make_result("tidy", integrity=integ)
    r.analysis.stages = []
    r.analysis.measurements = []
    r.analysis.measurement_stopped = "the netlist does not line up with the copper"
    r.evaluation.findings[:] = [f for f in r.evaluation.findings if f.rule == "netlist-alignment"]
    r.evaluation.checks[:] = []
    t = render_text(r)
    assert "measurement stopped: the netlist does not line up" in t and "Result: FAIL" in t
    data = json.loads(render_json(r))
    jsonschema.validate(data, schema())
    assert data["stages"] == [] and data["measurement_stopped"]
    assert "Measurement stopped" in render_html(r)
    assert json.loads(render_sarif(r))["runs"][0]["results"][0]["ruleId"] == "netlist-alignment"
    assert 'failures="1"' in render_junit(r)


def test_geometry_path_keeps_holes_and_drops_specks():
    from shapely.geometry import LineString, Point, box
    from shapely import GeometryCollection

    from loopcheck.report.svg import geometry_path

    ring = box(0, 0, 10, 10).difference(box(2, 2, 8, 8))
    speck = box(20, 20, 20.001, 20.001)
    d = geometry_path(GeometryCollection([ring, speck, LineString([(0, 20), (5, 20)])]), 0.05)
    assert d.count("M") == 3                       # outer ring, hole, the buffered line
    assert "M0.00,-0.00" in d or "M0.00,0.00" in d or "0.00,-10.00" in d   # y is negated
    assert "20.00,-20.00" not in d                # the speck is left out
    circle = Point(0, 0).buffer(5, quad_segs=64)
    assert geometry_path(circle, 0.1).count("L") < geometry_path(circle, 0.0).count("L")


def test_a_pass_that_left_parts_unchecked_says_incomplete():
    # partial results are never presented as complete: no stage, no netlist -> incomplete
    from loopcheck.report.html import render_html

    r = make_result("tidy")
    r.analysis.stages = []
    r.analysis.measurements = []
    r.analysis.connectivity_checked = False
    assert not r.failed
    t = render_text(r)
    assert "INCOMPLETE" in t and "no power stage found" in t and "connectivity not checked" in t
    d = json.loads(render_json(r))
    assert d["result"]["complete"] is False and len(d["result"]["gaps"]) == 2
    jsonschema.validate(d, load_schema())
    assert 'id="gaps"' in render_html(r) and "incomplete" in render_html(r)


def test_a_measurement_not_made_is_a_gap_with_its_reason():
    r = make_result("sprawl", fail_on="never")
    missing = [m for m in r.analysis.measurements if m.value is None]
    assert missing, "the fixture has a measurement that was not made"
    d = json.loads(render_json(r))
    assert d["result"]["complete"] is False
    assert any(missing[0].not_made in g for g in d["result"]["gaps"])
