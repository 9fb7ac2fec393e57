"""``loopcheck inspect`` on synthesized boards: the JSON contract, the findings, the exit codes."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import jsonschema
import pytest
from click.testing import CliRunner

from loopcheck.cli import main
from synth_fixtures import buck_board, write_buck

from loopcheck.synth import SynthPour, write_fab
from corpus_maps import CORPUS_MAPPINGS

REPO = Path(__file__).parents[1]


SCHEMA = json.loads((REPO / "loopcheck" / "schemas" / "inspect.schema.json").read_text())


def run_json(target) -> tuple[int, dict]:
    res = CliRunner().invoke(main, ["inspect", str(target), "--format", "json"])
    assert res.exception is None or isinstance(res.exception, SystemExit), res.output
    data = json.loads(res.stdout)
    jsonschema.validate(data, SCHEMA)
    return res.exit_code, data


def cli(*args, cwd=None) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-c", "from loopcheck.cli import main; main()", *map(str, args)],
                          capture_output=True, text=True, env=env, cwd=cwd, timeout=300)


@pytest.fixture(scope="module")
def boards(tmp_path_factory):
    root = tmp_path_factory.mktemp("boards")
    write_buck(root / "clean")
    write_buck(root / "cut", "cut")
    write_buck(root / "bridge", "bridge")
    write_buck(root / "offset", netlist_offset_mm=(5.0, 5.0))
    write_buck(root / "inch", netlist_units="inch")
    write_buck(root / "inch-gerbers", gerber_units="inch")
    # an inch netlist whose units record says mm: the numbers are 0.0001 inch, read as 0.001 mm
    paths = write_buck(root / "inch-as-mm", netlist_units="inch")
    text = paths["netlist"].read_text()
    assert "UNITS CUST 0" in text
    paths["netlist"].write_text(text.replace("UNITS CUST 0", "UNITS CUST 1"))
    write_buck(root / "no-netlist", netlist=False)
    return root


def test_clean_board_json_contract(boards):
    code, d = run_json(boards / "clean")
    assert code == 0
    assert d["schema"] == "loopcheck-inspect/1"
    assert [layer["name"] for layer in d["layers"]] == ["top", "bottom"]
    assert [layer["file"] for layer in d["layers"]] == ["buck-copper-L1-top.gbr", "buck-copper-L2-bottom.gbr"]
    for layer in d["layers"]:
        assert layer["copper_area_mm2"] > 0 and layer["clipped_area_mm2"] == 0 and layer["thickness_um"] == 35
    # the bottom pour is 58 x 14 mm
    assert d["layers"][1]["copper_area_mm2"] == pytest.approx(58 * 14, rel=0.01)
    assert d["nets"] == 5 and d["components"] == 7
    assert d["holes"] == {"plated": 5, "non_plated": 0, "slots": 0, "files": ["buck-plated.drl"]}
    assert d["outline"]["width_mm"] == pytest.approx(60) and d["outline"]["height_mm"] == pytest.approx(35)
    assert d["connectivity_checked"] is True and d["aligned"] is True
    assert d["findings"] == []
    assert any("copper thickness (default)" in a for a in d["assumptions"])


def test_cut_trace_gives_exactly_one_open(boards):
    code, d = run_json(boards / "cut")
    assert code == 1
    (f,) = d["findings"]
    assert f["rule"] == "netlist-open" and f["severity"] == "error"
    assert f["nets"] == ["OUT"]
    assert sorted(f["terminals"]) == ["C2.1", "L1.2"]
    assert "[L1.2]" in f["message"] and "[C2.1]" in f["message"]
    assert f["layer"] == "top" and "x_mm" in f and "y_mm" in f


def test_bridge_gives_exactly_one_short_at_the_bridge(boards):
    code, d = run_json(boards / "bridge")
    assert code == 1
    (f,) = d["findings"]
    assert f["rule"] == "netlist-short"
    assert f["nets"] == ["SW", "VIN"]
    assert {"Q1.1", "Q1.2"} <= set(f["terminals"])
    # the stray trace runs from Q1.1 to Q1.2 along y = 20.6 (0.3 mm wide)
    assert 24.0 <= f["x_mm"] <= 30.0 and 20.3 <= f["y_mm"] <= 20.9
    assert f["layer"] == "top"


def test_offset_netlist_names_the_offset(boards):
    code, d = run_json(boards / "offset")
    assert code == 1
    (f,) = d["findings"]
    assert f["rule"] == "netlist-alignment"
    assert "offset by (-5.000, -5.000) mm" in f["message"]
    assert d["aligned"] is False and "offset by (-5.000, -5.000) mm" in d["alignment_hint"]


def test_inch_netlist_with_its_units_record_reads_clean(boards):
    code, d = run_json(boards / "inch")
    assert code == 0 and d["findings"] == []
    code, d = run_json(boards / "inch-gerbers")
    assert code == 0 and d["findings"] == []


def test_inch_netlist_read_as_mm_names_the_scale(boards):
    code, d = run_json(boards / "inch-as-mm")
    assert code == 1
    (f,) = d["findings"]
    assert f["rule"] == "netlist-alignment"
    assert "scale by 2.54" in f["message"] and "offset" not in d["alignment_hint"]
    assert d["aligned"] is False


def test_no_netlist_uses_x2_pin_attributes_then_not_checked(boards, tmp_path):
    code, d = run_json(boards / "no-netlist")
    assert code == 0 and d["connectivity_checked"] is True and d["netlist"] is None
    assert any("X2 pin attributes" in a for a in d["assumptions"])
    assert d["components"] == 7
    # without %TO.P% attributes there is nothing to check against
    bare = tmp_path / "bare"
    bare.mkdir()
    for p in (boards / "no-netlist").iterdir():
        text = p.read_text()
        if p.suffix == ".gbr":
            text = "".join(line for line in text.splitlines(keepends=True) if not line.startswith("%TO"))
        (bare / p.name).write_text(text)
    code, d = run_json(bare)
    assert code == 0 and d["connectivity_checked"] is False and d["findings"] == []
    assert any("connectivity not checked" in a for a in d["assumptions"])


def test_zip_and_project_file(boards, tmp_path):
    z = tmp_path / "rev-a.zip"
    with zipfile.ZipFile(z, "w", zipfile.ZIP_DEFLATED) as zf:
        for p in sorted((boards / "clean").iterdir()):
            zf.write(p, f"fab/{p.name}")
    before = sorted(os.listdir(tmp_path))
    code, d = run_json(z)
    assert code == 0 and d["findings"] == [] and d["board"] == "rev-a"
    assert d["layers"][0]["file"] == "fab/buck-copper-L1-top.gbr"
    assert sorted(os.listdir(tmp_path)) == before
    (tmp_path / "loopcheck.toml").write_text(
        '[board]\nname = "tidy"\nfab = "rev-a.zip"\n[stackup]\ncopper_um = [70, 35]\n')
    code, d = run_json(tmp_path / "loopcheck.toml")
    assert code == 0 and d["board"] == "tidy"
    assert [layer["thickness_um"] for layer in d["layers"]] == [70, 35]
    assert not any(a.startswith("copper thickness") for a in d["assumptions"])
    (tmp_path / "loopcheck.toml").write_text('[board]\nfab = "rev-a.zip"\n[stackup]\ncopper_um = [70, 35, 35]\n')
    res = cli("inspect", tmp_path / "loopcheck.toml")
    assert res.returncode == 2
    assert res.stderr.strip().endswith("stackup.copper_um: gives 3 copper thicknesses, the fab outputs have "
                                       "2 copper layers")
    assert "loopcheck.toml:4:" in res.stderr


def test_four_layer_board(tmp_path):
    b = buck_board()
    b.layer_count = 4
    b.name = "four"
    write_fab(b, tmp_path / "four")
    code, d = run_json(tmp_path / "four")
    assert code == 0 and d["findings"] == []
    assert [layer["name"] for layer in d["layers"]] == ["top", "inner1", "inner2", "bottom"]
    assert [layer["thickness_um"] for layer in d["layers"]] == [35, 17.5, 17.5, 35]
    assert d["stackup"]["dielectric_um"] == [200, 1065, 200]


def test_text_format_and_exit_codes_through_a_subprocess(boards):
    res = cli("inspect", boards / "clean")
    assert res.returncode == 0, res.stderr
    assert "copper layers (top to bottom)" in res.stdout and "buck-copper-L1-top.gbr" in res.stdout
    assert "assumptions" in res.stdout
    res = cli("inspect", boards / "cut")
    assert res.returncode == 1
    assert "netlist-open" in res.stdout and "Traceback" not in res.stderr
    res = cli("inspect", boards / "nowhere")
    assert res.returncode == 2
    assert res.stderr.count("\n") == 1 and "no such file or folder" in res.stderr
    res = cli("inspect", boards / "clean", "--format", "xml")
    assert res.returncode == 2 and "Traceback" not in res.stderr


# --- the corpus: every board folder inspects without an exception ----------------------------

CORPUS = REPO.parent / "shared" / "corpus"
# folders holding several boards: a project file picks one (the error without it is tested in
# test_discover.py)


def corpus_targets():
    if not CORPUS.is_dir():
        return []
    out = []
    for d in sorted(CORPUS.iterdir()):
        if not d.is_dir():
            continue
        if d.name == "kicad-x2-tests":
            out.extend(f"{d.name}/{s.name}" for s in sorted(d.iterdir()) if s.is_dir())
        else:
            out.append(d.name)
    return out


@pytest.mark.corpus
@pytest.mark.parametrize("name", corpus_targets() or ["(corpus absent)"])
def test_corpus_board_inspects(name, tmp_path):
    if not CORPUS.is_dir():
        pytest.skip("../shared/corpus is absent")
    target = CORPUS / name
    if name in CORPUS_MAPPINGS:
        lines = ["[board]", f'fab = "{target}"', "[files]"]
        lines += [f'"{k}" = "{v}"' for k, v in CORPUS_MAPPINGS[name].items()]
        (tmp_path / "loopcheck.toml").write_text("\n".join(lines) + "\n")
        target = tmp_path / "loopcheck.toml"
    res = CliRunner().invoke(main, ["inspect", str(target), "--format", "json"])
    jsonschema.validate(json.loads(res.stdout), SCHEMA)
    if name == "spec-examples":
        # single-feature files and a netlist of another board: it reads, and says they disagree
        assert res.exit_code == 1
        d = json.loads(res.stdout)
        assert [f["rule"] for f in d["findings"]] == ["netlist-alignment"] and d["aligned"] is False
        return
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["layers"] and all(layer["copper_area_mm2"] > 0 for layer in d["layers"])
    # gEDA writes no outline layer, and the 14-layer board's mechanical outline layer is drawn
    # open: the extent of the holes stands in, and the report says so
    assert d["outline"]["from_extent"] is (name in ("geda", "altium-composite-drill"))
    if name == "geda":
        assert any("no outline layer" in a for a in d["assumptions"])
    if name == "altium-composite-drill":
        assert any("gave no closed outline" in a and "open end" in a for a in d["assumptions"])
        assert len(d["layers"]) == 14
    assert d["findings"] == []


def test_copper_outside_the_outline_is_left_out_and_reported(tmp_path):
    b = buck_board()
    b.name = "framed"
    # a copper film frame below the board edge (the board is 0..60 x 0..35 mm)
    b.pours.append(SynthPour("", 1, [(-5, -5), (65, -5), (65, -2), (-5, -2)]))
    write_fab(b, tmp_path / "framed")
    code, d = run_json(tmp_path / "framed")
    assert code == 0 and d["findings"] == []
    top = d["layers"][0]
    assert top["clipped_area_mm2"] == pytest.approx(70 * 3, rel=1e-3)
    assert any("outside the outline left out" in a for a in d["assumptions"])
    # without the profile layer: the netlist's board-edge (389) records give the outline ...
    (tmp_path / "framed" / "framed-profile.gbr").unlink()
    code, d = run_json(tmp_path / "framed")
    assert code == 0 and "board-edge records" in d["outline"]["source"]
    assert d["layers"][0]["clipped_area_mm2"] == pytest.approx(70 * 3, rel=1e-3)
    # ... and without those, the extent of pads and holes stands in, and nothing is clipped
    net = tmp_path / "framed" / "framed-netlist.ipc"
    net.write_text("".join(line for line in net.read_text().splitlines(keepends=True)
                           if not line.startswith(("389", "089"))))
    code, d = run_json(tmp_path / "framed")
    assert code == 0
    assert d["outline"]["from_extent"] is True and d["layers"][0]["clipped_area_mm2"] == 0
    assert any("no outline layer" in a and "2 mm margin" in a for a in d["assumptions"])


def test_net_copper_per_layer_on_a_read_board(boards):
    from loopcheck.connectivity import check_connectivity, net_copper
    from loopcheck.load import load_board
    from loopcheck.project import load_project

    b = load_board(load_project(boards / "clean"))
    r = check_connectivity(b)
    gnd = net_copper(b, r, "GND")
    assert set(gnd) == {0, 1}
    assert gnd[1].area == pytest.approx(58 * 14, rel=0.01)      # the bottom pour
    out = net_copper(b, r, "OUT")
    assert set(out) == {0}
    c2 = b.terminals["C2.1"]
    assert r.islands_of(c2)[0].equals(out[0])


def test_board_counts_and_outline_size_that_inspect_reports():
    from shapely.geometry import Polygon, box

    from loopcheck.board import Board, Hole, Outline, Pad, Stackup

    ring = Polygon(box(0, 0, 40, 25).exterior.coords, [box(10, 10, 20, 15).exterior.coords])
    b = Board(name="b", layers=[], outline=Outline(ring, "test"),
              stackup=Stackup([35e-6], [], 1.6e-3),
              pads=[Pad("VIN", "C1", "1", 1, 1, (0,)), Pad("GND", "C1", "2", 2, 1, (0,)),
                    Pad("", "J1", "1", 3, 1, (0,)), Pad("GND", "", "", 5, 5, (0,), 0.3, is_via=True)],
              holes=[Hole(1, 1, 1.0, True), Hole(2, 2, 3.2, False), Hole(3, 3, 1.0, True, end=(4, 3)),
                     Hole(5, 5, 0.3, True)])
    assert b.outline_size_mm == (40.0, 25.0)
    assert b.outline_area_mm2 == pytest.approx(40 * 25 - 10 * 5)       # the cut-out left out
    assert b.hole_counts == {"plated": 2, "non_plated": 1, "slots": 1}
    assert b.named_net_count == 2 and b.component_pad_count == 3 and len(b.vias) == 1
    empty = Board(name="e", layers=[], outline=Outline(Polygon(), "none"), stackup=b.stackup)
    assert empty.outline_size_mm == (0.0, 0.0) and empty.outline_area_mm2 == 0.0
    assert empty.hole_counts == {"plated": 0, "non_plated": 0, "slots": 0}
