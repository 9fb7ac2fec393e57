"""Routes through copper and the raster they run on (boards built from geometry, no files)."""

import math

import pytest
from shapely.geometry import LineString, Point, box
from shapely.ops import unary_union

from loopcheck.board import Pad
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.physics.raster import grid_covering, rasterise
from loopcheck.measure.routes import Route, RouteError, narrowest_point, route

from measure_boards import make_board, smd, square_pad, trace


def test_raster_area_matches_shapely():
    # an L-shaped trace, a ring with a hole and a rotated square: the raster's copper area
    # (cells x pitch^2) against shapely's exact area
    g = unary_union([trace([(0, 0), (10, 0), (10, 7)], 0.5),
                     Point(20, 5).buffer(4).difference(Point(20, 5).buffer(2)),
                     box(30, 0, 36, 6)])
    grid = grid_covering(g.bounds, 0.02)
    m = rasterise(g, grid)
    assert m.sum() * 0.02 ** 2 == pytest.approx(g.area, rel=0.01)
    # the hole of the ring is empty
    j, i = grid.cell_of(20, 5)
    assert not m[j, i]


def test_straight_trace_route_length_and_width():
    t = unary_union([trace([(0, 0), (20, 0)], 0.5), square_pad(0, 0, 1), square_pad(20, 0, 1)])
    b = make_board([t, []], [smd("N", "A", 1, 0, 0), smd("N", "B", 1, 20, 0)])
    r = route(MeasureContext(b), b.terminals["A.1"], b.terminals["B.1"])
    assert r.length_mm == pytest.approx(20.0, abs=0.05)
    assert r.straight_mm == pytest.approx(20.0)
    assert r.vias == []
    # raster width within one pitch, the geometric refinement within 1 %
    assert min(r.widths_mm) == pytest.approx(0.5, abs=r.pitch_mm + 1e-9)
    w, x, y, layer = narrowest_point(MeasureContext(b), r)
    assert w == pytest.approx(0.5, rel=0.01)
    assert 0.5 < x < 19.5 and layer == 0


def test_route_keeps_to_the_trace_around_a_bend():
    t = unary_union([trace([(0, 0), (10, 0), (10, 8)], 0.4), square_pad(0, 0, 0.8), square_pad(10, 8, 0.8)])
    b = make_board([t, []], [smd("N", "A", 1, 0, 0, 0.8), smd("N", "B", 1, 10, 8, 0.8)])
    r = route(MeasureContext(b), b.terminals["A.1"], b.terminals["B.1"])
    # the centreline is 18 mm; a route inside a 0.4 mm trace cannot be shorter than 18 - 0.4
    assert 17.6 <= r.length_mm <= 18.1
    line = LineString(r.xy)
    assert line.difference(t.buffer(1e-6)).length < 1e-6      # the simplified path stays in copper


def test_route_changes_layer_at_a_via():
    top = unary_union([trace([(0, 0), (10, 0)], 0.5), square_pad(0, 0, 1), Point(10, 0).buffer(0.4)])
    bot = unary_union([trace([(10, 0), (10, 10)], 0.5), Point(10, 0).buffer(0.4), square_pad(10, 10, 1)])
    pads = [smd("N", "A", 1, 0, 0), Pad("N", "B", "1", 10, 10, (1,), width_mm=1, height_mm=1),
            Pad("N", "", "", 10, 0, (0, 1), hole_mm=0.3, is_via=True)]
    b = make_board([top, bot], pads)
    r = route(MeasureContext(b), b.terminals["A.1"], b.terminals["B.1"])
    assert len(r.vias) == 1 and r.vias[0][2:] == (0, 1)
    assert r.points[0][2] == 0 and r.points[-1][2] == 1
    assert r.length_mm == pytest.approx(20.0, abs=0.3)


def test_plane_route_is_straight():
    plane = box(0, 0, 30, 20)
    b = make_board([plane, []], [smd("G", "A", 1, 2, 2), smd("G", "B", 1, 28, 17)])
    r = route(MeasureContext(b), b.terminals["A.1"], b.terminals["B.1"])
    assert r.length_mm == pytest.approx(math.hypot(26, 15), rel=0.02)


def test_no_copper_path_is_a_route_error():
    t = unary_union([trace([(0, 0), (8, 0)], 0.5), trace([(12, 0), (20, 0)], 0.5)])
    b = make_board([t, []], [smd("N", "A", 1, 0, 0), smd("N", "B", 1, 20, 0)])
    with pytest.raises(RouteError, match="no copper of net N joins A.1"):
        route(MeasureContext(b), b.terminals["A.1"], b.terminals["B.1"])


def test_narrowest_point_finds_a_neck_but_not_a_pinch_between_holes():
    # a 1 mm trace with a 3 mm long 0.3 mm neck: the neck is the narrowest point
    t = unary_union([trace([(0, 0), (8, 0)], 1.0), trace([(8, 0), (11, 0)], 0.3), trace([(11, 0), (20, 0)], 1.0),
                     square_pad(0, 0, 1.2), square_pad(20, 0, 1.2)])
    b = make_board([t, []], [smd("N", "A", 1, 0, 0, 1.2), smd("N", "B", 1, 20, 0, 1.2)])
    ctx = MeasureContext(b)
    w, x, y, _ = narrowest_point(ctx, route(ctx, b.terminals["A.1"], b.terminals["B.1"]))
    assert w == pytest.approx(0.3, rel=0.01) and 8 < x < 11
    # a plane with two clearance holes 0.2 mm apart on the straight line between the pads:
    # the current goes round them, so the pinch is not the plane's "narrowest point"
    plane = box(0, -5, 20, 5).difference(Point(10, 0.5).buffer(0.4)).difference(Point(10, -0.5).buffer(0.4))
    b = make_board([plane, []], [smd("G", "A", 1, 2, 0), smd("G", "B", 1, 18, 0)])
    ctx = MeasureContext(b)
    through = Route("G", "A.1", "B.1", [(2, 0, 0), (18, 0, 0)], [10.0], [], 16.0, 16.0, 0.05)
    w, *_ = narrowest_point(ctx, through)          # a route straight through the pinch
    assert w > 1.0


# --- the route graph where via records coincide (issue 9 item 1) ------------------------------

def _stitched_board(extra_pads=(), holes=()):
    """Two stitched pours of one net (top and bottom), a pad on each layer, vias 0.1 mm apart in
    a row (several to a raster cell at any pitch the routes use), a via listed twice (netlist
    and drill, a few micrometres apart), a via in pad on both ends."""
    from loopcheck.board import Hole

    top = box(0, 0, 20, 10)
    bot = box(0, 0, 20, 10)
    pads = [smd("G", "A", 1, 2, 5), Pad("G", "B", "1", 18, 5, (1,), width_mm=1, height_mm=1)]
    # stitching row
    pads += [Pad("G", "", "", 6 + 0.1 * k, 2, (0, 1), hole_mm=0.2, is_via=True) for k in range(30)]
    # one via, two records: the netlist's and the drill file's (slightly apart, both kept)
    pads.append(Pad("G", "", "", 10, 8, (0, 1), hole_mm=0.3, is_via=True))
    hs = [Hole(10.004, 8.0, 0.3, True), Hole(6.05, 2.0, 0.2, True)]
    # via in pad under A and under B
    pads += [Pad("G", "", "", 2, 5, (0, 1), hole_mm=0.3, is_via=True),
             Pad("G", "", "", 18, 5, (0, 1), hole_mm=0.3, is_via=True)]
    return make_board([top, bot], pads + list(extra_pads), holes=hs + list(holes))


def test_unique_edges_keeps_each_pair_once_at_its_least_length():
    import numpy as np
    from loopcheck.measure.routes import unique_edges

    a = np.array([0, 1, 2, 0, 3, 3])
    b = np.array([1, 0, 3, 1, 2, 3])
    ln = np.array([2.0, 1.5, 4.0, 3.0, 0.5, 1.0])
    via = np.array([False, True, False, False, True, True])
    ua, ub, ul, uv = unique_edges(a, b, ln, via)
    got = {(int(x), int(y)): (float(l), bool(v)) for x, y, l, v in zip(ua, ub, ul, uv)}
    # (0,1) three times -> 1.5 (the via record); (2,3) twice -> 0.5; the self-loop (3,3) dropped
    assert got == {(0, 1): (1.5, True), (2, 3): (0.5, True)}


@pytest.mark.parametrize("pitch", [None, 0.2, 0.5])
def test_graph_weights_match_edges_with_coincident_vias(pitch):
    import numpy as np
    from loopcheck.measure.routes import net_raster

    b = _stitched_board()
    nr = net_raster(MeasureContext(b), "G", pitch)
    g = nr.graph()
    # every stored weight is its own edge's cost, both directions, each pair once
    assert g.nnz == 2 * len(nr.edge_a)
    w = nr.costs()
    assert np.allclose(g[nr.edge_a, nr.edge_b].A1, w)
    assert np.allclose(g[nr.edge_b, nr.edge_a].A1, w)
    pairs = set(zip(np.minimum(nr.edge_a, nr.edge_b).tolist(), np.maximum(nr.edge_a, nr.edge_b).tolist()))
    assert len(pairs) == len(nr.edge_a)
    # an attraction factor goes through the same mapping
    att = np.linspace(1, 3, len(nr.nodes))
    assert np.allclose(nr.graph(att)[nr.edge_a, nr.edge_b].A1, nr.costs(att))


@pytest.mark.parametrize("pitch", [None, 0.5])
def test_route_across_stitched_pours_and_via_in_pad(pitch):
    b = _stitched_board()
    r = route(MeasureContext(b), b.terminals["A.1"], b.terminals["B.1"], pitch_mm=pitch)
    # the via in pad A takes the current straight down (or B's up): one layer change, the
    # straight line between the pads along the board
    assert len(r.vias) == 1
    assert r.length_mm == pytest.approx(16.0, abs=2 * r.pitch_mm + 0.05)


def test_a_board_sized_pour_is_rastered_within_the_node_cap(monkeypatch):
    # memory bound (issue 11): past MAX_NODES copper cells the pitch grows beyond MAX_PITCH_MM;
    # the route across the pour is still made, and still straight
    import loopcheck.measure.routes as routes

    monkeypatch.setattr(routes, "MAX_NODES", 20_000)
    plane = box(0, 0, 100, 100)                  # 10,000 mm2: 40,000 cells at the 0.5 mm pitch
    b = make_board([plane, []], [smd("G", "A", 1, 5, 5, 2.0), smd("G", "B", 1, 95, 95, 2.0)])
    ctx = MeasureContext(b)
    r = route(ctx, b.terminals["A.1"], b.terminals["B.1"])
    assert r.pitch_mm > routes.MAX_PITCH_MM
    nr = routes.net_raster(ctx, "G", None, None)
    assert len(nr.nodes) <= 1.05 * routes.MAX_NODES    # cells along the edges round up
    assert r.length_mm == pytest.approx(math.hypot(90, 90), rel=0.03)


def test_rasters_kept_stay_within_their_copper_cell_budget(monkeypatch):
    # two board-sized pours of two nets: the second raster pushes the first out of the cache
    # before it is built, so the two are never held at once; small rasters are kept as before
    import loopcheck.measure.routes as routes

    monkeypatch.setattr(routes, "RASTER_NODES_KEPT", 50_000)
    b = make_board([box(0, 0, 100, 100), box(0, 0, 100, 100)],
                   [smd("G", "A", 1, 5, 5), smd("G", "B", 1, 95, 95),
                    smd("H", "C", 1, 5, 5, layer=1), smd("H", "D", 1, 95, 95, layer=1)])
    ctx = MeasureContext(b)
    g = routes.net_raster(ctx, "G", 0.5, None)           # 40,000 cells
    assert len(g.nodes) == pytest.approx(40_000, rel=0.02)
    routes.net_raster(ctx, "H", 0.5, None)               # 40,000 more: over the budget together
    kept = ctx.cache["rasters"]
    assert [k[1] for k in kept] == ["H"]
    assert sum(len(r.nodes) for r in kept.values()) <= routes.RASTER_NODES_KEPT
    # three small rasters fit beside each other, a fourth drops the oldest (RASTERS_KEPT)
    for w in [(0, 0, 10, 10), (20, 20, 30, 30), (40, 40, 50, 50), (60, 60, 70, 70)]:
        routes.net_raster(ctx, "G", 0.5, w)
    assert len(kept) == routes.RASTERS_KEPT
    assert [k[3] for k in kept] == [(20, 20, 30, 30), (40, 40, 50, 50), (60, 60, 70, 70)]


def test_a_failed_route_is_remembered_without_the_search_that_failed():
    # the error kept for the next asker must not hold the search's frames: through them it kept
    # a board-sized raster and its graph alive (a 4-layer 614 x 342 mm board peaked at 2.3 GB)
    t = unary_union([trace([(0, 0), (8, 0)], 0.5), trace([(12, 0), (20, 0)], 0.5)])
    b = make_board([t, []], [smd("N", "A", 1, 0, 0), smd("N", "B", 1, 20, 0)])
    ctx = MeasureContext(b)
    for _ in range(2):            # traced, then from the cache: the same reason both times
        with pytest.raises(RouteError, match="no copper of net N joins A.1"):
            route(ctx, b.terminals["A.1"], b.terminals["B.1"])
    kept = [v for k, v in ctx.cache.items() if isinstance(k, tuple) and k[0] == "route"]
    assert len(kept) == 1 and isinstance(kept[0], RouteError)
    assert kept[0].__traceback__ is None
