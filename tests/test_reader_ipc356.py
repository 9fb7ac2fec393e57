"""The IPC-D-356(A) reader: the standard's columns, the corpus netlist, synth round trips, errors.

Standard: IPC-D-356A, "Bare Substrate Electrical Test Data Format", IPC, 1998. The column
numbers used below are the standard's (1-based, inclusive), as documented by two public
parsers (gerbv src/ipcd356a.c, pcb-tools gerber/ipc356.py) and seen in the corpus file.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from loopcheck.errors import InputError
from loopcheck.readers.ipc356 import read_ipc356
from loopcheck.synth import (SynthBoard, SynthComponent, SynthPad, SynthVia, write_fab)

CORPUS = Path(__file__).parents[1].parent / "shared" / "corpus"
CORPUS_NETLIST = CORPUS / "spec-examples" / "ipc-d-356.ipc"
INCH_UNIT_MM = 0.0001 * 25.4      # CUST 0: 0.0001 inch


def card(fields: dict[int, str]) -> str:
    """An 80-column record with each text placed from its 1-based start column."""
    cols = [" "] * 80
    for start, text in fields.items():
        cols[start - 1:start - 1 + len(text)] = list(text)
    return "".join(cols).rstrip()


def write(tmp_path: Path, *lines: str, name: str = "n.ipc") -> Path:
    p = tmp_path / name
    p.write_text("\n".join(lines) + "\n", encoding="ascii")
    return p


# ---------------------------------------------------------------------------------------------
# the standard's column layout


STANDARD_327 = {      # IPC-D-356A test record, columns as the standard places the fields
    1: "327",         # 1-3 record code: surface feature
    4: "VSW_NODE",    # 4-17 net name
    21: "Q12",        # 21-26 reference designator
    27: "-",          # 27 separator
    28: "G2",         # 28-31 pin
    32: "M",          # 32 mid-net point
    39: "A02",        # 39-41 access: layer 2
    42: "X-012345",   # 42 X, 43 sign, 44-49 value
    50: "Y+067890",   # 50 Y, 51 sign, 52-57 value
    58: "X0150",      # 58 X, 59-62 feature size along x
    63: "Y0075",      # 63 Y, 64-67 feature size along y
    68: "R090",       # 68 R, 69-71 rotation
    73: "S3",         # 73 S, 74 solder mask code
}


def test_fields_land_where_ipc_d_356a_puts_them(tmp_path):
    """IPC-D-356A (IPC, 1998) fixed columns: each field is read from its own columns."""
    rec = card(STANDARD_327)
    assert rec[38:41] == "A02" and rec[41] == "X" and rec[49] == "Y"   # the card is laid out right
    hole = card({1: "317", 4: "PGND", 21: "J3", 27: "-", 28: "14", 33: "D1016P", 39: "A00",
                 42: "X 000500", 50: "Y 001000", 58: "X1800", 63: "Y1800", 68: "R000", 73: "S0"})
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", rec, hole, "999"))
    a, b = n.points
    assert (a.record, a.net, a.ref, a.pin, a.midpoint) == ("327", "VSW_NODE", "Q12", "G2", True)
    assert a.access == 2 and a.hole_mm is None and a.plated is None
    assert (a.x_mm, a.y_mm) == pytest.approx((-12.345, 67.890))
    assert (a.width_mm, a.height_mm, a.rotation_deg, a.soldermask) == pytest.approx((0.150, 0.075, 90.0, 3))
    assert (b.record, b.net, b.ref, b.pin, b.midpoint) == ("317", "PGND", "J3", "14", False)
    assert (b.hole_mm, b.plated, b.access) == (pytest.approx(1.016), True, 0)
    assert (b.x_mm, b.y_mm) == pytest.approx((0.5, 1.0))
    assert n.layer_count == 2 and n.units == "mm" and n.ended


def test_a_field_one_column_off_is_not_read_as_the_standard_field(tmp_path):
    """The parser holds to the columns: X shifted one column right no longer parses."""
    shifted = dict(STANDARD_327)
    shifted[43] = shifted.pop(42)
    with pytest.raises(InputError, match="column 42"):
        read_ipc356(write(tmp_path, "P  UNITS CUST 1", card(shifted), "999"))
    # the pin is columns 28-31 only: a name written from column 29 loses nothing but is not
    # mistaken for the midpoint flag in column 32
    moved = dict(STANDARD_327)
    moved[29] = moved.pop(28)
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", card(moved), "999"))
    assert n.points[0].pin == "G2" and n.points[0].midpoint is True


def test_via_record_and_no_net(tmp_path):
    via = card({1: "317", 4: "N/C", 21: "VIA", 27: "-", 33: "D0300P", 39: "A00",
                42: "X+001000", 50: "Y+002000", 58: "X0600"})
    p = read_ipc356(write(tmp_path, "P  UNITS CUST 1", via, "999")).points[0]
    assert p.is_via and p.ref == "" and p.pin == "" and p.net == ""
    assert p.width_mm == pytest.approx(0.6) and p.height_mm == pytest.approx(0.6)   # round
    assert p.hole_mm == pytest.approx(0.3)


# ---------------------------------------------------------------------------------------------
# the corpus


@pytest.fixture(scope="module")
def corpus_netlist():
    if not CORPUS_NETLIST.exists():
        pytest.skip(f"corpus netlist not present at {CORPUS_NETLIST}")
    return read_ipc356(CORPUS_NETLIST)


@pytest.mark.corpus
def test_corpus_counts(corpus_netlist):
    n = corpus_netlist
    # lines 8-112 of the file are test records: 30 records 317 (14 vias, 16 through pads)
    # and 75 records 327 (counted with grep -c '^317' / '^327')
    assert len(n.points) == 105
    assert sum(p.record == "317" for p in n.points) == 30
    assert sum(p.record == "327" for p in n.points) == 75
    assert sum(p.is_via for p in n.points) == 14
    assert n.units == "inch" and n.ended
    assert n.layer_count is None          # only A00 and A01 appear: the layer count is unknown


@pytest.mark.corpus
def test_corpus_every_pin_number(corpus_netlist):
    pins: dict[str, set[str]] = {}
    for p in corpus_netlist.points:
        if not p.is_via:
            pins.setdefault(p.ref, set()).add(p.pin)
    assert pins["U2"] == {str(i) for i in range(1, 29)}
    assert pins["U1"] == {str(i) for i in range(1, 7)}
    assert pins["U3"] == pins["U4"] == {str(i) for i in range(1, 9)}
    assert pins["J1"] == {str(i) for i in range(1, 7)}
    assert pins["MIDI"] == {str(i) for i in range(1, 6)}
    assert pins["C1"] == pins["C2"] == {"+", "-"}
    assert pins["LED1"] == {"A", "C"}
    assert pins["NA"] == {"69"}
    assert sum(len(v) for v in pins.values()) == 105 - 14


@pytest.mark.corpus
def test_corpus_records_read_by_eye(corpus_netlist):
    by_line = {p.line: p for p in corpus_netlist.points}
    # line 22: "327N$3              C1    -+          A01X   9700Y  10402X1575Y 630R270"
    c1 = by_line[22]
    assert (c1.net, c1.ref, c1.pin, c1.access, c1.record) == ("N$3", "C1", "+", 1, "327")
    assert (c1.x_mm, c1.y_mm) == pytest.approx((9700 * INCH_UNIT_MM, 10402 * INCH_UNIT_MM))
    assert (c1.width_mm, c1.height_mm) == pytest.approx((1575 * INCH_UNIT_MM, 630 * INCH_UNIT_MM))
    assert c1.rotation_deg == 270
    # line 35: "317PIC_MCLR         J1    -1    D  35PA00X  16900Y   6400X 554Y 554R 90"
    j1 = by_line[35]
    assert (j1.net, j1.ref, j1.pin, j1.access, j1.plated) == ("PIC_MCLR", "J1", "1", 0, True)
    assert j1.hole_mm == pytest.approx(35 * INCH_UNIT_MM)
    assert j1.rotation_deg == 90
    # line 40: J1 pin 6 has a blank net field: no net
    assert (by_line[40].ref, by_line[40].pin, by_line[40].net) == ("J1", "6", "")
    # line 8, the first via
    v = by_line[8]
    assert v.is_via and v.net == "GND"
    assert (v.x_mm, v.y_mm) == pytest.approx((14900 * INCH_UNIT_MM, 1450 * INCH_UNIT_MM))
    # line 112: net alias NNAME1 resolved through "P  NNAME1 A_REALLY_LONG_NET_NAME"
    assert by_line[112].net == "A_REALLY_LONG_NET_NAME"
    assert corpus_netlist.aliases == {"NNAME1": "A_REALLY_LONG_NET_NAME"}


@pytest.mark.corpus
def test_corpus_suspect_hole_units_are_noted(corpus_netlist):
    # the vias' hole field reads 24 (0.0024 inch = 0.061 mm) under a 1.0 mm pad: flagged
    assert any("holes are under 0.1 mm" in note for note in corpus_netlist.notes)


# ---------------------------------------------------------------------------------------------
# units


def test_inch_and_mm_units(tmp_path):
    rec = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                42: "X+010000", 50: "Y-002540", 58: "X0500", 63: "Y0250"})
    inch = read_ipc356(write(tmp_path, "P  UNITS CUST 0", rec, "999", name="i.ipc")).points[0]
    mm = read_ipc356(write(tmp_path, "P  UNITS CUST 1", rec, "999", name="m.ipc")).points[0]
    si = read_ipc356(write(tmp_path, "P  UNITS SI", rec, "999", name="s.ipc")).points[0]
    assert (inch.x_mm, inch.y_mm) == pytest.approx((25.4, -6.4516))    # 1.0000 in, -0.2540 in
    assert (inch.width_mm, inch.height_mm) == pytest.approx((1.27, 0.635))
    assert (mm.x_mm, mm.y_mm, mm.width_mm) == pytest.approx((10.0, -2.54, 0.5))
    assert (si.x_mm, si.y_mm) == (mm.x_mm, mm.y_mm)


def test_cust2_rotation_in_radians_and_missing_units_noted(tmp_path):
    rec = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                42: "X+010000", 50: "Y+000000", 68: "R001"})
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 2", rec, "999"))
    assert n.points[0].rotation_deg == pytest.approx(math.degrees(1))
    n = read_ipc356(write(tmp_path, rec, "999", name="nounits.ipc"))
    assert n.units == "inch" and any("no UNITS record" in note for note in n.notes)


# ---------------------------------------------------------------------------------------------
# errors and tolerance


def test_short_record_is_an_error_with_its_line(tmp_path):
    full = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                 42: "X+010000", 50: "Y+000000"})
    p = write(tmp_path, "P  UNITS CUST 1", "C  comment", full, full[:53], "999")
    with pytest.raises(InputError) as err:
        read_ipc356(p)
    assert err.value.line == 4 and err.value.path == str(p)
    assert str(err.value).startswith(f"{p}:4: ")


def test_cut_size_field_is_an_error(tmp_path):
    full = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                 42: "X+010000", 50: "Y+000000", 58: "X0500"})
    with pytest.raises(InputError, match="feature X size") as err:
        read_ipc356(write(tmp_path, "P  UNITS CUST 1", full[:60], "999"))
    assert err.value.line == 2


def test_non_numeric_coordinate_is_an_error(tmp_path):
    bad = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                42: "X+01O000", 50: "Y+000000"})
    with pytest.raises(InputError, match="X location") as err:
        read_ipc356(write(tmp_path, "P  UNITS CUST 1", "", bad, "999"))
    assert err.value.line == 3


def test_unknown_units_is_an_error(tmp_path):
    with pytest.raises(InputError, match="unknown units") as err:
        read_ipc356(write(tmp_path, "C  x", "P  UNITS FURLONGS", "999"))
    assert err.value.line == 2


def test_not_a_netlist(tmp_path):
    with pytest.raises(InputError, match="not an IPC-D-356"):
        read_ipc356(write(tmp_path, "hello", "world"))
    with pytest.raises(InputError, match="cannot read"):
        read_ipc356(tmp_path / "missing.ipc")


def test_blank_lines_and_unknown_records_are_tolerated_with_notes(tmp_path):
    rec = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                42: "X+010000", 50: "Y+000000"})
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", "", rec, "379A B C", "   ", rec))
    assert len(n.points) == 1          # the second record repeats the first field for field
    notes = " | ".join(n.notes)
    assert "1 test records repeat an earlier record" in notes
    assert "2 blank lines" in notes and "'379'" in notes and "no 999 end record" in notes
    assert not n.ended


def test_panel_image_records_are_skipped(tmp_path):
    rec = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "1", 39: "A01",
                42: "X+010000", 50: "Y+000000"})
    other = card({1: "327", 4: "A", 21: "R1", 27: "-", 28: "2", 39: "A01",
                  42: "X+012000", 50: "Y+000000"})
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", rec, "P  IMAGE PANEL 0001", rec, rec,
                          "P  IMAGE PRIMARY", other, "999"))
    assert [p.line for p in n.points] == [2, 7]
    assert any("2 records of a non-primary IMAGE" in note for note in n.notes)


def test_fourteen_character_net_names_are_noted(tmp_path):
    rec = card({1: "327", 4: "ABCDEFGHIJKLMN", 21: "R1", 27: "-", 28: "1", 39: "A01",
                42: "X+010000", 50: "Y+000000"})
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", rec, "999"))
    assert n.points[0].net == "ABCDEFGHIJKLMN"
    assert any("14 columns" in note for note in n.notes)


def test_conductor_and_outline_records_with_continuations(tmp_path):
    n = read_ipc356(write(
        tmp_path, "P  UNITS CUST 1",
        "378PGND           L02 X0250 X1000Y1000 X5000 Y3000*X0Y0 X2000Y0",
        "078                   Y2000",
        "389BOARD_EDGE         X0100 X0Y0 X40000Y0 X40000Y30000",
        "089                   X0Y30000 X0Y0",
        "999"))
    (c,) = n.conductors
    assert (c.net, c.layer, c.width_mm) == ("PGND", 2, pytest.approx(0.25))
    assert c.paths == [[(1.0, 1.0), (5.0, 1.0), (5.0, 3.0)], [(0.0, 0.0), (2.0, 0.0), (2.0, 2.0)]]
    (o,) = n.outline
    assert o.kind == "BOARD_EDGE" and o.width_mm == pytest.approx(0.1)
    assert n.board_edge == [[(0, 0), (40, 0), (40, 30), (0, 30), (0, 0)]]
    assert n.layer_count == 2


def test_garbage_in_a_conductor_record_is_an_error(tmp_path):
    with pytest.raises(InputError, match="unreadable") as err:
        read_ipc356(write(tmp_path, "P  UNITS CUST 1", "378PGND           L02 X0250 X10Q0Y1000",
                          "999"))
    assert err.value.line == 2


# ---------------------------------------------------------------------------------------------
# round trips with synth


def synth_board() -> SynthBoard:
    pads_u1 = [SynthPad(str(i), f"N{i}" if i != 5 else "GND", 10 + 0.65 * (i - 1), 5.0, 0.4, 1.5)
               for i in range(1, 9)]
    return SynthBoard(
        "rt", 40.0, 30.0, 4,
        components=[
            SynthComponent("U1", "CTRL", pads_u1),
            SynthComponent("C12", "4u7", [SynthPad("1", "VIN_FILTERED_AFTER_FUSE", 5.0, 20.0, 1.0, 1.3),
                                           SynthPad("2", "GND", 5.0, 22.0, 1.0, 1.3)]),
            SynthComponent("Q1", "FET", [SynthPad("D", "SW", 30.0, 10.0, 4.0, 3.0, layer="bottom")]),
            SynthComponent("J1", "HDR", [SynthPad("1", "VIN_FILTERED_AFTER_FUSE", 35.0, 25.0, 1.8, 1.8,
                                                  hole_mm=1.0, shape="circle")]),
        ],
        vias=[SynthVia("GND", 12.0, 12.0, 0.3, 0.6), SynthVia("SW", 28.5, 10.0, 0.4, 0.8)],
    )


def expected_points(board: SynthBoard):
    out = {}
    for comp in board.components:
        for pad in comp.pads:
            out[(comp.ref, pad.pin)] = pad
    return out


@pytest.mark.parametrize("units,tol_mm", [("mm", 0.0005), ("inch", 0.0001 * 25.4 / 2 + 1e-9)])
def test_synth_netlist_reads_back_every_pin(tmp_path, units, tol_mm):
    board = synth_board()
    n = read_ipc356(write_fab(board, tmp_path, netlist_units=units)["netlist"])
    assert n.units == units and n.ended and n.layer_count == 4
    want = expected_points(board)
    got = {(p.ref, p.pin): p for p in n.points if not p.is_via}
    assert set(got) == set(want)
    for key, pad in want.items():
        p = got[key]
        assert p.net == pad.net     # long names come back whole through the NNAME alias
        assert abs(p.x_mm - pad.x_mm) <= tol_mm and abs(p.y_mm - pad.y_mm) <= tol_mm
        assert abs(p.width_mm - pad.w_mm) <= tol_mm and abs(p.height_mm - pad.h_mm) <= tol_mm
        if pad.hole_mm is not None:
            assert p.access == 0 and p.plated and abs(p.hole_mm - pad.hole_mm) <= tol_mm
        else:
            assert p.access == (1 if pad.layer == "top" else 4) and p.hole_mm is None
    vias = sorted((p.x_mm, p.y_mm, p.net) for p in n.points if p.is_via)
    assert [v[2] for v in vias] == ["GND", "SW"]
    for (x, y, _), want_xy in zip(vias, [(12.0, 12.0), (28.5, 10.0)]):
        assert (x, y) == pytest.approx(want_xy, abs=tol_mm)
    for got_xy, want_xy in zip(n.board_edge[0], [(0, 0), (40, 0), (40, 30), (0, 30), (0, 0)]):
        assert got_xy == pytest.approx(want_xy, abs=tol_mm)
    assert len(n.board_edge[0]) == 5
    assert n.notes == []
    # every record fits the standard's 80 columns
    assert max(len(line) for line in (tmp_path / "rt-netlist.ipc").read_text().splitlines()) <= 80


def test_synth_offset_and_mirror(tmp_path):
    board = synth_board()
    n = read_ipc356(write_fab(board, tmp_path, netlist_offset_mm=(1.5, -2.0),
                              netlist_mirror=True)["netlist"])
    p = next(p for p in n.points if (p.ref, p.pin) == ("U1", "3"))
    assert (p.x_mm, p.y_mm) == pytest.approx((-(10 + 1.3) + 1.5, 5.0 - 2.0))


def test_synth_round_trip_against_gerber_pin_flashes(tmp_path):
    """Pad positions from the netlist match the %TO.P% flashes of the copper layers."""
    gerber = pytest.importorskip("loopcheck.readers.gerber")
    board = synth_board()
    paths = write_fab(board, tmp_path)
    n = read_ipc356(paths["netlist"])
    flashes = {}
    for key in ("L1", "L4"):
        for f in gerber.read_gerber(paths[key]).pin_flashes:
            flashes[(f.ref, f.pin)] = f
    for p in n.points:
        if p.is_via:
            continue
        f = flashes[(p.ref, p.pin)]
        assert f.net == p.net
        assert (f.x_mm, f.y_mm) == pytest.approx((p.x_mm, p.y_mm), abs=0.0005)
    assert len(flashes) == len([p for p in n.points if not p.is_via])


def test_synth_conductor_records_read_back(tmp_path):
    from loopcheck.synth import SynthTrace
    board = synth_board()
    long_path = [(1.0 + i, 2.0 + (i % 2)) for i in range(20)]      # wraps onto 078 lines
    board.traces = [SynthTrace("SW", 4, 1.25, [(30.0, 10.0), (28.5, 10.0)]),
                    SynthTrace("VIN_FILTERED_AFTER_FUSE", 1, 0.5, long_path)]
    path = write_fab(board, tmp_path, netlist_conductors=True)["netlist"]
    text = path.read_text()
    assert "\n078" in text
    n = read_ipc356(path)
    a, b = n.conductors
    assert (a.net, a.layer, a.width_mm) == ("SW", 4, pytest.approx(1.25))
    assert a.paths == [[pytest.approx((30.0, 10.0)), pytest.approx((28.5, 10.0))]]
    assert b.net == "VIN_FILTERED_AFTER_FUSE" and b.layer == 1
    assert len(b.paths) == 1 and len(b.paths[0]) == 20
    for got, want in zip(b.paths[0], long_path):
        assert got == pytest.approx(want)


def test_outline_without_a_size_word_is_read_when_only_that_closes(tmp_path):
    # points-only 389 data, as pcb-tools and gerbonara write and read it
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1",
                          "389BOARD_EDGE          X0Y0 X40000Y0 X40000Y30000 X0Y30000 X0Y0", "999"))
    assert n.board_edge == [[(0, 0), (40, 0), (40, 30), (0, 30), (0, 0)]]
    assert n.outline[0].width_mm is None
    assert any("without a line-size word" in note for note in n.notes)


# ---------------------------------------------------------------------------------------------
# fields a writer may leave blank (IPC-D-356A, IPC, 1998: Y size of a round feature, rotation,
# hole size, plating, access code and solder mask are optional), one hand-written case each

BASE_327 = {1: "327", 4: "SW", 21: "U1", 27: "-", 28: "1", 39: "A01",
            42: "X+010000", 50: "Y+020000"}


def one(tmp_path, extra: dict[int, str], *head: str):
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", *head, card({**BASE_327, **extra}), "999"))
    assert len(n.points) == 1
    return n, n.points[0]


def test_round_feature_with_a_blank_y_size(tmp_path):
    n, p = one(tmp_path, {58: "X0110", 63: "Y    ", 68: "R090"})
    assert (p.width_mm, p.height_mm, p.rotation_deg) == pytest.approx((0.110, 0.110, 90.0))
    assert any("1 blank" in note and "round" in note for note in n.notes)


def test_round_feature_with_a_zero_y_size(tmp_path):
    n, p = one(tmp_path, {58: "X0110", 63: "Y0000", 68: "R000"})
    assert (p.width_mm, p.height_mm) == pytest.approx((0.110, 0.110))
    assert any("1 zero" in note for note in n.notes)


def test_y_letter_at_the_end_of_the_line_is_a_blank_y_size(tmp_path):
    _, p = one(tmp_path, {58: "X0110", 63: "Y"})
    assert (p.width_mm, p.height_mm) == pytest.approx((0.110, 0.110))


def test_blank_x_size_keeps_the_size_unknown(tmp_path):
    _, p = one(tmp_path, {58: "X    ", 63: "Y    ", 68: "R   "})
    assert p.width_mm is None and p.height_mm is None and p.rotation_deg == 0.0


def test_blank_rotation(tmp_path):
    _, p = one(tmp_path, {58: "X0200", 63: "Y0100", 68: "R   ", 73: "S0"})
    assert p.rotation_deg == 0.0 and p.soldermask == 0 and p.height_mm == pytest.approx(0.1)


def test_blank_hole_size_and_blank_plating(tmp_path):
    n, p = one(tmp_path, {1: "317", 33: "D    P", 39: "A00", 58: "X0600"})
    assert p.hole_mm is None and p.plated is True and p.access == 0
    assert any("without a diameter" in note for note in n.notes)
    _, q = one(tmp_path, {1: "317", 33: "D0300 ", 39: "A00", 58: "X0600"})
    assert q.hole_mm == pytest.approx(0.3) and q.plated is None


def test_blank_access_code_after_its_letter(tmp_path):
    n, p = one(tmp_path, {39: "A  "})
    assert p.access == 1
    assert any("without an access code: read as top (01)" in note for note in n.notes)


def test_blank_access_code_notes_are_counted_not_repeated(tmp_path):
    recs = [card({**BASE_327, 39: "   ", 42: f"X+{10000 + 100 * k:06d}"}) for k in range(50)]
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", *recs, "999"))
    assert len(n.points) == 50
    assert sum("access code" in note for note in n.notes) == 1


def test_solder_mask_blank_column_72_and_unreadable(tmp_path):
    _, p = one(tmp_path, {58: "X0200", 63: "Y0100", 68: "R000", 73: "S "})
    assert p.soldermask is None
    n, q = one(tmp_path, {58: "X0200", 63: "Y0100", 68: "R000", 72: "S2"})
    assert q.soldermask == 2 and any("column 72" in note for note in n.notes)
    n, r = one(tmp_path, {58: "X0200", 63: "Y0000", 68: "R000", 72: "S-886273357"})
    assert r.soldermask is None and r.height_mm == pytest.approx(0.2)
    assert any("S-886273357" in note for note in n.notes)


def test_digits_cut_by_the_end_of_the_line_are_still_an_error(tmp_path):
    with pytest.raises(InputError, match="feature Y size") as err:
        one(tmp_path, {58: "X0110", 63: "Y01"})
    assert err.value.line == 2


# ---------------------------------------------------------------------------------------------
# long net names: aliases in the forms writers use


def _named(tmp_path, field: str, *head: str):
    n, p = one(tmp_path, {4: field}, *head)
    return n, p.net


def test_alias_parameter_record_whole_token(tmp_path):
    _, net = _named(tmp_path, "NNAME1", "P  NNAME1     /POWER STAGE/SWITCH NODE")
    assert net == "/POWER STAGE/SWITCH NODE"


def test_alias_short_token_and_spaced_form(tmp_path):
    _, net = _named(tmp_path, "M0000", "P  NNAMEM0000 /CONVERTER/BUCK_SW_LONG")
    assert net == "/CONVERTER/BUCK_SW_LONG"
    _, net = _named(tmp_path, "NNAME001", "P  NNAME 001 A_VERY_LONG_NET_NAME")
    assert net == "A_VERY_LONG_NET_NAME"


def test_alias_from_a_comment_line(tmp_path):
    n, net = _named(tmp_path, "m0000", "C  NNAMEm0000 UNNAMED_2_VERY_LONG_NET")
    assert net == "UNNAMED_2_VERY_LONG_NET"
    assert any("comment lines" in note for note in n.notes)


def test_short_token_is_not_taken_when_the_whole_token_is_used(tmp_path):
    # "1" is a net of its own when the file writes its alias as NNAME1
    recs = [card({**BASE_327, 4: "NNAME1"}), card({**BASE_327, 4: "1", 28: "2"})]
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", "P  NNAME1 LONG_NAME_OF_NET_ONE", *recs, "999"))
    assert [p.net for p in n.points] == ["LONG_NAME_OF_NET_ONE", "1"]


def test_two_aliases_with_the_same_full_name_stay_two_nets(tmp_path):
    recs = [card({**BASE_327, 4: "NNAME1"}), card({**BASE_327, 4: "NNAME2", 28: "2"})]
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", "P  NNAME1 SAME_LONG_TAIL_NAME",
                          "P  NNAME2 SAME_LONG_TAIL_NAME", *recs, "999"))
    assert len(n.nets) == 2
    assert sorted(n.nets) == ["SAME_LONG_TAIL_NAME [NNAME1]", "SAME_LONG_TAIL_NAME [NNAME2]"]
    assert any("kept as its own net" in note for note in n.notes)


def test_full_width_names_are_listed_for_restoring(tmp_path):
    _, net = _named(tmp_path, "RADIO/PA_BOOST")
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", card({**BASE_327, 4: "RADIO/PA_BOOST"}), "999"))
    assert n.maybe_cut_names == ["RADIO/PA_BOOST"]
    n = read_ipc356(write(tmp_path, "P  UNITS CUST 1", card({**BASE_327, 4: "O/PA_BOOST#1"}), "999"))
    assert n.maybe_cut_names == ["O/PA_BOOST#1"]


# ---------------------------------------------------------------------------------------------
# the real boards (KiCad 7 to 10): every record, every pin

REALBOARDS = CORPUS.parent / "realboards"


@pytest.mark.parametrize("board", ["bitaxe-ultra-acs", "led-boost-motionlight",
                                   "underglow2-tps62172", "usbpd-hotplate-kicad10"])
def test_realboard_netlists_read_every_record_and_pin(board):
    path = REALBOARDS / board / "netlist.ipc"
    if not path.exists():
        pytest.skip(f"real board netlist not present at {path}")
    lines = path.read_text(encoding="latin-1").splitlines()
    records = [(k + 1, ln) for k, ln in enumerate(lines) if ln[:3] in ("317", "327", "367")]
    n = read_ipc356(path)
    assert [p.line for p in n.points] == [k for k, _ in records]
    for (_, ln), p in zip(records, n.points):
        assert p.pin == ln[27:31].strip() or p.is_via
        assert p.ref == ("" if p.is_via else ln[20:26].strip())
        assert p.width_mm and p.height_mm            # round features read as Y = X
    # a round via: X0315Y0000 is 0.0315 inch both ways
    vias = [p for p in n.points if p.is_via]
    assert vias and all(p.height_mm == p.width_mm for p in vias)
    assert all(len(p.net) <= 14 for p in n.points)
