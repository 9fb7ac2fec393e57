"""Excellon files without their number format: read from the file, a parameter file beside it, the
project file's [files] words, or guessed and checked against the copper (plated holes on pads)."""

from __future__ import annotations

from pathlib import Path

import pytest

from loopcheck.errors import InputError
from loopcheck.load import load_board
from loopcheck.project import load_project
from loopcheck.readers import drill_format
from loopcheck.readers.drill import read_excellon
from loopcheck.readers.drill_format import DrillFormat, parse_format_words
from fab_habits import bare_excellon
from synth_fixtures import write_buck

CORPUS = Path(__file__).parents[1].parent / "shared" / "corpus"


def key(holes):
    return sorted((round(h.x_mm, 2), round(h.y_mm, 2), round(h.diameter_mm, 2)) for h in holes if h.end is None)


@pytest.fixture()
def buck(tmp_path):
    paths = write_buck(tmp_path / "b")
    return tmp_path / "b", paths, key(read_excellon(paths["drill"]).holes)


# --- in the file and beside it ---------------------------------------------------------------

def test_format_stated_in_the_file(tmp_path):
    text = "M48\n;FILE_FORMAT=3:3\nMETRIC,TZ\nT1C0.800\n%\nT1\nX12500Y-3\nM30\n"
    (tmp_path / "a.drl").write_text(text)
    d = read_excellon(tmp_path / "a.drl")
    assert (d.holes[0].x_mm, d.holes[0].y_mm) == pytest.approx((12.5, -0.003))
    assert not d.format_candidates and d.number_format.source == "the drill file"


def test_format_comment_with_suppressed_zeros():
    fmt = drill_format.in_file(";FORMAT={3:3/ absolute / metric / suppress trailing zeros}\nMETRIC\n")
    assert (fmt.units, fmt.integer_digits, fmt.decimal_digits, fmt.zeros) == ("mm", 3, 3, "trailing")


@pytest.mark.parametrize("name,text", [
    ("nc_param.txt", "FORMAT 2.4\nOUTPUT-UNITS ENGLISH\nSUPPRESS-LEAD-ZEROES YES\nSUPPRESS-TRAIL-ZEROES NO\n"),
    ("ncdrill.log", "  OUTPUT-UNITS   ENGLISH\n  INTEGER-PLACES 2\n  DECIMAL-PLACES 4\n  SUPPRESS-LEAD-ZEROES YES\n"),
    ("board.log", "*****  DRILL LIST  *****\nCoordinate Format : 2V4\nZero Suppress : Leading\nUnit : inch\n"),
])
def test_format_from_a_parameter_file_beside_the_drill(buck, name, text):
    folder, paths, expected = buck
    drl = bare_excellon(paths["drill"], "inch", 2, 4, "leading", state_units=False)
    drl = drl.rename(folder / "board.drl")
    (folder / name).write_text(text)
    d = read_excellon(drl)
    assert not d.format_candidates
    assert name in d.number_format.source
    assert key(d.holes) == expected
    b = load_board(load_project(folder))
    assert any(f"number format from the parameter file {name}" in a or f"drill log {name}" in a
               for a in b.assumptions)


# --- guessed and checked against the copper -----------------------------------------------------

@pytest.mark.parametrize("units,integer,decimal,zeros,state_units", [
    ("inch", 2, 4, "leading", True),      # bare INCH: the common implicit 2.4
    ("inch", 2, 5, "leading", True),      # INCH but 2.5: the copper tells
    ("mm", 3, 3, "leading", True),        # METRIC without digits
    ("mm", 3, 3, "trailing", False),      # nothing stated at all, trailing zeros left out
    ("inch", 2, 4, "trailing", False),
])
def test_guessed_format_is_the_one_whose_holes_land_on_copper(buck, units, integer, decimal, zeros,
                                                              state_units):
    folder, paths, expected = buck
    bare_excellon(paths["drill"], units, integer, decimal, zeros, state_units=state_units)
    d = read_excellon(paths["drill"])
    assert len(d.format_candidates) > 1          # the reader alone cannot know
    b = load_board(load_project(folder))
    assert key(b.holes) == expected
    note = next(a for a in b.assumptions if "number format not given" in a)
    assert f"read as {units}" in note and "plated holes land on the outer copper" in note
    assert '"buck-plated.drl" = "drill ' in note       # the [files] line that fixes it


def test_project_words_give_the_format(buck):
    folder, paths, expected = buck
    bare_excellon(paths["drill"], "mm", 3, 3, "trailing", state_units=False)
    (folder / "loopcheck.toml").write_text('[files]\n"buck-plated.drl" = "drill:plated mm 3.3 omit-trailing"\n')
    b = load_board(load_project(folder))
    assert key(b.holes) == expected
    assert not any("number format not given" in a for a in b.assumptions)


def test_project_words_are_checked(buck):
    folder, paths, _ = buck
    (folder / "loopcheck.toml").write_text('[files]\n"buck-plated.drl" = "drill mm 3.3 sideways"\n')
    with pytest.raises(InputError) as err:
        load_project(folder)
    assert err.value.line == 2 and "sideways" in str(err.value)


def test_no_candidate_on_copper_is_refused(buck):
    folder, paths, _ = buck
    # holes far from any copper, whatever the format
    paths["drill"].write_text("M48\nT1C0.0300\n%\nT1\nX-987654Y-876543\nX-876543Y-987654\nX-998877Y-887766\nM30\n")
    with pytest.raises(InputError) as err:
        load_board(load_project(folder))
    msg = str(err.value)
    assert msg.startswith(str(paths["drill"])) and "[files]" in msg and "none of the" in msg


def test_candidates_and_words_round_trip():
    c = drill_format.candidates(DrillFormat(units="inch"), digits_needed=True)
    assert c[0] == DrillFormat("inch", 2, 4, "leading", "guessed")
    assert {x.zeros for x in c} == {"leading", "trailing"}
    assert parse_format_words(c[0].words()) == DrillFormat("inch", 2, 4, "leading", "the project file's [files]")
    with pytest.raises(ValueError):
        parse_format_words("inch 2.4 upside-down")


# --- the parser's own exception text never reaches the user ----------------------------------

def test_tool_definitions_with_feed_and_speed(tmp_path):
    # METRIC with F/S tool parameters without a decimal point: once "bad operand type for unary -"
    p = tmp_path / "a.drl"
    p.write_text("M48\nMETRIC\nT1C0.800F200S65\nT2F00S00C1.000\n%\nT1\nX1.0Y1.0\nT2\nX2.0Y2.0\nM30\n")
    d = read_excellon(p)
    assert [(h.x_mm, h.diameter_mm) for h in d.holes] == [(1.0, 0.8), (2.0, 1.0)]


def test_feed_and_speed_on_a_synthesized_board(buck):
    folder, paths, expected = buck
    bare_excellon(paths["drill"], "mm", 3, 3, "leading", state_units=True, state_format=True,
                  tool_params="F200S65")
    assert key(load_board(load_project(folder)).holes) == expected


@pytest.mark.parametrize("body,words", [
    ("T1\nX1.0Y1.0\nQ77\n", "statement not understood as Excellon: 'Q77'"),
    ("T3\nX1.0Y1.0\n", "tool T3 is selected but never defined"),
])
def test_our_words_not_the_parsers(tmp_path, body, words):
    p = tmp_path / "a.drl"
    p.write_text("M48\nMETRIC\nT1C0.8\n%\n" + body + "M30\n")
    with pytest.raises(InputError) as err:
        read_excellon(p)
    assert words in str(err.value) and "NoneType" not in str(err.value)


# --- the corpus ---------------------------------------------------------------------------------

@pytest.mark.corpus
@pytest.mark.parametrize("folder,board", [("geda", "controller"), ("geda", "driver"), ("pcb-rnd", None),
                                          ("diptrace", "mainboard")])
def test_corpus_bare_inch_files_are_checked_against_copper(folder, board):
    if not (CORPUS / folder).is_dir():
        pytest.skip(f"../shared/corpus/{folder} is absent")
    b = load_board(load_project(CORPUS / folder), board=board)
    notes = [a for a in b.assumptions if "number format not given" in a and "plated holes land" in a]
    assert notes and all("read as inch, 2.4 digits" in n for n in notes)


def test_decimal_coordinates_without_units_take_the_units_that_land(buck):
    folder, paths, expected = buck
    holes = read_excellon(paths["drill"]).holes
    lines = ["M48", "T1C0.0394", "T2C0.0157", "%"]      # tool sizes in inch, no INCH statement
    for t, d in (("T1", 1.0), ("T2", 0.4)):
        lines.append(t)
        lines += [f"X{h.x_mm / 25.4:.4f}Y{h.y_mm / 25.4:.4f}" for h in holes if round(h.diameter_mm, 2) == d]
    paths["drill"].write_text("\n".join(lines + ["M30"]) + "\n")
    b = load_board(load_project(folder))
    assert key(b.holes) == expected
    assert any("read as inch" in a for a in b.assumptions)
