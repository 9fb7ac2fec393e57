"""Small helpers shared by the measurement modules: building Measurements, duty cycle, switch current."""

from __future__ import annotations

from typing import Any

from ..findings import Drawing, Measurement
from ..powerstage import OperatingPoint, Stage
from . import QUANTITIES, base_quantity


class MeasurementGap(Exception):
    """A measurement cannot be made for a reason of the board (no route through the copper, no
    sense resistor, a value the user must give): the message says why, in the user's words.

    The pipeline (``analysis.measure_stage``) reports it as not made, a stated gap. Any other
    exception out of a measurement module is a bug in loopcheck and is reported as an internal
    error (exit code 3): raise this class, or a subclass, only for reasons of the board.
    """


def measurement(quantity: str, value: float | None, stage: Stage | str | None, **kw: Any) -> Measurement:
    """A Measurement with unit and label from ``QUANTITIES`` (path.<name>.<what> takes path.<what>'s)."""
    unit, label = QUANTITIES[base_quantity(quantity)]
    if quantity.startswith("path.") and quantity.count(".") == 2:
        label = f"{quantity.split('.')[1].replace('_', ' ')} path: {label}"
    name = stage.name if isinstance(stage, Stage) else stage
    kw.setdefault("assumptions", ())
    kw["assumptions"] = tuple(kw["assumptions"])
    return Measurement(quantity=quantity, value=None if value is None else float(value), unit=unit,
                       label=label, stage=name, **kw)


def not_made(quantity: str, stage: Stage | str | None, reason: str, **kw: Any) -> Measurement:
    return measurement(quantity, None, stage, not_made=reason, **kw)


def polyline(points, layer: str | None = None) -> Drawing:
    return Drawing("polyline", [(float(x), float(y)) for x, y, *_ in points], layer)


def polygon(points, layer: str | None = None) -> Drawing:
    return Drawing("polygon", [(float(x), float(y)) for x, y, *_ in points], layer)


def point(x: float, y: float, layer: str | None = None) -> Drawing:
    return Drawing("point", [(float(x), float(y))], layer)


# The largest duty cycle used: controllers keep a minimum off-time, and 1 - D divides currents.
MAX_DUTY_CYCLE = 0.98


def duty_cycle(stage: Stage, op: OperatingPoint, vin_v: float) -> tuple[float, str | None]:
    """The stage's duty cycle at ``vin_v``, and an assumption when vout is not known or D is limited.

    Impossible operating points (a buck with vout >= vin, a boost with vout <= vin) are rejected
    with the project key when the stages are found (stages.check_operating_point); reaching one
    here is a bug, so it raises ValueError instead of being clamped.
    """
    vout = op.vout_v
    if vout is None:
        return 0.5, "output voltage not known: duty cycle taken as 0.5"
    if vin_v <= 0:
        raise ValueError(f"input voltage {vin_v} V: must be positive")
    if stage.topology == "boost":
        if not vout > vin_v:
            raise ValueError(f"a boost cannot make {vout} V from {vin_v} V")
        d = 1.0 - vin_v / vout
    elif stage.topology == "buck-boost":
        d = abs(vout) / (abs(vout) + vin_v)
    else:
        if not 0 < vout < vin_v:
            raise ValueError(f"a buck cannot make {vout} V from {vin_v} V")
        d = vout / vin_v
    if d > MAX_DUTY_CYCLE:
        return MAX_DUTY_CYCLE, (f"duty cycle {d:.3f} at vin = {vin_v:g} V limited to {MAX_DUTY_CYCLE} "
                                "(the estimates divide by 1 - D)")
    return float(d), None


def switch_current(stage: Stage, op: OperatingPoint) -> tuple[float, float, list[str]]:
    """(peak switch current [A], switched voltage [V], assumptions) at the operating point.

    Buck: the switch turns off the inductor's peak current iout (1 + r/2) against vin_max;
    boost: iout / (1 - D) (1 + r/2) against vout; buck-boost: iout / (1 - D) (1 + r/2) against vin + vout.
    """
    notes: list[str] = []
    r = op.ripple_ratio
    d, note = duty_cycle(stage, op, op.vin_min_v if stage.topology != "buck" else op.vin_max_v)
    if note:
        notes.append(note)
    if stage.topology == "boost":
        i_l = op.iout_a / max(1 - d, 0.05)
        v = op.vout_v if op.vout_v else op.vin_max_v
    elif stage.topology == "buck-boost":
        i_l = op.iout_a / max(1 - d, 0.05)
        v = op.vin_max_v + abs(op.vout_v or op.vin_max_v)
    else:
        i_l = op.iout_a
        v = op.vin_max_v
    return i_l * (1 + r / 2), v, notes


def op_assumptions(op: OperatingPoint, names: tuple[str, ...]) -> list[str]:
    """Operating-point values used by a measurement, marked where they are defaults."""
    out = []
    for n in names:
        src = op.sources.get(n, "default")
        out.append(f"{n} = {getattr(op, n)!r} ({src})")
    return out
