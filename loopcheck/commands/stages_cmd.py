"""``loopcheck stages BOARD``: the power stages found from the netlist, their roles and hot loops.

Prints each stage (topology, switching, nets), every role with its confidence and evidence, the
hot-loop terminals, what is missing, and the operating point with where each value came from.
``--write-project PATH`` writes a starting loopcheck.toml that names what was found (refused when
PATH exists, unless ``--force``; written whole or not at all).

Exit code 0 (also when no stage is found: the text says so), 2 for bad input or usage.
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from ..errors import InputError
from ..fileio import write_atomic
from ..load import load_board
from ..project import load_project
from ..report.stages import SCHEMA, project_text, render_text, stages_data  # noqa: F401
from ..stages import find_stages


def _write_whole(path: Path, text: str) -> None:
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError("folder does not exist", path=str(folder))
    write_atomic(path, text)


@click.command("stages")
@click.argument("board", type=click.Path(exists=False, dir_okay=True, file_okay=True))
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="Output format.")
@click.option("--write-project", "write_project", type=click.Path(), default=None, metavar="PATH",
              help="Write a starting loopcheck.toml naming the stages found (PATH is the file).")
@click.option("--force", is_flag=True, help="Overwrite the --write-project file if it exists.")
@click.option("--board", "board_name", default=None, metavar="NAME",
              help="The board to read when the fab outputs hold several (told apart by subfolder or "
                   "file-name stem).")
def command(board: str, fmt: str, write_project: str | None, force: bool, board_name: str | None) -> None:
    """Find the power stages on BOARD (a folder or .zip of fab outputs, or a loopcheck.toml)."""
    if write_project is not None and Path(write_project).is_dir():
        # before the slow part, and one line (click's own check prints a three-line usage error)
        raise InputError("--write-project: is a folder; give the path of the file to write, "
                         "e.g. loopcheck.toml inside it", path=write_project)
    project = load_project(board)
    b = load_board(project, board=board_name)
    search = find_stages(b, project)
    if write_project is not None:
        path = Path(write_project)
        if path.exists() and not force:
            raise InputError("exists; not overwritten (use --force to replace it)", path=str(path))
        _write_whole(path, project_text(project, b, search, path))
        search.messages.append(f"starting project file written to {path}")
    if fmt == "json":
        click.echo(json.dumps(stages_data(project.name, search), indent=2))
    else:
        click.echo(render_text(project.name, search), nl=False)
