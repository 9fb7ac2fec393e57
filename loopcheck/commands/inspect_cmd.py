"""``loopcheck inspect BOARD``: the board as read (layers, holes, nets, outline) and its connectivity.

Exit code 0 when connectivity shows no error (or could not be checked), 1 with error findings,
2 for bad input or usage (the CLI frame turns InputError into one line on stderr).
"""

from __future__ import annotations

import sys

import click

from ..connectivity import check_connectivity
from ..load import load_board
from ..project import load_project
from ..report.inspect import inspect_data, render_json, render_text


@click.command("inspect")
@click.argument("board", type=click.Path(exists=False, dir_okay=True, file_okay=True))
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="Output format.")
def command(board: str, fmt: str) -> None:
    """Read BOARD (a folder or .zip of fab outputs, or a loopcheck.toml) and show what was found."""
    project = load_project(board)
    b = load_board(project)
    result = check_connectivity(b)
    data = inspect_data(b, result)
    text = render_json(data) if fmt == "json" else render_text(data)
    click.echo(text, nl=False)
    sys.exit(1 if any(f.severity == "error" for f in result.findings) else 0)
