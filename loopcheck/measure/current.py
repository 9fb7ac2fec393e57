"""High-current paths: resistance at operating temperature, the narrowest point and its temperature
rise (IPC-2221, IPC-2152-style), I^2 R loss, and the board's copper-loss budget.

Paths (each within one net, between the terminals the current enters and leaves by):
  input        where the supply enters the input rail (a connector, else the farthest input
               capacitor, else the farthest pad) -> the switch's input terminal (or the controller's VIN);
  switch_node  the switch's (or rectifier's) switch-node terminal -> the inductor;
  output       where the current enters the output rail (the inductor, the sense resistor or the
               rectifier) -> the output terminal (a connector, else the farthest output capacitor, else
               the farthest pad);
  ground       the hot loop's ground terminal -> the ground entry (a connector, else the farthest
               input capacitor's ground pad).
RMS currents (PHYSICS.md "Switching consequences"): buck input I_out sqrt(D (1 + r^2/12)), switch
node I_out sqrt(1 + r^2/12), output and ground about I_out; boost: input and switch node
I_L sqrt(1 + r^2/12) with I_L = I_out / (1 - D), output (the rectifier's current) I_L sqrt(1 - D),
ground I_L; inverting buck-boost: input I_L sqrt(D), switch node I_L, output I_L sqrt(1 - D),
ground I_L.
"""

from __future__ import annotations

import math
import re

from ..board import Pad
from ..findings import Measurement
from ..powerstage import Stage
from . import path_quantity
from .common import duty_cycle, measurement, not_made, op_assumptions, point, polyline
from .dcnet import pad_contact, sheets_and_vias
from .netcopper import MeasureContext, dielectric_between, layer_thickness_m
from .routes import RouteError, narrowest_point, route

_CONNECTOR = re.compile(r"^(J|P|CN|X|CON|TB|K)\d", re.I)
MAX_RISE_FOR_RESISTANCE_K = 100.0
DC_MAX_CELLS = 40_000       # raster cap for the DC solve of one path net: resistance within 1 % of 4x finer, under a second


def _pads_of(ctx: MeasureContext, stage: Stage, role_name: str, net: str | None) -> list[Pad]:
    out = []
    for role in stage.roles_named(role_name):
        out += [p for p in ctx.board.components.get(role.ref, []) if p.net == net]
    return out


def _entry(ctx: MeasureContext, stage: Stage, net: str | None, cap_role: str, away_from: list[Pad]) -> tuple[list[Pad], str]:
    """Where current enters / leaves a rail from outside the stage."""
    if net is None or not away_from:
        return [], ""
    ref0 = away_from[0]
    pads = [p for p in ctx.board.nets.get(net, []) if p.ref and not p.is_via]

    def far(ps):
        return max(ps, key=lambda p: math.hypot(p.x_mm - ref0.x_mm, p.y_mm - ref0.y_mm))

    conn = [p for p in pads if _CONNECTOR.match(p.ref)]
    if conn:
        f = far(conn)
        return [f], f"connector pad {f.terminal}"
    caps = _pads_of(ctx, stage, cap_role, net)
    caps = [p for p in caps if p.ref not in {q.ref for q in away_from}]
    if caps:
        f = far(caps)
        return [f], f"the farthest {cap_role.replace('_', ' ')} pad {f.terminal}"
    others = [p for p in pads if p.ref not in {q.ref for q in away_from}]
    if others:
        f = far(others)
        return [f], f"the farthest pad {f.terminal} (no connector on {net})"
    return [], ""


def path_ends(ctx: MeasureContext, stage: Stage) -> dict[str, tuple[list[Pad], list[Pad], str] | str]:
    """name -> (from pads, to pads, how the ends were chosen), or the reason the path has no ends."""
    out: dict[str, tuple[list[Pad], list[Pad], str] | str] = {}
    sw = stage.switch_node
    vin, vout, gnd = stage.input_net, stage.output_net, stage.ground_net
    topo = stage.topology
    # input
    if topo == "boost":
        to = _pads_of(ctx, stage, "inductor", vin)
    else:
        to = _pads_of(ctx, stage, "switch", vin) or [ctx.board.terminals[t] for t in
                                                    next((r.pins.get("vin", ()) for r in stage.roles_named("controller")), ())
                                                    if t in ctx.board.terminals]
    frm, how = _entry(ctx, stage, vin, "input_cap", to)
    out["input"] = (frm, to, f"from {how} to {', '.join(p.terminal for p in to)}") if frm and to else \
        "the input rail's entry or the switch's input terminal was not found"
    # switch node
    ind = _pads_of(ctx, stage, "inductor", sw)
    src = _pads_of(ctx, stage, "switch", sw) or _pads_of(ctx, stage, "controller", sw) or \
        _pads_of(ctx, stage, "rectifier", sw)
    out["switch_node"] = (src, ind, f"from {', '.join(p.terminal for p in src)} to the inductor") \
        if src and ind else "the switch or the inductor has no pad on the switch node"
    # output
    if topo == "boost" or topo == "buck-boost":
        start = _pads_of(ctx, stage, "rectifier", vout)
    else:
        start = _pads_of(ctx, stage, "inductor", vout) or _pads_of(ctx, stage, "sense_resistor", vout)
    frm, how = _entry(ctx, stage, vout, "output_cap", start)
    out["output"] = (start, frm, f"from {', '.join(p.terminal for p in start)} to {how}") if start and frm else \
        "the output rail's source terminal or its exit was not found"
    # ground
    loop_g = [ctx.board.terminals[t] for t in stage.hot_loop
              if t in ctx.board.terminals and ctx.board.terminals[t].net == gnd]
    sw_side = [p for p in loop_g if p.ref not in {r.ref for r in stage.roles_named("input_cap") +
                                                     stage.roles_named("output_cap")}]
    start = sw_side[:1] or _pads_of(ctx, stage, "rectifier", gnd)[:1] or _pads_of(ctx, stage, "switch", gnd)[:1]
    frm, how = _entry(ctx, stage, gnd, "input_cap", start)
    out["ground"] = (start, frm, f"from {', '.join(p.terminal for p in start)} to {how}") if start and frm else \
        "the ground terminals of the stage were not found"
    return out


def rms_currents(stage: Stage) -> tuple[dict[str, float], list[str]]:
    """RMS current per path [A] at the operating point, and the assumptions.

    A path that conducts for a fraction F of the period carries the inductor's current I ramping
    from I (1 - r/2) to I (1 + r/2) (r: ripple_ratio, peak-to-peak over the mean), so its RMS
    current is I sqrt(F (1 + r^2/12)) (PHYSICS.md "Switching consequences").
    """
    op = stage.operating_point
    r2 = op.ripple_ratio ** 2 / 12.0
    vin = op.vin_min_v
    d, note = duty_cycle(stage, op, vin)
    notes = [note] if note else []
    notes.append(f"duty cycle D = {d:.3f} at vin = {vin:g} V (the lowest input voltage: the highest RMS currents)")
    i = op.iout_a
    if stage.topology == "boost":
        il = i / max(1 - d, 0.05)
        cur = {"input": il * math.sqrt(1 + r2), "switch_node": il * math.sqrt(1 + r2),
               "output": il * math.sqrt(max(1 - d, 0.0) * (1 + r2)), "ground": il}
    elif stage.topology == "buck-boost":
        il = i / max(1 - d, 0.05)
        cur = {"input": il * math.sqrt(d * (1 + r2)), "switch_node": il * math.sqrt(1 + r2),
               "output": il * math.sqrt(max(1 - d, 0.0) * (1 + r2)), "ground": il}
    else:
        cur = {"input": i * math.sqrt(d * (1 + r2)), "switch_node": i * math.sqrt(1 + r2), "output": i, "ground": i}
    return cur, notes


def _is_internal(ctx: MeasureContext, layer: int) -> bool:
    return 0 < layer < len(ctx.board.layers) - 1


def _plane_distance_m(ctx: MeasureContext, layer: int, x: float, y: float) -> float | None:
    from shapely.geometry import Point
    best = None
    for m in (layer - 1, layer + 1):
        if 0 <= m < len(ctx.board.layers) and ctx.board.layers[m].geometry.contains(Point(x, y)):
            h, _ = dielectric_between(ctx.board, layer, m)
            best = h if best is None else min(best, h)
    return best


def measure_paths(ctx: MeasureContext, stage: Stage) -> list[Measurement]:
    from ..physics import copper

    op = stage.operating_point
    ends = path_ends(ctx, stage)
    currents, cur_notes = rms_currents(stage)
    out: list[Measurement] = []
    total_loss = 0.0
    loss_missing: list[str] = []
    whats = ("resistance", "temperature_rise", "temperature_rise_ipc2152", "loss")
    from ..physics.dcsolve import two_terminal_resistance
    for name in ("input", "switch_node", "output", "ground"):
        e = ends[name]
        if isinstance(e, str):
            out += [not_made(path_quantity(name, w), stage, e) for w in whats]
            loss_missing.append(name)
            continue
        frm, to, how = e
        net = frm[0].net
        base = dict(nets=(net,), terminals=tuple(p.terminal for p in frm + to))
        try:
            r = route(ctx, frm[0], to)
        except RouteError as exc:
            out += [not_made(path_quantity(name, w), stage, f"{name} path not traced: {exc}", **base) for w in whats]
            loss_missing.append(name)
            continue
        i_rms = currents[name]
        w_mm, x, y, layer = narrowest_point(ctx, r)
        t_m = layer_thickness_m(ctx.board, layer)
        internal = _is_internal(ctx, layer)
        lname = ctx.board.layers[layer].name
        loc = dict(x_mm=x, y_mm=y, layer=lname)
        i_note = f"RMS current {i_rms:.3f} A ({name} path)"
        rise = float(copper.ipc2221_temperature_rise(i_rms, w_mm * 1e-3, t_m, internal=internal)) if i_rms > 0 else 0.0
        pd = _plane_distance_m(ctx, layer, x, y)
        rise2152 = float(copper.ipc2152_temperature_rise(i_rms, w_mm * 1e-3, t_m,
                                                         board_thickness_m=ctx.board.stackup.finished_thickness_m,
                                                         plane_distance_m=pd)) if i_rms > 0 else 0.0
        common = [f"path {how}", i_note] + cur_notes
        draw = [polyline(r.points, lname), point(x, y, lname)]
        out.append(measurement(path_quantity(name, "temperature_rise"), rise, stage, drawings=draw,
                               assumptions=common + [f"narrowest point {w_mm:.2f} mm wide on {lname}, "
                                                     f"{'internal' if internal else 'external'} layer (IPC-2221 curve fit)"],
                               detail={"width_mm": w_mm, "current_a": i_rms, "thickness_um": t_m * 1e6,
                                       "path_length_mm": r.length_mm}, **base, **loc))
        out.append(measurement(path_quantity(name, "temperature_rise_ipc2152"), rise2152, stage, drawings=draw,
                               assumptions=common + ["IPC-2152-style fit with board-thickness and plane modifiers "
                                                     "(coefficients from memory, see physics.copper)",
                                                     "plane under the narrowest point: " +
                                                     (f"{pd * 1e3:.2f} mm away" if pd else "none")],
                               detail={"width_mm": w_mm, "current_a": i_rms,
                                       "plane_distance_mm": pd * 1e3 if pd else None}, **base, **loc))
        temp = op.ambient_c + min(rise, MAX_RISE_FOR_RESISTANCE_K)
        try:
            layers, vias, ix = sheets_and_vias(ctx, net, temp)
            ca = pad_contact(ctx, "a", frm, ix, potential_v=1.0)
            cb = pad_contact(ctx, "b", to, ix, potential_v=0.0)
            R = float(two_terminal_resistance(layers, ca, cb, vias, max_cells=DC_MAX_CELLS))
        except ValueError as exc:      # the DC solver's board reasons (off the copper, contacts joined,
        #                               no current, no convergence) are ValueError; anything else is a bug
            out.append(not_made(path_quantity(name, "resistance"), stage, f"DC solve failed: {exc}", **base))
            out.append(not_made(path_quantity(name, "loss"), stage, f"DC solve failed: {exc}", **base))
            loss_missing.append(name)
            continue
        r_notes = common + [f"copper at {temp:.1f} C: ambient {op.ambient_c:g} C plus the narrowest point's "
                            "IPC-2221 rise (the whole path taken as warm as its hottest point)",
                            "DC solve of the net's copper between the path's end pads (equipotential pads)"]
        out.append(measurement(path_quantity(name, "resistance"), R * 1e3, stage, drawings=draw[:1],
                               assumptions=r_notes, detail={"temperature_c": temp, "path_length_mm": r.length_mm},
                               **base, **loc))
        P = i_rms ** 2 * R
        total_loss += P
        out.append(measurement(path_quantity(name, "loss"), P, stage, drawings=draw[:1],
                               assumptions=r_notes + ["P = I_rms^2 R"], detail={"current_a": i_rms, "resistance_mohm": R * 1e3},
                               **base, **loc))
    # the budget
    if op.vout_v is None:
        out.append(not_made("copper_loss", stage, "the output voltage is not known: give vout_v in [operating_point]"))
    elif len(loss_missing) == 4:
        out.append(not_made("copper_loss", stage, "no high-current path could be measured"))
    elif abs(op.vout_v) * op.iout_a <= 0:
        out.append(not_made("copper_loss", stage, "the output power is zero at this operating point"))
    else:
        p_out = abs(op.vout_v) * op.iout_a
        notes = [f"output power {p_out:.2f} W = vout x iout"] + op_assumptions(op, ("vout_v", "iout_a", "ambient_c"))
        if loss_missing:
            notes.append(f"paths not measured, left out of the sum: {', '.join(loss_missing)} (the budget is a lower bound)")
        out.append(measurement("copper_loss", 100.0 * total_loss / p_out, stage, assumptions=notes,
                               detail={"loss_w": total_loss, "output_power_w": p_out, "paths_missing": loss_missing}))
    return out
