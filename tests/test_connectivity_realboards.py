"""The real boards in ../shared/realboards were built and work: no connectivity error on any.

Each had a false one before (unplated holes of connectors and mounting holes with no pin number
as misaligned pads, and as shorts where their netlist size reached planes of two nets; a push
button's twin pins as an open; a printed antenna's feed and ground as a short).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from loopcheck.connectivity import _optional, check_connectivity
from loopcheck.load import load_board
from loopcheck.project import load_project

REALBOARDS = Path(__file__).parents[1].parent / "shared" / "realboards"
BOARDS = sorted(p.name for p in REALBOARDS.iterdir() if (p / "expected.toml").is_file()) if REALBOARDS.is_dir() else []


@pytest.mark.skipif(not BOARDS, reason="../shared/realboards is absent")
@pytest.mark.parametrize("name", BOARDS)
def test_real_board_has_no_connectivity_error(name):
    b = load_board(load_project(REALBOARDS / name))
    r = check_connectivity(b)
    assert r.checked and r.aligned
    assert [f for f in r.findings if f.severity == "error"] == []
    # every pad that needs copper is on copper; only unplated holes and unnumbered pads are not
    off = [p for p, g in zip(b.pads, r.pad_group) if g is None]
    assert all(_optional(p) for p in off), [p.terminal for p in off if not _optional(p)]
    assert all(not p.plated or not p.pin for p in off)
    if name == "usbpd-hotplate-kicad10":
        assert any(n.startswith("AE1's own copper joins GND and NET-(AE1-A)") for n in r.notes)
        ae = b.terminals["AE1.1"]
        assert r.copper_group_of_pad(ae) != r.copper_group_of_pad(b.terminals["AE1.2"])
