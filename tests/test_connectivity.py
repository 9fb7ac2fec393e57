"""Connectivity: copper islands against the netlist (boards made directly from shapely geometry)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
import shapely
from shapely.geometry import LineString, Point, box

from loopcheck.board import Board, CopperLayer, Hole, Outline, Pad
from loopcheck.connectivity import check_connectivity, net_copper, search_alignment
from loopcheck.stackup import build_stackup


def make_board(top, bottom=None, pads=(), holes=(), size=(60.0, 40.0)) -> Board:
    geoms = [top] + ([bottom] if bottom is not None else [])
    n = len(geoms)
    stack, _ = build_stackup(n)
    names = ["top", "bottom"][:n] if n == 2 else ["top"]
    layers = [CopperLayer(index=i, name=names[i], file=None, geometry=g, thickness_m=35e-6)
              for i, g in enumerate(geoms)]
    return Board(name="t", layers=layers, outline=Outline(box(0, 0, *size), "test"), stackup=stack,
                 pads=list(pads), holes=list(holes), netlist_file="test.ipc")


def trace(points, width=0.5):
    return LineString(points).buffer(width / 2, cap_style="square")


def pad(net, ref, pin, x, y, layers=(0,), **kw):
    return Pad(net=net, ref=ref, pin=pin, x_mm=x, y_mm=y, layers=layers, width_mm=1.0, height_mm=1.0, **kw)


def two_nets(bridge=False, cut=False):
    a = [trace([(5, 10), (25, 10)])] if not cut else [trace([(5, 10), (14, 10)]), trace([(16, 10), (25, 10)])]
    b = [trace([(5, 15), (25, 15)])]
    pads_geom = [box(x - 0.5, y - 0.5, x + 0.5, y + 0.5) for x in (5, 25) for y in (10, 15)]
    extra = [box(19.8, 10, 20.2, 15)] if bridge else []
    top = shapely.union_all(a + b + pads_geom + extra)
    pads = [pad("A", "R1", "1", 5, 10), pad("A", "R2", "1", 25, 10),
            pad("B", "R1", "2", 5, 15), pad("B", "R2", "2", 25, 15)]
    return make_board(top, pads=pads)


def test_clean_board_has_no_findings():
    r = check_connectivity(two_nets())
    assert r.checked and r.aligned
    assert r.findings == []
    assert len(r.groups) == 2


def test_cut_trace_gives_one_open_naming_both_sides():
    r = check_connectivity(two_nets(cut=True))
    assert [f.rule for f in r.findings] == ["netlist-open"]
    f = r.findings[0]
    assert f.nets == ("A",)
    assert set(f.terminals) == {"R1.1", "R2.1"}
    assert "[R1.1]" in f.message and "[R2.1]" in f.message and "2 copper groups" in f.message


def test_bridge_gives_one_short_with_location_on_the_bridge():
    r = check_connectivity(two_nets(bridge=True))
    assert [f.rule for f in r.findings] == ["netlist-short"]
    f = r.findings[0]
    assert f.nets == ("A", "B")
    assert set(f.terminals) == {"R1.1", "R1.2", "R2.1", "R2.2"}
    assert f.layer == "top"
    # the point lies on copper of the group
    assert two_nets(bridge=True).layers[0].geometry.buffer(1e-6).contains(Point(f.x_mm, f.y_mm))


def test_bridge_location_from_x2_net_copper():
    b = two_nets(bridge=True)
    a_cu = shapely.union_all([trace([(5, 10), (25, 10)]), box(4.5, 9.5, 5.5, 10.5), box(24.5, 9.5, 25.5, 10.5)])
    b_cu = shapely.union_all([trace([(5, 15), (25, 15)]), box(4.5, 14.5, 5.5, 15.5), box(24.5, 14.5, 25.5, 15.5)])
    b.layers[0].net_copper = {"A": a_cu, "B": b_cu}      # the bridge itself carries no net attribute
    f = check_connectivity(b).findings[0]
    assert f.rule == "netlist-short"
    assert 19.8 <= f.x_mm <= 20.2 and 10 <= f.y_mm <= 15


def test_plated_hole_joins_layers_and_its_absence_is_an_open():
    top = shapely.union_all([trace([(5, 10), (15, 10)]), box(4.5, 9.5, 5.5, 10.5), Point(15, 10).buffer(0.5)])
    bottom = shapely.union_all([trace([(15, 10), (25, 10)]), Point(15, 10).buffer(0.5), box(24.5, 9.5, 25.5, 10.5)])
    pads = [pad("A", "R1", "1", 5, 10, (0,)), pad("A", "R2", "1", 25, 10, (1,))]
    with_hole = make_board(top, bottom, pads=pads, holes=[Hole(15, 10, 0.3, plated=True)])
    assert check_connectivity(with_hole).findings == []
    no_hole = make_board(top, bottom, pads=pads)
    assert [f.rule for f in check_connectivity(no_hole).findings] == ["netlist-open"]
    npth = make_board(top, bottom, pads=pads, holes=[Hole(15, 10, 0.3, plated=False)])
    assert [f.rule for f in check_connectivity(npth).findings] == ["netlist-open"]
    # a netlist via (through, all layers) joins them as well
    via = Pad(net="A", ref="", pin="", x_mm=15, y_mm=10, layers=(0, 1), hole_mm=0.3, is_via=True)
    assert check_connectivity(make_board(top, bottom, pads=pads + [via])).findings == []


def test_net_copper_and_island_queries():
    b = two_nets()
    r = check_connectivity(b)
    cu = net_copper(b, r, "A")
    assert set(cu) == {0}
    expected = shapely.union_all([trace([(5, 10), (25, 10)]), box(4.5, 9.5, 5.5, 10.5), box(24.5, 9.5, 25.5, 10.5)])
    assert cu[0].area == pytest.approx(expected.area, rel=1e-9)
    p = b.pads[0]
    assert r.island_of(p, 0).contains(Point(15, 10))
    assert r.island_of(p, 1) is None
    assert r.copper_group_of_pad(p) == r.copper_group_of_pad(b.pads[1]) != r.copper_group_of_pad(b.pads[2])


def test_pad_beside_copper_is_found_by_its_footprint():
    b = two_nets()
    moved = dataclasses.replace(b.pads[0], x_mm=4.2)   # centre off the copper, footprint overlaps it
    b.pads[0] = moved
    assert check_connectivity(b).findings == []


def test_no_pads_is_not_checked():
    b = two_nets()
    b.pads = []
    r = check_connectivity(b)
    assert not r.checked and r.findings == [] and "no netlist" in r.not_checked_reason


# --- alignment -----------------------------------------------------------------------------

def grid_board(seed=1):
    """Twenty two-pad parts at irregular places (a jittered grid, no overlaps), plus six vias."""
    rng = np.random.default_rng(seed)
    geoms, pads, holes = [], [], []
    for k in range(20):
        x = 5 + 10 * (k % 5) + float(rng.uniform(-1.5, 1.5))
        y = 5 + 8 * (k // 5) + float(rng.uniform(-1.5, 1.5))
        w = float(rng.choice([0.8, 1.2, 1.6]))
        for pin, (px, py) in enumerate([(x, y), (x + 2.0, y)], start=1):
            geoms.append(box(px - w / 2, py - w / 2, px + w / 2, py + w / 2))
            pads.append(Pad(net=f"N{k}_{pin}", ref=f"R{k}", pin=str(pin), x_mm=px, y_mm=py, layers=(0,),
                            width_mm=w, height_mm=w))
    for k in range(6):
        x, y = 9.5 + 10 * k, 37.0 + float(rng.uniform(-0.5, 0.5))
        geoms.append(Point(x, y).buffer(0.4))
        pads.append(Pad(net=f"V{k}", ref="", pin="", x_mm=x, y_mm=y, layers=(0,), hole_mm=0.3, is_via=True))
        holes.append(Hole(x, y, 0.3, plated=True))
    return make_board(shapely.union_all(geoms), pads=pads, holes=holes)


def moved(board, fx):
    b = dataclasses.replace(board)
    b.pads = [dataclasses.replace(p, x_mm=fx(p.x_mm, p.y_mm)[0], y_mm=fx(p.x_mm, p.y_mm)[1]) for p in board.pads]
    return b


def test_aligned_grid_is_clean():
    r = check_connectivity(grid_board())
    assert r.findings == [] and r.aligned


def test_offset_netlist_names_the_offset_and_stops_measurement():
    b = moved(grid_board(), lambda x, y: (x + 5.0, y + 5.0))
    r = check_connectivity(b)
    assert [f.rule for f in r.findings] == ["netlist-alignment"]
    assert not r.aligned
    assert r.alignment.dx_mm == pytest.approx(-5.0, abs=0.01)
    assert r.alignment.dy_mm == pytest.approx(-5.0, abs=0.01)
    assert r.alignment.scale == 1.0 and r.alignment.mirror_x_about is None
    assert "offset by (-5.000, -5.000) mm" in r.findings[0].message
    assert r.alignment_hint and "measurement stops" in r.findings[0].message


def test_offset_without_holes_found_by_correlation():
    b = moved(grid_board(), lambda x, y: (x + 5.0, y - 3.0))
    b.holes = []
    b.pads = [dataclasses.replace(p, hole_mm=None) for p in b.pads]
    r = check_connectivity(b)
    assert r.alignment is not None
    assert r.alignment.dx_mm == pytest.approx(-5.0, abs=0.1)
    assert r.alignment.dy_mm == pytest.approx(3.0, abs=0.1)
    assert r.alignment.landed_fraction == 1.0


def test_inch_netlist_read_as_mm_names_the_scale():
    b = moved(grid_board(), lambda x, y: (x / 25.4, y / 25.4))
    r = check_connectivity(b)
    assert [f.rule for f in r.findings] == ["netlist-alignment"]
    assert r.alignment.scale == pytest.approx(25.4)
    assert abs(r.alignment.dx_mm) < 1e-9 and abs(r.alignment.dy_mm) < 1e-9
    assert "scale by 25.4" in r.alignment_hint


def test_mirrored_netlist_names_the_mirror():
    b = moved(grid_board(), lambda x, y: (-x, y))
    r = check_connectivity(b)
    assert r.alignment.mirror_x_about == 0.0 and r.alignment.scale == 1.0
    assert "mirror x" in r.alignment_hint


def test_a_few_stray_pads_are_listed_but_measurement_goes_on():
    b = grid_board()
    b.pads = b.pads + [Pad(net="X", ref="J9", pin="1", x_mm=58.0, y_mm=20.0, layers=(0,))]
    r = check_connectivity(b)
    assert r.aligned
    (f,) = r.findings
    assert f.rule == "netlist-alignment" and f.terminals == ("J9.1",) and "1 of 47" in f.message
    assert r.alignment_hint is None


def test_search_alignment_identity_on_aligned_board():
    a = search_alignment(grid_board())
    assert a.is_identity and a.landed_fraction == 1.0


def test_x2_pads_without_drills_or_with_repeated_terminals_are_not_checked():
    top = shapely.union_all([trace([(5, 10), (15, 10)]), box(4.5, 9.5, 5.5, 10.5)])
    bottom = shapely.union_all([trace([(15, 10), (25, 10)]), box(24.5, 9.5, 25.5, 10.5)])
    pads = [pad("A", "R1", "1", 5, 10, (0,)), pad("A", "R2", "1", 25, 10, (1,))]
    b = make_board(top, bottom, pads=pads)
    b.netlist_file = None          # pads as if from X2 pin attributes
    r = check_connectivity(b)
    assert not r.checked and r.findings == [] and "no drill file" in r.not_checked_reason
    panel = make_board(top, pads=[pad("A", "R1", "1", 5, 10), pad("A", "R1", "1", 45, 10)])
    panel.netlist_file = None
    r = check_connectivity(panel)
    assert not r.checked and "panel" in r.not_checked_reason


def test_shift_onto_planes_is_still_an_alignment_error():
    """On a 4-layer board with planes, a shifted through pad still lands on copper (a plane),
    only not on its own net's copper: the search must name the shift, not report shorts."""
    from pathlib import Path

    from loopcheck.load import load_board
    from loopcheck.project import load_project

    demo = Path(__file__).parents[1] / "boards" / "sync-buck-4layer"
    if not (demo / "loopcheck.toml").is_file():
        pytest.skip("demo board not generated")
    b = load_board(load_project(demo))
    assert check_connectivity(b).findings == []
    shifted = moved(b, lambda x, y: (x + 5.0, y + 5.0))
    r = check_connectivity(shifted)
    assert [f.rule for f in r.findings] == ["netlist-alignment"]
    assert not r.aligned
    assert (r.alignment.dx_mm, r.alignment.dy_mm) == (pytest.approx(-5.0, abs=0.01), pytest.approx(-5.0, abs=0.01))
