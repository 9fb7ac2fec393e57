"""layout_loss: the efficiency points the layout costs one stage, from its other measurements.

Conduction: the I^2 R loss of each high-current path (``path.<name>.loss``). Switching: the
energy left in the hot-loop inductance at each turn-off, 1/2 L I_off^2 f_sw, with I_off the
switch's peak current (``common.switch_current``: a buck's I_out (1 + r/2), a boost's input
current peak). Both over the output power (physics.losses).
"""

from __future__ import annotations

from ..findings import Measurement
from ..physics.losses import edge_loss, layout_loss
from ..powerstage import Stage
from . import PATH_NAMES, path_quantity
from .common import MeasurementGap, measurement, op_assumptions, switch_current


def _value(prior: list[Measurement], quantity: str) -> float | None:
    for m in prior:
        if m.quantity == quantity and m.value is not None:
            return float(m.value)
    return None


def measure_layout_loss(stage: Stage, prior: list[Measurement]) -> list[Measurement]:
    """One ``layout_loss`` measurement from ``prior`` (the stage's other measurements).

    Raises MeasurementGap when the output voltage, the loop inductance or every path loss is
    missing."""
    op = stage.operating_point
    if op.vout_v is None:
        raise MeasurementGap("the output voltage is not known: give vout_v in [operating_point]")
    p_out = abs(op.vout_v) * op.iout_a
    if p_out <= 0:
        raise MeasurementGap("the output power is zero at this operating point")
    l_nh = _value(prior, "hot_loop.inductance")
    if l_nh is None:
        raise MeasurementGap("the hot-loop inductance was not measured")
    losses = {p: _value(prior, path_quantity(p, "loss")) for p in PATH_NAMES}
    measured = {p: w for p, w in losses.items() if w is not None}
    if not measured:
        raise MeasurementGap("no high-current path loss was measured")
    conduction = sum(measured.values())
    i_off, v_sw, notes = switch_current(stage, op)
    f_sw = op.fsw_hz
    switching = float(edge_loss(l_nh * 1e-9, i_off, f_sw))
    points = float(layout_loss(conduction, l_nh * 1e-9, i_off, f_sw, p_out))
    missing = [p for p in PATH_NAMES if p not in measured]
    assumptions = notes + [
        "conduction: I_rms^2 R of each high-current path at copper temperature (path.*.loss)",
        f"switching: 1/2 L I_off^2 f_sw, all the loop's energy lost at each turn-off (common "
        f"practice; an upper bound where a snubber or soft turn-off returns part), I_off = "
        f"{i_off:.3g} A ({'input current peak' if stage.topology != 'buck' else 'I_out (1 + r/2)'})",
        f"output power {p_out:.3g} W = vout x iout",
    ] + op_assumptions(op, ("vout_v", "iout_a", "fsw_hz", "ripple_ratio"))
    if missing:
        assumptions.append(f"paths not measured, left out of the sum: {', '.join(missing)} "
                           "(a lower bound)")
    detail = {"conduction_w": conduction, "switching_w": switching, "output_power_w": p_out,
              "conduction_pct": 100.0 * conduction / p_out, "switching_pct": 100.0 * switching / p_out,
              "path_loss_w": measured, "paths_missing": missing, "inductance_nH": l_nh,
              "current_off_a": i_off, "switching_frequency_hz": f_sw}
    return [measurement("layout_loss", points, stage, assumptions=assumptions, detail=detail)]
