"""Writer habits for net names and round features, end to end: the netlist written by synth.py
with each habit switched on, read back with the copper (Gerber X2 net names) into a Board.

The habits are those of real writers (see ../shared/realboards: names cut to their last 14
characters, round features with a zero Y size, solder mask codes from column 72) and of the
IPC-D-356A standard (IPC, 1998: NNAME aliases, blank Y size for round features).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from loopcheck.connectivity import check_connectivity
from loopcheck.load import load_board
from loopcheck.netnames import cut_form, may_be_cut_from
from loopcheck.project import load_project
from loopcheck.readers.ipc356 import read_ipc356
from loopcheck.synth import write_fab
from synth_fixtures import buck_board

REALBOARDS = Path(__file__).parents[1].parent / "shared" / "realboards"

# two different nets whose names end in the same 14 characters ("VERTER/BUCK_SW")
LONG_SW = "/Stage A/Converter/BUCK_SW"
LONG_OUT = "/Stage B/Converter/BUCK_SW"


def long_named_buck():
    board = buck_board()
    rename = {"SW": LONG_SW, "OUT": LONG_OUT}
    for comp in board.components:
        for pad in comp.pads:
            pad.net = rename.get(pad.net, pad.net)
    for t in board.traces:
        t.net = rename.get(t.net, t.net)
    return board


def load(folder: Path):
    board = load_board(load_project(folder))
    return board, check_connectivity(board)


def test_cut_form_is_the_writers_rule():
    assert cut_form("/Radio/PA_BOOST") == "RADIO/PA_BOOST"
    assert cut_form("/Digital Input/DI_1") == "TAL?INPUT/DI_1"
    assert may_be_cut_from("RADIO/PA_BOOST", "/Radio/PA_BOOST")
    assert may_be_cut_from("ER/BUCK_SW#1", LONG_OUT)
    assert not may_be_cut_from("RADIO/PA_BOOST", "RADIO/PA_BOOST")      # not longer: not cut
    assert not may_be_cut_from("RADIO/PA_BOOST", "/Radio/PA_BOOST_PA")


@pytest.mark.parametrize("style", ["alias", "alias-short", "alias-comment"])
def test_aliases_give_the_full_names(tmp_path, style):
    paths = write_fab(long_named_buck(), tmp_path, netlist_long_names=style)
    text = paths["netlist"].read_text()
    assert LONG_SW not in [ln[3:17].strip() for ln in text.splitlines() if ln[:3] == "327"]
    board, result = load(tmp_path)
    assert {LONG_SW, LONG_OUT} <= set(board.nets)
    assert result.checked and not result.findings, [f.message for f in result.findings]
    assert board.net_full_names == {}


def test_cut_names_that_collide_are_kept_apart_by_the_x2_names(tmp_path):
    paths = write_fab(long_named_buck(), tmp_path, netlist_long_names="cut")
    netlist = read_ipc356(paths["netlist"])
    assert "VERTER/BUCK_SW" in netlist.nets                # the writer merged the two nets
    assert {p.ref for p in netlist.nets["VERTER/BUCK_SW"]} >= {"L1", "C2", "Q1"}
    board, result = load(tmp_path)
    assert "VERTER/BUCK_SW" not in board.nets
    assert {p.terminal for p in board.nets[LONG_SW]} == {"Q1.2", "D1.1", "L1.1"}
    assert {p.terminal for p in board.nets[LONG_OUT]} == {"L1.2", "C2.1"}
    said = [a for a in board.assumptions if "kept apart" in a]
    assert len(said) == 1 and "'VERTER/BUCK_SW'" in said[0]
    assert result.checked and not result.findings, [f.message for f in result.findings]


def test_unique_cut_names_are_restored_and_keep_their_netlist_names(tmp_path):
    write_fab(long_named_buck(), tmp_path, netlist_long_names="cut-unique")
    board, result = load(tmp_path)
    # the netlist's names stay the nets' names (what stages and reports show) ...
    assert {"VERTER/BUCK_SW", "ER/BUCK_SW#1"} <= set(board.nets)
    # ... and the full names are kept beside them, said once
    assert board.net_full_names == {"VERTER/BUCK_SW": LONG_SW, "ER/BUCK_SW#1": LONG_OUT}
    said = [a for a in board.assumptions if "restored from the copper" in a]
    assert len(said) == 1
    assert result.checked and not result.findings, [f.message for f in result.findings]


def test_cut_names_without_x2_net_names_are_left_as_written(tmp_path):
    paths = write_fab(long_named_buck(), tmp_path, netlist_long_names="cut-unique")
    for key in ("L1", "L2"):
        p = paths[key]
        p.write_text("".join(ln for ln in p.read_text().splitlines(keepends=True)
                             if not ln.startswith("%TO.N,")))
    board, _ = load(tmp_path)
    assert board.net_full_names == {}
    assert "VERTER/BUCK_SW" in board.nets
    assert not any("restored" in a for a in board.assumptions)


@pytest.mark.parametrize("round_y", ["blank", "zero"])
def test_round_features_without_a_y_size(tmp_path, round_y):
    paths = write_fab(buck_board(), tmp_path, netlist_round_y=round_y)
    lines = [ln for ln in paths["netlist"].read_text().splitlines() if ln[:3] == "317"]
    assert lines and all(ln[62:67] == ("Y    " if round_y == "blank" else "Y0000") for ln in lines)
    board, result = load(tmp_path)
    through = [p for p in board.pads if p.hole_mm]
    assert through and all(p.width_mm == p.height_mm and p.width_mm > 0 for p in through)
    assert result.checked and not result.findings, [f.message for f in result.findings]


def test_realboard_cut_names_restored_from_x2_and_stage_names_unchanged():
    folder = REALBOARDS / "underglow2-tps62172"
    if not folder.exists():
        pytest.skip(f"real boards not present at {REALBOARDS}")
    board = load_board(load_project(folder))
    assert board.net_full_names["RADIO/PA_BOOST"] == "/Radio/PA_BOOST"
    assert board.net_full_names["TAL?INPUT/DI_1"] == "/Digital Input/DI_1"
    assert len(board.net_full_names) >= 90
    # the netlist's names (as expected.toml spells them) stay the nets' names
    assert {"/POWER/SW", "/POWER/VIN", "RADIO/PA_BOOST", "IO/PA_BOOST_PA"} <= set(board.nets)
    assert sum("restored from the copper" in a for a in board.assumptions) == 1


@pytest.mark.parametrize("name", ["bitaxe-ultra-acs", "led-boost-motionlight", "underglow2-tps62172",
                                  "usbpd-hotplate-kicad10"])
def test_realboard_names_filling_the_field_are_restored_or_were_never_cut(name):
    folder = REALBOARDS / name
    if not folder.exists():
        pytest.skip(f"real boards not present at {REALBOARDS}")
    board = load_board(load_project(folder))
    netlist = read_ipc356(folder / "netlist.ipc")
    x2 = set().union(*(set(layer.net_copper) for layer in board.layers))
    assert netlist.maybe_cut_names and x2
    for cut in netlist.maybe_cut_names:
        if cut in board.net_full_names:
            full = board.net_full_names[cut]
            assert full in x2 and len(full) > 14 and cut_form(full) == cut
        else:                     # a name of exactly 14 characters: the copper spells it so
            assert any(x.upper() == cut for x in x2), cut
    assert set(board.nets) >= set(netlist.nets)          # no net renamed, none merged
