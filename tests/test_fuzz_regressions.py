"""Regression tests for what the fuzz harness (benchmarks/fuzz_boards.py) found.

Each test writes its own small damaged board (the synthesized buck of synth_fixtures, changed
the one way the fuzz case changed it), runs ``loopcheck check`` as a user would and holds it to
the bad-input contract: exit code 2, one line on stderr naming the file and line, no traceback,
no report written, nothing changed beside the inputs.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import time
from pathlib import Path

import pytest

from synth_fixtures import write_buck

REPO = Path(__file__).parents[1]

# The flash-with-no-aperture class: fixed by readers-netlist in readers/gerber.py (issue 11);
# these tests were xfail until that fix reached main.


def listing(folder: Path) -> list[tuple[str, int, int]]:
    return [(str(p.relative_to(folder)), p.lstat().st_size, p.lstat().st_mtime_ns)
            for p in sorted(folder.rglob("*"))]


def check_refuses(board: Path, tmp_path: Path, name: str, lines: range | None = None) -> str:
    """Run ``loopcheck check BOARD --format json --output OUT``; assert the bad-input contract.

    BOARD is a folder (watched for changes) or a .zip (its folder is watched).
    ``name`` must be in the one line on stderr, followed by ``:LINE:`` with LINE in ``lines``
    when given. Returns the line."""
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    out = out_dir / "report.json"
    watch = board if board.is_dir() else board.parent
    before = listing(watch)
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    res = subprocess.run([sys.executable, "-m", "loopcheck", "check", str(board), "--format", "json",
                          "--output", str(out)], capture_output=True, text=True, env=env,
                         cwd=str(out_dir), timeout=120)
    assert "Traceback" not in res.stderr, res.stderr
    assert res.returncode == 2, (res.returncode, res.stderr)
    err = res.stderr.strip("\n").split("\n")
    assert len(err) == 1 and err[0].startswith("loopcheck: "), res.stderr
    assert name in err[0], err[0]
    if lines is not None:
        m = re.search(re.escape(name) + r":(\d+):", err[0])
        assert m and int(m[1]) in lines, (err[0], list(lines))
    assert not out.exists() and list(out_dir.iterdir()) == [], "a report was written on exit 2"
    assert listing(watch) == before, "something changed beside the inputs"
    return err[0]


def damaged_copper(tmp_path: Path, change) -> tuple[Path, str, int]:
    """The synthesized buck with its top copper layer passed through ``change(lines) -> (lines, k)``
    (k: the 1-based line the damage is on). Returns the board folder, the file name and k."""
    board = tmp_path / "board"
    paths = write_buck(board)
    top = paths["L1"]
    lines, k = change(top.read_text().splitlines(keepends=True))
    top.write_text("".join(lines))
    return board, top.name, k


def assert_checks_as_clean(board: Path, tmp_path: Path, area_rel: float) -> None:
    """``board`` (a damaged synthesized buck) checks as the undamaged one does: the same result
    and findings, each layer's copper area within ``area_rel``."""
    clean = tmp_path / "clean"
    write_buck(clean)
    damaged, reference = tmp_path / "a", tmp_path / "b"
    damaged.mkdir()
    reference.mkdir()
    got, want = check_completes(board, damaged), check_completes(clean, reference)
    assert got["result"] == want["result"]
    for a, b in zip(got["layers"], want["layers"], strict=True):
        assert a["copper_area_mm2"] == pytest.approx(b["copper_area_mm2"], rel=area_rel)
    assert [(f["rule"], f["severity"], f["stage"]) for f in got["findings"]] == \
           [(f["rule"], f["severity"], f["stage"]) for f in want["findings"]]


def _first(lines: list[str], prefix: str) -> int:
    return next(i for i, line in enumerate(lines) if line.startswith(prefix))


def test_select_of_aperture_D0_then_a_flash(tmp_path):
    """Fuzz kind invalid-dcode: ``D0*`` (no such aperture) selected, then a flash."""
    def change(lines):
        k = _first(lines, "X")                 # the first coordinate statement
        return lines[:k] + ["D0*\n", "X0Y0D03*\n"] + lines[k:], k + 1
    board, name, k = damaged_copper(tmp_path, change)
    check_refuses(board, tmp_path, name, range(k, k + 3))


def test_flash_before_any_aperture_is_defined(tmp_path):
    """Fuzz kind invalid-dcode, flash-before-aperture (seed 1, cases 52 and 57 of the first run)."""
    def change(lines):
        k = _first(lines, "%ADD")
        return lines[:k] + ["X0Y0D03*\n"] + lines[k:], k + 1
    board, name, k = damaged_copper(tmp_path, change)
    check_refuses(board, tmp_path, name, range(k, k + 2))


def test_flashes_with_every_aperture_selection_deleted(tmp_path):
    """Fuzz kind invalid-dcode, no-selects, on the bottom layer: a pour, then flashes with no
    aperture ever selected (a draw, D01, with none is already refused by the parser)."""
    board = tmp_path / "board"
    bottom = write_buck(board)["L2"]
    lines = bottom.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.endswith("D03*\n"))
    bottom.write_text("".join(line for line in lines if not re.match(r"^(G54)?D\d{2,}\*\s*$", line)))
    check_refuses(board, tmp_path, bottom.name)


def test_draws_with_every_aperture_selection_deleted(tmp_path):
    """The same on the top layer, whose first operation is a draw: refused by the parser."""
    def change(lines):
        return [line for line in lines if not re.match(r"^(G54)?D\d{2,}\*\s*$", line)], 0
    board, name, _ = damaged_copper(tmp_path, change)
    check_refuses(board, tmp_path, name)


def check_completes(board: Path, tmp_path: Path) -> dict:
    """Run ``loopcheck check``; assert it finishes (exit 0 or 1) with its report and no traceback."""
    out = tmp_path / "report.json"
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    before = listing(board)
    res = subprocess.run([sys.executable, "-m", "loopcheck", "check", str(board), "--format", "json",
                          "--output", str(out)], capture_output=True, text=True, env=env,
                         cwd=str(tmp_path), timeout=120)
    assert "Traceback" not in res.stderr, res.stderr
    assert res.returncode in (0, 1), (res.returncode, res.stderr)
    assert listing(board) == before
    import json
    return json.loads(out.read_text())


def test_one_flash_repeated_twenty_thousand_times(tmp_path):
    """Fuzz kind repeat-lines (seed 11, case 9 of the first run): a pad's flash statement
    repeated 20 000 times made 20 000 identical shapes, whose n^2 overlapping pairs took 12 GB
    and two minutes in the layer union (a segmentation fault under a memory limit). Identical
    shapes are now unioned once; the board reads as if the flash were there once."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.endswith("D03*\n"))
    top.write_text("".join(lines[:k] + [lines[k]] * 20000 + lines[k:]))
    assert_checks_as_clean(board, tmp_path, area_rel=1e-9)


def test_outline_drawn_thirty_thousand_times_by_step_and_repeat(tmp_path):
    """Fuzz kind step-repeat on the profile (seed 3, case 0): 100 000 copies of the outline made
    400 000 lines to join, past 60 s and 4 GB. An outline layer may now draw at most
    InputLimits.max_profile_segments lines and arcs (copies counted; 100 000, above the 33 000 of
    a real 14-layer board's mechanical outline layer in the corpus): 30 000 copies of a 4-line
    outline are refused in one line naming the file."""
    board = tmp_path / "board"
    profile = write_buck(board)["profile"]
    lines = profile.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.endswith("D02*\n"))
    end = next(i for i, line in enumerate(lines) if line.startswith("M02"))
    profile.write_text("".join(lines[:k + 1] + ["%SRX1Y30000I1J1*%\n"] + lines[k + 1:end]
                               + ["%SR*%\n"] + lines[end:]))
    msg = check_refuses(board, tmp_path, profile.name)
    assert "outline" in msg and "limit" in msg


def test_copper_step_and_repeat_past_a_hundred_thousand_objects(tmp_path):
    """Fuzz kind step-repeat on copper: 4 000 copies of the top layer's 29 objects (116 000
    objects) were allowed (the limit was 2 000 000; up to that many take many minutes to read).
    The default limit is now 100 000 objects after expansion, and the refusal names the file."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    first = next(i for i, line in enumerate(lines) if line.startswith("G01"))
    end = next(i for i, line in enumerate(lines) if line.startswith("M02"))
    assert sum(line.endswith(("D01*\n", "D03*\n")) for line in lines[first:end]) >= 29
    top.write_text("".join(lines[:first] + ["%SRX4000Y1I70J0*%\n"] + lines[first:end] + ["%SR*%\n"]
                           + lines[end:]))
    msg = check_refuses(board, tmp_path, top.name)
    assert "step-and-repeat" in msg


def test_regular_polygon_aperture_of_a_million_vertices(tmp_path):
    """Fuzz kind bad-aperture (seed 2026, case 135): ``%ADD11P,1X1000000*%`` made every flash
    of D11 a million-vertex polygon and the layer ran past a minute (here: one flash of it). The Gerber format allows
    3 to 12 vertices; over 1024 is refused, naming the file."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    k = max(i for i, line in enumerate(lines) if line.startswith("%ADD")) + 1
    end = next(i for i, line in enumerate(lines) if line.startswith("M02"))
    top.write_text("".join(lines[:k] + ["%ADD99P,1X1000000*%\n"] + lines[k:end]
                           + ["D99*\n", "X20000000Y20000000D03*\n"] + lines[end:]))
    check_refuses(board, tmp_path, top.name)     # refused when the aperture is defined or drawn


def test_zip_of_a_version_the_zip_module_cannot_read(tmp_path):
    """Fuzz kind zip-corrupt (seed 2026, case 177): a flipped byte made the archive's central
    directory ask for zip version 8.1, and the zip module's NotImplementedError came out as a
    traceback. It is an archive that cannot be read: exit 2, naming the archive."""
    board = tmp_path / "board"
    paths = write_buck(board)
    z = tmp_path / "zipin" / "board.zip"
    z.parent.mkdir()
    import zipfile
    with zipfile.ZipFile(z, "w", zipfile.ZIP_DEFLATED) as zf:
        for p in paths.values():
            zf.write(p, p.name)
    data = bytearray(z.read_bytes())
    central = data.find(b"PK\x01\x02")
    data[central + 6:central + 8] = (81).to_bytes(2, "little")     # version needed to extract: 8.1
    z.write_bytes(bytes(data))
    out = tmp_path / "out"
    out.mkdir()
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    before = listing(z.parent)
    res = subprocess.run([sys.executable, "-m", "loopcheck", "check", str(z), "--format", "json",
                          "--output", str(out / "report.json")], capture_output=True, text=True,
                         env=env, cwd=str(out), timeout=120)
    assert "Traceback" not in res.stderr, res.stderr
    assert res.returncode == 2, (res.returncode, res.stderr)
    err = res.stderr.strip("\n").split("\n")
    assert len(err) == 1 and "board.zip" in err[0] and "zip" in err[0], res.stderr
    assert list(out.iterdir()) == [] and listing(z.parent) == before


def test_zip_member_with_an_empty_name(tmp_path):
    """Fuzz kind zip-paths (seed 11, case 157): a member whose name is empty made the zip
    module's is_dir() raise IndexError. It is refused as a member with no file name."""
    board = tmp_path / "board"
    paths = write_buck(board)
    zdir = tmp_path / "zipin"
    zdir.mkdir()
    import zipfile
    with zipfile.ZipFile(zdir / "board.zip", "w") as zf:
        for p in paths.values():
            zf.write(p, p.name)
        info = zipfile.ZipInfo("x")
        info.filename = ""
        zf.writestr(info, b"G04 nameless*\nM02*\n")
    msg = check_refuses(zdir / "board.zip", tmp_path, "board.zip")
    assert "no file name" in msg


def test_netlist_coordinate_with_a_superscript_digit(tmp_path):
    """Coverage-guided fuzzing of the IPC-D-356 reader (benchmarks/fuzz_parsers_atheris.py):
    ``"²".isdigit()`` is True but ``int("²")`` raises ValueError, so an X location ``0²2000``
    passed the reader's digit check and crashed it. It is now a field that is not a number,
    named with its file and line."""
    board = tmp_path / "board"
    netlist = write_buck(board)["netlist"]
    lines = netlist.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("327"))
    x = lines[k].index("X", 40) + 2                     # the first digit of the X location
    lines[k] = lines[k][:x + 1] + "\u00b2" + lines[k][x + 2:]
    netlist.write_bytes("".join(lines).encode("latin-1"))     # one byte, 0xB2, as fuzzed
    check_refuses(board, tmp_path, netlist.name, range(k + 1, k + 2))


def test_second_board_refused_after_the_first_was_checked(tmp_path):
    """Fuzz kind path-tricks (seed 2026, cases 59 and 189): one extra copper file (here a link to
    a copy of the bottom layer outside the folder, as the fuzz case made it) beside a board
    made discovery see a second board, refused as bad input after the first board's report had
    been written: exit 2 with a report. Reports are now written once every board has been read."""
    board = tmp_path / "board"
    paths = write_buck(board, netlist_conductors=True)
    outside = tmp_path / "outside"
    outside.mkdir()
    (outside / "outside-copper.gbr").write_bytes(paths["L2"].read_bytes())   # bottom layer, top name
    os.symlink(outside / "outside-copper.gbr", board / "extra-copper-L1-top.gbr")
    check_refuses(board, tmp_path, "extra")


def test_drill_repeat_code_with_a_huge_count(tmp_path):
    """Fuzz kind drill repeat (seed 20261202, cases 26 and 35): an Excellon repeat code
    ``R99999999999X0.01Y0.01`` made the drill parser expand a hundred billion holes until memory
    ran out (a MemoryError traceback after 50 s). Repeat codes are now counted against the
    step-and-repeat limit before parsing, and the refusal names the file and the line."""
    board = tmp_path / "board"
    drill = write_buck(board)["drill"]
    lines = drill.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("X"))
    drill.write_text("".join(lines[:k + 1] + ["R99999999999X0.01Y0.01\n"] + lines[k + 1:]))
    msg = check_refuses(board, tmp_path, drill.name, lines=range(k + 2, k + 3))
    assert "repeat" in msg and "limit" in msg


def test_gerber_statement_two_million_characters_long(tmp_path):
    """Fuzz kind encoding long-line (seed 20261202, case 138): two million characters after an
    attribute with no '*' to end them kept the parser's statement splitter busy for hours (its
    time grows with the square of the run). A statement longer than 10,000 characters is now
    refused before parsing, naming the file and the line."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("%TA"))
    lines[k] = lines[k].rstrip("\n") + "0" * 2_000_000 + "\n"
    top.write_text("".join(lines))
    msg = check_refuses(board, tmp_path, top.name, lines=range(k + 1, k + 2))
    assert "statement" in msg


def test_zip_with_a_damaged_deflate_stream(tmp_path):
    """Fuzz kind zip-corrupt flip (seed 20261202, case 131): a flipped byte inside a member's
    compressed data raised zlib.error, which is not an OSError, and the run ended as an internal
    error (exit 3). A damaged stream is now bad input naming the archive."""
    import zipfile
    board = tmp_path / "board"
    write_buck(board)
    archive = tmp_path / "fab.zip"
    with zipfile.ZipFile(archive, "w", zipfile.ZIP_DEFLATED) as zf:
        for p in sorted(board.iterdir()):
            zf.write(p, p.name)
    data = bytearray(archive.read_bytes())
    with zipfile.ZipFile(archive) as zf:
        info = max(zf.infolist(), key=lambda m: m.compress_size)
    start = info.header_offset + 30 + len(info.filename.encode()) + len(info.extra)
    for k in range(start + 10, start + min(info.compress_size, 400), 7):
        data[k] ^= 0x5A
    archive.write_bytes(bytes(data))
    msg = check_refuses(archive, tmp_path, archive.name)
    assert "cannot extract" in msg or "refused" in msg


def test_step_and_repeat_copies_stacked_a_thousand_deep(tmp_path):
    """Fuzz kind step-repeat (seed 20261202, case 408): %SRX1000Y1I0.001J1*% around a layer's
    pour made a thousand copies 1 um apart, under the object limit, whose merge ran for minutes.
    Copies that lie on one another more than 64 deep are refused, naming the file and line."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("G01")) - 1   # the graphics follow
    end = next(i for i, line in enumerate(lines) if line.startswith("M02"))
    top.write_text("".join(lines[:k + 1] + ["%SRX1000Y1I0.001J1*%\n"] + lines[k + 1:end]
                           + ["%SR*%\n"] + lines[end:]))
    msg = check_refuses(board, tmp_path, top.name)
    assert "on top of each other" in msg and "limit" in msg


def test_a_panel_of_side_by_side_copies_still_reads(tmp_path):
    """The overlap guard leaves a true panel alone: four copies of a board stepped by more
    than its size overlap nowhere (depth 1) and read."""
    from loopcheck.readers.gerber import read_gerber
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    end = next(i for i, line in enumerate(lines) if line.startswith("M02"))
    k = next(i for i, line in enumerate(lines) if line.startswith("G01")) - 1
    top.write_text("".join(lines[:k + 1] + ["%SRX2Y2I200.0J200.0*%\n"] + lines[k + 1:end]
                           + ["%SR*%\n"] + lines[end:]))
    single = read_gerber(write_buck(tmp_path / "one")["L1"]).geometry.area
    assert abs(read_gerber(top).geometry.area - 4 * single) < 1e-6 * single


@pytest.mark.parametrize("digits, said", [(400, "vout_v: number out of range"), (5000, "4300 digits")])
def test_operating_point_integer_of_any_length(tmp_path, digits, said):
    """Fuzz kind huge-number (seed 20261202, case 1666): ``vout_v = 999...9`` (400 digits) in
    loopcheck.toml is a valid TOML integer that no float holds; float() raised OverflowError
    and the run ended as an internal error. Past Python's 4300-digit int/str limit (5000 digits)
    tomllib raises ValueError, not its decode error. Both are bad input naming the file."""
    import shutil
    board = tmp_path / "board"
    shutil.copytree(REPO / "boards" / "led-driver-tidy", board)
    toml = board / "loopcheck.toml"
    text = toml.read_text()
    assert re.search(r"(?m)^vout_v = ", text)
    toml.write_text(re.sub(r"(?m)^vout_v = .*$", "vout_v = " + "9" * digits, text))
    msg = check_refuses(board, tmp_path, "loopcheck.toml")
    assert said in msg


@pytest.mark.parametrize("digits", [400, 5000])
def test_rule_deck_threshold_integers_of_any_length(tmp_path, digits):
    """A rule deck's threshold past the float range (400 digits) or past the 4300-digit limit
    (5000): bad input naming the deck, no report written."""
    deck = tmp_path / "deck.toml"
    deck.write_text(f"[rules.hot-loop-inductance]\nwarning = {'9' * digits}\n")
    (tmp_path / "d").mkdir()
    out = tmp_path / "d" / "r.json"
    res = subprocess.run([sys.executable, "-m", "loopcheck", "check", str(REPO / "boards" / "led-driver-tidy"),
                          "--deck", str(deck), "--format", "json", "--output", str(out)], capture_output=True,
                         text=True, env=dict(os.environ, PYTHONPATH=str(REPO)), timeout=120)
    assert res.returncode == 2 and "Traceback" not in res.stderr, res.stderr
    assert res.stderr.count("\n") == 1 and "deck.toml" in res.stderr and not out.exists()


def test_netlist_outline_coordinate_of_four_hundred_digits(tmp_path):
    """Fuzz kind huge-number (seed 20261202, case 3813): one X word of a 389 outline record made
    400 digits long. Free-format words have no column width; int -> float overflowed and the
    run ended as an internal error. The word is refused naming the file and line."""
    board = tmp_path / "board"
    net = write_buck(board)["netlist"]
    lines = net.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("389"))
    lines[k] = re.sub(r"X(\d+)Y", lambda m: "X" + "2" + "9" * 400 + "Y", lines[k], count=1)
    net.write_text("".join(lines))
    msg = check_refuses(board, tmp_path, net.name, lines=range(k + 1, k + 2))
    assert "out of range" in msg


def test_step_and_repeat_with_a_zero_step_never_closed(tmp_path):
    """Fuzz kind step-repeat (seed 20261202, case 3897): %SRX1000Y1I0J0*% opened in a layer and
    never closed. A zero step stacks all thousand copies exactly on one another; the overlap
    guard counted distinct steps only (one), saw depth 1, and the merge ran past a minute.
    Refused as copies on top of each other, naming the file."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("G01")) - 1
    top.write_text("".join(lines[:k + 1] + ["%SRX1000Y1I0J0*%\n"] + lines[k + 1:]))
    t0 = time.monotonic()
    msg = check_refuses(board, tmp_path, top.name)
    assert "on top of each other" in msg and time.monotonic() - t0 < 30


def test_netlist_pin_record_repeated_twenty_thousand_times(tmp_path):
    """Fuzz kind repeat-lines (seed 20261202, case 7637): one test record of a netlist repeated
    20 000 times made 20 000 copies of one pin, and the decoupling measurement's routes ran past
    a minute. A record that repeats an earlier one field for field is read once, and said so."""
    from loopcheck.readers.ipc356 import read_ipc356
    board = tmp_path / "board"
    net = write_buck(board)["netlist"]
    lines = net.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("327") and line[20:27].strip())
    once = read_ipc356(net)
    net.write_text("".join(lines[:k + 1] + [lines[k]] * 20000 + lines[k + 1:]))
    many = read_ipc356(net)
    assert len(many.points) == len(once.points)
    assert any("20000 test records repeat" in n for n in many.notes)
    t0 = time.monotonic()
    res = subprocess.run([sys.executable, "-m", "loopcheck", "check", str(board), "--format", "json",
                          "--output", str(tmp_path / "r.json")], capture_output=True, text=True,
                         env=dict(os.environ, PYTHONPATH=str(REPO)), timeout=120)
    assert res.returncode in (0, 1), res.stderr
    assert time.monotonic() - t0 < 60


def test_region_contour_retracing_one_segment_twenty_thousand_times(tmp_path):
    """Fuzz kind repeat-lines (seed 20261202, cases 1723 and 2733): two vertex lines of a pour's
    contour repeated 20 000 times drew one segment 40 000 times over; repairing that contour
    (make_valid) grows with the square of the repeats and took 12.7 GB and 43 s before the
    geometry library gave up. Such a contour is refused before the repair, in one line naming
    the file; a writer's cut-ins (each segment drawn twice) are still repaired
    (test_reader_gerber.test_region_cut_in_makes_a_hole)."""
    board = tmp_path / "board"
    bottom = write_buck(board)["L2"]
    lines = bottom.read_text().splitlines(keepends=True)
    k = _first(lines, "G36") + 2               # the contour's first two D01 vertices
    assert lines[k].endswith("D01*\n") and lines[k + 1].endswith("D01*\n")
    bottom.write_text("".join(lines[:k + 2] + lines[k:k + 2] * 20000 + lines[k + 2:]))
    started = time.perf_counter()
    msg = check_refuses(board, tmp_path, bottom.name)
    assert "region contour" in msg and "40001 times" in msg
    assert time.perf_counter() - started < 30


def test_step_and_repeat_of_a_pour_past_the_vertex_limit(tmp_path):
    """Fuzz kinds step-repeat and delete-lines (seed 20261202, case 7210): 10 000 copies of a
    block holding a 13 000-vertex pour were 10 000 objects, under the object limit, but 130
    million vertices: 5.8 GB and 36 s. Copies now count their region vertices against
    InputLimits.max_step_repeat_vertices (here lowered to the 5-vertex pour times 99 copies)."""
    from loopcheck.errors import InputError
    from loopcheck.limits import InputLimits
    from loopcheck.readers.gerber import read_gerber

    board = tmp_path / "board"
    bottom = write_buck(board)["L2"]
    lines = bottom.read_text().splitlines(keepends=True)
    g36, g37 = _first(lines, "G36"), _first(lines, "G37")
    assert g37 - g36 == 6                      # D02 + four D01 vertices: a 5-vertex contour
    bottom.write_text("".join(lines[:g36] + ["%SRX100Y1I70J0*%\n"] + lines[g36:g37 + 1] + ["%SR*%\n"]
                              + lines[g37 + 1:]))
    tight = InputLimits(max_step_repeat_vertices=5 * 99 - 1)
    with pytest.raises(InputError, match=r"100 copies x 5 region vertices would add 495 vertices"):
        read_gerber(bottom, tight)
    assert read_gerber(bottom, InputLimits(max_step_repeat_vertices=5 * 99)) is not None


def test_outline_with_two_lines_drawn_twenty_thousand_times_over(tmp_path):
    """Fuzz kind repeat-lines on the profile (seed 20261202, case 3820): two outline lines
    repeated 20 000 times made 40 000 coincident lines whose noding grows with their square
    (killed at 23.8 GB after 96 s). A line drawn again adds nothing to an outline: each is
    joined once, and the board reads as if it were drawn once."""
    from loopcheck.readers.gerber import read_profile

    board = tmp_path / "board"
    profile = write_buck(board)["profile"]
    clean = read_profile(profile)
    lines = profile.read_text().splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.endswith("D01*\n"))
    profile.write_text("".join(lines[:k + 2] + lines[k:k + 2] * 20000 + lines[k + 2:]))
    started = time.perf_counter()
    damaged = read_profile(profile)
    assert time.perf_counter() - started < 20
    assert damaged.area == pytest.approx(clean.area, rel=1e-9)
    assert damaged.bounds == pytest.approx(clean.bounds)


def test_stroke_drawn_back_and_forth_twenty_thousand_times(tmp_path):
    """Fuzz kind repeat-lines (seed 20261202, case 8959, caught by the 2 GB criterion): two
    stroke lines of a trace repeated 20 000 times drew one segment back and forth 40 000 times
    in one polyline, whose buffer ended in bad_alloc past 3 GB (exit 2 under the harness's
    address-space limit; unbounded without it). Such a polyline is taken apart into its distinct
    segments: the copper is the same set, and the board checks as if drawn once."""
    board = tmp_path / "board"
    top = write_buck(board)["L1"]
    lines = top.read_text().splitlines(keepends=True)
    k = next(i for i in range(1, len(lines) - 1)
             if lines[i - 1].endswith(("D01*\n", "D02*\n")) and lines[i].endswith("D01*\n")
             and lines[i + 1].endswith("D01*\n"))
    top.write_text("".join(lines[:k + 2] + lines[k:k + 2] * 20000 + lines[k + 2:]))
    assert_checks_as_clean(board, tmp_path, area_rel=1e-3)
