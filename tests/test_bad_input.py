"""Bad input, end to end: one clear line on stderr, exit code 2, no traceback, nothing written
beside the inputs (the folder listing is compared before and after)."""

from __future__ import annotations

import os
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from loopcheck.errors import InputError
from loopcheck.limits import InputLimits
from loopcheck.load import load_board
from loopcheck.project import load_project
from synth_fixtures import write_buck

REPO = Path(__file__).parents[1]
CORPUS = REPO.parent / "shared" / "corpus"


def listing(folder: Path) -> list[tuple[str, int, int]]:
    out = []
    for p in sorted(folder.rglob("*")):
        st = p.stat()
        out.append((str(p.relative_to(folder)), st.st_size, st.st_mtime_ns))
    return out


def inspect_fails(target: Path, watch: Path, *expected: str) -> str:
    """Run ``loopcheck inspect`` in a subprocess; assert the bad-input contract; return stderr."""
    before = listing(watch)
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    res = subprocess.run([sys.executable, "-c", "from loopcheck.cli import main; main()", "inspect", str(target)],
                         capture_output=True, text=True, env=env, cwd=str(watch), timeout=300)
    assert res.returncode == 2, (res.returncode, res.stdout, res.stderr)
    assert "Traceback" not in res.stderr
    lines = res.stderr.strip("\n").split("\n")
    assert len(lines) == 1, res.stderr
    assert lines[0].startswith("loopcheck: ")
    for text in expected:
        assert text in lines[0], lines[0]
    assert res.stdout == ""
    assert listing(watch) == before
    return lines[0]


@pytest.fixture()
def board(tmp_path):
    paths = write_buck(tmp_path / "board")
    return tmp_path / "board", paths


def test_truncated_gerber(board):
    folder, paths = board
    top = paths["L1"]
    text = top.read_text()
    top.write_text(text[: len(text) // 2])
    inspect_fails(folder, folder, top.name)


def test_binary_garbage_mapped_as_copper(board):
    folder, paths = board
    paths["L1"].write_bytes(os.urandom(20000))
    msg = inspect_fails(folder, folder)
    assert "copper" in msg
    (folder / "loopcheck.toml").write_text(f'[files]\n"{paths["L1"].name}" = "copper:1"\n')
    inspect_fails(folder, folder, paths["L1"].name, "is not a Gerber file")


def test_binary_garbage_as_netlist(board):
    folder, paths = board
    # garbage that still starts like a netlist: the reader, not the sniffer, must refuse it
    paths["netlist"].write_bytes(b"P  UNITS CUST 1\n327" + os.urandom(3000) + b"\n999\n")
    msg = inspect_fails(folder, folder)
    assert "buck-netlist.ipc" in msg or "netlist" in msg


def test_netlist_line_shorter_than_its_record(board):
    folder, paths = board
    lines = paths["netlist"].read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("327"))
    lines[k] = lines[k][:30].rstrip() + "\n"
    paths["netlist"].write_text("".join(lines))
    inspect_fails(folder, folder, f"{paths['netlist'].name}:{k + 1}:")


def test_empty_zip(tmp_path):
    z = tmp_path / "empty.zip"
    zipfile.ZipFile(z, "w").close()
    inspect_fails(z, tmp_path, "empty.zip", "empty zip archive")


def test_zip_member_leaving_the_folder(board, tmp_path):
    folder, paths = board
    z = tmp_path / "evil.zip"
    with zipfile.ZipFile(z, "w") as zf:
        for p in paths.values():
            zf.write(p, p.name)
        zf.writestr("../../escaped.gbr", paths["L1"].read_text())
    inspect_fails(z, tmp_path, "evil.zip", "leaves the folder")
    assert not (tmp_path.parent / "escaped.gbr").exists()


def test_zip_bomb_ratio_refused(tmp_path):
    z = tmp_path / "bomb.zip"
    with zipfile.ZipFile(z, "w", zipfile.ZIP_DEFLATED) as zf:
        zf.writestr("a.gtl", b"G04 x*\n" + b"\x20" * (20 * 1024 * 1024))
    inspect_fails(z, tmp_path, "bomb.zip", "compression ratio")


def test_zip_larger_than_the_limit_refused(board, tmp_path):
    folder, paths = board
    z = tmp_path / "big.zip"
    with zipfile.ZipFile(z, "w", zipfile.ZIP_DEFLATED) as zf:
        for p in paths.values():
            zf.write(p, p.name)
    size = sum(p.stat().st_size for p in paths.values())
    with pytest.raises(InputError, match="uncompressed, more than the limit"):
        load_board(load_project(z), InputLimits(max_zip_uncompressed_bytes=size // 2))
    # and within the limit it reads
    b = load_board(load_project(z), InputLimits(max_zip_uncompressed_bytes=size * 2))
    assert len(b.layers) == 2


SR_GERBER = """%FSLAX46Y46*%
%MOMM*%
%TF.FileFunction,Copper,L1,Top*%
%ADD10C,0.1*%
%SRX{nx}Y{ny}I0.2J0.2*%
D10*
X0Y0D03*
%SR*%
M02*
"""


def test_step_and_repeat_past_the_limit(board):
    folder, paths = board
    paths["L1"].write_text(SR_GERBER.format(nx=3000, ny=3000))      # 9 million flashes
    inspect_fails(folder, folder, paths["L1"].name)
    # in process, with a small limit
    paths["L1"].write_text(SR_GERBER.format(nx=20, ny=20))
    with pytest.raises(InputError):
        load_board(load_project(folder), InputLimits(max_step_repeat_objects=100))


def test_bad_project_file(board):
    folder, _ = board
    (folder / "loopcheck.toml").write_text("[stackup]\ncopper_um = 35\n")
    inspect_fails(folder, folder, "loopcheck.toml:2:", "stackup.copper_um: expected a list of numbers")


def test_netlist_naming_more_layers_than_copper_files(board):
    folder, paths = board
    text = paths["netlist"].read_text()
    lines = text.splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("327"))
    line = lines[k]
    # access code columns 39-41 ("A01"): claim layer 6 of a 2-layer board
    at = line.index("A0", 36)
    lines[k] = line[:at] + "A06" + line[at + 3:]
    paths["netlist"].write_text("".join(lines))
    inspect_fails(folder, folder, "names copper layer 6 but 2 copper files were found", "[files]")


def test_syntax_error_file_from_the_corpus(tmp_path):
    src = CORPUS / "spec-examples" / "test_syntax_error.gbr"
    if not src.is_file():
        pytest.skip("../shared/corpus is absent")
    folder = tmp_path / "b"
    folder.mkdir()
    (folder / "x.gtl").write_text(src.read_text())
    inspect_fails(folder, folder, "x.gtl")


def test_errors_from_parallel_layer_reads_keep_file_and_line(board, monkeypatch):
    import loopcheck.load as load

    folder, paths = board
    monkeypatch.setattr(load, "PARALLEL_MIN_BYTES", 0)      # read the layers in worker processes
    b = load_board(load_project(folder))
    assert [layer.name for layer in b.layers] == ["top", "bottom"] and b.layers[1].copper_area_mm2 > 0
    text = paths["L2"].read_text()
    paths["L2"].write_text(text[: len(text) // 2])
    with pytest.raises(InputError) as info:
        load_board(load_project(folder))
    assert info.value.path == str(paths["L2"])


def test_broken_outline_is_bad_input_but_an_open_one_falls_back(board):
    folder, paths = board
    good = paths["profile"].read_text()
    paths["profile"].write_text(good[: len(good) // 2])
    inspect_fails(folder, folder, paths["profile"].name)
    # an outline drawn as one open line: the extent stands in, and the report says so
    paths["profile"].write_text("%FSLAX46Y46*%\n%MOMM*%\n%TF.FileFunction,Profile,NP*%\n%ADD10C,0.1*%\n"
                                "D10*\nX0Y0D02*\nX60000000Y0D01*\nM02*\n")
    b = load_board(load_project(folder))
    assert any("gave no closed outline" in a for a in b.assumptions)
    assert not b.outline.from_extent or "extent" in b.outline.source


def test_garbage_gerber_beside_a_good_board_is_bad_input(board):
    # a corrupt bottom layer must not turn the board into a 1-layer board without a word
    folder, paths = board
    bad = folder / "board-B_Cu.gbr"
    bad.write_bytes(os.urandom(20000))
    inspect_fails(folder, folder, "board-B_Cu.gbr", "looks like a Gerber file by its name but is not readable as one")
    # mapped as "ignore", it is left out (and the board reads)
    (folder / "loopcheck.toml").write_text('[files]\n"board-B_Cu.gbr" = "ignore"\n')
    from loopcheck.readers.discover import discover
    with discover(folder, mapping={"board-B_Cu.gbr": "ignore"}) as fab:
        assert fab.layer_count == 2
        assert any(p.name == "board-B_Cu.gbr" for p, _ in fab.ignored)


def test_garbage_drill_file_is_bad_input(board):
    folder, paths = board
    paths["drill"].write_bytes(os.urandom(5000))
    inspect_fails(folder, folder, paths["drill"].name, "looks like an Excellon drill file by its name")


def test_garbage_txt_and_job_files_are_still_ignored_quietly(board):
    from loopcheck.readers.discover import discover
    folder, paths = board
    (folder / "notes.txt").write_bytes(os.urandom(300))
    (folder / "board.gbrjob").write_text('{"Header": {}}\n')
    (folder / "README").write_text("fab notes\n")
    with discover(folder) as fab:
        assert fab.layer_count == 2
        ignored = {p.name for p, _ in fab.ignored}
        assert {"notes.txt", "board.gbrjob", "README"} <= ignored


def test_stackup_finished_thickness_far_from_the_layers():
    from loopcheck.project import StackupSpec
    from loopcheck.stackup import build_stackup

    spec = StackupSpec(dielectric_um=[300], finished_mm=1.6)     # 0.37 mm of layers, 1.6 finished
    lines = {"stackup.finished_mm": 9}
    with pytest.raises(InputError) as info:
        build_stackup(2, spec, project_path="b/loopcheck.toml", line_of=lines.get)
    msg = str(info.value)
    assert msg.startswith("b/loopcheck.toml:9: stackup.finished_mm: 1.6 mm")
    assert "add up to 0.37 mm" in msg
    # within 10 %: accepted (1.54 mm of layers against 1.6 mm finished)
    s, _ = build_stackup(4, StackupSpec(copper_um=[35] * 4, dielectric_um=[200, 1000, 200],
                                        finished_mm=1.6))
    assert s.finished_thickness_m == pytest.approx(1.6e-3)
    # just past 10 % on the thick side too: 1.6 mm of layers against 1.45 mm finished
    with pytest.raises(InputError, match="stackup.finished_mm: 1.45 mm"):
        build_stackup(2, StackupSpec(copper_um=[35, 35], dielectric_um=[1530], finished_mm=1.45))


def test_inconsistent_stackup_in_the_project_file_is_bad_input(board):
    folder, paths = board
    (folder / "loopcheck.toml").write_text('[board]\nname = "x"\n\n[stackup]\ndielectric_um = [300]\n'
                                          'finished_mm = 1.6\n')
    msg = inspect_fails(folder, folder, "loopcheck.toml:6:", "stackup.finished_mm", "1.6 mm", "0.37 mm")
    assert "Traceback" not in msg


# ---------------------------------------------------------------------------------------------
# malformed Gerber statements: each kind is refused in one line that names the file and the
# line of the statement, in the project's words (no library exception text)

LIBRARY_WORDS = ("NoneType", "object has no attribute", "list index", "__init__", "positional argument",
                 "could not convert", "This is garbage", "gerbonara", "Error:")

# where: "start" = before any aperture is selected (after G75*), "end" = before M02*;
# the snippet's first line is the statement the message must point at, unless `at` says
BAD_GERBER = {
    "invalid-d-code": ("end", "D0*", 0, "D0 is not a valid D code"),
    "flash-before-aperture": ("start", "X1000000Y1000000D03*", 0, "flash (D03) before any aperture"),
    "draw-before-aperture": ("start", "X1000000Y1000000D02*\nX2000000Y1000000D01*", 1,
                             "draw (D01) before any aperture"),
    "undefined-aperture": ("end", "D99*\nX1000000Y1000000D03*", 0, "D99 is selected but never defined"),
    "unreadable-coordinate": ("end", "X1O00000Y0D01*", 0, "coordinate data that cannot be read"),
    "invalid-operation-code": ("end", "X1000000Y0D04*", 0, "D04 is not an operation code"),
    "coordinate-too-long": ("end", "X99999999999999999999Y0D01*", 0, "more than 14 digits"),
    "aperture-parameters": ("end", "%ADD90R,1*%", 0, "a rectangle (R) takes 2 to 3 parameters"),
    "aperture-not-a-number": ("end", "%ADD90C,0.5mm*%", 0, "parameter '0.5mm' is not a number"),
    "aperture-negative": ("end", "%ADD90C,-0.5*%", 0, "negative size"),
    "undefined-macro": ("end", "%ADD90NOSUCHMACRO,1X1*%", 0, "macro 'NOSUCHMACRO'"),
    "macro-primitive": ("end", "%AMBAD*\n99,1,1*%", 0, "aperture macro primitive code 99"),
    "macro-divides-by-zero": ("end", "%AMDIV*\n1,1,$1/0,0,0*%\n%ADD90DIV,1*%\nD90*\nX0Y0D03*", 2,
                              "aperture D90 (macro DIV) divides by zero"),
    "unreadable-format": ("end", "%FSLAX99Y99*%", 0, "the FS statement cannot be read"),
    "unreadable-polarity": ("end", "%LPX*%", 0, "the LP statement cannot be read"),
    "block-aperture": ("end", "%ABD90*%", 0, "block apertures (AB)"),
    "nameless-attribute": ("end", "%TO*%", 0, "attribute statement without an attribute name"),
    "g-code-with-data": ("end", "G99X0Y0D01*", 0, "G99 with data after it"),
    "flash-in-region": ("end", "G36*\nX0Y0D02*\nX1000000Y0D01*\nX0Y0D03*\nG37*", 3, "flash (D03) inside a region"),
}


@pytest.mark.parametrize("kind", sorted(BAD_GERBER))
def test_malformed_gerber_statement(board, kind):
    folder, paths = board
    top = paths["L1"]
    lines = top.read_text().splitlines()
    where, snippet, at, expected = BAD_GERBER[kind]
    k = lines.index("G75*") + 1 if where == "start" else len(lines) - 1
    assert where == "start" or lines[k] == "M02*"
    lines[k:k] = snippet.split("\n")
    top.write_text("\n".join(lines) + "\n")
    msg = inspect_fails(folder, folder, f"{top.name}:{k + 1 + at}: ", expected)
    assert not any(word in msg for word in LIBRARY_WORDS), msg


def test_lone_unknown_statements_are_skipped_with_a_note(board):
    # a job attribute some writers add, an unknown extended command, a lone unknown G code:
    # none of them changes the image, so the layer is read and the notes say what was skipped
    from loopcheck.readers.gerber import read_gerber
    folder, paths = board
    top = paths["L1"]
    before = read_gerber(top).geometry.area
    lines = top.read_text().splitlines()
    lines[-1:-1] = ["%TJ.B_Owner,someone*%", "%XYZ123*%", "G99*"]
    top.write_text("\n".join(lines) + "\n")
    layer = read_gerber(top)
    assert layer.geometry.area == pytest.approx(before)
    assert sum("Unknown statement" in w for w in layer.warnings) == 3


# --- refusals added with several boards per folder and drill files without their format -------

def command_fails(args: list[str], watch: Path, *expected: str) -> str:
    """Like inspect_fails, for any command line."""
    before = listing(watch)
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    res = subprocess.run([sys.executable, "-c", "from loopcheck.cli import main; main()", *args],
                         capture_output=True, text=True, env=env, cwd=str(watch), timeout=300)
    assert res.returncode == 2, (res.returncode, res.stdout, res.stderr)
    assert "Traceback" not in res.stderr
    lines = res.stderr.strip("\n").split("\n")
    assert len(lines) == 1 and lines[0].startswith("loopcheck: "), res.stderr
    for text in expected:
        assert text in lines[0], lines[0]
    assert res.stdout == ""
    assert listing(watch) == before
    return lines[0]


def test_drill_without_format_that_lands_nowhere(board):
    folder, paths = board
    paths["drill"].write_text("M48\nT1C0.0300\n%\nT1\nX-987654Y-876543\nX-876543Y-987654\nM30\n")
    inspect_fails(folder, folder, paths["drill"].name, "[files]", "drill inch 2.4 omit-leading")


def test_drill_format_words_unknown(board):
    folder, paths = board
    (folder / "loopcheck.toml").write_text(f'[files]\n"{paths["drill"].name}" = "drill inch 2.4 sideways"\n')
    inspect_fails(folder, folder, "loopcheck.toml:2:", "sideways")


def two_boards(tmp_path: Path) -> Path:
    write_buck(tmp_path / "two" / "first")
    write_buck(tmp_path / "two" / "second")
    return tmp_path / "two"


def test_several_boards_machine_report_on_stdout(tmp_path):
    two = two_boards(tmp_path)
    command_fails(["inspect", str(two), "--format", "json"], tmp_path, "2 boards", "--board", "--output")
    command_fails(["check", str(two), "--format", "sarif"], tmp_path, "2 boards", "--board", "--output")


def test_board_not_among_them(tmp_path):
    two = two_boards(tmp_path)
    command_fails(["inspect", str(two), "--board", "third"], tmp_path, "--board third", "first, second")
