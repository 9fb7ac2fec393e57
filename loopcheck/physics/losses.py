"""The layout's cost in efficiency: copper conduction loss and the energy left in the loop
inductance at each switching edge, as a share of output power.

Pure functions of numbers or numpy arrays (they broadcast), SI units in and out.
"""

from __future__ import annotations

import numpy as np

from loopcheck.physics._checks import as_finite, as_nonnegative, as_positive, scalar_or_array


def edge_loss(inductance_h, current_a, frequency_hz):
    r"""Power lost with the energy left in a loop inductance at each turn-off edge.

    At each turn-off the loop's inductance holds the energy of its current; the switch and the
    ringing dissipate it, once per switching period:

    .. math:: P_{edge} = \tfrac{1}{2} L I_{off}^2 f_{sw}

    Parameters
    ----------
    inductance_h : float or array
        Loop inductance [H].
    current_a : float or array
        Current the switch turns off [A] (a buck: the inductor's peak, I_out (1 + r/2)).
    frequency_hz : float or array
        Switching frequency [Hz].

    Returns
    -------
    float or array
        Power [W].

    Notes
    -----
    The energy of an inductor is W = L I^2 / 2 (Halliday, Resnick and Walker [1]); that all of
    it is lost at each turn-off is common practice: an estimate of the layout's part of the
    switching loss (the switch's own overlap loss belongs to the component), an upper bound
    where a snubber or the switch's soft turn-off returns part of it.

    References
    ----------
    .. [1] D. Halliday, R. Resnick, J. Walker, "Fundamentals of Physics", 10th ed., Wiley,
       2014, ch. 30, "Energy stored in a magnetic field" (U_B = L i^2 / 2).

    Examples
    --------
    A 7.63 nH loop turning off 1.725 A at 400 kHz:

    >>> round(edge_loss(7.63e-9, 1.725, 400e3) * 1e3, 3)
    4.541
    """
    L = as_nonnegative("inductance_h", inductance_h)
    i = as_finite("current_a", current_a)
    f = as_nonnegative("frequency_hz", frequency_hz)
    return scalar_or_array(0.5 * L * i * i * f)


def efficiency_points(loss_w, output_power_w):
    r"""A loss as a share of output power, in percentage points of efficiency.

    .. math:: \Delta\eta = 100 \, P_{loss} / P_{out}

    (for losses small beside the output power, the drop in efficiency P_out / (P_out + P_loss)
    is this share to first order).

    Parameters
    ----------
    loss_w : float or array
        Power lost [W].
    output_power_w : float or array
        Output power [W], > 0.

    Returns
    -------
    float or array
        Share of output power [%].

    Examples
    --------
    >>> efficiency_points(0.18, 18.0)
    1.0
    """
    p = as_nonnegative("loss_w", loss_w)
    po = as_positive("output_power_w", output_power_w)
    return scalar_or_array(100.0 * p / po)


def layout_loss(conduction_w, inductance_h, current_off_a, frequency_hz, output_power_w):
    r"""The efficiency points a layout costs: conduction plus edge loss over output power.

    .. math:: \Delta\eta = 100 \, \frac{\sum_k I_{rms,k}^2 R_k + \tfrac{1}{2} L I_{off}^2 f_{sw}}{P_{out}}

    Parameters
    ----------
    conduction_w : float or array
        Copper conduction loss of the high-current paths, sum of I_rms^2 R [W].
    inductance_h : float or array
        Hot-loop inductance [H].
    current_off_a : float or array
        Current turned off at each edge [A].
    frequency_hz : float or array
        Switching frequency [Hz].
    output_power_w : float or array
        Output power [W].

    Returns
    -------
    float or array
        Efficiency points [%].

    Examples
    --------
    The tidy demo LED driver: 23.3 mW in its copper, 7.63 nH turning off 1.725 A at 400 kHz,
    18 W out:

    >>> round(layout_loss(0.0233, 7.63e-9, 1.725, 400e3, 18.0), 3)
    0.155
    """
    total = as_nonnegative("conduction_w", conduction_w) + np.asarray(
        edge_loss(inductance_h, current_off_a, frequency_hz))
    return efficiency_points(total, output_power_w)
