"""Where DC current enters and leaves a net: the one place every measurement asks.

A capacitor carries no DC current, so it is never where a rail's current enters or leaves. On a
rail the current enters at

* the output of the stage that makes the rail: its inductor's pad (buck), its rectifier's pad
  (boost, buck-boost), or its sense resistor's pad where that sits in series at the output;
* else a connector on the rail: the supply comes in from outside (assumed when the rail has no
  stage of its own: a connector is the only part that can bring current onto a board);

and leaves at

* the input of every stage fed by the rail (its switch's or controller's input pins, a boost's
  inductor);
* connectors on a rail a stage makes (the load is off the board), LEDs and LED strings;
* the supply pins of other integrated circuits (assumed to draw current: a netlist does not say
  how much);
* failing all of these, the pad farthest from where the current enters (assumed, and said).

On the ground net the current runs the other way round: it comes back from every load's ground
pin and from the stage's switching side, and leaves towards the input supply's return (the input
connector's ground pin).

Every answer carries its evidence, and an assumption where it is a guess, for the report.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

from ..board import Pad
from ..powerstage import Stage
from .netcopper import MeasureContext

CONNECTOR = re.compile(r"^(J|P|CN|X|CON|TB|USB|BT|BAT)\d", re.I)   # connectors and batteries: current from off the board
CAPACITOR = re.compile(r"^C(?!ON|N|R)[A-Z]*\d", re.I)    # C12, CIN3, COUT1 (not CON, CN: connectors; CR: diodes)
LED = re.compile(r"^(LED|D)\d", re.I)
IC = re.compile(r"^(U|IC)\d", re.I)


@dataclass
class DCEnd:
    """Pads of one part where DC current enters or leaves a net."""

    pads: list[Pad]
    kind: str          # "stage output", "stage input", "connector", "LED", "IC supply", "farthest pad", ...
    evidence: str
    assumed: bool = False

    @property
    def ref(self) -> str:
        return self.pads[0].ref if self.pads else ""


@dataclass
class NetFlow:
    """Where DC current enters (sources) and leaves (sinks) one net."""

    net: str
    sources: list[DCEnd] = field(default_factory=list)
    sinks: list[DCEnd] = field(default_factory=list)

    def assumptions(self) -> list[str]:
        return [f"{e.evidence} (assumed)" for e in self.sources + self.sinks if e.assumed]


def _stage_pads(ctx: MeasureContext, stage: Stage, role_names: tuple[str, ...], net: str) -> list[Pad]:
    for name in role_names:
        for role in stage.roles_named(name):
            pads = [p for p in ctx.board.components.get(role.ref, []) if p.net == net]
            if name == "controller" and role.pins.get("vin"):
                pins = [ctx.board.terminals[t] for t in role.pins["vin"] if t in ctx.board.terminals]
                pads = [p for p in pins if p.net == net] or pads
            if pads:
                return pads
    return []


def _is_led(ctx: MeasureContext, ref: str) -> bool:
    if ref.upper().startswith("LED"):
        return True
    v = (ctx.value_of(ref) or "").upper()
    return bool(LED.match(ref)) and "LED" in v


def _all_stages(ctx: MeasureContext, stage: Stage | None) -> list[Stage]:
    stages = list(getattr(ctx, "stages", None) or [])
    if stage is not None and all(s is not stage for s in stages):
        stages.append(stage)
    return stages


def net_flow(ctx: MeasureContext, net: str, stage: Stage | None = None) -> NetFlow:
    """Sources and sinks of DC current on a supply rail ``net`` (not the ground net: see
    ``ground_flow``), judged over every stage of the board (``ctx.stages``) and the parts on
    the net. Capacitors are never sources or sinks."""
    key = ("dcflow", net, stage.name if stage is not None else None)
    if key in ctx.cache:
        return ctx.cache[key]
    flow = NetFlow(net)
    stages = _all_stages(ctx, stage)
    used: set[str] = set()
    made_here = False
    for s in stages:
        if s.output_net == net:
            roles = ("rectifier", "switch") if s.topology in ("boost", "buck-boost") else ("inductor",)
            pads = _stage_pads(ctx, s, ("sense_resistor",) + roles, net) if s.role("sense_resistor") else []
            pads = pads or _stage_pads(ctx, s, roles, net)
            if pads:
                made_here = True
                flow.sources.append(DCEnd(pads, "stage output", f"{pads[0].ref} of {s.name} ({s.topology}) "
                                          f"delivers {net}"))
                used.add(pads[0].ref)
        if s.input_net == net:
            roles = ("inductor",) if s.topology == "boost" else ("switch", "controller")
            pads = _stage_pads(ctx, s, roles, net)
            if pads:
                flow.sinks.append(DCEnd(pads, "stage input", f"{pads[0].ref} of {s.name} ({s.topology}) "
                                        f"draws from {net}"))
                used.add(pads[0].ref)
    on_net: dict[str, list[Pad]] = {}
    for p in ctx.board.nets.get(net, []):
        if p.ref and not p.is_via and p.ref not in used and not CAPACITOR.match(p.ref):
            on_net.setdefault(p.ref, []).append(p)
    for ref, pads in sorted(on_net.items()):
        if CONNECTOR.match(ref):
            if made_here:
                flow.sinks.append(DCEnd(pads, "connector", f"connector {ref} takes {net} off the board", True))
            else:
                flow.sources.append(DCEnd(pads, "connector", f"connector {ref} brings {net} onto the board",
                                          not any(s.input_net == net for s in stages)))
        elif _is_led(ctx, ref):
            flow.sinks.append(DCEnd(pads, "LED", f"LED {ref} on {net}"))
        elif IC.match(ref):
            flow.sinks.append(DCEnd(pads, "IC supply", f"supply pin(s) of {ref} on {net} draw current", True))
    if not flow.sources and not made_here:
        up = upstream(ctx, net, stages)
        if up is not None:
            flow.sources.append(up)
    if not flow.sinks or not flow.sources:
        # the farthest pad of another part, from where the current is known to enter or leave
        known = flow.sources or flow.sinks
        ref0 = known[0].pads[0] if known else None
        others = [pads for ref, pads in on_net.items()
                  if ref not in {e.ref for e in flow.sources + flow.sinks}]
        if ref0 is not None and others:
            far = max(others, key=lambda ps: math.hypot(ps[0].x_mm - ref0.x_mm, ps[0].y_mm - ref0.y_mm))
            end = DCEnd(far, "farthest pad", f"no load or supply found on {net}: current taken to "
                        f"{'leave' if not flow.sinks else 'enter'} at {far[0].ref}, the farthest part", True)
            (flow.sinks if not flow.sinks else flow.sources).append(end)
    ctx.cache[key] = flow
    return flow


SERIES = re.compile(r"^(F|FB|FL|L|R|D|JP)\d", re.I)   # fuses, ferrite beads, chokes, resistors, diodes, jumpers
UPSTREAM_DEPTH = 3


def upstream(ctx: MeasureContext, net: str, stages: list[Stage]) -> DCEnd | None:
    """Where a rail with no connector and no stage of its own is fed from: through a chain of
    two-pad series parts (a fuse, a ferrite bead, a reverse-protection diode, a filter choke, a
    resistor) to a net with a connector or a stage's output, at most ``UPSTREAM_DEPTH`` parts
    away. The current enters ``net`` at the last part of the chain."""
    stage_refs = {r.ref for s in stages for r in s.roles}
    seen = {net}
    frontier: list[tuple[str, list[str], Pad | None]] = [(net, [], None)]
    for _ in range(UPSTREAM_DEPTH):
        nxt = []
        for n, chain, entry in frontier:
            for p in ctx.board.nets.get(n, []):
                if not p.ref or p.is_via or p.ref in stage_refs or not SERIES.match(p.ref):
                    continue
                pads = ctx.board.components.get(p.ref, [])
                nets = {q.net for q in pads}
                if len(pads) != 2 or len(nets) != 2:
                    continue
                other = next(iter(nets - {n}))
                if other in seen or other == ctx_ground(stages):
                    continue
                seen.add(other)
                here = entry or p
                new_chain = chain + [p.ref]
                feeds = [s for s in stages if s.output_net == other]
                conn = sorted({q.ref for q in ctx.board.nets.get(other, []) if q.ref and CONNECTOR.match(q.ref)})
                if feeds or conn:
                    what = f"{feeds[0].name}'s output {other}" if feeds else f"connector {conn[0]} on {other}"
                    return DCEnd([here], "upstream", f"{net} is fed through {' -> '.join(new_chain[::-1])} "
                                 f"from {what}", assumed=not feeds)
                nxt.append((other, new_chain, here))
        frontier = nxt
    return None


def ctx_ground(stages: list[Stage]) -> str | None:
    return next((s.ground_net for s in stages if s.ground_net), None)


def upstream_origin(ctx: MeasureContext, end: DCEnd) -> str | None:
    """The connector a series chain found by ``upstream`` leads to (its name in the evidence)."""
    m = re.search(r"connector (\S+) on", end.evidence)
    return m.group(1) if m else None


def main_sink(flow: NetFlow, near: Pad) -> DCEnd | None:
    """The sink that stands for the rail's load in a two-terminal path: a connector or the LEDs
    first (the load the stage is built for), then downstream stages, then ICs; the farthest of
    its kind from ``near`` (all the current taken there: an upper bound on the path)."""
    return _pick(flow.sinks, near, SINK_ORDER)


SINK_ORDER = ("connector", "stage input", "LED", "IC supply", "farthest pad")


def main_source(flow: NetFlow, near: Pad) -> DCEnd | None:
    """The source that feeds the rail: a stage's output, else a connector; the farthest first."""
    return _pick(flow.sources, near, ("stage output", "connector", "upstream", "farthest pad"))


def _pick(ends: list[DCEnd], near: Pad, order: tuple[str, ...]) -> DCEnd | None:
    for kind in order:
        cands = [e for e in ends if e.kind == kind and e.ref != near.ref]
        if cands:
            return max(cands, key=lambda e: math.hypot(e.pads[0].x_mm - near.x_mm, e.pads[0].y_mm - near.y_mm))
    return None


def ground_pads_of(ctx: MeasureContext, end: DCEnd | None, ground: str) -> list[Pad]:
    """The ground pads of the part at ``end`` (a connector's return pin, an IC's GND pins)."""
    if end is None or not end.pads:
        return []
    return [p for p in ctx.board.components.get(end.ref, []) if p.net == ground]


def input_return(ctx: MeasureContext, stage: Stage) -> tuple[list[Pad], str, bool]:
    """Where the stage's input current returns to its supply on the ground net: the ground pins
    of the part that feeds the input rail (its connector, or the upstream stage's switching
    side); (pads, evidence, assumed)."""
    if stage.input_net is None or stage.ground_net is None:
        return [], "", False
    ref = ctx.board.terminals.get(stage.hot_loop[0]) if stage.hot_loop else None
    near = ref or next(iter(ctx.board.nets.get(stage.input_net, [])), None)
    if near is None:
        return [], "", False
    src = main_source(net_flow(ctx, stage.input_net, stage), near)
    if src is None:
        return [], "", False
    if src.kind == "stage output":
        up = next((s for s in _all_stages(ctx, stage) if s.output_net == stage.input_net), None)
        pads = []
        if up is not None:
            pads = _stage_pads(ctx, up, ("rectifier", "switch", "controller"), stage.ground_net)
        return pads, f"the ground side of {up.name if up else src.ref}, which makes {stage.input_net}", False
    if src.kind == "upstream":
        conn = upstream_origin(ctx, src)
        pads = [p for p in ctx.board.components.get(conn, []) if p.net == stage.ground_net] if conn else []
        if not pads:
            up = next((s for s in _all_stages(ctx, stage) if s.name in src.evidence and s is not stage), None)
            if up is not None:
                pads = _stage_pads(ctx, up, ("rectifier", "switch", "controller"), stage.ground_net)
        return pads, f"the ground pin(s) of the supply: {src.evidence}", src.assumed
    pads = ground_pads_of(ctx, src, stage.ground_net)
    return pads, f"{src.ref}'s ground pin(s), the return of {src.evidence}", src.assumed


def load_return(ctx: MeasureContext, stage: Stage) -> tuple[list[Pad], str, bool]:
    """Where the stage's load current comes back onto the ground net: the ground pins of the part
    that stands for the load on the output rail; (pads, evidence, assumed)."""
    if stage.output_net is None or stage.ground_net is None:
        return [], "", False
    near = next((p for p in ctx.board.nets.get(stage.output_net, []) if not p.is_via), None)
    if near is None:
        return [], "", False
    flow = net_flow(ctx, stage.output_net, stage)
    # the load as main_sink orders them, among those that return their current on ground
    for kind in SINK_ORDER:
        cands = [e for e in flow.sinks if e.kind == kind and ground_pads_of(ctx, e, stage.ground_net)]
        if cands:
            sink = max(cands, key=lambda e: math.hypot(e.pads[0].x_mm - near.x_mm, e.pads[0].y_mm - near.y_mm))
            pads = ground_pads_of(ctx, sink, stage.ground_net)
            return pads, f"{sink.ref}'s ground pin(s), the return of the load ({sink.evidence})", sink.assumed
    return [], "", False
