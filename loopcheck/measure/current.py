"""High-current paths: resistance at operating temperature, the narrowest point and its temperature
rise (IPC-2221, IPC-2152-style), I^2 R loss, and the board's copper-loss budget.

Paths (each within one net, between the terminals DC current enters and leaves by; ``dcflow``
decides those for every measurement, and a capacitor, which carries no DC, is never one):
  input        where the supply enters the input rail (the upstream stage's output, else a
               connector) -> the switch's input terminal (or the controller's VIN; a boost's inductor);
  switch_node  the switch's (or rectifier's) switch-node terminal -> the inductor;
  output       where the stage delivers the output rail (the inductor, the sense resistor or the
               rectifier) -> the load (a connector, the LEDs, a downstream stage's input, an IC's supply);
  ground       the input current's return: the switching side's ground terminal (rectifier, low-side
               switch or IC ground) -> the input supply's return (the input connector's ground pin,
               or the upstream stage's ground);
  load_return  the load current's return: the load's ground pin -> the switching side (buck) or
               the input supply's return (boost, buck-boost).
RMS currents (docs/physics.md "RMS currents"): buck input I_out sqrt(D (1 + r^2/12)), switch
node I_out sqrt(1 + r^2/12), output I_out; boost: input and switch node I_L sqrt(1 + r^2/12) with
I_L = I_out / (1 - D), output (the rectifier's current) I_L sqrt((1 - D)(1 + r^2/12)); inverting
buck-boost: input I_L sqrt(D (1 + r^2/12)), switch node I_L sqrt(1 + r^2/12), output I_L
sqrt((1 - D)(1 + r^2/12)). The input return carries the input path's current, the load return
I_out.
"""

from __future__ import annotations

import math

from ..board import Pad
from ..findings import Measurement
from ..powerstage import Stage
from . import PATH_NAMES, path_quantity
from .dcflow import CAPACITOR, input_return, load_return, main_sink, main_source, net_flow
from .common import duty_cycle, measurement, not_made, op_assumptions, point, polyline
from .dcnet import pad_contact, sheets_and_vias, solve_window, window_note
from .netcopper import MeasureContext, dielectric_between, layer_thickness_m
from .routes import RouteError, narrowest_point, route

MAX_RISE_FOR_RESISTANCE_K = 100.0
DC_MAX_CELLS = 40_000       # raster cap for the DC solve of one path net: resistance within 1 % of 4x finer, under a second


def _pads_of(ctx: MeasureContext, stage: Stage, role_name: str, net: str | None) -> list[Pad]:
    out = []
    for role in stage.roles_named(role_name):
        out += [p for p in ctx.board.components.get(role.ref, []) if p.net == net]
    return out


def _switch_ground(ctx: MeasureContext, stage: Stage) -> list[Pad]:
    """The switching side's ground terminal: the hot loop's ground terminal that is not a
    capacitor's, else the rectifier's (buck) or switch's ground pad."""
    gnd = stage.ground_net
    caps = {r.ref for r in stage.roles_named("input_cap") + stage.roles_named("output_cap")}
    loop_g = [ctx.board.terminals[t] for t in stage.hot_loop
              if t in ctx.board.terminals and ctx.board.terminals[t].net == gnd]
    sw_side = [p for p in loop_g if p.ref not in caps and not CAPACITOR.match(p.ref)]
    return sw_side[-1:] or _pads_of(ctx, stage, "rectifier", gnd)[:1] or _pads_of(ctx, stage, "switch", gnd)[:1] \
        or _pads_of(ctx, stage, "controller", gnd)[:1]


def path_ends(ctx: MeasureContext, stage: Stage) -> dict[str, tuple[list[Pad], list[Pad], str, list[str]] | str]:
    """name -> (from pads, to pads, how the ends were chosen, assumptions), or the reason the
    path has no ends. Where DC current enters and leaves each rail is ``dcflow``'s answer (a
    capacitor carries no DC current: it is never a path's end)."""
    out: dict[str, tuple[list[Pad], list[Pad], str, list[str]] | str] = {}
    sw = stage.switch_node
    vin, vout, gnd = stage.input_net, stage.output_net, stage.ground_net
    topo = stage.topology
    # input: from where the supply enters the input rail to the switch (a boost: the inductor)
    if topo == "boost":
        to = _pads_of(ctx, stage, "inductor", vin)
    else:
        to = _pads_of(ctx, stage, "switch", vin) or [ctx.board.terminals[t] for t in
                                                    next((r.pins.get("vin", ()) for r in stage.roles_named("controller")), ())
                                                    if t in ctx.board.terminals]
    src = main_source(net_flow(ctx, vin, stage), to[0]) if vin and to else None
    if src is not None and src.pads:
        out["input"] = (src.pads, to, f"from {src.evidence} ({src.pads[0].terminal}) to "
                        f"{', '.join(p.terminal for p in to)}", [src.evidence + " (assumed)"] if src.assumed else [])
    else:
        out["input"] = "where the input current enters the input rail (a connector or an upstream stage) " \
                       "or the switch's input terminal was not found"
    # switch node
    ind = _pads_of(ctx, stage, "inductor", sw)
    frm = _pads_of(ctx, stage, "switch", sw) or _pads_of(ctx, stage, "controller", sw) or \
        _pads_of(ctx, stage, "rectifier", sw)
    out["switch_node"] = (frm, ind, f"from {', '.join(p.terminal for p in frm)} to the inductor", []) \
        if frm and ind else "the switch or the inductor has no pad on the switch node"
    # output: from where the stage delivers the rail to the load
    if topo == "boost" or topo == "buck-boost":
        start = _pads_of(ctx, stage, "rectifier", vout)
    else:
        start = _pads_of(ctx, stage, "inductor", vout) or _pads_of(ctx, stage, "sense_resistor", vout)
    sink = main_sink(net_flow(ctx, vout, stage), start[0]) if vout and start else None
    if sink is not None and sink.pads:
        out["output"] = (start, sink.pads, f"from {', '.join(p.terminal for p in start)} to {sink.evidence} "
                         f"({sink.pads[0].terminal})", [sink.evidence + " (assumed)"] if sink.assumed else [])
    else:
        out["output"] = "the output rail's source terminal or its load (a connector, LED, downstream stage or IC) " \
                        "was not found"
    # ground, input return: the switching side's ground -> the input supply's return
    sw_g = _switch_ground(ctx, stage) if gnd else []
    ret, why, assumed = input_return(ctx, stage)
    ret = [p for p in ret if p.ref not in {q.ref for q in sw_g}]
    if sw_g and ret:
        out["ground"] = (sw_g, ret[:1], f"input current's return from {sw_g[0].terminal} (switching side) to "
                         f"{why} ({ret[0].terminal})", [why + " (assumed)"] if assumed else [])
    else:
        out["ground"] = "the switching side's ground terminal or the input supply's return on ground was not found"
    # ground, load return: the load's ground -> the stage (buck) or the input's return (boost)
    lr, why_l, assumed_l = load_return(ctx, stage)
    back = sw_g if topo == "buck" else ret
    lr = [p for p in lr if p.ref not in {q.ref for q in back}]
    if lr and back:
        out["load_return"] = (lr[:1], back[:1], f"load current's return from {why_l} ({lr[0].terminal}) to "
                              f"{back[0].terminal}", [why_l + " (assumed)"] if assumed_l else [])
    else:
        out["load_return"] = "the load's ground terminal was not found (a load that returns its current on " \
                             "another net, or no load on the output rail)"
    return out


def rms_currents(stage: Stage) -> tuple[dict[str, float], list[str]]:
    """RMS current per path [A] at the operating point, and the assumptions.

    A path that conducts for a fraction F of the period carries the inductor's current I ramping
    from I (1 - r/2) to I (1 + r/2) (r: ripple_ratio, peak-to-peak over the mean), so its RMS
    current is I sqrt(F (1 + r^2/12)) (docs/physics.md "RMS currents"). The ground net
    carries two currents on two paths: the input current's return (the switched input current,
    as the input path) from the switching side to the input supply's return, and the load
    current's return (DC, I_out) from the load's ground.
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
               "output": il * math.sqrt(max(1 - d, 0.0) * (1 + r2))}
    elif stage.topology == "buck-boost":
        il = i / max(1 - d, 0.05)
        cur = {"input": il * math.sqrt(d * (1 + r2)), "switch_node": il * math.sqrt(1 + r2),
               "output": il * math.sqrt(max(1 - d, 0.0) * (1 + r2))}
    else:
        cur = {"input": i * math.sqrt(d * (1 + r2)), "switch_node": i * math.sqrt(1 + r2), "output": i}
    cur["ground"] = cur["input"]
    cur["load_return"] = i
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


def dc_pitch_mm(layers, neck_mm: float, pads: list[Pad], cells_across: float = 6.0) -> float:
    """Raster pitch [mm] of a path's DC solve: six cells across the narrowest copper the path's
    route passes (measured on the geometry, ``routes.narrowest_point``) and three across its
    smallest end pad, no finer than ``DC_MAX_CELLS`` allow over the solved copper's box (the rule of
    ``physics.dcsolve.choose_pitch_mm``, with the neck taken from the route rather than found by
    eroding the whole copper, which is slow on large pours)."""
    b = [l.geometry.bounds for l in layers if not l.geometry.is_empty]
    minx, miny = min(x[0] for x in b), min(x[1] for x in b)
    maxx, maxy = max(x[2] for x in b), max(x[3] for x in b)
    extent = max(maxx - minx, maxy - miny)
    area = (maxx - minx) * (maxy - miny)
    floor_h = math.sqrt(max(area, extent * extent / DC_MAX_CELLS) * len(b) / DC_MAX_CELLS)
    h = min(extent / 100.0, neck_mm / cells_across)
    sizes = [min(d for d in (p.width_mm, p.height_mm) if d) for p in pads if p.width_mm or p.height_mm]
    if sizes:
        h = min(h, min(sizes) / 3.0)
    return float(max(h, floor_h))


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
    for name in PATH_NAMES:
        e = ends[name]
        if isinstance(e, str):
            out += [not_made(path_quantity(name, w), stage, e) for w in whats]
            loss_missing.append(name)
            continue
        frm, to, how, flow_notes = e
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
        common = [f"path {how}", i_note] + flow_notes + cur_notes
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
            win = solve_window([(x_, y_) for x_, y_, _ in r.points] + [(p.x_mm, p.y_mm) for p in frm + to])
            layers, vias, ix = sheets_and_vias(ctx, net, temp, win)
            ca = pad_contact(ctx, "a", frm, ix, potential_v=1.0)
            cb = pad_contact(ctx, "b", to, ix, potential_v=0.0)
            h = dc_pitch_mm(layers, w_mm, frm + to)
            R = float(two_terminal_resistance(layers, ca, cb, vias, pitch_mm=h, max_cells=DC_MAX_CELLS))
        except ValueError as exc:      # the DC solver's board reasons (off the copper, contacts joined,
        #                               no current, no convergence) are ValueError; anything else is a bug
            out.append(not_made(path_quantity(name, "resistance"), stage, f"DC solve failed: {exc}", **base))
            out.append(not_made(path_quantity(name, "loss"), stage, f"DC solve failed: {exc}", **base))
            loss_missing.append(name)
            continue
        r_notes = common + [f"copper at {temp:.1f} C: ambient {op.ambient_c:g} C plus the narrowest point's "
                            "IPC-2221 rise (the whole path taken as warm as its hottest point)",
                            "DC solve of the net's copper between the path's end pads (equipotential pads)",
                            window_note(win)]
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
    elif len(loss_missing) == len(PATH_NAMES):
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
