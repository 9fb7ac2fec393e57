"""Routes: the path current takes through one net's copper between two terminals, across layers.

Method (the same for DC and for the switching loop, with one addition for the loop):

* The net's copper is rasterised per layer (pitch 0.05 mm, coarser on large nets so that the raster
  stays under ``MAX_CELLS``); layers are joined at the net's vias and plated holes.
* A shortest path (Dijkstra, ``scipy.sparse.csgraph``, 16-neighbour grid so that straight lines
  at any angle cost within 3 % of their length) runs between the terminals' pad centres. Each step
  costs its length times ``1 + ALPHA * pitch / d``, d the distance to the copper's edge: the path
  keeps to a trace's centreline, where DC current in a uniform trace flows on average, and takes
  the straight line across a plane, the shortest way, where the current spreads. The shape of the
  DC current in a plane is not needed for the route: resistances come from the DC solver
  (``physics.dcsolve``), the route only gives length, width and location.
* For the switching loop, current at the edge rates returns in a plane under the conductor that
  carries it out (the path of least inductance). ``attract_to`` adds a cost that grows with the
  distance from the other legs of the loop (projected on the board), so a return leg in a plane
  runs under them; where a slot or gap in the plane forces it away, the route records the detour.
* A route is first looked for in a window around its terminals (a quarter of their span, at
  least 3 mm, beyond them): a finer raster and a faster search; when the copper leaves the window
  the whole net is searched.
* The path is simplified (Douglas-Peucker, tolerance half the local distance to the copper's edge,
  at most 0.3 mm, so the simplified line stays in copper) into segments; each segment's width is the narrowest
  local copper width on it (twice the distance transform at the path).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage
from scipy.sparse.csgraph import dijkstra
from shapely.geometry import LineString
from shapely.geometry.base import BaseGeometry

from ..board import Pad
from .common import MeasurementGap
from .netcopper import MeasureContext, layer_z_mm
from ..physics.raster import RasterGrid, cell_centre, grid_covering, rasterise

ALPHA = 1.0            # centreline preference: cost weight of pitch / distance-to-edge
MIN_PITCH_MM = 0.05
MAX_PITCH_MM = 0.5     # coarser than this, thin traces drop out of the raster (the route is then not made)
MAX_GRID_CELLS = 3_000_000   # raster cells of the bounding box over all layers (memory: about 30 B a cell)
MAX_CELLS = 200_000    # raster cells of one net's copper over all its layers (speed: about 0.2 s a route)
# copper cells of one raster, a hard cap: a copper cell costs about 0.8 kB with its graph and a
# search on it (measured: 836,000 cells of a 614 x 342 mm pour took 680 MB), so a net of more
# copper than MAX_CELLS at MAX_PITCH_MM gets a coarser pitch still rather than memory without bound
MAX_NODES = 1_000_000
RASTER_NODES_KEPT = 1_200_000   # copper cells of all the rasters kept per board, the newest included
ATTRACT_GAIN = 3.0     # loop return: extra cost per mm away from the outgoing conductor
ATTRACT_CAP_MM = 10.0
SIMPLIFY_MAX_MM = 0.3   # the simplified path stays this close to the raster path (planes)
DETOUR_MM = 1.5        # a return leg this far from the outgoing conductor is reported as a detour

# half of the 16-neighbourhood (the graph is undirected); intermediate cells a knight move crosses
_OFFSETS = [(0, 1), (1, 0), (1, 1), (1, -1), (1, 2), (2, 1), (1, -2), (2, -1)]
_KNIGHT_VIA = {(1, 2): [(0, 1), (1, 1)], (2, 1): [(1, 0), (1, 1)],
               (1, -2): [(0, -1), (1, -1)], (2, -1): [(1, 0), (1, -1)]}


class RouteError(MeasurementGap):
    """No route: the reason in words (a reason of the board, so a stated gap)."""


@dataclass
class Route:
    """A path through one net's copper: 3D polyline (x_mm, y_mm, layer index) with per-segment widths.

    Consecutive points with the same (x, y) and different layers are a via crossing.
    """

    net: str
    start: str                                   # terminal names
    end: str
    points: list[tuple[float, float, int]]
    widths_mm: list[float]                       # one per segment (len(points) - 1)
    vias: list[tuple[float, float, int, int]]    # (x, y, from layer, to layer)
    length_mm: float                             # copper length along the board (vias not counted)
    straight_mm: float                           # pad centre to pad centre
    pitch_mm: float
    assumptions: list[str] = field(default_factory=list)
    detour: tuple[float, float, float] | None = None   # (x, y, distance from the outgoing conductor mm)

    @property
    def xy(self) -> list[tuple[float, float]]:
        return [(x, y) for x, y, _ in self.points]

    @property
    def min_width_mm(self) -> float:
        ws = [w for (w, a, b) in zip(self.widths_mm, self.points[:-1], self.points[1:]) if a[2] == b[2]]
        return min(ws) if ws else (min(self.widths_mm) if self.widths_mm else float("nan"))

    def narrowest(self) -> tuple[float, float, float, int]:
        """(width_mm, x_mm, y_mm, layer) of the narrowest in-layer segment (its midpoint)."""
        best = None
        for w, a, b in zip(self.widths_mm, self.points[:-1], self.points[1:]):
            if a[2] != b[2]:
                continue
            if best is None or w < best[0]:
                best = (w, (a[0] + b[0]) / 2, (a[1] + b[1]) / 2, a[2])
        if best is None:
            a = self.points[0]
            return (self.widths_mm[0] if self.widths_mm else float("nan"), a[0], a[1], a[2])
        return best

    def reversed(self) -> "Route":
        return Route(self.net, self.end, self.start, self.points[::-1], self.widths_mm[::-1],
                     [(x, y, b, a) for (x, y, a, b) in self.vias[::-1]], self.length_mm,
                     self.straight_mm, self.pitch_mm, list(self.assumptions), self.detour)


@dataclass
class NetRaster:
    """One net's copper as a graph of raster cells over its layers."""

    net: str
    grid: RasterGrid
    layers: list[int]                  # board layer indices, in raster order
    masks: np.ndarray                  # (L, ny, nx) bool
    edt_mm: np.ndarray                 # (L, ny, nx) distance from the cell centre to the nearest non-copper cell centre
    index: np.ndarray                  # (L, ny, nx) node id or -1
    nodes: np.ndarray                  # (N, 3) layer slot, row, column
    edge_a: np.ndarray
    edge_b: np.ndarray
    edge_len: np.ndarray               # mm (vias: their height)
    edge_is_via: np.ndarray
    base_cost: np.ndarray              # per node: 1 + ALPHA * pitch / edt
    z_mm: list[float]

    @property
    def pitch_mm(self) -> float:
        return self.grid.pitch_mm

    def node_xy(self, nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        n = self.nodes[nodes]
        return cell_centre(self.grid, n[:, 1], n[:, 2])

    def nearest_node(self, layer: int, x_mm: float, y_mm: float, radius_mm: float) -> int | None:
        """The copper cell on ``layer`` nearest to (x, y) within ``radius_mm``, or None."""
        if layer not in self.layers:
            return None
        s = self.layers.index(layer)
        j, i = self.grid.cell_of(x_mm, y_mm)
        if self.index[s, j, i] >= 0:
            return int(self.index[s, j, i])
        r = max(1, int(math.ceil(radius_mm / self.pitch_mm)))
        j0, j1 = max(j - r, 0), min(j + r + 1, self.grid.ny)
        i0, i1 = max(i - r, 0), min(i + r + 1, self.grid.nx)
        win = self.index[s, j0:j1, i0:i1]
        jj, ii = np.nonzero(win >= 0)
        if len(jj) == 0:
            return None
        xc, yc = cell_centre(self.grid, jj + j0, ii + i0)
        d = np.hypot(xc - x_mm, yc - y_mm)
        k = int(np.argmin(d))
        if d[k] > radius_mm + self.pitch_mm:
            return None
        return int(win[jj[k], ii[k]])

    def costs(self, attract: np.ndarray | None = None) -> np.ndarray:
        c = self.base_cost if attract is None else self.base_cost * attract
        w = self.edge_len * 0.5 * (c[self.edge_a] + c[self.edge_b])
        w[self.edge_is_via] = self.edge_len[self.edge_is_via]
        return w

    def graph(self, attract: np.ndarray | None = None):
        """The weighted graph (CSR); its structure is built once, only the weights change.

        The CSR arrays are built here from the (deduplicated, see ``unique_edges``) edge list, each
        stored entry's edge id kept beside it, so the weights never depend on how a sparse-matrix
        conversion orders or sums entries."""
        if getattr(self, "_csr", None) is None:
            from scipy.sparse import coo_matrix
            N = len(self.nodes)
            E = len(self.edge_a)
            # both directions stored: dijkstra(directed=True) then needs no transpose per call.
            # Each stored entry carries its edge's id + 1 as its value, so the weights are put back
            # by id whatever order the conversion leaves; the pairs are unique (``unique_edges``),
            # and a conversion that merged entries (summing ids) is refused rather than used
            ids = np.arange(1, E + 1, dtype=np.float64)
            g = coo_matrix((np.concatenate([ids, ids]),
                            (np.concatenate([self.edge_a, self.edge_b]),
                             np.concatenate([self.edge_b, self.edge_a]))), shape=(N, N)).tocsr()
            if g.nnz != 2 * E:
                raise ValueError(f"route graph of net {self.net}: {2 * E - g.nnz} repeated node pairs "
                                 "(edges must be unique)")
            self._perm = g.data.astype(np.int64) - 1
            self._csr = g
        if attract is None and getattr(self, "_plain", None) is not None:
            return self._plain
        g = self._csr.copy()
        g.data = self.costs(attract)[self._perm]
        if attract is None:
            self._plain = g
        return g


def unique_edges(a: np.ndarray, b: np.ndarray, length: np.ndarray,
                 is_via: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The undirected edge list with self-loops dropped and each node pair once, at its least
    length (two via records in one raster cell, a via that is also a plated pad, stitching vias
    give the same pair twice). A pair's via flag is that of its kept (shortest) record."""
    a = np.asarray(a, dtype=np.int64)
    b = np.asarray(b, dtype=np.int64)
    length = np.asarray(length, dtype=float)
    is_via = np.asarray(is_via, dtype=bool)
    keep = a != b
    a, b, length, is_via = a[keep], b[keep], length[keep], is_via[keep]
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    order = np.lexsort((length, hi, lo))          # per pair, the shortest first
    lo, hi, length, is_via = lo[order], hi[order], length[order], is_via[order]
    first = np.ones(len(lo), dtype=bool)
    first[1:] = (lo[1:] != lo[:-1]) | (hi[1:] != hi[:-1])
    return lo[first], hi[first], length[first], is_via[first]


def choose_pitch(area_mm2: float, min_width_mm: float | None = None) -> float:
    """Raster pitch [mm]: fine enough for the copper, coarse enough to stay under MAX_CELLS."""
    p = max(MIN_PITCH_MM, math.sqrt(max(area_mm2, 1e-9) / MAX_CELLS))
    return float(min(p, MAX_PITCH_MM))


def net_raster(ctx: MeasureContext, net: str, pitch_mm: float | None = None,
               window: tuple[float, float, float, float] | None = None) -> NetRaster:
    """The net's copper (within ``window`` [mm], if given) as a raster graph (cached in the context)."""
    key = ("raster", net, pitch_mm, window)
    kept = _raster_cache(ctx)
    if key in kept:
        kept.move_to_end(key)
        return kept[key]
    copper = ctx.net_copper(net)
    if not copper:
        raise RouteError(f"net {net} has no copper on any layer")
    if window is not None:
        from shapely.geometry import box as _box
        clip = _box(*window)
        copper = {l: g.intersection(clip) for l, g in copper.items()}
        copper = {l: g for l, g in copper.items() if not g.is_empty and g.area > 0}
        if not copper:
            raise RouteError(f"net {net} has no copper near the terminals")
    layers = sorted(copper)
    area = sum(g.area for g in copper.values())
    minx = min(g.bounds[0] for g in copper.values())
    miny = min(g.bounds[1] for g in copper.values())
    maxx = max(g.bounds[2] for g in copper.values())
    maxy = max(g.bounds[3] for g in copper.values())
    p = pitch_mm or choose_pitch(area)
    # the grid spans the bounding box on every layer: keep it bounded too (memory)
    p = max(p, math.sqrt((maxx - minx) * (maxy - miny) * len(layers) / MAX_GRID_CELLS))
    # and the copper cells, past MAX_PITCH_MM if need be: on a board-sized pour, thin traces may
    # then drop out of the raster, and a route through them is not made (a stated gap)
    p = max(p, math.sqrt(area / MAX_NODES))
    _make_room(kept, area / (p * p))
    grid = grid_covering((minx, miny, maxx, maxy), p)
    masks = np.stack([rasterise(copper[l], grid) for l in layers])
    edt = np.stack([(ndimage.distance_transform_edt(m) * p).astype(np.float32) for m in masks])
    index = -np.ones(masks.shape, dtype=np.int32)
    nodes = np.argwhere(masks)
    index[masks] = np.arange(len(nodes))
    ea, eb, el = [], [], []
    L, ny, nx = masks.shape
    for dj, di in _OFFSETS:
        # cell (j, i) -> (j + dj, i + di)
        js = slice(0, ny - dj)
        jt = slice(dj, ny)
        if di >= 0:
            is_, it = slice(0, nx - di), slice(di, nx)
        else:
            is_, it = slice(-di, nx), slice(0, nx + di)
        both = masks[:, js, is_] & masks[:, jt, it]
        for mj, mi in _KNIGHT_VIA.get((dj, di), []):
            # the two cells the knight move passes over must be copper too
            jm = slice(mj, ny - dj + mj)
            im = slice((0 if di >= 0 else -di) + mi, (nx - di if di >= 0 else nx) + mi)
            both &= masks[:, jm, im]
        a = index[:, js, is_][both]
        b = index[:, jt, it][both]
        ea.append(a)
        eb.append(b)
        el.append(np.full(len(a), p * math.hypot(dj, di)))
    z = layer_z_mm(ctx.board)
    via_a, via_b, via_l = [], [], []
    tmp = NetRaster(net, grid, layers, masks, edt, index, nodes, np.zeros(0, int), np.zeros(0, int),
                    np.zeros(0), np.zeros(0, bool), np.ones(len(nodes)), z)
    for (x, y, drill, vlayers) in ctx.via_sites(net):
        if window is not None and not (window[0] <= x <= window[2] and window[1] <= y <= window[3]):
            continue
        vl = [l for l in vlayers if l in layers]
        ids = [tmp.nearest_node(l, x, y, max(drill / 2, p)) for l in vl]
        pairs = [(l, n) for l, n in zip(vl, ids) if n is not None]
        for (la, na), (lb, nb) in zip(pairs[:-1], pairs[1:]):
            via_a.append(na)
            via_b.append(nb)
            via_l.append(abs(z[la] - z[lb]))
    edge_a = np.concatenate(ea + [np.asarray(via_a, dtype=np.int64)])
    edge_b = np.concatenate(eb + [np.asarray(via_b, dtype=np.int64)])
    edge_len = np.concatenate(el + [np.asarray(via_l, dtype=float)])
    is_via = np.zeros(len(edge_a), dtype=bool)
    if via_a:
        is_via[-len(via_a):] = True
    if via_a:
        # the in-layer edges are unique by construction (one per cell pair and offset); via
        # records can repeat a pair: those are made unique here
        va, vb, vl, vv = unique_edges(edge_a[is_via], edge_b[is_via], edge_len[is_via], is_via[is_via])
        keep = ~is_via
        edge_a = np.concatenate([edge_a[keep], va])
        edge_b = np.concatenate([edge_b[keep], vb])
        edge_len = np.concatenate([edge_len[keep], vl])
        is_via = np.concatenate([is_via[keep], vv])
    e = edt[masks]
    base = 1.0 + ALPHA * p / np.maximum(e, p)
    out = NetRaster(net, grid, layers, masks, edt, index, nodes, edge_a, edge_b, edge_len, is_via, base, z)
    kept[key] = out
    return out


def _make_room(kept, new_nodes: float) -> None:
    """Drop the least recently used rasters until one of ``new_nodes`` copper cells fits beside
    the rest: at most RASTERS_KEPT rasters, RASTER_NODES_KEPT cells in all (a board-sized pour's
    raster is most of that alone; the windowed rasters of an ordinary board are far below it)."""
    while kept and (len(kept) >= RASTERS_KEPT
                    or sum(len(r.nodes) for r in kept.values()) + new_nodes > RASTER_NODES_KEPT):
        kept.popitem(last=False)


RASTERS_KEPT = 3      # net rasters kept per board (the routes traced on them are kept apart)


def _raster_cache(ctx: MeasureContext):
    """The few net rasters last used (least recently used dropped first): a raster with its graph
    is up to a couple of hundred MB, and each route window makes its own, so keeping them all
    grows without bound on a board with many stages (routes themselves are cached in full)."""
    from collections import OrderedDict

    kept = ctx.cache.get("rasters")
    if kept is None:
        kept = ctx.cache["rasters"] = OrderedDict()
    return kept


def _attraction(nr: NetRaster, attract_to: BaseGeometry) -> np.ndarray:
    """Per-node cost factor growing with the distance from ``attract_to`` (projected) [mm]."""
    line_mask = rasterise(attract_to.buffer(nr.pitch_mm * 0.75), nr.grid)
    if not line_mask.any():
        return np.ones(len(nr.nodes))
    dist = ndimage.distance_transform_edt(~line_mask) * nr.pitch_mm
    d = dist[nr.nodes[:, 1], nr.nodes[:, 2]]
    return 1.0 + ATTRACT_GAIN * np.minimum(d, ATTRACT_CAP_MM)


def _simplify(xy: np.ndarray, tol: np.ndarray) -> np.ndarray:
    """Douglas-Peucker with a per-point tolerance; returns the kept indices (sorted)."""
    n = len(xy)
    if n <= 2:
        return np.arange(n)
    keep = np.zeros(n, dtype=bool)
    keep[0] = keep[-1] = True
    stack = [(0, n - 1)]
    while stack:
        a, b = stack.pop()
        if b - a < 2:
            continue
        p0, p1 = xy[a], xy[b]
        seg = p1 - p0
        pts = xy[a + 1:b] - p0
        L = float(np.hypot(*seg))
        if L < 1e-12:
            d = np.hypot(pts[:, 0], pts[:, 1])
        else:
            d = np.abs(seg[0] * pts[:, 1] - seg[1] * pts[:, 0]) / L
        excess = d - tol[a + 1:b]
        k = int(np.argmax(excess))
        if excess[k] > 0:
            m = a + 1 + k
            keep[m] = True
            stack.append((a, m))
            stack.append((m, b))
    return np.nonzero(keep)[0]


def _terminal_nodes(nr: NetRaster, pad: Pad) -> list[int]:
    radius = max((pad.width_mm or 0.6), (pad.height_mm or 0.6), (pad.hole_mm or 0)) / 2
    out = []
    for layer in pad.layers:
        n = nr.nearest_node(layer, pad.x_mm, pad.y_mm, radius)
        if n is not None:
            out.append(n)
    return out


def route(ctx: MeasureContext, start: Pad, ends: list[Pad] | Pad,
          attract_to: BaseGeometry | None = None, pitch_mm: float | None = None) -> Route:
    """The route through ``start.net``'s copper from ``start`` to the nearest of ``ends``.

    ``attract_to``: projected geometry [mm] (the loop's other legs) that a return current follows
    where the copper allows. Raises RouteError with the reason when there is no route.
    """
    if isinstance(ends, Pad):
        ends = [ends]
    key = None
    if attract_to is None:
        # plain routes are asked for by several measurements: trace each once
        key = ("route", start, tuple(ends), pitch_mm)
        if key in ctx.cache:
            hit = ctx.cache[key]
            if isinstance(hit, RouteError):
                raise RouteError(str(hit))
            return hit
    try:
        r = _route(ctx, start, ends, attract_to, pitch_mm)
    except RouteError as exc:
        if key is not None:
            # a fresh error, not ``exc``: its traceback holds the frames of the search and with
            # them the net's raster, graph and distances (hundreds of MB on a board-sized pour)
            ctx.cache[key] = RouteError(str(exc))
        raise
    if key is not None:
        ctx.cache[key] = r
    return r


WINDOW_MARGIN_MM = 3.0     # a route is looked for near its terminals first (margin, or a quarter of the span)


def _window(ctx: MeasureContext, start: Pad, ends: list[Pad], attract_to: BaseGeometry | None):
    """A box around the terminals (and the conductor a return follows), or None when it would
    hold most of the net's copper anyway."""
    xs = [start.x_mm] + [e.x_mm for e in ends]
    ys = [start.y_mm] + [e.y_mm for e in ends]
    if attract_to is not None and not attract_to.is_empty:
        b = attract_to.bounds
        xs += [b[0], b[2]]
        ys += [b[1], b[3]]
    span = max(max(xs) - min(xs), max(ys) - min(ys))
    m = max(WINDOW_MARGIN_MM, 0.25 * span)
    win = (min(xs) - m, min(ys) - m, max(xs) + m, max(ys) + m)
    copper = ctx.net_copper(start.net)
    if not copper:
        return None
    nb = (min(g.bounds[0] for g in copper.values()), min(g.bounds[1] for g in copper.values()),
          max(g.bounds[2] for g in copper.values()), max(g.bounds[3] for g in copper.values()))
    inter = max(0.0, min(win[2], nb[2]) - max(win[0], nb[0])) * max(0.0, min(win[3], nb[3]) - max(win[1], nb[1]))
    full = (nb[2] - nb[0]) * (nb[3] - nb[1])
    if full <= 0 or inter > 0.6 * full:
        return None
    return tuple(round(v, 3) for v in win)


def _route(ctx: MeasureContext, start: Pad, ends: list[Pad], attract_to: BaseGeometry | None,
           pitch_mm: float | None) -> Route:
    win = _window(ctx, start, ends, attract_to)
    if win is not None:
        try:
            return _route_in(ctx, start, ends, attract_to, pitch_mm, win)
        except RouteError:
            pass          # the copper leaves the window: the whole net
    return _route_in(ctx, start, ends, attract_to, pitch_mm, None)


def _route_in(ctx: MeasureContext, start: Pad, ends: list[Pad], attract_to: BaseGeometry | None,
              pitch_mm: float | None, window) -> Route:
    net = start.net
    nr = net_raster(ctx, net, pitch_mm, window)
    src = _terminal_nodes(nr, start)
    if not src:
        raise RouteError(f"{start.terminal} lands on no copper of net {net}")
    targets: list[tuple[int, Pad]] = []
    for e in ends:
        for n in _terminal_nodes(nr, e):
            targets.append((n, e))
    if not targets:
        raise RouteError(f"{', '.join(e.terminal for e in ends)} land(s) on no copper of net {net}")
    attract = _attraction(nr, attract_to) if attract_to is not None and not attract_to.is_empty else None
    g = nr.graph(attract)
    tnodes = np.array([t for t, _ in targets])
    # a bounded search first (most routes are short and direct), the whole net if that fails
    far = max(math.hypot(e.x_mm - start.x_mm, e.y_mm - start.y_mm) for e in ends)
    for limit in (6.0 * far + 10.0, np.inf):
        dist, pred, _ = dijkstra(g, directed=True, indices=src, return_predecessors=True, min_only=True,
                                 limit=limit)
        if np.isfinite(dist[tnodes]).any():
            break
    k = int(np.argmin(dist[tnodes]))
    if not np.isfinite(dist[tnodes[k]]):
        raise RouteError(f"no copper of net {net} joins {start.terminal} to "
                         f"{', '.join(sorted({e.terminal for e in ends}))}")
    end_node, end_pad = targets[k]
    path = [end_node]
    while pred[path[-1]] >= 0:
        path.append(int(pred[path[-1]]))
    path = np.array(path[::-1])
    return _to_route(nr, path, start, end_pad, attract_to)


WIDTH_SEARCH_MM = 1.0   # local width is found exactly up to twice this; wider copper reads at least that


def local_width(nr: NetRaster, nodes: np.ndarray) -> np.ndarray:
    """Local copper width at raster nodes [mm]: the diameter of the largest disc inside the copper
    that covers the node ("local thickness"), 2 max{edt(c) : |x - c| <= edt(c)}.

    Unlike twice the distance to the edge it reads a trace's full width also where the path
    cuts a corner or runs off the centreline.
    """
    if len(nodes) > 200:
        # every k-th node, the others take the nearest sample's value (widths vary slowly along a path)
        k = int(math.ceil(len(nodes) / 200))
        sub = local_width(nr, nodes[::k])
        return np.repeat(sub, k)[:len(nodes)]
    slots = nr.nodes[nodes, 0]
    jj = nr.nodes[nodes, 1]
    ii = nr.nodes[nodes, 2]
    p = nr.pitch_mm
    own = nr.edt_mm[slots, jj, ii]
    best = own.copy()
    r_mm = min(WIDTH_SEARCH_MM, float(nr.edt_mm[np.unique(slots)].max()) if len(nodes) else 0.0)
    R = int(math.ceil(r_mm / p))
    if R < 1:
        return 2 * best
    L, ny, nx = nr.edt_mm.shape
    padded = np.zeros((L, ny + 2 * R, nx + 2 * R))
    padded[:, R:R + ny, R:R + nx] = nr.edt_mm
    dj, di = np.mgrid[-R:R + 1, -R:R + 1]
    dist = np.hypot(dj, di) * p
    ok = dist <= r_mm
    for a, b, d in zip(dj[ok], di[ok], dist[ok]):
        v = padded[slots, jj + R + a, ii + R + b]
        take = (v >= d) & (v > best)
        best[take] = v[take]
    return 2 * best


def _to_route(nr: NetRaster, path: np.ndarray, start: Pad, end: Pad,
              attract_to: BaseGeometry | None) -> Route:
    slots = nr.nodes[path, 0]
    xs, ys = nr.node_xy(path)
    edt = nr.edt_mm[slots, nr.nodes[path, 1], nr.nodes[path, 2]]
    width = local_width(nr, path)
    xs = xs.copy()
    ys = ys.copy()
    xs[0], ys[0] = start.x_mm, start.y_mm
    xs[-1], ys[-1] = end.x_mm, end.y_mm
    points: list[tuple[float, float, int]] = []
    widths: list[float] = []
    vias: list[tuple[float, float, int, int]] = []
    # runs of one layer
    breaks = np.nonzero(np.diff(slots) != 0)[0]
    starts = np.concatenate([[0], breaks + 1])
    stops = np.concatenate([breaks + 1, [len(path)]])
    for r, (a, b) in enumerate(zip(starts, stops)):
        layer = nr.layers[int(slots[a])]
        xy = np.column_stack([xs[a:b], ys[a:b]])
        tol = np.clip(0.5 * edt[a:b], 1.5 * nr.pitch_mm, max(1.5 * nr.pitch_mm, SIMPLIFY_MAX_MM))
        keep = _simplify(xy, tol) + a
        if r > 0:
            # the via crossing: from the previous run's last point to this run's first point
            px, py, pl = points[-1]
            vias.append((px, py, pl, layer))
            widths.append(float(width[a - 1]))
            # keep the via vertical
            points.append((px, py, layer))
            keep = keep[1:] if len(keep) > 1 and keep[0] == a else keep
        for n, idx in enumerate(keep):
            if points and points[-1][2] == layer and (n > 0 or r > 0):
                lo = keep[n - 1] if n > 0 else a
                seg_w = width[lo:idx + 1]
                widths.append(float(seg_w.min()) if len(seg_w) else float(width[idx]))
            points.append((float(xs[idx]), float(ys[idx]), layer))
    # drop zero-length in-layer segments
    clean_p = [points[0]]
    clean_w: list[float] = []
    for pnt, wv in zip(points[1:], widths):
        q = clean_p[-1]
        if q[2] == pnt[2] and math.hypot(pnt[0] - q[0], pnt[1] - q[1]) < 1e-9:
            continue
        clean_p.append(pnt)
        clean_w.append(wv)
    length = sum(math.hypot(b[0] - a[0], b[1] - a[1]) for a, b in zip(clean_p[:-1], clean_p[1:]) if a[2] == b[2])
    straight = math.hypot(end.x_mm - start.x_mm, end.y_mm - start.y_mm)
    route = Route(nr.net, start.terminal, end.terminal, clean_p, clean_w, vias, length, straight, nr.pitch_mm)
    if attract_to is not None and not attract_to.is_empty and len(clean_p) > 1:
        line = LineString([(x, y) for x, y, _ in clean_p])
        # the point of the route farthest from the outgoing conductor
        far = 0.0
        at = (clean_p[0][0], clean_p[0][1])
        for s in np.linspace(0, line.length, max(int(line.length / nr.pitch_mm), 2)):
            pt = line.interpolate(s)
            d = pt.distance(attract_to)
            if d > far:
                far, at = d, (pt.x, pt.y)
        route.detour = (at[0], at[1], far)
    return route


CAST_REACH_MM = 10.0


def cast_width(copper: BaseGeometry, x: float, y: float, ux: float, uy: float,
               reach_mm: float = CAST_REACH_MM) -> float | None:
    """Copper width [mm] across the direction (ux, uy) at (x, y): the piece of a line across it,
    cut with the copper, that holds the point (at most 2 ``reach_mm``); None off copper."""
    from shapely.geometry import Point

    pt = Point(x, y)
    cut = LineString([(x - uy * reach_mm, y + ux * reach_mm), (x + uy * reach_mm, y - ux * reach_mm)]).intersection(copper)
    for piece in getattr(cut, "geoms", [cut]):
        if piece.length > 0 and piece.distance(pt) < 1e-6:
            return float(piece.length)
    return None


def _route_copper(ctx: MeasureContext, r: Route) -> dict[int, BaseGeometry]:
    """The net's copper on the route's layers, clipped to the route's box grown by the cast reach
    (a cut across the route never reaches farther; cutting a whole pour each time is slow)."""
    import shapely

    xs = [p[0] for p in r.points]
    ys = [p[1] for p in r.points]
    m = CAST_REACH_MM + 0.1
    out = {}
    for layer in {p[2] for p in r.points}:
        g = ctx.net_copper(r.net).get(layer)
        if g is not None:
            out[layer] = shapely.clip_by_rect(g, min(xs) - m, min(ys) - m, max(xs) + m, max(ys) + m)
    return out


def segment_widths(ctx: MeasureContext, r: Route) -> list[float]:
    """Per-segment copper width [mm] measured on the geometry at each in-layer segment's midpoint
    (the raster width where the cut misses the copper, and for via crossings)."""
    copper = _route_copper(ctx, r)
    out = []
    for w, a, b in zip(r.widths_mm, r.points[:-1], r.points[1:]):
        L = math.hypot(b[0] - a[0], b[1] - a[1])
        g = copper.get(a[2])
        if a[2] != b[2] or L == 0 or g is None:
            out.append(w)
            continue
        c = cast_width(g, (a[0] + b[0]) / 2, (a[1] + b[1]) / 2, (b[0] - a[0]) / L, (b[1] - a[1]) / L)
        out.append(c if c is not None else w)
    return out


def narrowest_point(ctx: MeasureContext, r: Route, step_mm: float = 0.25,
                    max_casts: int = 400) -> tuple[float, float, float, int]:
    """(width_mm, x_mm, y_mm, layer) of the narrowest copper the route passes, refined on the
    geometry: at points along each in-layer segment a line across the segment is cut with the net's
    copper, and the piece under the point is the local width (exact for a trace, free of the
    raster's one-pitch quantisation). The pads at the route's ends are skipped (pads are entered,
    not crossed), and a neck must hold for one step either side: a point pinch, such as copper
    between two clearance holes in a plane, is not a conductor the current must squeeze through
    (it spreads around, and so does the heat)."""
    from shapely.geometry import Point

    segs = [(a, b) for a, b in zip(r.points[:-1], r.points[1:]) if a[2] == b[2] and (a[0], a[1]) != (b[0], b[1])]
    if not segs:
        return r.narrowest()
    copper = _route_copper(ctx, r)
    total = sum(math.hypot(b[0] - a[0], b[1] - a[1]) for a, b in segs)
    step = max(step_mm, total / max_casts)
    skip = []
    for term in (r.start, r.end):
        p = ctx.board.terminals.get(term)
        if p is not None:
            skip.append(Point(p.x_mm, p.y_mm).buffer(max(p.width_mm or 0.3, p.height_mm or 0.3) / 2))
    best = None

    def width_at(g, x, y, ux, uy):
        return cast_width(g, x, y, ux, uy)

    # the raster already knows each segment's width within a pitch or two: cut only the segments
    # that can hold the narrowest point (casts across large pours are slow)
    raster_w = {(a, b): w for w, a, b in zip(r.widths_mm, r.points[:-1], r.points[1:])}
    w_min = min(raster_w.get(sg, math.inf) for sg in segs)
    near_neck = w_min * 1.5 + 2 * r.pitch_mm
    for a, b in segs:
        g = copper.get(a[2])
        if g is None or raster_w.get((a, b), 0.0) > near_neck:
            continue
        L = math.hypot(b[0] - a[0], b[1] - a[1])
        ux, uy = (b[0] - a[0]) / L, (b[1] - a[1]) / L
        n = max(int(L / step), 1)
        samples = []
        for k in range(n):
            s_ = (k + 0.5) * L / n
            x, y = a[0] + ux * s_, a[1] + uy * s_
            if any(sk.contains(Point(x, y)) for sk in skip):
                samples.append(None)
                continue
            w = width_at(g, x, y, ux, uy)
            samples.append(None if w is None else (w, x, y))
        for k, smp in enumerate(samples):
            if smp is None:
                continue
            w, x, y = smp
            if best is not None and w >= best[0]:
                continue
            # the neck must hold a step either way (within 1.5 w), where there is a sample
            held = True
            for j in (k - 1, k + 1):
                if 0 <= j < len(samples) and samples[j] is not None and samples[j][0] > 1.5 * w:
                    held = False
            if held:
                best = (w, x, y, a[2])
    return best if best is not None else r.narrowest()
