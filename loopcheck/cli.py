"""The command line: argument handling and exit codes only; the work is done elsewhere.

Exit codes: 0 clean, 1 findings at or above the failing severity, 2 bad input or usage,
3 the check could not be completed (an internal error: a bug in loopcheck).
"""

from __future__ import annotations

import sys

import click

from .errors import InputError


class _Group(click.Group):
    """Turns InputError (and file errors) into one line on stderr and exit code 2, and any other
    exception (a bug) into one message naming what to send, exit code 3; no traceback on the
    terminal (it goes to a temporary file the message names)."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        ctx.meta["loopcheck.argv"] = list(args)     # the command line, for bug reports
        return super().parse_args(ctx, args)

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
        except (click.exceptions.ClickException, click.exceptions.Abort, click.exceptions.Exit):
            raise                                 # usage errors and exits: click's own handling
        except Exception as exc:                  # the CLI's boundary: a bug, exit 3
            from .crashreport import EXIT_INTERNAL, how_to_report, internal_error

            click.echo(how_to_report([internal_error(_command_name(ctx), exc)]), err=True)
            sys.exit(EXIT_INTERNAL)


def _command_name(ctx: click.Context) -> str:
    sub = ctx.invoked_subcommand
    return f"'{sub}' command" if sub else "command line"


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="loopcheck")
def main() -> None:
    """Check the layout of switch-mode power stages from fab outputs."""


# Each command is registered from its own module so that cli.py stays argument handling only.
from .commands import register  # noqa: E402

register(main)
