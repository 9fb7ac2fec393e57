"""Copper islands against the netlist: which pads the copper really joins.

Copper islands are the polygons of each layer's geometry. Plated holes (drills) and through pads
and vias of the netlist join the islands they pierce on every layer; each netlist pad joins the
island under it on its own layers. The joined islands form copper groups (union-find).

Findings (rule names from RULES.md, severity "error"):

- ``netlist-open``: one net's pads fall in more than one copper group;
- ``netlist-short``: one copper group holds pads of two or more nets;
- ``netlist-alignment``: netlist pads land on no copper, or on copper of the wrong nets. The
  offset, inch/mm scale or mirror that would align them is searched for and named; a transform is
  judged by the share of pads it puts on copper of their own net (on each island, the pads of its
  most common net count), because on a board of planes and pours a shifted pad still lands on
  *some* copper. When such a transform is found, or most pads land on no copper, opens and shorts
  are not judged (they would be noise) and ``aligned`` is False: measurement must stop.

Pads with no net name (blank or N/C in the netlist) join copper but are never an open or a short.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np
import shapely
import shapely.affinity
import shapely.ops
from shapely.geometry import Point, Polygon
from shapely.geometry.base import BaseGeometry

from .board import Board, Pad
from .findings import Finding

RULE_OPEN = "netlist-open"
RULE_SHORT = "netlist-short"
RULE_ALIGNMENT = "netlist-alignment"

ALIGNED_MIN_FRACTION = 0.5      # below this share of pads on copper the netlist is misaligned
HINT_MIN_FRACTION = 0.9         # a transform is named when it lands at least this share ...
HINT_MIN_GAIN = 0.2             # ... and this much more than the netlist as given
SEARCH_MIN_UNLANDED = 0.1       # search for a transform when this share of pads is off copper
MAX_SAMPLE = 600                # pads used to score transforms
INCH_MM = 25.4


@dataclass
class CopperGroup:
    """Islands joined by copper, holes and pads; the pads that land on them."""

    id: int
    islands: list[tuple[int, int]] = field(default_factory=list)   # (layer index, island number)
    pads: list[int] = field(default_factory=list)                   # indices into board.pads

    def nets(self, board: Board) -> list[str]:
        return sorted({board.pads[i].net for i in self.pads if board.pads[i].net})


@dataclass
class Alignment:
    """A transform of netlist coordinates: (x, y) -> mirror, then scale about the origin, then offset."""

    scale: float = 1.0
    mirror_x_about: float | None = None     # x -> 2c - x
    mirror_y_about: float | None = None
    dx_mm: float = 0.0
    dy_mm: float = 0.0
    landed_fraction: float = 0.0            # share of sampled pads on copper of their own net, after
    baseline_fraction: float = 0.0          # ... and as given (the same measure)

    def apply(self, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        if self.mirror_x_about is not None:
            x = 2 * self.mirror_x_about - x
        if self.mirror_y_about is not None:
            y = 2 * self.mirror_y_about - y
        return x * self.scale + self.dx_mm, y * self.scale + self.dy_mm

    @property
    def is_identity(self) -> bool:
        return (self.scale == 1.0 and self.mirror_x_about is None and self.mirror_y_about is None
                and abs(self.dx_mm) < 1e-9 and abs(self.dy_mm) < 1e-9)

    def describe(self) -> str:
        parts = []
        if self.mirror_x_about is not None:
            parts.append(f"mirror x about x = {self.mirror_x_about:.3f} mm (a netlist seen from the bottom)")
        if self.mirror_y_about is not None:
            parts.append(f"mirror y about y = {self.mirror_y_about:.3f} mm")
        if self.scale != 1.0:
            if abs(self.scale - INCH_MM) < 1e-9:
                parts.append("scale by 25.4 (netlist coordinates are inches read as millimetres)")
            elif abs(self.scale - 1 / INCH_MM) < 1e-9:
                parts.append("scale by 1/25.4 (netlist coordinates are millimetres read as inches)")
            elif abs(self.scale - INCH_MM / 10) < 1e-9:
                parts.append("scale by 2.54 (netlist coordinates in 0.0001 inch read as 0.001 mm: "
                             "its UNITS record says mm but the numbers are inches)")
            elif abs(self.scale - 10 / INCH_MM) < 1e-9:
                parts.append("scale by 1/2.54 (netlist coordinates in 0.001 mm read as 0.0001 inch: "
                             "its UNITS record is missing or says inch but the numbers are mm)")
            else:
                parts.append(f"scale by {self.scale:g}")
        if abs(self.dx_mm) > 1e-9 or abs(self.dy_mm) > 1e-9:
            dx = self.dx_mm if abs(self.dx_mm) >= 5e-4 else 0.0
            dy = self.dy_mm if abs(self.dy_mm) >= 5e-4 else 0.0
            parts.append(f"offset by ({dx:+.3f}, {dy:+.3f}) mm")
        return ", then ".join(parts) if parts else "no change"


@dataclass
class ConnectivityResult:
    findings: list[Finding]
    checked: bool
    aligned: bool = True
    alignment_hint: str | None = None
    alignment: Alignment | None = None       # the transform found, when one was named
    not_checked_reason: str | None = None
    islands: dict[int, list[Polygon]] = field(default_factory=dict)      # layer index -> islands
    groups: list[CopperGroup] = field(default_factory=list)
    island_group: dict[tuple[int, int], int] = field(default_factory=dict)
    pad_islands: list[list[tuple[int, int]]] = field(default_factory=list)   # per board.pads index
    pad_group: list[int | None] = field(default_factory=list)
    landed_fraction: float = 1.0
    _pad_index: dict[Pad, int] = field(default_factory=dict, repr=False)

    def copper_group_of_pad(self, pad: Pad) -> int | None:
        """The copper group the pad lands on; None when it lands on no copper."""
        i = self._pad_index.get(pad)
        return None if i is None or not self.pad_group else self.pad_group[i]

    def island_of(self, pad: Pad, layer: int) -> Polygon | None:
        """The copper island under the pad on one layer (by layer index), or None."""
        i = self._pad_index.get(pad)
        if i is None:
            return None
        for lay, k in self.pad_islands[i]:
            if lay == layer:
                return self.islands[lay][k]
        return None

    def islands_of(self, pad: Pad) -> dict[int, Polygon]:
        """The copper island under the pad on each layer it lands on (layer index -> island)."""
        i = self._pad_index.get(pad)
        if i is None:
            return {}
        return {lay: self.islands[lay][k] for lay, k in self.pad_islands[i]}

    def group_copper(self, group: int) -> dict[int, BaseGeometry]:
        """The copper of one group, per layer index."""
        per_layer: dict[int, list[Polygon]] = {}
        for lay, k in self.groups[group].islands:
            per_layer.setdefault(lay, []).append(self.islands[lay][k])
        return {lay: shapely.union_all(polys) if len(polys) > 1 else polys[0]
                for lay, polys in sorted(per_layer.items())}


def net_copper(board: Board, result: ConnectivityResult, net: str) -> dict[int, BaseGeometry]:
    """The copper of a net, per layer index: every island of every group its pads land on.

    A net shorted to another shares that copper (the short is a finding of its own).
    """
    groups = sorted({result.pad_group[i] for i, p in enumerate(board.pads)
                     if p.net == net and result.pad_group[i] is not None})
    per_layer: dict[int, list[Polygon]] = {}
    for g in groups:
        for lay, k in result.groups[g].islands:
            per_layer.setdefault(lay, []).append(result.islands[lay][k])
    return {lay: shapely.union_all(polys) if len(polys) > 1 else polys[0]
            for lay, polys in sorted(per_layer.items())}


# --- the check -----------------------------------------------------------------------------

def _polygons(geom: BaseGeometry) -> list[Polygon]:
    if geom is None or geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    out = []
    for g in getattr(geom, "geoms", []):
        out.extend(_polygons(g))
    return [p for p in out if p.area > 0]


class _UnionFind:
    def __init__(self, n: int):
        self.parent = list(range(n))

    def find(self, a: int) -> int:
        root = a
        while self.parent[root] != root:
            root = self.parent[root]
        while self.parent[a] != root:
            self.parent[a], a = root, self.parent[a]
        return root

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


class _Copper:
    """Islands and their STRtrees per layer, for point and shape queries."""

    def __init__(self, board: Board):
        self.layers = [layer.index for layer in board.layers]
        self.islands: dict[int, list[Polygon]] = {}
        self.trees: dict[int, shapely.STRtree] = {}
        self.offset: dict[int, int] = {}
        self.arrays: dict[int, np.ndarray] = {}
        n = 0
        for layer in board.layers:
            polys = _polygons(layer.geometry)
            self.islands[layer.index] = polys
            arr = np.array(polys, dtype=object)
            # a plane island can have 10^5 vertices: prepare it once, so that each point or hole
            # test against it is an indexed lookup rather than a walk around its boundary
            shapely.prepare(arr)
            self.arrays[layer.index] = arr
            self.trees[layer.index] = shapely.STRtree(polys)
            self.offset[layer.index] = n
            n += len(polys)
        self.count = n

    def node(self, layer: int, k: int) -> int:
        return self.offset[layer] + k

    def hits(self, layer: int, shapes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(shape index, island number) pairs where a shape touches an island of the layer."""
        arr = self.arrays.get(layer)
        if arr is None or len(arr) == 0 or len(shapes) == 0:
            return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
        si, ii = self.trees[layer].query(shapes)            # bounding boxes only
        if len(si) == 0:
            return si, ii
        ok = shapely.intersects(arr[ii], shapes[si])        # prepared islands first
        return si[ok], ii[ok]

    def points_on(self, layer: int, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        """For each point, the island number it lies on (boundary included), or -1."""
        out = np.full(len(x), -1, dtype=np.int64)
        if layer not in self.trees or not self.islands[layer] or len(x) == 0:
            return out
        pts = shapely.points(np.asarray(x, float), np.asarray(y, float))
        si, ii = self.hits(layer, pts)
        out[si] = ii
        return out


def _pad_shape(pad: Pad) -> BaseGeometry | None:
    """The pad's own footprint where the netlist gives its size (a rectangle) or its hole."""
    if pad.width_mm and pad.width_mm > 0:
        w = pad.width_mm
        h = pad.height_mm if pad.height_mm and pad.height_mm > 0 else w
        shape = shapely.box(-w / 2, -h / 2, w / 2, h / 2)
        if pad.rotation_deg:
            shape = shapely.affinity.rotate(shape, pad.rotation_deg, origin=(0, 0))
        return shapely.affinity.translate(shape, pad.x_mm, pad.y_mm)
    if pad.hole_mm and pad.hole_mm > 0:
        return Point(pad.x_mm, pad.y_mm).buffer(pad.hole_mm / 2, 16)
    return None


def check_connectivity(board: Board) -> ConnectivityResult:
    """Copper groups against the netlist: opens, shorts and misalignment. See the module docstring."""
    copper = _Copper(board)
    pads = board.pads
    result = ConnectivityResult(findings=[], checked=bool(pads), islands=copper.islands)
    result._pad_index = {}
    for i, p in enumerate(pads):
        result._pad_index.setdefault(p, i)
    uf = _UnionFind(copper.count)

    # pads -> islands under them
    pad_islands: list[list[tuple[int, int]]] = [[] for _ in pads]
    if pads:
        xs = np.array([p.x_mm for p in pads])
        ys = np.array([p.y_mm for p in pads])
        for lay in copper.layers:
            on = [i for i, p in enumerate(pads) if lay in p.layers]
            if not on:
                continue
            hit = copper.points_on(lay, xs[on], ys[on])
            for i, k in zip(on, hit):
                if k >= 0:
                    pad_islands[i].append((lay, int(k)))
                else:
                    k2 = _island_under_shape(copper, lay, pads[i])
                    if k2 is not None:
                        pad_islands[i].append((lay, k2))
    # a pad joins all islands under it (a through pad: across the layers, by its plating)
    for isl in pad_islands:
        for (la, ka), (lb, kb) in zip(isl, isl[1:]):
            uf.union(copper.node(la, ka), copper.node(lb, kb))

    # plated holes and slots join the islands they pierce on every layer
    plated = [h for h in board.holes if h.plated]
    if plated:
        shapes = np.array([
            (shapely.LineString([(h.x_mm, h.y_mm), h.end]) if h.end is not None else Point(h.x_mm, h.y_mm))
            .buffer(max(h.diameter_mm / 2, 1e-3), 8) for h in plated], dtype=object)
        first_node = np.full(len(plated), -1, dtype=np.int64)
        for lay in copper.layers:
            si, ii = copper.hits(lay, shapes)
            for s_, k in zip(si.tolist(), ii.tolist()):
                node = copper.node(lay, k)
                if first_node[s_] < 0:
                    first_node[s_] = node
                else:
                    uf.union(int(first_node[s_]), node)

    # groups
    root_to_group: dict[int, int] = {}
    groups: list[CopperGroup] = []
    for lay in copper.layers:
        for k in range(len(copper.islands[lay])):
            r = uf.find(copper.node(lay, k))
            if r not in root_to_group:
                root_to_group[r] = len(groups)
                groups.append(CopperGroup(id=len(groups)))
            g = root_to_group[r]
            groups[g].islands.append((lay, k))
            result.island_group[(lay, k)] = g
    pad_group: list[int | None] = []
    for i, isl in enumerate(pad_islands):
        if isl:
            g = result.island_group[isl[0]]
            groups[g].pads.append(i)
            pad_group.append(g)
        else:
            pad_group.append(None)
    result.groups = groups
    result.pad_islands = pad_islands
    result.pad_group = pad_group

    if not pads:
        result.checked = False
        result.not_checked_reason = "no netlist pads (no IPC-D-356 netlist and no X2 pin attributes)"
        return result
    reason = _why_x2_pads_cannot_be_checked(board)
    if reason:
        result.checked = False
        result.not_checked_reason = reason
        return result

    # alignment: pads on no copper, or so many opens and shorts that the netlist may simply sit
    # in the wrong place (on a board of planes and pours a shifted pad still lands on copper)
    unlanded = [i for i, g in enumerate(pad_group) if g is None]
    landed_fraction = 1.0 - len(unlanded) / len(pads)
    result.landed_fraction = landed_fraction
    opens = _opens(board, result)
    shorts = _shorts(board, result, copper)
    named_nets = sum(1 for n in board.nets if n)
    suspicious = (len(unlanded) / len(pads) >= SEARCH_MIN_UNLANDED
                  or len(opens) + len(shorts) >= max(2, SEARCH_MIN_UNLANDED * named_nets))
    found = search_alignment(board, copper) if suspicious else None
    if (found is not None and not found.is_identity and found.landed_fraction >= HINT_MIN_FRACTION
            and found.landed_fraction - found.baseline_fraction >= HINT_MIN_GAIN):
        result.aligned = False
        result.alignment = found
        result.alignment_hint = (f"{found.describe()} puts {found.landed_fraction:.0%} of the pads on "
                                 f"copper of their own net (as given: {found.baseline_fraction:.0%})")
        skipped = len(opens) + len(shorts)
        result.findings.append(_alignment_finding(board, unlanded, landed_fraction, result.alignment_hint,
                                                  stopped=True, skipped=skipped))
        return result
    result.aligned = landed_fraction >= ALIGNED_MIN_FRACTION
    if unlanded:
        hint = None
        if not result.aligned:
            hint = ("no offset, inch/mm scale or mirror aligns the netlist with the copper: is it the "
                    "netlist of this board and revision?")
            result.alignment_hint = hint
        result.findings.append(_alignment_finding(board, unlanded, landed_fraction, hint,
                                                  stopped=not result.aligned,
                                                  skipped=0 if result.aligned else len(opens) + len(shorts)))
    if not result.aligned:
        return result
    result.findings.extend(opens)
    result.findings.extend(shorts)
    return result


def _why_x2_pads_cannot_be_checked(board: Board) -> str | None:
    """Pads from X2 pin attributes (no netlist) say less than a netlist; two cases say too little."""
    if board.netlist_file is not None:
        return None
    if len(board.layers) > 1 and not board.holes:
        return ("no netlist and no drill file: the pads come from X2 pin attributes, and without the "
                "holes nothing says where the layers are joined")
    places: dict[str, set[tuple[float, float]]] = {}
    for p in board.pads:
        if p.ref and not p.is_via:
            places.setdefault(p.terminal, set()).add((round(p.x_mm, 2), round(p.y_mm, 2)))
    repeated = sorted(t for t, where in places.items() if len(where) > 1)
    if repeated:
        return (f"no netlist, and the X2 pin attributes name {len(repeated)} terminals at more than one "
                f"place (e.g. {', '.join(repeated[:3])}): a panel of several boards?")
    return None


def _island_under_shape(copper: _Copper, lay: int, pad: Pad) -> int | None:
    shape = _pad_shape(pad)
    if shape is None or not copper.islands[lay]:
        return None
    _, cand = copper.hits(lay, np.array([shape], dtype=object))
    if len(cand) == 0:
        return None
    best = max(cand, key=lambda k: copper.islands[lay][int(k)].intersection(shape).area)
    return int(best)


# --- findings ------------------------------------------------------------------------------

def _terminal_list(board: Board, idxs: list[int], limit: int = 8) -> str:
    names = sorted({board.pads[i].terminal for i in idxs if board.pads[i].ref and not board.pads[i].is_via})
    vias = sum(1 for i in idxs if board.pads[i].is_via or not board.pads[i].ref)
    shown = names[:limit]
    text = ", ".join(shown)
    if len(names) > limit:
        text += f", ... ({len(names) - limit} more)"
    if vias:
        text += (" + " if text else "") + f"{vias} via{'s' if vias != 1 else ''}"
    return text or "no pads"


def _layer_name(board: Board, index: int | None) -> str | None:
    for layer in board.layers:
        if layer.index == index:
            return layer.name
    return None


def _opens(board: Board, result: ConnectivityResult) -> list[Finding]:
    out = []
    by_net: dict[str, dict[int, list[int]]] = {}
    for i, p in enumerate(board.pads):
        g = result.pad_group[i]
        if not p.net or g is None:
            continue
        by_net.setdefault(p.net, {}).setdefault(g, []).append(i)
    for net, parts in sorted(by_net.items()):
        if len(parts) < 2:
            continue
        ordered = sorted(parts.values(), key=lambda idxs: (-len(idxs), min(idxs)))
        desc = "; ".join(f"[{_terminal_list(board, idxs)}]" for idxs in ordered)
        stray = ordered[-1]
        p = board.pads[stray[0]]
        terminals = tuple(sorted({board.pads[i].terminal for idxs in ordered for i in idxs
                                  if board.pads[i].ref and not board.pads[i].is_via}))
        out.append(Finding(
            rule=RULE_OPEN, severity="error",
            message=(f"net {net} is split into {len(parts)} copper groups that nothing joins: {desc}"),
            x_mm=round(p.x_mm, 4), y_mm=round(p.y_mm, 4), layer=_layer_name(board, p.layers[0]),
            nets=(net,), terminals=terminals))
    return out


def _shorts(board: Board, result: ConnectivityResult, copper: _Copper) -> list[Finding]:
    out = []
    for group in result.groups:
        by_net: dict[str, list[int]] = {}
        for i in group.pads:
            if board.pads[i].net:
                by_net.setdefault(board.pads[i].net, []).append(i)
        if len(by_net) < 2:
            continue
        nets = sorted(by_net)
        x, y, lay, pair = _meeting_point(board, result, group, by_net)
        desc = "; ".join(f"{n}: {_terminal_list(board, by_net[n], 5)}" for n in nets)
        where = f" near ({x:.3f}, {y:.3f}) mm on {_layer_name(board, lay)}" if x is not None else ""
        shown = " and ".join(nets) if len(nets) <= 3 else ", ".join(nets[:3]) + f" and {len(nets) - 3} more"
        terminals = tuple(sorted({board.pads[i].terminal for n in nets for i in by_net[n]
                                  if board.pads[i].ref and not board.pads[i].is_via}))
        out.append(Finding(
            rule=RULE_SHORT, severity="error",
            message=f"copper joins nets {shown}{where} ({desc})",
            x_mm=None if x is None else round(x, 4), y_mm=None if y is None else round(y, 4),
            layer=_layer_name(board, lay), nets=tuple(nets), terminals=terminals))
    return out


def _meeting_point(board: Board, result: ConnectivityResult, group: CopperGroup,
                   by_net: dict[str, list[int]]):
    """A point on the group's copper where two of its nets meet.

    With X2 net attributes on the layer: where the copper of one net touches the other's, or the
    unattributed copper that touches both. Otherwise: the point of the island nearest the midpoint
    of the closest pair of pads of different nets.
    """
    # the closest pair of pads of different nets (among the nets with most pads here: a group
    # that joins dozens of nets needs one place to look first, not every pair)
    nets = sorted(by_net, key=lambda n: (-len(by_net[n]), n))[:6]
    best = None
    for a_i, na in enumerate(nets):
        for nb in nets[a_i + 1:]:
            ia = np.array(by_net[na][:500])
            ib = np.array(by_net[nb][:500])
            xa = np.array([board.pads[k].x_mm for k in ia])
            ya = np.array([board.pads[k].y_mm for k in ia])
            xb = np.array([board.pads[k].x_mm for k in ib])
            yb = np.array([board.pads[k].y_mm for k in ib])
            d = (xa[:, None] - xb[None, :]) ** 2 + (ya[:, None] - yb[None, :]) ** 2
            k = int(np.argmin(d))
            u, v = divmod(k, len(ib))
            if best is None or d.flat[k] < best[0]:
                best = (float(d.flat[k]), int(ia[u]), int(ib[v]), na, nb)
    _, i, j, na, nb = best
    lays_i = {lay for lay, _ in result.pad_islands[i]}
    lays_j = {lay for lay, _ in result.pad_islands[j]}
    common = sorted(lays_i & lays_j) or sorted(lays_i)
    lay = common[0]
    layer = next(layer for layer in board.layers if layer.index == lay)
    island_geoms = [result.islands[l_][k] for l_, k in group.islands if l_ == lay]
    if not island_geoms:
        return None, None, lay, (na, nb)
    island = shapely.union_all(island_geoms)
    # X2 net copper, where the Gerbers carry it
    nc = layer.net_copper or {}
    if na in nc and nb in nc:
        a = nc[na].intersection(island)
        b = nc[nb].intersection(island)
        touch = a.buffer(0.01).intersection(b.buffer(0.01))
        if not touch.is_empty:
            c = touch.representative_point()
            return c.x, c.y, lay, (na, nb)
        attributed = shapely.union_all(list(nc.values()))
        loose = island.difference(attributed.buffer(0.005))
        for part in _polygons(loose):
            grown = part.buffer(0.02)
            if grown.intersects(a) and grown.intersects(b):
                c = part.representative_point()
                return c.x, c.y, lay, (na, nb)
    pi, pj = board.pads[i], board.pads[j]
    mid = Point((pi.x_mm + pj.x_mm) / 2, (pi.y_mm + pj.y_mm) / 2)
    near = shapely.ops.nearest_points(island, mid)[0]
    return near.x, near.y, lay, (na, nb)


def _alignment_finding(board: Board, unlanded: list[int], landed_fraction: float, hint: str | None,
                       stopped: bool, skipped: int) -> Finding:
    n = len(board.pads)
    if unlanded:
        examples = []
        for i in unlanded[:5]:
            p = board.pads[i]
            examples.append(f"{p.terminal} at ({p.x_mm:.3f}, {p.y_mm:.3f}) on {_layer_name(board, p.layers[0])}")
        more = f", ... ({len(unlanded) - 5} more)" if len(unlanded) > 5 else ""
        message = f"{len(unlanded)} of {n} netlist pads land on no copper ({', '.join(examples)}{more})"
    else:
        message = f"the netlist's pads land on copper of the wrong nets ({landed_fraction:.0%} on some copper)"
    if hint:
        message += f"; {hint}"
    if stopped:
        message += "; measurement stops until the netlist and the copper agree"
        if skipped:
            message += f" ({skipped} opens and shorts this would cause are not reported)"
    where = unlanded or list(range(min(n, 1)))
    p = board.pads[where[0]]
    terminals = tuple(sorted({board.pads[i].terminal for i in unlanded
                              if board.pads[i].ref and not board.pads[i].is_via}))
    nets = tuple(sorted({board.pads[i].net for i in unlanded if board.pads[i].net}))
    return Finding(rule=RULE_ALIGNMENT, severity="error", message=message,
                   x_mm=round(p.x_mm, 4), y_mm=round(p.y_mm, 4), layer=_layer_name(board, p.layers[0]),
                   nets=nets if len(nets) <= 20 else (), terminals=terminals if len(terminals) <= 50 else ())


# --- alignment search ----------------------------------------------------------------------

def search_alignment(board: Board, copper: _Copper | None = None, *, seed: int = 0) -> Alignment | None:
    """The transform of the netlist's pads that lands the most of them on copper.

    Candidates: mirror in x or y about the origin or the board centre; scale about the origin by
    25.4 or 1/25.4 (inch against mm) or 2.54 or 1/2.54 (the IPC-D-356 units of 0.0001 inch against
    0.001 mm, a wrong or missing UNITS record); each with its best offset. Offsets are found two ways: votes of hole-to-through-pad
    differences (exact where the drills and the netlist share holes), and the peak of the
    cross-correlation of a pad-centre raster with a copper raster (FFT, cell 0.25 mm or coarser),
    refined on a finer grid by exact point-in-copper counts. Returns None when there are no pads.
    """
    copper = copper or _Copper(board)
    pads = board.pads
    if not pads:
        return None
    rng = np.random.default_rng(seed)
    idx = np.arange(len(pads))
    if len(idx) > MAX_SAMPLE:
        idx = np.sort(rng.choice(idx, MAX_SAMPLE, replace=False))
    sample = [pads[i] for i in idx]
    px = np.array([p.x_mm for p in sample])
    py = np.array([p.y_mm for p in sample])
    pad_layer = np.array([p.layers[0] if p.layers else -1 for p in sample])

    net_names = sorted({p.net for p in sample if p.net})
    net_index = {n: k for k, n in enumerate(net_names)}
    net_id = np.array([net_index.get(p.net, -1) for p in sample], dtype=np.int64)
    n_nets = max(len(net_names), 1)

    def score(x: np.ndarray, y: np.ndarray) -> float:
        """Share of pads on copper of their own net: on each island, the pads of its most common
        net count (a netlist squeezed or shifted onto one plane lands on copper, but not on the
        copper of its own nets). Pads without a net count when they land at all."""
        node = np.full(len(x), -1, dtype=np.int64)
        for lay in copper.layers:
            m = pad_layer == lay
            if m.any():
                k = copper.points_on(lay, x[m], y[m])
                node[m] = np.where(k >= 0, copper.offset[lay] + k, -1)
        landed = node >= 0
        named = landed & (net_id >= 0)
        good = int(np.count_nonzero(landed & (net_id < 0)))
        if named.any():
            keys, counts = np.unique(node[named] * n_nets + net_id[named], return_counts=True)
            islands = keys // n_nets
            order = np.lexsort((-counts, islands))
            first = np.ones(len(order), dtype=bool)
            first[1:] = islands[order][1:] != islands[order][:-1]
            good += int(counts[order][first].sum())
        return good / len(x)

    bounds = board.outline.geometry.bounds if not board.outline.geometry.is_empty else None
    if bounds is None:
        all_b = [layer.geometry.bounds for layer in board.layers if not layer.geometry.is_empty]
        if not all_b:
            return None
        bounds = (min(b[0] for b in all_b), min(b[1] for b in all_b),
                  max(b[2] for b in all_b), max(b[3] for b in all_b))
    cx, cy = (bounds[0] + bounds[2]) / 2, (bounds[1] + bounds[3]) / 2

    bases = [Alignment(), Alignment(scale=INCH_MM), Alignment(scale=1 / INCH_MM),
             Alignment(scale=INCH_MM / 10), Alignment(scale=10 / INCH_MM),
             Alignment(mirror_x_about=0.0), Alignment(mirror_x_about=cx),
             Alignment(mirror_y_about=0.0), Alignment(mirror_y_about=cy)]
    holes = [h for h in board.holes if h.plated and h.end is None]
    hx = np.array([h.x_mm for h in holes])
    hy = np.array([h.y_mm for h in holes])
    drilled = [k for k, p in enumerate(sample) if p.hole_mm]
    rasters = _CopperRaster(board, copper, pad_layer)

    best: Alignment | None = None
    best_exact = True
    for base in bases:
        bx, by = base.apply(px, py)
        cands = [(0.0, 0.0, True)]
        if len(holes) and drilled:
            cands.extend((dx, dy, True) for dx, dy in _hole_votes(hx, hy, bx[drilled], by[drilled], rng))
        peak = rasters.best_offset(bx, by)
        if peak is not None:
            cands.append((peak[0], peak[1], False))
        for dx, dy, exact in cands:
            s = score(bx + dx, by + dy)
            a = Alignment(scale=base.scale, mirror_x_about=base.mirror_x_about,
                          mirror_y_about=base.mirror_y_about, dx_mm=dx, dy_mm=dy, landed_fraction=s)
            if best is None or _better(a, best, exact, best_exact):
                best, best_exact = a, exact
    if best is not None and not best_exact:
        best = _refine(best, px, py, score, rasters.cell)
    if best is not None:
        best = _mirror_absorbs_offset(best)
        best.baseline_fraction = score(px, py)
    return best


def _mirror_absorbs_offset(a: Alignment) -> Alignment:
    """x -> 2c - x + dx is the mirror about c + dx/2: name that mirror rather than an offset."""
    if a.mirror_x_about is not None and a.scale == 1.0 and abs(a.dx_mm) > 0:
        a = dataclasses.replace(a, mirror_x_about=round(a.mirror_x_about + a.dx_mm / 2, 3), dx_mm=0.0)
    if a.mirror_y_about is not None and a.scale == 1.0 and abs(a.dy_mm) > 0:
        a = dataclasses.replace(a, mirror_y_about=round(a.mirror_y_about + a.dy_mm / 2, 3), dy_mm=0.0)
    return a


def _better(a: Alignment, b: Alignment, a_exact: bool = True, b_exact: bool = True) -> bool:
    """More pads landed wins; within 1 %, the simpler transform (fewer parts), then an exact
    offset (from holes) over a raster one, then the smaller offset."""
    if a.landed_fraction > b.landed_fraction + 0.01:
        return True
    if a.landed_fraction < b.landed_fraction - 0.01:
        return False
    ca, cb = _complexity(a), _complexity(b)
    if int(ca // 1000) != int(cb // 1000):
        return ca < cb
    if a_exact != b_exact:
        return a_exact
    return ca < cb


def _complexity(a: Alignment) -> float:
    parts = (a.scale != 1.0) + (a.mirror_x_about is not None) + (a.mirror_y_about is not None)
    return parts * 1000.0 + float(np.hypot(a.dx_mm, a.dy_mm))


def _hole_votes(hx, hy, bx, by, rng, top: int = 5) -> list[tuple[float, float]]:
    """The most common hole-minus-pad differences (0.01 mm bins)."""
    if len(hx) > 300:
        pick = rng.choice(len(hx), 300, replace=False)
        hx, hy = hx[pick], hy[pick]
    if len(bx) > 300:
        pick = rng.choice(len(bx), 300, replace=False)
        bx, by = bx[pick], by[pick]
    dx = (hx[:, None] - bx[None, :]).ravel()
    dy = (hy[:, None] - by[None, :]).ravel()
    keys = np.stack([np.round(dx * 100).astype(np.int64), np.round(dy * 100).astype(np.int64)], axis=1)
    uniq, counts = np.unique(keys, axis=0, return_counts=True)
    order = np.argsort(-counts)[:top]
    return [(float(uniq[k][0]) / 100, float(uniq[k][1]) / 100) for k in order if counts[k] >= 2]


class _CopperRaster:
    """Copper of the layers the pads sit on, rasterised once on a grid around the board."""

    def __init__(self, board: Board, copper: _Copper, pad_layer: np.ndarray, max_cells: int = 1024):
        self.copper = copper
        self.layers = [lay for lay in copper.layers if (pad_layer == lay).any() and copper.islands[lay]]
        self.pad_layer = pad_layer
        self._fft: dict[tuple[int, int, int], np.ndarray] = {}
        b = [board.layers[[l.index for l in board.layers].index(lay)].geometry.bounds for lay in self.layers]
        self.ok = bool(b)
        if not self.ok:
            self.cell = 0.25
            return
        x0, y0 = min(v[0] for v in b), min(v[1] for v in b)
        x1, y1 = max(v[2] for v in b), max(v[3] for v in b)
        span = max(x1 - x0, y1 - y0, 1.0)
        self.cell = max(0.25, span / max_cells)
        self.x0, self.y0 = x0, y0
        self.nx = int(np.ceil((x1 - x0) / self.cell)) + 1
        self.ny = int(np.ceil((y1 - y0) / self.cell)) + 1
        gx = x0 + (np.arange(self.nx) + 0.5) * self.cell
        gy = y0 + (np.arange(self.ny) + 0.5) * self.cell
        X, Y = np.meshgrid(gx, gy)
        self.masks = {}
        for lay in self.layers:
            geom = next(l.geometry for l in board.layers if l.index == lay)
            shapely.prepare(geom)
            self.masks[lay] = shapely.contains_xy(geom, X.ravel(), Y.ravel()).reshape(self.ny, self.nx)

    def best_offset(self, bx: np.ndarray, by: np.ndarray) -> tuple[float, float] | None:
        """The translation (mm) that puts the most pad centres on copper, at raster resolution."""
        if not self.ok:
            return None
        c = self.cell
        # pad raster on its own grid; the correlation's lag range covers any offset between grids
        px0, py0 = float(bx.min()), float(by.min())
        pnx = int(np.ceil((bx.max() - px0) / c)) + 1
        pny = int(np.ceil((by.max() - py0) / c)) + 1
        if pnx * pny > 4_000_000:
            return None
        H, W = self.ny + pny, self.nx + pnx
        total = None
        for lay in self.layers:
            m = self.pad_layer == lay
            if not m.any():
                continue
            pad_img = np.zeros((pny, pnx))
            ix = np.clip(((bx[m] - px0) / c).astype(int), 0, pnx - 1)
            iy = np.clip(((by[m] - py0) / c).astype(int), 0, pny - 1)
            np.add.at(pad_img, (iy, ix), 1.0)
            key = (lay, H, W)
            if key not in self._fft:
                self._fft[key] = np.fft.rfft2(self.masks[lay].astype(float), s=(H, W))
            fa = self._fft[key]
            fb = np.fft.rfft2(pad_img, s=(H, W))
            corr = np.fft.irfft2(fa * np.conj(fb), s=(H, W))
            total = corr if total is None else total + corr
        if total is None:
            return None
        k = int(np.argmax(total))
        ly, lx = divmod(k, W)
        # lag (lx, ly): mask[iy + ly, ix + lx] ~ pad[iy, ix]; negative lags wrap around
        if lx >= self.nx:
            lx -= W
        if ly >= self.ny:
            ly -= H
        dx = self.x0 + lx * c - px0
        dy = self.y0 + ly * c - py0
        return float(dx), float(dy)


def _refine(a: Alignment, px, py, score, cell: float) -> Alignment:
    """Centre the offset in the plateau of equal best scores on a grid finer than the raster."""
    base_x, base_y = Alignment(scale=a.scale, mirror_x_about=a.mirror_x_about,
                               mirror_y_about=a.mirror_y_about).apply(px, py)
    step = cell / 4
    offs = np.arange(-8, 9) * step
    grid = np.zeros((len(offs), len(offs)))
    for i, oy in enumerate(offs):
        for j, ox in enumerate(offs):
            grid[i, j] = score(base_x + a.dx_mm + ox, base_y + a.dy_mm + oy)
    top = grid.max()
    if top < a.landed_fraction - 1e-12:
        return a
    iy, ix = np.nonzero(grid >= top - 1e-12)
    dx = a.dx_mm + float(np.mean(offs[ix]))
    dy = a.dy_mm + float(np.mean(offs[iy]))
    s = score(base_x + dx, base_y + dy)
    if s + 1e-12 < top:       # the plateau is not convex: keep the best grid point nearest the centre
        k = int(np.argmin((offs[ix] - offs[ix].mean()) ** 2 + (offs[iy] - offs[iy].mean()) ** 2))
        dx, dy, s = a.dx_mm + float(offs[ix[k]]), a.dy_mm + float(offs[iy[k]]), top
    # an offset within a hundredth of a round number of 0.01 mm is reported as that
    return Alignment(scale=a.scale, mirror_x_about=a.mirror_x_about, mirror_y_about=a.mirror_y_about,
                     dx_mm=round(dx, 2), dy_mm=round(dy, 2), landed_fraction=s)
