"""Discovery: a folder or a .zip of fab outputs -> ordered copper stack and file roles."""

from __future__ import annotations

import os
import zipfile
from pathlib import Path

import pytest

from loopcheck.errors import InputError
from loopcheck.limits import InputLimits
from loopcheck.readers.discover import SeveralBoards, discover, list_boards, sniff
from corpus_maps import CORPUS_MAPPINGS

CORPUS = Path(__file__).parents[1].parent / "shared" / "corpus"

GERBER = "%FSLAX46Y46*%\n%MOMM*%\n{x2}%ADD10C,0.5*%\nD10*\nX0Y0D03*\nM02*\n"
EXCELLON = "M48\n{x2}METRIC\nT1C0.8\n%\nT1\nX1.0Y1.0\nM30\n"
NETLIST = "P  JOB test\nP  UNITS CUST 1\n327GND         R1    -1          A01X  10000Y   5000X 500Y 500R000S0\n999\n"


def gerber(function: str | None = None) -> str:
    return GERBER.format(x2=f"%TF.FileFunction,{function}*%\n" if function else "")


def make(folder: Path, files: dict[str, str]) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in files.items():
        (folder / name).parent.mkdir(parents=True, exist_ok=True)
        (folder / name).write_text(text)
    return folder


def names(fab, pairs):
    return [(fab.display(p), i) for p, i in pairs]


def test_x2_file_function_orders_layers_and_beats_names(tmp_path):
    # names say top/bottom the other way round; X2 wins
    d = make(tmp_path / "b", {
        "x-F_Cu.gbr": gerber("Copper,L4,Bot"), "x-B_Cu.gbr": gerber("Copper,L1,Top"),
        "x-In1_Cu.gbr": gerber("Copper,L2,Inr"), "x-In2_Cu.gbr": gerber("Copper,L3,Inr"),
        "x-Edge_Cuts.gbr": gerber("Profile,NP"), "x-F_Mask.gbr": gerber("Soldermask,Top"),
        "x-PTH.drl": EXCELLON.format(x2="; #@! TF.FileFunction,Plated,1,4,PTH\n"),
        "x-NPTH.drl": EXCELLON.format(x2="; #@! TF.FileFunction,NonPlated,1,4,NPTH\n"),
        "x.d356": NETLIST, "x-pos.csv": "Ref,Val,Package\nR1,10k,0603\n",
    })
    with discover(d) as fab:
        assert names(fab, fab.copper) == [("x-B_Cu.gbr", 0), ("x-In1_Cu.gbr", 1), ("x-In2_Cu.gbr", 2),
                                          ("x-F_Cu.gbr", 3)]
        assert fab.display(fab.outline) == "x-Edge_Cuts.gbr"
        assert sorted(names(fab, fab.drills)) == [("x-NPTH.drl", False), ("x-PTH.drl", True)]
        assert fab.display(fab.netlist) == "x.d356"
        assert fab.display(fab.bom) == "x-pos.csv"
        assert "X2" in fab.how[fab.copper[0][0]]


def test_gerbonara_name_rules_without_x2(tmp_path):
    d = make(tmp_path / "b", {
        "b.GTL": gerber(), "b.GBL": gerber(), "b.G1": gerber(), "b.G2": gerber(), "b.GKO": gerber(),
        "b.GTO": gerber(), "b.GTS": gerber(), "b.TXT": EXCELLON.format(x2=""),
    })
    with discover(d) as fab:
        assert names(fab, fab.copper) == [("b.GTL", 0), ("b.G1", 1), ("b.G2", 2), ("b.GBL", 3)]
        assert fab.display(fab.outline) == "b.GKO"
        assert names(fab, fab.drills) == [("b.TXT", None)]
        assert fab.netlist is None
        assert any("connectivity not checked" in n for n in fab.notes)


def test_numbers_in_file_names(tmp_path):
    d = make(tmp_path / "b", {"art_layer2.pho": gerber(), "art_layer1.pho": gerber(),
                              "art_layer3.pho": gerber()})
    with discover(d) as fab:
        assert names(fab, fab.copper) == [("art_layer1.pho", 0), ("art_layer2.pho", 1), ("art_layer3.pho", 2)]
        assert fab.how[fab.copper[0][0]] == "layer number in the file name"


def test_netlist_found_by_content_whatever_the_name(tmp_path):
    d = make(tmp_path / "b", {"a.gtl": gerber(), "a.gbl": gerber(), "board.net": NETLIST})
    with discover(d) as fab:
        assert fab.display(fab.netlist) == "board.net"


def test_mapping_overrides_all(tmp_path):
    d = make(tmp_path / "b", {
        "one_Top.gbr": gerber(), "one_Bottom.gbr": gerber(), "two_Bottom.gbr": gerber(),
        "odd.art": gerber("Copper,L1,Top"),
    })
    with pytest.raises(SeveralBoards) as info:     # told apart by their stems
        discover(d)
    assert info.value.boards == ["odd", "one", "two"] and "--board" in str(info.value)
    mapping = {"one_Top.gbr": "copper:1", "one_Bottom.gbr": "copper:2", "two_Bottom.gbr": "ignore"}
    with discover(d, mapping) as fab:
        assert names(fab, fab.copper) == [("one_Top.gbr", 0), ("one_Bottom.gbr", 1)]
        ignored = {fab.display(p): why for p, why in fab.ignored}
        assert "odd.art" in ignored and "two_Bottom.gbr" in ignored


def test_mapping_errors(tmp_path):
    d = make(tmp_path / "b", {"a.gtl": gerber(), "notes.txt": "hello\n"})
    with pytest.raises(InputError, match="'missing.gbr' is not among the fab outputs"):
        discover(d, {"missing.gbr": "copper:1"}, project_file="p/loopcheck.toml")
    with pytest.raises(InputError, match="mapped as copper:1 but its content is not a Gerber file"):
        discover(d, {"notes.txt": "copper:1"})


def test_gap_in_copper_numbers_is_an_error(tmp_path):
    d = make(tmp_path / "b", {"a.gbr": gerber("Copper,L1,Top"), "b.gbr": gerber("Copper,L3,Bot")})
    with pytest.raises(InputError, match="none at L2"):
        discover(d)


def test_no_copper_is_an_error(tmp_path):
    d = make(tmp_path / "b", {"readme.txt": "nothing here\n"})
    with pytest.raises(InputError, match="no copper layer found"):
        discover(d)


def test_two_netlists_is_an_error(tmp_path):
    d = make(tmp_path / "b", {"a.gtl": gerber(), "x.ipc": NETLIST, "y.d356": NETLIST})
    with pytest.raises(InputError, match="more than one IPC-D-356 netlist: x.ipc, y.d356"):
        discover(d)


def test_sniff_kinds(tmp_path):
    (tmp_path / "g").write_text(gerber("Copper,L1,Top"))
    (tmp_path / "e").write_text(EXCELLON.format(x2=""))
    (tmp_path / "n").write_text(NETLIST)
    (tmp_path / "z").write_bytes(os.urandom(4096))
    assert sniff(tmp_path / "g") == ("gerber", "Copper,L1,Top")
    assert sniff(tmp_path / "e")[0] == "excellon"
    assert sniff(tmp_path / "n")[0] == "ipc356"
    assert sniff(tmp_path / "z")[0] == "other"


# --- zips ----------------------------------------------------------------------------------

def _zip(path: Path, members: dict[str, str | bytes], compression=zipfile.ZIP_DEFLATED) -> Path:
    with zipfile.ZipFile(path, "w", compression) as zf:
        for name, data in members.items():
            zf.writestr(name, data)
    return path


def test_zip_is_extracted_to_a_temporary_folder_and_cleaned_up(tmp_path):
    z = _zip(tmp_path / "rev.zip", {"fab/a.gtl": gerber(), "fab/a.gbl": gerber(), "fab/a.ipc": NETLIST})
    before = sorted(os.listdir(tmp_path))
    fab = discover(z)
    root = fab.root
    assert root.is_dir() and not str(root).startswith(str(tmp_path))
    assert names(fab, fab.copper) == [("rev.zip:fab/a.gtl", 0), ("rev.zip:fab/a.gbl", 1)]
    fab.close()
    assert not root.exists()
    assert sorted(os.listdir(tmp_path)) == before


@pytest.mark.parametrize("member", ["../evil.gbr", "/etc/evil.gbr", "C:/evil.gbr", "a/../../evil.gbr",
                                    "..\\evil.gbr"])
def test_zip_member_leaving_the_folder_is_refused(tmp_path, member):
    z = _zip(tmp_path / "bad.zip", {"a.gtl": gerber(), member: gerber()})
    with pytest.raises(InputError, match="path that leaves the folder"):
        discover(z)
    assert not (tmp_path.parent / "evil.gbr").exists()


def test_zip_limits(tmp_path):
    z = _zip(tmp_path / "big.zip", {"a.gtl": gerber() + "G04 pad*\n" * 20000})
    with pytest.raises(InputError, match="bytes uncompressed, more than the limit of 1000"):
        discover(z, limits=InputLimits(max_zip_uncompressed_bytes=1000))
    with pytest.raises(InputError, match="compression ratio"):
        discover(z, limits=InputLimits(max_zip_ratio=5))
    z2 = _zip(tmp_path / "many.zip", {f"f{i}.gbr": gerber() for i in range(5)})
    with pytest.raises(InputError, match="5 files in the archive, more than the limit of 4"):
        discover(z2, limits=InputLimits(max_zip_members=4))


def test_empty_and_broken_zip(tmp_path):
    z = _zip(tmp_path / "empty.zip", {})
    with pytest.raises(InputError, match="empty zip archive"):
        discover(z)
    (tmp_path / "junk.zip").write_bytes(os.urandom(2000))
    with pytest.raises(InputError, match="not a valid zip archive"):
        discover(tmp_path / "junk.zip")


# --- the corpus ----------------------------------------------------------------------------



def corpus_boards() -> list[Path]:
    if not CORPUS.is_dir():
        return []
    out = []
    for d in sorted(CORPUS.iterdir()):
        if not d.is_dir():
            continue
        subs = [s for s in sorted(d.iterdir()) if s.is_dir()]
        if subs and not any(p.suffix.lower() in (".gbr", ".gtl") for p in d.iterdir() if p.is_file()) \
                and d.name == "kicad-x2-tests":
            out.extend(subs)           # four variants of one board, one per folder
        else:
            out.append(d)
    return out


@pytest.mark.corpus
def test_corpus_folders_of_several_boards_list_them_and_read_with_a_mapping():
    if not CORPUS.is_dir():
        pytest.skip("../shared/corpus is absent")
    expected = {"geda": ["controller", "driver"], "diptrace": ["keyboard", "mainboard", "panel"]}
    for name, mapping in CORPUS_MAPPINGS.items():
        with pytest.raises(SeveralBoards) as info:
            discover(CORPUS / name)
        assert info.value.boards == expected[name]
        assert list_boards(CORPUS / name) == expected[name]
        with discover(CORPUS / name, mapping) as fab:
            assert fab.layer_count == 2
    with discover(CORPUS / "geda", board="driver") as fab:
        # never a layer of the other board
        assert all(fab.relname(p).startswith("driver.") for p, _ in fab.copper + fab.drills)
        assert fab.layer_count == 2 and fab.board == "driver"


@pytest.mark.corpus
def test_corpus_stacks():
    if not CORPUS.is_dir():
        pytest.skip("../shared/corpus is absent")
    with discover(CORPUS / "altium-composite-drill") as fab:
        assert fab.layer_count == 14
        assert fab.display(fab.copper[0][0]).endswith(".GTL")
        assert fab.display(fab.copper[-1][0]).endswith(".GBL")
        assert fab.display(fab.copper[5][0]).endswith(".G5")
        assert fab.display(fab.outline).endswith(".GM1")
        assert len(fab.drills) == 2
    with discover(CORPUS / "zero-length-lines") as fab:
        assert [fab.display(p).split("-")[-1] for p, _ in fab.copper] == ["F_Cu.gbr", "In1_Cu.gbr",
                                                                          "In2_Cu.gbr", "B_Cu.gbr"]
        assert fab.display(fab.bom).endswith(".csv")
    with discover(CORPUS / "eagle-newer") as fab:
        assert fab.layer_count == 2 and fab.display(fab.outline) == "profile.gbr"


@pytest.mark.corpus
def test_corpus_folder_of_four_board_variants_lists_them():
    if not CORPUS.is_dir():
        pytest.skip("../shared/corpus is absent")
    names = ["nox2ap", "nox2noap", "x2ap", "x2noap"]
    assert list_boards(CORPUS / "kicad-x2-tests") == names
    for name in names:
        with discover(CORPUS / "kicad-x2-tests", board=name) as fab:
            assert fab.layer_count == 2 and len(fab.drills) == 2
            assert all(fab.relname(p).startswith(name + "/") for p, _ in fab.copper + fab.drills)
    for single in ("eagle-newer", "altium-composite-drill", "kicad-older", "zero-length-lines"):
        assert list_boards(CORPUS / single) == []


def test_folder_with_too_many_files_is_refused(tmp_path):
    d = make(tmp_path / "b", {f"f{i}.gbr": gerber() for i in range(6)})
    with pytest.raises(InputError, match="more than 5 files under this folder"):
        discover(d, limits=InputLimits(max_zip_members=5))
