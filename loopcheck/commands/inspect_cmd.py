"""``loopcheck inspect BOARD``: the board as read (layers, holes, nets, outline) and its connectivity.

Exit code 0 when connectivity shows no error (or could not be checked), 1 with error findings,
2 for bad input or usage (the CLI frame turns InputError into one line on stderr).
"""

from __future__ import annotations

import sys

import click

from . import boards
from ..connectivity import check_connectivity
from ..errors import InputError
from ..load import load_board
from ..project import load_project
from ..report.inspect import inspect_data, render_json, render_text


@click.command("inspect")
@click.argument("board", type=click.Path(exists=False, dir_okay=True, file_okay=True))
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="Output format.")
@click.option("--output", "output", default=None, metavar="PATH",
              help="Write the report to PATH (whole or not at all) instead of standard output; with "
                   "several boards, one file per board, the board's name put before the suffix.")
@click.option("--board", "board_name", default=None, metavar="NAME",
              help="The board to read when the fab outputs hold several (told apart by subfolder or "
                   "file-name stem); default: each in turn, reported separately.")
def command(board: str, fmt: str, output: str | None, board_name: str | None) -> None:
    """Read BOARD (a folder or .zip of fab outputs, or a loopcheck.toml) and show what was found.

    Exit code: 0 no connectivity error, 1 connectivity errors, 2 bad input; with several boards
    the worst of them.
    """
    from .check_cmd import check_writable
    from ..fileio import write_atomic

    project = load_project(board)
    names = boards.boards_to_run(project, board_name)
    outs = [pairs[0][1] for pairs in boards.per_board_outputs([(fmt, output)], names)]
    for out in outs:
        if out is not None:
            check_writable(out)

    def one(name: str | None) -> int:
        b = load_board(project, board=name)
        result = check_connectivity(b)
        data = inspect_data(b, result)
        text = render_json(data) if fmt == "json" else render_text(data)
        out = outs[names.index(name)]
        if out is None:
            boards.heading(name, names)
            click.echo(text, nl=False)
        else:
            try:
                write_atomic(out, text)
            except OSError as exc:
                raise InputError(f"cannot write the report: {exc.strerror or exc}", path=out) from None
        return 1 if any(f.severity == "error" for f in result.findings) else 0

    sys.exit(boards.run_each(names, one))
