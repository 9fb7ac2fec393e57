"""Hand-made Analysis fixtures for the rules and report tests (invented numbers, demo only).

A small two-layer board drawn with shapely, one buck stage with its roles, and measurements with
drawings, in a "tidy" and a "sprawl" variant; so the rules and reports can be tested without the
readers and the measurement pipeline.
"""

from __future__ import annotations

from pathlib import Path

from shapely.geometry import LineString, Point, box
from shapely.ops import unary_union

from loopcheck.analysis import Analysis
from loopcheck.board import Board, CopperLayer, Dielectric, Outline, Pad, Stackup
from loopcheck.findings import Drawing, Finding, Measurement
from loopcheck.powerstage import OperatingPoint, Role, Stage
from loopcheck.project import Project, RulesSpec, Waiver


def make_board(name: str = "fixture-board", spread: float = 1.0) -> Board:
    s = spread
    pads = [
        Pad("VIN", "C1", "1", 5 * s, 20, (0,), width_mm=1.0, height_mm=1.2),
        Pad("GND", "C1", "2", 5 * s, 16, (0,), width_mm=1.0, height_mm=1.2),
        Pad("VIN", "U1", "1", 12 * s, 22, (0,), width_mm=0.6, height_mm=1.0),
        Pad("SW", "U1", "2", 14 * s, 22, (0,), width_mm=0.6, height_mm=1.0),
        Pad("GND", "U1", "3", 16 * s, 22, (0,), width_mm=0.6, height_mm=1.0),
        Pad("SW", "D1", "1", 14 * s, 12, (0,), width_mm=1.5, height_mm=1.5),
        Pad("GND", "D1", "2", 10 * s, 12, (0,), width_mm=1.5, height_mm=1.5),
        Pad("SW", "L1", "1", 22 * s, 16, (0,), width_mm=2.0, height_mm=2.0),
        Pad("LED+", "L1", "2", 30 * s, 16, (0,), width_mm=2.0, height_mm=2.0),
        Pad("LED+", "RS1", "1", 34 * s, 12, (0,), width_mm=1.0, height_mm=1.0),
        Pad("ISN", "RS1", "2", 34 * s, 8, (0,), width_mm=1.0, height_mm=1.0),
        Pad("GND", "", "", 8 * s, 14, (0, 1), hole_mm=0.3, is_via=True),
    ]
    top_shapes = [box(p.x_mm - 0.6, p.y_mm - 0.6, p.x_mm + 0.6, p.y_mm + 0.6)
                  for p in pads]
    top_shapes += [
        LineString([(5 * s, 20), (12 * s, 22)]).buffer(0.4),
        LineString([(14 * s, 22), (14 * s, 12), (22 * s, 16)]).buffer(0.6),
        LineString([(30 * s, 16), (34 * s, 12)]).buffer(0.5),
        LineString([(5 * s, 16), (8 * s, 14), (10 * s, 12)]).buffer(0.5),
    ]
    top = unary_union(top_shapes)
    bottom = box(1, 1, 38 * s, 26).difference(Point(20 * s, 14).buffer(3))
    outline = box(0, 0, 40 * s, 28)
    layers = [
        CopperLayer(0, "top", "board-F_Cu.gbr", top, 35e-6),
        CopperLayer(1, "bottom", "board-B_Cu.gbr", bottom, 35e-6),
    ]
    return Board(name=name, layers=layers, outline=Outline(outline, "profile board-Edge_Cuts.gbr"),
                 stackup=Stackup([35e-6, 35e-6], [Dielectric(1.51e-3, 4.5)], 1.6e-3),
                 pads=pads, netlist_file="board.ipc", source="fixtures")


def make_stage(spread: float = 1.0) -> Stage:
    return Stage(
        name="stage1", topology="buck", switching="integrated", switch_node="SW",
        input_net="VIN", output_net="LED+", ground_net="GND",
        roles=[Role("switch", "U1", ("U1.1", "U1.2")), Role("rectifier", "D1", ("D1.1", "D1.2")),
               Role("inductor", "L1"), Role("input_cap", "C1", ("C1.1", "C1.2")),
               Role("sense_resistor", "RS1", ("RS1.1", "RS1.2")), Role("controller", "U1")],
        hot_loop=("C1.1", "U1.1", "U1.2", "D1.1", "D1.2", "C1.2"),
        operating_point=OperatingPoint(vin_min_v=20, vin_max_v=40, iout_a=1.5,
                                       sources={"iout_a": "loopcheck.toml",
                                                "edge_s": "default"}),
    )


def _m(q, value, unit, label, **kw) -> Measurement:
    return Measurement(quantity=q, value=value, unit=unit, label=label, stage="stage1", **kw)


def tidy_field_detail() -> dict:
    """A field-solve detail for the tidy loop, in the shape measure/loopfield.py gives it:
    shares (deliberately not in order), cells per layer name [x, y, dx, dy, Jx, Jy] (mm, A/mm per
    A), centroid lines per net."""
    top = [[x + 0.25, y + 0.25, 0.5, 0.5, 0.8 if y >= 20 else 0.1, 0.05]
           for x in (5, 6, 7, 8) for y in (17.5, 18.5, 19.5, 20.0)]
    bottom = [[x + 0.5, y + 0.5, 1.0, 1.0, -0.05, 0.01] for x in (5, 6, 7, 8) for y in (17, 18, 19)]
    return {"inductance_method": "field",
            "mesh": {"fine_mm": 0.5, "coarse_mm": 1.0, "cells": 28},
            "inductance_shares": [{"part": "GND copper on top", "share_pct": 12.0},
                                  {"part": "part U1.1-U1.2", "share_pct": 41.5},
                                  {"part": "VIN copper on top", "share_pct": 30.0},
                                  {"part": "vias of GND", "share_pct": 16.5}],
            "current_density_a_per_mm": {"top": top, "bottom": bottom},
            "current_centroid": [{"net": "VIN", "points": [[5.0, 20.0], [8.0, 20.4]]},
                                 {"net": "GND", "points": [[7.0, 17.6], [5.0, 18.1]]}]}


def make_measurements(variant: str = "sprawl") -> list[Measurement]:
    s = 1.0
    big = variant == "sprawl"
    loop = [(5 * s, 20), (12 * s, 22), (14 * s, 22), (14 * s, 12), (10 * s, 12), (5 * s, 16)]
    if not big:
        loop = [(5, 20), (8, 20.5), (9, 20.5), (9, 18), (7, 17.5), (5, 18)]
    return [
        _m("hot_loop.area", 182.0 if big else 21.5, "mm2", "hot-loop area", x_mm=9.5, y_mm=17.0,
           layer="top", terminals=("C1.1", "U1.1", "D1.2", "C1.2"), nets=("VIN", "SW", "GND"),
           refs=("C1", "U1", "D1"), assumptions=("loop routes follow copper centre lines",),
           drawings=[Drawing("polygon", loop, None)]),
        _m("hot_loop.inductance", 17.2 if big else 3.9, "nH", "hot-loop inductance",
           x_mm=9.5, y_mm=17.0, layer="top", terminals=("C1.1", "U1.1"),
           assumptions=("no plane under the loop",),
           detail={} if big else tidy_field_detail()),
        _m("hot_loop.vias", 1 if big else 0, "count", "vias in the hot loop", x_mm=8, y_mm=14),
        _m("hot_loop.overshoot", 8.0 if big else 2.0, "%", "switching overshoot L di/dt"),
        _m("input_cap.path_length", 18.4 if big else 2.1, "mm", "input capacitor to switch",
           x_mm=5, y_mm=20, layer="top", terminals=("C1.1", "U1.1"), nets=("VIN",), refs=("C1",),
           drawings=[Drawing("polyline", [(5, 20), (12, 22)], "top")]),
        _m("controller_decoupling.path_length", None, "mm", "controller supply pin to its capacitor",
           not_made="no controller decoupling capacitor found"),
        _m("sense.kelvin_error", 3.1 if big else 0.21, "%", "sense error from shared copper",
           x_mm=34, y_mm=10, layer="top", terminals=("RS1.1", "RS1.2"), nets=("LED+", "ISN"),
           refs=("RS1",), drawings=[Drawing("polyline", [(34, 12), (30, 12), (16, 22)], "top"),
                                    Drawing("polyline", [(34, 8), (16, 20)], "top")]),
        _m("sense.pair_area", 14.0 if big else 3.0, "mm2", "area between the sense traces",
           x_mm=25, y_mm=15, layer="top", refs=("RS1",)),
        _m("sense.switch_node_clearance", 0.6 if big else 2.5, "mm",
           "closest approach of sense copper to switch node", x_mm=15, y_mm=20, layer="top",
           nets=("ISN", "SW")),
        _m("path.input.temperature_rise", 4.0, "C", "IPC-2221 temperature rise", x_mm=8,
           y_mm=21, layer="top", nets=("VIN",)),
        _m("path.output.temperature_rise", 24.0 if big else 6.0, "C", "IPC-2221 temperature rise",
           x_mm=32, y_mm=14, layer="top", nets=("LED+",)),
        _m("path.output.temperature_rise_ipc2152", 15.0 if big else 4.0, "C",
           "IPC-2152-style temperature rise", x_mm=32, y_mm=14, layer="top", nets=("LED+",)),
        _m("copper_loss", 1.4 if big else 0.3, "%", "copper loss, share of output power"),
        # 18 W out: copper 0.252 / 0.054 W, loop energy per edge 0.036 / 0.009 W
        _m("layout_loss", 1.6 if big else 0.35, "%", "efficiency points the layout costs",
           detail={"conduction_w": 0.252 if big else 0.054,
                   "switching_w": 0.036 if big else 0.009, "output_power_w": 18.0,
                   "paths_missing": []}),
        _m("switch_node.area", 30.0, "mm2", "switch-node copper beyond its pads", x_mm=18,
           y_mm=16, layer="top", nets=("SW",)),
        _m("switch_node.capacitance", 3.2, "pF", "switch-node capacitance", x_mm=18, y_mm=16,
           nets=("SW",)),
    ]


def make_analysis(variant: str = "sprawl", integrity: list[Finding] | None = None) -> Analysis:
    return Analysis(board=make_board(f"led-{variant}"), integrity=list(integrity or []),
                    stages=[make_stage()], measurements=make_measurements(variant),
                    assumptions=["copper 35 um on both layers (default)",
                                 "edge time 20 ns (default)",
                                 "stage1: operating point: output current 1.5 A (loopcheck.toml)"])


def make_project(tmp: Path | None = None, waivers=(), thresholds=None, stage_thresholds=None,
                 deck: str = "default") -> Project:
    path = (tmp / "loopcheck.toml") if tmp is not None else None
    return Project(path=path, fab=tmp or Path("."), name="fixture",
                   rules=RulesSpec(deck=deck, thresholds=dict(thresholds or {}),
                                   stage_thresholds=dict(stage_thresholds or {})),
                   waivers=[Waiver(*w) for w in waivers])


def make_result(variant: str = "sprawl", waivers=(), fail_on: str = "error", deck: str = "default",
                tmp: Path | None = None, integrity: list[Finding] | None = None):
    """A CheckResult of the fixture board, evaluated by a packaged deck."""
    from loopcheck.report.common import CheckResult
    from loopcheck.rules import evaluate_all, load_deck

    analysis = make_analysis(variant, integrity=integrity)
    project = make_project(tmp, waivers=waivers, deck=deck)
    ev = evaluate_all(analysis, load_deck(None, project), project)
    return CheckResult(analysis=analysis, evaluation=ev, project=project, fail_on=fail_on)


BOARDS_DIR = Path(__file__).resolve().parents[1] / "boards"


_ANALYSES: dict = {}


def cached_analyse(board, project, **kw):
    """The measurement pipeline, run once per demo board per test session (it takes seconds);
    keyed by what the analysis depends on, so a copy of a board with other waivers shares it.
    The run's options (time budget, inductance method) are not passed: the demo boards measure
    well inside the default budget."""
    import os

    from loopcheck.analysis import analyse

    key = (board.name, tuple((os.path.basename(x.file or ""), round(x.copper_area_mm2, 3))
                             for x in board.layers), len(board.pads),
           repr(project.operating_point), repr(project.stages), repr(project.components),
           repr(project.stackup))
    if key not in _ANALYSES:
        _ANALYSES[key] = analyse(board, project)
    return _ANALYSES[key]
