"""Matching two revisions of one board: measurements by (stage, quantity), findings by
(rule, stage, quantity), so a diff can show before, after and the change."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .findings import Finding, Measurement


@dataclass
class MeasurementChange:
    stage: str | None
    quantity: str
    label: str
    unit: str
    old: Measurement | None               # None: the quantity is new in NEW
    new: Measurement | None               # None: the quantity is gone from NEW

    @property
    def old_value(self) -> float | None:
        return None if self.old is None or self.old.value is None else float(self.old.value)

    @property
    def new_value(self) -> float | None:
        return None if self.new is None or self.new.value is None else float(self.new.value)

    @property
    def change(self) -> float | None:
        """new - old, in the unit, when both were measured (0 for the same number up to rounding)."""
        old, new = self.old_value, self.new_value
        if old is None or new is None:
            return None
        change = new - old
        if abs(change) <= 1e-9 * max(abs(old), abs(new)):
            return 0.0
        return change

    @property
    def change_pct(self) -> float | None:
        """100 * change / |old|, when both were measured and old is not zero."""
        change = self.change
        if change is None:
            return None
        old = self.old_value
        scale = max(abs(old), abs(self.new_value))
        if abs(old) > 1e-6 * max(scale, 1e-300) and abs(old) > 1e-12:
            return 100.0 * change / abs(old)
        return None


@dataclass
class FindingChange:
    key: tuple
    old: Finding | None
    new: Finding | None

    @property
    def status(self) -> str:
        """"new", "resolved", "changed" (severity or waiver) or "same"."""
        if self.old is None:
            return "new"
        if self.new is None:
            return "resolved"
        if (self.old.severity, self.old.waived) != (self.new.severity, self.new.waived):
            return "changed"
        return "same"


@dataclass
class Comparison:
    measurements: list[MeasurementChange] = field(default_factory=list)
    findings: list[FindingChange] = field(default_factory=list)

    def findings_with(self, status: str) -> list[FindingChange]:
        return [f for f in self.findings if f.status == status]


def _keyed(items: list[Any], key) -> dict[tuple, Any]:
    """Key each item by key(item) plus its occurrence number, so repeats pair in order."""
    seen: dict[tuple, int] = {}
    out: dict[tuple, Any] = {}
    for it in items:
        k = key(it)
        n = seen.get(k, 0)
        seen[k] = n + 1
        out[k + (n,)] = it
    return out


def match_measurements(old: list[Measurement], new: list[Measurement]) -> list[MeasurementChange]:
    a = _keyed(old, lambda m: (m.stage, m.quantity))
    b = _keyed(new, lambda m: (m.stage, m.quantity))
    out = []
    for k in list(a) + [k for k in b if k not in a]:
        mo, mn = a.get(k), b.get(k)
        ref = mn or mo
        out.append(MeasurementChange(stage=k[0], quantity=k[1], label=ref.label, unit=ref.unit,
                                     old=mo, new=mn))
    return out


def match_findings(old: list[Finding], new: list[Finding]) -> list[FindingChange]:
    def key(f: Finding) -> tuple:
        if f.quantity is None:          # integrity and project findings: by their message
            return (f.rule, f.stage, f.message)
        return (f.rule, f.stage, f.quantity)

    a = _keyed(old, key)
    b = _keyed(new, key)
    return [FindingChange(k, a.get(k), b.get(k)) for k in list(a) + [k for k in b if k not in a]]


def compare(old_measurements: list[Measurement], new_measurements: list[Measurement],
            old_findings: list[Finding], new_findings: list[Finding]) -> Comparison:
    return Comparison(match_measurements(old_measurements, new_measurements),
                      match_findings(old_findings, new_findings))
