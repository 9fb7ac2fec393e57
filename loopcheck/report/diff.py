"""``loopcheck diff`` reports: two revisions of one board side by side. Formatting only: the
matching and the changes come from loopcheck.compare."""

from __future__ import annotations

import json
from dataclasses import dataclass
from html import escape
from typing import Any

from ..compare import Comparison, FindingChange
from .common import CAUTION_LINE, CAUTIONS, CheckResult, UNIT_TEXT, fmt, path_label, value_text
from .html import REPORT_CSS
from .svg import board_svg

DIFF_SCHEMA_VERSION = "loopcheck-diff-report/1"


@dataclass
class DiffResult:
    old: CheckResult
    new: CheckResult
    comparison: Comparison


def _change_text(value: float | None, unit: str, pct: float | None) -> str:
    if value is None:
        return ""
    u = UNIT_TEXT.get(unit, unit)
    sign = "+" if value > 0 else ""
    text = f"{sign}{fmt(value)} {u}".rstrip()
    if pct is not None:
        text += f" ({'+' if pct > 0 else ''}{pct:.0f} %)"
    return text


def _label(ch) -> str:
    return path_label(ch.new or ch.old)


def _finding_line(fc: FindingChange) -> str:
    f = fc.new or fc.old
    sev = f"{f.severity}{' (waived)' if f.waived else ''}"
    if fc.status == "changed":
        o, n = fc.old, fc.new
        sev = (f"{o.severity}{' waived' if o.waived else ''} -> "
               f"{n.severity}{' waived' if n.waived else ''}")
    return f"{sev:<10} {f.rule:<28} {f.message}"


def render_diff_text(d: DiffResult) -> str:
    old, new = d.old.analysis.board.name, d.new.analysis.board.name
    lines = [f"loopcheck diff: {old} (old) -> {new} (new)", ""]
    rows = [("stage", "measurement", "old", "new", "change")]
    for ch in d.comparison.measurements:
        rows.append((ch.stage or "-", _label(ch),
                     value_text(ch.old_value, ch.unit) if ch.old else "absent",
                     value_text(ch.new_value, ch.unit) if ch.new else "absent",
                     _change_text(ch.change, ch.unit, ch.change_pct)))
    widths = [max(len(r[i]) for r in rows) for i in range(5)]
    lines.append("Measurements")
    for r in rows:
        lines.append("  " + "  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip())
    lines.append("")
    for status, head in (("new", "New findings"), ("resolved", "Resolved findings"),
                         ("changed", "Findings whose severity or waiver changed")):
        group = d.comparison.findings_with(status)
        lines.append(f"{head}: {len(group)}")
        lines.extend(f"  {_finding_line(fc)}" for fc in group)
        lines.append("")
    same = d.comparison.findings_with("same")
    lines.append(f"Findings in both: {len(same)}")
    lines.append(CAUTION_LINE)
    return "\n".join(lines) + "\n"


def diff_dict(d: DiffResult) -> dict[str, Any]:
    def fdict(f):
        return None if f is None else {
            "rule": f.rule, "severity": f.severity, "message": f.message, "value": f.value,
            "limit": f.limit, "unit": f.unit, "stage": f.stage, "x_mm": f.x_mm, "y_mm": f.y_mm,
            "layer": f.layer, "waived": f.waived}

    return {
        "schema": DIFF_SCHEMA_VERSION,
        "old": {"board": d.old.analysis.board.name, "source": d.old.analysis.board.source,
                "deck": d.old.deck.name},
        "new": {"board": d.new.analysis.board.name, "source": d.new.analysis.board.source,
                "deck": d.new.deck.name},
        "measurements": [{
            "stage": ch.stage, "quantity": ch.quantity, "label": ch.label, "unit": ch.unit,
            "old": ch.old_value, "new": ch.new_value, "change": ch.change,
            "change_pct": ch.change_pct,
            "old_not_made": ch.old.not_made if ch.old else None,
            "new_not_made": ch.new.not_made if ch.new else None,
            "in_old": ch.old is not None, "in_new": ch.new is not None,
        } for ch in d.comparison.measurements],
        "findings": [{"status": fc.status, "rule": (fc.new or fc.old).rule,
                      "stage": (fc.new or fc.old).stage, "old": fdict(fc.old),
                      "new": fdict(fc.new)} for fc in d.comparison.findings],
        "counts": {s: len(d.comparison.findings_with(s))
                   for s in ("new", "resolved", "changed", "same")},
    }


def render_diff_json(d: DiffResult) -> str:
    return json.dumps(diff_dict(d), indent=2, ensure_ascii=False) + "\n"


def render_diff_html(d: DiffResult) -> str:
    h = ["<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">",
         f"<title>loopcheck diff: {escape(d.old.board_name)} / {escape(d.new.board_name)}</title>",
         f"<style>{REPORT_CSS} .pair {{ display:grid; grid-template-columns: 1fr 1fr; gap: 14px; }}"
         " .worse { color: var(--err); font-weight:600; } .better { color: var(--ok); "
         "font-weight:600; }</style></head><body>"]
    h.append(f"<header><h1>Layout revisions compared</h1><div class=\"sub\">old "
             f"<code>{escape(d.old.board_name)}</code> &rarr; new "
             f"<code>{escape(d.new.board_name)}</code></div></header><main>")
    h.append('<section class="caution">' + "".join(f"<p>{escape(c)}</p>" for c in CAUTIONS)
             + "</section>")
    h.append('<section><h2>The two boards</h2><div class="pair">')
    for tag, r in (("old", d.old), ("new", d.new)):
        a = r.analysis
        svg = board_svg(a.board, a.measurements, [], [], markers=False, css_id=f"board-{tag}")
        h.append(f'<figure class="board-frame" style="margin:0">{svg}<figcaption style="color:'
                 f'#ddd">{tag}: {escape(a.board.name)}</figcaption></figure>')
    h.append("</div></section>")
    h.append("<section><h2>Measurements</h2><table><thead><tr><th>stage</th><th>measurement"
             "</th><th>old</th><th>new</th><th>change</th></tr></thead><tbody>")
    for ch in d.comparison.measurements:
        h.append(f"<tr><td>{escape(ch.stage or '-')}</td><td>{escape(_label(ch))}</td>"
                 f"<td class=\"num\">{escape(value_text(ch.old_value, ch.unit) if ch.old else 'absent')}"
                 f"</td><td class=\"num\">"
                 f"{escape(value_text(ch.new_value, ch.unit) if ch.new else 'absent')}</td>"
                 f"<td class=\"num\">{escape(_change_text(ch.change, ch.unit, ch.change_pct))}"
                 "</td></tr>")
    h.append("</tbody></table></section>")
    for status, head in (("new", "New findings"), ("resolved", "Resolved findings"),
                         ("changed", "Severity or waiver changed")):
        group = d.comparison.findings_with(status)
        h.append(f"<section><h2>{head} ({len(group)})</h2>")
        if group:
            h.append("<table><thead><tr><th>severity</th><th>rule</th><th>finding</th></tr>"
                     "</thead><tbody>")
            for fc in group:
                f = fc.new or fc.old
                cls = "worse" if status == "new" else ("better" if status == "resolved" else "")
                sev = f.severity if status != "changed" else \
                    f"{fc.old.severity} → {fc.new.severity}"
                h.append(f'<tr><td class="sev sev-{escape(f.severity)}">{escape(sev)}</td>'
                         f'<td>{escape(f.rule)}</td><td class="{cls}">{escape(f.message)}</td>'
                         "</tr>")
            h.append("</tbody></table>")
        h.append("</section>")
    h.append("</main><footer>" + escape(CAUTION_LINE) + "</footer></body></html>\n")
    return "".join(h)
