"""The synth writer: Gerber X2 copper/profile, Excellon and IPC-D-356A from a Python board.

The files are read back by programs nobody here wrote (gerbonara's Gerber and Excellon
parsers, gerbv's renderer) and the copper they find is compared with the copper the board
description asks for, built directly with shapely.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest
import shapely
from shapely.geometry import LineString, Point, Polygon, box
from shapely.ops import unary_union

from loopcheck.synth import (SynthBoard, SynthComponent, SynthPad, SynthPour, SynthTrace,
                             SynthVia, write_fab)

gerbonara = pytest.importorskip("gerbonara")
from gerbonara import ExcellonFile, GerberFile  # noqa: E402
from gerbonara import graphic_primitives as gp  # noqa: E402


def demo_board(layer_count: int = 4) -> SynthBoard:
    """A small invented board: a capacitor, a connector, a bottom-side part, a pour with a
    clearance hole, a trace and a via."""
    return SynthBoard(
        "tiny", 30.0, 20.0, layer_count,
        components=[
            SynthComponent("C1", "10uF", [SynthPad("1", "VIN", 5.0, 5.0, 1.0, 1.2),
                                          SynthPad("2", "GND", 7.0, 5.0, 1.0, 1.2)]),
            SynthComponent("J1", "HDR2", [SynthPad("1", "VIN", 20.0, 10.0, 1.7, 1.7, hole_mm=1.0, shape="circle"),
                                          SynthPad("2", "A_VERY_LONG_NET_NAME_X", 22.54, 10.0, 1.7, 2.4,
                                                   hole_mm=1.0, shape="obround")]),
            SynthComponent("U1", "REG", [SynthPad("1", "SW", 15.0, 3.0, 0.6, 0.8, layer="bottom")]),
        ],
        traces=[SynthTrace("VIN", 1, 0.5, [(5.0, 5.0), (5.0, 10.0), (20.0, 10.0)])],
        pours=[SynthPour("GND", 2, [(1, 1), (29, 1), (29, 19), (1, 19)],
                         holes=[[(18.5, 8.5), (24.0, 8.5), (24.0, 11.5), (18.5, 11.5)]])],
        vias=[SynthVia("GND", 7.0, 7.0, 0.3, 0.6)],
    )


def expected_copper(board: SynthBoard, layer: int):
    """The copper the description asks for on ``layer`` (1 = top), built directly."""
    n = board.layer_count
    geom = Polygon()
    for pour in board.pours:
        if pour.layer == layer:
            geom = geom.union(Polygon(pour.polygon)).difference(
                unary_union([Polygon(h) for h in pour.holes]))
    shapes = []
    for t in board.traces:
        if t.layer == layer:
            shapes.append(LineString(t.points).buffer(t.width_mm / 2, quad_segs=64))
    for c in board.components:
        for p in c.pads:
            on = (p.hole_mm is not None or (p.layer == "top" and layer == 1)
                  or (p.layer == "bottom" and layer == n))
            if not on:
                continue
            if p.shape == "circle":
                shapes.append(Point(p.x_mm, p.y_mm).buffer(p.w_mm / 2, quad_segs=64))
            elif p.shape == "rect":
                shapes.append(box(p.x_mm - p.w_mm / 2, p.y_mm - p.h_mm / 2,
                                  p.x_mm + p.w_mm / 2, p.y_mm + p.h_mm / 2))
            else:  # obround: a stroke along the long side
                r = min(p.w_mm, p.h_mm) / 2
                dx, dy = (p.w_mm / 2 - r, 0) if p.w_mm > p.h_mm else (0, p.h_mm / 2 - r)
                shapes.append(LineString([(p.x_mm - dx, p.y_mm - dy), (p.x_mm + dx, p.y_mm + dy)])
                              .buffer(r, quad_segs=64))
    for v in board.vias:
        shapes.append(Point(v.x_mm, v.y_mm).buffer(v.pad_mm / 2, quad_segs=64))
    return unary_union([geom] + shapes)


def _primitive_geometry(prim):
    if isinstance(prim, gp.Circle):
        return Point(prim.x, prim.y).buffer(prim.r, quad_segs=64)
    if isinstance(prim, gp.Rectangle):
        return shapely.affinity.rotate(box(prim.x - prim.w / 2, prim.y - prim.h / 2,
                                           prim.x + prim.w / 2, prim.y + prim.h / 2),
                                       prim.rotation, use_radians=True)
    if isinstance(prim, gp.Line):
        return LineString([(prim.x1, prim.y1), (prim.x2, prim.y2)]).buffer(prim.width / 2, quad_segs=64)
    if isinstance(prim, gp.ArcPoly):
        assert not any(prim.arc_centers), "synth writes no arcs"
        return Polygon(prim.outline)
    raise AssertionError(f"unexpected primitive {prim!r}")


def gerbonara_copper(path: Path):
    """Dark minus clear, in file order, from gerbonara's parse of the file, in mm."""
    from gerbonara.utils import MM
    geom = Polygon()
    for obj in GerberFile.open(path).objects:
        for prim in obj.to_primitives(unit=MM):
            g = _primitive_geometry(prim)
            geom = geom.union(g) if prim.polarity_dark else geom.difference(g)
    return geom


@pytest.fixture(scope="module")
def fab(tmp_path_factory):
    board = demo_board()
    folder = tmp_path_factory.mktemp("synth") / "out"
    return board, write_fab(board, folder)


def test_writes_every_file_with_our_names(fab):
    board, paths = fab
    names = sorted(p.name for p in paths.values())
    assert names == sorted(["tiny-copper-L1-top.gbr", "tiny-copper-L2-inner.gbr",
                            "tiny-copper-L3-inner.gbr", "tiny-copper-L4-bottom.gbr",
                            "tiny-profile.gbr", "tiny-plated.drl", "tiny-netlist.ipc"])
    # written whole: no temporary file is left beside them
    assert sorted(p.name for p in paths["L1"].parent.iterdir()) == names


def test_x2_file_attributes_per_layer(fab):
    _, paths = fab
    want = {"L1": ("Copper", "L1", "Top"), "L2": ("Copper", "L2", "Inr"),
            "L3": ("Copper", "L3", "Inr"), "L4": ("Copper", "L4", "Bot"),
            "profile": ("Profile", "NP")}
    for key, function in want.items():
        g = GerberFile.open(paths[key])
        assert g.file_attrs[".FileFunction"] == function
        assert g.file_attrs[".FilePolarity"] == ("Positive",)
        assert g.file_attrs[".GenerationSoftware"] == ("loopcheck", "synth", "0.1")
        text = paths[key].read_text()
        assert "%FSLAX46Y46*%" in text and "%MOMM*%" in text


@pytest.mark.parametrize("layer", [1, 2, 3, 4])
def test_copper_area_matches_description(fab, layer):
    board, paths = fab
    want = expected_copper(board, layer)
    got = gerbonara_copper(paths[f"L{layer}"])
    assert want.area > 0
    assert got.area == pytest.approx(want.area, rel=1e-4)
    assert got.symmetric_difference(want).area < 1e-3 * want.area


def test_pour_hole_is_cleared_and_pad_drawn_on_top(fab):
    board, paths = fab
    got = gerbonara_copper(paths["L2"])
    # inside the clearance hole, away from the J1 pads: no copper
    assert not got.contains(Point(19.0, 9.0))
    # the J1.1 pad is dark inside the hole; the pour is dark away from it
    assert got.contains(Point(20.0, 10.0)) and got.contains(Point(10.0, 15.0))


def test_pad_flashes_carry_pin_net_component_and_value(fab):
    board, paths = fab
    flashes = {}
    for key in ("L1", "L4"):
        for obj in GerberFile.open(paths[key]).objects:
            if ".P" in obj.attrs:
                flashes[(key, obj.attrs[".P"])] = obj
    top = flashes[("L1", ("C1", "2"))]
    assert (top.x, top.y) == pytest.approx((7.0, 5.0))
    assert top.attrs[".N"] == ("GND",) and top.attrs[".C"] == ("C1",)
    assert top.attrs[".CVal"] == ("10uF",)
    assert ("L4", ("U1", "1")) in flashes and ("L1", ("U1", "1")) not in flashes
    # a through pad is on both outer layers, a long net name is written whole in the Gerber
    assert flashes[("L4", ("J1", "2"))].attrs[".N"] == ("A_VERY_LONG_NET_NAME_X",)
    n_pads = sum(len(c.pads) for c in board.components)
    assert len({k[1] for k in flashes}) == n_pads


def test_via_and_trace_carry_net(fab):
    _, paths = fab
    objs = GerberFile.open(paths["L3"]).objects
    vias = [o for o in objs if ".P" not in o.attrs]
    assert [(o.x, o.y, o.attrs[".N"]) for o in vias] == [(7.0, 7.0, ("GND",))]
    lines = [o for o in GerberFile.open(paths["L1"]).objects if o.__class__.__name__ == "Line"]
    assert len(lines) == 2 and all(o.attrs[".N"] == ("VIN",) for o in lines)


def test_profile_is_the_outline(fab):
    _, paths = fab
    objs = GerberFile.open(paths["profile"]).objects
    pts = [(o.x1, o.y1) for o in objs]
    assert pts == [(0, 0), (30, 0), (30, 20), (0, 20)]
    assert all(o.aperture.diameter < 0.1 for o in objs)


def test_excellon_holes(fab):
    board, paths = fab
    drill = ExcellonFile.open(paths["drill"])
    got = sorted((round(o.x, 3), round(o.y, 3), round(o.aperture.diameter, 3)) for o in drill.objects)
    assert got == [(7.0, 7.0, 0.3), (20.0, 10.0, 1.0), (22.54, 10.0, 1.0)]
    text = paths["drill"].read_text()
    assert "; #@! TF.FileFunction,Plated,1,4,PTH" in text and "METRIC" in text


def test_inch_gerber_gives_same_copper(tmp_path):
    board = demo_board(2)
    mm = write_fab(board, tmp_path / "mm")
    inch = write_fab(board, tmp_path / "inch", gerber_units="inch")
    assert "%MOIN*%" in inch["L1"].read_text()
    a, b = gerbonara_copper(mm["L1"]), gerbonara_copper(inch["L1"])
    assert b.area == pytest.approx(a.area, rel=1e-5)
    # aperture sizes are written to 1e-6 inch (0.025 um): ~80 mm of edge x 0.025 um = 2e-3 mm2
    assert a.symmetric_difference(b).area < 2e-3


def test_outline_points_instead_of_rectangle(tmp_path):
    board = SynthBoard("ell", outline=[(0, 0), (20, 0), (20, 10), (10, 10), (10, 20), (0, 20)])
    paths = write_fab(board, tmp_path)
    objs = GerberFile.open(paths["profile"]).objects
    assert len(objs) == 6
    ring = Polygon([(o.x1, o.y1) for o in objs])
    assert ring.area == pytest.approx(300.0)


def test_bad_description_is_refused(tmp_path):
    board = demo_board(2)
    board.traces.append(SynthTrace("X", 3, 0.2, [(0, 0), (1, 1)]))
    with pytest.raises(ValueError, match="layer 3"):
        write_fab(board, tmp_path)
    with pytest.raises(ValueError, match="width_mm and height_mm"):
        write_fab(SynthBoard("nosize"), tmp_path)


@pytest.mark.gerbv
@pytest.mark.skipif(shutil.which("gerbv") is None, reason="gerbv (Debian package gerbv) not installed")
def test_gerbv_renders_the_described_copper_area(fab, tmp_path):
    """gerbv's raster of the pour layer: lit pixels times pixel area ~ the described area."""
    PIL = pytest.importorskip("PIL.Image")
    board, paths = fab
    dpi = 1000
    png = tmp_path / "l2.png"
    # a window larger than the copper (28 x 18 mm), white copper on black
    w_in, h_in = 32 / 25.4, 22 / 25.4
    subprocess.run(["gerbv", "-x", "png", "-D", str(dpi), "-B", "0", "-b", "#000000",
                    "-f", "#FFFFFFFF", "-W", f"{w_in:.4f}x{h_in:.4f}", "-o", str(png),
                    str(paths["L2"])],
                   check=True, capture_output=True, timeout=120)
    import numpy as np
    lit = int((np.asarray(PIL.open(png).convert("L")) > 127).sum())
    pixel_mm2 = (25.4 / dpi) ** 2
    want = expected_copper(board, 2).area
    # measured: 493.26 mm2 lit vs 493.23 described (6e-5); pixel rounding stays well under 0.5 %
    assert lit * pixel_mm2 == pytest.approx(want, rel=0.005), (lit * pixel_mm2, want)


def test_pours_with_clearance_keeps_away_from_other_nets_and_islands_survive(tmp_path):
    from loopcheck.synth import pours_with_clearance
    board = SynthBoard("pour", 20.0, 20.0, 2,
                       components=[SynthComponent("R1", "1k", [SynthPad("1", "SIG", 10.0, 10.0, 2.0, 2.0)])],
                       traces=[SynthTrace("SIG", 1, 0.4, [(10.0, 0.5), (10.0, 19.5)])])
    # an island of GND inside a ring-shaped frame of SIG copper
    board.traces.append(SynthTrace("SIG", 1, 0.3, [(3, 3), (7, 3), (7, 7), (3, 7), (3, 3)]))
    pieces = pours_with_clearance(board, "GND", 1, [(1, 1), (19, 1), (19, 19), (1, 19)], 0.25)
    board.pours += pieces
    # the vertical SIG trace cuts the pour; the frame encloses an island: 3 pieces
    assert len(pieces) == 3
    got = gerbonara_copper(write_fab(board, tmp_path)["L1"])
    want = expected_copper(board, 1)
    assert got.area == pytest.approx(want.area, rel=1e-4)
    assert got.contains(Point(5.0, 5.0))                   # the island was not cleared
    # no GND copper within the clearance of the trace: between 10.2 and 10.45 only air
    assert not got.contains(Point(10.3, 15.0))
    gnd = unary_union([Polygon(p.polygon, p.holes) for p in pieces])
    sig = LineString([(10.0, 0.5), (10.0, 19.5)]).buffer(0.2)
    assert gnd.distance(sig) == pytest.approx(0.25, abs=1e-3)


@pytest.mark.parametrize("layer", [1, 2, 3, 4])
def test_round_trip_through_the_project_gerber_reader(fab, layer):
    """loopcheck's own Gerber reader finds the described copper and every pin flash."""
    gerber = pytest.importorskip("loopcheck.readers.gerber")
    board, paths = fab
    got = gerber.read_gerber(paths[f"L{layer}"])
    want = expected_copper(board, layer)
    # the reader draws arcs as chords within tol_mm = 0.002 mm of the true curve, so the area
    # may differ by at most the copper's edge length times that tolerance
    assert got.geometry.area == pytest.approx(want.area, abs=want.boundary.length * 0.002)
    assert got.geometry.symmetric_difference(want).area <= want.boundary.length * 0.002
    assert got.attributes["FileFunction"].startswith(f"Copper,L{layer},")
    flashes = {(f.ref, f.pin): f for f in got.pin_flashes}
    on_layer = {(c.ref, p.pin): p for c in board.components for p in c.pads
                if p.hole_mm is not None or (layer == 1 and p.layer == "top")
                or (layer == board.layer_count and p.layer == "bottom")}
    assert set(flashes) == set(on_layer)
    for key, pad in on_layer.items():
        assert (flashes[key].x_mm, flashes[key].y_mm) == pytest.approx((pad.x_mm, pad.y_mm), abs=1e-6)
        assert flashes[key].net == pad.net


def test_netlist_records_sit_in_the_ipc_d_356a_columns(fab):
    """IPC-D-356A (IPC, 1998) columns, checked on the text without the project's reader."""
    _, paths = fab
    lines = paths["netlist"].read_text().splitlines()
    assert lines[-1] == "999" and "P  UNITS CUST 1" in lines and "P  VER IPC-D-356A" in lines
    rec = next(line for line in lines if line[20:26].strip() == "C1" and line[27:31].strip() == "2")
    col = lambda a, b: rec[a - 1:b]   # noqa: E731  (1-based, inclusive)
    assert col(1, 3) == "327" and col(4, 17).strip() == "GND" and col(27, 27) == "-"
    assert col(39, 41) == "A01" and col(42, 42) == "X" and col(50, 50) == "Y"
    assert int(col(43, 49)) == 7000 and int(col(51, 57)) == 5000      # 0.001 mm units
    assert col(58, 62) == "X1000" and col(63, 67) == "Y1200" and col(68, 71) == "R000"
    assert col(73, 74) == "S0"
    th = next(line for line in lines if line[20:26].strip() == "J1" and line[27:31].strip() == "1")
    assert th[:3] == "317" and th[32:38] == "D1000P" and th[38:41] == "A00"
    bottom = next(line for line in lines if line[20:26].strip() == "U1")
    assert bottom[38:41] == "A04"                                    # bottom of 4 layers
    # the 22-character net name is an NNAME alias in the record, given whole in a P record
    alias = next(line for line in lines if line.startswith("P  NNAME"))
    assert alias.split()[2] == "A_VERY_LONG_NET_NAME_X"
    j2 = next(line for line in lines if line[20:26].strip() == "J1" and line[27:31].strip() == "2")
    assert j2[3:17].strip() == alias.split()[1]
    assert all(len(line) <= 80 for line in lines)
