"""Issue 11: nothing passes that was not checked.

A measurement module that raises (a bug) makes the run exit 3 whatever --fail-on says, and is
named as an internal error in every format, with what to send to get it fixed; a reason of the
board (MeasurementGap) stays a stated gap; an exception anywhere in the CLI exits 3 with one
message and no traceback on the terminal; the time budget turns the measurements it did not
reach into stated gaps."""

from __future__ import annotations

import json
import tempfile
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from click.testing import CliRunner

from loopcheck.cli import main

TIDY = Path(__file__).resolve().parents[1] / "boards" / "led-driver-tidy"

# (module name in the reports, the module, its entry function)
MODULES = [
    ("hot loop", "loopcheck.measure.hotloop", "measure_hot_loop"),
    ("input capacitor", "loopcheck.measure.decoupling", "measure_input_cap"),
    ("controller decoupling", "loopcheck.measure.decoupling", "measure_controller_decoupling"),
    ("sense resistor", "loopcheck.measure.sense", "measure_sense"),
    ("high-current paths", "loopcheck.measure.current", "measure_paths"),
    ("switch node", "loopcheck.measure.switchnode", "measure_switch_node"),
    ("layout loss", "loopcheck.measure.layoutloss", "measure_layout_loss"),
]


@pytest.fixture(autouse=True)
def _tracebacks_in_tmp(tmp_path, monkeypatch):
    """The traceback files go to this test's own temporary folder."""
    folder = tmp_path / "tmp"
    folder.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(folder))
    return folder


def _need_tidy():
    if not (TIDY / "loopcheck.toml").exists():
        pytest.skip("demo board led-driver-tidy not built (boards/make_demo_boards.py)")


def _stub_all_but(monkeypatch, target: str | None, exc: BaseException | None):
    """Every measurement module returns nothing quickly; ``target`` raises ``exc``."""
    import importlib

    for name, mod, fn in MODULES:
        m = importlib.import_module(mod)
        if name == target:
            def boom(*a, _exc=exc, **k):
                raise _exc
            monkeypatch.setattr(m, fn, boom)
        else:
            monkeypatch.setattr(m, fn, lambda *a, **k: [])


def _run_all_formats(tmp_path, *extra):
    out = {f: tmp_path / f"report.{f}" for f in ("json", "sarif", "junit", "html")}
    args = ["check", str(TIDY)]
    for f, p in out.items():
        args += ["--format", f, "--output", str(p)]
    args += ["--format", "text"]                  # paired in order: the last one to stdout
    r = CliRunner().invoke(main, args + list(extra))
    return r, {f: p.read_text() for f, p in out.items() if p.exists()}


@pytest.mark.parametrize("name,module,function", MODULES, ids=[m[0] for m in MODULES])
def test_an_exception_inside_each_measurement_module_exits_3_in_every_format(
        name, module, function, tmp_path, monkeypatch, _tracebacks_in_tmp):
    _need_tidy()
    _stub_all_but(monkeypatch, name, IndexError(f"forced failure in {function}"))
    r, reports = _run_all_formats(tmp_path, "--fail-on", "never")
    assert r.exit_code == 3, r.output
    where = f"{name} measurement of stage1"
    # the terminal: one message naming the module, the command, the version, the traceback file
    assert "the check could not be completed" in r.stderr and where in r.stderr
    assert "Traceback" not in r.stderr and "Traceback" not in r.stdout
    tb_files = list(_tracebacks_in_tmp.glob("loopcheck-*.txt"))
    assert len(tb_files) == 1 and str(tb_files[0]) in r.stderr
    assert f"forced failure in {function}" in tb_files[0].read_text()
    assert "loopcheck check" in r.stderr and "loopcheck 0." in r.stderr
    assert not any(p.name.startswith("loopcheck-") for p in TIDY.iterdir())   # nothing beside
    # text
    assert "INTERNAL ERROR: the check could not be completed" in r.stdout
    assert "Result: COULD NOT BE COMPLETED" in r.stdout
    # JSON, valid against its schema
    data = json.loads(reports["json"])
    (err,) = data["internal_errors"]
    assert (err["module"], err["stage"]) == (f"{name} measurement", "stage1")
    assert err["error"] == f"IndexError: forced failure in {function}"
    assert err["traceback_file"] == str(tb_files[0])
    assert data["result"]["internal_errors"] == 1 and data["result"]["exit_code"] == 3
    assert data["result"]["complete"] is False
    jsonschema = pytest.importorskip("jsonschema")
    from loopcheck.report.jsonreport import load_schema
    jsonschema.validate(data, load_schema())
    # SARIF: a tool execution notification at level error; the execution did not succeed
    sarif = json.loads(reports["sarif"])
    from test_sarif import validate as validate_sarif
    validate_sarif(sarif)                         # the OASIS SARIF 2.1.0 schema
    (inv,) = sarif["runs"][0]["invocations"]
    assert inv["executionSuccessful"] is False and inv["exitCode"] == 3
    errs = [n for n in inv["toolExecutionNotifications"] if n["level"] == "error"]
    assert len(errs) == 1 and where in errs[0]["message"]["text"]
    # JUnit: an <error>
    root = ET.fromstring(reports["junit"])
    assert root.get("errors") == "1"
    (el,) = root.iter("error")
    assert where in el.get("message") and el.get("type") == "internal-error"
    # HTML
    assert 'id="internal-errors"' in reports["html"] and where in reports["html"]
    assert "could not be completed" in reports["html"]


def test_a_reason_of_the_board_is_a_stated_gap_not_an_internal_error(tmp_path, monkeypatch):
    _need_tidy()
    from loopcheck.measure.common import MeasurementGap

    _stub_all_but(monkeypatch, "sense resistor", MeasurementGap("no sense resistor on this stage"))
    r, reports = _run_all_formats(tmp_path)
    assert r.exit_code == 0, r.output
    assert "internal error" not in r.output.lower()
    assert "sense resistor (3): no sense resistor on this stage" in r.stdout
    data = json.loads(reports["json"])
    assert data["internal_errors"] == [] and data["result"]["complete"] is False
    assert any("no sense resistor on this stage" in g for g in data["result"]["gaps"])
    inv = json.loads(reports["sarif"])["runs"][0]["invocations"][0]
    assert inv["executionSuccessful"] is True
    r2 = CliRunner().invoke(main, ["check", str(TIDY), "--fail-on-incomplete"])
    assert r2.exit_code == 1


def test_no_broad_except_turns_a_bug_into_a_note():
    """Broad catches only at the module boundaries (analysis, the CLI); none in measure/ or
    the commands (the file writer's clean-up re-raises)."""
    import re

    root = Path(__file__).resolve().parents[1] / "loopcheck"
    broad = re.compile(r"except\s*(Exception|BaseException)?\s*(as \w+)?\s*:")
    # analysis: the module boundary, and the worker thread that hands its exception back
    allowed = {"analysis.py": 2, "cli.py": 1, "fileio.py": 1}
    for path in [root / "analysis.py", root / "cli.py", root / "fileio.py",
                 *(root / "measure").glob("*.py"), *(root / "commands").glob("*.py"),
                 *(root / "report").glob("*.py"), *(root / "rules").glob("*.py")]:
        n = len(broad.findall(path.read_text()))
        assert n == allowed.get(path.name, 0), f"{path.name}: {n} broad except"


def test_an_exception_anywhere_in_the_cli_exits_3_with_one_message(monkeypatch, tmp_path,
                                                                   _tracebacks_in_tmp):
    from loopcheck.commands import check_cmd

    def broken(*a, **k):
        raise KeyError("layer 7")

    monkeypatch.setattr(check_cmd, "_load_project", broken)
    r = CliRunner().invoke(main, ["check", "board"])
    assert r.exit_code == 3
    assert r.stdout == ""
    assert "Traceback" not in r.stderr
    lines = r.stderr.splitlines()
    assert lines[0].startswith("loopcheck: the check could not be completed")
    assert "'check' command: KeyError: 'layer 7'" in r.stderr
    (tb,) = _tracebacks_in_tmp.glob("loopcheck-*.txt")
    assert str(tb) in r.stderr and "KeyError" in tb.read_text()
    # usage errors stay exit 2
    assert CliRunner().invoke(main, ["check", "board", "--format", "pdf"]).exit_code == 2


def test_the_time_budget_reports_what_it_did_not_reach(monkeypatch, tmp_path):
    _need_tidy()
    import time as _time

    from loopcheck.measure import hotloop

    def slow_hot_loop(ctx, stage):
        _time.sleep(0.3)
        return []

    _stub_all_but(monkeypatch, None, None)
    monkeypatch.setattr(hotloop, "measure_hot_loop", slow_hot_loop)
    from loopcheck.commands import check_cmd
    from loopcheck.project import load_project
    from loopcheck.load import load_board

    proj = load_project(TIDY)
    board = load_board(proj)
    monkeypatch.setattr(check_cmd, "_load_project", lambda b: proj)
    monkeypatch.setattr(check_cmd, "_load_board", lambda p: board)
    r = CliRunner().invoke(main, ["check", "board", "--time-budget", "0.2", "--format", "json"])
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert data["result"]["complete"] is False and data["internal_errors"] == []
    # the hot loop outlasted the budget (abandoned); every later module was not started
    gaps = [g for g in data["result"]["gaps"] if "time budget used up" in g]
    assert len(gaps) == 7                         # one line per module, not per measurement
    assert all(g.startswith("stage1 ") for g in gaps)
    assert "during this measurement" in next(g for g in gaps if g.startswith("stage1 hot loop"))
    assert sum("during this measurement" in g for g in gaps) == 1
    made = {m["quantity"]: m["not_made"] for m in data["measurements"]}
    assert "0.2 s per board" in made["sense.kelvin_error"]
    r = CliRunner().invoke(main, ["check", "board", "--time-budget", "0.2"])
    assert "INCOMPLETE" in r.stdout
    # the text report: one line per module and reason, and the rules those left unchecked
    # are one finding line per reason, not a row each
    lines = r.stdout.splitlines()
    assert sum(x.startswith("    ") and "(" in x and "time budget used up" in x
               for x in lines) == 7
    unchecked = [x for x in lines if "rules not checked, stage1: time budget used up" in x]
    assert len(unchecked) == 2                    # the abandoned hot loop, the modules not begun
    assert sum("during this measurement" in x for x in unchecked) == 1
    assert max(len(x) for x in lines) <= 100
    assert CliRunner().invoke(main, ["check", "board", "--time-budget", "0"]).exit_code == 2


def test_inductance_method_reaches_the_measurement_and_the_json(monkeypatch):
    """--inductance field|fast goes into analyse() and the measurement context; the JSON names
    the method the hot-loop measurement says it ran (hot_loop.inductance_method)."""
    _need_tidy()
    from loopcheck.measure import hotloop
    from loopcheck.measure.common import measurement

    seen = []

    def fake_hot_loop(ctx, stage):
        method = getattr(ctx, "inductance_method", "field")
        seen.append(method)
        return [measurement("hot_loop.inductance", 5.0, stage,
                            detail={"inductance_method": method})]

    _stub_all_but(monkeypatch, None, None)
    monkeypatch.setattr(hotloop, "measure_hot_loop", fake_hot_loop)
    for method in ("fast", "field"):
        r = CliRunner().invoke(main, ["check", str(TIDY), "--inductance", method,
                                      "--format", "json"])
        assert r.exit_code == 0, r.output
        assert json.loads(r.stdout)["stages"][0]["hot_loop"]["inductance_method"] == method
    assert seen == ["fast", "field"]
    r = CliRunner().invoke(main, ["check", str(TIDY), "--inductance", "exact"])
    assert r.exit_code == 2


def test_a_measurement_still_running_at_the_deadline_is_abandoned_not_waited_for(monkeypatch):
    """Never a hang: a module that outlasts the budget is given up on at the deadline; it and
    every module after it are stated gaps, and the reports are written."""
    _need_tidy()
    import time as _time

    from loopcheck.commands import check_cmd
    from loopcheck.load import load_board
    from loopcheck.measure import decoupling
    from loopcheck.project import load_project

    def stuck(ctx, stage):
        _time.sleep(20.0)                         # a daemon thread: it ends with the process
        return []

    _stub_all_but(monkeypatch, None, None)
    monkeypatch.setattr(decoupling, "measure_input_cap", stuck)
    proj = load_project(TIDY)
    board = load_board(proj)
    monkeypatch.setattr(check_cmd, "_load_project", lambda b: proj)
    monkeypatch.setattr(check_cmd, "_load_board", lambda p: board)
    t0 = _time.monotonic()
    r = CliRunner().invoke(main, ["check", "board", "--time-budget", "0.5", "--format", "json"])
    took = _time.monotonic() - t0
    assert r.exit_code == 0, r.output
    assert took < 10.0, took                     # the stuck module was not waited for (20 s)
    gaps = json.loads(r.stdout)["result"]["gaps"]
    assert any(g.startswith("stage1 input capacitor") and "during this measurement" in g
               for g in gaps)
    assert any(g.startswith("stage1 switch node") and "time budget used up" in g for g in gaps)
