"""The netlist seen as parts: each component's kind, pins, nets and value, and a net's parts.

Kinds come from reference-designator prefixes (the longest known prefix wins: ``CIN`` is a
capacitor, ``RSNS`` a resistor, ``CR`` a diode, ``TR`` a transistor, ``T`` a transformer), else
from the pin count. Values are read from the BOM, Gerber X3 attributes or the project file
(:func:`loopcheck.stages.component_values`); a footprint-style value (``C_0402_100nf_X7R``)
gives both the package and the value.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Iterable

from ..board import Board, Pad
from ..values import parse_value

# --------------------------------------------------------------------------------------------
# Component kinds and values

# Reference-designator prefixes -> kind; the longest matching prefix wins (CIN before C, RSNS
# before RS before R, CR before C, TR before T). T is a transformer, never a transistor.
_PREFIX_KINDS = {
    "Q": "transistor", "M": "transistor", "TR": "transistor",
    "D": "diode", "CR": "diode",
    "LED": "led",
    "L": "inductor",
    "FB": "ferrite", "FL": "ferrite",
    "T": "transformer",
    "C": "capacitor", "CIN": "capacitor", "COUT": "capacitor",
    "R": "resistor", "RS": "resistor", "RSNS": "resistor", "RSENSE": "resistor", "RSEN": "resistor",
    "U": "ic", "IC": "ic", "VR": "ic", "PS": "ic",
    "J": "connector", "P": "connector", "CN": "connector", "X": "connector",
    "BT": "battery",
    "AE": "antenna", "ANT": "antenna",
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
    # CIN1, COUT2, RSNS1: a longer designator that starts with a known prefix
    for n in range(len(letters) - 1, 0, -1):
        kind = _PREFIX_KINDS.get(letters[:n])
        if kind is not None and letters[:n] in ("CIN", "COUT", "RSNS", "RSENSE", "RSEN", "RS", "CR", "TR"):
            return kind
    # CB1 (a bootstrap capacitor), RG2, QH1: an unknown longer prefix read by its first letter
    # where the pin count fits (two pins for passives and diodes)
    first = letters[:1]
    if first in ("C", "R", "L", "D") and pad_count == 2:
        return _PREFIX_KINDS[first]
    if first in ("Q", "U"):
        return _PREFIX_KINDS[first] if first == "U" or pad_count >= 3 else "other"
    if pad_count >= 5:
        return "ic"
    return "other"


_PACKAGE = re.compile(r"(?<![0-9])(01005|0201|0402|0603|0805|1008|1206|1210|1812|2010|2512|2520|2016|1616)(?![0-9])")
_RATING = re.compile(r"^\d+(\.\d+)?(V|A|W|%)$", re.I)


def package_in(text: str | None) -> str | None:
    """``C_0402_100nf_X7R`` -> ``0402``; None when the text names no chip size."""
    m = _PACKAGE.search(text or "")
    return m.group(1) if m else None


def value_in(text: str | None) -> float | None:
    """A part value in SI units from a value as written (``4u7``, ``10uF``) or a footprint-style
    value (``L_0805_2u2`` -> 2.2e-6, ``C_0402_100nf_X7R`` -> 1e-7); ratings (``50V``) and chip
    sizes are skipped. None when there is none.

    >>> value_in("L_0805_2u2"), value_in("4.7uF 50V"), value_in("0R1")
    (2.2e-06, 4.7e-06, 0.1)
    """
    if text is None:
        return None
    whole = parse_value(text)
    if whole is not None:
        return whole
    for token in re.split(r"[\s_/,]+", str(text)):
        if not token or _PACKAGE.fullmatch(token) or _RATING.match(token) or len(token) < 2:
            continue
        v = parse_value(token)
        if v is not None:
            return v
    return None


@dataclass
class Part:
    ref: str
    kind: str
    pads: list[Pad]
    value: str | None = None
    footprint: str | None = None       # from a BOM or placement file, where one gives it

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
        return value_in(self.value)

    @property
    def package(self) -> str | None:
        """The imperial chip size (``0402``, ``0805`` ...) its value or footprint names, if any."""
        return package_in(self.value) or package_in(self.footprint)

    @property
    def center(self) -> tuple[float, float]:
        return (sum(p.x_mm for p in self.pads) / len(self.pads),
                sum(p.y_mm for p in self.pads) / len(self.pads))



# --------------------------------------------------------------------------------------------
# The netlist as parts and nets


class Netlist:
    def __init__(self, board: Board, values: dict[str, str]):
        self.board = board
        self.parts: dict[str, Part] = {}
        for ref, pads in board.components.items():
            # unconnected pins ("" or N/C in IPC-D-356) join nothing
            joined = [p for p in pads if not NO_CONNECT.match(p.net)]
            if joined:
                self.parts[ref] = Part(ref, component_kind(ref, len(pads)), joined, values.get(ref),
                                       (board.component_packages or {}).get(ref))
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
