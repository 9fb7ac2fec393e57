r"""Closed-form inductance formulas from the literature: the references the solvers are checked
against, and the few formulas the measurements use directly (the equivalent radius of a strip).

Each function names its source and carries a worked value as a doctest; docs/physics.md lists
them with their check values.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from loopcheck.physics._checks import as_finite, as_positive, scalar_or_array
from loopcheck.physics.constants import C0, INCH, MU0, MU0_OVER_4PI

#: Grover's GMD of a rectangle from itself, g = GMD_RECTANGLE_FACTOR * (w + t) (within 0.5 %).
GMD_RECTANGLE_FACTOR = 0.2235


def strip_equivalent_radius(width_m, thickness_m):
    r"""Equivalent round-wire radius of a flat strip: its geometric mean distance from itself.

    .. math:: r_{eq} = g = 0.2235 \, (w + t)

    Parameters
    ----------
    width_m : float or array
        Strip width [m].
    thickness_m : float or array
        Strip thickness [m].

    Returns
    -------
    float or array
        Equivalent radius [m].

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations: Working Formulas and Tables", Van Nostrand,
       1946 (Dover 1962), ch. 3, GMD of a rectangle (0.2235 (b + c), within 0.5 %).
    """
    w = as_positive("width_m", width_m)
    t = as_positive("thickness_m", thickness_m)
    return scalar_or_array(GMD_RECTANGLE_FACTOR * (w + t))


def bar_self_inductance(length_m, width_m, thickness_m):
    r"""Self partial inductance of a straight bar of rectangular section (Grover).

    .. math:: L = \frac{\mu_0 l}{2\pi}\left[\ln\frac{2l}{w+t} + \frac12
              + 0.2235\,\frac{w+t}{l}\right]

    valid for l >> w + t (uniform current, DC).

    Parameters
    ----------
    length_m : float or array
        Bar length [m].
    width_m : float or array
        Bar width [m].
    thickness_m : float or array
        Bar thickness [m].

    Returns
    -------
    float or array
        Inductance [H]; 10 mm x 0.5 mm x 35 um gives 8.27e-9.

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 5, eq. for a straight bar of
       rectangular cross section.
    .. [2] A. E. Ruehli, "Inductance calculations in a complex integrated circuit
       environment", IBM J. Res. Dev. 16(5), 470-481, 1972.
    """
    length = as_positive("length_m", length_m)
    w = as_positive("width_m", width_m)
    t = as_positive("thickness_m", thickness_m)
    s = w + t
    return scalar_or_array(MU0 * length / (2 * math.pi)
                           * (np.log(2 * length / s) + 0.5 + GMD_RECTANGLE_FACTOR * s / length))


def round_wire_self_inductance(length_m, radius_m, high_frequency: bool = True):
    r"""Self partial inductance of a straight round wire, l >> r.

    .. math:: L = \frac{\mu_0 l}{2\pi}\left[\ln\frac{2l}{r} - 1\right] \text{ (high frequency)},
              \quad \left[\ln\frac{2l}{r} - \frac34\right] \text{ (uniform DC current)}

    Parameters
    ----------
    length_m : float or array
        Wire length [m].
    radius_m : float or array
        Wire radius [m].
    high_frequency : bool
        True for current on the surface (skin effect complete), False for uniform current.

    Returns
    -------
    float or array
        Inductance [H].

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 5, straight round wire.
    .. [2] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 5.
    """
    length = as_positive("length_m", length_m)
    r = as_positive("radius_m", radius_m)
    c = 1.0 if high_frequency else 0.75
    return scalar_or_array(MU0 * length / (2 * math.pi) * (np.log(2 * length / r) - c))


def parallel_filament_mutual(length_m, distance_m):
    r"""Mutual inductance of two equal parallel filaments side by side (Grover).

    .. math:: M = \frac{\mu_0 l}{2\pi}\left[\ln\left(\frac{l}{d}+\sqrt{1+\frac{l^2}{d^2}}\right)
              - \sqrt{1+\frac{d^2}{l^2}} + \frac{d}{l}\right]

    Parameters
    ----------
    length_m : float or array
        Filament length [m].
    distance_m : float or array
        Distance between the filaments [m].

    Returns
    -------
    float or array
        Mutual inductance [H]; l = 10 mm, d = 1 mm gives 4.19e-9.

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 5, eq. for two equal parallel
       filaments.
    """
    length = as_positive("length_m", length_m)
    d = as_positive("distance_m", distance_m)
    x = length / d
    return scalar_or_array(MU0 * length / (2 * math.pi)
                           * (np.arcsinh(x) - np.sqrt(1.0 + 1.0 / x**2) + 1.0 / x))


def touching_filaments_mutual(length1_m, length2_m, angle_rad):
    r"""Mutual inductance of two straight filaments that meet at a common end point.

    Both filaments point away from the common point and make the angle epsilon; R is the
    distance between their free ends:

    .. math:: M = \frac{\mu_0}{4\pi}\, 2\cos\varepsilon \left[ l_1 \tanh^{-1}\frac{l_2}{l_1+R}
              + l_2 \tanh^{-1}\frac{l_1}{l_2+R}\right],\quad
              R = \sqrt{l_1^2 + l_2^2 - 2 l_1 l_2 \cos\varepsilon}

    For epsilon = pi (one straight line) it reduces to
    -(mu0/4pi) [(l1+l2) ln(l1+l2) - l1 ln l1 - l2 ln l2] (Paul 2010); for a path that runs in
    along one filament and out along the other, flip the sign.

    Parameters
    ----------
    length1_m, length2_m : float or array
        Filament lengths [m].
    angle_rad : float or array
        Angle between the filaments [rad], in (0, pi].

    Returns
    -------
    float or array
        Mutual inductance [H].

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 7, filaments meeting at a point
       (the form was recalled, not copied; the tests confirm it against scipy's adaptive
       quadrature of the Neumann integral to 1e-8 at angles from 0.2 to pi).
    .. [2] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 5 (collinear case).
    """
    l1 = as_positive("length1_m", length1_m)
    l2 = as_positive("length2_m", length2_m)
    eps = as_finite("angle_rad", angle_rad)
    if np.any((eps <= 0.0) | (eps > math.pi)):
        raise ValueError(f"angle_rad must lie in (0, pi], got {angle_rad!r}")
    c = np.cos(eps)
    r = np.sqrt(np.maximum(l1**2 + l2**2 - 2 * l1 * l2 * c, 0.0))
    return scalar_or_array(MU0_OVER_4PI * 2 * c * (l1 * np.arctanh(l2 / (l1 + r))
                                                  + l2 * np.arctanh(l1 / (l2 + r))))


def rectangular_loop_inductance(side_a_m, side_b_m, wire_radius_m):
    r"""Inductance of a rectangular loop of round wire, high frequency (Grover).

    .. math:: L = \frac{\mu_0}{\pi}\left[a\ln\frac{2a}{r} + b\ln\frac{2b}{r}
              - a\ln\frac{a+c}{b} - b\ln\frac{b+c}{a} + 2c - 2(a+b)\right],
              \quad c = \sqrt{a^2+b^2}

    Parameters
    ----------
    side_a_m, side_b_m : float or array
        Side lengths [m].
    wire_radius_m : float or array
        Wire radius [m].

    Returns
    -------
    float or array
        Inductance [H]; 20 mm x 10 mm, r = 0.25 mm gives 38.54e-9; a 10 mm square 23.32e-9.

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 16, rectangle of round wire.
    .. [2] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 5.
    """
    a = as_positive("side_a_m", side_a_m)
    b = as_positive("side_b_m", side_b_m)
    r = as_positive("wire_radius_m", wire_radius_m)
    c = np.hypot(a, b)
    return scalar_or_array(MU0 / math.pi * (a * np.log(2 * a / r) + b * np.log(2 * b / r)
                                            - a * np.log((a + c) / b) - b * np.log((b + c) / a)
                                            + 2 * c - 2 * (a + b)))


def circular_loop_inductance(loop_radius_m, wire_radius_m):
    r"""Inductance of a circular loop of round wire, high frequency, R >> r.

    .. math:: L = \mu_0 R \left[\ln\frac{8R}{r} - 2\right]

    Parameters
    ----------
    loop_radius_m : float or array
        Loop radius R [m].
    wire_radius_m : float or array
        Wire radius r [m].

    Returns
    -------
    float or array
        Inductance [H]; R = 10 mm, r = 0.25 mm gives 47.35e-9.

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 13, circular ring of round wire.
    """
    big = as_positive("loop_radius_m", loop_radius_m)
    r = as_positive("wire_radius_m", wire_radius_m)
    return scalar_or_array(MU0 * big * (np.log(8 * big / r) - 2.0))


def coaxial_circles_mutual(radius1_m, radius2_m, separation_m):
    r"""Mutual inductance of two coaxial circular filaments (Maxwell), exact.

    .. math:: M = \mu_0\sqrt{R_1R_2}\left[\left(\frac{2}{k}-k\right)K(k)-\frac{2}{k}E(k)\right],
              \quad k^2 = \frac{4R_1R_2}{(R_1+R_2)^2+z^2}

    K and E are complete elliptic integrals of modulus k; scipy.special.ellipk/ellipe take the
    parameter m = k^2.

    Parameters
    ----------
    radius1_m, radius2_m : float or array
        Circle radii [m].
    separation_m : float or array
        Axial distance between the circle planes [m]; must not be zero when the radii are
        equal (the filaments would touch).

    Returns
    -------
    float or array
        Mutual inductance [H].

    References
    ----------
    .. [1] J. C. Maxwell, "A Treatise on Electricity and Magnetism", 1873, vol. 2, art. 701.
    .. [2] F. W. Grover, "Inductance Calculations", 1946, ch. 13.
    """
    r1 = as_positive("radius1_m", radius1_m)
    r2 = as_positive("radius2_m", radius2_m)
    z = as_finite("separation_m", separation_m)
    m = 4 * r1 * r2 / ((r1 + r2) ** 2 + z**2)
    if np.any(m >= 1.0):
        raise ValueError("separation_m: coincident circles have no finite mutual inductance")
    k = np.sqrt(m)
    return scalar_or_array(MU0 * np.sqrt(r1 * r2)
                           * ((2 / k - k) * special.ellipk(m) - 2 / k * special.ellipe(m)))


def via_inductance(height_m, diameter_m):
    r"""Inductance of a via (Johnson and Graham's rule).

    .. math:: L = 5.08\,h\left[\ln\frac{4h}{d} + 1\right]\ \mathrm{nH}, \quad h, d \text{ in inches}

    i.e. L = 2e-7 h [ln(4h/d) + 1] H with h in metres.

    Parameters
    ----------
    height_m : float or array
        Via length (board thickness) [m].
    diameter_m : float or array
        Via barrel diameter [m].

    Returns
    -------
    float or array
        Inductance [H]; h = 0.063 in, d = 0.016 in gives 1.20e-9.

    References
    ----------
    .. [1] H. Johnson, M. Graham, "High-Speed Digital Design: A Handbook of Black Magic",
       Prentice Hall, 1993, sec. 7.2 (via inductance).
    """
    h = as_positive("height_m", height_m)
    d = as_positive("diameter_m", diameter_m)
    return scalar_or_array(5.08e-9 * (h / INCH) * (np.log(4 * h / d) + 1.0))


def microstrip_inductance_per_length(width_m, height_m):
    r"""Inductance per length of a trace over a plane: Hammerstad's microstrip Z0 in air / c0.

    .. math:: u = w/h;\quad Z_0 = 60\ln\left(\frac{8}{u}+\frac{u}{4}\right)\ (u<1),\quad
              Z_0 = \frac{120\pi}{u + 1.393 + 0.667\ln(u+1.444)}\ (u\ge1);\quad L' = Z_0/c_0

    Parameters
    ----------
    width_m : float or array
        Trace width [m].
    height_m : float or array
        Height of the trace over the plane [m].

    Returns
    -------
    float or array
        Inductance per length [H/m]; w/h = 1 gives 0.421e-6, w/h = 0.5 gives 0.556e-6.

    References
    ----------
    .. [1] E. O. Hammerstad, "Equations for microstrip circuit design", Proc. 5th European
       Microwave Conference, 1975, pp. 268-272 (zero-thickness Z0 formulas).
    """
    w = as_positive("width_m", width_m)
    h = as_positive("height_m", height_m)
    u = w / h
    with np.errstate(invalid="ignore", divide="ignore"):
        narrow = 60.0 * np.log(8.0 / u + u / 4.0)
        wide = 120.0 * math.pi / (u + 1.393 + 0.667 * np.log(u + 1.444))
    z0 = np.where(u < 1.0, narrow, wide)
    return scalar_or_array(z0 / C0)


def plate_pair_inductance(separation_m, length_m, width_m):
    r"""Inductance of two wide parallel plates carrying opposite currents (w >> h).

    .. math:: L = \mu_0 h l / w

    Parameters
    ----------
    separation_m : float or array
        Plate separation h [m].
    length_m : float or array
        Length along the current [m].
    width_m : float or array
        Plate width across the current [m].

    Returns
    -------
    float or array
        Inductance [H].

    References
    ----------
    .. [1] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 4 (parallel plates,
       fringing neglected).
    """
    h = as_positive("separation_m", separation_m)
    length = as_positive("length_m", length_m)
    w = as_positive("width_m", width_m)
    return scalar_or_array(MU0 * h * length / w)


def plane_return_current_density(current_a, height_m, offset_m):
    r"""Current density in a wide plane under a trace carrying the return current.

    .. math:: J(x) = \frac{I}{\pi h}\,\frac{1}{1 + (x/h)^2}

    half the current flows within +-h of the trace's centre line, 79.5 % within +-3h.

    Parameters
    ----------
    current_a : float
        Current in the trace [A].
    height_m : float or array
        Height of the trace above the plane [m].
    offset_m : float or array
        Distance across the plane from the point under the trace [m].

    Returns
    -------
    float or array
        Sheet current density [A/m].

    References
    ----------
    .. [1] H. Johnson, M. Graham, "High-Speed Digital Design: A Handbook of Black Magic",
       Prentice Hall, 1993, ch. 5 (ground planes).

    Examples
    --------
    1 A, 1 mm above the plane, under the trace and 1 mm to the side:

    >>> [round(plane_return_current_density(1.0, 1e-3, x), 1) for x in (0.0, 1e-3)]
    [318.3, 159.2]
    """
    i = as_finite("current_a", current_a)
    h = as_positive("height_m", height_m)
    x = as_finite("offset_m", offset_m)
    return scalar_or_array(i / (math.pi * h) / (1.0 + (x / h) ** 2))


def parallel_strips_inductance_per_length(width_m, separation_m):
    r"""Inductance per length of two equal strips one above the other (eps_r = 1).

    The plane midway between the strips is a plane of symmetry: each strip is a microstrip of
    height h/2 over it, so

    .. math:: L' = 2\,L'_{microstrip}(w, h/2), \qquad L' \to \mu_0 h / w \ (w \gg h)

    with Hammerstad's microstrip formula (``microstrip_inductance_per_length``).

    Parameters
    ----------
    width_m : float or array
        Strip width [m].
    separation_m : float or array
        Distance between the strips [m].

    Returns
    -------
    float or array
        Inductance per length [H/m].

    References
    ----------
    .. [1] H. A. Wheeler, "Transmission-line properties of parallel strips separated by a
       dielectric sheet", IEEE Trans. MTT 13(2), 172-185, 1965 (the pair as two strips over
       their plane of symmetry).
    .. [2] E. Hammerstad, "Equations for microstrip circuit design", 5th European Microwave
       Conference, 1975.

    Examples
    --------
    Strips 1 mm wide, 1 mm apart:

    >>> round(parallel_strips_inductance_per_length(1e-3, 1e-3) * 1e6, 3)
    0.596
    """
    w = as_positive("width_m", width_m)
    h = as_positive("separation_m", separation_m)
    return scalar_or_array(2.0 * np.asarray(microstrip_inductance_per_length(w, h / 2)))


def coplanar_strips_inductance_per_length(width_m, gap_m):
    r"""Inductance per length of two coplanar strips of width W with a gap S (eps_r = 1).

    .. math:: L' = \mu_0 \frac{K(k)}{K(k')},\qquad k = \frac{S}{S + 2W},\quad k' = \sqrt{1-k^2}

    with K the complete elliptic integral of the first kind (conformal mapping, zero-thickness
    strips).

    Parameters
    ----------
    width_m : float or array
        Width of each strip [m].
    gap_m : float or array
        Gap between them [m].

    Returns
    -------
    float or array
        Inductance per length [H/m].

    References
    ----------
    .. [1] K. C. Gupta, R. Garg, I. Bahl, P. Bhartia, "Microstrip Lines and Slotlines", 2nd
       ed., Artech House, 1996, ch. 7 (coplanar strips).

    Examples
    --------
    >>> round(coplanar_strips_inductance_per_length(0.5e-3, 0.5e-3) * 1e6, 3)
    0.804
    """
    w = as_positive("width_m", width_m)
    s = as_positive("gap_m", gap_m)
    k = s / (s + 2.0 * w)
    return scalar_or_array(MU0 * special.ellipk(k * k) / special.ellipk(1.0 - k * k))


def coaxial_rectangles_mutual(side_a_m, side_b_m, distance_m):
    r"""Mutual inductance of two equal rectangular filament loops a x b, one above the other
    at distance d (parallel planes, sides aligned), from Grover's parallel filaments:

    .. math:: M = 2\left[M_f(a, d) - M_f(a, \sqrt{b^2+d^2}) + M_f(b, d) - M_f(b, \sqrt{a^2+d^2})\right]

    with :math:`M_f(l, d)` the mutual of two parallel filaments of length l at distance d.
    With the image of a loop in a perfectly conducting plane (d twice the height, the image
    current reversed) it gives the loop over a plane: L = L_free - M.

    Parameters
    ----------
    side_a_m, side_b_m : float
        Sides of the rectangles [m].
    distance_m : float
        Distance between their planes [m].

    Returns
    -------
    float
        Mutual inductance [H].

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 5 (parallel filaments) and
       ch. 13 (rectangles).

    Examples
    --------
    A 20 x 10 mm loop and its image 3 mm below:

    >>> round(coaxial_rectangles_mutual(20e-3, 10e-3, 3e-3) * 1e9, 2)
    11.21
    """
    a = float(as_positive("side_a_m", side_a_m))
    b = float(as_positive("side_b_m", side_b_m))
    d = float(as_positive("distance_m", distance_m))
    mf = parallel_filament_mutual
    return float(2.0 * (mf(a, d) - mf(a, math.hypot(b, d)) + mf(b, d) - mf(b, math.hypot(a, d))))
