"""The command line: argument handling and exit codes only; the work is done elsewhere.

Exit codes: 0 clean, 1 findings at or above the failing severity, 2 bad input or usage.
"""

from __future__ import annotations

import sys

import click

from .errors import InputError


class _Group(click.Group):
    """Turns InputError (and file errors) into one line on stderr and exit code 2, no traceback."""

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except InputError as exc:
            click.echo(f"loopcheck: {exc}", err=True)
            sys.exit(2)
        except (OSError, UnicodeDecodeError) as exc:
            name = getattr(exc, "filename", None)
            where = f"{name}: " if name else ""
            click.echo(f"loopcheck: {where}{getattr(exc, 'strerror', None) or exc}", err=True)
            sys.exit(2)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="loopcheck")
def main() -> None:
    """Check the layout of switch-mode power stages from fab outputs."""


# Each command is registered from its own module so that cli.py stays argument handling only.
from .commands import register  # noqa: E402

register(main)
