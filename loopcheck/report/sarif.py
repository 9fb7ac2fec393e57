"""SARIF 2.1.0: one result per finding, rule metadata from the rule docs, the copper layer's
Gerber file as the physical location, stage / terminals / nets as logical locations, waived
findings as suppressions, what the check did not cover as tool execution notifications of the
run's invocation. Formatting only."""

from __future__ import annotations

import json
from pathlib import Path, PurePosixPath
from typing import Any

from ..rules.docs import RULE_DOCS
from .common import CheckResult, finding_id

SARIF_SCHEMA_URI = ("https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/"
                    "sarif-schema-2.1.0.json")
BASE_ID = "BOARDROOT"
_LEVEL = {"error": "error", "warning": "warning", "note": "note"}


def _rule_entry(name: str, result: CheckResult) -> dict[str, Any]:
    doc = RULE_DOCS.get(name)
    rule = result.deck.rules.get(name)
    entry: dict[str, Any] = {"id": name}
    if doc is not None:
        help_text = (f"Why it matters: {doc.why}\n\nHow to fix it: {doc.fix}\n\n"
                     f"How it is computed: {doc.formula}\n\nKnown limits: {doc.limits}")
        help_md = (f"**Why it matters.** {doc.why}\n\n**How to fix it.** {doc.fix}\n\n"
                   f"**How it is computed.** {doc.formula}\n\n**Known limits.** {doc.limits}\n\n"
                   f"`loopcheck explain {name}` prints this text.")
        entry.update({
            "name": doc.title,
            "shortDescription": {"text": doc.title},
            "fullDescription": {"text": doc.measures},
            "help": {"text": help_text, "markdown": help_md},
        })
    props: dict[str, Any] = {}
    if rule is not None:
        if rule.kind == "measurement":
            top = max(rule.limits, key=("note", "warning", "error").index)
            entry["defaultConfiguration"] = {"level": _LEVEL[top]}
            props.update({"quantity": rule.quantity, "direction": rule.direction,
                          "limits": dict(rule.limits), "source": rule.source})
        elif rule.severity:
            entry["defaultConfiguration"] = {"level": _LEVEL[rule.severity]}
        props["kind"] = rule.kind
    if doc is not None:
        props["group"] = doc.group
    if props:
        entry["properties"] = props
    return entry


def _relative_uri(file: str | None, root: Path | None) -> tuple[str, bool] | None:
    """(uri, relative to the board root?) for a file the Board or the project names."""
    if not file:
        return None
    p = Path(file)
    if p.is_absolute():
        if root is not None:
            try:
                return p.resolve().relative_to(root.resolve()).as_posix(), True
            except ValueError:
                pass
        return p.resolve().as_uri(), False
    return PurePosixPath(p.as_posix()).as_posix(), True


def _fab_zip(result: CheckResult) -> Path | None:
    fab = getattr(result.project, "fab", None)
    if fab is not None and Path(fab).suffix.lower() == ".zip" and not Path(fab).is_dir():
        return Path(fab)
    return None


def _board_root(result: CheckResult) -> Path | None:
    """The folder the board's files are named relative to (a zip's own folder)."""
    fab = getattr(result.project, "fab", None)
    if fab is None:
        return None
    z = _fab_zip(result)
    return z.parent if z is not None else Path(fab)


def _artifact(file: str | None, result: CheckResult, root: Path | None,
              fab_member: bool) -> dict[str, Any] | None:
    """An artifactLocation: fab files relative to BOARDROOT; a zip's member named beside it."""
    z = _fab_zip(result)
    if fab_member and z is not None and file and not Path(file).is_absolute():
        return {"uri": z.name, "uriBaseId": BASE_ID, "properties": {"member": file}}
    uri = _relative_uri(file, root)
    if uri is None:
        return None
    art: dict[str, Any] = {"uri": uri[0]}
    if uri[1] and root is not None:
        art["uriBaseId"] = BASE_ID
    return art


def _layout_loss(result: CheckResult) -> list[dict[str, Any]]:
    """Per stage: the efficiency points the layout costs, its parts, or why it was not made."""
    out = []
    for stage in result.analysis.stages:
        m = result.analysis.measurement(stage.name, "layout_loss")
        if m is None:
            continue
        entry: dict[str, Any] = {"stage": stage.name, "pct": m.value, "not_made": m.not_made}
        for k in ("conduction_w", "switching_w", "output_power_w"):
            if k in m.detail:
                entry[k] = float(m.detail[k])
        out.append(entry)
    return out


def render_sarif(result: CheckResult) -> str:
    return json.dumps(sarif_dict(result), indent=2, ensure_ascii=False) + "\n"


def sarif_dict(result: CheckResult) -> dict[str, Any]:
    board = result.analysis.board
    root = _board_root(result)
    names = list(result.deck.rules)
    for f in result.findings:                 # a finding of a rule the deck lacks still has metadata
        if f.rule not in names:
            names.append(f.rule)
    rules = [_rule_entry(n, result) for n in names]
    index = {n: i for i, n in enumerate(names)}
    layer_files = {layer.name: layer.file for layer in board.layers}
    project_file = getattr(result.project, "path", None)

    results = []
    for i, f in enumerate(result.findings):
        file = None
        projected = False
        if f.layer and layer_files.get(f.layer):
            file = layer_files[f.layer]
        elif f.rule.startswith("netlist-") and board.netlist_file:
            file = board.netlist_file
        elif f.rule.startswith("unused-") and project_file:
            file = str(project_file)
        elif board.layers and board.layers[0].file:
            # a quantity projected on the board (a loop across layers) or one without a place:
            # the top copper layer's file, so viewers that need a file can still show it
            file = board.layers[0].file
            projected = True
        location: dict[str, Any] = {}
        art = _artifact(file, result, root, fab_member=not f.rule.startswith("unused-"))
        if art is not None:
            location["physicalLocation"] = {"artifactLocation": art}
        logical = []
        if f.stage:
            logical.append({"name": f.stage, "fullyQualifiedName": f"{board.name}/{f.stage}",
                            "kind": "stage"})
        for t in f.terminals:
            logical.append({"name": t, "fullyQualifiedName": f"{board.name}/{t}",
                            "kind": "terminal"})
        for n in f.nets:
            logical.append({"name": n, "fullyQualifiedName": f"{board.name}/net:{n}",
                            "kind": "net"})
        if logical:
            location["logicalLocations"] = logical
        props: dict[str, Any] = {"id": finding_id(i)}
        if projected:
            props["location_note"] = "no single copper layer: shown on the top layer's file"
        for key in ("value", "limit", "unit", "x_mm", "y_mm", "layer", "quantity"):
            v = getattr(f, key)
            if v is not None:
                props[key] = v
        entry: dict[str, Any] = {
            "ruleId": f.rule,
            "ruleIndex": index[f.rule],
            "level": _LEVEL[f.severity],
            "message": {"text": f.message},
            "properties": props,
        }
        if location:
            entry["locations"] = [location]
        if f.waived:
            # The waiver lives in the project file: an external suppression, accepted.
            sup: dict[str, Any] = {"kind": "external", "status": "accepted",
                                   "justification": f.waiver_reason or "waived"}
            art = _artifact(str(project_file), result, root, fab_member=False) \
                if project_file else None
            if art is not None:
                sup["location"] = {"physicalLocation": {"artifactLocation": art}}
            entry["suppressions"] = [sup]
        results.append(entry)

    run: dict[str, Any] = {
        "tool": {"driver": {"name": "loopcheck", "version": result.tool_version,
                            "semanticVersion": result.tool_version, "rules": rules}},
        "results": results,
        "columnKind": "unicodeCodePoints",
        "properties": {"board": board.name, "deck": result.deck.name,
                       "layout_loss": _layout_loss(result),
                       "fail_on": result.fail_on, "failed": result.failed,
                       "could_not_complete": bool(result.internal_errors)},
    }
    # What the check did not cover (no netlist, no stage, measurements not made) is a warning
    # notification each, so a SARIF viewer shows the check as incomplete. An internal error (a
    # bug in loopcheck) is an error notification, and the execution did not succeed.
    from ..crashreport import how_to_report

    notes: list[dict[str, Any]] = []
    for e in result.internal_errors:
        notes.append({
            "level": "error",
            "message": {"text": f"internal error in the {e.where()}: {e.error}. The check could "
                                "not be completed. " + how_to_report([e]).splitlines()[-1].strip()},
            "descriptor": {"id": "internal-error"},
            "properties": {"internal_error": e.to_dict()},
        })
    notes += [{"level": "warning", "message": {"text": gap}} for gap in dict.fromkeys(result.gaps)]
    run["invocations"] = [{
        "executionSuccessful": not result.internal_errors,
        "exitCode": result.exit_code(),
        "toolExecutionNotifications": notes,
        "properties": {"complete": result.complete,
                       "internal_errors": len(result.internal_errors)},
    }]
    if root is not None:
        run["originalUriBaseIds"] = {BASE_ID: {"uri": root.resolve().as_uri() + "/"}}
    return {"$schema": SARIF_SCHEMA_URI, "version": "2.1.0", "runs": [run]}
