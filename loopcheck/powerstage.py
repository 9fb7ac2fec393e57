"""A power stage as found on the board: its topology, its roles and its loops (plain data)."""

from __future__ import annotations

from dataclasses import dataclass, field

# Role names, in the trade's words.
ROLE_NAMES = (
    "switch",            # the (high-side, for a buck) active switch, or the controller when the switch is inside it
    "rectifier",         # the freewheeling diode, or the synchronous (low-side) switch
    "inductor",
    "input_cap",         # one Role per input capacitor, ranked by copper distance to the switch
    "output_cap",
    "sense_resistor",
    "controller",
    "controller_decoupling",   # the capacitor on the controller's own supply pin
    "transformer",       # an isolated stage's transformer (half-bridge, flyback, resonant)
)

# Topologies loopcheck measures, and those it reports without measuring (their loops and paths
# are not modelled: the stage is listed with its parts and every measurement is "not made").
MEASURED_TOPOLOGIES = ("buck", "boost", "buck-boost")
UNMEASURED_TOPOLOGIES = ("half-bridge", "resonant", "flyback", "four-switch")   # four-switch buck-boost


@dataclass
class Role:
    name: str                      # one of ROLE_NAMES
    ref: str                       # component reference
    terminals: tuple[str, ...] = ()  # the terminals that matter for this role, REF.PIN
    confidence: float = 1.0        # 0..1
    evidence: str = ""             # why: "named in loopcheck.toml", "diode between SW and GND", ...
    # pin role -> its terminals: {"gate": ("Q1.1",), "source": ("Q1.2",), "drain": ("Q1.3",)},
    # {"cathode": ..., "anode": ...}; controller: "gate", "vin", "gnd", "sense+", "sense-", "supply", "sw"
    pins: dict[str, tuple[str, ...]] = field(default_factory=dict)


@dataclass
class OperatingPoint:
    """The electrical operating point the measurements are evaluated at (SI units)."""

    vin_min_v: float = 12.0
    vin_max_v: float = 24.0
    vout_v: float | None = None
    iout_a: float = 1.0
    fsw_hz: float = 500e3
    edge_s: float = 20e-9
    vsense_v: float | None = None          # sense voltage at iout; None: from the resistor value
    ambient_c: float = 25.0
    switch_capacitance_f: float = 500e-12  # switch output capacitance for the ringing estimate
    ripple_ratio: float = 0.3              # inductor peak-to-peak ripple / iout
    # field name -> "default" or "loopcheck.toml": every report lists the defaults as assumptions
    sources: dict[str, str] = field(default_factory=dict)


@dataclass
class Stage:
    name: str                      # "stage1", or the name given in loopcheck.toml
    topology: str                  # MEASURED_TOPOLOGIES, or one of UNMEASURED_TOPOLOGIES
    switching: str                 # "discrete" | "synchronous" | "integrated"
    switch_node: str | None        # net names
    input_net: str | None
    output_net: str | None
    ground_net: str | None
    roles: list[Role] = field(default_factory=list)
    hot_loop: tuple[str, ...] = ()          # ordered terminals, closed (last joins first)
    operating_point: OperatingPoint = field(default_factory=OperatingPoint)
    confidence: float = 1.0
    missing: list[str] = field(default_factory=list)   # what could not be found, in words
    evidence: list[str] = field(default_factory=list)  # why this is a stage, and why this topology
    # what rests on weak evidence, in words ("topology buck: ..."); empty when all is sure
    unsure: list[str] = field(default_factory=list)
    # the loopcheck.toml lines that would confirm or correct what is unsure
    confirm_lines: list[str] = field(default_factory=list)
    # why the stage was not measured ("" when it was): a topology loopcheck does not model
    not_measured: str = ""

    def unsure_text(self) -> str:
        """One line: what is unsure and the project-file lines that would settle it ("" when sure)."""
        if not self.unsure:
            return ""
        lines = " ".join(self.confirm_lines)
        return (f"{self.name}: unsure ({'; '.join(self.unsure)}); confirm or correct it in loopcheck.toml: "
                f"{lines}")

    def role(self, name: str) -> Role | None:
        for r in self.roles:
            if r.name == name:
                return r
        return None

    def roles_named(self, name: str) -> list[Role]:
        return [r for r in self.roles if r.name == name]
