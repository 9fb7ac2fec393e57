"""The JSON report of ``loopcheck check``: the measurement contract, the board keys shared with
``inspect``, the checks and the findings. Its schema ships in loopcheck/schemas/."""

from __future__ import annotations

import json
import math
from typing import Any

from .boardkeys import inspect_keys
from .common import CheckResult, finding_id, report_assumptions, stage_summary

SCHEMA_VERSION = "loopcheck-check-report/1"


def report_dict(result: CheckResult) -> dict[str, Any]:
    a = result.analysis
    board = a.board
    ev = result.evaluation
    counts = result.counts()
    not_made = {id(c.finding): c.reason for c in ev.checks if c.finding is not None
                and c.status == "not made"}
    findings = []
    for i, f in enumerate(result.findings):
        d = {
            "id": finding_id(i), "rule": f.rule, "severity": f.severity, "message": f.message,
            "value": _num(f.value), "limit": _num(f.limit), "unit": f.unit, "stage": f.stage,
            "x_mm": _num(f.x_mm), "y_mm": _num(f.y_mm), "layer": f.layer,
            "quantity": f.quantity, "nets": list(f.nets), "terminals": list(f.terminals),
            "waived": f.waived, "waiver_reason": f.waiver_reason,
            "not_made": not_made.get(id(f)),
        }
        findings.append(d)
    measurements = []
    for m in a.measurements:
        measurements.append({
            "quantity": m.quantity, "value": _num(m.value), "unit": m.unit, "label": m.label,
            "stage": m.stage, "x_mm": _num(m.x_mm), "y_mm": _num(m.y_mm), "layer": m.layer,
            "terminals": list(m.terminals), "nets": list(m.nets), "refs": list(m.refs),
            "assumptions": list(m.assumptions), "not_made": m.not_made,
            "drawings": [{"kind": d.kind, "layer": d.layer,
                          "points": [[float(x), float(y)] for x, y in d.points]}
                         for d in m.drawings],
            "detail": _clean(m.detail),
        })
    checks = [{"rule": c.rule, "stage": c.stage, "quantity": c.quantity, "status": c.status,
               "value": _num(c.measurement.value) if c.measurement is not None else None,
               "limits": {k: float(v) for k, v in c.limits.items()},
               "direction": c.direction, "limit_source": c.limit_origin,
               "reason": c.reason} for c in ev.checks]
    assumptions = report_assumptions(a)
    out: dict[str, Any] = {
        "schema": SCHEMA_VERSION,
        "tool": {"name": "loopcheck", "version": result.tool_version},
        "deck": {"name": result.deck.name, "path": result.deck.path},
        "fail_on": result.fail_on,
        "result": {"failed": result.failed, "failing": len(result.failing),
                   "counts": counts, "complete": result.complete, "gaps": result.gaps,
                   "internal_errors": len(result.internal_errors),
                   "exit_code": result.exit_code()},
        "internal_errors": [e.to_dict() for e in result.internal_errors],
        "measurement_stopped": a.measurement_stopped,
        "messages": list(a.messages),
    }
    # board, source, layers[], holes, nets, components, pads, vias, outline, netlist, stackup,
    # connectivity_checked, aligned, alignment_hint, inputs: exactly as inspect writes them
    out.update(inspect_keys(a))
    out["stages"] = [stage_summary(a, s) for s in a.stages]
    out["measurements"] = measurements
    out["checks"] = checks
    out["findings"] = findings
    out["assumptions"] = list(dict.fromkeys(assumptions))
    return out


def load_schema() -> dict[str, Any]:
    """The JSON Schema of this report, as shipped in the package."""
    from importlib import resources

    text = resources.files("loopcheck").joinpath("schemas/check-report.schema.json").read_text(
        encoding="utf-8")
    return json.loads(text)


def render_json(result: CheckResult) -> str:
    return json.dumps(report_dict(result), indent=2, ensure_ascii=False) + "\n"


def _num(x: Any) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _clean(value: Any) -> Any:
    """Detail dicts as plain JSON (tuples to lists, numpy scalars to floats, NaN to null)."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return value
    try:
        return _num(value)
    except (TypeError, ValueError):
        return str(value)
