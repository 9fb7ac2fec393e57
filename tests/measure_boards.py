"""Boards built directly from shapely geometry and pad lists, for the measurement tests (no files)."""

from __future__ import annotations

from shapely.geometry import LineString, box
from shapely.ops import unary_union

from loopcheck.board import Board, CopperLayer, Dielectric, Outline, Pad, Stackup

OZ1_M = 35e-6


def trace(points, width_mm):
    """A straight-segment trace with mitred corners and flat ends [mm]."""
    return LineString(points).buffer(width_mm / 2, cap_style="flat", join_style="mitre", mitre_limit=3)


def square_pad(x, y, size):
    return box(x - size / 2, y - size / 2, x + size / 2, y + size / 2)


def smd(net, ref, pin, x, y, size=1.0, layer=0):
    return Pad(net=net, ref=ref, pin=str(pin), x_mm=x, y_mm=y, layers=(layer,), width_mm=size, height_mm=size)


def make_board(layer_geoms, pads, dielectric_mm=None, name="synthetic", copper_m=OZ1_M, eps_r=4.5,
               holes=(), values=None):
    """A Board with the given copper per layer (top first) and pads; stackup from the arguments."""
    n = len(layer_geoms)
    names = ["top"] + [f"inner{k}" for k in range(1, n - 1)] + (["bottom"] if n > 1 else [])
    if dielectric_mm is None:
        dielectric_mm = [1.5] * (n - 1)
    layers = [CopperLayer(index=k, name=names[k], file=None, geometry=unary_union(g) if isinstance(g, list) else g,
                          thickness_m=copper_m) for k, g in enumerate(layer_geoms)]
    allg = unary_union([l.geometry for l in layers])
    minx, miny, maxx, maxy = allg.bounds
    outline = Outline(box(minx - 5, miny - 5, maxx + 5, maxy + 5), "test", from_extent=True)
    stackup = Stackup(copper_thickness_m=[copper_m] * n,
                      dielectrics=[Dielectric(d * 1e-3, eps_r) for d in dielectric_mm],
                      finished_thickness_m=sum(dielectric_mm) * 1e-3 + n * copper_m)
    return Board(name=name, layers=layers, outline=outline, stackup=stackup, pads=list(pads),
                 holes=list(holes), component_values=dict(values or {}))
