"""Each stage's hot loop drawn zoomed in the HTML report: the window is the loop's (not the
board's), the field solve's current density is drawn as a heat map when the measurement carries
it and not otherwise, the inductance shares are tabled largest first, the text report prints the
largest shares under the inductance, and the inductance finding names the largest share."""

from __future__ import annotations

import dataclasses
import re

from loopcheck.report.html import render_html
from loopcheck.report.loopsvg import loop_window, stage_loop_measurements, stage_loop_svg
from loopcheck.report.svg import Frame
from loopcheck.report.text import render_text
from reportfixtures import make_analysis, make_project, make_result


def _viewbox(html: str, svg_id: str) -> tuple[float, float, float, float]:
    m = re.search(rf'id="{svg_id}"[^>]*viewBox="([^"]+)"', html)
    assert m, f"no svg {svg_id}"
    return tuple(float(v) for v in m.group(1).split())


def test_one_zoomed_picture_per_stage_framed_on_its_loop():
    r = make_result("tidy")
    html = render_html(r)
    assert html.count('class="loop-svg"') == len(r.analysis.stages) == 1
    x, y, w, h = _viewbox(html, "loop-view-0")
    bx, by, bw, bh = _viewbox(html, "board-view")
    assert w < 0.5 * bw and h < 0.7 * bh            # zoomed: not the board's window
    # the window holds every point of the loop's drawings with a margin of at least 2 mm
    loop = stage_loop_measurements(r.analysis.measurements, "stage1")
    pts = [p for m in loop.values() for d in m.drawings for p in d.points]
    xs, ys = [p[0] for p in pts], [-p[1] for p in pts]        # SVG y is down
    assert x + 2 <= min(xs) and max(xs) <= x + w - 2
    assert y + 2 <= min(ys) and max(ys) <= y + h - 2
    # the loop's components are labelled, once each
    svg = html[html.index('id="loop-view-0"'):]
    svg = svg[:svg.index("</svg>")]
    labels = re.findall(r"<text [^>]*>([^<]+)</text>", svg[svg.index("loop-labels"):])
    assert sorted(labels[:-1]) == ["C1", "D1", "U1"]           # the last text is the scale bar
    assert labels[-1].endswith(" mm")


def test_a_picture_per_stage_with_ids_of_its_own():
    a = make_analysis("tidy")
    second = dataclasses.replace(a.stages[0], name="stage2")
    a.stages.append(second)
    a.measurements += [dataclasses.replace(m, stage="stage2") for m in a.measurements
                       if m.stage == "stage1"]
    from loopcheck.report.common import CheckResult
    from loopcheck.rules import evaluate_all, load_deck

    p = make_project()
    html = render_html(CheckResult(analysis=a, evaluation=evaluate_all(a, load_deck(None, p), p),
                                   project=p, fail_on="error"))
    assert html.count('class="loop-svg"') == 2
    assert 'id="loop-view-0"' in html and 'id="loop-view-1"' in html
    assert 'id="zh-1-0"' in html and '#zh-1-0:not(:checked)' in html


def test_heat_map_drawn_only_from_a_density():
    tidy = render_html(make_result("tidy"))
    assert 'class="heat heat-0"' in tidy and 'class="heat heat-1"' in tidy
    assert "A/mm per A in the loop" in tidy
    assert 'class="loop-centroid"' in tidy
    sprawl = render_html(make_result("sprawl"))        # no field-solve detail
    assert 'class="loop-svg"' in sprawl                 # the loop is still drawn
    assert 'class="loop-area"' in sprawl and 'class="loop-path"' in sprawl
    assert 'class="heat ' not in sprawl and "A/mm per A" not in sprawl
    assert 'class="loop-centroid"' not in sprawl
    assert "No current-density map" in sprawl


def test_heat_cells_capped_strongest_kept():
    a = make_analysis("tidy")
    svg, info = stage_loop_svg(a.board, a.stages[0], a.measurements, key="0", max_cells=5)
    assert svg.count("h0.50v0.50") + svg.count("h1.00v1.00") == 5
    assert svg.count("h0.50v0.50") == 5                 # the strongest cells are on top
    assert info["heat_layers"] == [0]


def test_picture_placed_by_terminals_when_nothing_was_measured():
    a = make_analysis("tidy")
    ms = [m for m in a.measurements if not m.quantity.startswith("hot_loop.")]
    loop = stage_loop_measurements(ms, "stage1")
    fr = loop_window(a.board, a.stages[0], loop)
    assert isinstance(fr, Frame)
    for t in a.stages[0].hot_loop:
        p = a.board.terminals[t]
        assert fr.minx < p.x_mm < fr.maxx and fr.miny < p.y_mm < fr.maxy
    svg, _ = stage_loop_svg(a.board, a.stages[0], ms, key="0")
    assert 'class="loop-pad"' in svg and 'class="heat ' not in svg


def test_shares_table_largest_first():
    html = render_html(make_result("tidy"))
    table = html[html.index('<table class="shares">'):]
    table = table[:table.index("</table>")]
    parts = re.findall(r"<tr><td>([^<]+)</td><td class=\"num\">([0-9.]+) %</td></tr>", table)
    assert parts == [("part U1.1-U1.2", "41.5"), ("VIN copper on top", "30.0"),
                     ("vias of GND", "16.5"), ("GND copper on top", "12.0")]
    assert '<table class="shares">' not in render_html(make_result("sprawl"))


def test_text_names_the_largest_shares_under_the_inductance():
    lines = render_text(make_result("tidy")).splitlines()
    i = next(k for k, x in enumerate(lines) if x.strip().startswith("hot-loop inductance"))
    assert lines[i + 1].strip() == ("largest shares: part U1.1-U1.2 41.5 %, VIN copper on top "
                                    "30.0 %, vias of GND 16.5 %")
    assert "largest shares" not in render_text(make_result("sprawl"))


def _inductance_finding(variant: str, value: float):
    from loopcheck.rules import evaluate_all, load_deck

    a = make_analysis(variant)
    m = next(m for m in a.measurements if m.quantity == "hot_loop.inductance")
    m.value = value
    p = make_project()
    ev = evaluate_all(a, load_deck(None, p), p)
    return next(f for f in ev.findings if f.rule == "hot-loop-inductance")


def test_inductance_finding_names_the_largest_share():
    f = _inductance_finding("tidy", 20.0)
    assert f.message.endswith("; largest share: part U1.1-U1.2 (41.5 %)")
    assert "largest share" not in _inductance_finding("sprawl", 20.0).message
