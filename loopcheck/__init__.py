"""loopcheck: layout checks for switch-mode power stages, read from fab outputs."""

__version__ = "0.1.0"
