"""Measurements and findings: the plain data passed from measure/ to rules and from rules to report."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

SEVERITIES = ("error", "warning", "note")   # the SARIF levels, most severe first


@dataclass
class Drawing:
    """A shape for the report to draw: a closed polygon, an open polyline, or a point marker."""

    kind: str                                 # "polygon" | "polyline" | "point"
    points: list[tuple[float, float]]         # mm
    layer: str | None = None                  # copper layer name, None: all / projected


@dataclass
class Measurement:
    """A named quantity with value, unit and the assumptions that produced it.

    ``quantity`` is a dotted name from the fixed list in ``loopcheck.measure.QUANTITIES``
    (``hot_loop.area``, ``input_cap.path_length``, ``path.input.temperature_rise`` ...).
    A measurement that could not be made has ``value = None`` and ``not_made`` says why.
    """

    quantity: str
    value: float | None
    unit: str                                 # "mm2", "nH", "mm", "%", "C", "mohm", "W", "pF", "MHz", "nJ", "count"
    label: str                                # plain words: "hot-loop area"
    stage: str | None = None
    x_mm: float | None = None
    y_mm: float | None = None
    layer: str | None = None
    terminals: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()
    refs: tuple[str, ...] = ()                # components involved (the input cap, the sense resistor)
    assumptions: tuple[str, ...] = ()
    not_made: str | None = None
    drawings: list[Drawing] = field(default_factory=list)
    detail: dict[str, Any] = field(default_factory=dict)   # further numbers, units in key names

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass
class Finding:
    """A rule's verdict on a measurement (or on the board's integrity)."""

    rule: str
    severity: str                             # one of SEVERITIES
    message: str
    stage: str | None = None
    value: float | None = None
    limit: float | None = None
    unit: str | None = None
    x_mm: float | None = None
    y_mm: float | None = None
    layer: str | None = None
    nets: tuple[str, ...] = ()
    terminals: tuple[str, ...] = ()
    quantity: str | None = None
    waived: bool = False
    waiver_reason: str | None = None

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["nets"] = list(self.nets)
        d["terminals"] = list(self.terminals)
        return d


@dataclass
class InternalError:
    """A part of the check that could not be completed because loopcheck itself failed (a bug).

    Not a finding about the board and not a stated gap: the run exits 3 whatever ``--fail-on``
    says. ``traceback_file`` is a file in the system's temporary folder holding the traceback
    (never beside the inputs); ``report_id`` names it shortly in messages.
    """

    module: str                               # "hot loop measurement", "stage detection", ...
    error: str                                # exception class and message: "IndexError: ..."
    stage: str | None = None
    report_id: str = ""                       # short hash of the traceback
    traceback_file: str | None = None
    traceback: str = ""

    def where(self) -> str:
        return f"{self.module}" + (f" of {self.stage}" if self.stage else "")

    def to_dict(self) -> dict[str, Any]:
        return {"module": self.module, "stage": self.stage, "error": self.error,
                "report_id": self.report_id, "traceback_file": self.traceback_file}
