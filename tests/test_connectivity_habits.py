"""Connectivity on the habits of real netlists and copper: no false opens, shorts or misalignment.

Each fixture reproduces one class seen on real boards that were built and work (unplated holes
and unnumbered mechanical pads, netlist sizes larger than the copper, surface records on the
wrong layer, net ties and printed antennas, twin pads of one pin), and a twin with a real fault
that must still be found. Boards are made directly from shapely geometry.
"""

from __future__ import annotations

import shapely
from shapely.geometry import LineString, Point, box

from loopcheck.board import Board, CopperLayer, Hole, Outline, Pad
from loopcheck.connectivity import check_connectivity
from loopcheck.stackup import build_stackup


def make_board(*geoms, pads=(), holes=(), net_copper=None, size=(60.0, 40.0)) -> Board:
    n = len(geoms)
    stack, _ = build_stackup(n)
    names = ["top"] + [f"inner{i}" for i in range(1, n - 1)] + (["bottom"] if n > 1 else [])
    layers = [CopperLayer(index=i, name=names[i], file=None, geometry=g, thickness_m=35e-6,
                          net_copper=dict((net_copper or {}).get(i, {})))
              for i, g in enumerate(geoms)]
    return Board(name="t", layers=layers, outline=Outline(box(0, 0, *size), "test"), stackup=stack,
                 pads=list(pads), holes=list(holes), netlist_file="test.ipc")


def trace(points, width=0.5):
    return LineString(points).buffer(width / 2, cap_style="square")


def sq(x, y, w, h=None):
    h = w if h is None else h
    return box(x - w / 2, y - h / 2, x + w / 2, y + h / 2)


def smd(net, ref, pin, x, y, layer=0, w=1.0, h=None, **kw):
    return Pad(net=net, ref=ref, pin=pin, x_mm=x, y_mm=y, layers=(layer,), width_mm=w,
               height_mm=w if h is None else h, **kw)


def rules(result):
    return [f.rule for f in result.findings]


# --- unplated holes and unnumbered mechanical pads -----------------------------------------

def plane_board(extra_pads=()):
    """Top: net A pads joined by a trace; bottom: a net B plane with two pads on it.
    A 3 mm mounting hole sits in a 3.4 mm clearance of the plane."""
    top = shapely.union_all([sq(5, 10, 1), sq(25, 10, 1), trace([(5, 10), (25, 10)])])
    bottom = box(2, 15, 58, 38).difference(Point(40, 25).buffer(1.7))
    pads = [smd("A", "R1", "1", 5, 10), smd("A", "R2", "1", 25, 10),
            smd("B", "R3", "1", 10, 20, layer=1), smd("B", "R4", "1", 50, 30, layer=1)]
    return make_board(top, bottom, pads=pads + list(extra_pads))


def test_unplated_hole_joins_nothing_and_needs_no_copper():
    # the netlist's record of a mounting hole (one writer: 367 N/C, no pin, D...U, A00): its size
    # (here 4 mm, as some writers give the pad or keep-out) reaches the plane around the hole
    hole = Pad(net="", ref="H1", pin="", x_mm=40, y_mm=25, layers=(0, 1), hole_mm=3.0, plated=False,
               width_mm=4.0, height_mm=0.0)
    r = check_connectivity(plane_board([hole]))
    assert r.findings == [] and r.aligned
    assert r.copper_group_of_pad(hole) is None
    assert any("need none" in n for n in r.notes)


def test_unplated_hole_straddling_two_nets_is_no_short():
    # a connector's unplated locating peg whose netlist size reaches net A's trace on top and
    # net B's plane on the bottom: before, it joined them (netlist-short A/B)
    peg = Pad(net="", ref="J1", pin="", x_mm=15, y_mm=10.9, layers=(0, 1), hole_mm=0.9, plated=False,
              width_mm=2.0, height_mm=0.0)
    bottom_with_b = plane_board().layers[1].geometry.union(trace([(15, 10.9), (15, 16)], 1.0))
    b = plane_board([peg])
    b.layers[1].geometry = bottom_with_b
    assert check_connectivity(b).findings == []


def test_shell_and_mechanical_pads_without_pin_number_need_no_copper():
    shells = [Pad(net="", ref="J2", pin=pin, x_mm=50, y_mm=5 + k, layers=(0,), width_mm=1.0, height_mm=1.5)
              for k, pin in enumerate(["", "-", '""'])]
    r = check_connectivity(plane_board(shells))
    assert r.findings == [] and r.aligned
    # a pad WITH a net or pin number off the copper is still a finding
    stray = smd("A", "J3", "1", 50, 5)
    r = check_connectivity(plane_board([stray]))
    assert rules(r) == ["netlist-alignment"] and r.findings[0].terminals == ("J3.1",)


# --- netlist sizes larger than the copper --------------------------------------------------

def test_drilled_pad_meets_inner_copper_only_through_its_hole():
    """A through pad of net A: 2.0 mm pad on top, removed on the bottom (unused pad) where a net
    B plane keeps 0.45 mm clear of its 0.6 mm hole. The netlist gives the outer pad's 2.0 mm
    size, which reaches the plane: before, a false short A/B."""
    top = shapely.union_all([Point(20, 25).buffer(1.0), trace([(20, 25), (40, 25)]), sq(40, 25, 1)])
    bottom = box(2, 2, 58, 38).difference(Point(20, 25).buffer(0.75))
    pads = [Pad(net="A", ref="J1", pin="1", x_mm=20, y_mm=25, layers=(0, 1), hole_mm=0.6,
                width_mm=2.0, height_mm=2.0),
            smd("A", "R1", "1", 40, 25),
            smd("B", "C1", "2", 50, 10, layer=1), smd("B", "C2", "2", 10, 10, layer=1)]
    holes = [Hole(20, 25, 0.6, plated=True)]
    b = make_board(top, bottom, pads=pads, holes=holes)
    assert check_connectivity(b).findings == []
    # the same plane touching the hole (no clearance) is a real short
    b2 = make_board(top, box(2, 2, 58, 38), pads=pads, holes=holes)
    assert rules(check_connectivity(b2)) == ["netlist-short"]


def fine_pitch(netlist_w=0.6, netlist_h=1.6, anchor_dy=0.55):
    """A 0.5 mm-pitch row: copper pads 0.25 x 1.0 mm; pins 1, 3 (+3.3V) between pins 2, 4
    (GND) that fan out into a wide GND pour. The netlist records sit at each pad's outer end
    (a writer that gives the pin's anchor, just off the copper) with a mask-opening size."""
    xs = [10.0, 10.5, 11.0, 11.5]
    nets = ["+3.3V", "GND", "+3.3V", "GND"]
    cu = [sq(x, 20, 0.25, 1.0) for x in xs]
    # the GND pins run straight into a pour above the row; the +3.3V pins leave below
    pour = box(9.6, 20.45, 12.0, 23.0).difference(box(9.8, 20.45, 10.2, 21.0)).difference(
        box(10.8, 20.45, 11.2, 21.0))
    plus = [trace([(10, 20), (10, 14)], 0.2), trace([(11, 20), (11, 14)], 0.2), trace([(10, 14), (11, 14)], 0.2)]
    top = shapely.union_all(cu + [pour] + plus + [sq(20, 14, 1), trace([(11, 14), (20, 14)], 0.3),
                                                    sq(20, 22, 1), trace([(12, 22), (20, 22)], 0.5)])
    pads = [smd(net, "U1", str(k + 1), x, 20 + anchor_dy, w=netlist_w, h=netlist_h)
            for k, (x, net) in enumerate(zip(xs, nets))]
    pads += [smd("+3.3V", "C1", "1", 20, 14), smd("GND", "C2", "1", 20, 22)]
    return make_board(top, pads=pads)


def test_fine_pitch_netlist_sizes_over_the_neighbours_copper_is_no_short():
    b = fine_pitch()
    assert not b.layers[0].geometry.contains(Point(b.pads[0].x_mm, b.pads[0].y_mm))   # off copper
    r = check_connectivity(b)
    assert r.findings == []
    assert r.copper_group_of_pad(b.pads[0]) == r.copper_group_of_pad(b.terminals["C1.1"])


def test_fine_pitch_real_bridge_is_still_a_short():
    b = fine_pitch()
    b.layers[0].geometry = b.layers[0].geometry.union(box(10.0, 19.8, 10.5, 19.9))   # a sliver pin 1-2
    r = check_connectivity(b)
    assert rules(r) == ["netlist-short"] and r.findings[0].nets == ("+3.3V", "GND")


def test_surface_record_that_says_both_sides_lands_on_one_side():
    """A surface pad written with access 00 (both sides) and no hole: it must not join the
    top pad to the bottom plane under it (before: a false short)."""
    top = shapely.union_all([sq(10, 20, 1), trace([(10, 20), (30, 20)]), sq(30, 20, 1)])
    bottom = box(2, 2, 58, 38)
    pads = [Pad(net="A", ref="R1", pin="1", x_mm=10, y_mm=20, layers=(0, 1), width_mm=1, height_mm=1),
            smd("A", "R2", "1", 30, 20), smd("B", "C1", "1", 50, 30, layer=1), smd("B", "C2", "1", 5, 5, layer=1)]
    r = check_connectivity(make_board(top, bottom, pads=pads))
    assert r.findings == []
    assert r.islands_of(pads[0]).keys() == {0}


def test_bottom_side_ic_recorded_on_an_inner_layer_is_read_on_the_bottom():
    """A 4-layer board: a bottom-side IC whose records say access 02 (a writer's 'secondary
    side'); layer 2 is a GND plane and layer 3 a /3V3 plane. Before: every pin landed on a
    plane, a false /3V3-GND short under the IC."""
    top = shapely.union_all([sq(40, 10, 1), sq(40, 30, 1)])
    gnd = box(2, 2, 58, 38).difference(Point(40, 30).buffer(0.6))
    p3v3 = box(2, 2, 58, 38).difference(Point(40, 10).buffer(0.6))
    bottom = shapely.union_all([sq(20, 20, 0.6), sq(21, 20, 0.6), trace([(20, 20), (20, 10), (40, 10)], 0.4),
                                trace([(21, 20), (21, 30), (40, 30)], 0.4), Point(40, 10).buffer(0.5),
                                Point(40, 30).buffer(0.5)])
    pads = [smd("GND", "U1", "1", 20, 20, layer=1, w=0.6), smd("/3V3", "U1", "2", 21, 20, layer=1, w=0.6),
            Pad(net="GND", ref="", pin="", x_mm=40, y_mm=10, layers=(0, 1, 2, 3), hole_mm=0.3, is_via=True),
            Pad(net="/3V3", ref="", pin="", x_mm=40, y_mm=30, layers=(0, 1, 2, 3), hole_mm=0.3, is_via=True)]
    holes = [Hole(40, 10, 0.3, plated=True), Hole(40, 30, 0.3, plated=True)]
    b = make_board(top, gnd, p3v3, bottom, pads=pads, holes=holes)
    r = check_connectivity(b)
    assert r.findings == []
    assert r.islands_of(pads[0]).keys() == {3}


# --- a part's own copper joining two nets --------------------------------------------------

def antenna(ref="AE1", x2=True, element_net=None):
    """A printed inverted-F antenna: feed pad (NET-(AE1-A), from a matching capacitor) and
    ground pad (GND, to a via), one copper shape joining them: the element."""
    feed, gnd = sq(30, 20, 0.5), sq(28, 20, 0.9, 0.5)
    element = shapely.union_all([box(29.8, 20.2, 30.2, 30), box(28.0, 29.5, 40, 30),
                                 box(28.0, 20.2, 28.5, 30)])
    match = trace([(30, 20), (30, 12), (35, 12)], 0.3)
    top = shapely.union_all([feed, gnd, element, match, sq(35, 12, 0.8), trace([(28, 20), (10, 20)], 0.5),
                             Point(20, 20).buffer(0.4), sq(10, 20, 1)])
    bottom = box(2, 2, 58, 22)
    pads = [smd("NET-(AE1-A)", ref, "1", 30, 20, w=0.5), smd("GND", ref, "2", 28, 20, w=0.9, h=0.5),
            smd("NET-(AE1-A)", "C13", "1", 35, 12, w=0.8), smd("GND", "C13", "2", 10, 20),
            Pad(net="GND", ref="", pin="", x_mm=20, y_mm=20, layers=(0, 1), hole_mm=0.3, is_via=True),
            smd("GND", "C14", "2", 50, 10, layer=1)]
    holes = [Hole(20, 20, 0.3, plated=True)]
    net_copper = None
    if x2:
        gnd_cu = shapely.union_all([gnd, trace([(28, 20), (10, 20)], 0.5), Point(20, 20).buffer(0.4), sq(10, 20, 1)])
        feed_cu = shapely.union_all([feed, match, sq(35, 12, 0.8)])
        if element_net == "GND":
            gnd_cu = gnd_cu.union(element)
        net_copper = {0: {"GND": gnd_cu, "Net-(AE1-A)": feed_cu}, 1: {"GND": bottom}}
    return make_board(top, bottom, pads=pads, holes=holes, net_copper=net_copper)


def test_printed_antenna_feed_and_ground_on_one_shape_is_no_short():
    b = antenna()
    r = check_connectivity(b)
    assert r.findings == []
    assert any("AE1's own copper" in n and "no X2 net attribute" in n for n in r.notes)
    # the feed net keeps its copper; the element is nobody's
    assert r.copper_group_of_pad(b.terminals["AE1.1"]) == r.copper_group_of_pad(b.terminals["C13.1"])
    assert r.copper_group_of_pad(b.terminals["AE1.1"]) != r.copper_group_of_pad(b.terminals["AE1.2"])


def test_antenna_without_x2_is_known_by_its_designator():
    assert check_connectivity(antenna(x2=False)).findings == []
    # the same copper on a part that is not marked as joining nets: a short
    r = check_connectivity(antenna(ref="U7", x2=False))
    assert rules(r) == ["netlist-short"]


def test_antenna_shape_that_x2_gives_to_a_net_is_a_short():
    # the joining copper is drawn as GND copper (a trace or pour of GND), not footprint copper
    r = check_connectivity(antenna(element_net="GND"))
    assert "netlist-short" in rules(r)


def net_tie(ref="NT1", stray=False):
    """Two nets, A (R1-NT1.1) and B (NT1.2-R2), joined by a net tie's copper bridge; with
    ``stray`` the tie is left out and a trace of stray copper joins R3's two pads instead."""
    cu = [sq(10, 20, 1), trace([(10, 20), (20, 20)]), sq(20, 20, 0.6), sq(21.2, 20, 0.6),
          trace([(21.2, 20), (35, 20)]), sq(35, 20, 1), box(20.3, 19.9, 20.9, 20.1)]
    pads = [smd("A", "R1", "1", 10, 20), smd("A", ref, "1", 20, 20, w=0.6),
            smd("B", ref, "2", 21.2, 20, w=0.6), smd("B", "R2", "1", 35, 20)]
    return make_board(shapely.union_all(cu), pads=pads)


def test_net_tie_is_no_short_and_a_real_bridge_across_a_part_is():
    r = check_connectivity(net_tie())
    assert r.findings == [] and any("NT1" in n for n in r.notes)
    # the same copper across the pads of a capacitor is a short
    assert rules(check_connectivity(net_tie(ref="C5"))) == ["netlist-short"]


# --- twin pads of one pin ------------------------------------------------------------------

def test_two_pads_of_one_pin_are_joined_by_the_part():
    """A push button's pins 2 and 2 (joined inside the switch); only one is routed."""
    top = shapely.union_all([sq(10, 20, 1), trace([(10, 20), (30, 20)]), sq(30, 20, 1), sq(30, 26, 1)])
    pads = [smd("N1", "R13", "1", 10, 20), smd("N1", "SW1", "2", 30, 20), smd("N1", "SW1", "2", 30, 26)]
    assert check_connectivity(make_board(top, pads=pads)).findings == []
    # two different pins of one net that nothing joins are an open
    pads[2] = smd("N1", "SW1", "3", 30, 26)
    assert rules(check_connectivity(make_board(top, pads=pads))) == ["netlist-open"]


# --- X2 net attributes as a second opinion -------------------------------------------------

def test_x2_agreeing_with_the_netlist_gives_no_finding_and_picks_the_pads_own_copper():
    """The record of A's pad sits on B's neighbouring copper (a pad drawn off its anchor); X2
    says B's copper is B and A's copper, within the pad's size, is A: the pad is A's."""
    a_cu = shapely.union_all([sq(10, 20, 0.3, 1.0), trace([(10, 20), (10, 30)], 0.3), sq(10, 30, 1)])
    b_cu = shapely.union_all([sq(10.4, 20, 0.3, 1.0), trace([(10.4, 20), (20, 20)], 0.3), sq(20, 20, 1)])
    pads = [smd("A", "U1", "1", 10.3, 20, w=0.8, h=1.0), smd("B", "U1", "2", 10.45, 20, w=0.3, h=1.0),
            smd("A", "C1", "1", 10, 30), smd("B", "C2", "1", 20, 20)]
    b = make_board(shapely.union_all([a_cu, b_cu]), pads=pads, net_copper={0: {"A": a_cu, "B": b_cu}})
    r = check_connectivity(b)
    assert r.findings == []
    assert r.copper_group_of_pad(pads[0]) == r.copper_group_of_pad(pads[2])
    # without X2 the centre decides: A's pad is on B's copper, a short
    b.layers[0].net_copper = {}
    assert "netlist-short" in rules(check_connectivity(b))


def test_x2_disagreeing_with_the_netlist_is_its_own_warning():
    top = shapely.union_all([sq(10, 20, 1), trace([(10, 20), (30, 20)]), sq(30, 20, 1), sq(10, 30, 1),
                             trace([(10, 30), (30, 30)]), sq(30, 30, 1)])
    pads = [smd("VIN", "R1", "1", 10, 20), smd("VIN", "R2", "1", 30, 20),
            smd("/POWER/EN", "R1", "2", 10, 30), smd("/POWER/EN", "R2", "2", 30, 30)]
    first = shapely.union_all([sq(10, 20, 1), trace([(10, 20), (30, 20)]), sq(30, 20, 1)])
    second = shapely.union_all([sq(10, 30, 1), trace([(10, 30), (30, 30)]), sq(30, 30, 1)])
    # X2 names: case differs and the netlist cut nothing: agreement, no finding
    agree = make_board(top, pads=pads, net_copper={0: {"VIN": first, "/Power/EN": second}})
    assert check_connectivity(agree).findings == []
    # the Gerber's copper under VIN's pads is named VIN_OLD: a warning naming both
    renamed = make_board(top, pads=pads, net_copper={0: {"VIN_OLD": first, "/Power/EN": second}})
    r = check_connectivity(renamed)
    assert rules(r) == ["netlist-x2-mismatch"]
    f = r.findings[0]
    assert f.severity == "warning" and f.nets == ("VIN", "VIN_OLD")
    assert set(f.terminals) == {"R1.1", "R2.1"} and "VIN_OLD" in f.message


def test_x2_names_cut_to_fourteen_characters_match():
    top = shapely.union_all([sq(10, 20, 1), trace([(10, 20), (30, 20)]), sq(30, 20, 1)])
    pads = [smd("VERTER/BUCK_SW", "L1", "1", 10, 20), smd("VERTER/BUCK_SW", "U1", "3", 30, 20)]
    b = make_board(top, pads=pads, net_copper={0: {"/Power/Converter/Buck_SW": top}})
    assert check_connectivity(b).findings == []


# --- the same habits read from files -------------------------------------------------------

def _unplated_hole_record(ref: str, x_mm: float, y_mm: float, d_mm: float) -> str:
    """A test record as one design program writes an unplated hole (from a real board's netlist:
    ``367N/C              J8          D0256UA00X+050174Y-035262X0256Y0000R090S0``), CUST 1."""
    d = round(d_mm * 1000)
    return (f"367{'N/C':<14}   {ref:<6}      D{d:04d}UA00X{round(x_mm * 1000):+07d}"
            f"Y{round(y_mm * 1000):+07d}X{d:04d}Y0000R000S0")


def test_unplated_and_unnumbered_records_in_a_netlist_file(tmp_path):
    """The demo 4-layer board with an unplated 3 mm hole whose size reaches VOUT and GND copper
    on top and the GND planes inside, and a mechanical pad (no net, no pin) off the copper."""
    import shutil
    from pathlib import Path

    from loopcheck.load import load_board
    from loopcheck.project import load_project

    demo = Path(__file__).parents[1] / "boards" / "sync-buck-4layer"
    if not (demo / "loopcheck.toml").is_file():
        import pytest
        pytest.skip("demo board not generated")
    folder = tmp_path / "board"
    shutil.copytree(demo, folder)
    netlist = folder / "sync-buck-4layer-netlist.ipc"
    lines = netlist.read_text().splitlines()
    shell = f"327{'N/C':<14}   {'J9':<6}            A01X+008000Y+005000X1000Y1500R000S1"
    lines[-1:-1] = [_unplated_hole_record("H1", 40.0, 5.0, 3.0), shell]
    netlist.write_text("\n".join(lines) + "\n")
    b = load_board(load_project(folder))
    hole = next(p for p in b.pads if p.ref == "H1")
    assert hole.pin == "" and hole.plated is False and hole.layers == (0, 1, 2, 3)
    r = check_connectivity(b)
    assert r.findings == [] and r.aligned


# --- bottom-side parts whose records are mirrored or on the other side ------------------------

def bottom_ic(read=lambda x, y: (x, y), record_layer=1, bridge=False):
    """A bottom-side IC U1 (pins 1-4 at x = 20..23 mm: GND, /3V3, EN, FB), each pin routed to a
    capacitor on the bottom; a top GND pour over the whole part, joined to pin 1 by a via."""
    xs = [20.0, 21.0, 22.0, 23.0]
    nets = ["GND", "/3V3", "EN", "FB"]
    cu = []
    pads = []
    for k, (x, net) in enumerate(zip(xs, nets)):
        cu += [sq(x, 20, 0.6, 1.2), trace([(x, 20), (x, 18), (20 + 5 * k, 10)], 0.3), sq(20 + 5 * k, 10, 1)]
        px, py = read(x, 20.0)
        pads.append(smd(net, "U1", str(k + 1), px, py, layer=record_layer, w=0.6, h=1.2))
        pads.append(smd(net, f"C{k + 1}", "1", 20 + 5 * k, 10, layer=1))
    if bridge:
        cu.append(box(21.0, 19.9, 22.0, 20.1))
    top = box(15, 15, 30, 25)
    pads.append(smd("GND", "C9", "2", 28, 24, layer=0))
    pads.append(Pad(net="GND", ref="", pin="", x_mm=20, y_mm=16, layers=(0, 1), hole_mm=0.3, is_via=True))
    cu.append(Point(20, 16).buffer(0.3))
    return make_board(top, shapely.union_all(cu), pads=pads, holes=[Hole(20, 16, 0.3, plated=True)])


def test_bottom_ic_with_mirrored_records_is_read_mirrored():
    """A writer that did not flip the footprint for the bottom: pin n's record sits where pin
    5 - n is. Before: pins on other pins' copper, false shorts /3V3-EN and GND-FB."""
    b = bottom_ic(read=lambda x, y: (43.0 - x, y))
    r = check_connectivity(b)
    assert r.findings == []
    assert b.terminals["U1.1"].x_mm == 20.0                      # the pads now agree with the copper
    assert any("U1" in a and "mirrored in x" in a for a in b.assumptions)


def test_bottom_ic_recorded_on_the_top_side_is_read_on_the_bottom():
    # records of the top side (access 01) for a bottom part: before, every pin on the top GND pour
    b = bottom_ic(record_layer=0)
    r = check_connectivity(b)
    assert r.findings == []
    assert b.terminals["U1.2"].layers == (1,)


def test_bottom_ic_with_a_real_bridge_is_still_a_short():
    b = bottom_ic(bridge=True)
    r = check_connectivity(b)
    assert rules(r) == ["netlist-short"] and r.findings[0].nets == ("/3V3", "EN")
    assert not any("U1" in a for a in b.assumptions)
