"""Stage detection on the real boards in ../shared/realboards against their expected.toml (the
stages their own schematics show): topology, switch node, input, output and ground of every
stage, no stage at a [[not_a_stage]] part; and the same with every net name made meaningless
(names are evidence, never required). Skips, saying why, when the folder is absent."""

from __future__ import annotations

import dataclasses
import tomllib
from pathlib import Path

import pytest

from loopcheck.load import load_board
from loopcheck.project import load_project
from loopcheck.stages import find_stages

ROOT = Path(__file__).resolve().parents[2] / "shared" / "realboards"
BOARDS = sorted(p.name for p in ROOT.iterdir() if (p / "expected.toml").is_file()) if ROOT.is_dir() else []


@pytest.fixture(scope="module")
def loaded():
    cache = {}

    def get(name):
        if name not in cache:
            project = load_project(ROOT / name)
            cache[name] = (project, load_board(project))
        return cache[name]
    return get


def _meaningless(board):
    names = sorted({p.net for p in board.pads})
    rename = {n: (f"N{i:04d}" if n else n) for i, n in enumerate(names)}
    return dataclasses.replace(board, pads=[dataclasses.replace(p, net=rename[p.net]) for p in board.pads]), rename


@pytest.mark.skipif(not BOARDS, reason=f"no real boards at {ROOT}")
@pytest.mark.parametrize("name", BOARDS or ["none"])
@pytest.mark.parametrize("names", ["as designed", "meaningless"])
def test_real_board_stages(loaded, name, names):
    expected = tomllib.loads((ROOT / name / "expected.toml").read_text())
    project, board = loaded(name)
    rename = {n: n for n in board.nets}
    if names == "meaningless":
        board, rename = _meaningless(board)
    stages = find_stages(board, project).stages
    for e in expected.get("stage", []):
        st = next((s for s in stages if s.switch_node == rename[e["switch_node"]]), None)
        assert st is not None, f"{e['switch_node']} not found"
        assert (st.topology, st.input_net, st.output_net, st.ground_net) == (
            e["topology"], rename[e["input"]], rename[e["output"]], rename[e["ground"]]), e["switch_node"]
        assert st.role("inductor").ref == e["inductor"]
    measured = [s for s in stages if not s.not_measured]
    assert len(measured) == len(expected.get("stage", []))
    for bad in expected.get("not_a_stage", []):
        for s in stages:
            assert not set(bad["refs"]) & {r.ref for r in s.roles if r.name in ("switch", "inductor")}, bad["why"]
