"""Roles: the switch, rectifier, controller, capacitors, sense resistor and controller decoupling
of a stage, each with its terminals, confidence and evidence; and the roles a project file names,
checked against the board."""

from __future__ import annotations

import math
import re
from typing import Any

from ..board import Pad
from ..errors import InputError
from ..powerstage import Role, Stage
from ..project import STAGE_NET_KEYS, STAGE_REF_KEYS, STAGE_REF_LIST_KEYS, TOPOLOGIES, Project
from .evidence import bootstrap_caps
from .netlist import SUPPLY_NAMES, Netlist, Part, _min_dist
from .topology import _Element

# --------------------------------------------------------------------------------------------
# Project-file roles

def _project_error(project: Project, dotted: str, message: str) -> InputError:
    """An InputError naming the project file, the key and, where it is known, its line."""
    return project.key_error(dotted, message)


# the [stages.NAME] keys as loopcheck.project defines them (one list, there)
_REF_KEYS = STAGE_REF_KEYS
_LIST_KEYS = STAGE_REF_LIST_KEYS
_NET_KEYS = STAGE_NET_KEYS
_ROLE_KEYS = _REF_KEYS + _LIST_KEYS + _NET_KEYS + ("topology",)


def _validate_spec(spec, nl: Netlist, project: Project) -> dict[str, Any]:
    """The spec's roles, checked against the board; contradictions are an InputError naming the key."""
    roles = dict(spec.roles or {})
    prefix = f"stages.{spec.name}"
    seen: dict[str, str] = {}
    # a switch inside the controller IC is named as both switch and controller (and rectifier)
    shareable = {"switch", "rectifier", "controller"}
    for key, value in roles.items():
        full = f"{prefix}.{key}"
        if key not in _ROLE_KEYS:
            raise _project_error(project, full, f"unknown key {full}")
        if key == "topology":
            if value not in TOPOLOGIES:
                raise _project_error(project, full, f"{full}: expected one of {', '.join(TOPOLOGIES)}, got {value!r}")
            continue
        if key in _NET_KEYS:
            if not isinstance(value, str):
                raise _project_error(project, full, f"{full}: expected a net name")
            if value not in nl.board.nets:
                raise _project_error(project, full, f"{full}: no net {value!r} on the board")
            continue
        refs = value if key in _LIST_KEYS else [value]
        if key in _LIST_KEYS and not isinstance(value, list):
            raise _project_error(project, full, f"{full}: expected a list of references")
        for ref in refs:
            if not isinstance(ref, str):
                raise _project_error(project, full, f"{full}: expected a reference designator, got {ref!r}")
            if ref not in nl.parts:
                raise _project_error(project, full, f"{full}: no component {ref!r} on the board")
            if ref in seen and not (key in shareable and seen[ref] in shareable and nl.parts[ref].kind == "ic"):
                raise _project_error(project, full, f"{full}: {ref} is already named as {prefix}.{seen[ref]}")
            seen.setdefault(ref, key)
    if "inductor" in roles and len(nl.parts[roles["inductor"]].nets) != 2:
        raise _project_error(project, f"{prefix}.inductor",
                             f"{prefix}.inductor: {roles['inductor']} has {len(nl.parts[roles['inductor']].nets)} "
                             "connected nets; an inductor has two")
    sw = roles.get("switch_node")
    if sw is not None and "inductor" in roles:
        if sw not in nl.parts[roles["inductor"]].nets:
            raise _project_error(project, f"{prefix}.switch_node",
                                 f"{prefix}.switch_node: net {sw!r} does not touch the inductor "
                                 f"{roles['inductor']} (its nets: "
                                 f"{', '.join(sorted(nl.parts[roles['inductor']].nets))})")
    if sw is not None:
        for key in ("switch", "rectifier"):
            if key in roles and sw not in nl.parts[roles[key]].nets:
                raise _project_error(project, f"{prefix}.{key}",
                                     f"{prefix}.{key}: {roles[key]} has no pin on the switch node {sw!r}")
    if sw is not None:
        for key in ("input_net", "output_net", "ground_net"):
            if roles.get(key) == sw:
                raise _project_error(project, f"{prefix}.{key}",
                                     f"{prefix}.{key}: {sw!r} is already named as {prefix}.switch_node")
    return roles


class RolesMixin:
    """Role finding (mixed into the Detector)."""

    def _role(self, name, part, terminals, conf, ev, fixed, pins=None) -> Role:
        key = {"input_cap": "input_caps", "output_cap": "output_caps"}.get(name, name)
        if key in fixed:
            conf, ev = 1.0, "named in loopcheck.toml"
        return Role(name, part.ref, tuple(terminals), conf, ev, pins=pins or {})

    def _controller(self, switching, switch_el, rect_el, fixed) -> tuple[Part | None, str, float]:
        nl = self.nl
        if "controller" in fixed:
            return nl.parts[fixed["controller"]], "named in loopcheck.toml", 1.0
        if switching == "integrated" and switch_el is not None and switch_el.kind == "ic":
            return switch_el.part, f"{switch_el.part.ref} holds the switch (its pins on the switch node)", 0.9
        for el in (switch_el, rect_el):
            if el is None or el.gate_net is None:
                continue
            ics = nl.on(el.gate_net, "ic")
            if ics:
                return ics[0], f"{ics[0].ref} pin drives the gate of {el.part.ref} (net {el.gate_net})", 0.9
            for r in nl.on(el.gate_net, "resistor"):
                for n in r.nets - {el.gate_net}:
                    ics = nl.on(n, "ic")
                    if ics:
                        return ics[0], (f"{ics[0].ref} drives the gate of {el.part.ref} through "
                                        f"{r.ref}"), 0.85
        return None, "", 0.0

    def _switch_input_pads(self, switch_el: _Element | None, stage: Stage) -> list[Pad]:
        if switch_el is None:
            return []
        net = stage.input_net if stage.topology != "boost" else stage.output_net
        if switch_el.kind == "ic":
            return switch_el.part.pads_on(net) if net else []
        if stage.topology == "boost" or self._floating:
            return switch_el.sw_pads
        return switch_el.part.pads_on(switch_el.rail_pin_net) if switch_el.rail_pin_net else []

    def _caps(self, key, rail, ground, ref_pads, fixed, exclude, what="the switch") -> list[tuple[Part, float, str]]:
        nl = self.nl
        if not rail or not ground:
            return []
        if key in fixed:
            return [(nl.parts[r], 1.0, "named in loopcheck.toml") for r in fixed[key]]
        caps = [c for c in nl.caps_between(rail, ground) if c.ref not in exclude]
        out = []
        for c in sorted(caps, key=lambda c: (_min_dist(c.pads, ref_pads), c.ref)):
            d = _min_dist(c.pads, ref_pads)
            where = f", {d:.1f} mm straight line from {what}" if math.isfinite(d) else ""
            out.append((c, 0.9, f"capacitor between {rail} and {ground}{where}"))
        return out

    def _switch_role(self, name: str, el: _Element, sw: str, stage: Stage, controller: Part | None,
                     fixed: dict[str, Any]) -> Role:
        part = el.part
        pins: dict[str, tuple[str, ...]] = {}
        ev = list(el.evidence)
        conf = el.confidence
        if el.kind == "ic":
            rail = (stage.input_net if name == "switch" and stage.topology != "boost" else
                    stage.output_net if name == "rectifier" and stage.topology != "buck" else stage.ground_net)
            if name == "switch" and stage.topology == "boost":
                rail = stage.ground_net
            pins = {"sw": part.terminals_on(sw)}
            if stage.input_net:
                pins["vin"] = part.terminals_on(stage.input_net)
            if stage.ground_net:
                pins["gnd"] = part.terminals_on(stage.ground_net)
            if stage.output_net and part.terminals_on(stage.output_net):
                pins["vout"] = part.terminals_on(stage.output_net)
            terms = (part.terminals_on(rail) if rail else ()) + part.terminals_on(sw)
            if name == "rectifier":
                terms = part.terminals_on(sw) + (part.terminals_on(rail) if rail else ())
            ev.append(f"{part.ref} pins on the switch node: the {'switch' if name == 'switch' else 'rectifier'}"
                      " is inside the IC")
            conf = 0.85
        elif el.kind == "diode":
            conf = 0.9
            other = el.rail_pin_net
            cathode_on_sw = stage.topology in ("buck", "buck-boost") and not self._floating
            k_net, a_net = (sw, other) if cathode_on_sw else (other, sw)
            pins = {"cathode": part.terminals_on(k_net), "anode": part.terminals_on(a_net)}
            diode_names = {"K": "K", "C": "K", "CATHODE": "K", "KA": "K", "CA": "K",
                           "A": "A", "AN": "A", "ANODE": "A"}
            named = {diode_names[p.pin.upper()]: p for p in part.pads if p.pin.upper() in diode_names}
            if named:
                wrong = [p for key, p in named.items() if p.net != (k_net if key == "K" else a_net)]
                if wrong:
                    p = wrong[0]
                    what = "cathode" if diode_names[p.pin.upper()] == "K" else "anode"
                    self.messages.append(
                        f"{stage.name}: diode {part.ref} pin {p.pin} is named {what} but the {stage.topology} "
                        f"topology puts the cathode on {k_net}: check the part's orientation")
                    conf = 0.6
                else:
                    ev.append(f"{part.ref} pin names agree: cathode on {k_net}")
            else:
                pin1 = next((p for p in part.pads if p.pin == "1"), None)
                if pin1 is not None and pin1.net == k_net:
                    ev.append(f"{part.ref} cathode on {k_net} ({stage.topology} topology; agrees with the "
                              "pin 1 = cathode convention)")
                else:
                    ev.append(f"{part.ref} cathode on {k_net} from the {stage.topology} topology (the pin 1 = "
                              "cathode convention would say otherwise)")
            terms = pins["cathode"] + pins["anode"] if cathode_on_sw else pins["anode"] + pins["cathode"]
            # hot-loop order: the switch-node terminal first for a rectifier
            terms = part.terminals_on(sw) + part.terminals_on(other)
            ev.insert(0, f"diode from the switch node {sw} to {el.rail}")
        else:  # transistor
            other = el.rail_pin_net
            # high side: the buck's and inverting buck-boost's switch (from the input), the boost's
            # rectifier (up to the output); an inverting rectifier sits below the switch node
            high_side = (name == "switch" and stage.topology != "boost" and not self._floating) or (
                name == "rectifier" and stage.topology == "boost")
            channel, ch_ev = self._channel(part, sw, stage, high_side, controller)
            ev.append(ch_ev)
            if channel == "P":
                # P-channel high side: source on the rail, drain on the switch node
                s_net, d_net = (other, sw) if high_side else (sw, other)
            else:
                s_net, d_net = (sw, other) if high_side else (other, sw)
            pins = {"source": part.terminals_on(s_net), "drain": part.terminals_on(d_net)}
            if el.gate_net:
                pins["gate"] = part.terminals_on(el.gate_net)
            named = {self._pin_name(p.pin): p.net for p in part.pads}
            if "S" in named and "D" in named and (named["S"] != s_net or named["D"] != d_net):
                s_net2, d_net2 = named["S"], named["D"]
                pins["source"], pins["drain"] = part.terminals_on(s_net2), part.terminals_on(d_net2)
                ev.append(f"{part.ref} pin names S/D used")
            if name == "switch" and stage.topology != "boost":
                terms = part.terminals_on(other) + part.terminals_on(sw)     # input side first
            else:
                terms = part.terminals_on(sw) + part.terminals_on(other)     # switch node first
            ev.insert(0, f"transistor from the switch node {sw} to {el.rail}")
            conf = 0.9
        key = name
        if key in fixed:
            conf, ev = 1.0, ["named in loopcheck.toml"] + ev
        return Role(name, part.ref, terms, conf, "; ".join(e for e in ev if e), pins=pins)

    def _channel(self, part: Part, sw: str, stage: Stage, high_side: bool,
                 controller: Part | None) -> tuple[str, str]:
        v = (part.value or "").upper()
        if re.search(r"P-?CH|PMOS|PFET|P-?CHANNEL|\bPNP\b", v):
            return "P", f"{part.ref} value {part.value!r} says P-channel"
        if re.search(r"N-?CH|NMOS|NFET|N-?CHANNEL|\bNPN\b", v):
            return "N", f"{part.ref} value {part.value!r} says N-channel"
        if not high_side:
            return "N", f"{part.ref} low side: assumed N-channel"
        boot = bootstrap_caps(self.nl, sw)
        if boot:
            return "N", f"{part.ref} high side with bootstrap capacitor {boot[0].ref}: N-channel"
        if stage.switching == "discrete":
            return "P", f"{part.ref} high side with no bootstrap capacitor: assumed P-channel"
        return "N", f"{part.ref} high side: assumed N-channel"

    def _controller_pins(self, ic: Part, stage: Stage, roles: list[Role]) -> dict[str, tuple[str, ...]]:
        pins: dict[str, tuple[str, ...]] = {}
        gate_terms = []
        for r in roles:
            if r.name in ("switch", "rectifier") and "gate" in r.pins:
                gate_net = self.board.terminals[r.pins["gate"][0]].net
                t = ic.terminals_on(gate_net)
                if not t:
                    for res in self.nl.on(gate_net, "resistor"):
                        for n in res.nets - {gate_net}:
                            t = t or ic.terminals_on(n)
                gate_terms += list(t)
        if gate_terms:
            pins["gate"] = tuple(gate_terms)
        for key, net in (("vin", stage.input_net), ("gnd", stage.ground_net), ("sw", stage.switch_node),
                         ("vout", stage.output_net)):
            if net and ic.terminals_on(net):
                pins[key] = ic.terminals_on(net)
        return pins

    def _sense(self, controller: Part | None, power_nets: set[str], series: list[Part],
               fixed: dict[str, Any], stage: Stage, exclude: set[str] = frozenset()) -> Role | None:
        nl = self.nl
        if "sense_resistor" in fixed:
            r = nl.parts[fixed["sense_resistor"]]
            return self._sense_role(r, controller, 1.0, ["named in loopcheck.toml"], stage)
        if controller is None:
            return None
        best = None
        # the sense resistor lies in the power path (both its nets power nets) and each of its
        # nets reaches a controller pin, directly or through one series resistor (the RC filter
        # of a peak-current-mode controller's sense input)
        near = {r.ref: r for net in sorted(power_nets) for r in nl.on(net, "resistor")}
        for r in sorted(near.values(), key=lambda p: p.ref):
            if len(r.nets) != 2 or r.ref in exclude:
                continue
            a, b = sorted(r.nets)
            if not (a in power_nets and b in power_nets):
                continue
            reach = {n: self._sense_reach(controller, r, n, power_nets) for n in (a, b)}
            if not all(reach.values()):
                continue
            filters = {n: f for n, (_, f) in reach.items() if f is not None}
            conf, ev = 0.7, [f"resistor in the power path between {a} and {b}, both nets reach "
                             f"{controller.ref} pins"]
            for n, f in filters.items():
                ev.append(f"{n} reaches {controller.ref} through {f.ref} (an RC filter on the sense input)")
            if r in series:
                conf += 0.15
                ev.append("in series with the inductor or switch")
            v = r.value_si
            if v is not None:
                if v <= 1.0:
                    conf += 0.1
                    ev.append(f"value {r.value} is a sense-resistor value")
                elif v <= 10.0:
                    ev.append(f"value {r.value} suits a low-current (LED string) sense resistor")
                else:
                    conf -= 0.4
                    ev.append(f"value {r.value} is high for a sense resistor")
                for f in filters.values():
                    fv = f.value_si
                    if fv is not None and v is not None and fv <= v:
                        conf -= 0.2
                        ev.append(f"the filter resistor {f.ref} ({f.value}) is not larger than it")
            if r.ref.upper().startswith("RS"):
                conf += 0.05
            cand = (min(conf, 1.0), r, ev, {n: t for n, (t, _) in reach.items()}, filters)
            if best is None or cand[0] > best[0]:
                best = cand
        if best is None or best[0] < 0.5:
            return None
        role = self._sense_role(best[1], controller, round(best[0], 2), best[2], stage, reach=best[3])
        if best[4]:
            role.pins["filter"] = tuple(t for f in best[4].values() for t in (p.terminal for p in f.pads))
        return role

    def _sense_reach(self, controller: Part, r: Part, net: str,
                     power_nets: set[str]) -> tuple[tuple[str, ...], Part | None] | None:
        """How ``net`` (one end of a sense-resistor candidate) reaches the controller: its pins on
        the net, else through one series resistor to a signal net with a controller pin. None: not."""
        direct = controller.terminals_on(net)
        if direct:
            return direct, None
        for f in self.nl.on(net, "resistor"):
            if f is r or len(f.nets) != 2:
                continue
            m = next(iter(f.nets - {net}))
            if m in power_nets:
                continue
            t = controller.terminals_on(m)
            if t:
                return t, f
        return None

    def _sense_role(self, r: Part, controller: Part | None, conf: float, ev: list[str],
                    stage: Stage | None = None, reach: dict[str, tuple[str, ...]] | None = None) -> Role:
        a, b = sorted(r.nets)
        # order: the end the current enters first (sense+): the input rail before anything, the
        # inductor side before the output, anything before ground
        ind = [p for p in self.nl.parts.values() if p.kind == "inductor"]

        def rank(net):
            if stage is not None and net == stage.input_net:
                return 0
            if stage is not None and net == stage.ground_net:
                return 3
            if any(net in i.nets for i in ind):
                return 1
            return 2

        if rank(b) < rank(a):
            a, b = b, a
        pins = {"sense+": (), "sense-": ()}
        if controller is not None:
            reach = reach or {}
            pins = {"sense+": reach.get(a) or controller.terminals_on(a),
                    "sense-": reach.get(b) or controller.terminals_on(b)}
        return Role("sense_resistor", r.ref, r.terminals_on(a) + r.terminals_on(b), conf, "; ".join(ev),
                    pins=pins)

    def _decoupling(self, controller: Part | None, stage: Stage, fixed, taken: set[str]) -> Role | None:
        nl = self.nl
        g = stage.ground_net
        if "controller_decoupling" in fixed:
            c = nl.parts[fixed["controller_decoupling"]]
            net = next(iter(c.nets - {g}), None) if g in c.nets else None
            pins = {"supply": controller.terminals_on(net)} if controller is not None and net else {}
            return Role("controller_decoupling", c.ref, c.terminals_on(net) + c.terminals_on(g) if net else
                        tuple(p.terminal for p in c.pads), 1.0, "named in loopcheck.toml", pins=pins)
        if controller is None or g is None:
            return None
        cands = []
        for net in sorted(controller.nets - {g, stage.switch_node}):
            for c in nl.caps_between(net, g):
                if c.ref in taken:
                    continue
                pin_pads = controller.pads_on(net)
                d = _min_dist(c.pads, pin_pads)
                v = c.value_si
                dedicated = net not in (stage.input_net, stage.output_net)
                named_supply = bool(SUPPLY_NAMES.search(net))
                score = (
                    dedicated,                      # a pin of its own (VCC/VDD), not a rail
                    dedicated and named_supply,
                    net == stage.input_net,         # else the controller runs from the input rail
                    v is None or v >= 100e-9,
                    -d,
                )
                ev = f"capacitor from {controller.ref} pin(s) on {net} to {g}, {d:.1f} mm from the pin"
                if dedicated and named_supply:
                    ev += f"; net name {net!r} is a usual supply name"
                if not dedicated:
                    ev += f"; no supply pin of its own: the capacitor on the {net} rail nearest the pin"
                cands.append((score, c, net, ev))
        if not cands:
            return None
        score, c, net, ev = max(cands, key=lambda t: (t[0], t[1].ref))
        conf = 0.5 + 0.25 * score[0] + 0.15 * score[1]
        return Role("controller_decoupling", c.ref, c.terminals_on(net) + c.terminals_on(g), round(conf, 2), ev,
                    pins={"supply": controller.terminals_on(net)})
