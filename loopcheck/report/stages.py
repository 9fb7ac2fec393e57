"""The ``loopcheck stages`` outputs: the stages found as text and as JSON, and a starting
loopcheck.toml naming them. Formatting only: the stage search is :mod:`loopcheck.stages`."""

from __future__ import annotations

import json
import os
import re
from dataclasses import fields
from pathlib import Path
from typing import Any

from ..powerstage import OperatingPoint, Stage
from ..stages import StageSearch

SCHEMA = "loopcheck-stages/1"


def stages_data(board_name: str, search: StageSearch) -> dict[str, Any]:
    """The JSON document: ``stages[]`` with roles, hot loop, missing, operating point; ``messages``."""
    out = []
    for st in search.stages:
        op = st.operating_point
        out.append({
            "name": st.name,
            "topology": st.topology,
            "switching": st.switching,
            "confidence": st.confidence,
            "switch_node": st.switch_node,
            "input_net": st.input_net,
            "output_net": st.output_net,
            "ground_net": st.ground_net,
            "roles": [{"role": r.name, "ref": r.ref, "terminals": list(r.terminals),
                       "pins": {k: list(v) for k, v in r.pins.items()},
                       "confidence": r.confidence, "evidence": r.evidence} for r in st.roles],
            "hot_loop": list(st.hot_loop),
            "missing": list(st.missing),
            "evidence": list(st.evidence),
            "unsure": list(st.unsure),
            "confirm_lines": list(st.confirm_lines),
            "not_measured": st.not_measured or None,
            "operating_point": {f.name: getattr(op, f.name) for f in fields(OperatingPoint) if f.name != "sources"},
            "operating_point_sources": dict(op.sources),
        })
    return {"schema": SCHEMA, "board": board_name, "stages": out, "messages": list(search.messages)}


def _op_text(op: OperatingPoint) -> str:
    """One line: each value with its unit, and where it came from when not the project file."""
    def tag(field_name):
        src = op.sources.get(field_name, "default")
        return "" if src.startswith("loopcheck.toml") else f" ({src})"

    def show(label, field_name, unit, scale=1.0):
        value = getattr(op, field_name)
        if value is None:
            return f"{label} unknown"
        return f"{label} {value * scale:g} {unit}{tag(field_name)}"

    vin = (f"{op.vin_min_v:g}-{op.vin_max_v:g}" if op.vin_min_v != op.vin_max_v else f"{op.vin_min_v:g}")
    parts = [f"vin {vin} V{tag('vin_min_v')}", show("vout", "vout_v", "V"), show("iout", "iout_a", "A"),
             show("fsw", "fsw_hz", "kHz", 1e-3), show("edge", "edge_s", "ns", 1e9),
             show("vsense", "vsense_v", "mV", 1e3), show("ambient", "ambient_c", "C")]
    return ", ".join(parts)


def render_text(board_name: str, search: StageSearch) -> str:
    lines = [f"{board_name}: {len(search.stages)} power stage(s) found"]
    for st in search.stages:
        lines.append("")
        lines.append(f"stage {st.name}: {st.topology}, {st.switching} switching (confidence {st.confidence:.2f})")
        lines.append(f"  nets: switch node {st.switch_node}, input {st.input_net}, output {st.output_net}, "
                     f"ground {st.ground_net}")
        for e in st.evidence:
            lines.append(f"  why: {e}")
        for r in st.roles:
            pins = "; ".join(f"{k} {','.join(v)}" for k, v in r.pins.items() if v)
            lines.append(f"  {r.name:<22} {r.ref:<6} {r.confidence:.2f}  {' '.join(r.terminals) if len(r.terminals) <= 4 else ''}"
                         .rstrip())
            if pins:
                lines.append(f"  {'':<22} pins: {pins}")
            lines.append(f"  {'':<22} why: {r.evidence}")
        if st.hot_loop:
            lines.append(f"  hot loop: {' -> '.join(st.hot_loop)} -> {st.hot_loop[0]}")
        else:
            lines.append("  hot loop: not found")
        for m in st.missing:
            lines.append(f"  missing: {m}")
        if st.not_measured:
            lines.append(f"  not measured: {st.not_measured}")
        for u in st.unsure:
            lines.append(f"  unsure: {u}")
        if st.confirm_lines:
            lines.append("  confirm or correct in loopcheck.toml (stages --write-project writes these):")
            lines += [f"    {x}" for x in st.confirm_lines]
        lines.append("  operating point: " + _op_text(st.operating_point))
    if search.messages:
        lines.append("")
        lines.append("notes:")
        lines += [f"  {m}" for m in search.messages]
    return "\n".join(lines) + "\n"


# --------------------------------------------------------------------------------------------
# a starting loopcheck.toml

_BARE = re.compile(r"^[A-Za-z0-9_-]+$")


def _key(k: str) -> str:
    return k if _BARE.match(k) else json.dumps(k)


def _value(v: Any) -> str:
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(float(v)) if isinstance(v, float) else str(v)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    raise TypeError(v)


def project_text(project, board, search: StageSearch, path: Path) -> str:
    """A loopcheck.toml naming the stages and roles found, with the operating point in use.

    ``path`` is where it will be written: ``fab`` is given relative to it. The project's file
    mapping and part values are carried over.
    """
    out = ["# Starting project file written by `loopcheck stages`: check every role below against",
           "# the schematic, then correct it here (roles named in this file win over detection).",
           "", "[board]", f"name = {_value(project.name)}"]
    fab = Path(os.path.relpath(Path(project.fab).resolve(), path.resolve().parent))
    if str(fab) != ".":
        out.append(f"fab = {_value(fab.as_posix())}")
    out.append("")
    if project.files:
        out.append("[files]")
        out += [f"{_key(k)} = {_value(v)}" for k, v in project.files.items()]
        out.append("")
    if project.components:
        out.append("[components]")
        out += [f"{_key(k)} = {_value(str(v))}" for k, v in project.components.items()]
        out.append("")
    st = board.stackup
    out += ["[stackup]" + ("   # stated defaults: replace with the fab's stackup" if st.source == "default" else ""),
            f"copper_um = {_value([round(t * 1e6, 2) for t in st.copper_thickness_m])}"]
    if st.dielectrics:
        out.append(f"dielectric_um = {_value([round(d.thickness_m * 1e6, 1) for d in st.dielectrics])}")
        out.append(f"dielectric_er = {_value([d.eps_r for d in st.dielectrics])}")
    out += [f"finished_mm = {_value(round(st.finished_thickness_m * 1e3, 3))}", ""]
    for stage in search.stages:
        out += _stage_lines(stage)
    if not search.stages:
        out += ["# no power stage was found; name one like this:", "# [stages.stage1]",
                '# switch_node = "SW"', '# inductor = "L1"', ""]
    return "\n".join(out) + "\n"


def _stage_lines(stage: Stage) -> list[str]:
    name = _key(stage.name)
    if stage.not_measured:
        # a topology the project file cannot name (it is not measured): listed for the reader only
        return [f"# {stage.name}: {stage.topology} at {stage.switch_node} "
                f"({', '.join(r.ref for r in stage.roles)}): not measured", ""]
    out = [f"[stages.{name}]", f"topology = {_value(stage.topology)}"]
    for u in stage.unsure:
        out.append(f"# unsure: {u}: check it against the schematic")
    single = ("switch", "rectifier", "inductor", "sense_resistor", "controller", "controller_decoupling")
    for role in single:
        r = stage.role(role)
        if r is not None:
            out.append(f"{role} = {_value(r.ref)}   # confidence {r.confidence:.2f}")
    for role, key in (("input_cap", "input_caps"), ("output_cap", "output_caps")):
        refs = [r.ref for r in stage.roles_named(role)]
        if refs:
            out.append(f"{key} = {_value(refs)}")
    for key in ("switch_node", "input_net", "output_net", "ground_net"):
        v = getattr(stage, key)
        if v:
            out.append(f"{key} = {_value(v)}")
    for m in stage.missing:
        out.append(f"# missing: {m}")
    op = stage.operating_point
    out += ["", f"[stages.{name}.operating_point]   # values marked default are assumptions: set them"]
    vin = [op.vin_min_v, op.vin_max_v] if op.vin_min_v != op.vin_max_v else op.vin_min_v
    items = [("vin_v", vin, "vin_min_v", 1.0), ("vout_v", op.vout_v, "vout_v", 1.0),
             ("iout_a", op.iout_a, "iout_a", 1.0), ("fsw_hz", op.fsw_hz, "fsw_hz", 1.0),
             ("edge_ns", op.edge_s, "edge_s", 1e9), ("vsense_v", op.vsense_v, "vsense_v", 1.0),
             ("ambient_c", op.ambient_c, "ambient_c", 1.0),
             ("switch_capacitance_pf", op.switch_capacitance_f, "switch_capacitance_f", 1e12),
             ("ripple_ratio", op.ripple_ratio, "ripple_ratio", 1.0)]
    for key, value, field_name, scale in items:
        src = op.sources.get(field_name, "default")
        if value is None:
            out.append(f"# {key} = ?   (unknown)")
            continue
        if isinstance(value, list):
            text = _value([round(v * scale, 9) for v in value])
        else:
            text = _value(round(value * scale, 9))
        note = "   # default" if src == "default" else ("" if src.startswith("loopcheck.toml") else f"   # {src}")
        if src.startswith(("vsense", "RS")) or (field_name == "vsense_v" and not src.startswith("loopcheck")):
            # derived from the sense resistor's value: leave it derived, say how
            out.append(f"# {key} = {text}{note}")
            continue
        out.append(f"{key} = {text}{note}")
    out.append("")
    return out
