"""Input capacitor and controller decoupling: how far, through the copper, a capacitor sits from the
pin it feeds, and the inductance of that connection.

The input capacitors are ranked by the copper path length from their input-rail pad to the
switch (the switch's input-rail terminal, or the controller's VIN pins where the switch is inside
it); the nearest one is the one the switching edges draw on, and is reported. Its connection
inductance is that of the loop capacitor + -> switch input -> (straight, across the switch and
rectifier) -> the hot loop's ground terminal -> capacitor -, by the partial-inductance sum.
"""

from __future__ import annotations

import math

from ..board import Pad
from ..findings import Measurement
from ..powerstage import Stage
from .common import MeasurementGap, measurement, not_made, point, polyline
from .hotloop import build_loop, loop_inductance_by_method
from .netcopper import MeasureContext
from .routes import Route, RouteError, route


def _pads(ctx: MeasureContext, terms) -> list[Pad]:
    return [ctx.board.terminals[t] for t in terms if t in ctx.board.terminals]


def switch_input_pads(ctx: MeasureContext, stage: Stage) -> list[Pad]:
    """The terminals an input capacitor feeds: the switch's (or controller's) pads on the input rail;
    for a boost, whose switch is on ground, the inductor's input-rail pad."""
    net = stage.input_net
    if net is None:
        return []
    for role_name in ("switch", "controller", "inductor"):
        for role in stage.roles_named(role_name):
            pads = [p for p in ctx.board.components.get(role.ref, []) if p.net == net]
            if role_name == "controller":
                vin = _pads(ctx, role.pins.get("vin", ()))
                pads = vin or pads
            if pads:
                return pads
    return []


def loop_ground_pad(ctx: MeasureContext, stage: Stage, exclude_ref: str) -> Pad | None:
    """The hot loop's ground terminal on the switching side (the rectifier's or the IC's)."""
    g = stage.ground_net
    for t in stage.hot_loop:
        p = ctx.board.terminals.get(t)
        if p is not None and p.net == g and p.ref != exclude_ref:
            return p
    for role_name in ("rectifier", "switch", "controller"):
        for role in stage.roles_named(role_name):
            for p in ctx.board.components.get(role.ref, []):
                if p.net == g:
                    return p
    return None


def _rank_input_caps(ctx: MeasureContext, stage: Stage, caps, targets):
    """Input capacitors ranked by the copper path from their input-rail pad to ``targets``."""
    ranked: list[tuple[float, str, Route | None, str | None, Pad | None]] = []
    for role in caps:
        cap_pads = ctx.board.components.get(role.ref, [])
        rail = [p for p in cap_pads if p.net == stage.input_net]
        if not rail:
            ranked.append((math.inf, role.ref, None, f"{role.ref} has no pad on {stage.input_net}", None))
            continue
        best = None
        for p in rail:
            try:
                r = route(ctx, p, targets)
            except RouteError as exc:
                if best is None:
                    best = (math.inf, role.ref, None, str(exc), p)
                continue
            if best is None or r.length_mm < best[0]:
                best = (r.length_mm, role.ref, r, None, p)
        ranked.append(best)
    ranked.sort(key=lambda t: (t[0], t[1]))
    return ranked


def measure_input_cap(ctx: MeasureContext, stage: Stage) -> list[Measurement]:
    """input_cap.path_length, .straight_distance, .inductance. Where the stage's hot loop closes
    through an input capacitor (buck, buck-boost), it is the one ``loopcap`` chose for the loop,
    so the loop and this measurement name the same part; a boost's input capacitor is ranked
    here by its path to the inductor."""
    from .loopcap import choose_loop_capacitor

    names = ("input_cap.path_length", "input_cap.straight_distance", "input_cap.inductance")
    choice = choose_loop_capacitor(ctx, stage) if stage.topology != "boost" else None
    rg: Route | None = None
    gpad: Pad | None = None
    if choice is not None:
        r = choice.rail_route
        ref = choice.ref
        cap_pad = ctx.board.terminals[r.start]
        rg = choice.ground_route
        gpad = ctx.board.terminals[rg.end]
        ranking = choice.ranking
        notes = ["capacitors across the input rail and ground ranked by the copper they add to the switching "
                 "loop (input-rail path + ground path to the switch): " +
                 ", ".join(f"{d['ref']} {d['path_length_mm']} mm" for d in ranking if d["path_length_mm"] is not None),
                 "the nearest closes the hot loop and is reported here",
                 "route: centreline-weighted shortest path through the copper raster"]
    else:
        caps = stage.roles_named("input_cap")
        if not caps:
            return [not_made(q, stage, "no input capacitor found for this stage") for q in names]
        targets = switch_input_pads(ctx, stage)
        if not targets:
            return [not_made(q, stage, "the switch's input-rail terminal was not found") for q in names]
        ranked = _rank_input_caps(ctx, stage, caps, targets)
        length, ref, r, why, cap_pad = ranked[0]
        ranking = [{"ref": rf, "path_length_mm": (None if not math.isfinite(d) else round(d, 3)),
                    "not_routed": w} for d, rf, _, w, _ in ranked]
        if r is None:
            return [not_made(q, stage, f"no copper path from an input capacitor to the switch: {why}",
                             refs=(ref,), detail={"ranking": ranking}) for q in names]
        notes = [f"input capacitors ranked by copper path length to the switch: "
                 + ", ".join(f"{d['ref']} {d['path_length_mm']} mm" for d in ranking),
                 "route: centreline-weighted shortest path through the copper raster"]
    end = ctx.board.terminals[r.end]
    base = dict(refs=(ref,), terminals=(r.start, r.end), nets=(r.net,), x_mm=cap_pad.x_mm, y_mm=cap_pad.y_mm,
                layer=ctx.board.layers[r.points[0][2]].name)
    out = [measurement("input_cap.path_length", r.length_mm, stage, drawings=[polyline(r.points)],
                       assumptions=notes, detail={"ranking": ranking, "vias": len(r.vias),
                                                  "min_width_mm": r.min_width_mm}, **base),
           measurement("input_cap.straight_distance", r.straight_mm, stage,
                       drawings=[polyline([(cap_pad.x_mm, cap_pad.y_mm), (end.x_mm, end.y_mm)])],
                       assumptions=["pad centre to pad centre"], **base)]
    # connection inductance: the small loop through the capacitor and the switch
    if rg is None:
        gpad = loop_ground_pad(ctx, stage, ref)
        cap_g = [p for p in ctx.board.components.get(ref, []) if p.net == stage.ground_net]
        if gpad is None or not cap_g:
            out.append(not_made("input_cap.inductance", stage, "the ground side of the capacitor's loop was not found",
                                **base))
            return out
        cg = min(cap_g, key=lambda p: math.hypot(p.x_mm - gpad.x_mm, p.y_mm - gpad.y_mm))
        try:
            rg = route(ctx, cg, gpad)
        except RouteError as exc:
            out[0].detail["ground_path_mm"] = None
            out[0].detail["ground_not_routed"] = str(exc)
    else:
        cg = ctx.board.terminals[rg.start]
    if rg is not None:
        out[0].detail["ground_path_mm"] = rg.length_mm
        out[0].detail["ground_terminals"] = [rg.start, rg.end]
        out[0].drawings.append(polyline(rg.points))
    try:
        loop = build_loop(ctx, (cap_pad.terminal, end.terminal, gpad.terminal, cg.terminal))
        L, lnotes, det = loop_inductance_by_method(ctx, loop)
    except RouteError as exc:
        out.append(not_made("input_cap.inductance", stage, f"capacitor loop not traced: {exc}", **base))
        return out
    except MeasurementGap as exc:     # a reason of the board; a bug goes up
        out.append(not_made("input_cap.inductance", stage, f"inductance not computed: {exc}", **base))
        return out
    out.append(measurement("input_cap.inductance", L * 1e9, stage,
                           drawings=[polyline(loop.points + [loop.points[0]])],
                           assumptions=loop.assumptions + lnotes + [
                               f"loop {cap_pad.terminal} -> {end.terminal} -> {gpad.terminal} -> {cg.terminal}, "
                               "partial-inductance sum"],
                           detail=det, **base))
    return out


def measure_controller_decoupling(ctx: MeasureContext, stage: Stage) -> list[Measurement]:
    q = "controller_decoupling.path_length"
    role = stage.role("controller_decoupling")
    if role is None:
        return [not_made(q, stage, "no controller supply decoupling capacitor found for this stage")]
    pins = _pads(ctx, role.pins.get("supply", ()))
    if not pins:
        ctrl = stage.role("controller")
        cap_nets = {p.net for p in ctx.board.components.get(role.ref, [])} - {stage.ground_net}
        if ctrl is not None:
            pins = [p for p in ctx.board.components.get(ctrl.ref, []) if p.net in cap_nets]
    if not pins:
        return [not_made(q, stage, f"the controller's supply pin fed by {role.ref} was not found", refs=(role.ref,))]
    cap = [p for p in ctx.board.components.get(role.ref, []) if p.net == pins[0].net]
    if not cap:
        return [not_made(q, stage, f"{role.ref} has no pad on {pins[0].net}", refs=(role.ref,))]
    best: Route | None = None
    why = None
    for p in cap:
        try:
            r = route(ctx, p, pins)
        except RouteError as exc:
            why = str(exc)
            continue
        if best is None or r.length_mm < best.length_mm:
            best = r
    if best is None:
        return [not_made(q, stage, f"no copper path from {role.ref} to the supply pin: {why}", refs=(role.ref,))]
    start = ctx.board.terminals[best.start]
    return [measurement(q, best.length_mm, stage, refs=(role.ref,), terminals=(best.start, best.end),
                        nets=(best.net,), x_mm=start.x_mm, y_mm=start.y_mm,
                        layer=ctx.board.layers[best.points[0][2]].name,
                        drawings=[polyline(best.points), point(start.x_mm, start.y_mm)],
                        assumptions=["route: centreline-weighted shortest path through the copper raster"],
                        detail={"straight_mm": best.straight_mm, "vias": len(best.vias)})]
