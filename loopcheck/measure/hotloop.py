"""The switching (hot) loop: its path through the copper, enclosed area, partial inductance, and
what that inductance does at the switching edges (overshoot, ringing, energy per edge).

The loop is the stage's ordered terminal list, closed. Between two terminals of one part the
current passes through the part (a straight conductor between the pad centres, as wide as the
smaller pad, carried in the part's body above the pads: see ``loopfield.PART_LIFT_MM``); between two terminals of one net it follows a route through the copper
(``routes.route``), attracted towards the loop's other legs because at the edge rates the return
current takes the path of least inductance, under the conductor that carries it out.

Inductance: the partial-inductance sum over the loop's straight segments (Ruehli 1972; Paul,
"Inductance: Loop and Partial", 2010), each segment a flat strip of its local width and its
layer's copper thickness: the sum of the loop's partial-inductance matrix
(``physics.inductance.partial_inductance_matrix``). Where a solid plane
that is not part of the loop lies on the adjacent layer under a segment, the plane carries an
image current (a perfect-conductor image at the plane, valid above the frequency where the plane
is thicker than a skin depth, a few MHz for 1 oz copper): the mutual inductance with the mirrored
segments (``physics.inductance.image_in_plane``, ``segment_mutual_inductance``) is subtracted, which reproduces the microstrip inductance per length of a trace over a
plane. Where the loop's own return runs in a plane under the outgoing conductor (no detour), that
plane is the image: its in-plane stretches are dropped and L = Lp(path) - M(path, mirrored path)
over the outgoing conductor and its vias. Where a gap forces the return away, the real path is
summed instead (and the detour reported).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from shapely.geometry import LineString, Polygon, box
from shapely.ops import polygonize, unary_union

from ..board import Pad
from ..findings import Measurement
from ..powerstage import Stage
from .common import MeasurementGap, measurement, not_made, op_assumptions, point, polygon, polyline, switch_current
from .netcopper import MeasureContext, dielectric_between, layer_thickness_m, layer_z_mm
from .routes import DETOUR_MM, Route, RouteError, route, segment_widths

PLANE_COVERAGE = 0.9      # share of a segment's footprint the adjacent copper must cover to count as a plane
PLANE_LEG_WIDTH_MM = 2.5  # a leg whose copper is everywhere narrower than this is a trace, not a plane
MAX_STRIP_WIDTH_MM = 5.0  # a plane leg's current at the edge rates spreads little beyond the conductor it follows


@dataclass
class LoopPath:
    """The closed hot loop as 3D segments (mm), with the routes it is made of."""

    terminals: tuple[str, ...]
    points: list[tuple[float, float, int]]       # not repeated: the last joins the first
    widths_mm: list[float]                       # per segment, the closing one last
    kinds: list[str]                             # per segment: "copper", "via", "part"
    routes: list[Route] = field(default_factory=list)
    parts: list[tuple[str, str]] = field(default_factory=list)   # (from, to) through a part
    assumptions: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)

    @property
    def vias(self) -> list[tuple[float, float, int, int]]:
        return [v for r in self.routes for v in r.vias]

    def projected(self) -> list[tuple[float, float]]:
        return [(x, y) for x, y, _ in self.points]


def enclosed_area(xy: list[tuple[float, float]]) -> tuple[float, object]:
    """Projected area [mm^2] enclosed by a closed polyline, and the region as a geometry.

    Self-crossing paths are split into their faces (polygonize of the noded path), so a figure
    eight counts both lobes; a path that goes out and back along itself encloses nothing.
    """
    if len(xy) < 3:
        return 0.0, Polygon()
    ring = LineString(list(xy) + [xy[0]])
    faces = list(polygonize(unary_union(ring)))
    if not faces:
        return 0.0, Polygon()
    region = unary_union(faces).buffer(0)
    return float(region.area), region


def _pad(ctx: MeasureContext, term: str) -> Pad | None:
    return ctx.board.terminals.get(term)


def build_loop(ctx: MeasureContext, terminals: tuple[str, ...]) -> LoopPath:
    """Trace the closed loop through its terminals. Raises RouteError with the reason."""
    board = ctx.board
    pads = []
    for t in terminals:
        p = _pad(ctx, t)
        if p is None:
            raise RouteError(f"terminal {t} is not in the netlist")
        pads.append(p)
    n = len(pads)
    if n < 3:
        raise RouteError(f"a loop needs at least three terminals, got {n}")
    legs: list[tuple[int, str]] = []          # (index of the leg's first terminal, "net"|"part")
    for k in range(n):
        a, b = pads[k], pads[(k + 1) % n]
        if a.ref and a.ref == b.ref:
            legs.append((k, "part"))
        elif a.net == b.net:
            legs.append((k, "net"))
        else:
            legs.append((k, "gap"))
    notes: list[str] = []
    # pass 1: plain routes; pass 2: each net leg attracted to the others (return under outgoing)
    plain: dict[int, Route] = {}
    for k, kind in legs:
        if kind == "net":
            plain[k] = route(ctx, pads[k], pads[(k + 1) % n])

    def leg_line(k: int, kind: str, routes: dict[int, Route]):
        if kind == "net":
            return LineString(routes[k].xy) if len(routes[k].points) > 1 else None
        a, b = pads[k], pads[(k + 1) % n]
        return LineString([(a.x_mm, a.y_mm), (b.x_mm, b.y_mm)])

    final: dict[int, Route] = {}
    plane_legs: set[int] = set()
    for k, kind in legs:
        if kind != "net":
            continue
        if max(plain[k].widths_mm, default=0.0) < PLANE_LEG_WIDTH_MM:
            # a leg in trace-like copper has nowhere else to go: the plain route stands
            final[k] = plain[k]
            continue
        others = [leg_line(j, kd, plain) for j, kd in legs if j != k]
        others = [o for o in others if o is not None and o.length > 0]
        attract = unary_union(others) if others else None
        r = route(ctx, pads[k], pads[(k + 1) % n], attract_to=attract)
        final[k] = r
        if not (r.detour and r.detour[2] > DETOUR_MM):
            plane_legs.add(k)          # the return runs under the outgoing conductor all the way
        if r.detour and r.detour[2] > DETOUR_MM and attract is not None:
            cover = _copper_under(ctx, r, attract)
            if cover is not None and cover > 0.5:
                notes.append(
                    f"a gap in the {r.net} copper forces the return current from {r.start} to {r.end} away "
                    f"from the conductor it would run under, by {r.detour[2]:.1f} mm near "
                    f"({r.detour[0]:.1f}, {r.detour[1]:.1f})")
    points: list[tuple[float, float, int]] = []
    widths: list[float] = []
    kinds: list[str] = []
    parts: list[tuple[str, str]] = []
    def kind_of(p, q) -> str:
        return "via" if p[2] != q[2] and p[:2] == q[:2] else "copper"

    for k, kind in legs:
        a, b = pads[k], pads[(k + 1) % n]
        if kind == "net":
            r = final[k]
            pts = list(r.points)
            ws = segment_widths(ctx, r)
            ks = [kind_of(p, q) for p, q in zip(pts[:-1], pts[1:])]
            if k in plane_legs:
                # in-plane stretches of a return that follows the outgoing conductor
                ks = ["plane" if kd == "copper" and w >= PLANE_LEG_WIDTH_MM else kd for kd, w in zip(ks, ws)]
            if points and points[-1] == pts[0]:
                pts = pts[1:]
            elif points:
                # the previous leg ended on another layer of a through-hole pad: a part lead
                ws = [_part_width(a)] + ws
                ks = ["part"] + ks
            points.extend(pts)
            widths.extend(ws)
            kinds.extend(ks)
        else:
            # through the part (or a gap between two terminals that share neither a net nor a part)
            if kind == "gap":
                notes.append(f"{a.terminal} and {b.terminal} share neither a net nor a part: joined by a "
                             f"straight line")
            else:
                parts.append((a.terminal, b.terminal))
            if not points:
                points.append((a.x_mm, a.y_mm, _layer_of(a)))
            layer = points[-1][2] if points[-1][2] in b.layers else _layer_of(b)
            points.append((b.x_mm, b.y_mm, layer))
            widths.append(_part_width(a, b))
            kinds.append("part")
    # the loop is closed: the repeated first point goes, its segment becomes the closing one
    if len(points) > 1 and points[-1] == points[0]:
        points.pop()
    else:
        widths.append(_part_width(pads[0]))
        kinds.append("part")
    if parts:
        from .loopfield import PART_LIFT_MM
        notes.append("current through a part is taken as a straight conductor between its pad centres, "
                     f"as wide as its smaller pad, {PART_LIFT_MM} mm above them in the part's body with "
                     "risers to the pads (no table of package inductances is applied)")
    return LoopPath(tuple(terminals), points, widths, kinds, list(final.values()), parts, notes)


def _layer_of(p: Pad) -> int:
    return p.layers[0] if p.layers else 0


def _part_width(a: Pad, b: Pad | None = None) -> float:
    """Width [mm] of the strip that stands in for a part: its smaller pad dimension (0.6 mm unknown)."""
    def size(p: Pad) -> float:
        dims = [x for x in (p.width_mm, p.height_mm) if x] or [x for x in (p.hole_mm,) if x]
        return min(dims) if dims else 0.6
    return min(size(a), size(b)) if b is not None else size(a)


def _copper_under(ctx: MeasureContext, r: Route, attract) -> float | None:
    """Share of the conductor a return leg should follow that lies over the leg's own net copper
    (on the layers the leg uses): near 1 with a detour means a gap forced it."""
    layers = {p[2] for p in r.points}
    cu = unary_union([g for l, g in ctx.net_copper(r.net).items() if l in layers])
    if cu.is_empty:
        return None
    near = attract.intersection(LineString(r.xy).buffer(max(r.straight_mm, 1.0)))
    if near.is_empty or near.length == 0:
        return None
    return float(near.intersection(cu).length / near.length)


def _plane_images(ctx: MeasureContext, loop: LoopPath, z_mm: list[float]) -> list[tuple[int, float, int]]:
    """For each copper segment over a solid plane that is not the loop's own copper there:
    (segment index, plane height z [mm], plane layer)."""
    board = ctx.board
    out = []
    n = len(loop.points)
    own_by_layer: dict[int, list] = {}
    for i in range(n):
        a, b = loop.points[i], loop.points[(i + 1) % n]
        if a[2] == b[2] and loop.kinds[i] == "copper":
            own_by_layer.setdefault(a[2], []).append(LineString([a[:2], b[:2]]).buffer(loop.widths_mm[i] / 2 + 0.3))
    own = {l: unary_union(g) for l, g in own_by_layer.items()}
    plane_cache: dict[int, object] = {}
    for i in range(n):
        a, b = loop.points[i], loop.points[(i + 1) % n]
        if a[2] != b[2] or loop.kinds[i] == "via":
            continue
        k = a[2]
        seg = LineString([a[:2], b[:2]])
        if seg.length == 0:
            continue
        best = None
        for m in (k - 1, k + 1):
            if m < 0 or m >= len(board.layers):
                continue
            h_m, _ = dielectric_between(board, k, m)
            foot = seg.buffer(loop.widths_mm[i] / 2 + h_m * 1e3, cap_style="flat")
            if m not in plane_cache:
                # only the copper near the loop matters: clip first (layers can be large)
                xs = [q[0] for q in loop.points]
                ys = [q[1] for q in loop.points]
                near = box(min(xs) - 10, min(ys) - 10, max(xs) + 10, max(ys) + 10)
                g = board.layers[m].geometry.intersection(near)
                if m in own:
                    g = g.difference(own[m].buffer(2 * h_m * 1e3))
                plane_cache[m] = g
            cover = foot.intersection(plane_cache[m]).area / foot.area if foot.area > 0 else 0.0
            if cover >= PLANE_COVERAGE and (best is None or h_m < best[0]):
                best = (h_m, m)
        if best is not None:
            out.append((i, z_mm[best[1]], best[1]))
    return out


def _mirror_segments(starts_m, ends_m, plane_z_m):
    from ..physics.inductance import mirror_segments

    return mirror_segments(starts_m, ends_m, plane_z_m)


def loop_inductance(ctx: MeasureContext, loop: LoopPath) -> tuple[float, list[str], dict]:
    """Partial-inductance estimate of the closed loop [H], assumptions, detail numbers."""
    from ..physics import inductance

    board = ctx.board
    z = layer_z_mm(board)
    n = len(loop.points)
    pts = np.array([(x, y, z[l]) for x, y, l in loop.points]) * 1e-3
    starts = pts
    ends = np.roll(pts, -1, axis=0)
    gmd = np.zeros(n)
    # strip sections (NaN marks a round via barrel) let near-parallel strips use the GMD of
    # their rectangular sections rather than a softened filament distance (Grover's method)
    widths = np.full(n, np.nan)
    thick = np.full(n, np.nan)
    for i in range(n):
        a = loop.points[i]
        L = float(np.linalg.norm(ends[i] - starts[i])) * 1e3
        w = loop.widths_mm[i]
        if loop.kinds[i] == "via":
            gmd[i] = 0.5 * w * 1e-3          # a round barrel: its radius
            continue
        w = min(w, MAX_STRIP_WIDTH_MM, max(L, 0.1))
        widths[i] = w * 1e-3
        thick[i] = layer_thickness_m(board, a[2])
        gmd[i] = float(inductance.strip_equivalent_radius(widths[i], thick[i]))
    # a part's current runs in its body above its pads (the field solve's model): up, across
    # and down, each piece a strip of the part's width
    from .loopfield import PART_LIFT_MM
    pieces: list[list[int]] = []
    S, E, G, W, T, K = [], [], [], [], [], []
    bottom = len(board.layers) - 1
    for i in range(n):
        if loop.kinds[i] == "part" and loop.points[i][2] == loop.points[(i + 1) % n][2]:
            lift = (-PART_LIFT_MM if loop.points[i][2] == bottom and bottom > 0 else PART_LIFT_MM) * 1e-3
            a2 = starts[i] + np.array([0, 0, lift])
            b2 = ends[i] + np.array([0, 0, lift])
            segs = [(starts[i], a2), (a2, b2), (b2, ends[i])]
        else:
            segs = [(starts[i], ends[i])]
        pieces.append(list(range(len(S), len(S) + len(segs))))
        for a_, b_ in segs:
            S.append(a_); E.append(b_); G.append(gmd[i]); W.append(widths[i]); T.append(thick[i])
            K.append(loop.kinds[i])
    starts, ends, gmd, widths, thick = (np.array(v) for v in (S, E, G, W, T))
    seg_len = np.linalg.norm(ends - starts, axis=1)
    keep = seg_len > 1e-9
    notes = []
    plane_segs = [e for i in range(n) if loop.kinds[i] == "plane" for e in pieces[i] if keep[e]]
    if plane_segs:
        return _own_plane_inductance(ctx, loop, starts, ends, gmd, keep, plane_segs, z, widths, thick, K)
    mat = inductance.partial_inductance_matrix(starts[keep], ends[keep], gmd[keep],
                                               widths_m=widths[keep], thicknesses_m=thick[keep])
    L_free = float(mat.sum())
    images = [(e, zp, m) for j, zp, m in _plane_images(ctx, loop, z) for e in pieces[j] if keep[e]]
    L_img = 0.0
    if images:
        # mutual inductance with the image loop: each imaged segment mirrored in its plane,
        # carrying the opposite current (so its mutual with the loop is subtracted)
        idx = np.nonzero(keep)[0]
        img = np.array([j for j, _, _ in images])
        zp = np.array([zp for _, zp, _ in images]) * 1e-3
        m0, m1 = _mirror_segments(starts[img], ends[img], zp)
        ai, col = np.meshgrid(idx, np.arange(len(images)), indexing="ij")
        bj = img[col]
        b0, b1 = m0[col], m1[col]
        g = 0.5 * (gmd[ai] + gmd[bj])
        m = inductance.segment_mutual_inductance(starts[ai].reshape(-1, 3), ends[ai].reshape(-1, 3),
                                                 b0.reshape(-1, 3), b1.reshape(-1, 3), g.reshape(-1))
        L_img = float(np.sum(m))
        layers = sorted({board.layers[m_].name for _, _, m_ in images})
        notes.append(f"{len({j for j, _, _ in _plane_images(ctx, loop, z)})} of {n} loop segments run over a solid plane ({', '.join(layers)}): "
                     f"image currents in the plane counted (perfect-conductor image)")
    L = L_free - L_img
    if L <= 0:
        notes.append("the image correction exceeded the free-space value; the free-space value is reported")
        L = L_free
    detail = {"free_space_nH": L_free * 1e9, "plane_image_nH": -L_img * 1e9,
              "segments_over_plane": len(images)}
    return L, notes, detail


def _own_plane_inductance(ctx, loop, starts, ends, gmd, keep, plane_segs, z, widths, thick, kinds):
    """A loop whose return runs in its own plane under the outgoing conductor: the plane is a
    perfect-conductor image (the return current is the image current), so the in-plane
    segments are dropped and L = Lp(path) - M(path, mirrored path) over the rest of the loop
    (the outgoing conductor and its vias down to the plane), the microstrip picture of a
    conductor over its return plane."""
    from ..physics import inductance

    board = ctx.board
    zs = {round(float(starts[i][2]) * 1e3, 6) for i in plane_segs}
    layers = sorted(k for k in range(len(z)) if round(z[k], 6) in zs)
    m = layers[0]
    zp = z[m] * 1e-3
    path = [i for i in range(len(kinds)) if keep[i] and kinds[i] != "plane"]
    a, b, g = starts[path], ends[path], gmd[path]
    w, t = widths[path], thick[path]
    Lp = float(inductance.partial_inductance_matrix(a, b, g, widths_m=w, thicknesses_m=t).sum())
    ma, mb = _mirror_segments(a, b, np.full(len(a), zp))
    P = len(path)
    ii, jj = np.meshgrid(np.arange(P), np.arange(P), indexing="ij")
    ii, jj = ii.ravel(), jj.ravel()
    # segments lying in the plane itself coincide with their mirror: softened by their section
    M = inductance.segment_mutual_inductance(a[ii], b[ii], ma[jj], mb[jj], 0.5 * (g[ii] + g[jj]))
    L = Lp - float(np.sum(M))
    notes = [f"the return runs in the {board.layers[m].name} plane under the outgoing conductor: the plane is "
             "taken as a perfect-conductor image (the return current is the image current)"]
    if L <= 0:
        notes.append("the image correction exceeded the path's partial inductance; the path value is reported")
        L = Lp
    return L, notes, {"free_space_nH": Lp * 1e9, "plane_image_nH": -float(np.sum(M)) * 1e9,
                      "segments_over_plane": P, "return_plane": board.layers[m].name}


def loop_inductance_by_method(ctx: MeasureContext, loop: LoopPath) -> tuple[float, list[str], dict]:
    """The loop's inductance [H], assumptions and detail by ``ctx.inductance_method``: "field" (the
    default: the partial-element field solve of the copper around the loop, ``measure.loopfield``)
    or "fast" (the partial-inductance sum along the traced path, ``loop_inductance``). The field
    solve falls back to the fast method, saying why, when it cannot be set up. The detail carries
    ``inductance_method`` and, for the field solve, the fast estimate beside it."""
    method = getattr(ctx, "inductance_method", "field") or "field"
    if method not in ("field", "fast"):
        raise ValueError(f"inductance_method must be 'field' or 'fast', got {method!r}")
    L_fast, notes_fast, det_fast = loop_inductance(ctx, loop)
    det_fast = {**det_fast, "inductance_method": "fast"}
    if method == "fast":
        return L_fast, notes_fast, det_fast
    from .loopfield import FieldSolveError, solve_field_loop

    try:
        res = solve_field_loop(ctx, loop)
    except FieldSolveError as exc:
        return L_fast, notes_fast + [f"field solve not made ({exc}): the fast path estimate is reported"], det_fast
    det = {**res.detail, "fast_estimate_nH": L_fast * 1e9, "fast": det_fast}
    return res.inductance_h, res.assumptions, det


def measure_hot_loop(ctx: MeasureContext, stage: Stage) -> list[Measurement]:
    """hot_loop.area, .inductance, .vias, .overshoot, .ringing_frequency, .edge_energy for one stage."""
    names = ("hot_loop.area", "hot_loop.inductance", "hot_loop.vias", "hot_loop.overshoot",
             "hot_loop.ringing_frequency", "hot_loop.edge_energy")
    if not stage.hot_loop:
        reason = "the stage's hot loop was not found" + (f" ({'; '.join(stage.missing)})" if stage.missing else "")
        return [not_made(q, stage, reason) for q in names]
    terms = tuple(stage.hot_loop)
    try:
        loop = build_loop(ctx, terms)
    except RouteError as exc:
        return [not_made(q, stage, f"hot loop not traced: {exc}", terminals=terms) for q in names]
    board = ctx.board
    nets = tuple(dict.fromkeys(ctx.board.terminals[t].net for t in terms))
    area, region = enclosed_area(loop.projected())
    c = region.centroid if not region.is_empty else LineString(loop.projected() + [loop.projected()[0]]).centroid
    cx, cy = float(c.x), float(c.y)
    path_draw = polyline(loop.projected() + [loop.projected()[0]])
    region_draw = [polygon(list(p.exterior.coords)) for p in getattr(region, "geoms", [region])
                   if not p.is_empty and hasattr(p, "exterior")]
    base = dict(terminals=terms, nets=nets, x_mm=cx, y_mm=cy)
    common = list(loop.assumptions)
    common.append("route: centreline-weighted shortest path through the copper raster "
                  f"(pitch {min((r.pitch_mm for r in loop.routes), default=0.05):.3f} mm); return legs drawn "
                  "towards the outgoing conductor")
    path3d = [(round(x, 4), round(y, 4), board.layers[l].name) for x, y, l in loop.points]
    out = [measurement("hot_loop.area", area, stage, drawings=region_draw + [path_draw],
                       assumptions=common + ["projected on the board plane; self-crossings split into faces"],
                       detail={"path": path3d, "perimeter_mm": LineString(loop.projected() + [loop.projected()[0]]).length},
                       **base)]
    try:
        L, notes, det = loop_inductance_by_method(ctx, loop)
    except MeasurementGap as exc:     # a reason of the board; a bug goes up
        L, notes, det = None, [], {}
        reason = f"inductance not computed: {exc}"
    op = stage.operating_point
    vias = loop.vias
    out.append(measurement("hot_loop.vias", len(vias), stage,
                           drawings=[point(x, y) for x, y, _, _ in vias],
                           detail={"vias": [{"x_mm": x, "y_mm": y, "from": board.layers[a].name,
                                             "to": board.layers[b].name} for x, y, a, b in vias]},
                           assumptions=["each layer change of a route through a via or plated hole counts"], **base))
    if L is None:
        for q in names[1:]:
            if q != "hot_loop.vias":
                out.append(not_made(q, stage, reason, **base))
        return out
    L_nH = L * 1e9
    ind_notes = common + notes + [
        "partial-inductance sum over straight flat-strip segments, local copper width, layer copper "
        "thickness (Ruehli 1972; Grover 1946 flat-strip equivalent radius)",
        f"plane legs taken at most {MAX_STRIP_WIDTH_MM:g} mm wide"]
    if det.get("inductance_method") == "field":
        ind_notes = common + notes
    centroid = [polyline(c["points"]) for c in det.get("current_centroid", [])]
    out.append(measurement("hot_loop.inductance", L_nH, stage, drawings=[path_draw] + centroid,
                           assumptions=ind_notes, detail={**det, "segments": len(loop.points)}, **base))
    i_sw, v_sw, sw_notes = switch_current(stage, op)
    didt = i_sw / op.edge_s
    dv = L * didt
    op_notes = op_assumptions(op, ("iout_a", "edge_s", "vin_max_v", "ripple_ratio"))
    out.append(measurement("hot_loop.overshoot", 100.0 * dv / v_sw, stage,
                           assumptions=sw_notes + op_notes + [
                               "dV = L_loop di/dt, di/dt = I_switch / t_edge, I_switch the inductor's peak current"],
                           detail={"overshoot_v": dv, "di_dt_a_per_ns": didt * 1e-9, "switch_current_a": i_sw,
                                   "switched_voltage_v": v_sw}, **base))
    C = op.switch_capacitance_f
    f = 1.0 / (2 * math.pi * math.sqrt(L * C))
    out.append(measurement("hot_loop.ringing_frequency", f / 1e6, stage,
                           assumptions=op_assumptions(op, ("switch_capacitance_f",)) +
                           ["f = 1 / (2 pi sqrt(L_loop C_switch))"], detail={"capacitance_pf": C * 1e12}, **base))
    E = 0.5 * L * i_sw ** 2
    out.append(measurement("hot_loop.edge_energy", E * 1e9, stage,
                           assumptions=op_notes + ["E = L_loop I_switch^2 / 2; up to E * 2 f_sw of loss, an upper bound"],
                           detail={"loss_bound_w": 2 * E * op.fsw_hz, "switch_current_a": i_sw}, **base))
    return out
