"""``python -m loopcheck``: the same as the ``loopcheck`` command."""

from .cli import main

main(prog_name="loopcheck")
