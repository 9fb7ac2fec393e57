"""The board model: what the readers produce and every later step reads.

Geometry is in millimetres, board coordinates as the Gerber files give them (x right, y up, seen
from the top). Copper layers are indexed from the top: 0 is the top layer, ``len(layers) - 1`` the
bottom. Physical quantities of the stackup are SI (metres).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from shapely.geometry.base import BaseGeometry


@dataclass(frozen=True)
class Pad:
    """One netlist point: a component pad (a terminal) or a via.

    ``layers`` are the copper layer indices the pad has copper on (a plated through hole: all).
    """

    net: str
    ref: str                      # reference designator; "" for a via
    pin: str                      # pin number or name; "" for a via
    x_mm: float
    y_mm: float
    layers: tuple[int, ...]
    hole_mm: float | None = None  # drilled diameter; None for a surface pad
    plated: bool = True
    width_mm: float | None = None
    height_mm: float | None = None
    rotation_deg: float = 0.0
    is_via: bool = False
    source_line: int | None = None

    @property
    def terminal(self) -> str:
        """``REF.PIN``, the project's name for a component pad."""
        return f"{self.ref}.{self.pin}" if self.ref else f"via@{self.x_mm:.3f},{self.y_mm:.3f}"


@dataclass(frozen=True)
class Hole:
    """A drilled hole or a routed slot (``end`` is the slot's other end)."""

    x_mm: float
    y_mm: float
    diameter_mm: float
    plated: bool
    end: tuple[float, float] | None = None
    file: str | None = None


@dataclass
class CopperLayer:
    """One copper layer: its copper as one shapely geometry in mm, clipped to the outline."""

    index: int
    name: str                                # "top", "inner1", ..., "bottom"
    file: str | None
    geometry: BaseGeometry
    thickness_m: float
    attributes: dict[str, str] = field(default_factory=dict)   # X2 file attributes
    clipped_area_mm2: float = 0.0            # copper outside the outline, left out
    # X2 object attributes where the file carries them: net name -> copper of that net
    net_copper: dict[str, BaseGeometry] = field(default_factory=dict)

    @property
    def copper_area_mm2(self) -> float:
        return float(self.geometry.area)


@dataclass(frozen=True)
class Dielectric:
    """The insulation between copper layer ``index`` and ``index + 1``."""

    thickness_m: float
    eps_r: float


@dataclass
class Stackup:
    copper_thickness_m: list[float]
    dielectrics: list[Dielectric]
    finished_thickness_m: float
    resistivity_ohm_m: float | None = None   # None: IACS copper at temperature
    source: str = "default"                  # "default" or "project file"


@dataclass
class Outline:
    geometry: BaseGeometry                   # a Polygon in mm
    source: str                              # e.g. "profile layer board-outline.gbr"
    from_extent: bool = False                # True when no outline layer was found


@dataclass
class Board:
    name: str
    layers: list[CopperLayer]
    outline: Outline
    stackup: Stackup
    pads: list[Pad] = field(default_factory=list)
    holes: list[Hole] = field(default_factory=list)
    netlist_file: str | None = None
    drill_files: list[str] = field(default_factory=list)
    component_values: dict[str, str] = field(default_factory=dict)   # ref -> value ("10uF")
    # ref -> footprint or package as a BOM or placement file names it ("0402", "L_0805_2012Metric")
    component_packages: dict[str, str] = field(default_factory=dict)
    component_sides: dict[str, str] = field(default_factory=dict)    # ref -> "top" | "bottom" (placement)
    assumptions: list[str] = field(default_factory=list)
    source: str = ""                         # the folder, zip or project file given
    # each fab file read or set aside -> its role and how that was decided (for inspect)
    inputs: dict[str, str] = field(default_factory=dict)
    # netlist net name (cut to 14 characters by its writer) -> the full name the copper's Gerber
    # X2 net attributes give (loopcheck.netnames); the netlist name stays the net's name
    net_full_names: dict[str, str] = field(default_factory=dict)

    @cached_property
    def nets(self) -> dict[str, list[Pad]]:
        out: dict[str, list[Pad]] = {}
        for pad in self.pads:
            out.setdefault(pad.net, []).append(pad)
        return out

    @cached_property
    def components(self) -> dict[str, list[Pad]]:
        """Component reference -> its pads (vias left out)."""
        out: dict[str, list[Pad]] = {}
        for pad in self.pads:
            if pad.ref and not pad.is_via:
                out.setdefault(pad.ref, []).append(pad)
        return out

    @cached_property
    def terminals(self) -> dict[str, Pad]:
        return {p.terminal: p for p in self.pads if p.ref and not p.is_via}

    @property
    def vias(self) -> list[Pad]:
        return [p for p in self.pads if p.is_via]

    @property
    def outline_size_mm(self) -> tuple[float, float]:
        """(width, height) of the outline's bounding box [mm]; (0, 0) for an empty outline."""
        g = self.outline.geometry
        if g.is_empty:
            return 0.0, 0.0
        x0, y0, x1, y1 = g.bounds
        return float(x1 - x0), float(y1 - y0)

    @property
    def outline_area_mm2(self) -> float:
        """The area inside the outline [mm²] (holes in the outline polygon left out)."""
        g = self.outline.geometry
        return 0.0 if g.is_empty else float(g.area)

    @property
    def hole_counts(self) -> dict[str, int]:
        """Drilled holes and routed slots: ``plated`` and ``non_plated`` round holes, ``slots``."""
        return {"plated": sum(1 for h in self.holes if h.plated and h.end is None),
                "non_plated": sum(1 for h in self.holes if not h.plated and h.end is None),
                "slots": sum(1 for h in self.holes if h.end is not None)}

    @property
    def named_net_count(self) -> int:
        """Nets with a name (the netlist's unnamed pads left out)."""
        return sum(1 for name in self.nets if name)

    @property
    def component_pad_count(self) -> int:
        """Component pads (vias left out)."""
        return sum(1 for p in self.pads if not p.is_via)

    def layer(self, name: str) -> CopperLayer:
        for layer in self.layers:
            if layer.name == name:
                return layer
        raise KeyError(name)
