"""``loopcheck check BOARD``: read the board, measure it, judge it by a rule deck, report."""

from __future__ import annotations

import os
import sys
import threading
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Callable, Iterator

import click

from ..errors import InputError

FORMATS = ("text", "json", "sarif", "junit", "html")
FAIL_ON = ("error", "warning", "note", "never")


def renderer(fmt: str) -> Callable:
    """The report function of one format (imported on use, so a broken one breaks only itself)."""
    if fmt == "text":
        from ..report.text import render_text as r
    elif fmt == "json":
        from ..report.jsonreport import render_json as r
    elif fmt == "sarif":
        from ..report.sarif import render_sarif as r
    elif fmt == "junit":
        from ..report.junit import render_junit as r
    elif fmt == "html":
        from ..report.html import render_html as r
    else:                                            # click's Choice keeps us from here
        raise click.UsageError(f"unknown format {fmt}")
    return r


class Progress:
    """Progress on stderr for a run longer than ``after_s`` (a terminal only: never with --quiet,
    a report on stdout other than text, or a stderr that is not a terminal, such as CI logs).

    ``step(what)`` names a step once it has run past ``after_s`` seconds since the run began;
    ``tell(what)`` (the analysis's callback) names each measurement step from then on. The clock
    and the stream can be given (tests)."""

    def __init__(self, enabled: bool, stream=None, after_s: float = 2.0, clock=time.monotonic):
        self.stream = stream or sys.stderr
        self.enabled = enabled
        self.after_s = after_s
        self.clock = clock
        self.start = clock()

    def _write(self, text: str) -> None:
        self.stream.write(f"loopcheck: [{self.clock() - self.start:4.0f} s] {text}\n")
        self.stream.flush()

    def tell(self, what: str) -> None:
        if self.enabled and self.clock() - self.start >= self.after_s:
            self._write(what)

    @contextmanager
    def step(self, what: str) -> Iterator[None]:
        if not self.enabled:
            yield
            return
        lock = threading.Lock()
        state = {"shown": False, "finished": False}

        def announce() -> None:
            with lock:                # never after the step has ended: both lines or neither
                if not state["finished"]:
                    state["shown"] = True
                    self._write(f"{what} ...")

        wait = max(self.after_s - (self.clock() - self.start), 0.0)
        timer = threading.Timer(wait, announce)
        timer.daemon = True
        timer.start()
        try:
            yield
        finally:
            timer.cancel()
            with lock:
                state["finished"] = True
                if state["shown"]:
                    self._write(f"{what}: done")


def progress_wanted(quiet: bool, pairs: list[tuple[str, str | None]], stream=None) -> bool:
    """Progress only on a terminal, without --quiet, and not when a machine-read report goes
    to stdout (its reader is a program)."""
    stream = stream or sys.stderr
    if quiet or any(out is None and fmt != "text" for fmt, out in pairs):
        return False
    isatty = getattr(stream, "isatty", None)
    return bool(isatty and isatty())


def pair_outputs(formats: tuple[str, ...], outputs: tuple[str, ...]) -> list[tuple[str, str | None]]:
    """Pair ``--format`` and ``--output`` in order; formats beyond the outputs go to stdout."""
    formats = formats or ("text",)
    if len(outputs) > len(formats):
        raise click.UsageError(f"{len(outputs)} --output given for {len(formats)} --format: "
                               "give one --format per --output, in the same order")
    pairs = [(f, outputs[i] if i < len(outputs) and outputs[i] != "-" else None)
             for i, f in enumerate(formats)]
    if sum(1 for _, o in pairs if o is None) > 1:
        raise click.UsageError("only one --format can go to standard output; give the others "
                               "an --output PATH")
    seen: set[str] = set()
    for _, o in pairs:
        if o is not None:
            key = os.path.abspath(o)
            if key in seen:
                raise click.UsageError(f"--output {o} given twice")
            seen.add(key)
    return pairs


def check_writable(path: str) -> None:
    """Refuse an output path that cannot be written, before any work is done."""
    p = Path(path)
    parent = p.parent if str(p.parent) else Path(".")
    if p.is_dir():
        raise InputError("output path is a folder", path=path)
    if not parent.is_dir():
        raise InputError("cannot write the report: the folder does not exist", path=path)
    if not os.access(parent, os.W_OK | os.X_OK):
        raise InputError("cannot write the report: the folder is not writable", path=path)
    if p.exists() and not os.access(p, os.W_OK):
        raise InputError("cannot write the report: the file is not writable", path=path)


def _load_project(board: str):
    from ..project import load_project

    return load_project(board)


def _load_board(project, board_name: str | None = None):
    from ..load import load_board

    return load_board(project, board=board_name)


def _analyse(board, project, **kw):
    from ..analysis import analyse

    return analyse(board, project, **kw)


DEFAULT_TIME_BUDGET_S = 300.0
INDUCTANCE_METHODS = ("field", "fast")


def run_check(board: str, deck: str | None, fail_on: str, progress: Progress,
              time_budget_s: float | None = DEFAULT_TIME_BUDGET_S,
              inductance_method: str | None = None, fail_on_incomplete: bool = False,
              board_name: str | None = None):
    """The pipeline: project, board, analysis, evaluation. Returns a CheckResult.

    The time budget runs from here: measurements not started when it is used up are not made,
    for that reason (a stated gap). ``board_name``: which board, when the fab outputs hold several."""
    from ..report.common import CheckResult
    from ..rules import evaluate_all, load_deck

    deadline = time.monotonic() + time_budget_s if time_budget_s else None
    with progress.step("reading the project file"):
        project = _load_project(board)
    rule_deck = load_deck(deck, project)          # early: a bad deck fails before the slow part
    with progress.step("reading the fab outputs"):
        b = _load_board(project, board_name) if board_name is not None else _load_board(project)
    with progress.step("measuring the power stages"):
        analysis = _analyse(b, project, deadline=deadline, time_budget_s=time_budget_s,
                            inductance_method=inductance_method, progress=progress.tell)
    evaluation = evaluate_all(analysis, rule_deck, project)
    return CheckResult(analysis=analysis, evaluation=evaluation, project=project, fail_on=fail_on,
                       fail_on_incomplete=fail_on_incomplete)


def emit(result, pairs: list[tuple[str, str | None]], progress: Progress | None = None,
         render=None) -> None:
    """Render every report first, then write each one whole (temp file + os.replace).

    ``render(fmt)`` gives the function that turns ``result`` into text (default: the check
    reports; ``loopcheck diff`` passes its own)."""
    from ..report.common import write_atomic

    render = render or renderer
    with (progress or Progress(False)).step("writing the reports"):
        rendered = [(render(fmt)(result), out) for fmt, out in pairs]
    for text, out in rendered:
        if out is None:
            click.echo(text, nl=False)
        else:
            try:
                write_atomic(out, text)
            except OSError as exc:
                raise InputError(f"cannot write the report: {exc.strerror or exc}",
                                 path=out) from None


@click.command("check")
@click.argument("board", type=click.Path(exists=False))
@click.option("--deck", "deck", default=None, metavar="NAME|PATH",
              help="Rule deck: a packaged deck name (default, led-driver) or a .toml file. "
                   "Default: the deck the project file names, else 'default'.")
@click.option("--format", "formats", multiple=True, type=click.Choice(FORMATS),
              help="Report format; repeatable, paired in order with --output.")
@click.option("--output", "outputs", multiple=True, metavar="PATH",
              help="Where the report of the matching --format goes ('-' or none: stdout).")
@click.option("--fail-on", type=click.Choice(FAIL_ON), default="error", show_default=True,
              help="Exit 1 when an unwaived finding is at or above this severity.")
@click.option("--fail-on-incomplete", is_flag=True,
              help="Also exit 1 when the check did not cover everything (no netlist, no power "
                   "stage found, measurements not made); the reports list what was not covered.")
@click.option("--time-budget", "time_budget", type=click.FloatRange(min=0, min_open=True),
              default=DEFAULT_TIME_BUDGET_S, show_default=True, metavar="SECONDS",
              help="Time for the whole board; measurements not started by then are reported "
                   "as not made for that reason (the result is then incomplete).")
@click.option("--inductance", "inductance", type=click.Choice(INDUCTANCE_METHODS), default=None,
              help="Loop-inductance method: 'field' (a field solve of the copper) or 'fast' (the "
                   "route-based estimate). Default: the measurement's own default.")
@click.option("--board", "board_name", default=None, metavar="NAME",
              help="The board to check when the fab outputs hold several (told apart by subfolder "
                   "or file-name stem); default: each in turn, reported separately, the exit code "
                   "the worst of them. Several boards' machine-read reports need --output FILE "
                   "(one file per board, the board's name put before the suffix).")
@click.option("--quiet", "-q", is_flag=True, help="No progress messages on stderr.")
def command(board: str, deck: str | None, formats: tuple[str, ...], outputs: tuple[str, ...],
            fail_on: str, fail_on_incomplete: bool, time_budget: float, inductance: str | None,
            board_name: str | None, quiet: bool) -> None:
    """Check the power stages of BOARD (a fab-output folder, .zip or loopcheck.toml).

    Exit code 0: no unwaived finding at or above --fail-on (and, with --fail-on-incomplete,
    nothing left uncovered); 1: there are some; 2: bad input; 3: the check could not be
    completed (an internal error in loopcheck, whatever --fail-on says: the message names what
    to send to get it fixed).
    """
    from . import boards

    names = boards.boards_to_run(_load_project(board), board_name)
    per_board = boards.per_board_outputs(pair_outputs(formats, outputs), names)
    for pairs in per_board:
        for _, out in pairs:
            if out is not None:
                check_writable(out)

    def one(name: str | None) -> int:              # the work of one board, as before boards
        pairs = per_board[names.index(name)]
        progress = Progress(enabled=progress_wanted(quiet, pairs))
        kw = {"board_name": name} if name is not None else {}
        result = run_check(board, deck, fail_on, progress, time_budget_s=time_budget,
                           inductance_method=inductance, fail_on_incomplete=fail_on_incomplete, **kw)
        if any(out is None for _, out in pairs):
            boards.heading(name, names)
        emit(result, pairs, progress)
        if result.internal_errors:
            from ..crashreport import how_to_report

            click.echo(how_to_report(result.internal_errors), err=True)
        return result.exit_code()

    sys.exit(boards.run_each(names, one))
