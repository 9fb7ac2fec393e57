"""The hot loop's inductance from a field solve of the copper around it (the default method).

The copper within a window around the loop is meshed on every layer (``physics.loopsolve``):
a rectilinear grid, fine at the edges of the loop's conductors and pads, whose cells take the
copper island their centre lies in; the cells are then merged into rectangular blocks that grow
with the distance from where the loop's current flows (its route, the copper edges near it,
its pads and vias, in plan and through the board), so that the cells stay fine where the
current crowds and the unknowns follow the loop rather than the window. Islands of the loop's
nets are joined through their vias and plated holes; the loop's parts are straight links
between their pad centres, lifted into the part's body; islands of other nets (planes, pours)
are meshed the same way and carry only the eddy currents the loop induces in them. The
current of least magnetic energy for 1 A in the loop gives the inductance, the current density
per layer, the centroid line of the current in each leg of the loop, and the share of the
inductance that sits in each stretch of copper, via group and part."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import shapely
from scipy import ndimage
from shapely.geometry import LineString, box

from ..board import Pad
from ..physics import loopsolve
from .netcopper import MeasureContext, layer_thickness_m, layer_z_mm, pad_polygon

MAX_BRANCHES = 5000        # conductors of the dense solve (memory ~ N^2 * 8 bytes, time ~ N^2 .. N^3)
MIN_OTHER_ISLAND_MM2 = 1.0  # other-net islands smaller than this carry no eddy loop worth meshing
EDGE_REACH_MM = 2.0         # copper edges of the loop's nets within this of its path grade the mesh
EDGE_MAX_LINES = 24         # ... at most this many extra cell edges per axis, those nearest the loop first
FINE_MM = (0.1, 0.4)        # finest cell: a third of the narrowest loop conductor, within these bounds
EDGE_FIRST = 1.0            # first cell at a copper edge, as a share of the finest cell (edge grading)
GROWTH = 1.5                # growth of the cells away from the edges
#: height of a part's current above its pads [mm]: the current of a chip part or a leaded
#: package runs in its body, roughly half of a 1 mm body height (an assumption, stated)
PART_LIFT_MM = 0.5
PACKAGE_INDUCTANCE_NOTE = (f"a part is a straight strip between its pad centres, {PART_LIFT_MM} mm above them (its "
                           "current runs in its body, not in the copper plane), with risers down to the pads, "
                           "as wide as its smaller pad; "
                           "the package's own inductance beyond that strip is taken as zero (no table of "
                           "package inductances is applied)")


@dataclass
class FieldLoop:
    """Result of the field solve of one loop (lengths mm, inductance H, per 1 A in the loop)."""

    inductance_h: float
    assumptions: list[str]
    detail: dict
    centroid_legs: list[tuple[str, list[tuple[float, float]]]] = field(default_factory=list)
    centroid_loop: list[tuple[float, float]] = field(default_factory=list)


class FieldSolveError(Exception):
    """The field solve could not be set up (no loop in the meshed copper); the reason in words."""


def _legs(ctx: MeasureContext, terminals):
    pads = [ctx.board.terminals[t] for t in terminals]
    n = len(pads)
    out = []
    for k in range(n):
        a, b = pads[k], pads[(k + 1) % n]
        if a.ref and a.ref == b.ref:
            out.append((a, b, "part"))
        elif a.net == b.net:
            out.append((a, b, "net"))
        else:
            out.append((a, b, "gap"))
    return out


def _pad_size(p: Pad) -> float:
    dims = [x for x in (p.width_mm, p.height_mm) if x] or [x for x in (p.hole_mm,) if x]
    return min(dims) if dims else 0.6


def build_mesh(ctx: MeasureContext, loop, scale: float = 1.0, margin_mm: float | None = None,
               max_branches: int = MAX_BRANCHES, plan_index: int | None = None):
    """The sheet mesh of the window around ``loop`` (a hotloop.LoopPath); ``scale`` multiplies
    the cell sizes (the mesh-convergence check halves it). The first step of the coarsening plan
    whose mesh fits ``max_branches`` is taken, or step ``plan_index`` whatever its size (a mesh
    of the same family at another scale). Returns (mesh, island nets, vias, notes, (fine, coarse),
    plan step)."""
    board = ctx.board
    z_mm = layer_z_mm(board)
    nl = len(board.layers)
    xs = [p[0] for p in loop.points]
    ys = [p[1] for p in loop.points]
    pads = [ctx.board.terminals[t] for t in loop.terminals]
    span = max(max(xs) - min(xs), max(ys) - min(ys), 1.0)
    stack = (max(z_mm) - min(z_mm)) if nl > 1 else 1.6
    margin = margin_mm if margin_mm is not None else float(np.clip(max(0.3 * span, 2.5 * stack), 3.0, 10.0))
    x0, x1 = min(xs) - margin, max(xs) + margin
    y0, y1 = min(ys) - margin, max(ys) + margin
    wmin = min([w for w in loop.widths_mm if w > 0] + [_pad_size(p) for p in pads])
    hs = [abs(z_mm[k] - z_mm[k + 1]) for k in range(nl - 1)]
    fine = float(np.clip(min(wmin / 3, min(hs) if hs else 1.0), *FINE_MM)) * scale
    coarse = float(np.clip(span / 10, 0.8, 3.0)) * scale
    fx, fy = [], []
    path = LineString([(p[0], p[1]) for p in loop.points] + [loop.points[0][:2]])
    n = len(loop.points)
    for i in range(n):
        a, b = loop.points[i], loop.points[(i + 1) % n]
        w = loop.widths_mm[i] if i < len(loop.widths_mm) else wmin
        dx, dy = abs(b[0] - a[0]), abs(b[1] - a[1])
        for p in (a, b):
            fx.append(p[0]); fy.append(p[1])
        if dx >= dy:
            fy += [a[1] - w / 2, a[1] + w / 2, b[1] - w / 2, b[1] + w / 2]
        if dy >= dx:
            fx += [a[0] - w / 2, a[0] + w / 2, b[0] - w / 2, b[0] + w / 2]
    for p in pads:
        s = pad_polygon(p).bounds
        fx += [s[0], s[2]]; fy += [s[1], s[3]]
    # the edges of the loop nets' copper near the loop: the high-frequency current crowds there
    near = path.buffer(EDGE_REACH_MM)
    edge_xy = []
    edges_on: dict[int, list] = {}      # per layer, the copper edges near the route
    for net in dict.fromkeys(p.net for p in pads):
        for k, g in ctx.net_copper(net).items():
            part = g.intersection(near)
            if not part.is_empty:
                edge_xy.append(shapely.get_coordinates(shapely.boundary(part)))
                edges_on.setdefault(k, []).append(shapely.intersection(shapely.boundary(g), near))
    ex, ey = [], []
    if edge_xy:
        xy = np.vstack(edge_xy)
        order = np.argsort(shapely.distance(path, shapely.points(xy)))
        limit = int(round(EDGE_MAX_LINES / scale))
        ex = _nearest_first(xy[order, 0], fx, fine, limit)
        ey = _nearest_first(xy[order, 1], fy, fine, limit)
    # nearby plated holes of the loop's nets: their cells are made to hold copper
    window = box(x0, y0, x1, y1)
    nets = list(dict.fromkeys(p.net for p in pads))
    vias = []
    for net in nets:
        for (vx, vy, dia, layers) in ctx.via_sites(net):
            if window.contains(shapely.points(vx, vy)):
                vias.append((vx, vy, dia, layers, net))
                if path.distance(shapely.points(vx, vy)) < 1.0:
                    fx += [vx - dia / 2 - 0.1, vx + dia / 2 + 0.1]
                    fy += [vy - dia / 2 - 0.1, vy + dia / 2 + 0.1]
    # within the cell budget: first a faster growth, then without the copper-edge lines, then
    # coarser cells (the finest kept below the narrowest loop conductor as long as possible)
    # (the window stays: far cells are merged into coarse blocks, which cost little, and a
    # window cut close to the loop misses the return current's spread in a wide pour)
    # (edge lines, growth, fine and coarse factors)
    plan = [(True, GROWTH, 1.0, 1.0), (True, 2.0, 1.0, 1.5), (False, 2.0, 1.0, 1.5), (False, 2.0, 1.0, 2.5),
            (False, 2.5, 1.0, 3.5)]
    plan += [(False, 2.5, 1.3 ** k, 3.5 * 1.3 ** k) for k in range(1, 8)]
    bx = (min(xs), min(ys), max(xs), max(ys))
    # where the loop's current flows, per layer: along its route, crowded at the edges of its
    # nets' copper near the route, and spreading from the points where it enters a sheet (the
    # parts' links at their pad centres, the vias near the route); the cells are fine there and
    # grow away from it, in plan and through the board
    flow: dict[int, list] = {}
    for i in range(n):
        a, b = loop.points[i], loop.points[(i + 1) % n]
        if a[2] == b[2] and 0 <= a[2] < nl and (a[0], a[1]) != (b[0], b[1]):
            flow.setdefault(int(a[2]), []).append(LineString([a[:2], b[:2]]))
        elif a[2] != b[2]:
            for k in range(max(0, min(a[2], b[2])), min(nl - 1, max(a[2], b[2])) + 1):
                flow.setdefault(k, []).append(shapely.points(a[0], a[1]))
    for k in list(flow):                # the copper edges of the layers the route runs on
        flow[k] += edges_on.get(k, [])
    for p in pads:
        for k in p.layers or (0,):
            if 0 <= k < nl:
                flow.setdefault(k, []).extend([shapely.boundary(pad_polygon(p)), shapely.points(p.x_mm, p.y_mm)])
    for vx, vy, _, layers, _ in vias:
        if path.distance(shapely.points(vx, vy)) < 1.0:
            for k in layers:
                if 0 <= k < nl:
                    flow.setdefault(k, []).append(shapely.points(vx, vy))
    flow_lines = {k: shapely.union_all(v) for k, v in flow.items()}
    m = max(1.5, margin)
    win = (bx[0] - m, bx[1] - m, bx[2] + m, bx[3] + m)

    def mesh_at(step: int):
        edges, growth, kf, kc = plan[step]
        f, c = fine * kf, coarse * kc
        # halving the mesh halves every cell: the growth per cell shrinks with the scale too
        g = 1.0 + (growth - 1.0) * min(scale, 1.0)
        # a grid graded from the feature lines (long cells along a conductor, fine across it),
        # its cells then merged into blocks that grow away from where the loop's current flows
        xe = loopsolve.graded_edges(win[0], win[2], _thin(fx + (ex if edges else []), f / 2), f * EDGE_FIRST, c, g)
        ye = loopsolve.graded_edges(win[1], win[3], _thin(fy + (ey if edges else []), f / 2), f * EDGE_FIRST, c, g)
        labels, island_net = _labels(ctx, xe, ye, box(*win), nets)
        blocks = loopsolve.merge_cells(labels, xe, ye, _block_target(flow_lines, z_mm, xe, ye, f, c, g - 1.0))
        size = loopsolve.count_sheet_branches(labels, blocks, xe, ye)
        return step, f, c, win, xe, ye, labels, island_net, blocks, size

    if plan_index is not None:
        found = mesh_at(plan_index)
    else:
        # the first plan step that fits, by halving the range of steps (the sizes fall along the
        # plan); the last step is taken whatever its size
        lo, hi = 0, len(plan) - 1
        found = None
        while lo < hi:
            mid = (lo + hi) // 2
            trial = mesh_at(mid)
            if trial[-1] <= max_branches:
                found, hi = trial, mid
            else:
                lo = mid + 1
        if found is None or found[0] != lo:
            found = mesh_at(lo)
    step, f, c, (x0, y0, x1, y1), xe, ye, labels, island_net, blocks, _ = found
    fine, coarse = f, c
    vias = [v for v in vias if x0 < v[0] < x1 and y0 < v[1] < y1]
    mesh = loopsolve.SheetMesh(np.asarray(xe) * 1e-3, np.asarray(ye) * 1e-3, labels,
                               np.asarray(z_mm) * 1e-3, np.array([layer_thickness_m(board, k) for k in range(nl)]),
                               blocks=blocks)
    notes = [f"field solve window {x1 - x0:.1f} x {y1 - y0:.1f} mm around the loop, all {nl} copper layers; "
             f"cells {fine:.2f} mm at the loop's conductor edges growing to {coarse:.2f} mm away from the loop's "
             f"copper ({int(blocks.max()) + 1} copper cells)"]
    return mesh, island_net, vias, notes, (fine, coarse), step


def _block_target(flow_lines: dict, z_mm, xe, ye, fine: float, coarse: float, grade: float) -> np.ndarray:
    """Largest cell wanted at every grid cell [mm]: ``fine`` where the loop's current flows
    (``flow_lines``: per layer, the route, copper edges and entry points), growing by ``grade``
    times the distance from them (in plan and through the board), at most ``coarse``."""
    xc = 0.5 * (np.asarray(xe[1:]) + np.asarray(xe[:-1]))
    yc = 0.5 * (np.asarray(ye[1:]) + np.asarray(ye[:-1]))
    X, Y = np.meshgrid(xc, yc, indexing="ij")
    pts = shapely.points(X, Y)
    d_plan = {l: shapely.distance(g, pts) for l, g in flow_lines.items()}
    out = np.full((len(z_mm),) + X.shape, float(coarse))
    for k, z in enumerate(z_mm):
        for l, d in d_plan.items():
            out[k] = np.minimum(out[k], fine + grade * np.hypot(d, z - z_mm[l]))
    return np.maximum(out, fine)


def _nearest_first(values, existing, tol, limit: int = None) -> list[float]:
    """Up to ``limit`` coordinates from ``values`` (nearest the loop first) that are not within
    ``tol`` of one already taken: copper edges grade the mesh without flooding it with lines."""
    limit = EDGE_MAX_LINES if limit is None else limit
    taken = sorted(existing)
    out: list[float] = []
    arr = np.asarray(taken)
    for v in values:
        if len(out) >= limit:
            break
        if arr.size and np.min(np.abs(arr - v)) < tol:
            continue
        out.append(float(v))
        arr = np.append(arr, v)
    return out


def _thin(values, tol):
    """Feature coordinates closer than ``tol`` merged (a cell edge each)."""
    v = np.sort(np.asarray(values, dtype=float))
    if len(v) == 0:
        return v
    keep = np.concatenate([[True], np.diff(v) > tol])
    return v[keep]


def _labels(ctx: MeasureContext, xe, ye, window, nets):
    """Island id per cell and layer (-1 no copper), and the net of each loop-net island (None other)."""
    board = ctx.board
    xe, ye = np.asarray(xe, dtype=float), np.asarray(ye, dtype=float)
    xc = 0.5 * (np.asarray(xe[1:]) + np.asarray(xe[:-1]))
    yc = 0.5 * (np.asarray(ye[1:]) + np.asarray(ye[:-1]))
    X, Y = np.meshgrid(xc, yc, indexing="ij")
    labels = np.full((len(board.layers), len(xc), len(yc)), -1, dtype=int)
    island_net: list[str | None] = []
    # ownership is judged inside the window only: a board-wide plane clipped to the window is a
    # small polygon, and intersecting whole planes with whole nets' copper took seconds a loop
    net_cu = {net: {k: g.intersection(window) for k, g in ctx.net_copper(net).items()} for net in nets}
    for k in range(len(board.layers)):
        polys, tree = ctx.islands(k)
        if not polys:
            continue
        for idx in tree.query(window, predicate="intersects"):
            clip = polys[int(idx)].intersection(window)
            if clip.is_empty:
                continue
            owner = None
            claims = []
            for net in nets:
                g = net_cu[net].get(k)
                if g is None or g.is_empty or not clip.intersects(g):
                    continue
                common = clip.intersection(g).area
                share = common / max(clip.area, 1e-12)
                if share > 0.5 or common > 0.5 * g.area:
                    claims.append((share, net))
            if len(claims) > 1:
                raise FieldSolveError(
                    f"the copper of {' and '.join(n for _, n in claims)} is one island on "
                    f"{board.layers[k].name} (joined in the copper as read): the loop's nets cannot be told apart")
            if claims:
                owner = claims[0][1]
            if owner is None and clip.area < MIN_OTHER_ISLAND_MM2:
                continue
            b = clip.bounds
            if not b or b[0] >= b[2]:
                continue
            i0, i1 = np.searchsorted(xc, b[0]), np.searchsorted(xc, b[2])
            j0, j1 = np.searchsorted(yc, b[1]), np.searchsorted(yc, b[3])
            if i1 <= i0 or j1 <= j0:
                continue
            sub = shapely.contains_xy(clip, X[i0:i1, j0:j1], Y[i0:i1, j0:j1])
            view = labels[k, i0:i1, j0:j1]
            if ndimage.label(sub)[1] > 1:
                sub |= _necks(clip, xe, ye, i0, i1, j0, j1, sub, view)
            if not sub.any():
                continue
            lab = len(island_net)
            island_net.append(owner)
            view[sub] = lab
    return labels, island_net


def _necks(clip, xe, ye, i0: int, i1: int, j0: int, j1: int, sub: np.ndarray, view: np.ndarray) -> np.ndarray:
    """Cells to add to an island that the cell-centre test split: a neck narrower than the
    cells there (a thermal spoke, a thin trace) holds no cell centre. A cell the copper touches
    joins the island where the copper in it is narrower than the cell (outside the island's
    opening by half the cell's side) and no other island took it; the wide parts keep their
    outline."""
    dx, dy = np.diff(xe)[i0:i1], np.diff(ye)[j0:j1]
    side = np.maximum(dx[:, None], dy[None, :])
    free = ~sub & (view < 0)
    cells = shapely.box(xe[i0:i1][:, None], ye[j0:j1][None, :], xe[i0 + 1:i1 + 1][:, None], ye[j0 + 1:j1 + 1][None, :])
    touch = free & shapely.intersects(clip, cells)
    out = np.zeros_like(sub)
    if not touch.any():
        return out
    # a few opening radii (cell sides rounded up to powers of 1.5) instead of one per cell
    r_of = 1.5 ** np.ceil(np.log(0.5 * side[touch]) / np.log(1.5))
    ii, jj = np.nonzero(touch)
    for r in np.unique(r_of):
        thin = shapely.difference(clip, shapely.buffer(shapely.buffer(clip, -r), r))
        if thin.is_empty:
            continue
        sel = r_of == r
        hit = shapely.intersects(thin, cells[ii[sel], jj[sel]])
        out[ii[sel][hit], jj[sel][hit]] = True
    return out


def _node_cell(mesh, k: int, x_mm: float, y_mm: float, want: set[int] | None, reach_mm: float):
    """The labelled cell nearest (x, y) on layer k (its label in ``want`` if given) within reach."""
    xc, yc = mesh.x_centres * 1e3, mesh.y_centres * 1e3
    lab = mesh.labels[k]
    i = int(np.clip(np.searchsorted(mesh.x_edges * 1e3, x_mm) - 1, 0, len(xc) - 1))
    j = int(np.clip(np.searchsorted(mesh.y_edges * 1e3, y_mm) - 1, 0, len(yc) - 1))
    if lab[i, j] >= 0 and (want is None or lab[i, j] in want):
        return i, j
    ii = np.nonzero(np.abs(xc - x_mm) <= reach_mm)[0]
    jj = np.nonzero(np.abs(yc - y_mm) <= reach_mm)[0]
    if len(ii) == 0 or len(jj) == 0:
        return None
    sub = lab[np.ix_(ii, jj)]
    ok = sub >= 0
    if want is not None:
        ok &= np.isin(sub, list(want))
    if not ok.any():
        return None
    d = (xc[ii][:, None] - x_mm) ** 2 + (yc[jj][None, :] - y_mm) ** 2
    d = np.where(ok, d, np.inf)
    a, b = np.unravel_index(int(np.argmin(d)), d.shape)
    return int(ii[a]), int(jj[b])


def solve_field_loop(ctx: MeasureContext, loop, scale: float = 1.0, frequency_hz: float | None = None,
                     margin_mm: float | None = None, max_branches: int = MAX_BRANCHES,
                     plan_index: int | None = None) -> FieldLoop:
    """Field solve of the closed loop ``loop`` (hotloop.LoopPath). Raises FieldSolveError.

    ``scale`` multiplies the cell sizes and ``max_branches`` caps the cells (the mesh is
    coarsened until it fits); the mesh-convergence check halves the cells of the default mesh's
    plan step (``plan_index``: the same window, feature lines and growth)."""
    board = ctx.board
    mesh, island_net, vias, notes, (fine, coarse), step = build_mesh(ctx, loop, scale, margin_mm, max_branches,
                                                                     plan_index)
    names = [l.name for l in board.layers]
    # islands of each loop net
    net_islands: dict[str, set[int]] = {}
    for lab, net in enumerate(island_net):
        if net is not None:
            net_islands.setdefault(net, set()).add(lab)
    # vias: only where both ends land in the net's meshed copper
    via_specs = []
    via_net = []
    for vx, vy, dia, layers, net in vias:
        via_specs.append((vx * 1e-3, vy * 1e-3, tuple(layers), dia * 1e-3, net_islands.get(net, set())))
        via_net.append(net)
    links = []
    link_names = []
    legs = _legs(ctx, loop.terminals)
    reach = max(1.5 * coarse, 1.0)
    for a, b, kind in legs:
        if kind == "net":
            continue
        common = [l for l in a.layers if l in b.layers]
        ends = []
        for p in (a, b):
            layers = ([l for l in common if l in p.layers] or list(p.layers) or [0])
            want = net_islands.get(p.net, set()) or None
            cell = None
            for l in layers:
                cell = _node_cell(mesh, l, p.x_mm, p.y_mm, want, max(reach, _pad_size(p)))
                if cell is not None:
                    break
            if cell is None:
                raise FieldSolveError(f"no copper of {p.net} meshed under {p.terminal}")
            i, j = cell
            ends.append((float(mesh.x_centres[i]), float(mesh.y_centres[j]), l))
        width = min(_pad_size(a), _pad_size(b)) * 1e-3
        # away from the board on the side the part sits (the bottom layer's parts hang below)
        lift = (-PART_LIFT_MM if ends[0][2] == len(board.layers) - 1 and len(board.layers) > 1 else PART_LIFT_MM) * 1e-3
        links.append((ends[0], ends[1], width, 0.0, lift))
        link_names.append(f"{a.terminal}-{b.terminal}" if kind == "part" else f"{a.terminal}~{b.terminal} (gap)")
    if not links:
        raise FieldSolveError("the loop passes no part: nothing to drive it")
    con, via_branches, _ = loopsolve.sheet_conductors(mesh, _resistivity(board), via_specs, links)
    try:
        sol = loopsolve.solve_loop(con, 0, frequency_hz=frequency_hz)
    except ValueError as exc:
        raise FieldSolveError(str(exc)) from None
    except np.linalg.LinAlgError as exc:
        raise FieldSolveError(f"the loop equations are singular: {exc}") from None
    L = sol.inductance_h
    nb = len(con.bar_nodes)
    # ---- where the inductance sits
    # sheet cells first, then the via barrels (``sheet_conductors``' branch order)
    n_sheet = len(mesh.bar_cells)
    bar_layer, bi, bj = mesh.bar_cells[:, 0].T
    bar_label = mesh.labels[bar_layer, bi, bj]
    groups: dict[str, float] = {}
    is_via = np.zeros(nb, dtype=bool)
    for vb, net in zip(via_branches, via_net):
        for b in vb:
            is_via[b] = True
            groups[f"vias of {net}"] = groups.get(f"vias of {net}", 0.0) + float(sol.energy_share[b])
    for b in np.nonzero(~is_via[:n_sheet])[0]:
        net = island_net[bar_label[b]] if bar_label[b] >= 0 else None
        key = f"{net} copper on {names[bar_layer[b]]}" if net else f"other copper on {names[bar_layer[b]]} (eddy)"
        groups[key] = groups.get(key, 0.0) + float(sol.energy_share[b])
    for k, nm in enumerate(link_names):
        key = f"part {nm}"
        groups[key] = groups.get(key, 0.0) + float(np.sum(sol.energy_share[nb:][con.link_part == k]))
    # copper carrying only eddy current has no share: at the least-energy current its loops
    # satisfy C_e^T Lp I = 0, so sum I_e (Lp I)_e = 0; its effect shows as the lower mutual
    # terms in the shares of the loop's own copper
    shares = sorted(({"part": k, "share_pct": round(100 * v, 1)} for k, v in groups.items()
                     if "(eddy)" not in k), key=lambda d: -abs(d["share_pct"]))
    # ---- current density per layer and the centroid lines
    J = loopsolve.sheet_current_density(mesh, con, sol.currents)
    mag = np.hypot(J[..., 0], J[..., 1])
    jmax = float(mag.max()) if mag.size else 0.0
    density: dict[str, list] = {}
    for k, bx0, by0, bx1, by1, jx, jy in loopsolve.block_current_density(mesh, J):
        if math.hypot(jx, jy) <= 0.02 * jmax:
            continue
        density.setdefault(names[k], []).append(
            [round(500 * (bx0 + bx1), 3), round(500 * (by0 + by1), 3), round(1e3 * (bx1 - bx0), 3),
             round(1e3 * (by1 - by0), 3), round(jx * 1e-3, 4), round(jy * 1e-3, 4)])
    legs_out, loop_pts = _centroid_legs(ctx, loop, mesh, mag, legs)
    notes += [
        "partial-element field solve (Ruehli 1974; Kamon, Tsuk and White 1994): rectangular sheet cells with "
        "exact bar partial inductances (Hoer and Love 1965) for near pairs, filaments for far ones; the "
        "current of least magnetic energy (inductive limit, high frequency) for 1 A in the loop",
        "copper of other nets in the window is meshed and carries the induced (eddy) current, no net current; "
        "copper beyond the window is not seen (no images)",
        "vias and plated holes of the loop's nets join their layers (a barrel of the drilled diameter)",
        PACKAGE_INDUCTANCE_NOTE,
    ]
    detail = {
        "inductance_method": "field",
        "mesh": {"fine_mm": round(fine, 3), "coarse_mm": round(coarse, 3), "cells": int(nb), "plan_step": step,
                 "links": len(links), "vias": sum(1 for v in via_branches if v), "loops": sol.n_loops},
        "inductance_shares": shares,
        "eddy_conductors": sum(1 for n in island_net if n is None),
        "current_density_a_per_mm": density,   # per layer: [x, y, dx, dy, Jx, Jy] (mm, A/mm per A in the loop)
        "current_centroid": [{"net": net, "points": [[round(x, 3), round(y, 3)] for x, y in pts]}
                             for net, pts in legs_out],
    }
    if loop_pts:
        from .hotloop import enclosed_area
        area, _ = enclosed_area(loop_pts)
        detail["centroid_area_mm2"] = round(area, 2)
    if frequency_hz is not None:
        detail["frequency_hz"] = frequency_hz
        detail["resistance_mohm"] = sol.resistance_ohm * 1e3
    return FieldLoop(L, notes, detail, legs_out, loop_pts)


def _resistivity(board) -> float:
    from ..physics.copper import resistivity
    rho = board.stackup.resistivity_ohm_m
    return float(rho) if rho else float(resistivity(20.0))


def _centroid_legs(ctx: MeasureContext, loop, mesh, mag, legs):
    """Centroid line of the current in each copper leg of the loop: the cells of the leg's net,
    binned by where they project on the leg's route, each bin's current-weighted centre."""
    out = []
    pts: list[tuple[float, float]] = []
    routes = {(r.start, r.end): r for r in loop.routes}
    xcm, ycm = mesh.x_centres * 1e3, mesh.y_centres * 1e3
    area = np.outer(np.diff(mesh.x_edges), np.diff(mesh.y_edges)) * 1e6
    X, Y = np.meshgrid(xcm, ycm, indexing="ij")
    for a, b, kind in legs:
        if kind != "net" or (a.terminal, b.terminal) not in routes:
            pts += [(a.x_mm, a.y_mm), (b.x_mm, b.y_mm)]
            continue
        r = routes[(a.terminal, b.terminal)]
        line = LineString(r.xy) if len(r.points) > 1 else None
        cu = ctx.net_copper(a.net)
        wx, wy, ww, ss = [], [], [], []
        for k, g in cu.items():
            if k >= mesh.labels.shape[0]:
                continue
            m = (mesh.labels[k] >= 0) & (mag[k] > 0)
            if not m.any():
                continue
            inside = m.copy()
            inside[m] = shapely.contains_xy(g, X[m], Y[m])
            if not inside.any():
                continue
            wx.append(X[inside]); wy.append(Y[inside]); ww.append(mag[k][inside] * area[inside])
        if not wx or line is None or line.length == 0:
            pts += [(a.x_mm, a.y_mm), (b.x_mm, b.y_mm)]
            continue
        x, y, w = np.concatenate(wx), np.concatenate(wy), np.concatenate(ww)
        s = shapely.line_locate_point(line, shapely.points(x, y))
        nbin = int(np.clip(line.length / 0.5, 3, 40))
        edges = np.linspace(0, line.length, nbin + 1)
        which = np.clip(np.searchsorted(edges, s) - 1, 0, nbin - 1)
        leg = [(a.x_mm, a.y_mm)]
        for q in range(nbin):
            sel = which == q
            if np.sum(w[sel]) > 0:
                leg.append((float(np.average(x[sel], weights=w[sel])), float(np.average(y[sel], weights=w[sel]))))
        leg.append((b.x_mm, b.y_mm))
        out.append((a.net, leg))
        pts += leg
    return out, pts
