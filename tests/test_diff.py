"""``loopcheck diff``: matching measurements by (stage, quantity), new and resolved findings,
the text / JSON / HTML reports and the command."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from loopcheck.cli import main
from loopcheck.commands import check_cmd
from loopcheck.compare import compare, match_findings, match_measurements
from loopcheck.findings import Finding, Measurement
from loopcheck.report.diff import DiffResult, render_diff_html, render_diff_json, render_diff_text
from reportfixtures import BOARDS_DIR, cached_analyse, make_result


def diff_of(old="tidy", new="sprawl"):
    a, b = make_result(old), make_result(new)
    return DiffResult(a, b, compare(a.analysis.measurements, b.analysis.measurements,
                                    a.findings, b.findings))


def test_measurements_matched_by_stage_and_quantity():
    old = [Measurement("hot_loop.area", 20.0, "mm2", "area", stage="s1"),
           Measurement("hot_loop.area", 30.0, "mm2", "area", stage="s2"),
           Measurement("sense.kelvin_error", None, "%", "kelvin", stage="s1", not_made="no R")]
    new = [Measurement("hot_loop.area", 35.0, "mm2", "area", stage="s2"),
           Measurement("hot_loop.area", 80.0, "mm2", "area", stage="s1"),
           Measurement("sense.kelvin_error", 1.5, "%", "kelvin", stage="s1"),
           Measurement("copper_loss", 0.5, "%", "loss", stage="s1")]
    ch = {(c.stage, c.quantity): c for c in match_measurements(old, new)}
    assert ch[("s1", "hot_loop.area")].change == pytest.approx(60.0)
    assert ch[("s1", "hot_loop.area")].change_pct == pytest.approx(300.0)
    assert ch[("s2", "hot_loop.area")].change == pytest.approx(5.0)
    k = ch[("s1", "sense.kelvin_error")]
    assert k.old_value is None and k.new_value == 1.5 and k.change is None
    assert ch[("s1", "copper_loss")].old is None


def test_findings_new_resolved_changed():
    old = [Finding("hot-loop-area", "warning", "a", stage="s1", quantity="hot_loop.area"),
           Finding("copper-loss", "warning", "c", stage="s1", quantity="copper_loss")]
    new = [Finding("hot-loop-area", "error", "a2", stage="s1", quantity="hot_loop.area"),
           Finding("sense-kelvin", "error", "k", stage="s1", quantity="sense.kelvin_error")]
    st = {fc.key[0]: fc.status for fc in match_findings(old, new)}
    assert st == {"hot-loop-area": "changed", "copper-loss": "resolved", "sense-kelvin": "new"}


def test_tidy_to_sprawl_text_lists_the_changes():
    t = render_diff_text(diff_of())
    area = next(x for x in t.splitlines() if "hot-loop area" in x)
    assert "21.5 mm²" in area and "182 mm²" in area and "+160 mm²" in area     # 182 - 21.5
    cap = next(x for x in t.splitlines() if "input capacitor to switch" in x)
    assert "2.1 mm" in cap and "18.4 mm" in cap and "+16.3 mm" in cap
    kel = next(x for x in t.splitlines() if "sense error from shared copper" in x)
    assert "0.21 %" in kel and "3.1 %" in kel and "+2.89 %" in kel
    new_block = t.split("New findings:")[1].split("Resolved findings:")[0]
    for rule in ("hot-loop-area", "input-cap-distance", "sense-kelvin"):
        assert rule in new_block


def test_diff_json_and_html():
    d = diff_of()
    data = json.loads(render_diff_json(d))
    area = next(m for m in data["measurements"] if m["quantity"] == "hot_loop.area")
    assert (area["old"], area["new"]) == (21.5, 182.0)
    assert area["change"] == pytest.approx(160.5)
    new_rules = {f["rule"] for f in data["findings"] if f["status"] == "new"}
    assert {"hot-loop-area", "input-cap-distance", "sense-kelvin"} <= new_rules
    assert data["counts"]["resolved"] == 0
    html = render_diff_html(d)
    assert 'id="board-old"' in html and 'id="board-new"' in html
    assert "<script" not in html and "does not certify" in html
    # reversed: the same findings are resolved
    back = json.loads(render_diff_json(diff_of("sprawl", "tidy")))
    assert {f["rule"] for f in back["findings"] if f["status"] == "resolved"} >= \
        {"hot-loop-area", "input-cap-distance", "sense-kelvin"}


def test_diff_command(monkeypatch, tmp_path):
    results = {"old": make_result("tidy"), "new": make_result("sprawl")}
    monkeypatch.setattr(check_cmd, "run_check",
                        lambda board, deck, fail_on, progress: results[board])
    r = CliRunner().invoke(main, ["diff", "old", "new"])
    assert r.exit_code == 0 and "New findings" in r.output
    out = tmp_path / "d.json"
    r = CliRunner().invoke(main, ["diff", "old", "new", "--format", "json", "--output", str(out),
                                  "--fail-on", "error"])
    assert r.exit_code == 1                       # new errors appeared
    assert json.loads(out.read_text())["counts"]["new"] > 0
    r = CliRunner().invoke(main, ["diff", "new", "old", "--fail-on", "error"])
    assert r.exit_code == 0                       # only resolved
    r = CliRunner().invoke(main, ["diff", "old", "new", "--format", "sarif"])
    assert r.exit_code == 2


def test_demo_diff_tidy_vs_sprawl(monkeypatch):
    monkeypatch.setattr(check_cmd, "_analyse", cached_analyse)
    tidy, sprawl = BOARDS_DIR / "led-driver-tidy", BOARDS_DIR / "led-driver-sprawl"
    if not (tidy / "loopcheck.toml").exists() or not (sprawl / "loopcheck.toml").exists():
        pytest.skip("demo boards not made yet (boards/make_demo_boards.py)")
    try:
        from loopcheck.analysis import analyse  # noqa: F401
    except ImportError as exc:
        pytest.skip(f"the measurement pipeline is not there yet ({exc})")
    r = CliRunner().invoke(main, ["diff", str(tidy), str(sprawl), "--format", "json"])
    if isinstance(r.exception, NotImplementedError):
        pytest.skip(f"pipeline step not implemented yet: {r.exception}")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    changed = {m["quantity"] for m in data["measurements"] if m["change"]}
    assert {"hot_loop.area", "input_cap.path_length", "sense.kelvin_error"} <= changed
    new_rules = {f["rule"] for f in data["findings"] if f["status"] in ("new", "changed")}
    assert {"hot-loop-area", "input-cap-distance", "sense-kelvin"} <= new_rules


def test_rounding_noise_is_no_change():
    old = [Measurement("sense.kelvin_error", 7.3e-14, "%", "k", stage="s"),
           Measurement("input_cap.path_length", 2.3, "mm", "d", stage="s")]
    new = [Measurement("sense.kelvin_error", 8.56, "%", "k", stage="s"),
           Measurement("input_cap.path_length", 2.3 + 3.6e-15, "mm", "d", stage="s")]
    k, d = match_measurements(old, new)
    assert k.change == pytest.approx(8.56) and k.change_pct is None   # no % of a zero
    assert d.change == 0.0 and d.change_pct == 0.0


def test_change_follows_from_old_and_new():
    from loopcheck.compare import MeasurementChange

    old = Measurement("hot_loop.area", 40.0, "mm2", "area", stage="s1")
    new = Measurement("hot_loop.area", 30.0, "mm2", "area", stage="s1")
    ch = MeasurementChange("s1", "hot_loop.area", "area", "mm2", old=old, new=new)
    assert ch.change == pytest.approx(-10.0) and ch.change_pct == pytest.approx(-25.0)
    ch.new = None                                   # gone from NEW: no change to show
    assert ch.change is None and ch.change_pct is None
    with pytest.raises(AttributeError):
        ch.change = 1.0                             # derived, not stored
