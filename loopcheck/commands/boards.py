"""Several boards in one folder of fab outputs: which boards a command works through, where
each board's reports go, and the worst exit code of them all. Used by ``inspect`` and ``check``.

Fab outputs of two or more boards side by side (told apart by subfolder or by file-name stem,
see :func:`loopcheck.readers.discover.list_boards`) are taken one board at a time, never mixed:

- ``--board NAME`` picks one board;
- without it every board is taken in turn and reported separately; the exit code is the worst
  of them (a board refused as bad input counts 2, and the others are still reported);
- a text report on standard output gets a heading line per board;
- a machine-read report (json, sarif, junit, html) of several boards is never put on standard
  output (two JSON documents in one stream are not JSON): the command refuses, before any work,
  with a one-line hint to use ``--board`` or ``--output``; with ``--output FILE`` each board's
  report goes to FILE with the board's name put before the suffix (``report.json`` ->
  ``report-controller.json``).
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Callable

import click

from ..errors import InputError


def boards_to_run(project, board: str | None) -> list[str | None]:
    """The boards a command works through: ``[board]`` when one is chosen, else each board the
    fab outputs hold, else ``[None]`` (one board, nothing to choose)."""
    if board is not None:
        return [board]
    from ..readers.discover import list_boards

    try:
        names = list_boards(project.fab, project.files,
                            project_file=str(project.path) if project.path else None)
    except InputError:
        return [None]      # reading the one board then reports the error, as without boards
    return list(names) or [None]


def output_for(path: str, board: str | None) -> str:
    """``report.json`` -> ``report-BOARD.json`` (a subfolder board's ``/`` becomes ``_``)."""
    if board is None:
        return path
    p = Path(path)
    safe = re.sub(r"[^\w.+-]+", "_", board).strip("_") or "board"
    return str(p.with_name(f"{p.stem}-{safe}{p.suffix}"))


def per_board_outputs(pairs: list[tuple[str, str | None]], names: list[str | None]
                      ) -> list[list[tuple[str, str | None]]]:
    """Each board's (format, output) pairs. Refuses (InputError, before any work) a machine-read
    report of several boards on standard output."""
    several = len(names) > 1
    if several:
        for fmt, out in pairs:
            if out is None and fmt != "text":
                raise InputError(f"{len(names)} boards in these fab outputs ({', '.join(map(str, names))}): "
                                 f"a {fmt} report on standard output would mix them; pick one with "
                                 f"--board NAME, or give --output FILE (one file per board, its name "
                                 f"put before the suffix)")
    return [[(fmt, output_for(out, name) if several and out is not None else out) for fmt, out in pairs]
            for name in names]


def heading(name: str | None, names: list[str | None]) -> None:
    """A heading line on standard output before a board's text report, when there are several."""
    if len(names) > 1:
        click.echo(f"=== board {name} ({names.index(name) + 1} of {len(names)}) ===")


def run_each(names: list[str | None], work: Callable[[str | None], int]) -> int:
    """Run ``work(board)`` for each board; the worst exit code. With several boards a board
    refused as bad input is reported on stderr (one line) and counts 2; the others still run.
    With one board the InputError goes up as it is (the CLI frame reports it)."""
    if len(names) == 1:
        return work(names[0])
    worst = 0
    for name in names:
        try:
            code = work(name)
        except InputError as exc:
            click.echo(f"loopcheck: board {name}: {exc}", err=True)
            code = 2
        worst = max(worst, code)
    return worst
