"""The whole measurement pipeline on one board: integrity, stages, measurements (no rules yet)."""

from __future__ import annotations

from dataclasses import dataclass, field

from .board import Board
from .findings import Finding, Measurement
from .powerstage import Stage


@dataclass
class Analysis:
    board: Board
    integrity: list[Finding]                 # netlist-open / -short / -alignment, default severities
    stages: list[Stage] = field(default_factory=list)
    measurements: list[Measurement] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)
    messages: list[str] = field(default_factory=list)   # stage detection: what is missing, and why
    connectivity_checked: bool = True        # False when there is no netlist
    measurement_stopped: str | None = None   # why measurement did not run (e.g. misaligned netlist)

    def measurements_for(self, stage: str) -> list[Measurement]:
        return [m for m in self.measurements if m.stage == stage]
