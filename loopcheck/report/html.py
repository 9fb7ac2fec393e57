"""The HTML report: one self-contained file (inline CSS and SVG, no scripts, no fetches).

The board drawn layer by layer with the hot loop shaded and the measured routes, a numbered
marker per finding linked to its row, the measurements against their limits per stage, the rule
explanations, the assumptions and the safety cautions. Formatting only.
"""

from __future__ import annotations

from html import escape

from ..findings import SEVERITIES
from ..rules.docs import RULE_DOCS
from .common import (CAUTIONS, CheckResult, checks_by_measurement, finding_id,
                     layout_loss_headline, limits_text, report_assumptions, path_label,
                     sorted_findings, value_text)
from .loopsvg import HEAT_COLOURS, stage_loop_svg
from .svg import SEVERITY_COLOURS, WAIVED_COLOUR, board_svg, copper_defs, layer_colour

# the report style, shared by the check and the diff HTML reports
REPORT_CSS = """
:root { --ink:#1d232b; --muted:#5b6673; --line:#d9dee4; --paper:#fbfaf7; --panel:#ffffff;
        --err:#c62828; --warn:#e08a00; --note:#2f6db5; --ok:#2e7d4f; --waived:#7a7a7a; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; }
header { padding: 22px 32px 14px; border-bottom: 3px solid var(--ink); background: var(--panel); }
header h1 { margin:0; font-size: 22px; letter-spacing: .01em; }
header .sub { color: var(--muted); margin-top: 4px; }
.verdict { display:inline-block; margin-top:10px; padding: 4px 12px; border-radius: 3px;
           font-weight: 700; color:#fff; }
.verdict.fail { background: var(--err); } .verdict.pass { background: var(--ok); }
.verdict.open { background: var(--muted); }
.counts span { margin-right: 14px; font-weight:600; }
main { padding: 18px 32px 40px; max-width: 1280px; }
section { margin: 26px 0; }
h2 { font-size: 17px; border-bottom: 1px solid var(--line); padding-bottom: 4px; }
h3 { font-size: 15px; margin-bottom: 6px; }
.caution { border-left: 5px solid var(--warn); background:#fff7e8; padding: 10px 16px; }
.caution p { margin: 4px 0; }
.viewer { display:grid; grid-template-columns: minmax(0, 3fr) minmax(220px, 1fr); gap: 18px;
          align-items:start; }
.board-frame { background:#20262d; border-radius: 4px; padding: 8px; }
.board-svg { width:100%; height:auto; max-height: 76vh; display:block; }
.board-svg .backdrop { fill:#20262d; }
.board-svg .outline { fill:#2b4034; stroke:#d7e3d9; }
.board-svg .copper { opacity:.78; }
.board-svg .hot-loop { fill: rgba(255, 96, 72, .40); stroke:#ff5a40; stroke-linejoin: round; }
.board-svg .route { fill:none; stroke-linecap: round; stroke-linejoin: round; }
.board-svg .route-input-cap { stroke:#ffe14d; }
.board-svg .route-hot-loop { stroke:#ff8a70; opacity:.9; }
.board-svg .route-straight { stroke:#ffe14d; stroke-dasharray: 1.5 1.5; opacity:.6; }
.board-svg .sense-pair { fill: rgba(85, 224, 208, .16); stroke:none; }
.board-svg circle.route { fill:none; }
.board-svg .route-decoupling { stroke:#fff2a8; stroke-dasharray: 2 1; }
.board-svg .route-sense { stroke:#55e0d0; }
.board-svg .route-path { stroke:#ffffff; opacity:.35; }
.board-svg .loop-label { fill:#fff; font-weight:700; paint-order: stroke; stroke:#000;
                         stroke-width:.35; }
.board-svg .strip-label { fill:#c9d1d9; }
.board-svg .finding-marker:hover circle { stroke:#000; }
.legend { font-size: 13px; background: var(--panel); border:1px solid var(--line);
          border-radius: 4px; padding: 10px 12px; }
.legend .sw { display:inline-block; width:14px; height:10px; margin-right:6px;
              vertical-align: middle; border-radius:2px; }
.legend label { display:block; cursor:pointer; }
.toggle { position:absolute; left:-9999px; }
table { border-collapse: collapse; width:100%; background: var(--panel); font-size: 14px; }
th, td { text-align:left; padding: 5px 8px; border-bottom: 1px solid var(--line);
         vertical-align: top; overflow-wrap: anywhere; }
th { background:#eef1f4; font-weight:600; white-space:nowrap; overflow-wrap:normal; }
td.rule { white-space:nowrap; }
td.num { text-align:right; font-variant-numeric: tabular-nums; white-space:nowrap; }
tr:target { outline: 3px solid var(--note); outline-offset:-3px; background:#eef5ff; }
.sev { font-weight:700; text-transform: uppercase; font-size: 12px; letter-spacing: .04em; }
.sev-error { color: var(--err); } .sev-warning { color: var(--warn); }
.sev-note { color: var(--note); } .sev-waived { color: var(--waived); }
.st-pass { color: var(--ok); font-weight:600; } .st-not-made { color: var(--muted);
         font-style: italic; }
.st-error { color: var(--err); font-weight:700; } .st-warning { color: var(--warn);
         font-weight:700; } .st-note { color: var(--note); font-weight:600; }
.badge { display:inline-block; min-width: 22px; text-align:center; color:#fff; border-radius: 11px;
         font-size: 12px; font-weight:700; padding: 1px 6px; text-decoration:none; }
.layers { display:grid; grid-template-columns: repeat(auto-fill, minmax(280px, 1fr)); gap: 14px; }
.layers figure { margin:0; background:#20262d; border-radius:4px; padding:6px; }
.layers figcaption { color:#e6e6e6; font-size: 13px; padding: 4px 2px 0; }
details { background: var(--panel); border:1px solid var(--line); border-radius:4px;
          padding: 6px 12px; margin: 6px 0; }
details summary { cursor:pointer; font-weight:600; }
dl { margin: 6px 0; } dt { font-weight:600; margin-top:6px; } dd { margin-left: 0; }
footer { color: var(--muted); font-size: 13px; padding: 12px 32px 30px;
         border-top:1px solid var(--line); }
.loop-viewer { display:grid; grid-template-columns: minmax(0, 3fr) minmax(240px, 1fr); gap: 18px;
               align-items:start; margin: 10px 0 14px; }
.loop-frame { background:#20262d; border-radius: 4px; padding: 8px; }
.loop-svg { width:100%; height:auto; max-height: 70vh; display:block; }
.loop-svg .backdrop { fill:#20262d; }
.loop-svg .outline { fill:#2b4034; stroke:none; }
.loop-svg .copper { opacity:.55; }
.loop-svg .loop-area { fill: rgba(255, 96, 72, .28); stroke:none; }
.loop-svg .loop-path { fill:none; stroke:#ff8a70; stroke-linejoin:round; stroke-linecap:round;
                       opacity:.9; }
.loop-svg .loop-path-casing { fill:none; stroke:#000; opacity:.5; stroke-linejoin:round; }
.loop-svg .loop-centroid { fill:none; stroke:#5cf2ff; stroke-dasharray: 2 1.2;
                           stroke-linejoin:round; stroke-linecap:round; }
.loop-svg .loop-via { fill:#20262d; stroke:#ffffff; }
.loop-svg .loop-pad { fill:none; stroke:#ffffff; opacity:.85; }
.loop-svg .loop-labels text { fill:#fff; font-weight:700; paint-order: stroke; stroke:#000; }
.loop-svg .scale-bar path { fill:none; stroke:#fff; }
.loop-svg .scale-bar text { fill:#fff; }
.loop-svg .scale-back { fill: rgba(0,0,0,.55); }
.loop-legend { font-size: 13px; background: var(--panel); border:1px solid var(--line);
               border-radius: 4px; padding: 10px 12px; }
.loop-legend .sw { display:inline-block; width:14px; height:10px; margin-right:6px;
                   vertical-align: middle; border-radius:2px; }
.loop-legend label { display:block; cursor:pointer; }
.loop-legend table { font-size: 13px; margin-top: 4px; }
.loop-legend td, .loop-legend th { padding: 2px 6px; }
.heat-bar { display:flex; height: 10px; margin: 4px 0 2px; }
.heat-bar span { flex:1; }
.heat-ticks { display:flex; justify-content: space-between; font-size: 12px; color: var(--muted); }
code { font-family: ui-monospace, "DejaVu Sans Mono", monospace; font-size: 13px; }
"""


def _toggle_css(n: int) -> str:
    return "\n".join(f"#show-layer-{i}:not(:checked) ~ .viewer .layer-{i} {{ display:none; }}"
                     for i in range(n)) + "\n" + \
        "#show-overlays:not(:checked) ~ .viewer .overlays { display:none; }\n" + \
        "#show-markers:not(:checked) ~ .viewer .markers { display:none; }\n"


def _loop_toggle_css(n_stages: int, n_layers: int) -> str:
    """Per stage picture: a checkbox per layer for its copper and one for its current density."""
    rules = []
    for k in range(n_stages):
        for i in range(n_layers):
            for kind, cls in (("zl", "zl"), ("zh", "heat")):
                box = f"#{kind}-{k}-{i}:not(:checked) ~ .loop-viewer"
                rules.append(f"{box} .{cls}-{i} {{ display:none; }}")
                rules.append(f'{box} label[for="{kind}-{k}-{i}"] {{ opacity:.45; '
                             "text-decoration: line-through; }")
    return "\n".join(rules) + "\n"


def _shares(m) -> list[dict]:
    """The inductance shares of a measurement's detail, largest first (as given, sorted)."""
    shares = (m.detail.get("inductance_shares") if m is not None else None) or []
    shares = [s for s in shares if isinstance(s, dict) and "part" in s and "share_pct" in s]
    return sorted(shares, key=lambda s: -float(s["share_pct"]))


def _stage_loop_figure(result: CheckResult, stage, k: int) -> str:
    """The stage's hot loop zoomed, its layer and current toggles, the heat-map legend and the
    table of where the inductance sits."""
    a = result.analysis
    board = a.board
    svg, info = stage_loop_svg(board, stage, a.measurements, key=str(k))
    if not svg:
        return ""
    ind = a.measurement(stage.name, "hot_loop.inductance")
    h = [f'<div class="loop-figure" id="loop-{escape(stage.name)}"><h3>Hot loop, zoomed</h3>']
    n = len(board.layers)
    for i in range(n):
        shown = " checked" if i in info["layers"] else ""
        h.append(f'<input type="checkbox" class="toggle" id="zl-{k}-{i}"{shown}>')
    for i in range(n):
        h.append(f'<input type="checkbox" class="toggle" id="zh-{k}-{i}" checked>')
    h.append(f'<div class="loop-viewer"><div class="loop-frame">{svg}</div>'
             '<div class="loop-legend"><strong>Layers</strong> (click to show or hide)')
    for i, layer in enumerate(board.layers):
        used = "" if i in info["layers"] else " <small>(not in the loop)</small>"
        h.append(f'<label for="zl-{k}-{i}"><span class="sw" style="background:'
                 f'{layer_colour(i, n)}"></span>{escape(layer.name)} copper{used}</label>')
        if i in info["heat_layers"]:
            h.append(f'<label for="zh-{k}-{i}"><span class="sw" style="background:'
                     f'linear-gradient(90deg,{HEAT_COLOURS[2]},{HEAT_COLOURS[-2]})"></span>'
                     f'{escape(layer.name)} current density</label>')
    h.append('<p><strong>Drawn from the measurements</strong></p>')
    if 'class="loop-path"' in svg:
        h.append('<div><span class="sw" style="background:rgba(255,96,72,.5)"></span>'
                 'traced loop path, its area shaded</div>')
    else:
        h.append("<div><em>loop not traced: its terminals are shown</em></div>")
    if ind is not None and ind.detail.get("current_centroid"):
        h.append('<div><span class="sw" style="background:#5cf2ff"></span>'
                 'centroid line of the loop current</div>')
    h.append('<div><span class="sw" style="border:1px solid #555"></span>'
             'loop terminals and vias (hover for names)</div>')
    scale = info.get("scale")
    if scale is not None:
        edges = scale.edges
        h.append('<p><strong>Current density</strong> (A/mm per A in the loop, log scale)</p>'
                 '<div class="heat-bar">' + "".join(f'<span style="background:{c}"></span>'
                                                    for c in HEAT_COLOURS) + "</div>"
                 f'<div class="heat-ticks"><span>{edges[0]:.3g}</span>'
                 f'<span>{edges[len(edges) // 2]:.3g}</span><span>{edges[-1]:.3g}</span></div>')
    else:
        why = "the inductance was not measured"
        if ind is not None and ind.value is not None:
            method = ind.detail.get("inductance_method")
            why = ("the inductance comes from the fast path estimate" if method == "fast"
                   else "the measurement carries no current density")
        h.append(f"<p><small>No current-density map: {escape(why)}.</small></p>")
    if ind is not None and ind.value is not None:
        method = ind.detail.get("inductance_method")
        mesh = ind.detail.get("mesh") or {}
        line = {"field": "field solve", "fast": "fast path estimate"}.get(method, method or "")
        if line:
            extra = ""
            if mesh.get("fine_mm") is not None and mesh.get("cells") is not None:
                extra = f"; mesh {mesh['fine_mm']:g} mm finest, {mesh['cells']} cells"
            h.append(f"<p><small>Inductance by the {escape(line)}{escape(extra)}.</small></p>")
    shares = _shares(ind)
    if shares:
        h.append('<p><strong>Where the inductance sits</strong></p><table class="shares">'
                 "<thead><tr><th>part of the loop</th><th>share</th></tr></thead><tbody>")
        shown = [s for s in shares if abs(float(s["share_pct"])) >= 0.05]
        for s in shown:
            h.append(f'<tr><td>{escape(str(s["part"]))}</td>'
                     f'<td class="num">{float(s["share_pct"]):.1f} %</td></tr>')
        h.append("</tbody></table>")
        if len(shown) < len(shares):
            rest = len(shares) - len(shown)
            h.append(f"<p><small>and {rest} part{'s' if rest != 1 else ''} under 0.1 % "
                     "(all in the JSON report)</small></p>")
    h.append("</div></div></div>")
    return "".join(h)


def render_html(result: CheckResult) -> str:
    a = result.analysis
    board = a.board
    findings = result.findings
    fids = [finding_id(i) for i in range(len(findings))]
    by_m = checks_by_measurement(result.evaluation)
    loop_labels = {id(m): f"{value_text(m.value, m.unit)}"
                   for m in a.measurements if m.quantity == "hot_loop.area" and m.value is not None}

    h: list[str] = []
    h.append("<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">")
    h.append('<meta name="viewport" content="width=device-width, initial-scale=1">')
    h.append(f"<title>loopcheck: {escape(board.name)}</title>")
    h.append(f"<style>{REPORT_CSS}{_toggle_css(len(board.layers))}"
             f"{_loop_toggle_css(len(a.stages), len(board.layers))}</style></head><body>")

    # --- header with the verdict ---
    counts = result.counts()
    if result.fail_on == "never":
        verdict, vcls = "not gated", "open"
    elif result.failed:
        verdict, vcls = f"fails at --fail-on {result.fail_on}", "fail"
    else:
        verdict, vcls = f"passes at --fail-on {result.fail_on}", "pass"
    if result.gaps and vcls == "pass":
        verdict, vcls = f"incomplete: passes at --fail-on {result.fail_on} what was checked", "open"
    if result.internal_errors:
        verdict, vcls = "could not be completed: internal error (exit 3)", "fail"
    h.append("<header>")
    h.append(f"<h1>Power-stage layout check: {escape(board.name)}</h1>")
    h.append(f'<div class="sub">loopcheck {escape(result.tool_version)} &middot; rule deck '
             f'<code>{escape(result.deck.name)}</code> &middot; {len(board.layers)} copper layers '
             f'&middot; {len(a.stages)} power stage{"s" if len(a.stages) != 1 else ""}</div>')
    h.append(f'<div class="verdict {vcls}">{escape(verdict)}</div> <span class="counts">')
    for s in SEVERITIES:
        h.append(f'<span class="sev-{s}">{counts[s]} {s}</span>')
    h.append(f'<span class="sev-waived">{counts["waived"]} waived</span></span>')
    h.append("</header><main>")

    # --- cautions first: nobody should miss them ---
    h.append('<section class="caution" id="cautions"><strong>Read this first.</strong>')
    for c in CAUTIONS:
        h.append(f"<p>{escape(c)}</p>")
    h.append("</section>")
    if result.internal_errors:
        from ..crashreport import how_to_report

        h.append('<section class="caution internal-error" id="internal-errors" '
                 'style="border-left-color: var(--err); background:#fdecec">'
                 '<strong>The check could not be completed: internal error.</strong> '
                 'loopcheck itself failed (a bug, not a finding about the board); what it '
                 'stopped is not checked.<ul>')
        for e in result.internal_errors:
            h.append(f"<li>{escape(e.where())}: <code>{escape(e.error)}</code> (report id "
                     f"<code>{escape(e.report_id)}</code>"
                     + (f"; traceback in <code>{escape(e.traceback_file)}</code>"
                        if e.traceback_file else "") + ")</li>")
        h.append(f"</ul><p>{escape(how_to_report(result.internal_errors).splitlines()[-1].strip())}"
                 "</p></section>")
    if result.gaps:
        h.append('<section class="caution" id="gaps"><strong>Not covered by this check.</strong>')
        h.append("<ul>" + "".join(f"<li>{escape(g)}</li>" for g in result.gaps) + "</ul></section>")
    if a.measurement_stopped:
        h.append(f'<section class="caution"><strong>Measurement stopped:</strong> '
                 f'{escape(a.measurement_stopped)}</section>')
    if not a.connectivity_checked:
        h.append('<section class="caution"><strong>Connectivity not checked:</strong> '
                 'there is no netlist.</section>')

    # --- the board ---
    h.append('<section id="board"><h2>The board</h2>')
    h.append(copper_defs(board))
    n_layers = len(board.layers)
    for i in range(n_layers):
        # inner layers (mostly planes) start hidden: they would cover the routes on the outside
        shown = " checked" if i in (0, n_layers - 1) else ""
        h.append(f'<input type="checkbox" class="toggle" id="show-layer-{i}"{shown}>')
    h.append('<input type="checkbox" class="toggle" id="show-overlays" checked>')
    h.append('<input type="checkbox" class="toggle" id="show-markers" checked>')
    h.append('<div class="viewer"><div class="board-frame">')
    h.append(board_svg(board, a.measurements, findings, fids, value_labels=loop_labels,
                       layer_href=True))
    h.append('</div><div class="legend"><strong>Layers</strong> (click to show or hide)')
    for i, layer in enumerate(board.layers):
        colour = layer_colour(i, len(board.layers))
        h.append(f'<label for="show-layer-{i}"><span class="sw" style="background:{colour}">'
                 f'</span>{escape(layer.name)} <small>{escape(layer.file or "")}</small></label>')
    h.append('<p><strong>Drawn from the measurements</strong></p>')
    h.append('<label for="show-overlays"><span class="sw" style="background:rgba(255,84,64,.6)">'
             '</span>hot loop (area shaded)</label>')
    h.append('<label for="show-overlays"><span class="sw" style="background:#ffe14d"></span>'
             'input-capacitor route</label>')
    h.append('<label for="show-overlays"><span class="sw" style="background:#55e0d0"></span>'
             'sense routes</label>')
    h.append('<p><strong>Findings</strong></p>')
    for s in SEVERITIES:
        h.append(f'<label for="show-markers"><span class="sw" style="background:'
                 f'{SEVERITY_COLOURS[s]}"></span>{s}</label>')
    h.append(f'<label for="show-markers"><span class="sw" style="background:{WAIVED_COLOUR}">'
             '</span>waived</label>')
    h.append('<p><small>Numbers on the board link to the findings table.</small></p>')
    h.append("</div></div></section>")

    # --- findings ---
    h.append('<section id="findings"><h2>Findings</h2>')
    if findings:
        h.append("<table><thead><tr><th>#</th><th>severity</th><th>rule</th><th>finding</th>"
                 "<th>where</th></tr></thead><tbody>")
        for i, f in sorted_findings(findings):
            fid = fids[i]
            sev = "waived" if f.waived else f.severity
            colour = WAIVED_COLOUR if f.waived else SEVERITY_COLOURS[f.severity]
            where = []
            if f.x_mm is not None and f.y_mm is not None:
                where.append(f"({f.x_mm:.1f}, {f.y_mm:.1f}) mm")
            if f.layer:
                where.append(escape(f.layer))
            if f.terminals:
                where.append(escape(" ".join(f.terminals)))
            msg = escape(f.message)
            if f.waived:
                msg += f'<br><em>waived ({escape(f.severity)}): {escape(f.waiver_reason or "")}</em>'
            rule_link = (f'<a href="#rule-{escape(f.rule)}">{escape(f.rule)}</a>'
                         if f.rule in RULE_DOCS else escape(f.rule))
            h.append(f'<tr id="{fid}"><td><a class="badge" style="background:{colour}" '
                     f'href="#marker-{fid}">{i + 1}</a></td><td class="sev sev-{sev}">{sev}</td>'
                     f'<td class="rule">{rule_link}</td><td>{msg}</td><td>{"<br>".join(where)}</td></tr>')
        h.append("</tbody></table>")
    else:
        h.append("<p>No findings.</p>")
    h.append("</section>")

    # --- measurements per stage ---
    for k, stage in enumerate(a.stages):
        h.append(f'<section id="stage-{escape(stage.name)}"><h2>Stage {escape(stage.name)}: '
                 f'{escape(stage.topology)}</h2>')
        nets = ", ".join(f"{k} <code>{escape(v)}</code>" for k, v in (
            ("input", stage.input_net), ("output", stage.output_net),
            ("switch node", stage.switch_node), ("ground", stage.ground_net)) if v)
        h.append(f"<p>{escape(stage.switching or '')} switching; {nets}</p>")
        if stage.hot_loop:
            h.append(f"<p>Hot loop: <code>{escape(' → '.join(stage.hot_loop))}</code></p>")
        if stage.roles:
            roles = ", ".join(f"{escape(r.name.replace('_', ' '))} <code>{escape(r.ref)}</code>"
                              for r in stage.roles)
            h.append(f"<p>Roles: {roles}</p>")
        for miss in stage.missing:
            h.append(f"<p><em>Missing: {escape(miss)}</em></p>")
        headline = layout_loss_headline(a.measurement(stage.name, "layout_loss"))
        h.append(f'<p class="headline" id="layout-loss-{escape(stage.name)}"><strong>'
                 f'{escape(headline)}</strong></p>')
        h.append("<table><thead><tr><th>measurement</th><th>value</th><th>limits</th>"
                 "<th>status</th><th>rule</th></tr></thead><tbody>")
        for m in a.measurements_for(stage.name):
            checks = by_m.get(id(m), [])
            c = checks[0] if checks else None
            label = path_label(m)
            value = value_text(m.value, m.unit)
            if m.value is None and m.not_made:
                value = f"not measured: {m.not_made}"
            status = c.status if c else ""
            scls = "st-" + status.replace(" ", "-") if status else ""
            rule = escape(c.rule) if c else ""
            h.append(f'<tr><td>{escape(label)}</td><td class="num">{escape(value)}</td>'
                     f'<td>{escape(limits_text(c, m.unit))}</td>'
                     f'<td class="{scls}">{escape(status)}</td><td>{rule}</td></tr>')
        for c in result.evaluation.checks:
            if c.stage == stage.name and c.measurement is None:
                h.append(f'<tr><td>{escape(c.quantity)}</td><td class="num">not measured</td>'
                         f'<td>{escape(limits_text(c, None))}</td>'
                         f'<td class="st-not-made">{escape(c.status)}</td>'
                         f'<td>{escape(c.rule)}</td></tr>')
        h.append("</tbody></table>")
        h.append(_stage_loop_figure(result, stage, k))
        h.append("</section>")

    # --- each layer on its own ---
    h.append('<section id="layers"><h2>Copper layers</h2><div class="layers">')
    for i, layer in enumerate(board.layers):
        svg = board_svg(board, [], [], [], layers=[i], markers=False, overlays=False,
                        css_id=f"layer-view-{i}", layer_href=True)
        h.append(f"<figure>{svg}<figcaption>{escape(layer.name)} &middot; "
                 f"{escape(layer.file or 'no file')} &middot; copper "
                 f"{layer.copper_area_mm2:.0f} mm²</figcaption></figure>")
    h.append("</div></section>")

    # --- assumptions ---
    assumptions = report_assumptions(a)
    for m in a.measurements:
        assumptions += list(m.assumptions)
    assumptions = list(dict.fromkeys(assumptions))
    h.append('<section id="assumptions"><h2>Assumptions</h2>')
    if assumptions:
        h.append("<ul>" + "".join(f"<li>{escape(x)}</li>" for x in assumptions) + "</ul>")
    else:
        h.append("<p>None recorded.</p>")
    for msg in a.messages:
        h.append(f"<p>{escape(msg)}</p>")
    h.append("</section>")

    # --- the rules behind the findings ---
    names = list(dict.fromkeys(f.rule for f in findings if f.rule in RULE_DOCS))
    names += [n for n in result.deck.rules if n not in names and n in RULE_DOCS]
    h.append('<section id="rules"><h2>What the rules measure</h2>')
    for n in names:
        d = RULE_DOCS[n]
        rule = result.deck.rules.get(n)
        limits = rule.limits_text() if rule is not None else ""
        open_attr = " open" if any(f.rule == n for f in findings) else ""
        h.append(f'<details id="rule-{escape(n)}"{open_attr}><summary><code>{escape(n)}</code> '
                 f'&mdash; {escape(d.title)}'
                 + (f' <small>({escape(limits)})</small>' if limits else "") + "</summary><dl>")
        for head, body in (("Measures", d.measures), ("Why it matters", d.why),
                           ("How to fix it", d.fix), ("How it is computed", d.formula),
                           ("Known limits", d.limits)):
            h.append(f"<dt>{head}</dt><dd>{escape(body)}</dd>")
        if rule is not None and rule.source:
            h.append(f"<dt>Threshold source</dt><dd>{escape(rule.source)}</dd>")
        h.append("</dl></details>")
    h.append("</section></main>")
    h.append("<footer>" + " ".join(escape(c) for c in CAUTIONS) + "</footer></body></html>\n")
    return "".join(h)
