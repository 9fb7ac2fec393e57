"""Internal errors (bugs in loopcheck): record them, keep the traceback, tell the user what to send.

A traceback goes to a new file in the system's temporary folder (``tempfile``), never beside the
inputs and never on the terminal; the messages name that file, a short report id, the command
and the version, which is what the project needs to reproduce the fault.
"""

from __future__ import annotations

import hashlib
import os
import sys
import tempfile
import traceback as tb

from . import __version__
from .findings import InternalError

EXIT_INTERNAL = 3


def traceback_text(exc: BaseException) -> str:
    return "".join(tb.format_exception(type(exc), exc, exc.__traceback__))


def save_traceback(text: str, report_id: str) -> str | None:
    """Write ``text`` to a new temporary file; its path, or None when the folder is not writable."""
    try:
        fd, path = tempfile.mkstemp(prefix=f"loopcheck-{report_id}-", suffix=".txt")
    except OSError:
        return None
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(f"loopcheck {__version__}\ncommand: {command_line()}\n"
                 f"python {sys.version.split()[0]} on {sys.platform}\n\n{text}")
    return path


def internal_error(module: str, exc: BaseException, stage: str | None = None) -> InternalError:
    """The record of one internal error, its traceback saved to a temporary file."""
    text = traceback_text(exc)
    report_id = hashlib.sha1(text.encode("utf-8", "replace")).hexdigest()[:10]
    message = str(exc).splitlines()[0][:200] if str(exc) else ""
    error = type(exc).__name__ + (f": {message}" if message else "")
    return InternalError(module=module, error=error, stage=stage, report_id=report_id,
                         traceback_file=save_traceback(text, report_id), traceback=text)


def command_line() -> str:
    """The command as given (the CLI keeps its arguments; else the process's own)."""
    import shlex

    args = sys.argv[1:]
    try:
        import click

        ctx = click.get_current_context(silent=True)
        if ctx is not None and "loopcheck.argv" in ctx.meta:
            args = ctx.meta["loopcheck.argv"]
    except ImportError:
        pass
    return "loopcheck " + shlex.join(args) if args else "loopcheck"


def how_to_report(errors: list[InternalError]) -> str:
    """What the user sees on stderr: the check could not be completed, and what to send."""
    lines = [f"loopcheck: the check could not be completed: {len(errors)} internal "
             f"error{'s' if len(errors) != 1 else ''} (a bug in loopcheck, not a finding "
             "about the board)"]
    for e in errors:
        lines.append(f"  {e.where()}: {e.error} (report id {e.report_id})")
    files = [e.traceback_file for e in errors if e.traceback_file]
    lines.append("  To get it fixed, send the loopcheck project: this command "
                 f"({command_line()}), the version (loopcheck {__version__})"
                 + (", and the traceback file" + ("s " if len(files) > 1 else " ") + ", ".join(files)
                    if files else ", and the report id above") + ".")
    return "\n".join(lines)
