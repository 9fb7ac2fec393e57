"""Turning an Analysis into findings: judge each measurement by its rule, apply waivers.

Every (rule, stage, quantity) the deck asks about becomes a ``Check`` with a status, so a report
can show what passed, what failed and what could not be measured; every failing or unmeasured
check becomes a ``Finding``. Waivers mark findings waived (they stay listed); a waiver that
matches nothing is itself a finding (``unused-waiver``).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

from ..analysis import Analysis
from ..findings import SEVERITIES, Finding, Measurement
from ..measure import QUANTITIES, base_quantity
from .deck import Deck, Rule

STATUSES = ("pass", "note", "warning", "error", "not made", "off")


@dataclass
class Check:
    """One rule applied to one measurement (or to a quantity the stage lacks)."""

    rule: str
    stage: str | None
    quantity: str
    status: str                           # one of STATUSES
    measurement: Measurement | None = None
    limits: dict[str, float] = field(default_factory=dict)
    direction: str | None = None
    limit_origin: str = ""
    reason: str | None = None             # why not made
    finding: Finding | None = None


@dataclass
class Evaluation:
    deck: Deck
    checks: list[Check]
    findings: list[Finding]               # integrity first, then by stage and rule; waivers applied

    def unwaived(self) -> list[Finding]:
        return [f for f in self.findings if not f.waived]

    def failing(self, fail_on: str) -> list[Finding]:
        """Unwaived findings at or above ``fail_on`` ("error" | "warning" | "note" | "never")."""
        return [f for f in self.unwaived() if at_or_above(f.severity, fail_on)]

    def check_of(self, finding: Finding) -> Check | None:
        for c in self.checks:
            if c.finding is finding:
                return c
        return None


def at_or_above(severity: str, threshold: str) -> bool:
    """True when ``severity`` is at least as severe as ``threshold`` ("never": always False)."""
    if threshold == "never":
        return False
    return SEVERITIES.index(severity) <= SEVERITIES.index(threshold)


def evaluate(analysis: Analysis, deck: Deck, project: Any = None) -> list[Finding]:
    """Integrity and measurement findings, waivers applied, unused waivers reported."""
    return evaluate_all(analysis, deck, project).findings


def evaluate_all(analysis: Analysis, deck: Deck, project: Any = None) -> Evaluation:
    findings: list[Finding] = []
    checks: list[Check] = []

    # Board integrity: the deck may change the severity (or switch a rule off).
    for f in analysis.integrity:
        rule = deck.rules.get(f.rule)
        if rule is not None and not rule.enabled:
            continue
        sev = rule.severity if rule is not None and rule.severity else f.severity
        findings.append(replace(f, severity=sev, waived=False, waiver_reason=None))

    stage_names = [s.name for s in analysis.stages]
    by_stage: dict[str | None, list[Measurement]] = {}
    for m in analysis.measurements:
        by_stage.setdefault(m.stage, []).append(m)
    order = list(dict.fromkeys(stage_names + list(by_stage)))

    for stage in order:
        ms = by_stage.get(stage, [])
        stage_checks: list[Check] = []
        for base in deck.measurement_rules:
            rule = deck.rule(base.name, stage)
            judged = [m for m in ms if rule.judges(m.quantity)]
            if not judged and stage in stage_names and analysis.measurement_stopped is None:
                # The stage exists but nothing was measured for this rule: say so, never pass it.
                check = Check(rule.name, stage, rule.quantity or "", "not made", None,
                              dict(rule.limits), rule.direction, rule.origin,
                              reason="no measurement of this quantity was made for the stage")
                if rule.enabled:
                    check.finding = _not_made_finding(rule, check, deck, None)
                else:
                    check.status = "off"
                stage_checks.append(check)
                continue
            for m in judged:
                check = Check(rule.name, stage, m.quantity, "pass", m, dict(rule.limits),
                              rule.direction, rule.origin)
                if not rule.enabled:
                    check.status = "off"
                elif m.value is None:
                    check.status = "not made"
                    check.reason = m.not_made or "no value was produced"
                    check.finding = _not_made_finding(rule, check, deck, m)
                else:
                    level, limit = rule.judge(float(m.value))
                    if level is not None:
                        check.status = level
                        check.finding = _finding(rule, m, level, limit)
                stage_checks.append(check)
        unsure = next((st.unsure for st in analysis.stages if st.name == stage and st.unsure), None)
        for c in stage_checks:
            if c.finding is not None and unsure:
                # a verdict on a stage found from weak evidence says so (the project-file lines
                # that settle it are in the report's gaps)
                c.finding.message += f"; the stage itself is unsure ({'; '.join(unsure)})"
        checks.extend(stage_checks)
        findings.extend(c.finding for c in stage_checks if c.finding is not None)

    # Per-stage overrides for stages that are not on the board.
    if analysis.measurement_stopped is None:
        for stage in deck.stage_rules:
            if stage not in stage_names:
                rule = deck.rules.get("unused-override")
                if rule is None or not rule.enabled:
                    continue
                known = ", ".join(stage_names) or "none"
                findings.append(Finding(
                    rule="unused-override", severity=rule.severity or "warning",
                    message=f"threshold overrides for stage '{stage}' apply to nothing: no such "
                            f"stage on the board (stages found: {known})"))

    findings = _apply_waivers(findings, deck, project)
    return Evaluation(deck=deck, checks=checks, findings=findings)


def waiver_matches(where: str, finding: Finding) -> bool:
    """A waiver's place matches a finding's stage, terminal, component reference or net."""
    where = where.strip()
    if finding.stage is not None and where == finding.stage:
        return True
    if where in finding.terminals or where in finding.nets:
        return True
    return any(t.split(".", 1)[0] == where for t in finding.terminals)


def _apply_waivers(findings: list[Finding], deck: Deck, project: Any) -> list[Finding]:
    waivers = list(getattr(project, "waivers", None) or [])
    used = [False] * len(waivers)
    out: list[Finding] = []
    for f in findings:
        for i, w in enumerate(waivers):
            if w.rule == f.rule and waiver_matches(w.where, f):
                used[i] = True
                if not f.waived:
                    # in place: the findings are this evaluation's own copies, and the
                    # checks refer to them
                    f.waived = True
                    f.waiver_reason = w.reason
        out.append(f)
    rule = deck.rules.get("unused-waiver")
    if rule is not None and rule.enabled:
        for w, u in zip(waivers, used):
            if not u:
                out.append(Finding(
                    rule="unused-waiver", severity=rule.severity or "warning",
                    message=f"waiver for {w.rule} at '{w.where}' matches no finding "
                            f"(reason given: {w.reason})"))
    return out


def _label(rule: Rule, m: Measurement | None, quantity: str) -> str:
    if m is not None and m.label:
        return m.label
    base = base_quantity(quantity.replace("*", "input"))
    return QUANTITIES.get(base, ("", quantity))[1]


def _unit(m: Measurement | None, quantity: str) -> str:
    if m is not None:
        return m.unit
    return QUANTITIES.get(base_quantity(quantity.replace("*", "input")), ("", ""))[0]


def fmt(value: float) -> str:
    """A measured number for a message: three significant figures, no exponent for normal sizes."""
    if abs(value) < 1e-6:          # below a millionth of any unit we print: numerical noise
        return "0"
    if abs(value) >= 100:
        return f"{value:.0f}"
    if abs(value) < 0.001:
        return f"{value:.2e}"
    return f"{value:.3g}"


def _where(m: Measurement) -> str:
    if m.quantity.startswith("path."):
        return f" ({m.quantity.split('.')[1].replace('_', ' ')} path)"
    if m.refs:
        return f" ({', '.join(m.refs)})"
    return ""


def _largest_share(m: Measurement) -> str:
    """"; largest share: PART (x %)" naming the part of the loop that holds the largest share of
    an inductance (the field solve's ``inductance_shares``), so the finding says what to fix;
    "" when the measurement carries no shares."""
    shares = [s for s in (m.detail.get("inductance_shares") or [])
              if isinstance(s, dict) and "part" in s and "share_pct" in s]
    if not shares:
        return ""
    top = max(shares, key=lambda s: float(s["share_pct"]))
    return f"; largest share: {top['part']} ({fmt(float(top['share_pct']))} %)"


def _finding(rule: Rule, m: Measurement, level: str, limit: float) -> Finding:
    word = "above" if rule.direction == "above" else "below"
    unit = m.unit if m.unit != "count" else ""
    value_txt = f"{fmt(float(m.value))} {unit}".rstrip()
    limit_txt = f"{fmt(limit)} {unit}".rstrip()
    stage = f"{m.stage}: " if m.stage else ""
    if level == "note" and limit == 0 and rule.direction == "above":
        # a rule that notes every value (switch-node capacitance, vias in the loop)
        msg = f"{stage}{_label(rule, m, m.quantity)}{_where(m)} is {value_txt} (for information)"
    else:
        msg = f"{stage}{_label(rule, m, m.quantity)}{_where(m)} is {value_txt}, {word} the " \
              f"{level} limit of {limit_txt}"
    msg += _largest_share(m)
    return Finding(rule=rule.name, severity=level, message=msg, stage=m.stage,
                   value=float(m.value), limit=limit, unit=m.unit, x_mm=m.x_mm, y_mm=m.y_mm,
                   layer=m.layer, nets=tuple(m.nets), terminals=tuple(m.terminals),
                   quantity=m.quantity)


def _not_made_finding(rule: Rule, check: Check, deck: Deck, m: Measurement | None) -> Finding:
    stage = f"{check.stage}: " if check.stage else ""
    msg = f"{stage}{_label(rule, m, check.quantity)} not measured, so {rule.name} was not " \
          f"checked: {check.reason}"
    return Finding(rule=rule.name, severity=deck.not_made_severity, message=msg,
                   stage=check.stage, value=None, limit=None, unit=_unit(m, check.quantity),
                   x_mm=m.x_mm if m else None, y_mm=m.y_mm if m else None,
                   layer=m.layer if m else None, nets=tuple(m.nets) if m else (),
                   terminals=tuple(m.terminals) if m else (),
                   quantity=m.quantity if m else check.quantity)
