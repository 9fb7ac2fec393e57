"""Which copper belongs to which net, pad outlines, and the stackup heights the measurements need.

A net's copper on a layer is taken from the Gerber X2 net attributes where the file carries them,
else as the copper islands (connected polygons of the layer) that hold one of the net's pads,
vias or plated holes. A ``MeasureContext`` caches these per board for one analysis run.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import shapely
from shapely.geometry import Point, Polygon, box
from shapely.geometry.base import BaseGeometry
from shapely.ops import unary_union
from shapely import affinity

from ..board import Board, Pad
from ..readers.fast_union import polygons_of

DEFAULT_PAD_MM = 0.6            # pad size assumed where the netlist gives none


def pad_polygon(pad: Pad) -> Polygon:
    """The pad's outline [mm]: its netlist size and rotation, a round pad for a hole, else a 0.6 mm disc."""
    if pad.width_mm and pad.height_mm:
        shape = box(-pad.width_mm / 2, -pad.height_mm / 2, pad.width_mm / 2, pad.height_mm / 2)
        if pad.rotation_deg:
            shape = affinity.rotate(shape, pad.rotation_deg, origin=(0, 0))
        return affinity.translate(shape, pad.x_mm, pad.y_mm)
    if pad.width_mm:
        return Point(pad.x_mm, pad.y_mm).buffer(pad.width_mm / 2, quad_segs=8)
    if pad.hole_mm:
        return Point(pad.x_mm, pad.y_mm).buffer(pad.hole_mm * 0.8, quad_segs=8)
    return Point(pad.x_mm, pad.y_mm).buffer(DEFAULT_PAD_MM / 2, quad_segs=8)


def _stackup_matches(board: Board) -> None:
    """The loader gives every board one copper thickness per layer and one dielectric between each
    pair (project values, else stated defaults: loopcheck.stackup); anything else is a bug."""
    st, n = board.stackup, len(board.layers)
    if len(st.copper_thickness_m) != n or len(st.dielectrics) != max(n - 1, 0):
        raise ValueError(f"stackup of {len(st.copper_thickness_m)} copper layers and {len(st.dielectrics)} "
                         f"dielectrics does not match the board's {n} copper layers")


def layer_z_mm(board: Board) -> list[float]:
    """Height of each copper layer's mid-plane above the bottom of the board [mm], top first (board.stackup)."""
    _stackup_matches(board)
    n = len(board.layers)
    t = board.stackup.copper_thickness_m
    z = [0.0] * n
    for k in range(n - 2, -1, -1):
        d = board.stackup.dielectrics[k].thickness_m
        z[k] = z[k + 1] + (t[k] / 2 + d + t[k + 1] / 2) * 1e3
    return z


def layer_thickness_m(board: Board, index: int) -> float:
    """Copper thickness of layer ``index`` [m] (board.stackup)."""
    _stackup_matches(board)
    return board.stackup.copper_thickness_m[index]


def dielectric_between(board: Board, a: int, b: int) -> tuple[float, float]:
    """(thickness [m], eps_r) of the insulation between copper layers a != b (summed if not adjacent),
    from board.stackup."""
    _stackup_matches(board)
    lo, hi = min(a, b), max(a, b)
    if lo == hi or lo < 0 or hi >= len(board.layers):
        raise ValueError(f"no dielectric between copper layers {a} and {b}")
    ds = board.stackup.dielectrics[lo:hi]
    t = sum(d.thickness_m for d in ds)
    # series capacitors: the effective permittivity of stacked dielectrics
    er = t / sum(d.thickness_m / d.eps_r for d in ds)
    return t, er


@dataclass
class MeasureContext:
    """Per-board caches for one analysis run (no global state)."""

    board: Board
    values: dict[str, str] = field(default_factory=dict)     # ref -> part value text (board, BOM, project)
    connectivity: Any = None       # a connectivity.ConnectivityResult: its copper groups give the nets' copper
    cache: dict[Any, Any] = field(default_factory=dict)
    stages: list[Any] = field(default_factory=list)   # every stage of the board (dcflow: where current enters a rail)
    inductance_method: str = "field"   # hot-loop inductance: "field" (field solve) or "fast" (path sum)

    def value_of(self, ref: str) -> str | None:
        return self.values.get(ref) or self.board.component_values.get(ref)

    def islands(self, layer: int) -> tuple[list[Polygon], shapely.STRtree]:
        key = ("islands", layer)
        if key not in self.cache:
            polys = polygons_of(self.board.layers[layer].geometry)
            self.cache[key] = (polys, shapely.STRtree(polys))
        return self.cache[key]

    def net_points(self, net: str) -> list[tuple[int, float, float]]:
        """(layer, x, y) of every pad, via and plated hole of the net (holes: where the net has copper)."""
        pts = []
        for pad in self.board.nets.get(net, []):
            for layer in pad.layers:
                if 0 <= layer < len(self.board.layers):
                    pts.append((layer, pad.x_mm, pad.y_mm))
        return pts

    def net_copper(self, net: str) -> dict[int, BaseGeometry]:
        """Layer index -> the net's copper on that layer (layers without any left out)."""
        key = ("net", net)
        if key in self.cache:
            return self.cache[key]
        out: dict[int, BaseGeometry] = {}
        if self.connectivity is not None and getattr(self.connectivity, "pad_group", None):
            from ..connectivity import net_copper as group_copper
            out = {k: g for k, g in group_copper(self.board, self.connectivity, net).items() if not g.is_empty}
            if out:
                self.cache[key] = out
                return out
        pts = self.net_points(net)
        for layer in range(len(self.board.layers)):
            lay = self.board.layers[layer]
            if net in lay.net_copper and not lay.net_copper[net].is_empty:
                out[layer] = lay.net_copper[net]
                continue
            here = [(x, y) for (l, x, y) in pts if l == layer]
            if not here:
                continue
            polys, tree = self.islands(layer)
            if not polys:
                continue
            idx = tree.query(shapely.points(np.asarray(here)), predicate="intersects")
            hit = sorted({int(i) for i in idx[1]})
            if hit:
                out[layer] = unary_union([polys[i] for i in hit])
        self.cache[key] = out
        return out

    def via_sites(self, net: str) -> list[tuple[float, float, float, tuple[int, ...]]]:
        """(x, y, drill_mm, layers joined) for every plated hole of the net: netlist vias and
        through-hole pads, and drill-file holes that land in the net's copper on two or more layers."""
        key = ("vias", net)
        if key in self.cache:
            return self.cache[key]
        copper = self.net_copper(net)
        sites: dict[tuple[float, float], tuple[float, float, float, tuple[int, ...]]] = {}
        for pad in self.board.nets.get(net, []):
            if pad.hole_mm and pad.plated and len(pad.layers) > 1:
                layers = tuple(l for l in pad.layers if l in copper)
                if len(layers) > 1:
                    sites[(round(pad.x_mm, 3), round(pad.y_mm, 3))] = (pad.x_mm, pad.y_mm, pad.hole_mm, layers)
        if len(copper) > 1 and self.board.holes:
            plated = [h for h in self.board.holes if h.plated and h.end is None]
            if plated:
                inside = {layer: shapely.contains_xy(g, [h.x_mm for h in plated], [h.y_mm for h in plated])
                          for layer, g in copper.items()}
                for n, h in enumerate(plated):
                    layers = tuple(sorted(l for l in copper if inside[l][n]))
                    k = (round(h.x_mm, 3), round(h.y_mm, 3))
                    if len(layers) > 1 and k not in sites:
                        sites[k] = (h.x_mm, h.y_mm, h.diameter_mm, layers)
        out = list(sites.values())
        self.cache[key] = out
        return out

    def pad_copper(self, pad: Pad, layer: int) -> BaseGeometry:
        """The pad's outline on ``layer``, clipped to the net's copper there where they overlap."""
        poly = pad_polygon(pad)
        cu = self.net_copper(pad.net).get(layer)
        if cu is not None:
            clipped = poly.intersection(cu)
            if clipped.area > 0.2 * poly.area:
                return clipped
        return poly
