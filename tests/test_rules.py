"""Rule decks, thresholds, overrides, waivers and the evaluation of measurements into findings.

The thresholds themselves are common practice; these tests check the machinery.
"""

from __future__ import annotations

import tomllib
from importlib import resources

import pytest

from loopcheck.errors import InputError
from loopcheck.findings import Finding, Measurement
from loopcheck.measure import QUANTITIES
from loopcheck.rules import RULE_DOCS, evaluate, evaluate_all, explain_text, load_deck
from loopcheck.rules.deck import deck_folder, packaged_decks
from reportfixtures import make_analysis, make_project

RULES_MD_RULES = {
    "netlist-open", "netlist-short", "netlist-alignment", "hot-loop-area", "hot-loop-inductance",
    "switch-overshoot", "hot-loop-vias", "input-cap-distance", "controller-decoupling",
    "sense-kelvin", "sense-pair-area", "sense-route-near-switch-node", "trace-temperature-rise",
    "copper-loss", "switch-node-area", "switch-node-capacitance",
}


def by_rule(findings, rule):
    return [f for f in findings if f.rule == rule]


def test_packaged_decks_have_every_rule_of_rules_md():
    assert {"default", "led-driver"} <= set(packaged_decks())
    for name in ("default", "led-driver"):
        deck = load_deck(name)
        assert RULES_MD_RULES <= set(deck.rules), name
        for rule in deck.rules.values():
            assert rule.name in RULE_DOCS
            if rule.kind == "measurement":
                assert rule.source, f"{name}:{rule.name} says where its limits come from"


def test_default_deck_limits_match_rules_md():
    d = load_deck("default")
    assert d.rules["hot-loop-area"].limits == {"warning": 50.0, "error": 150.0}
    assert d.rules["hot-loop-area"].quantity == "hot_loop.area"
    assert d.rules["hot-loop-inductance"].limits == {"warning": 5.0, "error": 15.0}
    assert d.rules["switch-overshoot"].limits == {"warning": 10.0, "error": 25.0}
    assert d.rules["input-cap-distance"].limits == {"warning": 5.0, "error": 15.0}
    assert d.rules["controller-decoupling"].limits == {"warning": 3.0, "error": 10.0}
    assert d.rules["sense-kelvin"].limits == {"warning": 0.5, "error": 2.0}
    assert d.rules["sense-pair-area"].limits == {"warning": 10.0}
    near = d.rules["sense-route-near-switch-node"]
    assert (near.quantity, near.direction, near.limits) == \
        ("sense.switch_node_clearance", "below", {"warning": 1.0})
    assert d.rules["trace-temperature-rise"].quantity == "path.*.temperature_rise"
    assert d.rules["trace-temperature-rise"].limits == {"warning": 10.0, "error": 20.0}
    assert d.rules["copper-loss"].limits == {"warning": 1.0, "error": 3.0}
    assert d.rules["switch-node-area"].limits == {"warning": 60.0}
    assert d.rules["netlist-alignment"].severity == "error"
    # every quantity a rule names exists
    for r in d.measurement_rules:
        base = r.quantity.replace("path.*.", "path.")
        assert base in QUANTITIES


def test_decks_say_common_practice_in_the_file():
    text = deck_folder().joinpath("default.toml").read_text()
    data = tomllib.loads(text)
    for name, table in data["rules"].items():
        if table.get("kind", "measurement") == "measurement":
            assert "common practice" in table["source"], name


def test_led_driver_deck_is_tighter_on_current_sense():
    d, led = load_deck("default"), load_deck("led-driver")
    assert led.rules["sense-kelvin"].limits["error"] < d.rules["sense-kelvin"].limits["error"]
    assert led.rules["sense-kelvin"].limits["warning"] < d.rules["sense-kelvin"].limits["warning"]
    assert led.rules["hot-loop-area"] == d.rules["hot-loop-area"]   # inherited unchanged


def test_every_rule_is_explained():
    for doc in RULE_DOCS.values():
        for part in (doc.title, doc.measures, doc.why, doc.fix, doc.formula, doc.limits):
            assert len(part) > 3
        text = explain_text(doc)
        assert doc.name in text and "How to fix it" in text


def test_sprawl_fixture_findings_and_severities():
    a = make_analysis("sprawl")
    deck = load_deck("default")
    ev = evaluate_all(a, deck, make_project())
    sev = {(f.rule, f.quantity): f.severity for f in ev.findings}
    assert sev[("hot-loop-area", "hot_loop.area")] == "error"            # 182 > 150
    assert sev[("hot-loop-inductance", "hot_loop.inductance")] == "error"  # 17.2 > 15
    assert sev[("input-cap-distance", "input_cap.path_length")] == "error"  # 18.4 > 15
    assert sev[("sense-kelvin", "sense.kelvin_error")] == "error"        # 3.1 > 2
    assert sev[("sense-pair-area", "sense.pair_area")] == "warning"      # 14 > 10
    assert sev[("sense-route-near-switch-node", "sense.switch_node_clearance")] == "warning"
    assert sev[("trace-temperature-rise", "path.output.temperature_rise")] == "error"
    assert ("trace-temperature-rise", "path.input.temperature_rise") not in sev   # 4 C passes
    assert sev[("copper-loss", "copper_loss")] == "warning"
    assert sev[("hot-loop-vias", "hot_loop.vias")] == "note"
    assert ("switch-overshoot", "hot_loop.overshoot") not in sev         # 8 % passes
    f = by_rule(ev.findings, "hot-loop-area")[0]
    assert (f.value, f.limit, f.unit, f.stage) == (182.0, 150.0, "mm2", "stage1")
    assert (f.x_mm, f.y_mm, f.layer) == (9.5, 17.0, "top")
    assert "182" in f.message and "150" in f.message and "above" in f.message
    # the IPC-2152 companion quantity is not judged by the IPC-2221 rule
    assert not any(f.quantity == "path.output.temperature_rise_ipc2152" for f in ev.findings)


def test_tidy_fixture_has_no_errors_or_warnings():
    ev = evaluate_all(make_analysis("tidy"), load_deck("default"), make_project())
    bad = [f for f in ev.findings if f.severity in ("error", "warning")]
    assert bad == []
    statuses = {(c.rule, c.quantity): c.status for c in ev.checks}
    assert statuses[("hot-loop-area", "hot_loop.area")] == "pass"
    assert statuses[("sense-route-near-switch-node", "sense.switch_node_clearance")] == "pass"


def test_below_rule_boundary_and_direction():
    deck = load_deck("default")
    rule = deck.rules["sense-route-near-switch-node"]
    assert rule.judge(0.99) == ("warning", 1.0)
    assert rule.judge(1.0) == (None, None)       # equal to the limit passes
    assert rule.judge(5.0) == (None, None)
    above = deck.rules["hot-loop-area"]
    assert above.judge(150.0) == ("warning", 50.0)
    assert above.judge(150.01) == ("error", 150.0)
    assert above.judge(50.0) == (None, None)


def test_not_made_measurement_is_listed_not_passed():
    ev = evaluate_all(make_analysis("tidy"), load_deck("default"), make_project())
    f = by_rule(ev.findings, "controller-decoupling")
    assert len(f) == 1 and f[0].value is None and f[0].severity == "note"
    assert "not measured" in f[0].message and "no controller decoupling" in f[0].message
    c = ev.check_of(f[0])
    assert c.status == "not made"


def test_missing_measurement_for_a_stage_is_not_made():
    a = make_analysis("tidy")
    a.measurements = [m for m in a.measurements if m.quantity != "sense.kelvin_error"]
    ev = evaluate_all(a, load_deck("default"), make_project())
    f = by_rule(ev.findings, "sense-kelvin")
    assert len(f) == 1 and f[0].value is None and "not measured" in f[0].message


def test_board_thresholds_override_the_deck():
    proj = make_project(thresholds={"hot-loop-area": {"warning": 10.0, "error": 20.0}})
    deck = load_deck("default", proj)
    assert deck.rules["hot-loop-area"].limits == {"warning": 10.0, "error": 20.0}
    assert "loopcheck.toml" in deck.rules["hot-loop-area"].origin
    f = by_rule(evaluate(make_analysis("tidy"), deck, proj), "hot-loop-area")
    assert f[0].severity == "error" and f[0].limit == 20.0      # 21.5 > 20


def test_stage_thresholds_merge_with_board_ones():
    proj = make_project(stage_thresholds={"stage1": {"hot-loop-area": {"error": 200.0}}})
    deck = load_deck("default", proj)
    assert deck.rule("hot-loop-area", "stage1").limits == {"warning": 50.0, "error": 200.0}
    assert deck.rule("hot-loop-area", "other").limits == {"warning": 50.0, "error": 150.0}
    f = by_rule(evaluate(make_analysis("sprawl"), deck, proj), "hot-loop-area")
    assert f[0].severity == "warning"        # 182 is now below the stage's error limit


def test_stage_override_for_unknown_stage_is_reported():
    proj = make_project(stage_thresholds={"stage9": {"hot-loop-area": {"error": 200.0}}})
    fs = evaluate(make_analysis("tidy"), load_deck("default", proj), proj)
    u = by_rule(fs, "unused-override")
    assert len(u) == 1 and "stage9" in u[0].message and u[0].severity == "warning"


def test_integrity_findings_pass_through_and_deck_sets_severity(tmp_path):
    integ = [Finding("netlist-open", "error", "net VIN: pads C1.1 and U1.1 not joined",
                     nets=("VIN",), terminals=("C1.1", "U1.1"), x_mm=5, y_mm=20, layer="top")]
    deck_file = tmp_path / "soft.toml"
    deck_file.write_text('[deck]\nextends = "default"\n[rules.netlist-open]\nseverity = "warning"\n')
    fs = evaluate(make_analysis("tidy", integrity=integ), load_deck("default"), make_project())
    assert fs[0].rule == "netlist-open" and fs[0].severity == "error"
    fs = evaluate(make_analysis("tidy", integrity=integ), load_deck(str(deck_file)),
                  make_project())
    assert fs[0].rule == "netlist-open" and fs[0].severity == "warning"
    assert integ[0].severity == "error"          # the analysis itself is not modified


def test_waivers_by_stage_terminal_ref_and_net():
    a = make_analysis("sprawl")
    proj = make_project(waivers=[("sense-kelvin", "RS1.2", "Kelvin pads added in rev B"),
                                 ("hot-loop-area", "stage1", "accepted for the prototype"),
                                 ("input-cap-distance", "C1", "bulk cap; ceramic added"),
                                 ("sense-route-near-switch-node", "ISN", "guarded by ground")])
    deck = load_deck("default", proj)
    fs = evaluate(a, deck, proj)
    for rule in ("sense-kelvin", "hot-loop-area", "input-cap-distance",
                 "sense-route-near-switch-node"):
        f = by_rule(fs, rule)
        assert f and all(x.waived for x in f), rule
        assert f[0].waiver_reason
    assert not by_rule(fs, "unused-waiver")
    assert not by_rule(fs, "hot-loop-inductance")[0].waived


def test_unused_waiver_is_reported():
    proj = make_project(waivers=[("sense-kelvin", "stage7", "old stage")])
    fs = evaluate(make_analysis("sprawl"), load_deck("default", proj), proj)
    u = by_rule(fs, "unused-waiver")
    assert len(u) == 1 and u[0].severity == "warning" and "stage7" in u[0].message
    assert not by_rule(fs, "sense-kelvin")[0].waived


@pytest.mark.parametrize("waiver, words", [
    (("sense-kelvn", "stage1", "x"), ["waivers[0].rule", "unknown rule 'sense-kelvn'",
                                      "sense-kelvin"]),
    (("sense-kelvin", "", "x"), ["waivers[0].where"]),
    (("sense-kelvin", "stage1", ""), ["waivers[0].reason"]),
])
def test_bad_waivers_are_input_errors(tmp_path, waiver, words):
    proj = make_project(tmp_path, waivers=[waiver])
    with pytest.raises(InputError) as e:
        load_deck("default", proj)
    msg = str(e.value)
    assert str(tmp_path / "loopcheck.toml") in msg
    for w in words:
        assert w in msg


@pytest.mark.parametrize("thresholds, words", [
    ({"hot-loop-aera": {"error": 1}}, ["rules.thresholds.hot-loop-aera", "unknown rule"]),
    ({"hot-loop-area": {"error": "big"}}, ["rules.thresholds.hot-loop-area.error",
                                           "finite number"]),
    ({"hot-loop-area": {"eror": 3}}, ["rules.thresholds.hot-loop-area", "unknown key 'eror'"]),
    ({"hot-loop-area": {"warning": 200}}, ["rules.thresholds.hot-loop-area", "must rise"]),
    ({"hot-loop-area": {"error": True}}, ["finite number"]),
    ({"hot-loop-area": {"severity": "error"}}, ["limits per severity"]),
])
def test_bad_project_thresholds_are_input_errors(tmp_path, thresholds, words):
    proj = make_project(tmp_path, thresholds=thresholds)
    with pytest.raises(InputError) as e:
        load_deck("default", proj)
    for w in words:
        assert w in str(e.value)
    assert "loopcheck.toml" in str(e.value)


@pytest.mark.parametrize("text, words", [
    ("[rules.hot-loop-area\nwarning = 1", ["not valid TOML", ":1:"]),
    ("[rules.no-such-rule]\nquantity = 'hot_loop.area'\ndirection='above'\nerror=1",
     ["rules.no-such-rule", "unknown rule"]),
    ("[rules.hot-loop-area]\nquantity = 'hot_loop.volume'\ndirection='above'\nerror=1",
     ["rules.hot-loop-area.quantity", "unknown quantity"]),
    ("[rules.hot-loop-area]\nquantity = 'hot_loop.area'\ndirection='sideways'\nerror=1",
     ["rules.hot-loop-area.direction"]),
    ("[rules.hot-loop-area]\nquantity = 'hot_loop.area'\ndirection='above'",
     ["at least one of"]),
    ("[rules.sense-route-near-switch-node]\nquantity = 'sense.switch_node_clearance'\n"
     "direction='below'\nwarning=0.5\nerror=1.0", ["must fall"]),
    ("[rules.netlist-open]\nkind='integrity'\nseverity='fatal'", ["rules.netlist-open.severity"]),
    ("[rules.netlist-open]\nkind='integrity'\nseverity='error'\ncolour='red'",
     ["unknown key 'colour'"]),
    ("[deck]\nextends = 'nonesuch'\n", ["no rule deck named 'nonesuch'"]),
    ("[checks]\n", ["unknown top-level key 'checks'"]),
])
def test_bad_deck_files_are_input_errors(tmp_path, text, words):
    p = tmp_path / "deck.toml"
    p.write_text(text)
    with pytest.raises(InputError) as e:
        load_deck(str(p))
    for w in words:
        assert w in str(e.value)


def test_unknown_deck_name_and_missing_file():
    with pytest.raises(InputError, match="no rule deck named 'strict'.*default"):
        load_deck("strict")
    with pytest.raises(InputError, match="not found"):
        load_deck("no/such/deck.toml")


def test_deck_named_in_project_is_relative_to_it(tmp_path):
    (tmp_path / "decks").mkdir()
    (tmp_path / "decks" / "mine.toml").write_text(
        '[deck]\nname = "mine"\nextends = "led-driver"\n'
        '[rules.hot-loop-area]\nwarning = 30\n')
    proj = make_project(tmp_path, deck="decks/mine.toml")
    deck = load_deck(None, proj)
    assert deck.name == "mine"
    assert deck.rules["hot-loop-area"].limits == {"warning": 30.0, "error": 150.0}
    assert deck.rules["sense-kelvin"].limits["error"] == 1.0    # from led-driver


def test_disabled_rule_gives_no_finding(tmp_path):
    p = tmp_path / "d.toml"
    p.write_text('[deck]\nextends = "default"\n[rules.hot-loop-area]\nenabled = false\n')
    ev = evaluate_all(make_analysis("sprawl"), load_deck(str(p)), make_project())
    assert not by_rule(ev.findings, "hot-loop-area")
    assert [c.status for c in ev.checks if c.rule == "hot-loop-area"] == ["off"]


def test_measurement_stopped_gives_integrity_only():
    integ = [Finding("netlist-alignment", "error", "netlist pads land on no copper; "
                     "shift by (+10.0, 0.0) mm would align them")]
    a = make_analysis("tidy", integrity=integ)
    a.measurements = []
    a.measurement_stopped = "netlist does not line up with the copper"
    fs = evaluate(a, load_deck("default"), make_project())
    assert [f.rule for f in fs] == ["netlist-alignment"]


def test_message_formats_small_and_large_values():
    m = Measurement("hot_loop.area", 1234.4, "mm2", "hot-loop area", stage="stage1")
    a = make_analysis("tidy")
    a.measurements = [m]
    fs = [f for f in evaluate(a, load_deck("default"), make_project()) if f.rule == "hot-loop-area"]
    assert len(fs) == 1 and "is 1234 mm2, above the error limit of 150 mm2" in fs[0].message


def test_shipped_decks_live_once_in_the_top_level_rules_folder():
    """Users find the decks in rules/ at the project's top; the package keeps no second copy;
    setup.py installs that folder as loopcheck.decks (a non-editable install reads it there)."""
    from pathlib import Path

    import loopcheck

    root = Path(loopcheck.__file__).resolve().parents[1]
    assert sorted(p.stem for p in (root / "rules").glob("*.toml")) == packaged_decks()
    assert not list((root / "loopcheck" / "rules").glob("*.toml"))
    assert Path(str(deck_folder())) == root / "rules"
    setup_py = (root / "setup.py").read_text()
    assert '"loopcheck.decks": "rules"' in setup_py and '"loopcheck.decks": ["*.toml"]' in setup_py
    assert load_deck("default").path == "rules/default.toml"


def test_layout_loss_rule_is_in_the_decks_and_explained():
    d = load_deck("default")
    r = d.rules["layout-loss"]
    assert (r.quantity, r.direction, r.limits) == ("layout_loss", "above",
                                                   {"warning": 2.0, "error": 5.0})
    assert "common practice" in r.source
    assert load_deck("led-driver").rules["layout-loss"].limits == r.limits
    text = explain_text(RULE_DOCS["layout-loss"]).replace("\n  ", " ")
    for part in ("1/2 L_loop I_off^2 f_sw", "I_rms^2 R(T)", "Known limits", "How to fix it"):
        assert part in text, part
