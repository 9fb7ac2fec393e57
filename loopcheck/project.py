"""The board project file, ``loopcheck.toml``, beside the fab outputs (optional).

Schema (every section optional; unknown keys and wrong types are an InputError naming the key):

    [board]
    name = "led-driver-tidy"          # default: the folder name
    fab = "."                         # folder or .zip of fab outputs, relative to this file

    [files]                           # explicit mapping, file name (relative to fab) -> role
    "board-In1_Cu.gbr" = "copper:2"   # copper:N, N = 1 (top) .. layer count (bottom)
    "board-Edge_Cuts.gbr" = "outline" # also "drill", "netlist", "bom", "ignore"

    [stackup]
    copper_um = [35, 35]              # per copper layer, top to bottom
    dielectric_um = [1510]            # between adjacent copper layers
    dielectric_er = [4.5]
    finished_mm = 1.6
    resistivity_ohm_m = 1.75e-8       # optional; default IACS copper at temperature

    [components]                      # part values where the fab outputs carry none
    RS1 = "0.068"                     # ohms for resistors, farads or "10uF" for capacitors ...

    [operating_point]                 # applies to every stage unless the stage overrides it
    vin_v = [20, 40]                  # a range [min, max] or one number
    vout_v = 12.0
    iout_a = 1.5
    fsw_hz = 400e3
    edge_ns = 20
    vsense_v = 0.1
    ambient_c = 25
    switch_capacitance_pf = 500
    ripple_ratio = 0.3

    [stages.NAME]                     # name a stage or correct any role found
    topology = "buck"                 # buck | boost | buck-boost
    switch = "Q1"
    rectifier = "D1"
    inductor = "L1"
    input_caps = ["C1", "C2"]
    output_caps = ["C5"]
    sense_resistor = "RS1"
    controller = "U1"
    controller_decoupling = "C4"
    switch_node = "SW"                # net names
    input_net = "VIN"
    output_net = "LED+"
    ground_net = "GND"
    [stages.NAME.operating_point]     # same keys as [operating_point]

    [rules]
    deck = "default"                  # a deck name (rules/NAME.toml) or a path
    [rules.thresholds."hot-loop-area"]          # override a rule's thresholds on this board
    warning = 40
    error = 120
    [rules.stage_thresholds.NAME."hot-loop-area"]   # ... or on one stage
    warning = 60

    [[waivers]]
    rule = "sense-kelvin"
    where = "stage1"                  # a stage name, a terminal (RS1.2) or a net name
    reason = "Kelvin pads added in rev B"
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any


@dataclass
class StackupSpec:
    copper_um: list[float] | None = None
    dielectric_um: list[float] | None = None
    dielectric_er: list[float] | None = None
    finished_mm: float | None = None
    resistivity_ohm_m: float | None = None


@dataclass
class StageSpec:
    name: str
    roles: dict[str, Any] = field(default_factory=dict)          # role key -> ref / list of refs / net
    operating_point: dict[str, Any] = field(default_factory=dict)


@dataclass
class Waiver:
    rule: str
    where: str
    reason: str


@dataclass
class RulesSpec:
    deck: str = "default"
    thresholds: dict[str, dict[str, float]] = field(default_factory=dict)
    stage_thresholds: dict[str, dict[str, dict[str, float]]] = field(default_factory=dict)


@dataclass
class Project:
    path: Path | None                         # the loopcheck.toml, None when there is none
    fab: Path                                 # folder or zip of fab outputs
    name: str
    files: dict[str, str] = field(default_factory=dict)
    stackup: StackupSpec = field(default_factory=StackupSpec)
    components: dict[str, str] = field(default_factory=dict)
    operating_point: dict[str, Any] = field(default_factory=dict)
    stages: list[StageSpec] = field(default_factory=list)
    rules: RulesSpec = field(default_factory=RulesSpec)
    waivers: list[Waiver] = field(default_factory=list)


def load_project(board_path: str | Path) -> Project:
    """BOARD (a folder, a .zip or a loopcheck.toml) -> Project. Raises InputError."""
    raise NotImplementedError("project file loading: issue 2")
