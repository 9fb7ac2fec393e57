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
from ..findings import SEVERITIES, Finding, Measurement
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
    def gaps(self) -> list[str]:
        """What this check did not cover, in words; empty when it covered the whole board.
        A pass with gaps is reported as incomplete, never as a plain pass."""
        a = self.analysis
        out = []
        if not a.connectivity_checked:
            out.append("connectivity not checked (no netlist or pad data)")
        if a.measurement_stopped:
            out.append(a.measurement_stopped)
        elif not a.stages:
            out.append("no power stage found: nothing was measured")
        if not a.measurement_stopped:
            by_reason: dict[str, list[str]] = {}
            for m in a.measurements:
                if m.value is None:
                    where = f"{m.stage}: " if m.stage else ""
                    by_reason.setdefault(f"{where}{m.not_made or 'no reason given'}", []).append(m.label)
            for reason, labels in by_reason.items():
                out.append(f"not made ({reason}): " + ", ".join(dict.fromkeys(labels)))
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
                     "inductance_nH": _val(ind), "vias": None if v is None else int(round(v))},
        "input_cap": input_cap,
        "sense": sense,
        "copper_loss_pct": _val(_first(ms, "copper_loss")),
        "missing": list(stage.missing),
    }


def report_assumptions(analysis: Analysis) -> list[str]:
    """The board's and the analysis's assumptions (stackup, part values, each stage's operating
    point with its source, the methods), each once."""
    return list(dict.fromkeys(list(analysis.board.assumptions) + list(analysis.assumptions)))
