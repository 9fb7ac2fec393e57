"""JUnit XML output, read back with junitparser: counts match the findings."""

from __future__ import annotations

from junitparser import Failure, JUnitXml, Skipped

from loopcheck.report.junit import render_junit
from loopcheck.rules.evaluate import at_or_above
from reportfixtures import make_result


def parse(tmp_path, result):
    p = tmp_path / "r.xml"
    p.write_text(render_junit(result))
    return JUnitXml.fromfile(str(p))


def cases(xml):
    out = []
    for suite in xml:
        for case in suite:
            out.append((suite.name, case))
    return out


def test_failures_match_findings_at_or_above_the_threshold(tmp_path):
    for fail_on in ("error", "warning", "note", "never"):
        r = make_result("sprawl", fail_on=fail_on, waivers=[("sense-kelvin", "RS1", "rev B")])
        xml = parse(tmp_path, r)
        want = [f for f in r.findings if not f.waived and at_or_above(f.severity, fail_on)]
        failures = [res for _, c in cases(xml) for res in c.result if isinstance(res, Failure)]
        assert len(failures) == len(want), fail_on
        assert sorted(x.message for x in failures) == sorted(f.message for f in want)
        assert sum(s.failures for s in xml) == len(want)
        assert xml.failures == len(want)


def test_a_case_per_rule_per_stage(tmp_path):
    r = make_result("sprawl")
    xml = parse(tmp_path, r)
    suites = {s.name: s for s in xml}
    # the coverage suite holds what the check did not cover (here: the decoupling measurement)
    assert set(suites) == {"led-sprawl.board", "led-sprawl.stage1", "led-sprawl.coverage"}
    names = [c.name for c in suites["led-sprawl.stage1"]]
    for rule in ("hot-loop-area", "input-cap-distance", "sense-kelvin", "copper-loss"):
        assert names.count(rule) == 1
    # one case per high-current path for the path rule
    assert "trace-temperature-rise [output path]" in names
    assert "trace-temperature-rise [input path]" in names
    assert [c.name for c in suites["led-sprawl.board"]] == ["netlist-open", "netlist-short",
                                                            "netlist-alignment", "netlist-x2-mismatch"]
    assert xml.tests == sum(len(list(s)) for s in xml)


def test_waived_and_not_made_are_skipped(tmp_path):
    r = make_result("sprawl", waivers=[("sense-kelvin", "RS1", "rev B")])
    xml = parse(tmp_path, r)
    by_name = {c.name: c for _, c in cases(xml)}
    kel = by_name["sense-kelvin"]
    assert isinstance(kel.result[0], Skipped) and "waived: rev B" in kel.result[0].message
    dec = by_name["controller-decoupling"]
    assert isinstance(dec.result[0], Skipped) and "not measured" in dec.result[0].message
    assert by_name["switch-overshoot"].is_passed
    # waived + not made in the stage suite, and the same not-made measurement as a coverage gap
    assert sum(s.skipped for s in xml) == 3
    assert {s.name: s.skipped for s in xml} == {"led-sprawl.board": 0, "led-sprawl.stage1": 2,
                                                "led-sprawl.coverage": 1}


def test_tidy_board_has_no_failures(tmp_path):
    xml = parse(tmp_path, make_result("tidy"))
    assert xml.failures == 0 and xml.tests > 10


def test_unused_waiver_is_a_board_case(tmp_path):
    r = make_result("tidy", waivers=[("sense-kelvin", "stage7", "gone")], fail_on="warning")
    xml = parse(tmp_path, r)
    board = next(s for s in xml if s.name.endswith(".board"))
    case = next(c for c in board if c.name == "unused-waiver")
    assert isinstance(case.result[0], Failure)


def test_board_cases_skip_without_netlist_or_when_off(tmp_path):
    r = make_result("tidy")
    r.analysis.connectivity_checked = False
    xml = parse(tmp_path, r)
    board = next(s for s in xml if s.name.endswith(".board"))
    for case in board:
        assert isinstance(case.result[0], Skipped) and "no netlist" in case.result[0].message


def test_each_gap_is_a_skipped_coverage_case(tmp_path):
    r = make_result("tidy")
    r.analysis.connectivity_checked = False
    gaps = r.gaps
    assert len(gaps) == 2 and "connectivity not checked" in gaps[0]
    xml = parse(tmp_path, r)
    cov = next(s for s in xml if s.name.endswith(".coverage"))
    got = list(cov)
    assert [c.name for c in got] == gaps
    assert all(c.classname == cov.name for c in got)
    assert all(isinstance(c.result[0], Skipped) and c.result[0].message == f"not covered: {g}"
               for c, g in zip(got, gaps))
    assert cov.tests == cov.skipped == 2 and cov.failures == 0
    assert xml.skipped == sum(s.skipped for s in xml)


def test_a_complete_check_has_no_coverage_suite(tmp_path):
    r = make_result("tidy")
    r.analysis.measurements = [m for m in r.analysis.measurements if m.value is not None]
    assert r.gaps == []
    xml = parse(tmp_path, r)
    assert not [s for s in xml if s.name.endswith(".coverage")]
