"""The hot loop's capacitor: the one the switching current really takes.

At the switching edges the current the switch commutates is drawn from (buck: the input rail;
boost: delivered into the output rail) the capacitor that closes the smallest loop with the
switch, because that loop has the least inductance. Every capacitor across the loop's two rails
is a candidate: the stage's input capacitors (buck, buck-boost) or output capacitors (boost),
and any other capacitor with one pad on each of the two rails (a controller's own decoupling
capacitor on VIN is one of them). Each is ranked by the copper it adds to the loop: the route
from its rail pad to the switch's rail terminals plus the route from its ground pad to the
switching side's ground terminals (``routes.route``, the same centreline-weighted paths the
other measurements use). The nearest is the loop's capacitor; the hot loop is closed through it
and the input-capacitor measurement names it.

Copper paths are never shorter than the straight line, so candidates are routed nearest first
by straight distance and the search stops when the next one's straight distance already
exceeds the best copper path found (the choice is the same as routing them all).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..board import Pad
from ..powerstage import Role, Stage
from .dcflow import CAPACITOR
from .netcopper import MeasureContext
from .routes import Route, RouteError, route



@dataclass
class CapCandidate:
    ref: str
    source: str                           # "input_cap" | "output_cap" | "across the rails"
    rail_pad: Pad | None = None
    ground_pad: Pad | None = None
    rail_route: Route | None = None
    ground_route: Route | None = None
    straight_mm: float = math.inf         # rail + ground, pad centre to nearest target
    why_not: str | None = None

    @property
    def path_mm(self) -> float:
        if self.rail_route is None or self.ground_route is None:
            return math.inf
        return self.rail_route.length_mm + self.ground_route.length_mm


@dataclass
class LoopCapChoice:
    """The capacitor that closes the hot loop, and how it was chosen."""

    ref: str
    rail_net: str
    ground_net: str
    rail_route: Route                       # capacitor rail pad -> switch rail terminal
    ground_route: Route                     # capacitor ground pad -> switching-side ground terminal
    ranking: list[dict] = field(default_factory=list)   # every candidate looked at, nearest first
    evidence: str = ""

    @property
    def path_mm(self) -> float:
        return self.rail_route.length_mm + self.ground_route.length_mm


def loop_rails(stage: Stage) -> tuple[str | None, str | None, str]:
    """(rail net, ground net, candidate role) of the stage's hot-loop capacitor."""
    if stage.topology == "boost":
        return stage.output_net, stage.ground_net, "output_cap"
    return stage.input_net, stage.ground_net, "input_cap"


def _pads(ctx: MeasureContext, terms) -> list[Pad]:
    return [ctx.board.terminals[t] for t in terms if t in ctx.board.terminals]


def switch_terminals(ctx: MeasureContext, stage: Stage, rail: str, ground: str,
                     cap_refs: set[str]) -> tuple[list[Pad], list[Pad]]:
    """The switching side's terminals on the rail and on ground: the pads, on those nets, of the
    parts next to the capacitor in the stage's hot loop (all of that part's pads on the net, so
    an IC with several VIN or GND pins is entered at the nearest); failing a hot loop, the
    switch's, rectifier's or controller's pads on those nets."""
    board = ctx.board
    loop = [board.terminals[t] for t in stage.hot_loop if t in board.terminals]
    inner = [p for p in loop if p.ref not in cap_refs]

    def of_ref_on(net: str, first: bool) -> list[Pad]:
        seq = inner if first else inner[::-1]
        for p in seq:
            if p.net == net and p.ref:
                return [q for q in board.components.get(p.ref, []) if q.net == net]
        return []

    rail_t = of_ref_on(rail, True)
    gnd_t = of_ref_on(ground, False)
    order = ("switch", "controller", "rectifier") if stage.topology != "boost" else ("rectifier", "switch", "controller")
    if not rail_t:
        for name in order:
            for role in stage.roles_named(name):
                rail_t = [p for p in board.components.get(role.ref, []) if p.net == rail]
                if name == "controller" and role.pins.get("vin"):
                    rail_t = [p for p in _pads(ctx, role.pins["vin"]) if p.net == rail] or rail_t
                if rail_t:
                    break
            if rail_t:
                break
    if not gnd_t:
        for name in ("rectifier", "switch", "controller"):
            for role in stage.roles_named(name):
                gnd_t = [p for p in board.components.get(role.ref, []) if p.net == ground]
                if gnd_t:
                    break
            if gnd_t:
                break
    return rail_t, gnd_t


def candidates(ctx: MeasureContext, stage: Stage, rail: str, ground: str, role_name: str) -> list[CapCandidate]:
    """The stage's capacitors of ``role_name`` and every other capacitor with a pad on each rail."""
    out: dict[str, CapCandidate] = {}
    for role in stage.roles_named(role_name):
        out.setdefault(role.ref, CapCandidate(role.ref, role_name))
    rail_refs = {p.ref for p in ctx.board.nets.get(rail, []) if p.ref}
    gnd_refs = {p.ref for p in ctx.board.nets.get(ground, []) if p.ref}
    for ref in sorted(rail_refs & gnd_refs):
        pads = ctx.board.components.get(ref, [])
        if ref in out or not CAPACITOR.match(ref) or len({p.net for p in pads}) != 2:
            continue
        out[ref] = CapCandidate(ref, "across the rails")
    return list(out.values())


def _nearest(pads: list[Pad], targets: list[Pad]) -> tuple[Pad | None, float]:
    best, d = None, math.inf
    for p in pads:
        for t in targets:
            dd = math.hypot(p.x_mm - t.x_mm, p.y_mm - t.y_mm)
            if dd < d:
                best, d = p, dd
    return best, d


def choose_loop_capacitor(ctx: MeasureContext, stage: Stage) -> LoopCapChoice | None:
    """The capacitor nearest the switch by copper path across the loop's rails (cached per
    stage in the context), or None when none can be routed."""
    key = ("loopcap", stage.name, stage.switch_node)
    if key in ctx.cache:
        return ctx.cache[key]
    ctx.cache[key] = None
    rail, ground, role_name = loop_rails(stage)
    if rail is None or ground is None:
        return None
    cands = candidates(ctx, stage, rail, ground, role_name)
    if not cands:
        return None
    rail_t, gnd_t = switch_terminals(ctx, stage, rail, ground, {c.ref for c in cands})
    if not rail_t or not gnd_t:
        return None
    for c in cands:
        pads = ctx.board.components.get(c.ref, [])
        c.rail_pad, dr = _nearest([p for p in pads if p.net == rail], rail_t)
        c.ground_pad, dg = _nearest([p for p in pads if p.net == ground], gnd_t)
        c.straight_mm = dr + dg
    cands.sort(key=lambda c: (c.straight_mm, c.ref))
    best: CapCandidate | None = None
    for c in cands:
        if best is not None and c.straight_mm > best.path_mm:
            c.why_not = "farther in a straight line than the chosen one by copper"
            continue
        if c.rail_pad is None or c.ground_pad is None:
            c.why_not = f"no pad on {rail if c.rail_pad is None else ground}"
            continue
        try:
            c.rail_route = route(ctx, c.rail_pad, rail_t)
            c.ground_route = route(ctx, c.ground_pad, gnd_t)
        except RouteError as exc:
            c.why_not = str(exc)
            continue
        if best is None or (c.path_mm, c.ref) < (best.path_mm, best.ref):
            best = c
    ranking = [{"ref": c.ref, "source": c.source,
                "path_length_mm": None if not math.isfinite(c.path_mm) else round(c.path_mm, 3),
                "rail_path_mm": None if c.rail_route is None else round(c.rail_route.length_mm, 3),
                "ground_path_mm": None if c.ground_route is None else round(c.ground_route.length_mm, 3),
                "straight_mm": None if not math.isfinite(c.straight_mm) else round(c.straight_mm, 3),
                "not_routed": c.why_not} for c in cands]
    if best is None:
        return None
    routed = sorted((c for c in cands if math.isfinite(c.path_mm)), key=lambda c: c.path_mm)
    ev = (f"{best.ref} ({best.source.replace('_', ' ')}) closes the loop with the least copper: "
          f"{best.rail_route.length_mm:.1f} mm on {rail} + {best.ground_route.length_mm:.1f} mm on {ground}")
    if len(routed) > 1:
        ev += "; next " + ", ".join(f"{c.ref} {c.path_mm:.1f} mm" for c in routed[1:4])
    choice = LoopCapChoice(best.ref, rail, ground, best.rail_route, best.ground_route, ranking, ev)
    ctx.cache[key] = choice
    return choice


def close_loop_through(ctx: MeasureContext, stage: Stage, choice: LoopCapChoice) -> None:
    """Rewrite ``stage.hot_loop`` to close through ``choice`` (its rail pad first, its ground pad
    last, entering the neighbouring parts at the terminals its routes reach) and put the chosen
    capacitor first among the stage's capacitors of its role."""
    board = ctx.board
    terms = list(stage.hot_loop)
    _, _, role_name = loop_rails(stage)
    cap_refs = {r.ref for r in stage.roles_named(role_name)} | {choice.ref}
    if len(terms) >= 4:
        pads = [board.terminals.get(t) for t in terms]
        old_ref = pads[0].ref if pads[0] is not None else None
        if old_ref is not None and pads[-1] is not None and pads[-1].ref == old_ref:
            terms[0] = choice.rail_route.start
            terms[-1] = choice.ground_route.start
            # the neighbours on the rail and ground side: the terminal the route reaches
            rail_end = board.terminals[choice.rail_route.end]
            gnd_end = board.terminals[choice.ground_route.end]
            if pads[1] is not None and pads[1].ref == rail_end.ref and pads[1].ref not in cap_refs:
                terms[1] = rail_end.terminal
            if pads[-2] is not None and pads[-2].ref == gnd_end.ref and pads[-2].ref not in cap_refs:
                terms[-2] = gnd_end.terminal
            stage.hot_loop = tuple(terms)
    roles = stage.roles
    chosen = [r for r in roles if r.name == role_name and r.ref == choice.ref]
    if not chosen:
        pads = board.components.get(choice.ref, [])
        chosen = [Role(role_name, choice.ref,
                       tuple(p.terminal for p in pads if p.net in (choice.rail_net, choice.ground_net)),
                       0.8, choice.evidence)]
    else:
        chosen[0].evidence = "; ".join(e for e in (chosen[0].evidence, choice.evidence) if e)
    rest = [r for r in roles if not (r.name == role_name and r.ref == choice.ref)]
    first = next((k for k, r in enumerate(rest) if r.name == role_name), len(rest))
    stage.roles = rest[:first] + chosen[:1] + rest[first:]


def settle_loop_capacitor(ctx: MeasureContext, stage: Stage) -> LoopCapChoice | None:
    """Choose the stage's hot-loop capacitor and close the hot loop through it (once per stage,
    before its measurements). Returns the choice, or None when no candidate could be routed (the
    stage is left as found)."""
    choice = choose_loop_capacitor(ctx, stage)
    if choice is not None:
        close_loop_through(ctx, stage, choice)
    return choice
