"""The clues that stage detection weighs, each a small function of the netlist view.

No clue decides alone: each returns what it found and why, and topology.py adds them up. Net names
raise confidence; they never decide alone (a board with meaningless net names is read from its
parts and connections).

- :func:`bootstrap_caps`: a capacitor from the switch node to an IC pin and nothing else: the
  supply of a high-side N-channel switch's gate driver (a buck's main switch, or a synchronous
  boost's rectifier);
- :func:`rail_voltage`: the voltage a rail's name carries (``+24V``, ``3V3``, ``VBUS``);
- :func:`feedback_divider`: a resistor pair from a rail to a controller pin and on to ground marks
  the regulated output;
- :func:`pin_weight` and :func:`exposed_pad_net`: how many IC pins and how much pad area sit on
  each net (power pins are many and wide; the exposed pad is usually ground);
- :func:`inductor_class`: a power inductor, or an RF / filter part (its value, its pad size);
- :func:`rail_sources`: what can feed a rail (a connector, a battery, another stage's inductor,
  other ICs); a rail fed by nothing but the stage's own IC is an output;
- :func:`load_only_far_end`: an inductor whose far end reaches a connector and no capacitor drives a
  load (a motor, a heater), it is not a converter's rail;
- :func:`transformers_on`: a transformer winding on a switching net (half-bridge, flyback).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .netlist import GROUND_NAMES, Netlist, Part

# Pad area [mm²] at or below which an inductor is an 0402-size (or smaller) part: an 0402's pads
# are about 0.5 x 0.6 mm; the smallest power inductors (0603, 1608 metric) have pads of about
# 0.8 x 0.9 mm. Common practice (land patterns of the common chip sizes, from memory).
SMALL_PAD_MM2 = 0.45
# Below this an inductor is an RF matching or filter part, not a switching converter's energy
# store: converters switching at up to a few MHz use 0.1 uH and more (common practice).
RF_INDUCTANCE_H = 90e-9
# Capacitors below this on the far end are RF matching parts (pF), not a converter's bulk capacitance.
RF_CAPACITANCE_F = 1e-9


@dataclass(frozen=True)
class Clue:
    """One piece of evidence: what it says (``"buck"``, ``"boost"``), how much, and why."""

    says: str
    weight: float
    why: str


# --------------------------------------------------------------------------------------------
# Bootstrap capacitors

def is_bootstrap_net(nl: Netlist, net: str, cap: Part) -> bool:
    """The far net of a bootstrap capacitor: only that capacitor, IC pins and perhaps a diode or
    resistor (the external bootstrap diode, a series resistor that slows the edge); or only the
    capacitor and one resistor that leads to such an IC pin (the resistor between them)."""
    if GROUND_NAMES.match(net):
        return False
    parts = nl.on(net)
    if any(p.kind == "ic" for p in parts) and all(p is cap or p.kind in ("ic", "diode", "resistor") for p in parts):
        return True
    others = [p for p in parts if p is not cap]
    if len(others) == 1 and others[0].kind == "resistor" and len(others[0].nets) == 2:
        far = next(iter(others[0].nets - {net}))
        far_parts = [p for p in nl.on(far) if p is not others[0]]
        return bool(far_parts) and all(p.kind in ("ic", "diode") for p in far_parts) and any(
            p.kind == "ic" for p in far_parts) and not GROUND_NAMES.match(far)
    return False


def snubber_caps(nl: Netlist, sw: str) -> list[Part]:
    """Capacitors of an RC snubber on ``sw``: the capacitor's far net holds only it and one
    resistor, whose other end is a rail (capacitors or a connector on it)."""
    out = []
    for c in nl.on(sw, "capacitor"):
        if len(c.nets) != 2:
            continue
        far = next(iter(c.nets - {sw}))
        others = [p for p in nl.on(far) if p is not c]
        if len(others) == 1 and others[0].kind == "resistor" and len(others[0].nets) == 2:
            rail = next(iter(others[0].nets - {far}))
            if nl.is_railish(rail) and rail != sw:
                out.append(c)
    return out


def reaches_antenna(nl: Netlist, net: str, hops: int = 3, small: int = 5) -> Part | None:
    """An antenna (AE/ANT designator) reached from ``net`` through up to ``hops`` two-terminal
    inductors, capacitors or connectors (an RF matching network), or None. Only small nets (at
    most ``small`` parts) are crossed: a matching network's nets are; rails and ground are not."""
    seen = {net}
    frontier = [net]
    for _ in range(hops + 1):
        nxt = []
        for n in frontier:
            if len(nl.on(n)) > small:
                continue
            for p in nl.on(n):
                if p.kind == "antenna":
                    return p
                if p.kind in ("inductor", "capacitor", "connector") and len(p.nets) == 2:
                    m = next(iter(p.nets - {n}))
                    if m not in seen and not GROUND_NAMES.match(m):
                        seen.add(m)
                        nxt.append(m)
        frontier = nxt
    return None


def bootstrap_caps(nl: Netlist, sw: str) -> list[Part]:
    """Capacitors from ``sw`` to a net that holds only IC pins (and a diode or resistor): the
    bootstrap capacitor of a high-side N-channel switch."""
    out = []
    for c in nl.on(sw, "capacitor"):
        if len(c.nets) != 2:
            continue
        far = next(iter(c.nets - {sw}))
        if is_bootstrap_net(nl, far, c):
            out.append(c)
    return out


def bootstrap_nets(nl: Netlist, sw: str) -> set[str]:
    """The IC-side nets of the bootstrap capacitors on ``sw`` (never a power rail)."""
    return {next(iter(c.nets - {sw})) for c in bootstrap_caps(nl, sw)}


# --------------------------------------------------------------------------------------------
# Voltages in rail names

_VOLT = re.compile(r"(?<![A-Za-z0-9.])[+-]?(\d{1,3})(?:[.,](\d{1,3}))?V(\d{1,3})?(?![0-9])", re.I)
_NOMINAL = {"VBUS": 5.0, "USB": 5.0}


def rail_voltage(name: str | None) -> float | None:
    """The voltage a rail's name states [V]: ``+24V`` -> 24, ``3V3`` -> 3.3, ``+3.3V`` -> 3.3,
    ``/POWER/12V0`` -> 12, ``VBUS`` -> 5 (USB's nominal); None when the name states none.

    >>> rail_voltage("3V3"), rail_voltage("+24V"), rail_voltage("VBUS"), rail_voltage("SW")
    (3.3, 24.0, 5.0, None)
    """
    if not name:
        return None
    leaf = re.split(r"[/:]", name)[-1]
    for m in _VOLT.finditer(leaf):
        whole, frac, infix = m.group(1), m.group(2), m.group(3)
        if frac and infix:
            continue
        digits = frac or infix
        value = float(f"{whole}.{digits}") if digits else float(whole)
        if 0 < value <= 1000:
            return -value if m.group(0).startswith("-") else value
    upper = leaf.upper()
    for key, v in _NOMINAL.items():
        if re.search(rf"(^|[^A-Z]){key}($|[^A-Z])", upper):
            return v
    return None


# --------------------------------------------------------------------------------------------
# Feedback divider

def feedback_divider(nl: Netlist, rail: str, ic: Part | None, ground: str | None) -> tuple[Part, Part] | None:
    """A resistor from ``rail`` to a net with a pin of ``ic`` (the feedback pin) and a second
    resistor from that net to ``ground``: the divider that regulates ``rail``. (top, bottom) or None."""
    if ic is None or ground is None:
        return None
    for top in nl.on(rail, "resistor"):
        if len(top.nets) != 2:
            continue
        fb = next(iter(top.nets - {rail}))
        if fb == ground or not ic.pads_on(fb):
            continue
        for bottom in nl.on(fb, "resistor"):
            if bottom is not top and bottom.nets == {fb, ground}:
                return top, bottom
    return None


# --------------------------------------------------------------------------------------------
# IC pins and pad area

def pad_area_mm2(pad) -> float:
    """A pad's copper area [mm²] from the netlist's size; 0 when the netlist gives none."""
    if pad.width_mm and pad.height_mm:
        return float(pad.width_mm * pad.height_mm)
    return 0.0


def pin_weight(ic: Part, net: str) -> tuple[int, float]:
    """(pin count, pad area [mm²]) of ``ic`` on ``net``: power pins are many and wide."""
    pads = ic.pads_on(net)
    return len(pads), sum(pad_area_mm2(p) for p in pads)


def exposed_pad_net(ic: Part) -> str | None:
    """The net of an IC's exposed (thermal) pad: one pad at least four times the median pad area.
    Usually ground (on some regulators the switch node or the input: the caller weighs it)."""
    areas = sorted(pad_area_mm2(p) for p in ic.pads)
    if len(areas) < 5 or not areas[-1]:
        return None
    median = areas[len(areas) // 2]
    big = [p for p in ic.pads if pad_area_mm2(p) >= 4 * median > 0]
    if len(big) == 1 or (big and len({p.net for p in big}) == 1):
        return big[0].net
    return None


# --------------------------------------------------------------------------------------------
# The inductor

def inductor_class(nl: Netlist, ind: Part, far_net: str | None = None) -> tuple[str, list[str]]:
    """``"power"``, ``"rf"`` (a matching or filter part) or ``"unknown"``, with the reasons.

    An inductance below :data:`RF_INDUCTANCE_H` is RF; so is a small (0402-size or smaller) part
    whose far end carries only picofarad capacitors. Small pads alone are a weak sign (the caller
    combines it with the rest).
    """
    why = []
    v = ind.value_si
    if v is not None and v < RF_INDUCTANCE_H:
        return "rf", [f"{ind.ref} is {v * 1e9:.3g} nH: an RF matching or filter inductor"]
    small = ind.pads and all(0 < pad_area_mm2(p) <= SMALL_PAD_MM2 for p in ind.pads)
    pkg = ind.package
    if pkg in ("0201", "0402", "01005"):
        small = True
    if small:
        why.append(f"{ind.ref} is an 0402-size part ({pkg or 'pads under %.2f mm2' % SMALL_PAD_MM2})")
        if far_net is not None:
            caps = [c.value_si for c in nl.on(far_net, "capacitor")]
            if caps and all(c is not None and c < RF_CAPACITANCE_F for c in caps):
                return "rf", why + [f"the far end {far_net} carries only picofarad capacitors"]
        return "unknown", why
    if v is not None:
        return "power", [f"{ind.ref} is {v * 1e6:.3g} uH"]
    return "unknown", why


# --------------------------------------------------------------------------------------------
# Rails: what feeds them

def rail_sources(nl: Netlist, net: str, own: set[str]) -> list[str]:
    """What could feed ``net`` besides the parts in ``own`` (the stage's own parts): a connector,
    a battery, another stage's inductor, a regulator or any other IC with a pin on it (an IC may
    be a load or a source: the caller weighs it), a part of unknown kind (a ``PWR`` jack).
    Capacitors, resistors and diodes feed nothing."""
    out = []
    for p in nl.on(net):
        if p.ref in own:
            continue
        if p.kind in ("connector", "battery", "inductor", "ic", "ferrite", "transformer", "other"):
            out.append(p.ref)
    return out


def power_connectors(nl: Netlist, net: str, ground: str | None) -> list[str]:
    """Connectors, batteries and parts of unknown kind (a ``PWR`` jack) on ``net`` with at most
    three connected nets, one of them ground (or only two nets): where power comes in or goes out.
    A many-pin header that also carries the rail is an I/O header, not a power entry."""
    out = []
    for p in nl.on(net):
        if p.kind not in ("connector", "battery", "other"):
            continue
        if len(p.nets) <= 2 or (len(p.nets) <= 3 and ground in p.nets) or (
                ground in p.nets and len(p.pads_on(net)) >= 2 and len(p.pads_on(ground)) >= 2):
            # ... or a rail on several pins beside several ground pins (a USB-C receptacle's VBUS)
            out.append(p.ref)
    return out


def other_ics(nl: Netlist, net: str, own: set[str]) -> list[str]:
    """ICs with a pin on ``net`` other than the stage's own."""
    return [p.ref for p in nl.on(net, "ic") if p.ref not in own]


# --------------------------------------------------------------------------------------------
# Loads that are not converters; transformers

def load_only_far_end(nl: Netlist, far_net: str) -> bool:
    """True when the inductor's far end reaches a connector (or a motor) but no capacitor: it
    drives a load off the board (a motor, a heater, a coil), it does not feed a converter rail."""
    return (not nl.on(far_net, "capacitor")
            and bool(nl.on(far_net, "connector") or nl.on(far_net, "motor")))


def transformers_on(nl: Netlist, net: str) -> list[Part]:
    """Transformers with a winding terminal on ``net``."""
    return nl.on(net, "transformer")


def led_string_nets(nl: Netlist, start: list[str], limit: int = 64) -> set[str]:
    """The nets along LED strings that hang on the ``start`` rails: LEDs (two-net parts of kind
    "led") followed from net to net. An LED driver's sense resistor sits at the string's end."""
    seen: set[str] = set()
    todo = [n for n in start if n]
    while todo and len(seen) < limit:
        net = todo.pop()
        for p in nl.on(net, "led"):
            if len(p.nets) != 2:
                continue
            far = next(iter(p.nets - {net}))
            if far not in seen and far not in start:
                seen.add(far)
                todo.append(far)
    return seen


def bridge_partner(nl: Netlist, far_net: str, sw: str, is_switch_node) -> str | None:
    """The other switching output of a bridge that drives the load on ``far_net``: a net reached
    from ``far_net`` across a connector or a two-terminal load (a motor, a heater) and perhaps one
    more inductor, that itself looks like a switch node (``is_switch_node(net)``). A motor
    H-bridge; not a converter."""
    reached = set()
    for p in nl.on(far_net):
        if p.kind in ("connector", "other", "motor") and 2 <= len(p.nets) <= 4:
            reached |= set(p.nets) - {far_net}
    for n in list(reached):
        for ind in nl.on(n, "inductor"):
            if len(ind.nets) == 2:
                reached.add(next(iter(ind.nets - {n})))
    for n in sorted(reached - {sw, far_net}):
        if not GROUND_NAMES.match(n) and is_switch_node(n):
            return n
    return None
