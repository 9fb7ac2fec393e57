"""The one place each rule is explained: what it measures, why it matters, how to fix it.

``loopcheck explain RULE`` prints these; SARIF carries them as rule metadata; the HTML report
links to them. Thresholds are not here: they live in the decks (the top-level ``rules/*.toml``).
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class RuleDoc:
    name: str            # the rule's name, as decks, waivers and findings spell it
    title: str           # a plain descriptive name
    measures: str        # what is measured, with its unit
    why: str             # why it matters electrically
    fix: str             # how to fix a layout that fails it
    formula: str         # how the number is computed
    limits: str          # what the estimate leaves out
    group: str           # "integrity", "switching loop", "input capacitor", ...


_DOCS = (
    RuleDoc(
        name="netlist-open",
        title="Net split into unconnected copper",
        measures="Pads that the netlist puts on one net but that no copper joins together.",
        why="A net broken in the copper is a board that does not work as drawn. Every later "
            "measurement follows current through the copper, so a break also makes the loop, "
            "path and sense measurements of that net meaningless.",
        fix="Find the gap (a missing trace, a pour that did not fill between two pads, a via "
            "left out) and join the copper; or, if the copper is right, regenerate the netlist "
            "from the same design revision as the Gerber files.",
        formula="Copper islands are formed per layer and joined through plated holes and vias; "
                "each pad is placed in the island under it. A net whose pads fall in more than "
                "one island is open.",
        limits="Copper is taken as drawn in the Gerber files; a connection made off the board "
               "(a jumper wire, a connector) is reported as open.",
        group="integrity",
    ),
    RuleDoc(
        name="netlist-short",
        title="Copper joining two nets",
        measures="Copper islands that touch pads of more than one net.",
        why="A short between two nets is a board that does not work as drawn and, between a "
            "supply and ground, one that can burn. It also merges the copper that the "
            "measurements treat as separate conductors.",
        fix="Find where the two nets' copper meets (a pour without clearance, a trace across a "
            "pad) and separate it; or regenerate the netlist if a net was renamed or merged on "
            "purpose (a net tie).",
        formula="As for netlist-open: an island holding pads of two or more nets is a short.",
        limits="A part whose own copper joins two of its nets (a net tie, a printed antenna's "
               "feed and ground) is set aside when the Gerber's X2 attributes give that copper no "
               "net, or, without X2, when its designator marks it (NT, AE, ANT, JP, SJ); any "
               "other intended join is reported like a short: waive it by net name.",
        group="integrity",
    ),
    RuleDoc(
        name="netlist-alignment",
        title="Netlist does not line up with the copper",
        measures="Netlist pads that land on no copper at all.",
        why="When many netlist points miss the copper the netlist is in other units, has "
            "another origin, is mirrored or belongs to another board. Nothing after this check "
            "can be trusted, so measurement stops.",
        fix="Export the netlist and the Gerber files from the same design with the same origin "
            "and units; the finding's message gives the offset or scale that would align them.",
        formula="Share of netlist pads whose position lies outside every copper shape of the "
                "layers the pad is on; a search over offsets, scales and a mirror suggests the "
                "correction.",
        limits="A board with very little copper (an empty test panel) can trip it by chance.",
        group="integrity",
    ),
    RuleDoc(
        name="netlist-x2-mismatch",
        title="Netlist and the copper's own net names disagree",
        measures="Netlist pads whose copper carries a Gerber X2 net attribute (.N) naming another "
                 "net than the netlist does.",
        why="The Gerber files and the netlist were written from one design; where they name "
            "different nets for the same copper, one of them is from another revision, or a net "
            "was renamed after one was exported. Connectivity is judged from the netlist, so a "
            "stale netlist can hide a real short or report a false one.",
        fix="Export the Gerber files and the netlist again, together, from the same design "
            "revision.",
        formula="For each netlist pad, the X2 nets whose copper covers the pad's centre on its "
                "layer; the netlist's name matches an X2 name equal to it (case and the writer's "
                "space substitute ignored) or, for a name filling the 14-character IPC-D-356 "
                "field, one ending in it. A warning by default: the board may be right.",
        limits="Only where the Gerber files carry X2 object attributes; copper without a net "
               "attribute (footprint copper, text) is not compared.",
        group="integrity",
    ),
    RuleDoc(
        name="hot-loop-area",
        title="Area enclosed by the switching loop",
        measures="The area, in mm2, enclosed by the stage's high di/dt loop (input capacitor, "
                 "switch, rectifier and back) projected on the board.",
        why="The current in this loop switches on and off in nanoseconds. The loop radiates "
            "like a small antenna in proportion to its area, and its inductance, which grows "
            "with area, turns every edge into a voltage spike and ringing on the switch node.",
        fix="Put the input capacitor, the switch and the rectifier next to one another with the "
            "capacitor's ground close to the rectifier's ground; route the return directly "
            "under the outgoing copper on the next layer so the loop folds flat.",
        formula="Shoelace area of the loop's route polygon, each route following the copper "
                "centre line between the terminals, projected on the board plane: "
                "A = 1/2 |sum(x_i y_(i+1) - x_(i+1) y_i)|.",
        limits="A loop whose return runs on another layer right under it has a small projected "
               "area even though it is a real loop in 3D; the inductance rule judges that case. "
               "Part bodies (package loops) are not included.",
        group="switching loop",
    ),
    RuleDoc(
        name="hot-loop-inductance",
        title="Switching-loop inductance",
        measures="The switching loop's inductance, in nH, from a field solve of the copper around "
                 "it (default; `--inductance fast` gives the path estimate instead).",
        why="The loop inductance times the current slew rate is the voltage spike the switch "
            "sees at each edge; with the switch capacitance it sets the ringing frequency; the "
            "energy it stores is lost or radiated every edge.",
        fix="Shorten the loop, widen its copper and run the return on the adjacent layer right "
            "under the outgoing path (a thin dielectric helps); use several vias in parallel "
            "where the loop changes layer. The measurement lists the share of the inductance "
            "in each stretch of copper, via group and part: fix the largest first.",
        formula="Field (default): the copper within a window around the loop, on every layer, cut "
                "into rectangular cells; L_p from the exact bar formula (Hoer and Love 1965) for "
                "near cells and filaments for far ones; the current of least magnetic energy "
                "under Kirchhoff's current law, C^T L_p C x = c_s, L = I^T L_p I for 1 A (Ruehli "
                "1974; Kamon, Tsuk and White 1994). Fast: L = sum_i sum_j s_i s_j M_ij over the "
                "traced path's flat-strip segments (Grover's bar formula, Neumann mutuals), "
                "minus the mutual with its mirror image where a solid plane lies under it.",
        limits="Field: copper beyond the window is not seen; a part's current is a straight strip "
               "between its pad centres 0.5 mm above them, with risers to the pads (no package "
               "table); the high-frequency limit (no resistance). Fast: copper at its traced "
               "centre line with uniform current, parts as in the field solve.",
        group="switching loop",
    ),
    RuleDoc(
        name="switch-overshoot",
        title="Switching overshoot from loop inductance",
        measures="L_loop times di/dt at the stage's switched current and edge time, as a share "
                 "of the input voltage, in %.",
        why="This spike adds to the input voltage across the switch and rectifier. It eats "
            "into their voltage rating and drives ringing that shows up as conducted and "
            "radiated noise.",
        fix="Reduce the loop inductance (see hot-loop-inductance); slowing the edge (gate "
            "resistance) trades switching loss for less overshoot.",
        formula="dV = L_loop * I_switch / t_edge; reported as 100 * dV / V_in,max.",
        limits="A first-order estimate: the real waveform depends on the switch's output "
               "capacitance, the diode's recovery and damping; the operating point comes from "
               "the project file or the defaults listed as assumptions.",
        group="switching loop",
    ),
    RuleDoc(
        name="hot-loop-vias",
        title="Vias in the switching loop",
        measures="The number of vias the switching loop's current passes through.",
        why="Each via adds roughly a nanohenry to the loop, as much as several millimetres of "
            "trace, and changing layers often means a larger loop.",
        fix="Keep the switching loop on one layer where you can; where it must change layer, "
            "use several vias side by side so their inductances are in parallel.",
        formula="Count of distinct vias on the loop's routes.",
        limits="Parallel vias are counted one by one; their combined inductance is lower than "
               "the count suggests.",
        group="switching loop",
    ),
    RuleDoc(
        name="input-cap-distance",
        title="Input capacitor far from the switch",
        measures="The copper path length, in mm, from the hot-loop input capacitor's pads to "
                 "the switch (or to the controller's VIN pin when the switch is inside it).",
        why="The input capacitor supplies the pulsed switch current. The copper between it and "
            "the switch carries that pulsed current, so every millimetre is inductance in the "
            "switching loop and a voltage drop the switch sees at each edge.",
        fix="Move the capacitor right next to the switch's supply pin and the rectifier's "
            "ground; a small ceramic capacitor there can take the edges while bulk capacitors "
            "sit further away.",
        formula="Length of the route through copper between the capacitor's pads and the "
                "switch terminals, both the supply and the ground side, summed.",
        limits="Judges the closest input capacitor; a large capacitor far away with a small "
               "one close by passes, as it should.",
        group="input capacitor",
    ),
    RuleDoc(
        name="controller-decoupling",
        title="Controller supply decoupling far from its pin",
        measures="The copper path length, in mm, from the controller's own supply pin to its "
                 "nearest decoupling capacitor.",
        why="The controller's gate drive and logic draw fast current spikes from this pin. A "
            "long connection lets the supply at the pin dip and ring, which can upset the "
            "controller or slow its gate drive.",
        fix="Put the decoupling capacitor at the supply pin, with its ground next to the "
            "controller's ground pin.",
        formula="Route length between the capacitor's pads and the supply and ground pins.",
        limits="Does not judge the capacitor's value or dielectric.",
        group="input capacitor",
    ),
    RuleDoc(
        name="sense-kelvin",
        title="Current-sense error from shared copper",
        measures="The voltage drop in copper shared by the sense connection and the load "
                 "current, as a share of the sense resistor's own drop, in %.",
        why="A sense resistor is a few tens of milliohms, so a few milliohms of copper between "
            "its pads and the point where the sense trace taps off add directly to the reading. "
            "An LED driver then regulates to the wrong current, and the error drifts with "
            "temperature because copper's resistance does.",
        fix="Run the sense traces from the resistor's own pads (a Kelvin, four-wire "
            "connection), on the inner edge of the pads, away from where the load current "
            "enters; never tap the sense signal off a pour or a shared trace.",
        formula="DC solve of the resistor's copper at the load current: error = "
                "(V_sense_taps - I R_sense) / (I R_sense) * 100.",
        limits="DC only; the resistor body is taken as ideal between its pad edges; the "
               "controller's sense input draws no current.",
        group="current sense",
    ),
    RuleDoc(
        name="sense-pair-area",
        title="Area between the current-sense traces",
        measures="The area, in mm2, between the two sense traces from the sense resistor to "
                 "the controller.",
        why="The sense signal is tens of millivolts. A loop between the two sense traces picks "
            "up the magnetic field of the switching loop and inductor, adding switching noise "
            "to the measured current.",
        fix="Route the two sense traces side by side (or one above the other) all the way from "
            "the resistor to the controller; keep them away from the inductor and switch node.",
        formula="Shoelace area of the polygon formed by the two sense routes and the resistor "
                "and controller pins.",
        limits="Field pick-up depends also on where the aggressor is; the area is a proxy.",
        group="current sense",
    ),
    RuleDoc(
        name="sense-route-near-switch-node",
        title="Sense or feedback copper next to the switch node",
        measures="The closest approach, in mm, of sense or feedback copper to switch-node "
                 "copper on the same layer (or overlapping it on the adjacent layer).",
        why="The switch node swings the full input voltage in nanoseconds. Its capacitance to "
            "a nearby high-impedance sense or feedback trace injects that edge into the "
            "controller's most sensitive inputs.",
        fix="Keep sense and feedback traces away from the switch node and inductor pads, with "
            "ground copper between them if space is short; never route them under the switch "
            "node on the next layer.",
        formula="Minimum distance between the two nets' copper shapes on each layer; "
                "overlapping area with the adjacent layer counts as distance zero.",
        limits="Does not weigh how long the two run side by side.",
        group="current sense",
    ),
    RuleDoc(
        name="trace-temperature-rise",
        title="Temperature rise of high-current copper",
        measures="The temperature rise, in C, at the narrowest point of each high-current path "
                 "(input, switch node to inductor, output, and the two ground paths: the "
                 "switching current's return from the rectifier or low-side switch to the input "
                 "capacitor and input, and the load current's return) at that path's RMS current, "
                 "per IPC-2221.",
        why="Copper that runs hot raises its own resistance (about 0.4 % per kelvin), heats "
            "the parts around it and ages the board; a narrow neck is where this happens first.",
        fix="Widen the narrowest part of the path, use a pour, or add copper on a second layer "
            "joined by vias; heavier copper weight also helps.",
        formula="IPC-2221: I = k dT^0.44 A^0.725 (A in mil2, k = 0.048 outer, 0.024 inner "
                "layers), solved for dT; an IPC-2152-style estimate is reported beside it.",
        limits="Chart fits for a lone straight trace in still air; nearby planes, pours and "
               "parts change the real rise in either direction.",
        group="high-current paths",
    ),
    RuleDoc(
        name="copper-loss",
        title="Power lost in high-current copper",
        measures="The I^2 R loss of all high-current paths at operating temperature, as a "
                 "share of the output power, in %.",
        why="This is efficiency the layout gives away: heat in the copper that the controller's "
            "efficiency curve does not include.",
        fix="Shorten and widen the paths that carry the most current (usually the output and "
            "the ground returns); see which path dominates in the path losses reported.",
        formula="P = sum over paths of I_rms^2 R(T); share = 100 P / (V_out I_out). In a buck "
                "the input path and the switching current's ground return carry "
                "I_out sqrt(D (1 + r^2/12)), the output path and the load's return about I_out. "
                "DC current enters a net at its source (connector, upstream stage) and leaves at "
                "its loads, never at a capacitor.",
        limits="DC resistance only (skin effect is small for 1-2 oz copper below a few MHz); "
               "the operating point comes from the project file or the defaults.",
        group="high-current paths",
    ),
    RuleDoc(
        name="layout-loss",
        title="Efficiency points the layout costs",
        measures="The power the layout itself loses, as a share of the output power in "
                 "percentage points of efficiency: the copper conduction loss of every "
                 "high-current path plus the energy left in the hot loop's inductance at each "
                 "switching edge. Reported with its parts (conduction W, switching W, output W).",
        why="The same circuit laid out badly loses several points of efficiency: heat in long, "
            "narrow copper, and at every turn-off the loop inductance's energy rings out in the "
            "switch. None of it is in the controller's efficiency curve.",
        fix="See which part dominates. Conduction: shorten and widen the paths that carry the "
            "most current (the path losses are reported one by one). Switching: shrink the hot "
            "loop (input capacitor right at the switch, return on the next layer under the "
            "outgoing copper, fewer vias) so its inductance falls.",
        formula="points = 100 (sum over paths of I_rms^2 R(T) + 1/2 L_loop I_off^2 f_sw) / "
                "(V_out I_out); I_off is the switch's peak current: I_out (1 + r/2) in a buck, "
                "the input current peak I_out / (1 - D) (1 + r/2) in a boost. 1/2 L I^2 is the "
                "energy of an inductor (Halliday, Resnick and Walker, Fundamentals of Physics, "
                "ch. 30).",
        limits="An estimate of the layout's part only: the switch's own overlap and gate losses "
               "belong to the component. All the loop's energy is taken as lost at each "
               "turn-off (an upper bound where a snubber or a soft turn-off returns part); DC "
               "copper resistance (no skin effect); paths that could not be measured are left "
               "out (the value is then a lower bound and says so). Needs the output voltage.",
        group="high-current paths",
    ),
    RuleDoc(
        name="switch-node-area",
        title="Switch-node copper area",
        measures="The copper area, in mm2, of the switch-node net beyond its pads.",
        why="The switch node swings the full input voltage at every edge. Extra copper on it is "
            "an antenna for electric-field emission and a capacitance that is charged and "
            "discharged every cycle.",
        fix="Keep the switch node as small as the current allows: a short, wide connection "
            "from the switch to the inductor, no pour around it.",
        formula="Area of the switch-node net's copper on all layers minus the pad areas.",
        limits="Copper needed to cool the switch counts too; weigh the two.",
        group="switch node",
    ),
    RuleDoc(
        name="switch-node-capacitance",
        title="Switch-node capacitance to planes",
        measures="The capacitance, in pF, of switch-node copper to the copper planes on the "
                 "neighbouring layers.",
        why="This capacitance is charged and discharged each edge, costing C V^2 f of power, "
            "and couples the switching edge into whatever the plane carries.",
        fix="Cut the plane out under the switch node, or keep the switch node small.",
        formula="C = eps0 eps_r A / d over the overlap of switch-node copper with each "
                "neighbouring plane.",
        limits="Fringing fields are neglected, so the estimate is low for narrow copper.",
        group="switch node",
    ),
    RuleDoc(
        name="unused-waiver",
        title="Waiver that matches no finding",
        measures="Waivers in the project file whose rule and place match no finding on the board.",
        why="A waiver left behind after the layout changed silences nothing today but will "
            "silence a real problem later, and it hides that the fix was made.",
        fix="Remove the waiver from loopcheck.toml, or correct its rule name or place (a stage "
            "name, a terminal such as RS1.2, a component reference or a net name).",
        formula="A waiver matches a finding of its rule whose stage, terminals, component "
                "references or nets include the waiver's place.",
        limits="A waiver that matches only because a finding happens to be present today is "
               "counted as used.",
        group="project file",
    ),
    RuleDoc(
        name="unused-override",
        title="Threshold override for a stage that does not exist",
        measures="Per-stage threshold overrides in the project file whose stage is not on the "
                 "board.",
        why="An override for a renamed or vanished stage quietly stops applying, so the stage "
            "is judged by the deck's limits instead of the ones the designer chose.",
        fix="Rename the override to the stage's current name (see `loopcheck stages`), or "
            "remove it.",
        formula="Stage names under [rules.stage_thresholds] compared with the stages found.",
        limits="None.",
        group="project file",
    ),
)

RULE_DOCS: dict[str, RuleDoc] = {d.name: d for d in _DOCS}


def rule_doc(name: str) -> RuleDoc:
    """The explanation of one rule; KeyError when there is no such rule."""
    return RULE_DOCS[name]


def explain_text(doc: RuleDoc) -> str:
    """The explanation as plain text for the terminal."""
    parts = [f"{doc.name}: {doc.title}", ""]
    for head, body in (("What it measures", doc.measures), ("Why it matters", doc.why),
                       ("How to fix it", doc.fix), ("How it is computed", doc.formula),
                       ("Known limits", doc.limits)):
        parts.append(head)
        parts.append(_wrap(body))
        parts.append("")
    return "\n".join(parts).rstrip() + "\n"


def _wrap(text: str, width: int = 96) -> str:
    import textwrap

    return textwrap.fill(text, width=width, initial_indent="  ", subsequent_indent="  ")
