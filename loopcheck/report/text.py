"""The terminal report: per stage the headline cost in efficiency and the measured numbers
against their limits, what was not measured grouped by module and reason, the findings by
severity, the assumptions, a caution line; internal errors first and last. Every line fits
``WIDTH`` columns (long ones wrap). Formatting only."""

from __future__ import annotations

import textwrap

from ..findings import SEVERITIES
from .common import (CAUTION_LINE, CheckResult, checks_by_measurement, layout_loss_headline,
                     limits_text, not_made_groups, report_assumptions, path_label,
                     sorted_findings, top_shares_text, value_text)

WIDTH = 100            # a terminal of 100 columns shows every line whole

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
    if result.internal_errors:
        from ..crashreport import how_to_report

        lines.append("INTERNAL ERROR: the check could not be completed")
        lines.extend("  " + x.strip() for x in how_to_report(result.internal_errors).splitlines()[1:])
        lines.append("")

    groups = not_made_groups(a)
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
        lines.append("  " + layout_loss_headline(a.measurement(stage.name, "layout_loss")))
        rows = [("measurement", "value", "limits", "status")]
        after: dict[int, list[str]] = {}       # lines under a row: where the inductance sits
        for m in a.measurements_for(stage.name):
            if m.value is None:
                continue                       # listed below, by module and reason
            checks = by_m.get(id(m), [])
            check = checks[0] if checks else None
            status = _STATUS_WORD.get(check.status, check.status) if check else ""
            rows.append((path_label(m), value_text(m.value, m.unit), limits_text(check, m.unit),
                         status))
            shares = top_shares_text(m)
            if shares and m.quantity == "hot_loop.inductance":
                after[len(rows) - 1] = [f"    largest shares: {shares}"]
        # rules the stage could not be checked on (no measurement at all)
        for c in result.evaluation.checks:
            if c.stage == stage.name and c.measurement is None:
                rows.append((f"{c.rule}", "not measured", limits_text(c, None),
                             _STATUS_WORD.get(c.status, c.status)))
        if len(rows) > 1:
            lines.extend(_table(rows, indent="  ", after=after))
        mine = [g for g in groups if g.stage == stage.name]
        if mine:
            n = sum(len(g.labels) for g in mine)
            lines.append(f"  not measured ({n}):")
            for g in mine:
                tag = "INTERNAL ERROR: " if g.internal else ""
                lines.append(f"    {g.module} ({len(g.labels)}): {tag}{g.reason}")
        lines.append("")

    counts = result.counts()
    summary = ", ".join(f"{counts[s]} {s}{'s' if counts[s] != 1 else ''}" for s in SEVERITIES)
    if counts["waived"]:
        summary += f"; {counts['waived']} waived"
    lines.append(f"Findings: {summary}")
    # rules not checked because their measurement was not made: one line per reason (the
    # measurements themselves are listed under each stage)
    unchecked = {id(c.finding): c for c in result.evaluation.checks
                 if c.finding is not None and c.status == "not made"}
    grouped: dict[tuple[str, str | None, str], list[str]] = {}
    for f in result.findings:
        c = unchecked.get(id(f))
        if c is not None and not f.waived:
            grouped.setdefault((f.severity, f.stage, c.reason or ""), [])
            if f.rule not in grouped[(f.severity, f.stage, c.reason or "")]:
                grouped[(f.severity, f.stage, c.reason or "")].append(f.rule)
    shown_groups: set[tuple[str, str | None, str]] = set()
    for i, f in sorted_findings(result.findings):
        c = unchecked.get(id(f))
        if c is not None and not f.waived:
            key = (f.severity, f.stage, c.reason or "")
            if key in shown_groups:
                continue
            shown_groups.add(key)
            rules = grouped[key]
            if len(rules) > 1:
                where = f"{f.stage}: " if f.stage else ""
                lines.append(f"  {f.severity:<8} {len(rules)} rules not checked, {where}"
                             f"{c.reason}: {', '.join(rules)}")
                continue
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
    if result.internal_errors:
        n = len(result.internal_errors)
        verdict = (f"Result: COULD NOT BE COMPLETED: {n} internal error{'s' if n != 1 else ''} "
                   "(exit 3; see above what to send to get it fixed)")
    elif result.fail_on == "never":
        verdict = "Result: not gated (--fail-on never)"
    elif failing:
        verdict = (f"Result: FAIL, {len(failing)} unwaived finding"
                   f"{'s' if len(failing) != 1 else ''} at or above {result.fail_on}")
    else:
        verdict = f"Result: pass (no unwaived finding at or above {result.fail_on})"
    lines.append(verdict)
    if result.gaps:
        lines.append(f"INCOMPLETE: {len(result.gaps)} gap{'s' if len(result.gaps) != 1 else ''} "
                     "in what was checked:")
        lines.extend(f"  - {g}" for g in result.gaps)
    lines.append(CAUTION_LINE)
    return "\n".join(wrap_lines(lines)) + "\n"


def wrap_lines(lines: list[str], width: int = WIDTH) -> list[str]:
    """Every line at most ``width`` columns; a long one continues under its own indent + 4."""
    out = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        lead = line[:len(line) - len(line.lstrip())]
        if line.lstrip().startswith("- "):
            lead2 = lead + "    "
        else:
            lead2 = lead + "    "
        out.extend(textwrap.wrap(line.strip(), width=width, initial_indent=lead,
                                 subsequent_indent=lead2, break_on_hyphens=False) or [""])
    return out


def _table(rows: list[tuple[str, ...]], indent: str = "", width: int = WIDTH,
           after: dict[int, list[str]] | None = None) -> list[str]:
    """Columns padded to their widest cell; the first column wraps so the table fits ``width``.
    ``after`` maps a row's index to lines printed under it (indented by ``indent``)."""
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    room = width - len(indent) - sum(widths[1:]) - 2 * (len(widths) - 1)
    widths[0] = max(min(widths[0], room), 20)
    out: list[str] = []
    out_rows: list[tuple[str, ...]] = []
    for r in rows:
        first = textwrap.wrap(r[0], widths[0], break_on_hyphens=False) or [""]
        cells = [first[0].ljust(widths[0])] + [c.ljust(w) for c, w in zip(r[1:], widths[1:])]
        out.append((indent + "  ".join(cells)).rstrip())
        out.extend((indent + "  " + more).rstrip() for more in first[1:])
        out.extend(indent + extra for extra in (after or {}).get(len(out_rows), []))
        out_rows.append(r)
    return out
