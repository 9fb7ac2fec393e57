"""Topology: which nets are switch nodes, which part switches and which rectifies, which rail is
ground, input and output, and whether the stage is a buck, a boost or an inverting buck-boost.
Each decision keeps its evidence (see :mod:`loopcheck.stages.evidence` for the clues)."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

from ..board import Pad
from .evidence import (Clue, bootstrap_caps, bootstrap_nets, bridge_partner, exposed_pad_net, feedback_divider, inductor_class,
                       load_only_far_end, other_ics, pin_weight, power_connectors, rail_sources, rail_voltage,
                       reaches_antenna, snubber_caps, transformers_on)
from .netlist import (GROUND_NAMES, INPUT_NAMES, OUTPUT_NAMES, SWITCH_NODE_NAMES, Part)

# --------------------------------------------------------------------------------------------
# Detection


@dataclass
class _Element:
    """A part with a pin on the switch node acting as switch or rectifier."""

    part: Part
    kind: str                         # "transistor" | "diode" | "ic"
    sw_pads: list[Pad]
    rail: str | None = None           # its other power net
    rail_via: Part | None = None      # a series (sense) resistor between its pin and the rail
    rail_pin_net: str | None = None   # the net its own power pin is on (before the series resistor)
    gate_net: str | None = None
    evidence: list[str] = field(default_factory=list)
    confidence: float = 0.8


@dataclass
class TopologyDecision:
    """What the topology step decided for one stage, with its evidence and confidence."""

    x_net: str                         # the inductor's far net
    x_rail: str                        # ... and the rail it reaches (through a series resistor)
    x_via: Part | None
    transistors: list[_Element]
    diodes: list[_Element]
    switching: str
    ground: str | None
    g_conf: float
    g_ev: list[str]
    topology: str | None
    topo_ev: str
    topo_conf: float
    switch_el: _Element | None
    rect_el: _Element | None
    input_net: str | None
    output_net: str | None


class TopologyMixin:
    """Switch-node candidates and topology decisions (mixed into the Detector)."""

    def _sw_score(self, net: str) -> tuple[float, str, list[str]]:
        """How much a net looks like a switch node, its switching kind, and the evidence."""
        nl = self.nl
        transistors = [p for p in nl.on(net, "transistor") if len(p.nets) >= 2]
        diodes = [p for p in nl.on(net, "diode") if len(p.nets) == 2]
        ics = nl.on(net, "ic")
        ev: list[str] = []
        score = 0.0
        if len(transistors) >= 2:
            kind = "synchronous"
            score += 3
            ev.append(f"two transistors ({', '.join(p.ref for p in transistors)}) on the net")
        elif transistors and diodes:
            kind = "discrete"
            score += 3
            ev.append(f"transistor {transistors[0].ref} and diode {diodes[0].ref} on the net")
        elif ics and (diodes or transistors):
            kind = "integrated"
            score += 2
            ev.append(f"{ics[0].ref} pins and {(diodes or transistors)[0].ref} on the net")
        elif ics:
            kind = "integrated"
            score += 1
            ev.append(f"{ics[0].ref} pins on the net (switch inside the IC)")
        else:
            return 0.0, "", []
        # a switch node carries no capacitor to a rail (a bootstrap capacitor to an IC pin is fine)
        caps = nl.on(net, "capacitor")
        boot = bootstrap_caps(nl, net)
        snub = [c for c in snubber_caps(nl, net) if c not in boot]
        if snub:
            ev.append(f"RC snubber {snub[0].ref} on the net")
        if boot:
            score += 0.5
            ev.append(f"bootstrap-like capacitor {boot[0].ref} to an IC pin")
        boot = boot + snub      # neither makes the net a rail
        rail_caps = [c for c in caps if c not in boot and len(c.nets) == 2
                     and (len(nl.on(next(iter(c.nets - {net})), "capacitor")) >= 2
                          or nl.on(next(iter(c.nets - {net})), "connector"))]
        if rail_caps:
            # a capacitor straight to a rail (ground): this net is a rail, not a switch node
            return 0.0, "", []
        if len(caps) - len(boot) > 0:
            score -= 1.5 * (len(caps) - len(boot))
        if nl.on(net, "connector"):
            score -= 2
        if SWITCH_NODE_NAMES.search(net):
            score += 1
            ev.append(f"net name {net!r} is a usual switch-node name")
        return score, kind, ev

    def candidates(self) -> list[tuple[str, Part, str, float, list[str]]]:
        """(switch node, inductor, switching kind, score, evidence) per inductor, best end."""
        out = []
        for ind in sorted((p for p in self.nl.parts.values() if p.kind == "inductor"), key=lambda p: p.ref):
            if len(ind.nets) != 2:
                continue
            best = None
            switching_ends = []
            for net in sorted(ind.nets):
                score, kind, ev = self._sw_score(net)
                if score > 0:
                    switching_ends.append((net, kind, ev))
                if score > 0 and (best is None or score > best[3]):
                    best = (net, ind, kind, score, ev)
            both_bare = not any(self.nl.is_railish(self._resolve_rail(net, set(ind.nets) - {net})[0])
                                for net, _, _ in switching_ends)
            if len(switching_ends) == 2 and both_bare:
                # switches at both ends of one inductor: a four-switch buck-boost (not measured)
                self._four_switch.append((ind, switching_ends))
                self.messages.append(f"{ind.ref}: switches at both ends ({switching_ends[0][0]}, "
                                     f"{switching_ends[1][0]}): a four-switch buck-boost")
                continue
            if best is not None:
                # the inductor's other end must reach a rail (capacitors or a connector)
                other = next(iter(ind.nets - {best[0]}))
                rail, _ = self._resolve_rail(other, {best[0]})
                why_not = self._not_a_converter(best[0], ind, best[2], other, rail)
                if why_not:
                    self.messages.append(f"{ind.ref}: net {best[0]} is not taken as a switch node: {why_not}")
                    continue
                if self.nl.is_railish(rail):
                    out.append(best)
        # a net where a transistor meets only IC pins is not a switch node when that transistor
        # already switches at another candidate with its rectifier (an input filter's inductor)
        switching = {p.ref for net, _, kind, _, _ in out if kind in ("discrete", "synchronous")
                     for p in self.nl.on(net) if p.kind in ("transistor", "diode")}
        kept = []
        for cand in out:
            net, ind, kind = cand[0], cand[1], cand[2]
            if kind == "integrated" and any(p.ref in switching for p in self.nl.on(net, "transistor")):
                self.messages.append(f"{ind.ref}: net {net} is not taken as a switch node: its transistor "
                                     "switches at another switch node")
                continue
            kept.append(cand)
        return kept

    def isolated_candidates(self) -> list[tuple[Part, str, str, list[Part], list[Part], list[str]]]:
        """Switching stages with a transformer, which loopcheck reports but does not measure:
        (transformer, topology, switch node, switches, series L/C, evidence) per transformer.

        - two transistors (or IC pins) on a net that reaches a transformer winding, directly:
          ``half-bridge``; through a series inductor or capacitor: ``resonant``;
        - one transistor or IC on a winding net whose winding's other nets reach a rail: ``flyback``
          (a forward converter reads the same from the netlist: the evidence says so).
        """
        nl = self.nl
        out = []
        for t in sorted((p for p in nl.parts.values() if p.kind == "transformer"), key=lambda p: p.ref):
            if len(t.nets) < 3:
                continue
            best = None
            for net in sorted(t.nets):
                if GROUND_NAMES.match(net):
                    continue
                reach = [(net, [])]
                for p in nl.on(net):
                    if p.kind in ("inductor", "capacitor") and len(p.nets) == 2:
                        reach.append((next(iter(p.nets - {net})), [p]))
                for sw, series in reach:
                    # a transistor whose gate sits on the winding is driven by it (a gate-drive
                    # transformer), it does not switch it
                    sws = [p for p in nl.on(sw, "transistor") if len(p.nets) >= 2
                           and self._gate_net(p) not in t.nets]
                    # an IC with pins on two signal ends of the windings drives them differentially
                    # (an Ethernet or signal transformer), it does not switch power
                    ics = [p for p in nl.on(sw, "ic")
                           if sum(1 for n in t.nets if p.pads_on(n) and not nl.is_railish(n)) < 2]
                    if len(sws) >= 2 or (ics and sws):
                        kind = "resonant" if series else "half-bridge"
                        ev = [f"{', '.join(p.ref for p in sws + ics)} switch {sw}"
                              + (f", which reaches the winding of {t.ref} through {series[0].ref}" if series
                                 else f", a winding of {t.ref}") + f": a {kind} stage"]
                        cand = (3 if not series else 2.5, t, kind, sw, sws + ics, series, ev)
                    elif (sws or ics) and not series:
                        kind = "flyback"
                        who = (sws or ics)[0]
                        ev = [f"{who.ref} switches {sw}, a winding of {t.ref}, alone: a flyback stage (or a "
                              "forward converter: the netlist reads the same)"]
                        cand = (1, t, kind, sw, [who], [], ev)
                    else:
                        continue
                    if best is None or cand[0] > best[0]:
                        best = cand
            if best is not None:
                out.append(best[1:])
        return out

    def _gate_net(self, t: Part) -> str | None:
        """A transistor's gate net from its pin names (G, GATE, B ...), else pin 1 when that net
        carries no capacitor or connector (the common SOT-23 / D-PAK numbering); None if unsure."""
        for p in t.pads:
            if self._pin_name(p.pin) == "G":
                return p.net
        pin1 = next((p for p in t.pads if p.pin == "1"), None)
        if pin1 is not None and not self.nl.is_railish(pin1.net) and len(t.pads_on(pin1.net)) == 1:
            return pin1.net
        return None

    def _not_a_converter(self, sw: str, ind: Part, kind: str, far: str, rail: str) -> str:
        """Why an inductor on a switching net is not a buck/boost/buck-boost inductor, or ""."""
        nl = self.nl
        cls, why = inductor_class(nl, ind, far)
        if cls == "rf":
            return "; ".join(why)
        ant = reaches_antenna(nl, far)
        if ant is not None and not bootstrap_caps(nl, sw):
            return f"its far end {far} leads to the antenna {ant.ref}: an RF matching inductor"
        only_ic = kind == "integrated" and not nl.on(sw, "diode") and not nl.on(sw, "transistor")
        if cls == "unknown" and why and only_ic and not bootstrap_caps(nl, sw):
            # a small inductor on a bare IC pin: an RF matching or filter part; a converter's
            # inductor is larger, or its IC has a bootstrap capacitor or an external rectifier
            return "; ".join(why) + " on a bare IC pin: an RF matching or filter inductor, not a power inductor"
        if transformers_on(nl, sw) or transformers_on(nl, far) or transformers_on(nl, rail):
            return ("a transformer winding on its nets: an isolated (half-bridge, resonant or flyback) "
                    "stage, reported as such")
        partner = bridge_partner(nl, rail, sw, lambda n: self._sw_score(n)[0] > 0)
        if partner is not None and not nl.on(sw, "diode"):
            return (f"its far end {rail} drives a load whose other end is switched at {partner}: a bridge "
                    "(a motor H-bridge), not a converter")
        if load_only_far_end(nl, rail) and not nl.on(sw, "diode"):
            return (f"its far end {rail} reaches a connector and no capacitor: it drives a load (a motor, "
                    "a heater, a coil), it does not feed a converter's rail")
        return ""

    # -- helpers ------------------------------------------------------------------------------
    def _resolve_rail(self, net: str, exclude: set[str]) -> tuple[str, Part | None]:
        """Follow a net with no capacitor or connector through one series resistor to a rail.
        Of several such resistors, the one to the strongest rail (most capacitors and connectors;
        then the lowest value): a sense resistor to ground, not its RC filter to the sense pin."""
        nl = self.nl
        if nl.is_railish(net):
            return net, None
        best = None
        for r in nl.on(net, "resistor"):
            if len(r.nets) != 2:
                continue
            other = next(iter(r.nets - {net}))
            if other in exclude or not nl.is_railish(other):
                continue
            v = r.value_si
            key = (len(nl.on(other, "capacitor")) + 2 * len(nl.on(other, "connector")),
                   -(v if v is not None else 1.0), r.ref)
            if best is None or key > best[0]:
                best = (key, other, r)
        if best is not None:
            return best[1], best[2]
        return net, None

    def _gate_and_rail(self, t: Part, sw: str) -> tuple[str | None, str | None, list[str]]:
        """Split a transistor's other nets into gate and power rail."""
        ev: list[str] = []
        others = sorted(t.nets - {sw})
        named = {self._pin_name(p.pin): p.net for p in t.pads}
        if "G" in named and named["G"] != sw:
            gate = named["G"]
            rail = next((n for n in others if n != gate), None)
            ev.append(f"{t.ref} pin named G is the gate")
            return gate, rail, ev
        if len(others) == 1:
            return None, others[0], [f"{t.ref} has only two nets: no gate pin in the netlist"]
        if len(others) > 2:
            others = sorted(others, key=lambda n: -len(t.pads_on(n)))[:2]

        def gateness(n: str) -> tuple:
            # gate: one transistor pin, no capacitor/connector, reaches an IC (directly or through a resistor)
            reaches_ic = bool(self.nl.on(n, "ic")) or any(
                self.nl.on(m, "ic") for r in self.nl.on(n, "resistor") if len(r.nets) == 2 for m in r.nets - {n})
            return (
                len(t.pads_on(n)) == 1,
                not self.nl.is_railish(n),
                reaches_ic,
                -self.nl.pad_count(n),
                t.pads_on(n)[0].pin == "1",
            )

        a, b = others
        ga, gb = gateness(a), gateness(b)
        gate, rail = (a, b) if ga > gb else (b, a)
        g = gateness(gate)
        if g[1] and not gateness(rail)[1]:
            ev.append(f"{t.ref}: net {gate} carries no capacitor or connector, {rail} does: {gate} is the gate")
        elif g[0] and not gateness(rail)[0]:
            ev.append(f"{t.ref}: one pin on {gate}, several on {rail}: {gate} is the gate")
        elif g[2]:
            ev.append(f"{t.ref}: net {gate} reaches an IC pin: the gate drive")
        else:
            ev.append(f"{t.ref}: assumed pin 1 ({gate}) is the gate (no net evidence)")
        return gate, rail, ev

    @staticmethod
    def _pin_name(pin: str) -> str:
        p = pin.upper()
        return {"GATE": "G", "SOURCE": "S", "DRAIN": "D", "B": "G", "BASE": "G", "E": "S", "EMITTER": "S",
                "C": "D", "COLLECTOR": "D", "K": "K", "CATHODE": "K", "KA": "K", "A": "A", "ANODE": "A",
                "AN": "A", "CA": "K"}.get(p, p)

    def _element(self, part: Part, sw: str, kind: str | None = None) -> _Element:
        kind = kind or part.kind
        el = _Element(part, kind, part.pads_on(sw))
        if kind == "transistor":
            gate, pin_net, ev = self._gate_and_rail(part, sw)
            el.gate_net = gate
            el.evidence += ev
        elif kind == "diode":
            pin_net = next(iter(part.nets - {sw}))
        else:
            pin_net = None
        if pin_net is not None:
            el.rail_pin_net = pin_net
            el.rail, el.rail_via = self._resolve_rail(pin_net, {sw})
            if el.rail_via is not None:
                el.evidence.append(f"{part.ref} reaches {el.rail} through {el.rail_via.ref}")
        return el

    def _diode_cathode(self, part: Part) -> tuple[str | None, str]:
        """The net of a two-net diode's cathode from its pin names (K/A), else the pin 1 = cathode
        convention; and which of the two told."""
        names = {"K": "K", "C": "K", "CATHODE": "K", "KA": "K", "CA": "K", "A": "A", "AN": "A", "ANODE": "A"}
        for p in part.pads:
            if names.get(p.pin.upper()) == "K":
                return p.net, "pin names"
        for p in part.pads:
            if names.get(p.pin.upper()) == "A":
                others = [q.net for q in part.pads if q.net != p.net]
                return (others[0] if others else None), "pin names"
        pin1 = next((p for p in part.pads if p.pin == "1"), None)
        return (pin1.net if pin1 is not None else None), "the pin 1 = cathode convention"

    def _load_across(self, x_rail: str, diode_rail: str | None, ground: str | None) -> str | None:
        """In a low-side (floating) buck the inductor's far end carries capacitors to the input
        (directly or past a series sense resistor), none to ground. The net they go to, or None."""
        if diode_rail is None:
            return None
        caps = self.nl.on(x_rail, "capacitor")
        if not caps or any(c.nets == {x_rail, ground} for c in caps):
            return None
        near = {diode_rail} | {n for r in self.nl.on(diode_rail, "resistor") if len(r.nets) == 2
                               for n in r.nets - {diode_rail}}
        for c in caps:
            if len(c.nets) == 2 and next(iter(c.nets - {x_rail})) in near:
                return next(iter(c.nets - {x_rail}))
        return None

    def _ground_of(self, nets: list[str], named: str | None, avoid: set[str] = frozenset(),
                   ics: list[Part] = ()) -> tuple[str | None, float, list[str]]:
        """Ground among candidate rails: a usual ground name (with capacitor returns), else not a
        rectifier diode's cathode side, then the rail most capacitors return to, then the rail of
        the switching IC's exposed pad (usually ground: it raises the confidence)."""
        nl = self.nl
        if named:
            return named, 1.0, ["named in loopcheck.toml"]
        nets = [n for n in dict.fromkeys(nets) if n]
        if not nets:
            return None, 0.0, []
        scores = {}
        pads_of_ep = {exposed_pad_net(ic) for ic in ics} - {None}
        for n in nets:
            returns = sum(1 for c in nl.on(n, "capacitor") if len(c.nets) == 2
                          and next(iter(c.nets - {n})) in nets)
            all_caps = len(nl.on(n, "capacitor"))
            # a usual ground name decides among rails with capacitor returns; else the count does
            scores[n] = (returns > 0 and bool(GROUND_NAMES.match(n)), n not in avoid, all_caps,
                         n in pads_of_ep, returns, nl.pad_count(n), n)
        best = max(nets, key=lambda n: scores[n])
        ev = [f"{scores[best][2]} capacitors return to it"]
        conf = 0.7
        ranked = sorted((v[2] for v in scores.values()), reverse=True)
        if len(ranked) > 1 and scores[best][2] == ranked[0] and ranked[0] > ranked[1]:
            conf = 0.85
        if avoid & set(nets) and not scores[best][0]:
            ev.append(f"not {', '.join(sorted(avoid & set(nets)))}: a rectifier's cathode side")
        if best in pads_of_ep:
            conf = min(1.0, conf + 0.1)
            ev.append("the switching IC's exposed pad is on it")
        if GROUND_NAMES.match(best):
            conf = min(1.0, conf + 0.1)
            ev.append(f"net name {best!r} is a usual ground name")
        return best, conf, ev

    def _input_likeness(self, net: str) -> tuple:
        nl = self.nl
        return (bool(INPUT_NAMES.search(net)) and not OUTPUT_NAMES.search(net),
                bool(nl.on(net, "ic")), bool(nl.on(net, "connector")), -bool(OUTPUT_NAMES.search(net)), net)

    def _own_parts(self, sw: str) -> set[str]:
        """The stage's own parts seen from its switch node: what switches there and the ICs that
        drive those switches' gates."""
        nl = self.nl
        own = {p.ref for p in nl.on(sw) if p.kind in ("ic", "transistor", "diode", "inductor")}
        for t in nl.on(sw, "transistor"):
            for n in t.nets - {sw}:
                own |= {p.ref for p in nl.on(n, "ic")}
        return own

    def _power_rail(self, ic: Part, nets: list[str]) -> str | None:
        """Among an IC's rails, the one its power pins sit on: the most pins, the most pad area,
        then the most capacitors (power pins are many and wide)."""
        if not nets:
            return None
        own = {ic.ref}

        def strength(n):
            # a power rail has capacitors (a signal net reaches a header); then what feeds it,
            # then the IC's pins and pad area on it
            caps = len(self.nl.on(n, "capacitor"))
            return min(caps, 2), bool(rail_sources(self.nl, n, own)), pin_weight(ic, n)

        ranked = sorted(nets, key=lambda n: (strength(n), len(self.nl.on(n, "capacitor")), self._input_likeness(n)),
                        reverse=True)
        # two rails the IC holds alike (both fed from elsewhere, as many pins as wide): a weak pick
        self._rail_tie = (ranked[0], ranked[1]) if len(ranked) > 1 and strength(ranked[0]) == strength(ranked[1]) \
            else None
        return ranked[0]

    def _buck_or_boost_clues(self, x_rail: str, other: str | None, sw: str, ground: str | None) -> list[Clue]:
        """The clues that tell a buck (input ``other``, output ``x_rail``) from a boost (input
        ``x_rail``, output ``other``) when the switches alone cannot (a synchronous pair, or
        switches inside an IC)."""
        nl = self.nl
        clues: list[Clue] = []
        if other is None:
            return clues
        own = self._own_parts(sw)
        # voltages in the rail names, compared as numbers: the inductor's far end is the lower
        # rail of a buck (its output) and of a boost (its input) alike, so the numbers check the
        # rails found rather than choose between the two
        vx, vo = rail_voltage(x_rail), rail_voltage(other)
        if vx is not None and vo is not None and abs(vx) != abs(vo):
            if abs(vx) < abs(vo):
                clues.append(Clue("either", 0.0, f"rail names: {other} {vo:g} V above {x_rail} (the inductor's far "
                                                 f"end) {vx:g} V, as in a buck from {other} or a boost to it"))
            else:
                clues.append(Clue("neither", 0.0, f"rail names: {x_rail} (the inductor's far end) {vx:g} V above "
                                                  f"{other} {vo:g} V: neither a buck nor a boost between them"))
        # a rail made by another stage is this stage's input
        produced = getattr(self, "_produced", {})
        for net, says in ((other, "buck"), (x_rail, "boost")):
            if net in produced and produced[net] != sw:
                clues.append(Clue(says, 2.0, f"{net} is the output of the stage at {produced[net]}: an input here"))
        # a rail nothing else can feed (only this stage's parts, capacitors, resistors) is an output
        for net, says in ((x_rail, "buck"), (other, "boost")):
            if not rail_sources(nl, net, own):
                clues.append(Clue(says, 2.0, f"nothing but this stage feeds {net}: it is the output"))
        # the feedback divider sits on the regulated output
        ics = [nl.parts[r] for r in sorted(own) if nl.parts[r].kind == "ic"]
        for net, says in ((x_rail, "buck"), (other, "boost")):
            div = next(((ic, d) for ic in ics for d in [feedback_divider(nl, net, ic, ground)] if d), None)
            if div:
                ic, (top, bottom) = div
                clues.append(Clue(says, 1.5, f"feedback divider {top.ref}/{bottom.ref} from {net} to "
                                             f"{ic.ref}: {net} is the regulated output"))
        # a bootstrap capacitor: a high-side N-channel switch, most often a buck's
        boot = bootstrap_caps(nl, sw)
        if boot:
            # a transistor pair already says a high-side N switch is there; an IC's BST pin less so
            pair = len(nl.on(sw, "transistor")) >= 2
            clues.append(Clue("buck", 0.5 if pair else 1.0,
                              f"bootstrap capacitor {boot[0].ref} from {sw} to an IC pin: a "
                              "high-side switch (a buck's, or a synchronous boost's rectifier)"))
        # usual names (a bare voltage such as "+12V" names no direction)
        def bare(n: str) -> bool:
            return bool(re.fullmatch(r"[+-]?\d+([.,]\d+)?V\d*(IN)?", re.split(r"[/:]", n)[-1], re.I))

        if INPUT_NAMES.search(other) and not OUTPUT_NAMES.search(other) and not bare(other):
            clues.append(Clue("buck", 1.5, f"net name {other!r} is a usual input name"))
        if OUTPUT_NAMES.search(x_rail):
            clues.append(Clue("buck", 1.5, f"net name {x_rail!r} is a usual output name"))
        if INPUT_NAMES.search(x_rail) and not OUTPUT_NAMES.search(x_rail) and not bare(x_rail):
            clues.append(Clue("boost", 1.5, f"net name {x_rail!r} is a usual input name"))
        if OUTPUT_NAMES.search(other):
            clues.append(Clue("boost", 1.5, f"net name {other!r} is a usual output name"))
        # connectors bring the input; other ICs hang on the output as loads (weak: both ways happen)
        cx, co = bool(power_connectors(nl, x_rail, ground)), bool(power_connectors(nl, other, ground))
        if cx != co:
            says = "boost" if cx else "buck"
            clues.append(Clue(says, 1.0, f"a connector or battery on {x_rail if cx else other} only: the input"))
        lx, lo = len(other_ics(nl, x_rail, own)), len(other_ics(nl, other, own))
        if lx != lo:
            says = "buck" if lx > lo else "boost"
            clues.append(Clue(says, 0.5, f"other ICs: {lx} on {x_rail}, {lo} on {other}: loads hang on the output"))
        return clues

    def _buck_or_boost(self, x_rail: str, other_rails: list[str], sw: str,
                       ground: str | None = None) -> tuple[str, str, float]:
        """A synchronous pair (or integrated switches) cannot tell buck from boost by topology:
        the operating point in the project file decides; else the clues are added up
        (:meth:`_buck_or_boost_clues`) and the confidence says by how much one side won."""
        other = other_rails[0] if other_rails else None
        op = self.project.operating_point or {}
        vout = op.get("vout_v")
        vin = op.get("vin_v")
        if isinstance(vout, (int, float)) and vin is not None:
            vmin = min(vin) if isinstance(vin, list) else vin
            vmax = max(vin) if isinstance(vin, list) else vin
            if vout > vmax:
                return "boost", f"vout_v {vout} above vin_v in loopcheck.toml", 0.9
            if vout < vmin:
                return "buck", f"vout_v {vout} below vin_v in loopcheck.toml", 0.9
        clues = self._buck_or_boost_clues(x_rail, other, sw, ground)
        buck = sum(c.weight for c in clues if c.says == "buck")
        boost = sum(c.weight for c in clues if c.says == "boost")
        why = "; ".join((f"{c.says} +{c.weight:g}: " if c.weight else "") + c.why for c in clues)
        if buck == boost:
            return "buck", ("assumed buck: a synchronous pair or switches inside an IC read the same as a "
                            "boost from the netlist" + (f" ({why})" if why else "")), 0.5
        topology = "buck" if buck > boost else "boost"
        conf = round(min(0.95, 0.5 + 0.1 * abs(buck - boost)), 2)
        return topology, f"clues {buck:g} buck / {boost:g} boost: {why}", conf

    def _decide(self, name: str, sw: str, inductor: Part, switching: str,
                fixed: dict[str, Any]) -> TopologyDecision:
        """The topology step of one stage: its switching elements, ground, topology, switch and
        rectifier, input and output rails (roles named in the project file win)."""
        nl = self.nl
        x_net = next(iter(inductor.nets - {sw}))
        x_rail, x_via = self._resolve_rail(x_net, {sw})
        elements = [self._element(p, sw) for p in nl.on(sw) if p.kind in ("transistor", "diode", "ic")
                    and p.ref != inductor.ref and (p.kind != "transistor" or len(p.nets) >= 2)]
        # a named switch or rectifier must be among them
        for key in ("switch", "rectifier"):
            if key in fixed and fixed[key] not in [e.part.ref for e in elements]:
                part = nl.parts[fixed[key]]
                kind = part.kind
                if kind not in ("transistor", "diode", "ic"):
                    # a part of unknown kind named as a switch: by its connections
                    kind = "transistor" if len(part.nets) >= 3 else "diode"
                    self.messages.append(f"{name}: {part.ref} (named {key}) taken as a {kind} from its "
                                         f"{len(part.nets)} connected nets")
                elements.append(self._element(part, sw, kind))
        transistors = [e for e in elements if e.kind == "transistor"]
        diodes = [e for e in elements if e.kind == "diode"]
        ics = [e for e in elements if e.kind == "ic"]
        if fixed.get("switch") and nl.parts[fixed["switch"]].kind == "ic":
            transistors = [e for e in transistors if e.part.ref == fixed.get("rectifier")]
        if transistors:
            # two transistors switch synchronously, also with a Schottky across the low side
            switching = "synchronous" if len(transistors) >= 2 else "discrete"
        elif ics:
            switching = "integrated"

        ic_rails: list[str] = []
        self._rail_tie = None
        if switching == "integrated":
            ic = ics[0].part
            # a bootstrap capacitor's IC pin is never a rail (it rides on the switch node)
            ic_rails = sorted(n for n in ic.nets - {sw} - bootstrap_nets(nl, sw) if nl.is_railish(n))
        rails = [x_rail] + [e.rail for e in transistors + diodes if e.rail] + ic_rails
        cathode_sides = set()
        for e in diodes:
            k, _ = self._diode_cathode(e.part)
            if k is not None and k != sw:
                cathode_sides.add(k)
        ground, g_conf, g_ev = self._ground_of(rails, fixed.get("ground_net"), cathode_sides,
                                               [e.part for e in ics])

        topology = fixed.get("topology")
        topo_ev = "named in loopcheck.toml" if topology else ""
        topo_conf = 1.0 if topology else 0.8
        switch_el: _Element | None = None
        rect_el: _Element | None = None
        input_net = output_net = None

        def by_ref(ref):
            return next((e for e in elements if e.part.ref == ref), None)

        on_ground = [e for e in transistors + diodes if e.rail == ground]
        off_ground = [e for e in transistors + diodes if e.rail != ground]
        # a low-side (floating) buck, common in LED drivers: switch from the switch node to ground,
        # diode up to the input, the load (and its capacitor) between the input and the inductor
        low_t = next((e for e in on_ground if e.kind == "transistor"), None)
        up_d = next((e for e in off_ground if e.kind == "diode"), None)
        across = (self._load_across(x_rail, up_d.rail, ground) if low_t is not None and up_d is not None
                  and ground != x_rail and topology in (None, "buck") else None)
        floating = across is not None
        self._floating, self._across = floating, across
        if switching in ("discrete", "synchronous"):
            if topology is None:
                if ground == x_rail:
                    topology, topo_ev = "buck-boost", f"the inductor returns to ground ({ground})"
                elif any(e.kind == "diode" for e in on_ground) and any(e.kind == "transistor" for e in off_ground):
                    d = next(e for e in on_ground if e.kind == "diode")
                    topology, topo_ev = "buck", f"diode {d.part.ref} from the switch node to ground"
                elif floating:
                    topology, topo_ev = "buck", (
                        f"low-side (floating) buck: transistor {low_t.part.ref} to ground, diode {up_d.part.ref} "
                        f"up to {up_d.rail}, the load capacitor between {across} and {x_rail}")
                elif any(e.kind == "transistor" for e in on_ground) and any(e.kind == "diode" for e in off_ground):
                    t = next(e for e in on_ground if e.kind == "transistor")
                    d = next(e for e in off_ground if e.kind == "diode")
                    topology, topo_ev = "boost", (f"transistor {t.part.ref} to ground and diode "
                                                  f"{d.part.ref} to the output")
                else:
                    topology, topo_ev, topo_conf = self._buck_or_boost(x_rail, [e.rail for e in off_ground], sw,
                                                                              ground)
            if topology == "buck" and floating:
                switch_el = by_ref(fixed["switch"]) if "switch" in fixed else low_t
                rect_el = by_ref(fixed["rectifier"]) if "rectifier" in fixed else up_d
                input_net = rect_el.rail if rect_el else None
                output_net = x_rail
            elif topology == "buck":
                switch_el = by_ref(fixed["switch"]) if "switch" in fixed else (
                    next((e for e in off_ground if e.kind == "transistor"), None))
                rect_el = by_ref(fixed["rectifier"]) if "rectifier" in fixed else (
                    next((e for e in on_ground if e is not switch_el), None))
                input_net = switch_el.rail if switch_el else None
                output_net = x_rail
            elif topology == "boost":
                switch_el = by_ref(fixed["switch"]) if "switch" in fixed else (
                    next((e for e in on_ground if e.kind == "transistor"), None))
                rect_el = by_ref(fixed["rectifier"]) if "rectifier" in fixed else (
                    next((e for e in off_ground if e is not switch_el), None))
                input_net = x_rail
                output_net = rect_el.rail if rect_el else None
            else:  # inverting buck-boost: switch SW-input, rectifier SW-output
                cands = [e for e in transistors + diodes if e.rail != ground]
                if "switch" in fixed:
                    switch_el = by_ref(fixed["switch"])
                else:
                    ts = [e for e in cands if e.kind == "transistor"]
                    if len(ts) == 1 or not ts:
                        switch_el = ts[0] if ts else None
                    else:
                        switch_el = max(ts, key=lambda e: self._input_likeness(e.rail))
                rect_el = by_ref(fixed["rectifier"]) if "rectifier" in fixed else (
                    next((e for e in cands if e is not switch_el), None))
                input_net = switch_el.rail if switch_el else None
                output_net = rect_el.rail if rect_el else None
        else:  # integrated
            ic_el = ics[0] if ics else None
            ext = diodes[0] if diodes else (transistors[0] if transistors else None)
            if "rectifier" in fixed:
                ext = by_ref(fixed["rectifier"])
            ic = ic_el.part if ic_el else None
            if topology is None:
                if ground == x_rail:
                    topology, topo_ev = "buck-boost", f"the inductor returns to ground ({ground})"
                elif ext is not None and ext.rail == ground:
                    topology, topo_ev = "buck", f"{ext.part.ref} from the switch node to ground"
                elif ext is not None and ext.rail is not None:
                    topology, topo_ev = "boost", f"{ext.part.ref} from the switch node to {ext.rail}"
                else:
                    power = self._power_rail(ic, [n for n in ic_rails if n not in (ground, x_rail)]) if ic else None
                    topology, topo_ev, topo_conf = self._buck_or_boost(x_rail, [power] if power else [], sw, ground)
            switch_el = ic_el
            if ext is not None and (ext.rail == ground or topology != "buck"):
                rect_el = ext
            else:
                rect_el = ic_el
            others = [n for n in ic_rails if n not in (ground, x_rail, sw)]
            power = self._power_rail(ic, others) if ic is not None else None
            if topology == "buck":
                output_net = x_rail
                input_net = fixed.get("input_net") or power
            elif topology == "boost":
                input_net = x_rail
                output_net = ext.rail if ext is not None and ext.rail else power
            else:
                input_net = power
                output_net = ext.rail if ext is not None else None
            if ic is not None and not diodes and rect_el is ic_el:
                topo_ev += "; switches inside the IC"
        input_net = fixed.get("input_net") or input_net
        output_net = fixed.get("output_net") or output_net

        return TopologyDecision(x_net=x_net, x_rail=x_rail, x_via=x_via, transistors=transistors, diodes=diodes, switching=switching,
                                ground=ground, g_conf=g_conf, g_ev=g_ev, topology=topology, topo_ev=topo_ev,
                                topo_conf=topo_conf, switch_el=switch_el, rect_el=rect_el, input_net=input_net, output_net=output_net)
