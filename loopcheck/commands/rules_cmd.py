"""``loopcheck rules``: the rules of the active deck with their thresholds."""

from __future__ import annotations

import click

from ..measure import QUANTITIES, base_quantity
from ..rules.deck import load_deck, packaged_decks
from ..rules.docs import RULE_DOCS


@click.command("rules")
@click.option("--deck", "deck", default=None, metavar="NAME|PATH",
              help="Rule deck: a packaged name or a .toml file (default: 'default', or the one "
                   "the --board project file names).")
@click.option("--board", "board", default=None, metavar="BOARD",
              help="Apply this board's project-file overrides (loopcheck.toml).")
def command(deck: str | None, board: str | None) -> None:
    """List the rules of the active deck with their thresholds."""
    project = None
    if board is not None:
        from ..project import load_project

        project = load_project(board)
    d = load_deck(deck, project)
    click.echo(f"rule deck: {d.name} ({d.path})")
    if d.description:
        click.echo(f"  {d.description}")
    click.echo(f"  packaged decks: {', '.join(packaged_decks())}")
    click.echo("")
    rows = [("rule", "judges", "limits", "source")]
    for r in d.rules.values():
        if r.kind == "measurement":
            unit = QUANTITIES.get(base_quantity((r.quantity or "").replace("*", "input")),
                                  ("", ""))[0]
            unit = "" if unit == "count" else unit
            limits = r.limits_text(unit)
            judges = r.quantity or ""
        else:
            limits = r.severity or ""
            judges = "board integrity" if r.kind == "integrity" else "project file"
        if not r.enabled:
            limits = "off"
        src = r.origin if r.origin and "loopcheck.toml" in r.origin else r.source
        rows.append((r.name, judges, limits, src))
    widths = [max(len(row[i]) for row in rows) for i in range(4)]
    for row in rows:
        click.echo("  " + "  ".join(c.ljust(w) for c, w in zip(row, widths)).rstrip())
    for stage, per in d.stage_rules.items():
        for name, r in per.items():
            click.echo(f"  stage {stage}: {name} {r.limits_text()}")
    click.echo("")
    click.echo("`loopcheck explain RULE` says what a rule measures and how to fix it.")
    missing = [n for n in RULE_DOCS if n not in d.rules]
    if missing:
        click.echo(f"not in this deck: {', '.join(missing)}")
