"""``loopcheck diff OLD NEW``: two revisions of one board side by side."""

from __future__ import annotations

import sys

import click

from . import check_cmd

DIFF_FORMATS = ("text", "json", "html")


def renderer(fmt: str):
    from ..report import diff as d

    return {"text": d.render_diff_text, "json": d.render_diff_json,
            "html": d.render_diff_html}[fmt]


@click.command("diff")
@click.argument("old", type=click.Path(exists=False))
@click.argument("new", type=click.Path(exists=False))
@click.option("--deck", "deck", default=None, metavar="NAME|PATH",
              help="Rule deck for both revisions (default: each project file's, else 'default').")
@click.option("--format", "formats", multiple=True, type=click.Choice(DIFF_FORMATS),
              help="Report format; repeatable, paired in order with --output.")
@click.option("--output", "outputs", multiple=True, metavar="PATH",
              help="Where the report of the matching --format goes (none: stdout).")
@click.option("--fail-on", type=click.Choice(check_cmd.FAIL_ON), default="never",
              show_default=True,
              help="Exit 1 when NEW has a new unwaived finding at or above this severity.")
@click.option("--board", "board_name", default=None, metavar="NAME",
              help="The board to compare when the fab outputs hold several (the same name in both).")
@click.option("--quiet", "-q", is_flag=True, help="No progress messages on stderr.")
def command(old: str, new: str, deck: str | None, formats: tuple[str, ...],
            outputs: tuple[str, ...], fail_on: str, board_name: str | None, quiet: bool) -> None:
    """Compare two revisions OLD and NEW of one board: each measurement before, after and the
    change; the findings that appear and those that are resolved."""
    from ..compare import compare
    from ..report.diff import DiffResult
    from ..rules.evaluate import at_or_above

    pairs = check_cmd.pair_outputs(formats, outputs)
    for _, out in pairs:
        if out is not None:
            check_cmd.check_writable(out)
    progress = check_cmd.Progress(enabled=check_cmd.progress_wanted(quiet, pairs))
    kw = {"board_name": board_name} if board_name is not None else {}
    a = check_cmd.run_check(old, deck, "never", progress, **kw)
    b = check_cmd.run_check(new, deck, "never", progress, **kw)
    cmp = compare(a.analysis.measurements, b.analysis.measurements, a.findings, b.findings)
    result = DiffResult(a, b, cmp)
    check_cmd.emit(result, pairs, progress, render=renderer)
    worse = [fc for fc in cmp.findings_with("new")
             if not fc.new.waived and at_or_above(fc.new.severity, fail_on)]
    errors = a.internal_errors + b.internal_errors
    if errors:                     # a comparison of what was not measured is no comparison
        from ..crashreport import how_to_report

        click.echo(how_to_report(errors), err=True)
        sys.exit(3)
    sys.exit(1 if worse else 0)
