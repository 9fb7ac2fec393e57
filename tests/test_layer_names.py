"""Copper layer order from file names that the common conventions do not cover: numbered
suffixes, short extensions, two-letter names, inner layers named by function (ordered by the
netlist's access codes where it has pads on them, else the most likely order, stated)."""

from __future__ import annotations

from pathlib import Path

import pytest

from loopcheck.load import load_board
from loopcheck.project import load_project
from loopcheck.readers.discover import discover
from loopcheck.readers.layer_names import copper_position


def gerber(*flashes: tuple[float, float]) -> str:
    body = "".join(f"X{round(x * 1e6)}Y{round(y * 1e6)}D03*\n" for x, y in flashes)
    return f"%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,2.0*%\nD10*\n{body}M02*\n"


def make(folder: Path, names: list[str], text: str | None = None) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for n in names:
        (folder / n).write_text(text or gerber((5, 5)))
    return folder


def stack(folder: Path) -> list[str]:
    with discover(folder) as fab:
        return [fab.relname(p) for p, _ in fab.copper]


@pytest.mark.parametrize("names", [
    ["X_L01_Top.gbr"] + [f"X_L{i:02d}.gbr" for i in range(2, 12)] + ["X_L12_Bottom.gbr"],
    ["X_L01_Top.gdo"] + [f"X_L{i:02d}.gdo" for i in range(2, 12)] + ["X_L12_Bottom.gdo"],   # once refused: "gap"
    ["b-TOP.gbr", "b-LAYER_1.gbr", "b-LAYER_2.gbr", "b-BOTTOM.gbr"],     # LAYER_n: the n-th inner layer
    ["b.gtl", "b.gl2", "b.gl3", "b.gbl"], ["b.top", "b.l2", "b.l3", "b.bot"], ["b.top", "b.in1", "b.in2", "b.bot"],
    ["b.cmp", "b.ly2", "b.ly3", "b.sol"], ["b.gtl", "b.gp1", "b.gp2", "b.gbl"], ["b.tl", "b.bl"], ["TL.gbr", "BL.gbr"],
    ["top.art", "bot.art"], ["b.cmp", "b.sol"],
])
def test_numbered_and_short_names_give_the_stack(tmp_path, names):
    # written in stack order; the folder listing order must not matter
    assert stack(make(tmp_path / "b", list(reversed(names)))) == names


def test_inner_layers_named_by_function_most_likely_order(tmp_path):
    folder = make(tmp_path / "b", ["b_TOP.gbr", "b_PWR.gbr", "b_GND.gbr", "b_BOTTOM.gbr", "b_SILK_TOP.gbr"])
    with discover(folder) as fab:
        assert [fab.relname(p) for p, _ in fab.copper] == ["b_TOP.gbr", "b_GND.gbr", "b_PWR.gbr", "b_BOTTOM.gbr"]
        note = next(n for n in fab.notes if n.startswith("inner copper layers named by function"))
    assert '"b_GND.gbr" = "copper:2"' in note and '"b_PWR.gbr" = "copper:3"' in note
    # a number in the function name orders first
    assert stack(make(tmp_path / "c", ["c_TOP.gbr", "c_GND3.gbr", "c_PWR2.gbr", "c_BOTTOM.gbr"])) == \
        ["c_TOP.gbr", "c_PWR2.gbr", "c_GND3.gbr", "c_BOTTOM.gbr"]


def netlist(records: list[tuple[str, str, int, float, float]]) -> str:
    """IPC-D-356A 327 records (net, ref, access, x mm, y mm), UNITS CUST 1 (mm)."""
    lines = ["P  JOB test", "P  UNITS CUST 1"]
    for net, ref, access, x, y in records:
        cols = [" "] * 80

        def put(col: int, text: str) -> None:     # 1-based columns, as the standard counts them
            cols[col - 1: col - 1 + len(text)] = list(text)
        put(1, "327"), put(4, net), put(21, ref), put(27, "-"), put(28, "1")
        put(39, f"A{access:02d}"), put(42, f"X{round(x * 1000):+07d}"), put(50, f"Y{round(y * 1000):+07d}")
        put(58, "X0500Y0500R000"), put(73, "S0")
        lines.append("".join(cols).rstrip())
    return "\n".join(lines + ["999"]) + "\n"


def test_access_codes_order_inner_layers_when_names_are_silent(tmp_path):
    folder = tmp_path / "b"
    folder.mkdir()
    (folder / "b_TOP.gbr").write_text(gerber((5, 5), (10, 10), (20, 20)))
    (folder / "b_BOTTOM.gbr").write_text(gerber((5, 5), (10, 10), (20, 20)))
    (folder / "b_GND.gbr").write_text(gerber((10, 10)))      # the likely order puts GND at L2 ...
    (folder / "b_PWR.gbr").write_text(gerber((20, 20)))
    # ... but the netlist has an L2 pad on the PWR file's copper and an L3 pad on GND's
    (folder / "b.ipc").write_text(netlist([("VCC", "U1", 2, 20, 20), ("GND", "U2", 3, 10, 10),
                                           ("X", "U3", 1, 5, 5)]))
    b = load_board(load_project(folder))
    assert [layer.file for layer in b.layers] == ["b_TOP.gbr", "b_PWR.gbr", "b_GND.gbr", "b_BOTTOM.gbr"]
    assert any("access codes" in a and "b_PWR.gbr = L2" in a for a in b.assumptions)
    assert not any(a.startswith("inner copper layers named by function") for a in b.assumptions)


def test_names_that_are_not_copper():
    for name in ("b_SILK_TOP.gbr", "b-Edge_Cuts.gbr", "b_GND_paste.gbr", "power-art.gko", "b.fab.gbr"):
        assert copper_position(name) is None
    assert copper_position("b_GND2.gbr") == ("function", 2, 0)
    assert copper_position("b.sol") == ("bottom",)
