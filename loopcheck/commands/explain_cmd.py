"""``loopcheck explain RULE``: what a rule measures, why it matters, how to fix it."""

from __future__ import annotations

import difflib

import click

from ..errors import InputError
from ..rules.docs import RULE_DOCS, explain_text


@click.command("explain")
@click.argument("rule")
def command(rule: str) -> None:
    """Explain RULE: what it measures, why it matters, how to fix it, the formula, its limits."""
    doc = RULE_DOCS.get(rule)
    if doc is None:
        close = difflib.get_close_matches(rule, list(RULE_DOCS), n=3)
        hint = f" (did you mean {', '.join(close)}?)" if close else ""
        raise InputError(f"no rule named '{rule}'{hint}; `loopcheck rules` lists them")
    click.echo(explain_text(doc), nl=False)
