"""Power-stage detection from the netlist alone: the switch node, the rails, the roles, the hot loop.

A stage is found from its switch node: a net that joins an inductor terminal to a switch (a
transistor, or pins of an IC that holds the switch) and a rectifier (a diode or a second
transistor). The other nets of those parts are the rails; ground is the rail most capacitors return
to. Which rail is the input and which the output follows from the topology:

    buck:                 switch  SW-input,  rectifier SW-ground,  inductor SW-output
    boost:                switch  SW-ground, rectifier SW-output,  inductor SW-input
    inverting buck-boost: switch  SW-input,  rectifier SW-output,  inductor SW-ground
    low-side (floating) buck, common in LED drivers: switch SW-ground, diode SW-input, inductor
                          SW-load, the load and its capacitor between the input and the inductor

Net names (SW, LX, GND, VIN ...) and part values raise confidence but are never required. Roles
named in the project file (``[stages.NAME]``) win over what is found; contradictions there are an
InputError naming the key.

Whether a synchronous pair or an IC's own switches make a buck or a boost is weighed from several
clues (:mod:`.evidence`): a bootstrap capacitor, what feeds each rail, a feedback divider, power
connectors, the other ICs on each rail, usual names; a topology resting on weak evidence is
marked unsure and names the ``loopcheck.toml`` lines that would settle it. RF matching inductors,
load drives (motor H-bridges) and transformer stages are never bucks or boosts; transformer
stages (half-bridge, resonant, flyback) are reported with their parts and not measured.

The package follows the steps:

    netlist.py    the netlist as parts: kinds (designator prefixes), pins, nets, values, packages
    evidence.py   the clues, each a small function
    topology.py   switch-node candidates, switch and rectifier, ground, buck/boost/buck-boost
    roles.py      switch, rectifier, controller, capacitors, sense resistor, decoupling; the
                  project file's roles checked against the board
    loops.py      the hot loop's ordered terminals
    detect.py     the Detector that runs these for each stage, and matches [stages.NAME]
    operating.py  the operating point of each stage

Assumptions, stated in the evidence where they are used:
- component kinds come from reference-designator prefixes (Q/M/TR transistor, D/CR diode,
  L inductor, FB ferrite, T transformer, C/CIN/COUT capacitor, R/RS/RSNS/RSENSE resistor,
  U/IC/VR/PS IC, J/P/CN connector, BT battery, LED), else from pin counts;
- a diode with numbered pins has pin 1 = cathode (the banded end on common two-terminal
  packages) unless the topology decides, which it does whenever the diode sits on the switch node;
- a three-terminal transistor with numbered pins and no net evidence has pin 1 = gate;
- ground is never a rectifier diode's cathode side (pin names, else pin 1 = cathode) unless
  a usual ground name says so.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from ..board import Board
from ..powerstage import Stage
from ..project import Project
from ..values import parse_value
from .detect import Detector
from .netlist import Netlist, Part, component_kind, package_in, value_in
from .operating import check_operating_point, operating_point, operating_point_assumptions

__all__ = ["StageSearch", "find_stages", "component_values", "component_kind", "operating_point",
           "check_operating_point", "operating_point_assumptions", "parse_value", "value_in", "package_in",
           "Part", "Netlist"]


@dataclass
class StageSearch:
    stages: list[Stage]
    messages: list[str] = field(default_factory=list)


def component_values(board: Board, project: Project) -> tuple[dict[str, str], list[str]]:
    """Part values: the board's (Gerber X3 attributes, then the BOM, both read once by
    :func:`loopcheck.load.load_board`), then the project file's ``[components]``, which win."""
    values: dict[str, str] = dict(board.component_values or {})
    notes = []
    if values:
        notes.append(f"{len(values)} part values from the fab outputs")
    if project.components:
        values.update({k: str(v) for k, v in project.components.items()})
        notes.append(f"{len(project.components)} part values from loopcheck.toml [components]")
    return values, notes


def find_stages(board: Board, project: Project) -> StageSearch:
    """Every power stage on the board, from the netlist alone (roles named in the project win).

    Raises InputError when the project file's roles contradict each other or the board.
    """
    values, notes = component_values(board, project)
    det = Detector(board, project, values)
    if not board.pads:
        return StageSearch([], ["no pads (no netlist and no Gerber X2 pad attributes): power stages cannot be "
                                "found without them"])
    stages = det.run()
    messages = notes + det.messages
    if not board.netlist_file:
        messages.insert(0, "no netlist file: pads and nets taken from the Gerber X2 pad attributes")
    for stage in stages:
        stage.operating_point = operating_point(project, stage.name)
        check_operating_point(project, stage)
        op = stage.operating_point
        sense = stage.role("sense_resistor")
        if sense is not None and op.vsense_v is None:
            r = value_in(values.get(sense.ref))
            if r is not None and r > 0:
                op.vsense_v = r * op.iout_a
                op.sources["vsense_v"] = f"{sense.ref} value {values[sense.ref]} x iout_a"
        for m in stage.missing:
            messages.append(f"{stage.name}: missing {m}")
    if not stages:
        kinds = {p.kind for p in det.nl.parts.values()}
        why = []
        if "inductor" not in kinds:
            why.append("no inductor (no L-prefixed part)")
        else:
            why.append("no net joins an inductor terminal to a switch (transistor or IC pin) and a rectifier")
        messages.append("no power stage found: " + "; ".join(why))
    return StageSearch(stages, messages)