"""The terminal report: per stage the measured numbers against their limits, the findings by
severity, the assumptions, a caution line. Formatting only."""

from __future__ import annotations

from ..findings import SEVERITIES
from .common import (CAUTION_LINE, CheckResult, checks_by_measurement, limits_text,
                     report_assumptions, path_label, sorted_findings, value_text)

_STATUS_WORD = {"pass": "ok", "note": "NOTE", "warning": "WARNING", "error": "ERROR",
                "not made": "not measured", "off": "off", "": ""}


def render_text(result: CheckResult) -> str:
    a = result.analysis
    board = a.board
    lines: list[str] = []
    deck = result.deck
    lines.append(f"loopcheck {result.tool_version}: {board.name}  (rule deck: {deck.name})")
    layer_names = ", ".join(layer.name for layer in board.layers)
    lines.append(f"  {len(board.layers)} copper layers ({layer_names}), {len(board.nets)} nets, "
                 f"{len(board.components)} components"
                 + (f"; netlist {board.netlist_file}" if board.netlist_file else "; no netlist"))
    if not a.connectivity_checked:
        lines.append("  connectivity NOT checked: there is no netlist")
    if a.measurement_stopped:
        lines.append(f"  measurement stopped: {a.measurement_stopped}")
    for msg in a.messages:
        lines.append(f"  {msg}")
    lines.append("")

    by_m = checks_by_measurement(result.evaluation)
    for stage in a.stages:
        sw = f", {stage.switching} switching" if stage.switching else ""
        nets = ", ".join(f"{k} {v}" for k, v in (("input", stage.input_net),
                                                  ("output", stage.output_net),
                                                  ("switch node", stage.switch_node),
                                                  ("ground", stage.ground_net)) if v)
        lines.append(f"Stage {stage.name}: {stage.topology}{sw}; {nets}")
        if stage.hot_loop:
            lines.append(f"  hot loop: {' -> '.join(stage.hot_loop)}")
        for miss in stage.missing:
            lines.append(f"  missing: {miss}")
        rows = [("measurement", "value", "limits", "status")]
        for m in a.measurements_for(stage.name):
            checks = by_m.get(id(m), [])
            check = checks[0] if checks else None
            status = _STATUS_WORD.get(check.status, check.status) if check else ""
            label = path_label(m)
            value = value_text(m.value, m.unit)
            if m.value is None and m.not_made:
                value = f"not measured ({m.not_made})"
            rows.append((label, value, limits_text(check, m.unit), status))
        # rules the stage could not be checked on (no measurement at all)
        for c in result.evaluation.checks:
            if c.stage == stage.name and c.measurement is None:
                rows.append((f"{c.rule}", "not measured", limits_text(c, None),
                             _STATUS_WORD.get(c.status, c.status)))
        lines.extend(_table(rows, indent="  "))
        lines.append("")

    counts = result.counts()
    summary = ", ".join(f"{counts[s]} {s}{'s' if counts[s] != 1 else ''}" for s in SEVERITIES)
    if counts["waived"]:
        summary += f"; {counts['waived']} waived"
    lines.append(f"Findings: {summary}")
    for i, f in sorted_findings(result.findings):
        where = []
        if f.x_mm is not None and f.y_mm is not None:
            where.append(f"at ({f.x_mm:.1f}, {f.y_mm:.1f}) mm")
        if f.layer:
            where.append(f"on {f.layer}")
        tag = "waived" if f.waived else f.severity
        lines.append(f"  {tag:<8} {f.rule:<28} {f.message}" + (f"  [{' '.join(where)}]"
                                                               if where else ""))
        if f.waived:
            lines.append(f"  {'':<8} {'':<28} waived: {f.waiver_reason}")
    if not result.findings:
        lines.append("  none")
    else:
        lines.append("  `loopcheck explain RULE` says what a rule measures, why it matters and how "
                     "to fix it.")
    lines.append("")

    # The board's and the analysis's assumptions and each stage's operating point; those behind
    # single measurements are many and stay in the JSON and HTML reports.
    assumptions = report_assumptions(a)
    per_measurement = {x for m in a.measurements for x in m.assumptions} - set(assumptions)
    if assumptions or per_measurement:
        lines.append("Assumptions")
        lines.extend(f"  - {x}" for x in assumptions)
        if per_measurement:
            lines.append(f"  ({len(per_measurement)} more behind single measurements: see "
                         "--format json or html)")
        lines.append("")

    failing = result.failing
    if result.fail_on == "never":
        verdict = "Result: not gated (--fail-on never)"
    elif failing:
        verdict = (f"Result: FAIL, {len(failing)} unwaived finding"
                   f"{'s' if len(failing) != 1 else ''} at or above {result.fail_on}")
    else:
        verdict = f"Result: pass (no unwaived finding at or above {result.fail_on})"
    if result.gaps:
        verdict += "; INCOMPLETE: " + "; ".join(result.gaps)
    lines.append(verdict)
    lines.append(CAUTION_LINE)
    return "\n".join(lines) + "\n"


def _table(rows: list[tuple[str, ...]], indent: str = "") -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    out = []
    for r in rows:
        cells = [c.ljust(w) for c, w in zip(r, widths)]
        out.append((indent + "  ".join(cells)).rstrip())
    return out
