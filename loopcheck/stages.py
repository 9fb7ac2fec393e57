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

Assumptions, stated in the evidence where they are used:
- component kinds come from reference-designator prefixes (Q/M/T transistor, D diode,
  L inductor, C capacitor, R/RS resistor, U/IC IC, J/P/CN connector), else from pin counts;
- a diode with numbered pins has pin 1 = cathode (the banded end on common two-terminal
  packages) unless the topology decides, which it does whenever the diode sits on the switch node;
- a three-terminal transistor with numbered pins and no net evidence has pin 1 = gate;
- ground is never a rectifier diode's cathode side (pin names, else pin 1 = cathode) unless
  a usual ground name says so.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any, Iterable

from .board import Board, Pad
from .errors import InputError
from .powerstage import OperatingPoint, Role, Stage
from .project import OPERATING_POINT_FIELDS, Project
from .values import parse_value

# --------------------------------------------------------------------------------------------
# Component kinds and values

_PREFIX_KINDS = {
    "Q": "transistor", "M": "transistor", "T": "transistor",
    "D": "diode",
    "L": "inductor",
    "C": "capacitor",
    "R": "resistor", "RS": "resistor",
    "U": "ic", "IC": "ic",
    "J": "connector", "P": "connector", "CN": "connector",
}

NO_CONNECT = re.compile(r"^(|N/?C|NO_?CONNECT|UNCONNECTED.*)$", re.I)
GROUND_NAMES = re.compile(r"^(P|A|D|S)?(GND|GROUND|VSS|0V|COM|AGND|PGND)(\d*|_.*)?$", re.I)
SWITCH_NODE_NAMES = re.compile(r"(^|[^A-Z])(SW|LX|PH|PHASE|SWN|SWNODE|SW_NODE)(\d*|[^A-Z].*)?$", re.I)
INPUT_NAMES = re.compile(r"(^|[^A-Z])(VIN|V_IN|VBAT|VBATT|VSUP|VSUPPLY|VCC_IN|VIN\d*|PVIN|VS|VDC|VBUS|IN)"
                         r"(\d*|[^A-Z].*)?$|^\+?\d+V(IN)?$", re.I)
OUTPUT_NAMES = re.compile(r"(^|[^A-Z])(VOUT|V_OUT|VO|OUT|LED\+|LEDP|LED_P|LEDA|VLED)(\d*|[^A-Z].*)?$|LED\+", re.I)
SUPPLY_NAMES = re.compile(r"(^|[^A-Z])(VCC|VDD|VREG|VDRV|INTVCC|BIAS|VBIAS|VL|VAUX|V5|LDO)(\d*|[^A-Z].*)?$", re.I)


def component_kind(ref: str, pad_count: int) -> str:
    """The kind of a part from its reference designator, else from its pin count."""
    m = re.match(r"[A-Za-z]+", ref)
    letters = m.group(0).upper() if m else ""
    if letters in _PREFIX_KINDS:
        return _PREFIX_KINDS[letters]
    if pad_count >= 5:
        return "ic"
    return "other"


@dataclass
class Part:
    ref: str
    kind: str
    pads: list[Pad]
    value: str | None = None

    def __post_init__(self):
        self._by_net: dict[str, list[Pad]] = {}
        for p in self.pads:
            self._by_net.setdefault(p.net, []).append(p)
        self._nets = frozenset(self._by_net)

    @property
    def nets(self) -> frozenset[str]:
        return self._nets

    def pads_on(self, net: str | None) -> list[Pad]:
        return list(self._by_net.get(net, ()))

    def terminals_on(self, net: str) -> tuple[str, ...]:
        return tuple(p.terminal for p in self.pads_on(net))

    @property
    def value_si(self) -> float | None:
        return parse_value(self.value)

    @property
    def center(self) -> tuple[float, float]:
        return (sum(p.x_mm for p in self.pads) / len(self.pads),
                sum(p.y_mm for p in self.pads) / len(self.pads))


@dataclass
class StageSearch:
    stages: list[Stage]
    messages: list[str] = field(default_factory=list)


def _key_line(path: str | None, dotted: str) -> int | None:
    """The line of ``dotted`` (``stages.led.switch``) in the project file, best effort: the key
    under its table header, else the header itself. None when it cannot be found."""
    if not path:
        return None
    try:
        lines = Path(path).read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError):
        return None
    parts = dotted.split(".")
    for split in range(len(parts) - 1, -1, -1):
        table, rest = parts[:split], parts[split:]
        header = None
        if table:
            pat = re.compile(r"\s*\[\s*" + r"\s*\.\s*".join(r'(?:"?' + re.escape(t) + r'"?)' for t in table)
                             + r"\s*\]\s*(#.*)?$")
            header = next((i for i, line in enumerate(lines) if pat.match(line)), None)
            if header is None:
                continue
        start = 0 if header is None else header + 1
        key_pat = re.compile(r"\s*" + r"\s*\.\s*".join(r'"?' + re.escape(k) + r'"?' for k in rest) + r"\s*=")
        for i in range(start, len(lines)):
            if i > start - 1 and lines[i].lstrip().startswith("[") and i != header:
                break
            if key_pat.match(lines[i]):
                return i + 1
        if header is not None:
            return header + 1
    return None


def _project_error(path: str | None, dotted: str, message: str) -> InputError:
    """An InputError naming the project file, the key and, where it can be found, its line."""
    return InputError(message, path=path, line=_key_line(path, dotted))


# --------------------------------------------------------------------------------------------
# Operating point

def operating_point(project: Project, stage_name: str) -> OperatingPoint:
    """The operating point of one stage: defaults, then ``[operating_point]``, then
    ``[stages.NAME.operating_point]``. ``sources`` maps each field to where its value came from
    ("default", "loopcheck.toml [operating_point]" or "loopcheck.toml [stages.NAME.operating_point]").

    The values were checked when the project file was read (loopcheck.project); here they are
    only merged. Whether they suit the stage's topology is :func:`check_operating_point`'s job.
    """
    op = OperatingPoint()
    sources = {f.name: "default" for f in fields(OperatingPoint) if f.name != "sources"}
    layers: list[tuple[str, dict[str, Any]]] = [("operating_point", project.operating_point or {})]
    for spec in project.stages:
        if spec.name == stage_name:
            layers.append((f"stages.{stage_name}.operating_point", spec.operating_point or {}))
    for section, values in layers:
        for key, value in values.items():
            if key == "vin_v":
                lo, hi = value if isinstance(value, (list, tuple)) else (value, value)
                op.vin_min_v, op.vin_max_v = float(lo), float(hi)
                sources["vin_min_v"] = sources["vin_max_v"] = f"loopcheck.toml [{section}]"
                continue
            name, scale = OPERATING_POINT_FIELDS[key]
            setattr(op, name, float(value) * scale)
            sources[name] = f"loopcheck.toml [{section}]"
    op.sources = sources
    return op


def check_operating_point(project: Project, stage: Stage) -> None:
    """Raise InputError, naming the project file and the key, when the stage's topology cannot
    produce its output voltage from its input: a buck needs 0 < vout < vin_min, a boost
    vout > vin_max, an inverting buck-boost any vout other than 0 (either sign is read as |vout|).
    """
    op = stage.operating_point
    vout = op.vout_v
    if vout is None:
        return
    key = "operating_point.vout_v"
    if any(s.name == stage.name and "vout_v" in (s.operating_point or {}) for s in project.stages):
        key = f"stages.{stage.name}.operating_point.vout_v"
    vin_src = op.sources.get("vin_min_v", "default")
    vin_src = "default" if vin_src == "default" else vin_src.replace("loopcheck.toml ", "")
    problem = None
    if stage.topology == "buck" and not 0 < vout < op.vin_min_v:
        problem = (f"a buck cannot make {vout:g} V from a minimum input of {op.vin_min_v:g} V ({vin_src}): "
                   "vout must lie between 0 and vin_min")
    elif stage.topology == "boost" and not vout > op.vin_max_v:
        problem = (f"a boost cannot make {vout:g} V from a maximum input of {op.vin_max_v:g} V ({vin_src}): "
                   "vout must exceed vin_max")
    elif stage.topology == "buck-boost" and vout == 0:
        problem = "a buck-boost needs a non-zero output voltage"
    if problem:
        path = str(project.path) if project.path else None
        raise InputError(f"{key}: stage {stage.name}: {problem}", path=path, line=project.line_of(key))


_OP_LABELS = {
    "vin_min_v": ("minimum input voltage", "V", 1.0),
    "vin_max_v": ("maximum input voltage", "V", 1.0),
    "vout_v": ("output voltage", "V", 1.0),
    "iout_a": ("output current", "A", 1.0),
    "fsw_hz": ("switching frequency", "kHz", 1e-3),
    "edge_s": ("switching edge time", "ns", 1e9),
    "vsense_v": ("sense voltage", "mV", 1e3),
    "ambient_c": ("ambient temperature", "C", 1.0),
    "switch_capacitance_f": ("switch output capacitance", "pF", 1e12),
    "ripple_ratio": ("inductor ripple ratio", "", 1.0),
}


def operating_point_assumptions(op: OperatingPoint) -> list[str]:
    """Every operating-point value in words with where it came from (the project file, a
    default, or a part value), for the reports' assumptions."""
    out = []
    for name, source in op.sources.items():
        label, unit, scale = _OP_LABELS.get(name, (name, "", 1.0))
        value = getattr(op, name)
        shown = "unknown" if value is None else f"{value * scale:g}{' ' + unit if unit else ''}"
        why = "default" if source == "default" else source
        out.append(f"operating point: {label} {shown} ({why})")
    return out


# --------------------------------------------------------------------------------------------
# The netlist as parts and nets


class _Netlist:
    def __init__(self, board: Board, values: dict[str, str]):
        self.board = board
        self.parts: dict[str, Part] = {}
        for ref, pads in board.components.items():
            # unconnected pins ("" or N/C in IPC-D-356) join nothing
            joined = [p for p in pads if not NO_CONNECT.match(p.net)]
            if joined:
                self.parts[ref] = Part(ref, component_kind(ref, len(pads)), joined, values.get(ref))
        self.net_parts: dict[str, list[Part]] = {}
        for part in self.parts.values():
            for net in part.nets:
                self.net_parts.setdefault(net, []).append(part)
        for parts in self.net_parts.values():
            parts.sort(key=lambda p: p.ref)

        self._on: dict[tuple[str, str | None], list[Part]] = {}
        self._pad_count = {net: sum(len(p.pads_on(net)) for p in parts) for net, parts in self.net_parts.items()}

    def on(self, net: str | None, kind: str | None = None) -> list[Part]:
        """Parts with a pin on ``net`` (of one kind), sorted by reference."""
        if net is None:
            return []
        key = (net, kind)
        if key not in self._on:
            self._on[key] = [p for p in self.net_parts.get(net, []) if kind is None or p.kind == kind]
        return list(self._on[key])

    def pad_count(self, net: str) -> int:
        return self._pad_count.get(net, 0)

    def two_terminal(self, part: Part) -> bool:
        return len(part.nets) == 2

    def caps_between(self, a: str, b: str) -> list[Part]:
        return [c for c in self.on(a, "capacitor") if c.nets == {a, b}]

    def is_railish(self, net: str) -> bool:
        """A net that looks like a power rail: capacitors or a connector on it."""
        return bool(self.on(net, "capacitor") or self.on(net, "connector"))


def _dist(a: Pad, b: Pad) -> float:
    return math.hypot(a.x_mm - b.x_mm, a.y_mm - b.y_mm)


def _nearest(pads: Iterable[Pad], to: Iterable[Pad]) -> Pad | None:
    pads, to = list(pads), list(to)
    if not pads:
        return None
    if not to:
        return sorted(pads, key=lambda p: p.terminal)[0]
    return min(pads, key=lambda p: (min(_dist(p, q) for q in to), p.terminal))


def _min_dist(a: Iterable[Pad], b: Iterable[Pad]) -> float:
    a, b = list(a), list(b)
    if not a or not b:
        return math.inf
    return min(_dist(p, q) for p in a for q in b)


# --------------------------------------------------------------------------------------------
# Project-file roles

_REF_KEYS = ("switch", "rectifier", "inductor", "sense_resistor", "controller", "controller_decoupling")
_LIST_KEYS = ("input_caps", "output_caps")
_NET_KEYS = ("switch_node", "input_net", "output_net", "ground_net")
_ROLE_KEYS = _REF_KEYS + _LIST_KEYS + _NET_KEYS + ("topology",)
TOPOLOGIES = ("buck", "boost", "buck-boost")


def _validate_spec(spec, nl: _Netlist, path: str | None) -> dict[str, Any]:
    """The spec's roles, checked against the board; contradictions are an InputError naming the key."""
    roles = dict(spec.roles or {})
    prefix = f"stages.{spec.name}"
    seen: dict[str, str] = {}
    # a switch inside the controller IC is named as both switch and controller (and rectifier)
    shareable = {"switch", "rectifier", "controller"}
    for key, value in roles.items():
        full = f"{prefix}.{key}"
        if key not in _ROLE_KEYS:
            raise _project_error(path, full, f"unknown key {full}")
        if key == "topology":
            if value not in TOPOLOGIES:
                raise _project_error(path, full, f"{full}: expected one of {', '.join(TOPOLOGIES)}, got {value!r}")
            continue
        if key in _NET_KEYS:
            if not isinstance(value, str):
                raise _project_error(path, full, f"{full}: expected a net name")
            if value not in nl.board.nets:
                raise _project_error(path, full, f"{full}: no net {value!r} on the board")
            continue
        refs = value if key in _LIST_KEYS else [value]
        if key in _LIST_KEYS and not isinstance(value, list):
            raise _project_error(path, full, f"{full}: expected a list of references")
        for ref in refs:
            if not isinstance(ref, str):
                raise _project_error(path, full, f"{full}: expected a reference designator, got {ref!r}")
            if ref not in nl.parts:
                raise _project_error(path, full, f"{full}: no component {ref!r} on the board")
            if ref in seen and not (key in shareable and seen[ref] in shareable and nl.parts[ref].kind == "ic"):
                raise _project_error(path, full, f"{full}: {ref} is already named as {prefix}.{seen[ref]}")
            seen.setdefault(ref, key)
    if "inductor" in roles and len(nl.parts[roles["inductor"]].nets) != 2:
        raise _project_error(path, f"{prefix}.inductor",
                             f"{prefix}.inductor: {roles['inductor']} has {len(nl.parts[roles['inductor']].nets)} "
                             "connected nets; an inductor has two")
    sw = roles.get("switch_node")
    if sw is not None and "inductor" in roles:
        if sw not in nl.parts[roles["inductor"]].nets:
            raise _project_error(path, f"{prefix}.switch_node",
                                 f"{prefix}.switch_node: net {sw!r} does not touch the inductor "
                                 f"{roles['inductor']} (its nets: "
                                 f"{', '.join(sorted(nl.parts[roles['inductor']].nets))})")
    if sw is not None:
        for key in ("switch", "rectifier"):
            if key in roles and sw not in nl.parts[roles[key]].nets:
                raise _project_error(path, f"{prefix}.{key}",
                                     f"{prefix}.{key}: {roles[key]} has no pin on the switch node {sw!r}")
    if sw is not None:
        for key in ("input_net", "output_net", "ground_net"):
            if roles.get(key) == sw:
                raise _project_error(path, f"{prefix}.{key}",
                                     f"{prefix}.{key}: {sw!r} is already named as {prefix}.switch_node")
    return roles


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


class _Detector:
    def __init__(self, board: Board, project: Project, values: dict[str, str]):
        self.board = board
        self.project = project
        self.nl = _Netlist(board, values)
        self.path = str(project.path) if project.path else None
        self.messages: list[str] = []
        self._floating = False           # the stage being built is a low-side (floating) buck
        self._across: str | None = None  # ... and its load capacitor's input-side net

    # -- switch-node candidates -------------------------------------------------------------
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
        boot = [c for c in caps if len(c.nets) == 2 and self._bootstrap_net(next(iter(c.nets - {net})), c)]
        if boot:
            score += 0.5
            ev.append(f"bootstrap-like capacitor {boot[0].ref} to an IC pin")
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

    def _bootstrap_net(self, net: str, cap: Part) -> bool:
        """The far net of a bootstrap capacitor: only that capacitor, IC pins and perhaps a diode."""
        parts = self.nl.on(net)
        return (any(p.kind == "ic" for p in parts) and
                all(p is cap or p.kind in ("ic", "diode", "resistor") for p in parts))

    def candidates(self) -> list[tuple[str, Part, str, float, list[str]]]:
        """(switch node, inductor, switching kind, score, evidence) per inductor, best end."""
        out = []
        for ind in sorted((p for p in self.nl.parts.values() if p.kind == "inductor"), key=lambda p: p.ref):
            if len(ind.nets) != 2:
                continue
            best = None
            for net in sorted(ind.nets):
                score, kind, ev = self._sw_score(net)
                if score > 0 and (best is None or score > best[3]):
                    best = (net, ind, kind, score, ev)
            if best is not None:
                # the inductor's other end must reach a rail (capacitors or a connector)
                other = next(iter(ind.nets - {best[0]}))
                rail, _ = self._resolve_rail(other, {best[0]})
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

    # -- helpers ------------------------------------------------------------------------------
    def _resolve_rail(self, net: str, exclude: set[str]) -> tuple[str, Part | None]:
        """Follow a net with no capacitor or connector through one series resistor to a rail."""
        nl = self.nl
        if nl.is_railish(net):
            return net, None
        for r in nl.on(net, "resistor"):
            if len(r.nets) != 2:
                continue
            other = next(iter(r.nets - {net}))
            if other in exclude:
                continue
            if nl.is_railish(other):
                return other, r
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

    def _ground_of(self, nets: list[str], named: str | None,
                   avoid: set[str] = frozenset()) -> tuple[str | None, float, list[str]]:
        """Ground among candidate rails: a usual ground name (with capacitor returns), else not a
        rectifier diode's cathode side, then the rail most capacitors return to."""
        nl = self.nl
        if named:
            return named, 1.0, ["named in loopcheck.toml"]
        nets = [n for n in dict.fromkeys(nets) if n]
        if not nets:
            return None, 0.0, []
        scores = {}
        for n in nets:
            returns = sum(1 for c in nl.on(n, "capacitor") if len(c.nets) == 2
                          and next(iter(c.nets - {n})) in nets)
            all_caps = len(nl.on(n, "capacitor"))
            # a usual ground name decides among rails with capacitor returns; else the count does
            scores[n] = (returns > 0 and bool(GROUND_NAMES.match(n)), n not in avoid, all_caps, returns,
                         nl.pad_count(n), n)
        best = max(nets, key=lambda n: scores[n])
        ev = [f"{scores[best][2]} capacitors return to it"]
        conf = 0.7
        ranked = sorted((v[2] for v in scores.values()), reverse=True)
        if len(ranked) > 1 and scores[best][2] == ranked[0] and ranked[0] > ranked[1]:
            conf = 0.85
        if avoid & set(nets) and not scores[best][0]:
            ev.append(f"not {', '.join(sorted(avoid & set(nets)))}: a rectifier's cathode side")
        if GROUND_NAMES.match(best):
            conf = min(1.0, conf + 0.1)
            ev.append(f"net name {best!r} is a usual ground name")
        return best, conf, ev

    # -- one stage ----------------------------------------------------------------------------
    def build(self, name: str, sw: str, inductor: Part, switching: str, sw_evidence: list[str],
              fixed: dict[str, Any]) -> Stage:
        nl = self.nl
        missing: list[str] = []
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
        if switching == "integrated":
            ic = ics[0].part
            ic_rails = sorted(n for n in ic.nets - {sw} if nl.is_railish(n))
        rails = [x_rail] + [e.rail for e in transistors + diodes if e.rail] + ic_rails
        cathode_sides = set()
        for e in diodes:
            k, _ = self._diode_cathode(e.part)
            if k is not None and k != sw:
                cathode_sides.add(k)
        ground, g_conf, g_ev = self._ground_of(rails, fixed.get("ground_net"), cathode_sides)

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
                    topology, topo_ev, topo_conf = self._buck_or_boost(x_rail, [e.rail for e in off_ground], sw)
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
                    others = [n for n in ic_rails if n not in (ground, x_rail)]
                    topology, topo_ev, topo_conf = self._buck_or_boost(x_rail, others, sw)
            switch_el = ic_el
            if ext is not None and (ext.rail == ground or topology != "buck"):
                rect_el = ext
            else:
                rect_el = ic_el
            others = [n for n in ic_rails if n not in (ground, x_rail, sw)]
            if topology == "buck":
                output_net = x_rail
                input_net = fixed.get("input_net") or (max(others, key=self._input_likeness) if others else None)
            elif topology == "boost":
                input_net = x_rail
                output_net = (ext.rail if ext is not None and ext.rail else
                              (min(others, key=self._input_likeness) if others else None))
            else:
                input_net = max(others, key=self._input_likeness) if others else None
                output_net = ext.rail if ext is not None else None
            if ic is not None and not diodes and rect_el is ic_el:
                topo_ev += "; switches inside the IC"
        input_net = fixed.get("input_net") or input_net
        output_net = fixed.get("output_net") or output_net

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
        stage_ev = "; ".join(sw_evidence + ([f"topology {stage.topology}: {topo_ev}"] if topo_ev else []))
        self.messages.append(f"{name}: {stage.topology} ({switching}) at switch node {sw}: {stage_ev}")
        return stage

    def _input_likeness(self, net: str) -> tuple:
        nl = self.nl
        return (bool(INPUT_NAMES.search(net)) and not OUTPUT_NAMES.search(net),
                bool(nl.on(net, "ic")), bool(nl.on(net, "connector")), -bool(OUTPUT_NAMES.search(net)), net)

    def _buck_or_boost(self, x_rail: str, other_rails: list[str], sw: str) -> tuple[str, str, float]:
        """A synchronous pair (or integrated switches) cannot tell buck from boost by topology:
        decide from the operating point, then net names, then which rail feeds other ICs (the
        loads hang on the output)."""
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
        if OUTPUT_NAMES.search(x_rail) or (other and INPUT_NAMES.search(other) and not OUTPUT_NAMES.search(other)):
            return "buck", f"net names: inductor to {x_rail}, switch from {other}", 0.8
        if INPUT_NAMES.search(x_rail) or (other and OUTPUT_NAMES.search(other)):
            return "boost", f"net names: inductor from {x_rail}, rectifier to {other}", 0.8
        own = {p.ref for p in self.nl.on(sw, "ic")}
        gate_ics = set()
        for t in self.nl.on(sw, "transistor"):
            for n in t.nets - {sw}:
                gate_ics |= {p.ref for p in self.nl.on(n, "ic")}
        own |= gate_ics

        def loads(net):
            return {p.ref for p in self.nl.on(net, "ic")} - own

        if other and len(loads(x_rail)) != len(loads(other)):
            if len(loads(x_rail)) > len(loads(other)):
                return "buck", (f"{x_rail} (the inductor's far end) feeds {len(loads(x_rail))} other IC(s), "
                                f"{other} {len(loads(other))}: the loads hang on the output"), 0.7
            return "boost", (f"{other} feeds {len(loads(other))} other IC(s), {x_rail} (the inductor's far end) "
                             f"{len(loads(x_rail))}: the loads hang on the output"), 0.7
        if other and self.nl.on(other, "ic") and not self.nl.on(x_rail, "ic"):
            return "buck", f"{other} feeds an IC pin, {x_rail} does not", 0.6
        return "buck", ("assumed buck: a synchronous pair or switches inside an IC read the same as a "
                        "boost from the netlist; name topology in loopcheck.toml to be sure"), 0.5

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
        boot = [c for c in self.nl.on(sw, "capacitor")
                if len(c.nets) == 2 and self._bootstrap_net(next(iter(c.nets - {sw})), c)]
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
        # only resistors on the controller's own nets can have both nets reach its pins
        near = {r.ref: r for net in sorted(controller.nets) for r in nl.on(net, "resistor")}
        for r in near.values():
            if len(r.nets) != 2 or r.ref in exclude:
                continue
            a, b = sorted(r.nets)
            if not (controller.terminals_on(a) and controller.terminals_on(b)):
                continue
            if not (a in power_nets and b in power_nets):
                continue
            conf, ev = 0.7, [f"resistor in the power path between {a} and {b}, both nets reach "
                             f"{controller.ref} pins"]
            if r in series:
                conf += 0.15
                ev.append("in series with the inductor or switch")
            v = r.value_si
            if v is not None:
                if v <= 1.0:
                    conf += 0.1
                    ev.append(f"value {r.value} is a sense-resistor value")
                else:
                    conf -= 0.4
                    ev.append(f"value {r.value} is high for a sense resistor")
            if r.ref.upper().startswith("RS"):
                conf += 0.05
            cand = (min(conf, 1.0), r, ev)
            if best is None or cand[0] > best[0]:
                best = cand
        if best is None or best[0] < 0.5:
            return None
        return self._sense_role(best[1], controller, round(best[0], 2), best[2], stage)

    def _sense_role(self, r: Part, controller: Part | None, conf: float, ev: list[str],
                    stage: Stage | None = None) -> Role:
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
            pins = {"sense+": controller.terminals_on(a), "sense-": controller.terminals_on(b)}
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
    def run(self) -> list[Stage]:
        nl = self.nl
        specs = list(self.project.stages)
        fixed_by_spec = {s.name: _validate_spec(s, nl, self.path) for s in specs}
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
        for i, (sw, ind, kind, score, ev) in enumerate(cands):
            name = assigned.get(i, f"stage{i + 1}")
            fixed = fixed_by_spec.get(name, {}) if i in assigned else {}
            if "switch_node" in fixed:
                sw = fixed["switch_node"]
            if "inductor" in fixed:
                ind = nl.parts[fixed["inductor"]]
            stages.append(self.build(name, sw, ind, kind, ev, fixed))
            used_specs.add(name)
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
                    raise _project_error(self.path, f"stages.{spec.name}.switch_node",
                                         f"stages.{spec.name}.switch_node: net {sw!r} joins no inductor "
                                         "(name the inductor too)")
                ind_part = inds[0]
            if sw is None or ind_part is None:
                self.messages.append(
                    f"[stages.{spec.name}] in loopcheck.toml matches no stage found on the board; name its "
                    "switch_node and inductor to define it")
                continue
            if sw not in ind_part.nets:
                raise _project_error(self.path, f"stages.{spec.name}.switch_node",
                                     f"stages.{spec.name}.switch_node: net {sw!r} does not touch the inductor "
                                     f"{ind_part.ref}")
            stages.append(self.build(spec.name, sw, ind_part, "", ["named in loopcheck.toml"], f))
        return stages


def _bom_values(project: Project) -> tuple[dict[str, str], list[str]]:
    """Values from a BOM or placement CSV named in the project's [files] mapping."""
    from .readers.bom import read_bom

    out: dict[str, str] = {}
    notes = []
    fab = Path(project.fab)
    for name, role in (project.files or {}).items():
        if role != "bom":
            continue
        path = fab / name if fab.is_dir() else Path(name)
        if fab.is_dir() and path.is_file():
            out.update(read_bom(path))
            notes.append(f"part values from {path.name}")
    return out, notes


def component_values(board: Board, project: Project) -> tuple[dict[str, str], list[str]]:
    """Part values: the fab outputs' (Gerber X3), then a BOM/placement CSV, then [components] win."""
    values: dict[str, str] = dict(board.component_values or {})
    notes = []
    if values:
        notes.append(f"{len(values)} part values from the fab outputs")
    bom, bom_notes = _bom_values(project)
    values.update(bom)
    notes += bom_notes
    if project.components:
        values.update({k: str(v) for k, v in project.components.items()})
        notes.append(f"{len(project.components)} part values from loopcheck.toml [components]")
    return values, notes


def find_stages(board: Board, project: Project) -> StageSearch:
    """Every power stage on the board, from the netlist alone (roles named in the project win).

    Raises InputError when the project file's roles contradict each other or the board.
    """
    values, notes = component_values(board, project)
    det = _Detector(board, project, values)
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
            r = parse_value(values.get(sense.ref))
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
