"""One module per CLI command; each defines ``command`` (a click command)."""

from __future__ import annotations

import importlib

import click

_COMMANDS = ("inspect", "stages", "check", "explain", "rules", "diff")


def register(group: click.Group) -> None:
    for name in _COMMANDS:
        try:
            module = importlib.import_module(f"{__name__}.{name}_cmd")
        except ModuleNotFoundError as exc:
            if exc.name == f"{__name__}.{name}_cmd":
                continue          # command not built yet
            raise
        group.add_command(module.command)
