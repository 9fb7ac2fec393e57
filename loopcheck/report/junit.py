"""JUnit XML: one test suite per stage (and one for the board), a test case per rule per stage
(per path for the path rules), a failure per unwaived finding at or above ``--fail-on``.

Waived findings and measurements that could not be made are skipped test cases; findings below
the threshold pass, with the finding in the case's output. What the check did not cover
(``CheckResult.gaps``) is a skipped case each in a ``<board>.coverage`` suite. Formatting only.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from ..findings import Finding
from .common import CheckResult
from ..rules.evaluate import at_or_above


def _case_name(rule: str, quantity: str | None) -> str:
    if quantity and quantity.startswith("path."):
        return f"{rule} [{quantity.split('.')[1]} path]"
    return rule


def render_junit(result: CheckResult) -> str:
    board = result.board_name
    ev = result.evaluation
    suites: dict[str, list[tuple[str, str, list[Finding], str | None]]] = {}

    def suite_of(stage: str | None) -> str:
        return f"{board}.{stage}" if stage else f"{board}.board"

    # Integrity rules always run once per board; each has a case, failing or not.
    integrity = [r for r in ev.deck.rules.values() if r.kind in ("integrity", "project")]
    board_cases = []
    for rule in integrity:
        fs = [f for f in ev.findings if f.rule == rule.name]
        if rule.kind == "project" and not fs:
            continue
        skip = None
        if not rule.enabled:
            skip = "rule switched off in the deck"
        elif rule.name.startswith("netlist-") and not result.analysis.connectivity_checked:
            skip = "no netlist: connectivity not checked"
        board_cases.append((rule.name, rule.name, fs, skip))
    for f in ev.findings:                    # findings of rules the deck does not list
        if f.stage is None and f.rule not in ev.deck.rules:
            board_cases.append((f.rule, f.rule, [f], None))
    suites[suite_of(None)] = board_cases

    for c in ev.checks:
        fs = [c.finding] if c.finding is not None else []
        skip = None
        if c.status == "not made":
            skip = f"not measured: {c.reason}"
        elif c.status == "off":
            skip = "rule switched off in the deck"
        suites.setdefault(suite_of(c.stage), []).append(
            (_case_name(c.rule, c.quantity), c.rule, fs, skip))

    # What the check did not cover: a skipped case each, so a CI's test view shows the run
    # as incomplete rather than as a plain pass.
    gaps = list(dict.fromkeys(result.gaps))
    if gaps:
        suites[f"{board}.coverage"] = [(gap, "coverage", [], f"not covered: {gap}") for gap in gaps]

    root = ET.Element("testsuites", name=f"loopcheck {board}")
    totals = {"tests": 0, "failures": 0, "skipped": 0, "errors": 0}
    # Internal errors (bugs in loopcheck): an <error> each in a <board>.internal suite, so a
    # CI's test view shows the check as not completed, not as passed.
    if result.internal_errors:
        from ..crashreport import how_to_report

        suite = ET.SubElement(root, "testsuite", name=f"{board}.internal")
        for e in result.internal_errors:
            case = ET.SubElement(suite, "testcase", name=f"internal error: {e.where()}",
                                 classname=f"{board}.internal")
            el = ET.SubElement(case, "error", message=f"internal error in the {e.where()}: "
                               f"{e.error}; the check could not be completed",
                               type="internal-error")
            el.text = how_to_report([e])
        n = len(result.internal_errors)
        for k, v in (("tests", n), ("failures", 0), ("errors", n), ("skipped", 0)):
            suite.set(k, str(v))
        totals["tests"] += n
        totals["errors"] += n
    headline = _layout_loss_properties(result)
    for sname, cases in suites.items():
        suite = ET.SubElement(root, "testsuite", name=sname)
        if sname in headline:
            props = ET.SubElement(suite, "properties")
            for k, v in headline[sname]:
                ET.SubElement(props, "property", name=k, value=v)
        n_fail = n_skip = 0
        for name, rule, fs, skip in cases:
            case = ET.SubElement(suite, "testcase", name=name, classname=sname)
            failing = [f for f in fs if not f.waived and at_or_above(f.severity, result.fail_on)]
            waived = [f for f in fs if f.waived]
            if failing:
                for f in failing:
                    el = ET.SubElement(case, "failure", message=f.message, type=f.severity)
                    el.text = _detail(f)
                    n_fail += 1
            elif skip is not None:
                ET.SubElement(case, "skipped", message=skip)
                n_skip += 1
            elif waived:
                ET.SubElement(case, "skipped",
                              message=f"waived: {waived[0].waiver_reason or ''}".strip())
                n_skip += 1
            other = [f for f in fs if f not in failing]
            if other:
                out = ET.SubElement(case, "system-out")
                out.text = "\n".join(("waived " if f.waived else "") + f"{f.severity}: {f.message}"
                                     for f in other)
        suite.set("tests", str(len(cases)))
        suite.set("failures", str(n_fail))
        suite.set("errors", "0")
        suite.set("skipped", str(n_skip))
        totals["tests"] += len(cases)
        totals["failures"] += n_fail
        totals["skipped"] += n_skip
    root.set("tests", str(totals["tests"]))
    root.set("failures", str(totals["failures"]))
    root.set("errors", str(totals["errors"]))
    root.set("skipped", str(totals["skipped"]))
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


def _layout_loss_properties(result: CheckResult) -> dict[str, list[tuple[str, str]]]:
    """Per stage suite: the efficiency points the layout costs and its parts, as properties."""
    out: dict[str, list[tuple[str, str]]] = {}
    a = result.analysis
    for stage in a.stages:
        m = a.measurement(stage.name, "layout_loss")
        if m is None:
            continue
        name = f"{result.board_name}.{stage.name}"
        if m.value is None:
            out[name] = [("layout_loss_not_made", m.not_made or "")]
            continue
        out[name] = [("layout_loss_pct", f"{m.value:.4g}")] + [
            (k, f"{float(m.detail[k]):.4g}") for k in ("conduction_w", "switching_w",
                                                        "output_power_w") if k in m.detail]
    return out


def _detail(f: Finding) -> str:
    lines = [f"rule: {f.rule}", f"severity: {f.severity}"]
    if f.stage:
        lines.append(f"stage: {f.stage}")
    if f.value is not None:
        lines.append(f"value: {f.value:g} {f.unit or ''}".rstrip())
    if f.limit is not None:
        lines.append(f"limit: {f.limit:g} {f.unit or ''}".rstrip())
    if f.x_mm is not None and f.y_mm is not None:
        lines.append(f"at: ({f.x_mm:.2f}, {f.y_mm:.2f}) mm" + (f" on {f.layer}" if f.layer else ""))
    if f.terminals:
        lines.append("terminals: " + " ".join(f.terminals))
    if f.nets:
        lines.append("nets: " + " ".join(f.nets))
    lines.append(f"explain: loopcheck explain {f.rule}")
    return "\n".join(lines)
