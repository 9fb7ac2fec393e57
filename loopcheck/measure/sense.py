"""The current-sense resistor: the error that shared copper adds to the sense voltage (a DC solve),
the area enclosed by the sense pair, and how close sense or feedback copper comes to the switch node.

Kelvin error. The resistor's two nets are separate conductors joined only through the resistor
(the controller's sense inputs draw no current), so each is solved on its own: on the
inductor-side net the load current enters where that net's copper meets the inductor (or the
switch, ...) and leaves through the resistor's pad; on the load-side net it enters through the
other pad and leaves at the load-side terminal. The resistor body is the lumped resistance between
its pads (equipotential pad contacts). The controller's sense pins are floating taps. The sensed
voltage is V(tap+) - V(tap-) = I R + e+ + e-, with e+ = V(tap+) - V(pad+) and e- = V(pad-) - V(tap-)
the drops in copper that the load current shares with the sense path; the error is (e+ + e-) / (I R).
The ratio does not depend on the current (the solve is linear).
"""

from __future__ import annotations

import math
import re

from shapely.geometry import LineString
from shapely.ops import unary_union

from ..board import Pad
from ..findings import Measurement
from ..powerstage import Stage
from ..values import parse_value
from .common import measurement, not_made, op_assumptions, point, polygon, polyline
from .dcflow import NetFlow, input_return, main_sink, main_source, net_flow
from .dcnet import pad_contact, sheets_and_vias, solve_window, window_note
from .hotloop import enclosed_area
from .netcopper import MeasureContext
from .routes import Route, RouteError, route

FEEDBACK_NAMES = re.compile(r"(^|[^A-Z])(FB|VFB|FEEDBACK|ISNS|CS|SENSE)(\d*|[^A-Z].*)?$", re.I)
DC_MAX_CELLS = 150_000      # raster cap for the DC solve of one sense net
_PRIORITY = ("inductor", "switch", "rectifier")     # a capacitor carries no DC: never a current terminal


def _sense_nets(ctx: MeasureContext, stage: Stage, role) -> tuple[list[Pad], list[Pad]] | None:
    """The resistor's pads split by net, the inductor-side net first (as [STAGE] orders them)."""
    pads = ctx.board.components.get(role.ref, [])
    nets = list(dict.fromkeys(p.net for p in pads))
    if len(nets) != 2:
        return None
    if role.terminals:
        first = ctx.board.terminals.get(role.terminals[0])
        if first is not None and first.net == nets[1]:
            nets.reverse()
    return [p for p in pads if p.net == nets[0]], [p for p in pads if p.net == nets[1]]


def _current_terminal(ctx: MeasureContext, stage: Stage, net: str, exclude: set[str],
                      near: Pad, leaving: bool) -> tuple[list[Pad], str]:
    """Where the load current enters (``leaving`` False) or leaves ``net`` other than through the
    sense resistor: the stage's inductor, switch or rectifier where one is on the net, else
    ``dcflow``'s answer (a connector, the LEDs, a downstream stage, an IC's supply; on the ground
    net the input supply's return). A capacitor carries no DC: never this terminal."""
    on_net = [p for p in ctx.board.nets.get(net, []) if p.ref and not p.is_via and p.ref not in exclude]
    for role_name in _PRIORITY:
        refs = {r.ref for r in stage.roles_named(role_name)}
        pads = [p for p in on_net if p.ref in refs]
        if pads:
            ref = min(pads, key=lambda p: math.hypot(p.x_mm - near.x_mm, p.y_mm - near.y_mm)).ref
            return [p for p in pads if p.ref == ref], f"the {role_name.replace('_', ' ')} {ref}"
    if net == stage.ground_net:
        pads, why, assumed = input_return(ctx, stage)
        pads = [p for p in pads if p.ref not in exclude]
        if pads:
            return pads[:1], why + (" (assumed)" if assumed else "")
        return [], ""
    flow = net_flow(ctx, net, stage)
    ends = [e for e in (flow.sinks if leaving else flow.sources) if e.ref not in exclude]
    pick = (main_sink if leaving else main_source)(NetFlow(net, ends, ends), near)
    if pick is None:
        return [], ""
    return pick.pads[:1], pick.evidence + (" (assumed)" if pick.assumed else "")


def _taps(ctx: MeasureContext, stage: Stage, key: str, net: str) -> list[Pad]:
    ctrl = stage.role("controller")
    sens = stage.role("sense_resistor")
    terms = sens.pins.get(key, ()) if sens is not None else ()
    pads = [ctx.board.terminals[t] for t in terms if t in ctx.board.terminals and ctx.board.terminals[t].net == net]
    if not pads and ctrl is not None:
        pads = [p for p in ctx.board.components.get(ctrl.ref, []) if p.net == net]
    return pads


def measure_sense(ctx: MeasureContext, stage: Stage) -> list[Measurement]:
    names = ("sense.kelvin_error", "sense.pair_area", "sense.switch_node_clearance")
    role = stage.role("sense_resistor")
    if role is None:
        out = [not_made(q, stage, "no sense resistor in this stage") for q in names[:2]]
        out.append(_clearance(ctx, stage, [], None))
        return out
    split = _sense_nets(ctx, stage, role)
    if split is None:
        return [not_made(q, stage, f"sense resistor {role.ref} does not join exactly two nets", refs=(role.ref,))
                for q in names]
    pa, pb = split
    net_a, net_b = pa[0].net, pb[0].net
    tap_a = _taps(ctx, stage, "sense+", net_a)
    tap_b = _taps(ctx, stage, "sense-", net_b)
    base = dict(refs=(role.ref,), nets=(net_a, net_b), x_mm=pa[0].x_mm, y_mm=pa[0].y_mm,
                layer=ctx.board.layers[pa[0].layers[0]].name if pa[0].layers else None)
    out: list[Measurement] = []
    if not tap_a or not tap_b:
        missing = net_a if not tap_a else net_b
        reason = f"no controller pin taps the sense net {missing}"
        out.append(not_made("sense.kelvin_error", stage, reason, **base))
        out.append(not_made("sense.pair_area", stage, reason, **base))
    else:
        out.append(_kelvin(ctx, stage, role, pa, pb, tap_a, tap_b, base))
        routes = []
        try:
            ra = route(ctx, pa[0], tap_a)
            rb = route(ctx, pb[0], tap_b)
            routes = [ra, rb]
            out.append(_pair_area(stage, ra, rb, base))
        except RouteError as exc:
            out.append(not_made("sense.pair_area", stage, f"sense route not traced: {exc}", **base))
        out.append(_clearance(ctx, stage, routes, role))
        return out
    out.append(_clearance(ctx, stage, [], role))
    return out


def _kelvin(ctx, stage, role, pa, pb, tap_a, tap_b, base) -> Measurement:
    q = "sense.kelvin_error"
    op = stage.operating_point
    r_val = parse_value(ctx.value_of(role.ref))
    notes = []
    if r_val is None or r_val <= 0:
        if op.vsense_v and op.iout_a:
            r_val = op.vsense_v / op.iout_a
            notes.append(f"sense resistor value from vsense / iout = {r_val * 1e3:.1f} mohm")
        else:
            return not_made(q, stage, f"the value of {role.ref} is not known: give it in [components] "
                            "or give vsense_v", **base)
    else:
        notes.append(f"{role.ref} = {r_val * 1e3:g} mohm")
    from ..physics.dcsolve import solve_dc
    current = op.iout_a if op.iout_a > 0 else 1.0
    temp = op.ambient_c
    excl = {role.ref} | {r.ref for r in stage.roles_named("controller")}
    in_a, why_a = _current_terminal(ctx, stage, pa[0].net, excl, pa[0], leaving=False)
    out_b, why_b = _current_terminal(ctx, stage, pb[0].net, excl, pb[0], leaving=True)
    if not in_a or not out_b:
        net = pa[0].net if not in_a else pb[0].net
        return not_made(q, stage, f"no terminal carries the load current on {net}", **base)
    def window(pads: list[Pad], fr: Pad, taps: list[Pad], to: list[Pad]):
        # the contacts and the copper paths between them (a sense trace may wander)
        pts = [(p.x_mm, p.y_mm) for p in pads]
        for ends in (taps, to):
            try:
                pts += route(ctx, fr, ends).xy
            except RouteError:
                pass
        return solve_window(pts)

    win_a = window(in_a + pa + tap_a, pa[0], tap_a, in_a)
    win_b = window(out_b + pb + tap_b, pb[0], tap_b, out_b)
    try:
        layers, vias, ix = sheets_and_vias(ctx, pa[0].net, temp, win_a)
        sol = solve_dc(layers, [pad_contact(ctx, "in", in_a, ix, current_a=current),
                                pad_contact(ctx, "rs", pa, ix, potential_v=0.0),
                                pad_contact(ctx, "tap", tap_a, ix)], vias, max_cells=DC_MAX_CELLS)
        e_a = sol.contact_potential("tap") - sol.contact_potential("rs")
        layers, vias, ix = sheets_and_vias(ctx, pb[0].net, temp, win_b)
        sol_b = solve_dc(layers, [pad_contact(ctx, "rs", pb, ix, current_a=current),
                                  pad_contact(ctx, "out", out_b, ix, potential_v=0.0),
                                  pad_contact(ctx, "tap", tap_b, ix)], vias, max_cells=DC_MAX_CELLS)
        e_b = sol_b.contact_potential("rs") - sol_b.contact_potential("tap")
    except ValueError as exc:      # the DC solver's board reasons (off the copper, contacts joined,
        #                               no current, no convergence) are ValueError; anything else is a bug
        return not_made(q, stage, f"DC solve failed: {exc}", **base)
    ideal = current * r_val
    err = e_a + e_b
    if not math.isfinite(err):
        return not_made(q, stage, "a sense tap is not joined by copper to the resistor's net", **base)
    pct = 100.0 * err / ideal
    notes += [f"load current enters {pa[0].net} at {why_a} and leaves {pb[0].net} at {why_b}",
              f"copper at {temp:g} C (ambient); sense pins are floating taps (no current)",
              "resistor body lumped between its pads; ideal drop I R between the resistor's own pads",
              "DC solve of each sense net's copper (finite differences on a raster)",
              window_note(win_a)] + \
        op_assumptions(op, ("iout_a", "ambient_c"))
    tp = tap_a[0]
    return measurement(q, abs(pct), stage, drawings=[point(tp.x_mm, tp.y_mm), point(tap_b[0].x_mm, tap_b[0].y_mm)],
                       terminals=(pa[0].terminal, pb[0].terminal, tap_a[0].terminal, tap_b[0].terminal),
                       assumptions=notes,
                       detail={"signed_error_pct": pct, "error_plus_v": e_a, "error_minus_v": e_b,
                               "error_v": err, "ideal_drop_v": ideal, "current_a": current,
                               "resistance_ohm": r_val, "temperature_c": temp,
                               "current_in": [p.terminal for p in in_a], "current_out": [p.terminal for p in out_b]},
                       **base)


def _pair_area(stage: Stage, ra: Route, rb: Route, base) -> Measurement:
    ring = ra.xy + rb.xy[::-1]
    area, region = enclosed_area(ring)
    draws = [polyline(ra.points), polyline(rb.points)]
    if not region.is_empty:
        draws += [polygon(list(p.exterior.coords)) for p in getattr(region, "geoms", [region]) if hasattr(p, "exterior")]
    return measurement("sense.pair_area", area, stage, drawings=draws,
                       terminals=(ra.start, ra.end, rb.start, rb.end),
                       assumptions=["polygon between the two sense routes from the resistor's pads to the "
                                    "controller's sense pins, closed across the resistor and across the pins",
                                    "route: centreline-weighted shortest path through the copper raster"],
                       detail={"route_plus_mm": ra.length_mm, "route_minus_mm": rb.length_mm}, **base)


def _route_copper(r: Route) -> dict[int, object]:
    out: dict[int, list] = {}
    for w, a, b in zip(r.widths_mm, r.points[:-1], r.points[1:]):
        if a[2] != b[2] or (a[0], a[1]) == (b[0], b[1]):
            continue
        out.setdefault(a[2], []).append(LineString([a[:2], b[:2]]).buffer(min(w, 1.0) / 2, cap_style="flat"))
    return {k: unary_union(v) for k, v in out.items()}


def _clearance(ctx: MeasureContext, stage: Stage, routes: list[Route], role) -> Measurement:
    """Closest approach of sense / feedback copper to switch-node copper: on the same layer the
    gap, over it on the next layer 0."""
    q = "sense.switch_node_clearance"
    sw = stage.switch_node
    if sw is None:
        return not_made(q, stage, "the switch node was not found")
    sense_cu: dict[int, list] = {}
    what = []
    for r in routes:
        for k, g in _route_copper(r).items():
            sense_cu.setdefault(k, []).append(g)
        what.append(f"sense route {r.start} -> {r.end}")
    # feedback: controller pins on nets named like feedback or sense that are no power net
    ctrl = stage.role("controller")
    power = {stage.input_net, stage.output_net, stage.ground_net, sw}
    if ctrl is not None:
        fb_pins = {t for key, ts in ctrl.pins.items() if key in ("fb", "feedback") for t in ts}
        fb_nets = sorted({p.net for p in ctx.board.components.get(ctrl.ref, [])
                          if p.net not in power and (FEEDBACK_NAMES.search(p.net) or p.terminal in fb_pins)})
        if role is not None:
            fb_nets = [n for n in fb_nets if n not in {p.net for p in ctx.board.components.get(role.ref, [])}]
        for n in fb_nets:
            for k, g in ctx.net_copper(n).items():
                sense_cu.setdefault(k, []).append(g)
            what.append(f"feedback net {n}")
    if not sense_cu:
        return not_made(q, stage, "no sense or feedback copper found for this stage")
    sw_cu = ctx.net_copper(sw)
    if not sw_cu:
        return not_made(q, stage, f"the switch node {sw} has no copper")
    best = None
    nlay = len(ctx.board.layers)
    for k, parts in sense_cu.items():
        g = unary_union(parts)
        if k in sw_cu:
            d = g.distance(sw_cu[k])
            if best is None or d < best[0]:
                from shapely.ops import nearest_points
                p1, _ = nearest_points(g, sw_cu[k])
                best = (d, p1.x, p1.y, k, "same layer")
        for m in (k - 1, k + 1):
            if 0 <= m < nlay and m in sw_cu and g.intersects(sw_cu[m]):
                ov = g.intersection(sw_cu[m])
                if ov.area > 1e-4:
                    c = ov.representative_point()
                    best = (0.0, c.x, c.y, k, f"over switch-node copper on {ctx.board.layers[m].name}")
    if best is None:
        return not_made(q, stage, "no sense or feedback copper shares or neighbours a layer with the switch node")
    d, x, y, k, how = best
    return measurement(q, d, stage, x_mm=x, y_mm=y, layer=ctx.board.layers[k].name, nets=(sw,),
                       refs=(role.ref,) if role is not None else (),
                       drawings=[point(x, y, ctx.board.layers[k].name)],
                       assumptions=[f"checked: {', '.join(what)}", "sense routes taken at their copper width "
                                    "(at most 1 mm)", "adjacent-layer overlap counts as 0 mm"],
                       detail={"where": how})
