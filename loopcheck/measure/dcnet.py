"""One net's copper as input to the DC solver: sheet layers, via links, pad contacts."""

from __future__ import annotations

from ..board import Pad
from .netcopper import MeasureContext, layer_thickness_m, layer_z_mm

PLATING_M = 25e-6        # via barrel plating, common practice


def sheets_and_vias(ctx: MeasureContext, net: str, temperature_c: float):
    """(layers, vias, index) for ``physics.dcsolve.solve_dc``: one SheetLayer per board copper layer
    that holds the net's copper (``index`` maps board layer -> solver layer), a ViaLink per plated hole of the net between each pair of
    consecutive layers it joins. Sheet resistance from the layer's copper at ``temperature_c``."""
    from ..physics import copper
    from ..physics.dcsolve import SheetLayer, ViaLink

    board = ctx.board
    cu = ctx.net_copper(net)
    rho20 = board.stackup.resistivity_ohm_m or copper.RHO20_IACS
    layers = []
    index: dict[int, int] = {}
    for k in sorted(cu):
        t = layer_thickness_m(board, k)
        rs = float(copper.sheet_resistance(t, temperature_c, rho20=rho20))
        index[k] = len(layers)
        layers.append(SheetLayer(cu[k], rs, board.layers[k].name))
    z = layer_z_mm(board)
    vias = []
    for x, y, drill, vl in ctx.via_sites(net):
        for a, b in zip(vl[:-1], vl[1:]):
            h = abs(z[a] - z[b]) * 1e-3
            r = float(copper.via_resistance(h, drill * 1e-3, PLATING_M, temperature_c, rho20=rho20))
            if a in index and b in index:
                vias.append(ViaLink(x, y, index[a], index[b], r, radius_mm=drill / 2))
    return layers, vias, index


def pad_contact(ctx: MeasureContext, name: str, pads: list[Pad], index: dict[int, int], **kw):
    """A Contact on the pads' copper (the first layer of the first pad that has the net's copper)."""
    from ..physics.dcsolve import Contact
    from shapely.ops import unary_union

    cu = ctx.net_copper(pads[0].net)
    layer = next((l for l in pads[0].layers if l in cu and l in index), None)
    if layer is None:
        raise ValueError(f"{pads[0].terminal} lands on no copper of net {pads[0].net}")
    same = [p for p in pads if layer in p.layers]
    geom = unary_union([ctx.pad_copper(p, layer) for p in same])
    return Contact(name, index[layer], geom, **kw)
