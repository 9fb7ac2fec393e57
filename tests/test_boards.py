"""Several boards in one folder of fab outputs: found, listed, picked with --board, taken each in
turn by inspect and check (the worst exit code), never mixed; machine reports one file per board."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from loopcheck.cli import main
from loopcheck.commands.boards import output_for
from loopcheck.load import load_board
from loopcheck.project import load_project
from loopcheck.readers.discover import SeveralBoards, list_boards
from loopcheck.synth import write_fab
from synth_fixtures import buck_board, write_buck

CORPUS = Path(__file__).parents[1].parent / "shared" / "corpus"


def side_by_side(folder: Path) -> Path:
    """Two boards by stem in one folder: alpha-* (clean) and beta-* (the output trace cut)."""
    write_fab(dataclasses.replace(buck_board("clean"), name="alpha"), folder)
    write_fab(dataclasses.replace(buck_board("cut"), name="beta"), folder)
    return folder


def in_subfolders(folder: Path) -> Path:
    write_buck(folder / "rev-a")
    write_buck(folder / "rev-b", "cut")
    return folder


def test_boards_by_stem_and_by_subfolder(tmp_path):
    assert list_boards(side_by_side(tmp_path / "s")) == ["alpha", "beta"]
    assert list_boards(in_subfolders(tmp_path / "f")) == ["rev-a", "rev-b"]
    assert list_boards(write_buck(tmp_path / "one")["L1"].parent) == []


def test_one_board_never_takes_the_others_files(tmp_path):
    folder = side_by_side(tmp_path / "s")
    with pytest.raises(SeveralBoards):
        load_board(load_project(folder))
    b = load_board(load_project(folder), board="beta")
    assert {layer.file for layer in b.layers} == {"beta-copper-L1-top.gbr", "beta-copper-L2-bottom.gbr"}
    assert b.drill_files == ["beta-plated.drl"] and b.netlist_file == "beta-netlist.ipc"
    assert b.name.endswith("/beta")


def test_inspect_takes_each_board_in_turn(tmp_path):
    folder = side_by_side(tmp_path / "s")
    res = CliRunner().invoke(main, ["inspect", str(folder)])
    assert "=== board alpha (1 of 2) ===" in res.output and "=== board beta (2 of 2) ===" in res.output
    # alpha is whole, beta has its output trace cut (a connectivity error): the worst wins
    assert res.exit_code == 1
    assert CliRunner().invoke(main, ["inspect", str(folder), "--board", "alpha"]).exit_code == 0
    assert CliRunner().invoke(main, ["inspect", str(folder), "--board", "beta"]).exit_code == 1


def test_inspect_json_one_file_per_board(tmp_path):
    folder = in_subfolders(tmp_path / "f")
    out = tmp_path / "report.json"
    res = CliRunner().invoke(main, ["inspect", str(folder), "--format", "json", "--output", str(out)])
    assert res.exit_code == 1 and res.stdout == ""
    a = json.loads((tmp_path / "report-rev-a.json").read_text())
    b = json.loads((tmp_path / "report-rev-b.json").read_text())
    assert a["board"].endswith("rev-a") and b["board"].endswith("rev-b")
    assert not out.exists()


def test_check_each_board_and_one_report_file_each(tmp_path):
    folder = side_by_side(tmp_path / "s")
    res = CliRunner().invoke(main, ["check", str(folder), "-q", "--format", "json", "--output",
                                    str(tmp_path / "r.json"), "--format", "text"])
    assert res.exit_code in (0, 1)
    assert "=== board alpha" in res.output and "=== board beta" in res.output
    for name in ("alpha", "beta"):
        assert json.loads((tmp_path / f"r-{name}.json").read_text())
    one = CliRunner().invoke(main, ["check", str(folder), "-q", "--board", "alpha", "--format", "json"])
    assert json.loads(one.stdout)


def test_output_name_gets_the_board_before_the_suffix():
    assert output_for("out/report.sarif", "driver") == "out/report-driver.sarif"
    assert output_for("report.json", "a/b c") == "report-a_b_c.json"
    assert output_for("report.json", None) == "report.json"


@pytest.mark.corpus
@pytest.mark.parametrize("folder,names", [("geda", ["controller", "driver"]),
                                          ("kicad-x2-tests", ["nox2ap", "nox2noap", "x2ap", "x2noap"]),
                                          ("diptrace", ["keyboard", "mainboard", "panel"])])
def test_corpus_folders_of_several_boards_inspect_each(folder, names):
    if not (CORPUS / folder).is_dir():
        pytest.skip(f"../shared/corpus/{folder} is absent")
    res = CliRunner().invoke(main, ["inspect", str(CORPUS / folder)])
    assert res.exit_code in (0, 1), res.output
    for i, name in enumerate(names, start=1):
        assert f"=== board {name} ({i} of {len(names)}) ===" in res.output


def test_stages_and_diff_take_board(tmp_path):
    folder = side_by_side(tmp_path / "s")
    res = CliRunner().invoke(main, ["stages", str(folder), "--board", "alpha"])
    assert res.exit_code == 0, res.output
    res = CliRunner().invoke(main, ["diff", str(folder), str(folder), "--board", "beta", "-q"])
    assert res.exit_code == 0, res.output
    # without a choice, the stages command names the boards and the option (one line, exit 2)
    res = CliRunner().invoke(main, ["stages", str(folder)])
    assert res.exit_code == 2 and "--board" in res.output and "alpha, beta" in res.output
