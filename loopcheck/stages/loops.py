"""Loops: the ordered terminals of a stage's high di/dt loop (closed: the last joins the first)."""

from __future__ import annotations

from ..board import Pad
from ..powerstage import Role, Stage
from .netlist import _nearest
from .topology import _Element


class LoopsMixin:
    """The hot loop (mixed into the Detector)."""

    def _hot_loop(self, stage: Stage, switch_el, rect_el, roles: list[Role], sense: Role | None) -> tuple[str, ...]:
        """Ordered terminals of the high di/dt loop (closed: the last joins the first)."""
        board = self.board
        caps = [r for r in roles if r.name == ("output_cap" if stage.topology == "boost" else "input_cap")]
        sw_role = next((r for r in roles if r.name == "switch"), None)
        rect_role = next((r for r in roles if r.name == "rectifier"), None)
        if not caps or sw_role is None or rect_role is None:
            return ()
        cap = self.nl.parts[caps[0].ref]
        g = stage.ground_net
        sw = stage.switch_node
        rail = stage.output_net if stage.topology == "boost" else stage.input_net
        if rail is None or g is None:
            return ()

        def pads(terms):
            return [board.terminals[t] for t in terms]

        def near(terms, ref_pads):
            p = _nearest(pads(terms), ref_pads)
            return p.terminal if p else None

        def series_terms(el: _Element | None, toward: list[Pad]) -> list[str]:
            """A series resistor between an element's pin and its rail, in path order."""
            if el is None or el.rail_via is None:
                return []
            r = el.rail_via
            return [t for t in (near(r.terminals_on(el.rail_pin_net), toward),
                                near(r.terminals_on(el.rail), toward)) if t]

        cap_rail = cap.pads_on(rail)
        cap_gnd = cap.pads_on(g)
        loop: list[str] = [near(cap.terminals_on(rail), [])]
        if switch_el is not None and switch_el.kind == "ic" and rect_el is switch_el:
            # switches inside the IC: cap to the IC's rail pins, the IC's ground pins, back
            ic = switch_el.part
            a = near(ic.terminals_on(rail), cap_rail)
            b = near(ic.terminals_on(g), cap_gnd)
            if a is None or b is None:
                return ()
            return tuple([loop[0], a, b, near(cap.terminals_on(g), [])])

        def el_terms(role: Role, el: _Element, from_sw: bool) -> list[str]:
            """The element's two loop terminals in path order."""
            if el.kind == "ic":
                rail_net = {"switch": rail if stage.topology != "boost" else g,
                            "rectifier": g if stage.topology == "buck" else stage.output_net}[role.name]
                r_t = near(el.part.terminals_on(rail_net), cap_rail if rail_net == rail else cap_gnd) \
                    if rail_net else None
                s_t = near(el.part.terminals_on(sw), [])
                return [t for t in ((s_t, r_t) if from_sw else (r_t, s_t)) if t]
            sw_pads = el.part.pads_on(sw)
            other_pads = el.part.pads_on(el.rail_pin_net)
            s_t = _nearest(sw_pads, []).terminal
            o_t = _nearest(other_pads, cap_rail + cap_gnd).terminal
            return [s_t, o_t] if from_sw else [o_t, s_t]

        if stage.topology == "buck" and self._floating:
            # input cap + -> diode (input side, switch-node side) -> low-side switch -> ground -> cap -
            loop += series_terms(rect_el, cap_rail)[::-1]
            loop += el_terms(rect_role, rect_el, from_sw=False)
            loop += el_terms(sw_role, switch_el, from_sw=True)
            loop += series_terms(switch_el, cap_gnd)
        elif stage.topology == "buck":
            loop += series_terms(switch_el, cap_rail)[::-1]
            loop += el_terms(sw_role, switch_el, from_sw=False)
            loop += el_terms(rect_role, rect_el, from_sw=True)
            loop += series_terms(rect_el, cap_gnd)
        elif stage.topology == "boost":
            # output cap + -> rectifier (rail side, switch-node side) -> switch (sw side, ground side) -> cap -
            loop += series_terms(rect_el, cap_rail)[::-1]
            loop += el_terms(rect_role, rect_el, from_sw=False)
            loop += el_terms(sw_role, switch_el, from_sw=True)
            loop += series_terms(switch_el, cap_gnd)
        else:
            # cin+ -> switch -> switch node -> rectifier -> cout (output side, ground side) -> cin-
            outs = [r for r in roles if r.name == "output_cap"]
            loop += series_terms(switch_el, cap_rail)[::-1]
            loop += el_terms(sw_role, switch_el, from_sw=False)
            loop += el_terms(rect_role, rect_el, from_sw=True)
            if not outs or stage.output_net is None:
                return ()
            cout = self.nl.parts[outs[0].ref]
            loop += [near(cout.terminals_on(stage.output_net), []), near(cout.terminals_on(g), [])]
        loop.append(near(cap.terminals_on(g), []))
        if any(t is None for t in loop):
            return ()
        return tuple(loop)

    # -- the whole board ---------------------------------------------------------------------