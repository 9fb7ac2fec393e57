"""What every report is made from, and the few formatting helpers they share (no computing here).

A ``CheckResult`` bundles the analysis, its evaluation by the deck and the run's settings. The
stage summary below only picks measurements by name: every number in it is a Measurement's.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .. import __version__
from ..analysis import Analysis
from ..fileio import write_atomic  # noqa: F401  (re-exported: reports are written with it)
from ..findings import SEVERITIES, Finding, InternalError, Measurement
from ..powerstage import Stage
# fmt: the one number format of every report, the same as in the findings' messages
from ..rules.evaluate import Check, Evaluation, at_or_above, fmt  # noqa: F401  (fmt re-exported)

CAUTIONS = (
    "loopcheck estimates from the fab outputs; it does not certify a design. Its numbers come "
    "from models with the assumptions listed here: measure the built board.",
    "Mains-connected and high-voltage circuits need isolation, creepage and clearance checked "
    "against the applicable safety standard; loopcheck does not check them.",
    "Defer to local codes and licensed practice.",
)
CAUTION_LINE = ("Caution: estimates, not a certification; mains and high-voltage designs need "
                "isolation, creepage and clearance checked to the applicable safety standard.")

UNIT_TEXT = {"mm2": "mm²", "count": "", "C": "°C"}


@dataclass
class CheckResult:
    analysis: Analysis
    evaluation: Evaluation
    project: Any = None               # loopcheck.project.Project, or None
    fail_on: str = "error"
    tool_version: str = __version__
    fail_on_incomplete: bool = False

    def exit_code(self) -> int:
        """3: the check could not be completed (an internal error, whatever --fail-on says,
        --fail-on never too); 1: findings at --fail-on, or gaps with --fail-on-incomplete; 0."""
        if self.internal_errors:
            return 3
        return 1 if self.failed or (self.fail_on_incomplete and self.gaps) else 0

    @property
    def findings(self) -> list[Finding]:
        return self.evaluation.findings

    @property
    def deck(self):
        return self.evaluation.deck

    @property
    def failing(self) -> list[Finding]:
        return self.evaluation.failing(self.fail_on)

    @property
    def failed(self) -> bool:
        return bool(self.failing)

    @property
    def internal_errors(self) -> list[InternalError]:
        """Bugs met on the way: the check could not be completed (exit 3, whatever --fail-on)."""
        return list(self.analysis.internal_errors)

    @property
    def complete(self) -> bool:
        return not self.gaps and not self.internal_errors

    @property
    def gaps(self) -> list[str]:
        """What this check did not cover, in words; empty when it covered the whole board.
        A pass with gaps is reported as incomplete, never as a plain pass. Measurements not made
        are one line per stage, module and reason (``not_made_groups``); those an internal error
        stopped are listed with the internal errors, not here."""
        a = self.analysis
        out = []
        if not a.connectivity_checked:
            out.append("connectivity not checked (no netlist or pad data)")
        if a.measurement_stopped:
            out.append(a.measurement_stopped)
        elif not a.stages:
            out.append("no power stage found: nothing was measured")
        if not a.measurement_stopped:
            for g in not_made_groups(a, internal=False):
                where = f"{g.stage} " if g.stage else ""
                n = len(g.labels)
                out.append(f"{where}{g.module}: {n} measurement{'s' if n != 1 else ''} not made: "
                           f"{g.reason}")
        # a stage resting on weak evidence is never a clean pass: say what would settle it
        out += [st.unsure_text() for st in a.stages if getattr(st, "unsure", None)]
        return out

    @property
    def board_name(self) -> str:
        return self.analysis.board.name

    def counts(self) -> dict[str, int]:
        out = {s: 0 for s in SEVERITIES}
        out["waived"] = 0
        for f in self.findings:
            if f.waived:
                out["waived"] += 1
            else:
                out[f.severity] += 1
        return out


@dataclass
class NotMadeGroup:
    """Measurements of one stage and module not made for one reason."""

    stage: str | None
    module: str
    reason: str
    labels: list[str]
    internal: bool = False


def not_made_groups(analysis: Analysis, internal: bool | None = None) -> list[NotMadeGroup]:
    """The measurements not made, one group per (stage, module, reason), in the order met.
    ``internal``: True only those an internal error stopped, False only the others, None all."""
    from ..analysis import module_of

    failed = {(e.stage, e.module) for e in analysis.internal_errors}
    groups: dict[tuple[str | None, str, str], NotMadeGroup] = {}
    for m in analysis.measurements:
        if m.value is not None:
            continue
        module = module_of(m.quantity)
        is_internal = (m.stage, f"{module} measurement") in failed
        if internal is not None and is_internal != internal:
            continue
        key = (m.stage, module, m.not_made or "no reason given")
        g = groups.setdefault(key, NotMadeGroup(m.stage, module, key[2], [], is_internal))
        label = path_label(m)
        if label not in g.labels:
            g.labels.append(label)
    return list(groups.values())


def layout_loss_headline(m: Measurement | None) -> str:
    """One line: the efficiency points the layout costs the stage, with its parts."""
    if m is None:
        return "Layout cost in efficiency: not measured"
    if m.value is None:
        return f"Layout cost in efficiency: not measured ({m.not_made})"
    d = m.detail
    text = (f"Layout cost in efficiency: {fmt(float(m.value))} points "
            f"(copper conduction {fmt(1e3 * float(d['conduction_w']))} mW + loop energy per edge "
            f"{fmt(1e3 * float(d['switching_w']))} mW, of {fmt(float(d['output_power_w']))} W out)")
    if d.get("paths_missing"):
        text += f"; at least: paths not measured: {', '.join(d['paths_missing'])}"
    return text


def finding_id(index: int) -> str:
    """The finding's anchor in the HTML report and its id in the JSON report."""
    return f"finding-{index + 1}"


def value_text(value: float | None, unit: str | None) -> str:
    if value is None:
        return "not measured"
    u = UNIT_TEXT.get(unit or "", unit or "")
    return f"{fmt(float(value))} {u}".rstrip()


def limits_text(check: Check | None, unit: str | None) -> str:
    if check is None or not check.limits:
        return ""
    sign = ">" if check.direction == "above" else "<"
    u = UNIT_TEXT.get(unit or "", unit or "")
    parts = [f"{lv} {sign} {fmt(check.limits[lv])}" for lv in ("note", "warning", "error")
             if lv in check.limits]
    return (", ".join(parts) + (f" {u}" if u else "")).strip()


def path_label(m: Measurement) -> str:
    """A measurement's label, naming its high-current path where the label does not already."""
    label = m.label or m.quantity
    if m.quantity.startswith("path."):
        path = m.quantity.split(".")[1].replace("_", " ")
        if path not in label:
            label = f"{label} [{path} path]"
    return label


def checks_by_measurement(evaluation: Evaluation) -> dict[int, list[Check]]:
    out: dict[int, list[Check]] = {}
    for c in evaluation.checks:
        if c.measurement is not None:
            out.setdefault(id(c.measurement), []).append(c)
    return out


def sorted_findings(findings: list[Finding]) -> list[tuple[int, Finding]]:
    """(original index, finding), most severe first, waived last; stable within a severity."""
    return sorted(enumerate(findings),
                  key=lambda t: (t[1].waived, SEVERITIES.index(t[1].severity), t[0]))


def _first(ms: list[Measurement], quantity: str) -> Measurement | None:
    for m in ms:
        if m.quantity == quantity:
            return m
    return None


def _val(m: Measurement | None) -> float | None:
    return None if m is None or m.value is None else float(m.value)


def stage_summary(analysis: Analysis, stage: Stage) -> dict[str, Any]:
    """The per-stage JSON contract (issue 5): picked from the stage's measurements, null where
    the stage has no such part or the measurement was not made."""
    ms = analysis.measurements_for(stage.name)
    area, ind, vias = (_first(ms, q) for q in ("hot_loop.area", "hot_loop.inductance",
                                               "hot_loop.vias"))
    cap_m = _first(ms, "input_cap.path_length")
    cap_role = stage.role("input_cap")
    input_cap = None
    if cap_m is not None or cap_role is not None:
        ref = (cap_m.refs[0] if cap_m is not None and cap_m.refs else
               (cap_role.ref if cap_role is not None else None))
        input_cap = {"ref": ref, "distance_mm": _val(cap_m)}
    sense_m = _first(ms, "sense.kelvin_error")
    sense_role = stage.role("sense_resistor")
    sense = None
    if sense_role is not None or (sense_m is not None and sense_m.value is not None):
        ref = (sense_role.ref if sense_role is not None else
               (sense_m.refs[0] if sense_m.refs else None))
        sense = {"ref": ref, "kelvin_error_pct": _val(sense_m)}
    v = _val(vias)
    method = ind.detail.get("inductance_method") if ind is not None else None
    ll = _first(ms, "layout_loss")
    layout_loss = None
    if ll is not None and ll.value is not None:
        layout_loss = {"pct": float(ll.value),
                       **{k: float(ll.detail[k]) for k in ("conduction_w", "switching_w",
                                                           "output_power_w")},
                       "paths_missing": list(ll.detail.get("paths_missing", []))}
    return {
        "name": stage.name,
        "topology": stage.topology,
        "switching": stage.switching,
        "switch_node": stage.switch_node,
        "input_net": stage.input_net,
        "output_net": stage.output_net,
        "ground_net": stage.ground_net,
        "roles": [{"name": r.name, "ref": r.ref, "terminals": list(r.terminals),
                   "confidence": r.confidence, "evidence": r.evidence} for r in stage.roles],
        "hot_loop": {"terminals": list(stage.hot_loop), "area_mm2": _val(area),
                     "inductance_nH": _val(ind), "vias": None if v is None else int(round(v)),
                     "inductance_method": method},
        "input_cap": input_cap,
        "sense": sense,
        "copper_loss_pct": _val(_first(ms, "copper_loss")),
        "layout_loss": layout_loss,
        "missing": list(stage.missing),
        "confidence": stage.confidence,
        "unsure": list(stage.unsure),
        "confirm_lines": list(stage.confirm_lines),
        "not_measured": stage.not_measured or None,
    }


def report_assumptions(analysis: Analysis) -> list[str]:
    """The board's and the analysis's assumptions (stackup, part values, each stage's operating
    point with its source, the methods), each once."""
    return list(dict.fromkeys(list(analysis.board.assumptions) + list(analysis.assumptions)))


def top_shares_text(m: Measurement | None, n: int = 3) -> str:
    """The largest ``n`` inductance shares of a measurement's detail on one line, largest first
    ("VIN copper on top 19.3 %, part Q1.2-Q1.3 19.2 %"); "" when the detail has none."""
    shares = (m.detail.get("inductance_shares") if m is not None else None) or []
    shares = [s for s in shares if isinstance(s, dict) and "part" in s and "share_pct" in s]
    shares = sorted(shares, key=lambda s: -float(s["share_pct"]))[:n]
    return ", ".join(f"{s['part']} {float(s['share_pct']):.1f} %" for s in shares)
