"""The operating point of each stage: defaults, the project file, part values; and the check
that the topology can make the output from the input."""

from __future__ import annotations

from dataclasses import fields
from typing import Any

from ..errors import InputError
from ..powerstage import OperatingPoint, Stage
from ..project import OPERATING_POINT_FIELDS, Project

def operating_point(project: Project, stage_name: str) -> OperatingPoint:
    """The operating point of one stage: defaults, then ``[operating_point]``, then
    ``[stages.NAME.operating_point]``. ``sources`` maps each field to where its value came from
    ("default", "loopcheck.toml [operating_point]" or "loopcheck.toml [stages.NAME.operating_point]").

    The values were checked when the project file was read (loopcheck.project); here they are
    only merged. Whether they suit the stage's topology is :func:`check_operating_point`'s job.
    """
    op = OperatingPoint()
    sources = {f.name: "default" for f in fields(OperatingPoint) if f.name != "sources"}
    layers: list[tuple[str, dict[str, Any]]] = [("operating_point", project.operating_point or {})]
    for spec in project.stages:
        if spec.name == stage_name:
            layers.append((f"stages.{stage_name}.operating_point", spec.operating_point or {}))
    for section, values in layers:
        for key, value in values.items():
            if key == "vin_v":
                lo, hi = value if isinstance(value, (list, tuple)) else (value, value)
                op.vin_min_v, op.vin_max_v = float(lo), float(hi)
                sources["vin_min_v"] = sources["vin_max_v"] = f"loopcheck.toml [{section}]"
                continue
            name, scale = OPERATING_POINT_FIELDS[key]
            setattr(op, name, float(value) * scale)
            sources[name] = f"loopcheck.toml [{section}]"
    op.sources = sources
    return op


def check_operating_point(project: Project, stage: Stage) -> None:
    """Raise InputError, naming the project file and the key, when the stage's topology cannot
    produce its output voltage from its input: a buck needs 0 < vout < vin_min, a boost
    vout > vin_max, an inverting buck-boost any vout other than 0 (either sign is read as |vout|).
    """
    op = stage.operating_point
    vout = op.vout_v
    if vout is None:
        return
    key = "operating_point.vout_v"
    if any(s.name == stage.name and "vout_v" in (s.operating_point or {}) for s in project.stages):
        key = f"stages.{stage.name}.operating_point.vout_v"
    vin_src = op.sources.get("vin_min_v", "default")
    vin_src = "default" if vin_src == "default" else vin_src.replace("loopcheck.toml ", "")
    problem = None
    if stage.topology == "buck" and not 0 < vout < op.vin_min_v:
        problem = (f"a buck cannot make {vout:g} V from a minimum input of {op.vin_min_v:g} V ({vin_src}): "
                   "vout must lie between 0 and vin_min")
    elif stage.topology == "boost" and not vout > op.vin_max_v:
        problem = (f"a boost cannot make {vout:g} V from a maximum input of {op.vin_max_v:g} V ({vin_src}): "
                   "vout must exceed vin_max")
    elif stage.topology == "buck-boost" and vout == 0:
        problem = "a buck-boost needs a non-zero output voltage"
    if problem:
        path = str(project.path) if project.path else None
        raise InputError(f"{key}: stage {stage.name}: {problem}", path=path, line=project.line_of(key))


_OP_LABELS = {
    "vin_min_v": ("minimum input voltage", "V", 1.0),
    "vin_max_v": ("maximum input voltage", "V", 1.0),
    "vout_v": ("output voltage", "V", 1.0),
    "iout_a": ("output current", "A", 1.0),
    "fsw_hz": ("switching frequency", "kHz", 1e-3),
    "edge_s": ("switching edge time", "ns", 1e9),
    "vsense_v": ("sense voltage", "mV", 1e3),
    "ambient_c": ("ambient temperature", "C", 1.0),
    "switch_capacitance_f": ("switch output capacitance", "pF", 1e12),
    "ripple_ratio": ("inductor ripple ratio", "", 1.0),
}


def operating_point_assumptions(op: OperatingPoint) -> list[str]:
    """Every operating-point value in words with where it came from (the project file, a
    default, or a part value), for the reports' assumptions."""
    out = []
    for name, source in op.sources.items():
        label, unit, scale = _OP_LABELS.get(name, (name, "", 1.0))
        value = getattr(op, name)
        shown = "unknown" if value is None else f"{value * scale:g}{' ' + unit if unit else ''}"
        why = "default" if source == "default" else source
        out.append(f"operating point: {label} {shown} ({why})")
    return out
