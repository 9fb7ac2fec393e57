"""One net's copper as input to the DC solver: sheet layers, via links, pad contacts."""

from __future__ import annotations

from ..board import Pad
from .netcopper import MeasureContext, layer_thickness_m, layer_z_mm

PLATING_M = 25e-6        # via barrel plating, common practice


WINDOW_MARGIN_MM = 5.0     # a DC solve covers its terminals' box grown by this, or by half the box's span
WINDOW_SPAN_SHARE = 0.5


def solve_window(points: list[tuple[float, float]]) -> tuple[float, float, float, float]:
    """The box [mm] a DC solve between ``points`` (its contacts, the route between them) covers:
    their bounding box grown by half its span, at least ``WINDOW_MARGIN_MM``. Current between two
    contacts spreads little farther than their distance apart; the copper beyond carries a share
    of it that falls off fast with distance, so the resistance of a path is that of this window's
    copper within a few per cent (at most a little high, as copper is left out)."""
    xs = [p[0] for p in points]
    ys = [p[1] for p in points]
    span = max(max(xs) - min(xs), max(ys) - min(ys))
    m = max(WINDOW_MARGIN_MM, WINDOW_SPAN_SHARE * span)
    return (min(xs) - m, min(ys) - m, max(xs) + m, max(ys) + m)


def window_note(window) -> str:
    return ("DC solve over the copper within " + f"({window[0]:.1f}, {window[1]:.1f})-({window[2]:.1f}, "
            f"{window[3]:.1f}) mm (the terminals' box grown by half its span, at least {WINDOW_MARGIN_MM:g} mm): "
            "copper farther away carries little of the current (the resistance is at most a little high)")


def sheets_and_vias(ctx: MeasureContext, net: str, temperature_c: float,
                    window: tuple[float, float, float, float] | None = None):
    """(layers, vias, index) for ``physics.dcsolve.solve_dc``: one SheetLayer per board copper layer
    that holds the net's copper (``index`` maps board layer -> solver layer), a ViaLink per plated hole of the net between each pair of
    consecutive layers it joins. Sheet resistance from the layer's copper at ``temperature_c``.
    ``window`` (minx, miny, maxx, maxy) [mm]: only the copper and vias inside it (``solve_window``);
    memory and time then follow the window, not the net's size."""
    import shapely

    from ..physics import copper
    from ..physics.dcsolve import SheetLayer, ViaLink

    board = ctx.board
    cu = ctx.net_copper(net)
    if window is not None:
        clipped = {}
        for k, g in cu.items():
            c = shapely.clip_by_rect(g, *window)
            if not c.is_empty and c.area > 0:
                clipped[k] = c
        cu = clipped
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
    barrel: dict[tuple[float, float], float] = {}     # (height, drill) -> resistance: vias repeat
    for x, y, drill, vl in ctx.via_sites(net):
        if window is not None and not (window[0] < x < window[2] and window[1] < y < window[3]):
            continue
        vl = tuple(l for l in vl if l in index)
        for a, b in zip(vl[:-1], vl[1:]):
            h = abs(z[a] - z[b]) * 1e-3
            if (h, drill) not in barrel:
                barrel[(h, drill)] = float(copper.via_resistance(h, drill * 1e-3, PLATING_M, temperature_c,
                                                                 rho20=rho20))
            r = barrel[(h, drill)]
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
