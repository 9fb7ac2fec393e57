"""What ``loopcheck inspect`` shows: the board as read, and its connectivity (formatting only).

``inspect_data`` gathers what the Board and the ConnectivityResult already hold into one plain
dict (the JSON contract, schema ``INSPECT_SCHEMA``); ``render_text`` and ``render_json`` format it.

JSON contract (``schema`` = "loopcheck-inspect/1"): ``board``, ``source``, ``layers[]`` (``index``,
``name``, ``file``, ``thickness_um``, ``copper_area_mm2``, ``clipped_area_mm2``), ``holes``
(``plated``, ``non_plated``, ``slots``, ``files``), ``nets`` (count of named nets), ``components``
(count), ``pads``, ``vias``, ``outline`` (``source``, ``from_extent``, ``width_mm``, ``height_mm``,
``area_mm2``), ``netlist``, ``connectivity_checked``, ``aligned``, ``alignment_hint``, ``connectivity_notes`` (what the check decided without a finding),
``findings[]`` (``rule``, ``severity``, ``message`` and, where they apply, ``x_mm``, ``y_mm``,
``layer``, ``nets``, ``terminals``), ``assumptions[]``, ``inputs`` (file -> role),
``net_full_names`` (netlist net name cut by its writer -> the full name from the copper's Gerber
X2 net attributes; the text report says so in one assumption line).
"""

from __future__ import annotations

import json
from typing import Any

from ..board import Board
from ..connectivity import ConnectivityResult

INSPECT_SCHEMA = "loopcheck-inspect/1"


def inspect_data(board: Board, result: ConnectivityResult) -> dict[str, Any]:
    """The inspection as plain data (see the module docstring for the keys)."""
    layers = [{
        "index": layer.index,
        "name": layer.name,
        "file": layer.file,
        "thickness_um": round(layer.thickness_m * 1e6, 3),
        "copper_area_mm2": round(layer.copper_area_mm2, 4),
        "clipped_area_mm2": round(layer.clipped_area_mm2, 4),
    } for layer in board.layers]
    width, height = board.outline_size_mm
    area = board.outline_area_mm2
    findings = []
    for f in result.findings:
        d: dict[str, Any] = {"rule": f.rule, "severity": f.severity, "message": f.message}
        for key in ("x_mm", "y_mm", "layer"):
            if getattr(f, key) is not None:
                d[key] = getattr(f, key)
        if f.nets:
            d["nets"] = list(f.nets)
        if f.terminals:
            d["terminals"] = list(f.terminals)
        findings.append(d)
    assumptions = list(board.assumptions)
    if not result.checked and result.not_checked_reason:
        assumptions.append(f"connectivity not checked: {result.not_checked_reason}")
    return {
        "schema": INSPECT_SCHEMA,
        "board": board.name,
        "source": board.source,
        "layers": layers,
        "holes": {**board.hole_counts, "files": list(board.drill_files)},
        "nets": board.named_net_count,
        "components": len(board.components),
        "pads": board.component_pad_count,
        "vias": len(board.vias),
        "outline": {"source": board.outline.source, "from_extent": board.outline.from_extent,
                    "width_mm": round(width, 4), "height_mm": round(height, 4), "area_mm2": round(area, 3)},
        "netlist": board.netlist_file,
        "stackup": {"source": board.stackup.source,
                    "finished_mm": round(board.stackup.finished_thickness_m * 1e3, 4),
                    "dielectric_um": [round(d.thickness_m * 1e6, 2) for d in board.stackup.dielectrics],
                    "dielectric_er": [d.eps_r for d in board.stackup.dielectrics]},
        "connectivity_checked": bool(result.checked),
        "aligned": bool(result.aligned),
        "alignment_hint": result.alignment_hint,
        "connectivity_notes": list(getattr(result, "notes", [])),
        "findings": findings,
        "assumptions": assumptions,
        "inputs": dict(sorted(board.inputs.items())),
        "net_full_names": dict(sorted(board.net_full_names.items())),
    }


def render_json(data: dict[str, Any]) -> str:
    return json.dumps(data, indent=2, sort_keys=False) + "\n"


def render_text(data: dict[str, Any]) -> str:
    out: list[str] = []
    add = out.append
    add(f"board {data['board']}  ({data['source']})")
    o = data["outline"]
    add(f"outline: {o['width_mm']:.2f} x {o['height_mm']:.2f} mm, {o['area_mm2']:.1f} mm2, from {o['source']}")
    st = data["stackup"]
    add(f"stackup ({st['source']}): finished {st['finished_mm']:.3f} mm")
    add("")
    add("copper layers (top to bottom)")
    w = max([len(layer["file"] or "-") for layer in data["layers"]] + [4])
    add(f"  {'#':>2}  {'name':<8} {'file':<{w}}  {'copper um':>9}  {'area mm2':>10}  {'clipped mm2':>11}")
    for layer in data["layers"]:
        add(f"  {layer['index'] + 1:>2}  {layer['name']:<8} {layer['file'] or '-':<{w}}  "
            f"{layer['thickness_um']:>9.1f}  {layer['copper_area_mm2']:>10.2f}  {layer['clipped_area_mm2']:>11.2f}")
    h = data["holes"]
    add("")
    add(f"holes: {h['plated']} plated, {h['non_plated']} non-plated, {h['slots']} slots"
        + (f"  ({', '.join(h['files'])})" if h["files"] else "  (no drill file)"))
    add(f"netlist: {data['netlist'] or 'none'}: {data['nets']} nets, {data['components']} components, "
        f"{data['pads']} pads, {data['vias']} vias")
    add("")
    if not data["connectivity_checked"]:
        add("connectivity: not checked")
    elif not data["findings"]:
        add("connectivity: every net's pads are joined by copper, and no copper joins two nets")
    else:
        errors = sum(1 for f in data["findings"] if f["severity"] == "error")
        add(f"connectivity: {len(data['findings'])} finding{'s' if len(data['findings']) != 1 else ''}"
            f" ({errors} error{'s' if errors != 1 else ''})")
        if not data["aligned"]:
            add("  the netlist does not line up with the copper: measurements would be meaningless")
    for note in data.get("connectivity_notes") or []:
        add(f"  note: {note}")
    for f in data["findings"]:
        where = ""
        if f.get("x_mm") is not None:
            where = f" at ({f['x_mm']:.3f}, {f['y_mm']:.3f}) mm" + (f" on {f['layer']}" if f.get("layer") else "")
        add(f"  {f['severity']}  {f['rule']}{where}")
        add(f"      {f['message']}")
    if data.get("inputs"):
        add("")
        add("files")
        wf = max(len(k) for k in data["inputs"])
        for name, role in data["inputs"].items():
            add(f"  {name:<{wf}}  {role}")
    if data["assumptions"]:
        add("")
        add("assumptions")
        for a in data["assumptions"]:
            add(f"  - {a}")
    return "\n".join(out) + "\n"
