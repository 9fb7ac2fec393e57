"""Excellon reader: hand-written drill files, plating rules, slots, bad input, and the corpus."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from loopcheck.errors import InputError
from loopcheck.limits import InputLimits
from loopcheck.readers.drill import read_excellon, sniff_excellon
from loopcheck.readers.gerber import sniff_gerber

import references as ref

CORPUS = ref.CORPUS


def drill(tmp_path: Path, text: str, name: str = "board.drl") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


METRIC = """M48
; #@! TF.GenerationSoftware,Writer,1.0
; #@! TF.FileFunction,Plated,1,2,PTH
FMAT,2
METRIC
T1C0.300
T2C1.000
%
G90
G05
T1
X10.0Y5.0
X12.5Y5.0
T2
X20.0Y-3.0
T0
M30
"""


def test_metric_holes_and_file_function(tmp_path):
    d = read_excellon(drill(tmp_path, METRIC))
    assert [(h.x_mm, h.y_mm, h.diameter_mm) for h in d.holes] == [
        (10.0, 5.0, 0.3), (12.5, 5.0, 0.3), (20.0, -3.0, 1.0)]
    assert d.plated is True and all(h.plated for h in d.holes)
    assert d.attributes["FileFunction"] == "Plated,1,2,PTH"
    assert d.units == "mm"


def test_inch_trailing_zeros_kept(tmp_path):
    # INCH,TZ: trailing zeros kept, leading suppressed, 2.4 format: X15000 = 1.5000 in
    text = "M48\nINCH,TZ\nT1C0.040\n%\nT1\nX15000Y-2500\nM30\n"
    d = read_excellon(drill(tmp_path, text, "x.drl"))
    (h,) = d.holes
    assert h.x_mm == pytest.approx(1.5 * 25.4) and h.y_mm == pytest.approx(-0.25 * 25.4)
    assert h.diameter_mm == pytest.approx(0.040 * 25.4)
    assert d.units == "inch"


def test_nonplated_from_file_function(tmp_path):
    text = METRIC.replace("TF.FileFunction,Plated,1,2,PTH", "TF.FileFunction,NonPlated,1,2,NPTH")
    d = read_excellon(drill(tmp_path, text))
    assert d.plated is False and not any(h.plated for h in d.holes)


def test_plating_from_file_name(tmp_path):
    text = "M48\nMETRIC\nT1C3.2\n%\nT1\nX1.0Y1.0\nM30\n"
    assert read_excellon(drill(tmp_path, text, "board-NPTH.drl")).plated is False
    assert read_excellon(drill(tmp_path, text, "board.unplated-drill.cnc")).plated is False
    assert read_excellon(drill(tmp_path, text, "board-PTH.drl")).plated is True
    unknown = read_excellon(drill(tmp_path, text, "board.drl"))
    assert unknown.plated is None and unknown.holes[0].plated   # unmarked holes count as plated


def test_composite_file_with_type_comments(tmp_path):
    # one file for both: ;TYPE=PLATED / ;TYPE=NON_PLATED before each group of tool definitions
    text = ("M48\n;FILE_FORMAT=4:4\nMETRIC,LZ\n;TYPE=PLATED\nT1F00S00C0.3000\n;TYPE=NON_PLATED\n"
            "T2F00S00C3.0000\n%\nT01\nX0010000Y0010000\nT02\nX0020000Y0010000\nX0030000Y0010000\nM30\n")
    d = read_excellon(drill(tmp_path, text, "composite.TXT"))
    assert [h.plated for h in d.holes] == [True, False, False]
    assert d.plated is None                  # mixed
    assert d.holes[1].x_mm == pytest.approx(20.0)


def test_tool_attributes_set_plating_per_tool(tmp_path):
    text = ("M48\nMETRIC\n; #@! TA.AperFunction,Plated,PTH,ViaDrill\nT1C0.3\n"
            "; #@! TA.AperFunction,NonPlated,NPTH,ComponentDrill\nT2C3.0\n%\nT1\nX1.0Y1.0\nT2\nX2.0Y2.0\nM30\n")
    d = read_excellon(drill(tmp_path, text))
    assert [h.plated for h in d.holes] == [True, False]


def test_routed_slot(tmp_path):
    text = "M48\nMETRIC\nT1C0.8\n%\nG90\nG05\nT1\nG00X1.0Y2.0\nM15\nG01X1.0Y4.5\nM16\nG05\nX9.0Y9.0\nM30\n"
    d = read_excellon(drill(tmp_path, text))
    assert d.slot_count == 1
    slot, hole = d.holes
    assert (slot.x_mm, slot.y_mm, slot.end) == (1.0, 2.0, (1.0, 4.5))
    assert hole.end is None and (hole.x_mm, hole.y_mm) == (9.0, 9.0)


def test_g85_slot(tmp_path):
    text = "M48\nMETRIC\nT1C1.0\n%\nG90\nT1\nX1.0Y1.0G85X5.0Y1.0\nX7.0Y7.0\nM30\n"
    d = read_excellon(drill(tmp_path, text))
    slot, hole = d.holes
    assert slot.end == (5.0, 1.0) and (slot.x_mm, slot.y_mm) == (1.0, 1.0)
    assert slot.diameter_mm == 1.0 and hole.end is None and (hole.x_mm, hole.y_mm) == (7.0, 7.0)


def test_routed_arc_becomes_a_chord_slot(tmp_path):
    text = "M48\nMETRIC\nT1C1.0\n%\nT1\nG00X0.0Y0.0\nM15\nG02X5.0Y5.0I5.0J0.0\nM16\nG05\nM30\n"
    d = read_excellon(drill(tmp_path, text))
    (slot,) = d.holes
    assert (slot.x_mm, slot.y_mm, slot.end) == (0.0, 0.0, (5.0, 5.0))
    assert d.notes and "chord" in d.notes[0]


def test_bad_statement_gives_line(tmp_path):
    text = "M48\nMETRIC\nT1C1.0\n%\nT1\nX1.0Y1.0G85X5.0Y1.0\nT7\nM30\n"
    p = drill(tmp_path, text)
    with pytest.raises(InputError) as err:
        read_excellon(p)
    assert err.value.line == 7 and err.value.path == str(p)   # line of the original file
    assert "\n" not in str(err.value)


def test_garbage_and_limits(tmp_path):
    junk = tmp_path / "junk.drl"
    junk.write_bytes(bytes(range(256)) * 20)
    with pytest.raises(InputError, match="binary"):
        read_excellon(junk)
    assert not sniff_excellon(junk)
    with pytest.raises(InputError, match="over the limit"):
        read_excellon(drill(tmp_path, METRIC), InputLimits(max_file_bytes=20))


def test_sniff(tmp_path):
    assert sniff_excellon(drill(tmp_path, METRIC))
    g = tmp_path / "copper.gbr"
    g.write_text("%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,1*%\nD10*\nX0Y0D03*\nM02*\n")
    assert not sniff_excellon(g) and sniff_gerber(g)
    assert not sniff_gerber(drill(tmp_path, METRIC))


# ---------------------------------------------------------------- corpus


def corpus_file(rel: str) -> Path:
    p = CORPUS / rel
    if not p.exists():
        pytest.skip(f"corpus absent: {p}")
    return p


def count_hits(text: str) -> dict[str, int]:
    """An independent count of drill hits per tool: coordinate lines after the header (M95 / %),
    outside routed sections (between G00 and G05). Not a parser: just enough for the check."""
    counts: dict[str, int] = {}
    body = False
    tool = None
    routing = False
    for line in text.splitlines():
        line = line.strip()
        if line in ("%", "M95"):
            body = True
            continue
        if not body:
            continue
        if m := re.fullmatch(r"T0*(\d+)", line):
            tool = m[1]
        elif line.startswith("G00"):
            routing = True
        elif line.startswith("G05"):
            routing = False
        elif re.match(r"[XY][+-]?\d", line) and not routing and tool:
            counts[tool] = counts.get(tool, 0) + 1
    return counts


DRILLS = [
    "altium-composite-drill/NC Drill/LimeSDR-QPCIe_1v2-RoundHoles.TXT",
    "altium-composite-drill/NC Drill/LimeSDR-QPCIe_1v2-SlotHoles.TXT",
    "diptrace/keyboard.drl", "diptrace/mainboard.drl", "diptrace/panel.drl",
    "eagle-newer/drills.xln", "fritzing/combined.txt",
    "geda/controller.plated-drill.cnc", "geda/controller.unplated-drill.cnc",
    "geda/driver.plated-drill.cnc", "geda/driver.unplated-drill.cnc",
    "kicad-older/chibi_2024.drl",
    *[f"kicad-x2-tests/{v}/Flashpads-{k}.drl" for v in ["nox2ap", "nox2noap", "x2ap", "x2noap"] for k in ["PTH", "NPTH"]],
    "pcb-rnd/power-art.xln", "upverter/design_export.drl",
]


@pytest.mark.parametrize("rel", DRILLS)
def test_corpus_drill_files_read(rel):
    p = corpus_file(rel)
    d = read_excellon(p)
    assert d.holes and all(h.diameter_mm > 0.05 for h in d.holes)
    drilled = sum(1 for h in d.holes if h.end is None)
    assert drilled == sum(count_hits(p.read_text()).values())


def test_corpus_altium_composite_plating():
    d = read_excellon(corpus_file("altium-composite-drill/NC Drill/LimeSDR-QPCIe_1v2-RoundHoles.TXT"))
    text = corpus_file("altium-composite-drill/NC Drill/LimeSDR-QPCIe_1v2-RoundHoles.TXT").read_text()
    hits = count_hits(text)
    non_plated_tools = {"11", "12", "13", "14"}     # listed after ;TYPE=NON_PLATED in the header
    assert sum(1 for h in d.holes if not h.plated) == sum(v for k, v in hits.items() if k in non_plated_tools)
    assert sum(1 for h in d.holes if h.plated) == sum(v for k, v in hits.items() if k not in non_plated_tools)
    assert d.plated is None


def test_corpus_altium_slots():
    d = read_excellon(corpus_file("altium-composite-drill/NC Drill/LimeSDR-QPCIe_1v2-SlotHoles.TXT"))
    assert d.slot_count == 3 and all(h.end is not None and h.plated for h in d.holes)
    first = d.holes[0]
    # G00X0185225Y009495 / G01Y00972 in 4:4 with leading zeros kept: (185.225, 94.95) -> (185.225, 97.2)
    assert (first.x_mm, first.y_mm) == pytest.approx((185.225, 94.95))
    assert first.end == pytest.approx((185.225, 97.2))
    assert first.diameter_mm == pytest.approx(0.8)


def test_corpus_kicad_pth_and_npth():
    pth = read_excellon(corpus_file("kicad-x2-tests/x2ap/Flashpads-PTH.drl"))
    npth = read_excellon(corpus_file("kicad-x2-tests/x2ap/Flashpads-NPTH.drl"))
    assert pth.plated is True and npth.plated is False
    assert pth.slot_count == 16 and npth.slot_count == 0
    assert len(npth.holes) == 4


def test_corpus_geda_plating_from_names():
    assert read_excellon(corpus_file("geda/driver.plated-drill.cnc")).plated is True
    assert read_excellon(corpus_file("geda/driver.unplated-drill.cnc")).plated is False


def test_corpus_gerber_written_drill_data():
    # upverter writes its drill data twice: Excellon (.drl) and as Gerber flashes (.xln)
    a = read_excellon(corpus_file("upverter/design_export.drl"))
    b = read_excellon(corpus_file("upverter/design_export.xln"))
    key = lambda h: (round(h.x_mm, 3), round(h.y_mm, 3), round(h.diameter_mm, 3))  # noqa: E731
    assert sorted(map(key, a.holes)) == sorted(map(key, b.holes))
