"""Capacitance of copper plates: parallel plates with an optional edge (fringing) correction.

Pure functions, SI units. The fringing corrections are for plates in one uniform dielectric;
on a board the field above an outer-layer plate runs in air, so the fringe term there is an
upper estimate (scale it by the effective permittivity if that matters).
"""

from __future__ import annotations

import math

import numpy as np

from loopcheck.physics._checks import as_positive, scalar_or_array
from loopcheck.physics.constants import EPS0


def _palmer_edge(dim, d):
    # Palmer's edge factor for one plate dimension: 1 + d/(pi a) (1 + ln(2 pi a / d))
    return 1.0 + d / (math.pi * dim) * (1.0 + np.log(2.0 * math.pi * dim / d))


def parallel_plate_capacitance(area_m2, separation_m, eps_r=1.0, perimeter_m=None,
                               over_plane: bool = False):
    r"""Capacitance of two equal parallel plates, optionally with an edge correction.

    Without ``perimeter_m`` fringing is neglected:

    .. math:: C = \varepsilon_0\varepsilon_r A / d

    With the plate perimeter P, the first-order form of Palmer's edge correction is added,
    taking the plate dimension across each edge as a = 4A/P (exact for a square, where it
    reproduces the expansion of Palmer's rectangle formula; for a long strip a is
    overestimated by 2x, which changes the fringe term by about ln 2 in its logarithm):

    .. math:: C = \varepsilon_0\varepsilon_r\left[\frac{A}{d}
              + \frac{P}{2\pi}\left(1 + \ln\frac{2\pi a}{d}\right)\right]

    With ``over_plane`` the geometry is one plate at height d over a large plane (switch-node
    copper over a ground plane); by the method of images C = 2 C_pair(2d), the same A/d term
    and twice the fringe term of the pair at 2d.

    Parameters
    ----------
    area_m2 : float or array
        Plate area A [m^2].
    separation_m : float or array
        Plate separation d [m] (height over the plane with ``over_plane``).
    eps_r : float or array
        Relative permittivity of the dielectric [-]; FR-4 is about 4.2-4.6 at 1 MHz
        (common practice).
    perimeter_m : float, array or None
        Plate perimeter P [m]; None neglects fringing.
    over_plane : bool
        True for a plate over a large plane instead of two equal plates.

    Returns
    -------
    float or array
        Capacitance [F].

    References
    ----------
    .. [1] H. B. Palmer, "The capacitance of a parallel-plate capacitor by the
       Schwartz-Christoffel transformation", Trans. AIEE 56(3), 363-366, 1937, the rectangle
       formula (its form as used here is FROM MEMORY; the tests check it against Kirchhoff's
       disk formula and the 2D limit).
    .. [2] C. R. Paul, "Introduction to Electromagnetic Compatibility", 2nd ed., Wiley, 2006
       (parallel plates, fringing neglected).
    """
    area = as_positive("area_m2", area_m2)
    d = as_positive("separation_m", separation_m)
    er = as_positive("eps_r", eps_r)
    eps = EPS0 * er
    ideal = eps * area / d
    if perimeter_m is None:
        return scalar_or_array(ideal)
    p = as_positive("perimeter_m", perimeter_m)
    if np.any(p * p < 4.0 * math.pi * area * (1.0 - 1e-9)):
        raise ValueError(f"perimeter_m is shorter than a circle of that area allows, got {perimeter_m!r}")
    a = 4.0 * area / p
    gap = 2.0 * d if over_plane else d
    fringe = eps * p / (2.0 * math.pi) * (1.0 + np.log(2.0 * math.pi * a / gap))
    if over_plane:
        fringe = 2.0 * fringe
    return scalar_or_array(ideal + np.maximum(fringe, 0.0))


def rectangular_plate_capacitance(length_m, width_m, separation_m, eps_r=1.0):
    r"""Capacitance of two equal rectangular plates a x b with fringing (Palmer).

    .. math:: C = \varepsilon_0\varepsilon_r\frac{ab}{d}
              \left[1+\frac{d}{\pi a}\left(1+\ln\frac{2\pi a}{d}\right)\right]
              \left[1+\frac{d}{\pi b}\left(1+\ln\frac{2\pi b}{d}\right)\right]

    Parameters
    ----------
    length_m : float or array
        Plate side a [m].
    width_m : float or array
        Plate side b [m].
    separation_m : float or array
        Plate separation d [m].
    eps_r : float or array
        Relative permittivity [-].

    Returns
    -------
    float or array
        Capacitance [F].

    References
    ----------
    .. [1] H. B. Palmer, "The capacitance of a parallel-plate capacitor by the
       Schwartz-Christoffel transformation", Trans. AIEE 56(3), 363-366, 1937 (form FROM
       MEMORY).
    """
    a = as_positive("length_m", length_m)
    b = as_positive("width_m", width_m)
    d = as_positive("separation_m", separation_m)
    er = as_positive("eps_r", eps_r)
    return scalar_or_array(EPS0 * er * a * b / d * _palmer_edge(a, d) * _palmer_edge(b, d))


def disk_capacitance(radius_m, separation_m, eps_r=1.0):
    r"""Capacitance of two equal coaxial circular plates with fringing (Kirchhoff), d << R.

    .. math:: C = \varepsilon_0\varepsilon_r\left[\frac{\pi R^2}{d}
              + R\left(\ln\frac{16\pi R}{d} - 1\right)\right]

    Parameters
    ----------
    radius_m : float or array
        Plate radius R [m].
    separation_m : float or array
        Plate separation d [m].
    eps_r : float or array
        Relative permittivity [-].

    Returns
    -------
    float or array
        Capacitance [F].

    References
    ----------
    .. [1] G. Kirchhoff, "Zur Theorie des Condensators", Monatsber. Akad. Wiss. Berlin, 1877,
       pp. 144-162 (form FROM MEMORY).
    """
    r = as_positive("radius_m", radius_m)
    d = as_positive("separation_m", separation_m)
    er = as_positive("eps_r", eps_r)
    return scalar_or_array(EPS0 * er * (math.pi * r * r / d + r * (np.log(16.0 * math.pi * r / d) - 1.0)))
