"""The switch node: its copper beyond the pads (an antenna, and a capacitance that every edge
charges) and its capacitance to the copper of other nets on the neighbouring layers.

Capacitance: parallel plates over the overlap of the switch-node copper on one layer with other
nets' copper on the adjacent layers, the dielectric from the stackup, with Palmer's first-order
edge (fringing) correction over each overlap piece's outline (``physics.capacitance``):
C = eps0 eps_r [A / d + P / (2 pi) (1 + ln(2 pi a / d))], a = 4 A / P. That is the form for two
equal plates; where the other copper reaches well past the overlap (a plane) the fringe is
larger, up to about twice that term, so the value is an estimate, not a bound. The value
without fringing (a lower bound) is kept in the measurement's detail.

References
----------
H. B. Palmer, "The capacitance of a parallel-plate capacitor by the Schwartz-Christoffel
transformation", Trans. AIEE 56(3), 363-366, 1937.
"""

from __future__ import annotations

from shapely.geometry import box
from shapely.ops import unary_union

from ..findings import Measurement
from ..powerstage import Stage
from .common import measurement, not_made, polygon
from .netcopper import MeasureContext, dielectric_between, pad_polygon
from ..readers.fast_union import polygons_of


def measure_switch_node(ctx: MeasureContext, stage: Stage) -> list[Measurement]:
    sw = stage.switch_node
    if sw is None:
        return [not_made(q, stage, "the switch node was not found") for q in
                ("switch_node.area", "switch_node.capacitance")]
    cu = ctx.net_copper(sw)
    if not cu:
        return [not_made(q, stage, f"the switch node {sw} has no copper", nets=(sw,)) for q in
                ("switch_node.area", "switch_node.capacitance")]
    board = ctx.board
    pads = [p for p in board.nets.get(sw, [])]
    per_layer = {}
    draws = []
    for k, g in sorted(cu.items()):
        pad_area = unary_union([pad_polygon(p) for p in pads if k in p.layers])
        beyond = g.difference(pad_area) if not pad_area.is_empty else g
        per_layer[board.layers[k].name] = float(beyond.area)
        draws += [polygon(list(p.exterior.coords), board.layers[k].name) for p in polygons_of(g)]
    total = sum(per_layer.values())
    c = unary_union(list(cu.values())).centroid
    base = dict(nets=(sw,), x_mm=float(c.x), y_mm=float(c.y))
    out = [measurement("switch_node.area", total, stage, drawings=draws,
                       assumptions=["net copper minus the outlines of the net's pads (netlist sizes)"],
                       detail={"per_layer_mm2": per_layer}, **base)]
    from ..physics.capacitance import parallel_plate_capacitance
    total_c = 0.0
    total_plates = 0.0
    parts = []
    for k, g in cu.items():
        for m in (k - 1, k + 1):
            if not 0 <= m < len(board.layers):
                continue
            other = board.layers[m].geometry.intersection(box(*g.bounds).buffer(0.1))
            own = cu.get(m)
            if own is not None:
                other = other.difference(own)
            ov = g.intersection(other)
            a = ov.area
            if a <= 1e-6:
                continue
            d, er = dielectric_between(board, k, m)
            pieces = [q for q in polygons_of(ov) if q.area > 1e-9]
            # per piece: Palmer's edge term depends on each piece's own size a = 4 A / P
            cap = sum(float(parallel_plate_capacitance(q.area * 1e-6, d, er, perimeter_m=q.length * 1e-3))
                      for q in pieces)
            plates_only = float(parallel_plate_capacitance(a * 1e-6, d, er))
            total_c += cap
            total_plates += plates_only
            parts.append({"layer": board.layers[k].name, "over": board.layers[m].name, "area_mm2": a,
                          "perimeter_mm": sum(q.length for q in pieces),
                          "dielectric_mm": d * 1e3, "eps_r": er, "capacitance_pf": cap * 1e12,
                          "capacitance_no_fringing_pf": plates_only * 1e12})
    out.append(measurement("switch_node.capacitance", total_c * 1e12, stage,
                           assumptions=["parallel plates over the overlap with other nets' copper on the adjacent "
                                        "layers",
                                        "fringing: Palmer's first-order edge correction for two equal plates over "
                                        "the overlap's outline (over a wider plane the fringe is larger, up to "
                                        "about twice that term); the fringe field taken in the dielectric "
                                        f"(without fringing: {total_plates * 1e12:.3g} pF, a lower bound)",
                                        f"dielectric from the stackup ({board.stackup.source})"],
                           detail={"overlaps": parts, "capacitance_no_fringing_pf": total_plates * 1e12},
                           **base))
    return out
