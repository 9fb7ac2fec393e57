"""Copper conductors: resistivity, sheet and trace resistance, current capacity, skin depth.

Pure functions of numbers or numpy arrays (they broadcast), SI units in and out. The
current-capacity charts of IPC-2221 and IPC-2152 are stated in mils, square mils, amperes and
degrees; the conversion happens inside each function.
"""

from __future__ import annotations

import math

import numpy as np

from loopcheck.physics._checks import as_finite, as_positive, scalar_or_array
from loopcheck.physics.constants import MIL, MU0

#: Resistivity of annealed copper at 20 C [ohm*m] (International Annealed Copper Standard).
RHO20_IACS = 1.7241e-8
#: Temperature coefficient of resistance of annealed copper at 20 C [1/K] (IACS).
ALPHA20_IACS = 0.00393
#: Copper foil thickness per unit weight: 1.378 mil per oz/ft^2, the IPC-2221 figure [m].
THICKNESS_PER_OZ = 1.378 * MIL

#: IPC-2221 curve-fit constants: I = k dT^0.44 A^0.725 (A in mil^2).
IPC2221_K_EXTERNAL = 0.048
IPC2221_K_INTERNAL = 0.024
IPC2221_B = 0.44
IPC2221_C = 0.725

#: IPC-2152-style fit (see ipc2152_temperature_rise); every coefficient here is FROM MEMORY.
IPC2152_FIT_CONSTANT = 215.3  # K, with I in A and W, Th in mil -- from memory
IPC2152_FIT_CURRENT_EXP = 2.0  # from memory
IPC2152_FIT_WIDTH_EXP = -1.15  # from memory
IPC2152_FIT_THICKNESS_EXP = -1.0  # from memory
IPC2152_BOARD_MOD_COEFF = 24.929  # board-thickness modifier 24.929 * BT_mil^-0.757, from memory
IPC2152_BOARD_MOD_EXP = -0.757  # from memory
IPC2152_PLANE_MOD_OFFSET = 0.4058  # plane modifier 0.4058 + 0.0031 * d_mil, from memory
IPC2152_PLANE_MOD_SLOPE = 0.0031  # per mil, from memory


def resistivity(temperature_c, rho20: float = RHO20_IACS, alpha20: float = ALPHA20_IACS):
    r"""Resistivity of copper at a temperature, linear in temperature about 20 C.

    .. math:: \rho(T) = \rho_{20} \, (1 + \alpha_{20} (T - 20))

    Parameters
    ----------
    temperature_c : float or array
        Conductor temperature [C].
    rho20 : float
        Resistivity at 20 C [ohm*m]; default the IACS value 1.7241e-8. Plated and foil PCB
        copper runs a few percent higher; pass the stackup's value.
    alpha20 : float
        Temperature coefficient of resistance at 20 C [1/K]; default IACS 0.00393.

    Returns
    -------
    float or array
        Resistivity [ohm*m].

    References
    ----------
    .. [1] US National Bureau of Standards, "Copper Wire Tables", Circular 31, 1914
       (International Annealed Copper Standard, 1913).
    """
    t = as_finite("temperature_c", temperature_c)
    rho20_a = as_positive("rho20", rho20)
    alpha = as_finite("alpha20", alpha20)
    factor = 1.0 + alpha * (t - 20.0)
    if np.any(factor <= 0.0):
        raise ValueError(f"temperature_c is below the range of the linear model, got {temperature_c!r}")
    return scalar_or_array(rho20_a * factor)


def thickness_from_weight(oz_per_ft2):
    r"""Copper thickness from copper weight, at the IPC-2221 figure of 1.378 mil per oz/ft^2.

    .. math:: t = 1.378 \,\mathrm{mil} \times W

    Parameters
    ----------
    oz_per_ft2 : float or array
        Copper weight [oz/ft^2].

    Returns
    -------
    float or array
        Thickness [m]; 1 oz/ft^2 gives 35.0e-6 m.

    References
    ----------
    .. [1] IPC-2221, "Generic Standard on Printed Board Design", IPC, sec. 6.2 (1.378 mil/oz).
    """
    w = as_positive("oz_per_ft2", oz_per_ft2)
    return scalar_or_array(w * THICKNESS_PER_OZ)


def sheet_resistance(thickness_m, temperature_c=20.0, rho20: float = RHO20_IACS,
                     alpha20: float = ALPHA20_IACS):
    r"""Sheet resistance of a copper layer.

    .. math:: R_s = \rho(T) / t

    Parameters
    ----------
    thickness_m : float or array
        Copper thickness [m].
    temperature_c : float or array
        Copper temperature [C].
    rho20 : float
        Resistivity at 20 C [ohm*m].
    alpha20 : float
        Temperature coefficient at 20 C [1/K].

    Returns
    -------
    float or array
        Sheet resistance [ohm per square]; 1 oz copper at 20 C gives 0.495e-3.

    References
    ----------
    .. [1] L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of
       discs of arbitrary shape", Philips Res. Rep. 13, 1958 (sheet resistance as rho/t).
    """
    t = as_positive("thickness_m", thickness_m)
    return scalar_or_array(resistivity(temperature_c, rho20, alpha20) / t)


def trace_resistance(length_m, width_m, thickness_m, temperature_c=20.0,
                     rho20: float = RHO20_IACS, alpha20: float = ALPHA20_IACS):
    r"""DC resistance of a straight trace of uniform rectangular cross-section.

    .. math:: R = \rho(T) \, L / (w \, t)

    Parameters
    ----------
    length_m : float or array
        Trace length [m].
    width_m : float or array
        Trace width [m].
    thickness_m : float or array
        Copper thickness [m].
    temperature_c : float or array
        Copper temperature [C].
    rho20 : float
        Resistivity at 20 C [ohm*m].
    alpha20 : float
        Temperature coefficient at 20 C [1/K].

    Returns
    -------
    float or array
        Resistance [ohm].

    References
    ----------
    .. [1] US National Bureau of Standards, "Copper Wire Tables", Circular 31, 1914.
    """
    length = as_positive("length_m", length_m)
    w = as_positive("width_m", width_m)
    t = as_positive("thickness_m", thickness_m)
    return scalar_or_array(resistivity(temperature_c, rho20, alpha20) * length / (w * t))


def via_resistance(length_m, drill_m, plating_m=25e-6, temperature_c=20.0,
                   rho20: float = RHO20_IACS, alpha20: float = ALPHA20_IACS):
    r"""DC resistance of a plated via barrel (the plating is a tube inside the drilled hole).

    .. math:: R = \rho(T) \, h / (\pi \, t_p (d - t_p))

    which is the exact annulus between radii d/2 and d/2 - t_p, and tends to the thin-wall
    form rho h / (pi d t_p) for t_p << d.

    Parameters
    ----------
    length_m : float or array
        Barrel length, the board (or layer-span) thickness [m].
    drill_m : float or array
        Drilled hole diameter [m].
    plating_m : float or array
        Plating thickness on the barrel wall [m]; 20-25 um is common practice.
    temperature_c : float or array
        Copper temperature [C].
    rho20 : float
        Resistivity at 20 C [ohm*m].
    alpha20 : float
        Temperature coefficient at 20 C [1/K].

    Returns
    -------
    float or array
        Resistance [ohm].

    References
    ----------
    .. [1] IPC-2221, "Generic Standard on Printed Board Design", IPC (plated-through holes).
    """
    h = as_positive("length_m", length_m)
    d = as_positive("drill_m", drill_m)
    tp = as_positive("plating_m", plating_m)
    if np.any(2.0 * tp >= d):
        raise ValueError(f"plating_m must be less than half of drill_m, got {plating_m!r} for {drill_m!r}")
    area = math.pi * tp * (d - tp)
    return scalar_or_array(resistivity(temperature_c, rho20, alpha20) * h / area)


def _ipc2221_k(internal: bool) -> float:
    return IPC2221_K_INTERNAL if internal else IPC2221_K_EXTERNAL


def ipc2221_current(width_m, thickness_m, temperature_rise_k, internal: bool = False):
    r"""Current a conductor carries at a given temperature rise, by the IPC-2221 curve fit.

    .. math:: I = k \, \Delta T^{0.44} A^{0.725}

    with I in A, dT in K (= C), A = w t in mil^2, k = 0.048 (external) or 0.024 (internal).

    Parameters
    ----------
    width_m : float or array
        Conductor width [m].
    thickness_m : float or array
        Conductor thickness [m].
    temperature_rise_k : float or array
        Allowed temperature rise over ambient [K].
    internal : bool
        True for an inner layer.

    Returns
    -------
    float or array
        Current [A].

    References
    ----------
    .. [1] IPC-2221, "Generic Standard on Printed Board Design", IPC, sec. 6.2, the curve fit of
       its conductor sizing chart.
    """
    w = as_positive("width_m", width_m)
    t = as_positive("thickness_m", thickness_m)
    dt = as_positive("temperature_rise_k", temperature_rise_k)
    area_mil2 = w * t / MIL**2
    return scalar_or_array(_ipc2221_k(internal) * dt**IPC2221_B * area_mil2**IPC2221_C)


def ipc2221_temperature_rise(current_a, width_m, thickness_m, internal: bool = False):
    r"""Temperature rise of a conductor at a current: the IPC-2221 fit solved for dT.

    .. math:: \Delta T = \left( I / (k A^{0.725}) \right)^{1/0.44}

    Parameters
    ----------
    current_a : float or array
        Current [A]; zero gives zero rise.
    width_m : float or array
        Conductor width [m].
    thickness_m : float or array
        Conductor thickness [m].
    internal : bool
        True for an inner layer.

    Returns
    -------
    float or array
        Temperature rise [K].

    References
    ----------
    .. [1] IPC-2221, "Generic Standard on Printed Board Design", IPC, sec. 6.2.
    """
    i = np.abs(as_finite("current_a", current_a))
    w = as_positive("width_m", width_m)
    t = as_positive("thickness_m", thickness_m)
    area_mil2 = w * t / MIL**2
    return scalar_or_array((i / (_ipc2221_k(internal) * area_mil2**IPC2221_C)) ** (1.0 / IPC2221_B))


def ipc2221_width(current_a, temperature_rise_k, thickness_m, internal: bool = False):
    r"""Conductor width for a current at an allowed temperature rise, by IPC-2221.

    .. math:: A = \left( I / (k \Delta T^{0.44}) \right)^{1/0.725}, \quad w = A / t

    Parameters
    ----------
    current_a : float or array
        Current [A].
    temperature_rise_k : float or array
        Allowed temperature rise [K].
    thickness_m : float or array
        Conductor thickness [m].
    internal : bool
        True for an inner layer.

    Returns
    -------
    float or array
        Width [m].

    References
    ----------
    .. [1] IPC-2221, "Generic Standard on Printed Board Design", IPC, sec. 6.2.
    """
    i = as_positive("current_a", current_a)
    dt = as_positive("temperature_rise_k", temperature_rise_k)
    t = as_positive("thickness_m", thickness_m)
    area_mil2 = (i / (_ipc2221_k(internal) * dt**IPC2221_B)) ** (1.0 / IPC2221_C)
    return scalar_or_array(area_mil2 * MIL**2 / t)


def ipc2152_board_modifier(board_thickness_m):
    r"""IPC-2152-style board-thickness modifier of the temperature rise (1 at 70 mil).

    .. math:: m_b = 24.929 \, t_b^{-0.757}, \quad t_b \text{ in mil}

    A fit of the IPC-2152 board-thickness modifier chart; the coefficients are FROM MEMORY
    (not checked against the standard here). The fit gives 1.000 at the 0.070 in baseline
    board, which supports the recollection; thicker boards spread heat and run cooler.

    Parameters
    ----------
    board_thickness_m : float or array
        Board thickness [m].

    Returns
    -------
    float or array
        Modifier [dimensionless].

    References
    ----------
    .. [1] IPC-2152, "Standard for Determining Current-Carrying Capacity in Printed Board
       Design", IPC, 2009, board thickness modifier chart (fit coefficients from memory).
    """
    bt = as_positive("board_thickness_m", board_thickness_m)
    return scalar_or_array(IPC2152_BOARD_MOD_COEFF * (bt / MIL) ** IPC2152_BOARD_MOD_EXP)


def ipc2152_plane_modifier(plane_distance_m):
    r"""IPC-2152-style modifier of the temperature rise for a copper plane near the trace.

    .. math:: m_p = \min(1, 0.4058 + 0.0031 \, d), \quad d \text{ in mil}

    A straight-line fit of the IPC-2152 plane modifier chart; the coefficients are FROM MEMORY.
    ``None`` (no plane) gives 1. A plane close under the trace lowers the rise markedly (about
    0.42 at 5 mil); the fit reaches 1 at about 190 mil, where it is clipped.

    Parameters
    ----------
    plane_distance_m : float, array or None
        Distance from the trace to the nearest copper plane through the dielectric [m].

    Returns
    -------
    float or array
        Modifier [dimensionless].

    References
    ----------
    .. [1] IPC-2152, "Standard for Determining Current-Carrying Capacity in Printed Board
       Design", IPC, 2009, plane modifier chart (fit coefficients from memory).
    """
    if plane_distance_m is None:
        return 1.0
    d = as_positive("plane_distance_m", plane_distance_m)
    return scalar_or_array(np.minimum(1.0, IPC2152_PLANE_MOD_OFFSET + IPC2152_PLANE_MOD_SLOPE * d / MIL))


def _ipc2152_factor(width_m, thickness_m, board_thickness_m, plane_distance_m):
    w = as_positive("width_m", width_m)
    t = as_positive("thickness_m", thickness_m)
    base = (IPC2152_FIT_CONSTANT * (w / MIL) ** IPC2152_FIT_WIDTH_EXP
            * (t / MIL) ** IPC2152_FIT_THICKNESS_EXP)
    return (base * np.asarray(ipc2152_board_modifier(board_thickness_m))
            * np.asarray(ipc2152_plane_modifier(plane_distance_m)))


def ipc2152_temperature_rise(current_a, width_m, thickness_m, board_thickness_m=1.6e-3,
                             plane_distance_m=None):
    r"""IPC-2152-style estimate of a trace's temperature rise at a current.

    IPC-2152 publishes charts, not a formula. This estimate uses a power-law fit of its
    baseline chart (as recalled: traces in a plane-free 0.070 in board in still air) in the form of
    D. Brooks and J. Adam,

    .. math:: \Delta T_0 = 215.3 \, I^{2.0} \, W^{-1.15} \, Th^{-1.0}

    (I in A, W width and Th copper thickness in mil, dT in K), multiplied by the board-thickness
    modifier (:func:`ipc2152_board_modifier`) and the plane modifier
    (:func:`ipc2152_plane_modifier`):

    .. math:: \Delta T = \Delta T_0 \, m_b(t_b) \, m_p(d)

    The copper-thickness dependence is carried by the fit's own Th exponent (at equal
    cross-section a thicker, narrower trace runs slightly warmer: dT ~ A^-1.15 Th^0.15).
    Applying the modifiers to the rise, rather than to the width, is this module's choice.
    ALL COEFFICIENTS ARE FROM MEMORY and have not been checked against the standard or the
    paper here; treat the result as an estimate. Against IPC-2221 for external traces (same
    current, IPC-2221's width for the rise) the ratio of rises is 0.55-1.8 for 1 oz copper at
    0.5-5 A and 10-20 K; the two part ways for wide traces at high current (ratio up to about
    4 at 20 A and 5 K, down to about 0.4 at 0.5 A and 60 K), where IPC-2221's fit rests on
    extrapolated chart data. The tests check the stated band.

    Parameters
    ----------
    current_a : float or array
        Current [A]; its sign is ignored.
    width_m : float or array
        Trace width [m].
    thickness_m : float or array
        Copper thickness [m].
    board_thickness_m : float or array
        Board thickness [m].
    plane_distance_m : float, array or None
        Distance to the nearest copper plane [m]; None for no plane.

    Returns
    -------
    float or array
        Temperature rise [K].

    References
    ----------
    .. [1] IPC-2152, "Standard for Determining Current-Carrying Capacity in Printed Board
       Design", IPC, 2009.
    .. [2] D. Brooks, J. Adam, "Trace Currents and Temperatures Revisited", PCD&F, 2015 (fit of the IPC-2152 chart; coefficients here from memory).
    """
    i = np.abs(as_finite("current_a", current_a))
    factor = _ipc2152_factor(width_m, thickness_m, board_thickness_m, plane_distance_m)
    return scalar_or_array(factor * i**IPC2152_FIT_CURRENT_EXP)


def ipc2152_current(width_m, thickness_m, temperature_rise_k, board_thickness_m=1.6e-3,
                    plane_distance_m=None):
    r"""Current for an allowed temperature rise: :func:`ipc2152_temperature_rise` inverted.

    .. math:: I = \left( \Delta T / (215.3 \, W^{-1.15} Th^{-1.0} m_b m_p) \right)^{1/2}

    Parameters
    ----------
    width_m : float or array
        Trace width [m].
    thickness_m : float or array
        Copper thickness [m].
    temperature_rise_k : float or array
        Allowed temperature rise [K].
    board_thickness_m : float or array
        Board thickness [m].
    plane_distance_m : float, array or None
        Distance to the nearest copper plane [m]; None for no plane.

    Returns
    -------
    float or array
        Current [A] (coefficients from memory, see :func:`ipc2152_temperature_rise`).

    References
    ----------
    .. [1] IPC-2152, "Standard for Determining Current-Carrying Capacity in Printed Board
       Design", IPC, 2009.
    .. [2] D. Brooks, J. Adam, "Trace Currents and Temperatures Revisited", 2015.
    """
    dt = as_positive("temperature_rise_k", temperature_rise_k)
    factor = _ipc2152_factor(width_m, thickness_m, board_thickness_m, plane_distance_m)
    return scalar_or_array((dt / factor) ** (1.0 / IPC2152_FIT_CURRENT_EXP))


def ipc2152_width(current_a, temperature_rise_k, thickness_m, board_thickness_m=1.6e-3,
                  plane_distance_m=None):
    r"""Trace width for a current at an allowed rise: :func:`ipc2152_temperature_rise` solved for W.

    .. math:: W = \left( \Delta T / (215.3 \, I^{2} Th^{-1.0} m_b m_p) \right)^{-1/1.15}

    Parameters
    ----------
    current_a : float or array
        Current [A].
    temperature_rise_k : float or array
        Allowed temperature rise [K].
    thickness_m : float or array
        Copper thickness [m].
    board_thickness_m : float or array
        Board thickness [m].
    plane_distance_m : float, array or None
        Distance to the nearest copper plane [m]; None for no plane.

    Returns
    -------
    float or array
        Width [m] (coefficients from memory, see :func:`ipc2152_temperature_rise`).

    References
    ----------
    .. [1] IPC-2152, "Standard for Determining Current-Carrying Capacity in Printed Board
       Design", IPC, 2009.
    .. [2] D. Brooks, J. Adam, "Trace Currents and Temperatures Revisited", 2015.
    """
    i = as_positive("current_a", current_a)
    dt = as_positive("temperature_rise_k", temperature_rise_k)
    t = as_positive("thickness_m", thickness_m)
    rest = (IPC2152_FIT_CONSTANT * i**IPC2152_FIT_CURRENT_EXP * (t / MIL) ** IPC2152_FIT_THICKNESS_EXP
            * np.asarray(ipc2152_board_modifier(board_thickness_m))
            * np.asarray(ipc2152_plane_modifier(plane_distance_m)))
    width_mil = (dt / rest) ** (1.0 / IPC2152_FIT_WIDTH_EXP)
    return scalar_or_array(width_mil * MIL)


def skin_depth(frequency_hz, temperature_c=20.0, rho20: float = RHO20_IACS,
               alpha20: float = ALPHA20_IACS):
    r"""Skin depth in copper.

    .. math:: \delta = \sqrt{\rho / (\pi f \mu_0)}

    Parameters
    ----------
    frequency_hz : float or array
        Frequency [Hz].
    temperature_c : float or array
        Copper temperature [C].
    rho20 : float
        Resistivity at 20 C [ohm*m].
    alpha20 : float
        Temperature coefficient at 20 C [1/K].

    Returns
    -------
    float or array
        Skin depth [m]; 66e-6 at 1 MHz and 20 C.

    References
    ----------
    .. [1] S. Ramo, J. R. Whinnery, T. Van Duzer, "Fields and Waves in Communication
       Electronics", 3rd ed., Wiley, 1994, sec. 3.16.
    """
    f = as_positive("frequency_hz", frequency_hz)
    rho = resistivity(temperature_c, rho20, alpha20)
    return scalar_or_array(np.sqrt(rho / (math.pi * f * MU0)))
