"""The detector: candidates -> topology -> roles -> loops for each stage, and the project file's
named stages matched to what was found."""

from __future__ import annotations

import re
from typing import Any

from ..board import Board
from ..powerstage import Role, Stage
from ..project import Project
from .loops import LoopsMixin
from .evidence import led_string_nets
from .netlist import GROUND_NAMES, SWITCH_NODE_NAMES, Netlist, Part
from .roles import _LIST_KEYS, _REF_KEYS, RolesMixin, _project_error, _validate_spec
from .topology import TopologyMixin


def _toml_key(name: str) -> str:
    return name if re.fullmatch(r"[A-Za-z0-9_-]+", name) else '"' + name.replace('"', '\\"') + '"'


class Detector(TopologyMixin, RolesMixin, LoopsMixin):
    def __init__(self, board: Board, project: Project, values: dict[str, str]):
        self.board = board
        self.project = project
        self.nl = Netlist(board, values)
        self.path = str(project.path) if project.path else None
        self.messages: list[str] = []
        self._produced: dict[str, str] = {}   # rail -> the switch node of the stage that makes it
        self._four_switch: list = []        # (inductor, [(net, kind, evidence), (net, ...)])
        self._floating = False           # the stage being built is a low-side (floating) buck
        self._across: str | None = None  # ... and its load capacitor's input-side net

    # -- one stage ----------------------------------------------------------------------------
    def build(self, name: str, sw: str, inductor: Part, switching: str, sw_evidence: list[str],
              fixed: dict[str, Any]) -> Stage:
        nl = self.nl
        missing: list[str] = []
        d = self._decide(name, sw, inductor, switching, fixed)
        (x_net, x_rail, x_via, transistors, diodes, switching, ground, g_conf,
         g_ev, topology, topo_ev, topo_conf, switch_el, rect_el, input_net, output_net) = (
            d.x_net, d.x_rail, d.x_via, d.transistors, d.diodes, d.switching, d.ground, d.g_conf,
            d.g_ev, d.topology, d.topo_ev, d.topo_conf, d.switch_el, d.rect_el, d.input_net, d.output_net)
        stage = Stage(name=name, topology=topology or "buck", switching=switching, switch_node=sw,
                      input_net=input_net, output_net=output_net, ground_net=ground)
        roles: list[Role] = []
        if "switch_node" in fixed:
            sw_evidence = ["named in loopcheck.toml"]

        # inductor
        roles.append(self._role("inductor", inductor, (inductor.terminals_on(sw) + inductor.terminals_on(x_net)),
                                0.9, f"inductor with one terminal on the switch node {sw}", fixed,
                                pins={"sw": inductor.terminals_on(sw), "other": inductor.terminals_on(x_net)}))
        # controller
        controller, c_ev, c_conf = self._controller(switching, switch_el, rect_el, fixed)
        # switch and rectifier
        if switch_el is not None:
            roles.append(self._switch_role("switch", switch_el, sw, stage, controller, fixed))
        else:
            missing.append("switch: no transistor or IC pin on the switch node fits the topology")
        if rect_el is not None:
            roles.append(self._switch_role("rectifier", rect_el, sw, stage, controller, fixed))
        else:
            missing.append("rectifier: no diode or second switch on the switch node")
        if controller is not None:
            roles.append(Role("controller", controller.ref, tuple(p.terminal for p in controller.pads),
                              c_conf, c_ev, pins=self._controller_pins(controller, stage, roles)))
        else:
            missing.append("controller: no IC drives the switch's gate")
        if ground is None:
            missing.append("ground: no rail with capacitor returns")
        if input_net is None:
            missing.append("input rail: cannot tell which rail feeds the switch")
        if output_net is None:
            missing.append("output rail")

        # capacitors
        switch_input_pads = self._switch_input_pads(switch_el, stage)
        named: set[str] = set()
        for key in _REF_KEYS + _LIST_KEYS:
            v = fixed.get(key)
            named |= set(v) if isinstance(v, list) else ({v} if v else set())
        in_caps = self._caps("input_caps", input_net, ground, switch_input_pads, fixed, exclude=named,
                             what="the switch")
        for i, (cap, conf, ev) in enumerate(in_caps):
            roles.append(Role("input_cap", cap.ref, cap.terminals_on(input_net) + cap.terminals_on(ground),
                              conf, ev))
        if not in_caps and input_net and ground:
            missing.append(f"input capacitor: no capacitor between {input_net} and {ground}")
        out_ref_pads = (rect_el.part.pads_on(rect_el.rail) if (topology != "buck" and rect_el is not None
                        and rect_el.rail) else inductor.pads_on(x_net))
        # a floating buck's load capacitor sits across the load, from the output to the input side
        out_return = self._across if self._floating else ground
        out_caps = self._caps("output_caps", output_net, out_return, out_ref_pads, fixed,
                              exclude=named | {c.ref for c, _, _ in in_caps},
                              what="the rectifier" if topology != "buck" else "the inductor")
        for cap, conf, ev in out_caps:
            roles.append(Role("output_cap", cap.ref, cap.terminals_on(output_net) + cap.terminals_on(out_return),
                              conf, ev))
        if not out_caps and output_net and out_return:
            missing.append(f"output capacitor: no capacitor between {output_net} and {out_return}")

        # sense resistor
        power_nets = {n for n in [x_net, x_rail, input_net, output_net, ground, self._across] if n}
        for e in transistors + diodes:
            power_nets |= {n for n in (e.rail, e.rail_pin_net) if n}
        # an LED string carries the output current: the nets along it are power nets too
        power_nets |= led_string_nets(nl, [n for n in (output_net, input_net) if n])
        series = [v for v in [x_via] + [e.rail_via for e in transistors + diodes] if v is not None]
        sense = self._sense(controller, power_nets, series, fixed, stage, exclude=named)
        if sense is not None:
            roles.append(sense)
        # controller decoupling
        taken = {r.ref for r in roles if r.name not in ("input_cap", "output_cap")} | (
            named - set(fixed.get("input_caps", [])) - set(fixed.get("output_caps", [])))
        dec = self._decoupling(controller, stage, fixed, taken)
        if dec is not None:
            roles.append(dec)
        elif controller is not None:
            missing.append(f"controller decoupling: no capacitor from a {controller.ref} pin to {ground}")

        stage.roles = roles
        stage.missing = missing
        stage.hot_loop = self._hot_loop(stage, switch_el, rect_el, roles, sense)
        if not stage.hot_loop:
            stage.missing.append("hot loop: needs the switch, the rectifier and a "
                                 + ("output" if topology == "boost" else "input") + " capacitor")
        core = [r.confidence for r in roles if r.name in ("switch", "rectifier", "inductor")]
        conf = min(core + [g_conf if ground else 0.0, topo_conf]) if core else 0.0
        # usual names raise confidence a little; they are never needed
        if conf and SWITCH_NODE_NAMES.search(sw):
            conf += 0.05
        if conf and ground and GROUND_NAMES.match(ground):
            conf += 0.05
        stage.confidence = round(min(conf, 1.0), 2)
        stage.evidence = sw_evidence + ([f"topology {stage.topology}: {topo_ev}"] if topo_ev else [])
        if ground and g_ev:
            stage.evidence.append(f"ground {ground}: {'; '.join(g_ev)}")
        stage_ev = "; ".join(stage.evidence)
        self.messages.append(f"{name}: {stage.topology} ({switching}) at switch node {sw}: {stage_ev}")
        self._mark_unsure(stage, inductor, topo_conf, g_conf, fixed)
        return stage

    # what rests on weak evidence: below this confidence a topology or ground is "unsure"
    SURE = 0.7

    def _mark_unsure(self, stage: Stage, inductor: Part, topo_conf: float, g_conf: float,
                     fixed: dict[str, Any]) -> None:
        """Name what rests on weak evidence and the project-file lines that would settle it."""
        unsure = []
        if "topology" not in fixed and topo_conf < self.SURE:
            unsure.append(f"topology {stage.topology} rests on weak evidence (confidence {topo_conf:.2f})")
        if "ground_net" not in fixed and stage.ground_net and g_conf < self.SURE:
            unsure.append(f"ground {stage.ground_net} rests on weak evidence (confidence {g_conf:.2f})")
        tie = getattr(self, "_rail_tie", None)
        if tie and stage.switching == "integrated" and not ({"input_net", "output_net"} & set(fixed)):
            which = "input" if stage.topology != "boost" else "output"
            unsure.append(f"{which} rail {tie[0]} rests on weak evidence: {inductor.ref}'s IC holds {tie[1]} "
                          "alike (pins, pad area, what feeds it)")
        if not unsure and stage.confidence < 0.6:
            unsure.append(f"stage confidence {stage.confidence:.2f}")
        if not unsure:
            return
        stage.unsure = unsure
        lines = [f"[stages.{_toml_key(stage.name)}]", f'topology = "{stage.topology}"',
                 f'switch_node = "{stage.switch_node}"', f'inductor = "{inductor.ref}"']
        for key in ("input_net", "output_net", "ground_net"):
            v = getattr(stage, key)
            if v:
                lines.append(f'{key} = "{v}"')
        stage.confirm_lines = lines
        self.messages.append(stage.unsure_text())

    def build_unmeasured(self, name: str, t: Part, topology: str, sw: str, switches: list[Part],
                         series: list[Part], evidence: list[str]) -> Stage:
        """A transformer stage, listed with its parts and marked not measured."""
        nl = self.nl
        kinds = {p.kind for p in switches}
        switching = ("integrated" if kinds == {"ic"} else "synchronous" if len(switches) >= 2 else "discrete")
        rails = sorted({n for p in switches for n in p.nets if n != sw and nl.is_railish(n)})
        ground, _, _ = self._ground_of(rails, None)
        stage = Stage(name=name, topology=topology, switching=switching, switch_node=sw, input_net=None,
                      output_net=None, ground_net=ground, confidence=0.8)
        power = [p for p in switches if p.kind != "ic"] or switches[:1]
        for i, p in enumerate(power):
            stage.roles.append(Role("switch" if i == 0 else "rectifier", p.ref, p.terminals_on(sw), 0.8,
                                    f"{p.ref} has a pin on {sw}"))
        for p in switches:
            if p not in power:
                stage.roles.append(Role("controller", p.ref, tuple(q.terminal for q in p.pads), 0.7,
                                        f"{p.ref} has a pin on {sw} (its driver's reference)"))
        if t.kind == "transformer":
            stage.roles.append(Role("transformer", t.ref, tuple(q.terminal for q in t.pads), 0.9,
                                    f"transformer {t.ref} (T prefix) with a winding on the switching side"))
        else:
            stage.roles.append(Role("inductor", t.ref, tuple(q.terminal for q in t.pads), 0.9,
                                    f"inductor {t.ref} between two switch nodes"))
        for p in series:
            stage.roles.append(Role("inductor" if p.kind == "inductor" else "output_cap", p.ref,
                                    tuple(q.terminal for q in p.pads), 0.7,
                                    f"{p.ref} in series between {sw} and {t.ref}: the resonant tank"))
        stage.evidence = list(evidence)
        words = {"four-switch": "four-switch buck-boost"}.get(topology, topology)
        stage.not_measured = (f"a {words} stage: loopcheck measures buck, boost and buck-boost stages only; "
                              f"its parts are listed ({', '.join(r.ref for r in stage.roles)}), its loops and "
                              "current paths were not measured")
        self.messages.append(f"{name}: {topology} ({switching}) at {sw}: {'; '.join(evidence)}; not measured")
        return stage

    def run(self) -> list[Stage]:
        nl = self.nl
        specs = list(self.project.stages)
        fixed_by_spec = {s.name: _validate_spec(s, nl, self.project) for s in specs}
        cands = self.candidates()
        stages: list[Stage] = []
        used_specs: set[str] = set()
        # match each spec to a candidate, or build one from its named roles
        assigned: dict[int, str] = {}
        for spec in specs:
            f = fixed_by_spec[spec.name]
            for i, (sw, ind, kind, score, ev) in enumerate(cands):
                if i in assigned:
                    continue
                if (f.get("switch_node") == sw or f.get("inductor") == ind.ref
                        or any(f.get(k) and f.get(k) in [p.ref for p in nl.on(sw)] for k in ("switch", "rectifier"))):
                    assigned[i] = spec.name
                    break
        # specs with no identifying role: by name ("stage1") or, with one of each, to the one found
        unassigned_specs = [s for s in specs if s.name not in assigned.values()]
        free = [i for i in range(len(cands)) if i not in assigned]
        for spec in list(unassigned_specs):
            f = fixed_by_spec[spec.name]
            if any(k in f for k in ("switch_node", "inductor", "switch", "rectifier")):
                continue
            idx = None
            for i in free:
                if f"stage{i + 1}" == spec.name:
                    idx = i
            if idx is None and len(free) == 1 and len(unassigned_specs) == 1:
                idx = free[0]
            if idx is not None:
                assigned[idx] = spec.name
                free.remove(idx)
                unassigned_specs.remove(spec)
        def build_all() -> list[Stage]:
            out = []
            for i, (sw, ind, kind, score, ev) in enumerate(cands):
                name = assigned.get(i, f"stage{i + 1}")
                fixed = fixed_by_spec.get(name, {}) if i in assigned else {}
                if "switch_node" in fixed:
                    sw = fixed["switch_node"]
                if "inductor" in fixed:
                    ind = nl.parts[fixed["inductor"]]
                out.append(self.build(name, sw, ind, kind, ev, fixed))
                used_specs.add(name)
            return out

        if len(cands) > 1:
            # two passes: a rail that one stage surely makes is an input to the others
            # (evidence.rail_sources and the "output of another stage" clue)
            keep = len(self.messages)
            first = build_all()
            del self.messages[keep:]
            self._produced = {st.output_net: st.switch_node for st in first
                              if st.output_net and not st.unsure}
        stages += build_all()
        for spec in unassigned_specs:
            f = fixed_by_spec[spec.name]
            sw, ind = f.get("switch_node"), f.get("inductor")
            ind_part = nl.parts[ind] if ind else None
            if sw is None and ind_part is not None:
                for key in ("switch", "rectifier"):
                    if f.get(key):
                        common = ind_part.nets & nl.parts[f[key]].nets
                        if common:
                            sw = sorted(common)[0]
            if ind_part is None and sw is not None:
                inds = nl.on(sw, "inductor")
                if not inds:
                    raise _project_error(self.project, f"stages.{spec.name}.switch_node",
                                         f"stages.{spec.name}.switch_node: net {sw!r} joins no inductor "
                                         "(name the inductor too)")
                ind_part = inds[0]
            if sw is None or ind_part is None:
                self.messages.append(
                    f"[stages.{spec.name}] in loopcheck.toml matches no stage found on the board; name its "
                    "switch_node and inductor to define it")
                continue
            if sw not in ind_part.nets:
                raise _project_error(self.project, f"stages.{spec.name}.switch_node",
                                     f"stages.{spec.name}.switch_node: net {sw!r} does not touch the inductor "
                                     f"{ind_part.ref}")
            stages.append(self.build(spec.name, sw, ind_part, "", ["named in loopcheck.toml"], f))
        taken = {s.name for s in stages}
        n = len(stages)
        for t, topology, sw, switches, series, ev in self.isolated_candidates():
            if any(s.switch_node == sw for s in stages):
                continue
            n += 1
            while f"stage{n}" in taken:
                n += 1
            stages.append(self.build_unmeasured(f"stage{n}", t, topology, sw, switches, series, ev))
        for ind, ends in self._four_switch:
            n += 1
            while f"stage{n}" in taken:
                n += 1
            (sw_a, _, ev_a), (sw_b, _, _) = ends
            switches = [p for net in (sw_a, sw_b) for p in nl.on(net) if p.kind in ("transistor", "ic")]
            switches = list({p.ref: p for p in switches}.values())
            stages.append(self.build_unmeasured(
                f"stage{n}", ind, "four-switch", sw_a, switches, [],
                ev_a + [f"{ind.ref} joins two switch nodes ({sw_a}, {sw_b}): a four-switch buck-boost"]))
        return stages

