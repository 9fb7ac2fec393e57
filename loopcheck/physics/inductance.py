r"""Partial and loop inductance of straight conductor segments, and reference formulas.

The loop model follows the partial-inductance method (Ruehli 1972, Paul 2010): a closed path
is cut into straight segments, each segment k has a self partial inductance L_kk and every pair
a mutual partial inductance L_kl, and the loop inductance is the sum of all entries of the
partial-inductance matrix (the signs come from the segment directions):

.. math:: L = \sum_k \sum_l L_{kl}, \qquad
          L_{kl} = \frac{\mu_0}{4\pi} \int_k \int_l \frac{d\mathbf{l}_k \cdot d\mathbf{l}_l}{R}

Conductors of finite section (a trace w x t, a via barrel) enter through their geometric mean
distance (GMD) g: each segment is its centre filament, and the kernel 1/R is softened to
1/sqrt(R^2 + g^2). For a single straight segment this gives Grover's self inductance with the
GMD g (for a w x t bar g = 0.2235 (w + t), Grover's rectangular-bar formula to 0.05 %); for two
collinear pieces of one bar it gives exactly the mutual of parallel filaments g apart, so
cutting a straight bar into pieces leaves its inductance unchanged; for pieces far apart it is
the filament result. Touching segments at an angle are therefore never singular. (The softened
kernel is this module's approximation of the exact mutual of two bars; it matters only for
segments closer than a few widths.) Parallel strips near each other - a trace over its return,
side-by-side traces - use instead the closed-form GMD of the two strip sections as their
distance (Grover's method for parallel bars); a trace over a plane modelled with its image then
lies within 1.5-5 % above Hammerstad's microstrip inductance from w/h = 0.5 to 30 (uniform
current runs a little above the high-frequency value, as it should). Far pairs are filaments.

Pairs are evaluated in three ways, all vectorised: parallel pairs by the closed form of
parallel filaments with axial offset (Grover), perpendicular pairs are zero, and other pairs by
Gauss-Legendre quadrature along the shorter segment of the closed-form potential of the longer
one (so the Neumann double integral becomes a single smooth integral); near pairs use panels
graded geometrically towards the closest point and towards the other segment's end points.
Far pairs (the bulk of a long loop) are done as dense row blocks without index gathering.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.polynomial.legendre import leggauss

from loopcheck.physics._checks import as_finite, as_positive
from loopcheck.physics.constants import MU0_OVER_4PI

from loopcheck.physics.closedforms import (  # noqa: F401  (the closed forms live there; kept importable here)
    GMD_RECTANGLE_FACTOR, bar_self_inductance, circular_loop_inductance, coaxial_circles_mutual,
    microstrip_inductance_per_length, parallel_filament_mutual, plate_pair_inductance,
    rectangular_loop_inductance, round_wire_self_inductance, strip_equivalent_radius,
    touching_filaments_mutual, via_inductance)

# Quadrature tiers: pairs with centre distance >= _FAR_RATIO * (longer length) use _FAR_NODES
# nodes, >= _MID_RATIO use _MID_NODES, nearer ones graded panels of _PANEL_NODES nodes. Chosen
# from measured errors: 2 far nodes change a 2000-segment loop by < 1e-6 relative against 8;
# tests/test_physics_inductance.py checks random pairs against scipy quadrature.
_FAR_RATIO = 3.0
_MID_RATIO = 1.25
_FAR_NODES = 2
_MID_NODES = 8
_PANEL_NODES = 5
_MAX_PANELS = 48
_PARALLEL_TOL = 1e-10
_PAIR_CHUNK = 65_536  # pairs per dense block: ~0.5 MB arrays stay in cache (2x faster than 4x larger)


# ----------------------------------------------------------------------------- helpers

def _filament_self(length, gmd):
    # (mu0/4pi) * 2 [l asinh(l/g) - sqrt(l^2 + g^2) + g]: softened kernel over one segment.
    return 2.0 * MU0_OVER_4PI * (length * np.arcsinh(length / gmd) - np.hypot(length, gmd) + gmd)


def _parallel_phi(a1, a2, b1, b2, rho):
    """Double integral of 1/sqrt((s-t)^2+rho^2) over s in [a1,a2], t in [b1,b2].

    For rho = 0 (collinear filaments) the limit is finite when the intervals do not overlap:
    the ln(rho) terms cancel and f(x) -> |x| ln|x| - (1 - ln 2) |x|; overlapping ones give inf.
    """
    rho = np.asarray(rho, dtype=float)
    safe = np.where(rho > 0.0, rho, 1.0)

    def f(x):
        ax = np.abs(x)
        soft = x * np.arcsinh(x / safe) - np.hypot(x, safe)
        with np.errstate(divide="ignore", invalid="ignore"):
            line = np.where(ax > 0.0, ax * np.log(np.where(ax > 0.0, ax, 1.0)), 0.0) \
                - (1.0 - math.log(2.0)) * ax
        return np.where(rho > 0.0, soft, line)

    phi = f(a2 - b1) + f(a1 - b2) - f(a2 - b2) - f(a1 - b1)
    overlap = (np.minimum(a2, b2) - np.maximum(a1, b1)) > 0.0
    return np.where((rho <= 0.0) & overlap, np.inf, phi)


# ----------------------------------------------------------------------------- closed forms

# ----------------------------------------------------------------------------- segment pairs

def _closest_parameters(p0, d1, q0, d2):
    """Parameters (s, t) in [0,1] of the closest points of segments p0 + s d1 and q0 + t d2."""
    r = p0 - q0
    a = np.einsum("ij,ij->i", d1, d1)
    e = np.einsum("ij,ij->i", d2, d2)
    f = np.einsum("ij,ij->i", d2, r)
    c = np.einsum("ij,ij->i", d1, r)
    b = np.einsum("ij,ij->i", d1, d2)
    denom = a * e - b * b
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.where(denom > 1e-14 * a * e, np.clip((b * f - c * e) / denom, 0.0, 1.0), 0.0)
        t = (b * s + f) / e
    low = t < 0.0
    high = t > 1.0
    s = np.where(low, np.clip(-c / a, 0.0, 1.0), s)
    s = np.where(high, np.clip((b - c) / a, 0.0, 1.0), s)
    t = np.clip(t, 0.0, 1.0)
    return s, t


def _potential_integral(c0, b0, c1, b1, length_in, s, w):
    """Sum over nodes of w * int_inner ds'/sqrt(R^2+g^2) with the node point p(s).

    |p - P0|^2 + g^2 = c0 + s (2 b0 + s), likewise for P1; the inner integral of the softened
    kernel over a straight segment of length L is ln((ra + rb + L) / (ra + rb - L)).
    Shapes: pair arrays (P,), node arrays s, w (P, n) or (n,).
    """
    ra = np.sqrt(np.maximum(c0[:, None] + s * (2.0 * b0[:, None] + s), 0.0))
    rb = np.sqrt(np.maximum(c1[:, None] + s * (2.0 * b1[:, None] + s), 0.0))
    big = ra + rb
    lin = length_in[:, None]
    return np.sum(w * np.log1p(2.0 * lin / np.maximum(big - lin, 1e-300)), axis=1)


#: A thin strip of width w_e has self GMD w_e exp(-3/2) (Grover); this factor makes it equal
#: to Grover's 0.2235 (w + t) for the w x t bar, so collinear pieces stay exactly consistent.
_STRIP_WIDTH_FACTOR = GMD_RECTANGLE_FACTOR * math.exp(1.5)


def _strip_log_gmd(u, offset, wa, wb):
    """ln of the GMD between two parallel thin strips [ln m].

    Each strip lies across its axis u along the horizontal normal n = z x u (the board plane;
    x for vertical segments), with effective widths wa, wb; ``offset`` (P,3) is the vector
    from axis a to axis b, perpendicular to u. Closed form of
    (1/(wa wb)) int int ln|x - y| over the two strips, with the primitive
    H(v) = (v^2 - c^2)/4 ln(v^2 + c^2) + c v atan(v/c) - 3 v^2/4 (c = vertical offset).
    """
    z = np.array([0.0, 0.0, 1.0])
    n = np.cross(z, u)
    nn = np.linalg.norm(n, axis=1)
    vertical = nn < 1e-9
    n = np.where(vertical[:, None], np.array([1.0, 0.0, 0.0]), n / np.where(vertical, 1.0, nn)[:, None])
    m = np.cross(u, n)
    dn = np.einsum("ij,ij->i", offset, n)
    c = np.abs(np.einsum("ij,ij->i", offset, m))
    s = dn - 0.5 * wb + 0.5 * wa        # left edge of b relative to left edge of a (at 0)

    def prim(v):
        r2 = v * v + c * c
        with np.errstate(divide="ignore", invalid="ignore"):
            logt = np.where(r2 > 0.0, 0.25 * (v * v - c * c) * np.log(np.where(r2 > 0.0, r2, 1.0)), 0.0)
            atant = np.where(c > 0.0, c * v * np.arctan(v / np.where(c > 0.0, c, 1.0)), 0.0)
        return logt + atant - 0.75 * v * v

    total = prim(wa - s) - prim(-s) - prim(wa - s - wb) + prim(-s - wb)
    dist = np.hypot(dn, c)
    far = dist > 50.0 * (wa + wb)
    with np.errstate(divide="ignore"):
        return np.where(far, np.log(np.where(far, dist, 1.0)), total / (wa * wb))


def _mutual_pairs(a_start, a_end, b_start, b_end, g2, wa=None, wb=None):
    """Signed mutual partial inductance [H] of segment pairs (P,3) with softening g^2 (P,).

    ``wa``, ``wb`` (P,) are effective strip widths (NaN for a round section): parallel strip
    pairs then use the GMD of the two strips as the distance (Grover's method), others the
    softened distance sqrt(rho^2 + g^2).
    """
    da = a_end - a_start
    db = b_end - b_start
    la = np.sqrt(np.einsum("ij,ij->i", da, da))
    lb = np.sqrt(np.einsum("ij,ij->i", db, db))
    ua = da / la[:, None]
    ub = db / lb[:, None]
    cos = np.einsum("ij,ij->i", ua, ub)
    out = np.zeros(len(la))

    parallel = np.abs(cos) > 1.0 - _PARALLEL_TOL
    if np.any(parallel):
        i = np.nonzero(parallel)[0]
        u = ua[i]
        rel0 = b_start[i] - a_start[i]
        rel1 = b_end[i] - a_start[i]
        t0 = np.einsum("ij,ij->i", rel0, u)
        t1 = np.einsum("ij,ij->i", rel1, u)
        perp = rel0 - t0[:, None] * u
        rho = np.sqrt(np.einsum("ij,ij->i", perp, perp) + g2[i])
        if wa is not None:
            strips = np.isfinite(wa[i]) & np.isfinite(wb[i])
            if np.any(strips):
                k = np.nonzero(strips)[0]
                rho[k] = np.exp(_strip_log_gmd(u[k], perp[k], wa[i][k], wb[i][k]))
        lo = np.minimum(t0, t1)
        hi = np.maximum(t0, t1)
        out[i] = np.sign(cos[i]) * MU0_OVER_4PI * _parallel_phi(0.0, la[i], lo, hi, rho)

    general = ~parallel & (np.abs(cos) > 1e-14)
    if not np.any(general):
        return out
    gi = np.nonzero(general)[0]
    # Integrate along the shorter segment ("outer"), the longer one in closed form ("inner").
    swap = lb[gi] < la[gi]
    o_start = np.where(swap[:, None], b_start[gi], a_start[gi])
    o_dir = np.where(swap[:, None], ub[gi], ua[gi])
    o_len = np.where(swap, lb[gi], la[gi])
    n_start = np.where(swap[:, None], a_start[gi], b_start[gi])
    n_end = np.where(swap[:, None], a_end[gi], b_end[gi])
    n_len = np.where(swap, la[gi], lb[gi])
    g2g = g2[gi]
    r0 = o_start - n_start
    r1 = o_start - n_end
    c0 = np.einsum("ij,ij->i", r0, r0) + g2g
    c1 = np.einsum("ij,ij->i", r1, r1) + g2g
    b0 = np.einsum("ij,ij->i", r0, o_dir)
    b1 = np.einsum("ij,ij->i", r1, o_dir)
    centre_gap = np.linalg.norm((o_start + 0.5 * o_len[:, None] * o_dir)
                                - 0.5 * (n_start + n_end), axis=1)
    ratio = centre_gap / np.maximum(o_len, n_len)
    phi = np.empty(len(gi))

    for mask, nodes in ((ratio >= _FAR_RATIO, _FAR_NODES),
                        ((ratio >= _MID_RATIO) & (ratio < _FAR_RATIO), _MID_NODES)):
        k = np.nonzero(mask)[0]
        if len(k) == 0:
            continue
        x, w = leggauss(nodes)
        s = 0.5 * (x + 1.0)[None, :] * o_len[k, None]
        wk = 0.5 * w[None, :] * o_len[k, None]
        phi[k] = _potential_integral(c0[k], b0[k], c1[k], b1[k], n_len[k], s, wk)

    k = np.nonzero(ratio < _MID_RATIO)[0]
    if len(k):
        # centres close, but the segments themselves may still be half an outer length apart
        # or more: then the mid rule is as good (singularities >= 0.5 L away) and cheaper.
        s_c, t_c = _closest_parameters(o_start[k], o_dir[k] * o_len[k, None],
                                       n_start[k], n_end[k] - n_start[k])
        gap = ((o_start[k] + (s_c * o_len[k])[:, None] * o_dir[k])
               - (n_start[k] + t_c[:, None] * (n_end[k] - n_start[k])))
        apart = np.einsum("ij,ij->i", gap, gap) >= (0.5 * o_len[k]) ** 2
        ka = k[apart]
        if len(ka):
            x, w = leggauss(_MID_NODES)
            s = 0.5 * (x + 1.0)[None, :] * o_len[ka, None]
            wk = 0.5 * w[None, :] * o_len[ka, None]
            phi[ka] = _potential_integral(c0[ka], b0[ka], c1[ka], b1[ka], n_len[ka], s, wk)
        k = k[~apart]
    if len(k):
        phi[k] = _graded_integral(o_start[k], o_dir[k], o_len[k], n_start[k], n_end[k],
                                  n_len[k], g2g[k], c0[k], b0[k], c1[k], b1[k])
    out[gi] = MU0_OVER_4PI * cos[gi] * phi
    return out


def _graded_integral(o_start, o_dir, o_len, n_start, n_end, n_len, g2, c0, b0, c1, b1):
    """Outer integral on panels graded geometrically towards the near-singular points.

    The integrand varies fastest where the outer segment passes closest to the inner one and
    where it passes the inner segment's end points; panels shrink geometrically towards each
    of those three points, down to the local (softened) distance.
    """
    s_star, t_star = _closest_parameters(o_start, o_dir * o_len[:, None],
                                         n_start, n_end - n_start)
    s_star = s_star * o_len
    closest = (o_start + s_star[:, None] * o_dir) - (n_start + t_star[:, None] * (n_end - n_start))
    centres = [s_star]
    dists = [np.sqrt(np.einsum("ij,ij->i", closest, closest) + g2)]
    for q in (n_start, n_end):
        sq = np.clip(np.einsum("ij,ij->i", q - o_start, o_dir), 0.0, o_len)
        off = o_start + sq[:, None] * o_dir - q
        centres.append(sq)
        dists.append(np.sqrt(np.einsum("ij,ij->i", off, off) + g2))
    h_all = [np.maximum(d, 1e-9 * o_len) for d in dists]
    h_min = np.minimum.reduce(h_all)
    panels = int(min(_MAX_PANELS, max(1, np.ceil(np.log2(np.max(o_len / h_min) + 1.0)) + 1)))
    k = np.arange(panels + 1)
    grade = 2.0 ** k - 1.0
    edges = [np.zeros((len(o_len), 1)), o_len[:, None]]
    for c, h in zip(centres, h_all):
        off = h[:, None] * grade[None, :]
        edges.append(c[:, None] + off)
        edges.append(c[:, None] - off[:, 1:])
    edges = np.sort(np.clip(np.concatenate(edges, axis=1), 0.0, o_len[:, None]), axis=1)
    x, w = leggauss(_PANEL_NODES)
    half = 0.5 * (edges[:, 1:] - edges[:, :-1])
    mid = 0.5 * (edges[:, 1:] + edges[:, :-1])
    s = (mid[:, :, None] + half[:, :, None] * x[None, None, :]).reshape(len(o_len), -1)
    wk = (half[:, :, None] * w[None, None, :]).reshape(len(o_len), -1)
    return _potential_integral(c0, b0, c1, b1, n_len, s, wk)


def _sections(n, gmd_m, widths_m, thicknesses_m, allow_zero_gmd=False):
    """Per-segment section GMD g (n,) and effective strip width (n,) (NaN for round sections).

    Segments with a finite width are w x t strips (g = 0.2235 (w + t)); the others take
    ``gmd_m`` (round sections, or filaments with g = 0 where allowed). Raises ValueError
    naming the argument.
    """
    strip = np.zeros(n, dtype=bool)
    g = np.full(n, np.nan)
    strip_w = np.full(n, np.nan)
    if widths_m is not None:
        if thicknesses_m is None:
            raise ValueError("thicknesses_m must be given with widths_m")
        try:
            w = np.broadcast_to(np.asarray(widths_m, dtype=float), (n,))
            t = np.broadcast_to(np.asarray(thicknesses_m, dtype=float), (n,))
        except (TypeError, ValueError):
            raise ValueError(f"widths_m and thicknesses_m must be scalars or have {n} entries") from None
        strip = ~np.isnan(w)
        if np.any(~np.isfinite(w[strip])) or np.any(w[strip] <= 0.0):
            raise ValueError(f"widths_m must be positive (NaN marks a round section), got {widths_m!r}")
        if np.any(~np.isfinite(t[strip])) or np.any(t[strip] <= 0.0):
            raise ValueError(f"thicknesses_m must be positive where widths_m is given, got {thicknesses_m!r}")
        g[strip] = GMD_RECTANGLE_FACTOR * (w[strip] + t[strip])
        strip_w[strip] = (w[strip] + t[strip]) * _STRIP_WIDTH_FACTOR
    if not np.all(strip):
        if gmd_m is None:
            raise ValueError("gmd_m must be given for segments without widths_m")
        try:
            gg = np.broadcast_to(np.asarray(gmd_m, dtype=float), (n,))
        except (TypeError, ValueError):
            raise ValueError(f"gmd_m must be a scalar or have {n} entries") from None
        rest = gg[~strip]
        if np.any(~np.isfinite(rest)) or np.any(rest < 0.0) or (not allow_zero_gmd and np.any(rest == 0.0)):
            raise ValueError(f"gmd_m must be {'non-negative' if allow_zero_gmd else 'positive'} and "
                             f"finite for every round segment, got {gmd_m!r}")
        g[~strip] = rest
    return g, strip_w


def segment_mutual_inductance(a0, a1, b0, b1, gmd_m=0.0, *, widths_m=None, thicknesses_m=None):
    r"""Mutual partial inductance of two straight segments at any position and angle.

    .. math:: M = \frac{\mu_0}{4\pi}\int_a\int_b \frac{d\mathbf{l}_a\cdot d\mathbf{l}_b}
              {\sqrt{R^2 + g^2}}

    with the sign set by the segment directions (a0 -> a1, b0 -> b1). g = 0 is the Neumann
    integral of the centre filaments (finite also for segments sharing an end point); g > 0
    softens the kernel by the geometric mean distance of the sections, as in the loop model.
    Parallel segments use the closed form for parallel filaments with axial offset
    (Grover), the others Gauss-Legendre quadrature of the closed-form potential of one segment
    along the other.

    Parameters
    ----------
    a0, a1 : array (3,) or (P, 3)
        Start and end of segment a [m].
    b0, b1 : array (3,) or (P, 3)
        Start and end of segment b [m].
    gmd_m : float or array (P,)
        Geometric mean distance used to soften the kernel [m]; 0 for filaments. Must be > 0
        for parallel segments on one line.
    widths_m, thicknesses_m : float or array (P,), optional
        Strip section shared by both segments of a pair [m] (a trace and its image, say);
        parallel strip pairs then use the strip-to-strip GMD as their distance (Grover), and
        the others the softened kernel with g = 0.2235 (w + t). NaN widths fall back to gmd_m.

    Returns
    -------
    float or array (P,)
        Mutual inductance [H].

    References
    ----------
    .. [1] F. W. Grover, "Inductance Calculations", 1946, ch. 7 (filaments at any angle) and
       ch. 5 (parallel filaments).
    .. [2] A. E. Ruehli, IBM J. Res. Dev. 16(5), 1972.
    .. [3] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 5.
    """
    pts = []
    for name, v in (("a0", a0), ("a1", a1), ("b0", b0), ("b1", b1)):
        arr = as_finite(name, v)
        if arr.shape[-1:] != (3,) or arr.ndim > 2:
            raise ValueError(f"{name} must have shape (3,) or (P, 3), got {arr.shape}")
        pts.append(np.atleast_2d(arr))
    single = all(np.asarray(v).ndim == 1 for v in (a0, a1, b0, b1))
    pa0, pa1, pb0, pb1 = np.broadcast_arrays(*pts)
    if np.any(np.linalg.norm(pa1 - pa0, axis=1) == 0.0):
        raise ValueError("a0, a1: segment a has zero length")
    if np.any(np.linalg.norm(pb1 - pb0, axis=1) == 0.0):
        raise ValueError("b0, b1: segment b has zero length")
    g, strip_w = _sections(len(pa0), gmd_m, widths_m, thicknesses_m, allow_zero_gmd=True)
    m = _mutual_pairs(pa0.astype(float), pa1.astype(float), pb0.astype(float), pb1.astype(float),
                      g * g, strip_w, strip_w)
    if not np.all(np.isfinite(m)):
        raise ValueError("a0, a1, b0, b1: overlapping collinear filaments need gmd_m > 0")
    return float(m[0]) if single else m


def partial_inductance_matrix(starts_m, ends_m, gmd_m=None, *, widths_m=None, thicknesses_m=None):
    r"""Partial-inductance matrix of straight segments with finite sections.

    .. math:: L_{kk} = \frac{\mu_0}{2\pi}\left[l\sinh^{-1}\frac{l}{g} - \sqrt{l^2+g^2} + g\right],
              \quad L_{kl} = \frac{\mu_0}{4\pi}\int_k\int_l\frac{d\mathbf{l}_k\cdot d\mathbf{l}_l}
              {\sqrt{R^2+g_{kl}^2}},\quad g_{kl}^2 = \tfrac12(g_k^2 + g_l^2)

    Near parallel pairs of strips (widths given) use, instead of the softened distance, the
    geometric mean distance of the two strip sections (Grover's method: the mutual of two
    parallel bars is that of parallel filaments at the GMD of their sections), so a wide trace
    close over its return is modelled properly.

    Parameters
    ----------
    starts_m, ends_m : array (N, 3)
        Segment start and end points [m]; the direction sets the sign of the mutual terms.
    gmd_m : float or array (N,), optional
        Geometric mean distance of each segment's section from itself [m] for round sections
        (a via barrel or wire at high frequency: its radius).
    widths_m, thicknesses_m : float or array (N,), optional
        Strip sections [m]; the width lies in the horizontal plane across the segment
        (g = 0.2235 (w + t)). A NaN width marks a round segment that takes ``gmd_m``, so a
        loop of traces and vias can be given at once.

    Returns
    -------
    array (N, N)
        Symmetric partial inductance matrix [H].

    References
    ----------
    .. [1] A. E. Ruehli, "Inductance calculations in a complex integrated circuit
       environment", IBM J. Res. Dev. 16(5), 470-481, 1972.
    .. [2] F. W. Grover, "Inductance Calculations", 1946, ch. 3 (GMD) and ch. 5.
    """
    a, b = _check_segments(starts_m, ends_m)
    n = len(a)
    if gmd_m is None and widths_m is None:
        raise ValueError("gmd_m, or widths_m and thicknesses_m, must be given")
    g, strip_w = _sections(n, gmd_m, widths_m, thicknesses_m)
    mat = np.zeros((n, n))
    length = np.linalg.norm(b - a, axis=1)
    mat[np.arange(n), np.arange(n)] = _filament_self(length, g)
    for i, j, m in _iter_mutual_chunks(a, b, g, strip_w):
        mat[i, j] = m
        mat[j, i] = m
    return mat


def _check_segments(starts_m, ends_m):
    a = as_finite("starts_m", starts_m)
    b = as_finite("ends_m", ends_m)
    if a.ndim != 2 or a.shape[1] != 3 or a.shape != b.shape:
        raise ValueError(f"starts_m and ends_m must both have shape (N, 3), got {a.shape}, {b.shape}")
    length = np.linalg.norm(b - a, axis=1)
    if np.any(length == 0.0):
        k = int(np.nonzero(length == 0.0)[0][0])
        raise ValueError(f"starts_m, ends_m: segment {k} has zero length")
    return a, b


def _iter_mutual_chunks(a, b, g, strip_w=None, sums_only: bool = False):
    """Yield (i, j, M_ij) for all pairs i < j, a block of rows at a time.

    With ``sums_only`` the far blocks are yielded as (None, None, [sum]) (no index lists).

    Far pairs (centre distance >= _FAR_RATIO times the longer length) are evaluated densely,
    row block against columns, by the low-order rule with the row segment as the outer one (it
    is at most a third of the distance long, so the choice does not matter); the other pairs
    are gathered and sent through :func:`_mutual_pairs` (closed form for parallel pairs, higher
    order or graded quadrature otherwise).
    """
    n = len(a)
    d = b - a
    length = np.sqrt(np.einsum("ij,ij->i", d, d))
    u = d / length[:, None]
    g2 = g * g
    # a pair is "far" only if its centres are 3 lengths and 3 section sizes apart
    extent = g / GMD_RECTANGLE_FACTOR
    if strip_w is not None:
        extent = np.where(np.isfinite(strip_w), strip_w, extent)
    ax, ay, az = (np.ascontiguousarray(a[:, k]) for k in range(3))
    ux, uy, uz = (np.ascontiguousarray(u[:, k]) for k in range(3))
    x, w = leggauss(_FAR_NODES)
    node = 0.5 * (x + 1.0)
    weight = 0.5 * w
    rows = max(1, _PAIR_CHUNK // max(n, 1))
    near_i, near_j = [], []
    for r0 in range(0, n - 1, rows):
        r1 = min(n - 1, r0 + rows)
        ri = np.arange(r0, r1)
        cj = np.arange(r0 + 1, n)
        li = length[ri, None]
        lj = length[None, r0 + 1:]
        # r = a_i - a_j and its projections on u_i (bi) and u_j (ej)
        rx = ax[ri, None] - ax[None, r0 + 1:]
        ry = ay[ri, None] - ay[None, r0 + 1:]
        rz = az[ri, None] - az[None, r0 + 1:]
        rr = rx * rx + ry * ry + rz * rz
        bi = rx * ux[ri, None] + ry * uy[ri, None] + rz * uz[ri, None]
        ej = rx * ux[None, r0 + 1:] + ry * uy[None, r0 + 1:] + rz * uz[None, r0 + 1:]
        del rx, ry, rz
        cos = u[ri] @ u[r0 + 1:].T
        # squared distance of the centres, from the same projections
        gap2 = rr + li * bi - lj * ej + 0.25 * (li * li + lj * lj - 2.0 * li * lj * cos)
        lmax = np.maximum(np.maximum(li, lj), np.maximum(extent[ri, None], extent[None, r0 + 1:]))
        upper = cj[None, :] > ri[:, None]
        far = upper & (gap2 >= (_FAR_RATIO * lmax) ** 2)
        # parallel pairs whose axes lie within 3 section sizes (pieces of one trace, a trace
        # over its return) need the section GMD however far apart along the axis they are
        emax = np.maximum(extent[ri, None], extent[None, r0 + 1:])
        far &= ~((np.abs(cos) > 1.0 - _PARALLEL_TOL) & (rr - bi * bi < (_FAR_RATIO * emax) ** 2))
        # far pairs are plain filaments: the GMD of two sections 3 sizes apart is their centre
        # distance to O((w/D)^2) either way, so no softening (which would bias one way)
        c0 = rr                                        # |a_i - a_j|^2
        c1 = rr - 2.0 * lj * ej + lj * lj              # |a_i - b_j|^2
        b1 = bi - lj * cos
        phi = np.zeros_like(c0)
        for xk, wk in zip(node, weight):
            sk = xk * li
            ra = np.sqrt(np.maximum(c0 + sk * (2.0 * bi + sk), 0.0))
            rb = np.sqrt(np.maximum(c1 + sk * (2.0 * b1 + sk), 0.0))
            ra += rb
            ra -= lj
            np.maximum(ra, 1e-300, out=ra)
            np.divide(2.0 * lj, ra, out=ra)
            np.log1p(ra, out=ra)
            phi += (wk * li) * ra
        m = MU0_OVER_4PI * cos * phi
        if sums_only:
            yield None, None, np.array([np.sum(m, where=far)])
        else:
            fi, fj = np.nonzero(far)
            yield ri[fi], cj[fj], m[fi, fj]
        ni, nj = np.nonzero(upper & ~far)
        near_i.append(ri[ni])
        near_j.append(cj[nj])
    if near_i:
        i = np.concatenate(near_i)
        j = np.concatenate(near_j)
        for lo in range(0, len(i), _PAIR_CHUNK // 8):
            ii = i[lo:lo + _PAIR_CHUNK // 8]
            jj = j[lo:lo + _PAIR_CHUNK // 8]
            wa = None if strip_w is None else strip_w[ii]
            wb = None if strip_w is None else strip_w[jj]
            yield ii, jj, _mutual_pairs(a[ii], b[ii], a[jj], b[jj], 0.5 * (g2[ii] + g2[jj]), wa, wb)


def _segments_sum(a, b, g, strip_w=None):
    length = np.linalg.norm(b - a, axis=1)
    total = float(np.sum(_filament_self(length, g)))
    for _, _, m in _iter_mutual_chunks(a, b, g, strip_w, sums_only=True):
        total += 2.0 * float(np.sum(m))
    return total


# ----------------------------------------------------------------------------- polylines

def _polyline_segments(points_m, widths_m, thicknesses_m, gmd_m, closed, require_closed,
                       name="points_m"):
    pts = as_finite(name, points_m)
    if pts.ndim != 2 or pts.shape[1] not in (2, 3):
        raise ValueError(f"{name} must have shape (N, 3) or (N, 2), got {pts.shape}")
    if pts.shape[1] == 2:
        pts = np.column_stack([pts, np.zeros(len(pts))])
    scale = float(np.max(np.abs(pts))) if pts.size else 0.0
    repeated = len(pts) > 1 and np.linalg.norm(pts[-1] - pts[0]) <= 1e-12 * max(scale, 1e-300)
    if closed:
        if require_closed and not repeated:
            raise ValueError(f"{name}: the loop does not close (last point differs from the first)")
        if repeated:
            pts = pts[:-1]
        if len(pts) < 3:
            raise ValueError(f"{name}: a closed loop needs at least 3 distinct points")
        starts, ends = pts, np.roll(pts, -1, axis=0)
    else:
        if len(pts) < 2:
            raise ValueError(f"{name}: a path needs at least 2 points")
        starts, ends = pts[:-1], pts[1:]
    n = len(starts)
    length = np.linalg.norm(ends - starts, axis=1)
    if np.any(length == 0.0):
        k = int(np.nonzero(length == 0.0)[0][0])
        raise ValueError(f"{name}: segment {k} has zero length (repeated point)")
    strip_w = None
    if gmd_m is not None:
        g = np.asarray(as_positive("gmd_m", gmd_m), dtype=float)
    else:
        if widths_m is None or thicknesses_m is None:
            raise ValueError("widths_m and thicknesses_m are required unless gmd_m is given")
        w = as_positive("widths_m", widths_m)
        t = as_positive("thicknesses_m", thicknesses_m)
        g = GMD_RECTANGLE_FACTOR * (w + t)
    if g.ndim == 1 and len(g) == n + 1 and closed and repeated:
        g = g[:-1]
    try:
        g = np.broadcast_to(g, (n,)).astype(float)
    except ValueError:
        raise ValueError(f"widths_m, thicknesses_m (or gmd_m) must be scalars or have one entry "
                         f"per segment ({n}), got shape {g.shape}") from None
    if gmd_m is None:
        strip_w = g / GMD_RECTANGLE_FACTOR * _STRIP_WIDTH_FACTOR
    return starts, ends, g, strip_w


def polyline_loop_inductance(points_m, widths_m=None, thicknesses_m=None, *, gmd_m=None,
                             require_closed: bool = False):
    r"""Inductance of a closed 3D polyline of strips (partial-inductance sum).

    .. math:: L = \sum_k\sum_l L_{kl}

    with the partial inductances of :func:`partial_inductance_matrix`; segment k runs from
    point k to point k+1, the last from the last point back to the first.

    Parameters
    ----------
    points_m : array (N, 3) or (N, 2)
        Vertices [m]; the first point may be repeated at the end. (N, 2) means z = 0.
    widths_m : float or array (N,)
        Strip width of each segment [m].
    thicknesses_m : float or array (N,)
        Strip thickness of each segment [m].
    gmd_m : float or array (N,), optional
        Section GMD of each segment [m], instead of widths and thicknesses (a via barrel:
        its radius; a round wire at high frequency: its radius).
    require_closed : bool
        If True the last point must equal the first.

    Returns
    -------
    float
        Loop inductance [H].

    References
    ----------
    .. [1] A. E. Ruehli, IBM J. Res. Dev. 16(5), 1972.
    .. [2] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 5.
    .. [3] F. W. Grover, "Inductance Calculations", 1946.
    """
    a, b, g, strip_w = _polyline_segments(points_m, widths_m, thicknesses_m, gmd_m, True,
                                          require_closed)
    return _segments_sum(a, b, g, strip_w)


def polyline_partial_inductance(points_m, widths_m=None, thicknesses_m=None, *, gmd_m=None):
    r"""Partial inductance of an open polyline path (sum of its partial-inductance matrix).

    .. math:: L_p = \sum_k\sum_l L_{kl}

    Meaningful as a share of a loop (the loop inductance is the partial inductance of the
    whole closed path); on its own it depends on where the path is cut.

    Parameters
    ----------
    points_m : array (N, 3) or (N, 2)
        Vertices [m], N >= 2; N - 1 segments.
    widths_m, thicknesses_m : float or array (N - 1,)
        Strip section of each segment [m].
    gmd_m : float or array (N - 1,), optional
        Section GMD of each segment [m], instead of widths and thicknesses.

    Returns
    -------
    float
        Partial inductance [H].

    References
    ----------
    .. [1] A. E. Ruehli, IBM J. Res. Dev. 16(5), 1972.
    """
    a, b, g, strip_w = _polyline_segments(points_m, widths_m, thicknesses_m, gmd_m, False, False)
    return _segments_sum(a, b, g, strip_w)


def loop_mutual_inductance(points_a_m, points_b_m, gmd_m=0.0):
    r"""Mutual inductance of two closed polylines (filaments), by the Neumann double integral.

    .. math:: M = \frac{\mu_0}{4\pi}\oint_a\oint_b\frac{d\mathbf{l}_a\cdot d\mathbf{l}_b}
              {\sqrt{R^2+g^2}} = \sum_{k\in a}\sum_{l\in b} M_{kl}

    Parameters
    ----------
    points_a_m, points_b_m : array (N, 3) or (N, 2)
        Vertices of the two loops [m]; each closes back to its first point (which may be
        repeated at the end).
    gmd_m : float
        Softening distance [m]; 0 for filaments (the loops must then not touch).

    Returns
    -------
    float
        Mutual inductance [H].

    References
    ----------
    .. [1] F. E. Neumann, 1845, the double line integral; F. W. Grover, "Inductance
       Calculations", 1946, ch. 1.
    .. [2] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 5.
    """
    g = float(as_finite("gmd_m", gmd_m))
    if g < 0.0:
        raise ValueError(f"gmd_m must not be negative, got {gmd_m!r}")
    # the section argument only satisfies the shared vertex checks; g is applied below
    a0, a1, _, _ = _polyline_segments(points_a_m, None, None, 1.0, True, False, "points_a_m")
    b0, b1, _, _ = _polyline_segments(points_b_m, None, None, 1.0, True, False, "points_b_m")
    i, j = np.meshgrid(np.arange(len(a0)), np.arange(len(b0)), indexing="ij")
    i = i.ravel()
    j = j.ravel()
    total = 0.0
    step = _PAIR_CHUNK // 8
    for lo in range(0, len(i), step):
        ii = i[lo:lo + step]
        jj = j[lo:lo + step]
        m = _mutual_pairs(a0[ii], a1[ii], b0[jj], b1[jj], np.full(len(ii), g * g))
        if not np.all(np.isfinite(m)):
            raise ValueError("points_a_m, points_b_m: the loops overlap; give gmd_m > 0")
        total += float(np.sum(m))
    return total


def image_in_plane(points_m, plane_z_m):
    r"""Mirror image of points in the plane z = z0 (the return path in a copper plane).

    .. math:: (x, y, z) \mapsto (x, y, 2 z_0 - z)

    A path over a large plane, with its ends dropping to the plane, has half the inductance of
    the loop made of the path and its mirror image run backwards (the method of images; the
    field above the plane is that of the pair). :func:`path_over_plane_inductance` does that.

    Parameters
    ----------
    points_m : array (N, 3)
        Points [m].
    plane_z_m : float
        Height of the plane [m].

    Returns
    -------
    array (N, 3)
        Mirrored points [m].

    References
    ----------
    .. [1] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 4 (images).
    """
    pts = as_finite("points_m", points_m)
    if pts.ndim != 2 or pts.shape[1] != 3:
        raise ValueError(f"points_m must have shape (N, 3), got {pts.shape}")
    z0 = float(as_finite("plane_z_m", plane_z_m))
    out = pts.copy()
    out[:, 2] = 2.0 * z0 - out[:, 2]
    return out


def path_over_plane_inductance(points_m, widths_m, thicknesses_m, plane_z_m):
    r"""Loop inductance of an open path returning through a plane under it (image method).

    The path's ends drop straight to the plane; the loop of path + drop + mirror image
    (reversed) + rise has twice the inductance of the real circuit:

    .. math:: L = \tfrac12 L_{loop}(\text{path} \cup \text{image})

    Parameters
    ----------
    points_m : array (N, 3)
        Path vertices [m], all on one side of the plane.
    widths_m, thicknesses_m : float or array (N - 1,)
        Strip section of each path segment [m]; the drops use the mean section.
    plane_z_m : float
        Height of the return plane [m].

    Returns
    -------
    float
        Inductance [H].

    References
    ----------
    .. [1] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 4.
    """
    pts = as_finite("points_m", points_m)
    if pts.ndim != 2 or pts.shape[1] != 3 or len(pts) < 2:
        raise ValueError(f"points_m must have shape (N, 3) with N >= 2, got {pts.shape}")
    z0 = float(as_finite("plane_z_m", plane_z_m))
    side = np.sign(pts[:, 2] - z0)
    if np.any(side == 0) or np.any(side != side[0]):
        raise ValueError("points_m: the path must lie strictly on one side of plane_z_m")
    n = len(pts) - 1
    w = np.broadcast_to(as_positive("widths_m", widths_m), (n,)).astype(float)
    t = np.broadcast_to(as_positive("thicknesses_m", thicknesses_m), (n,)).astype(float)
    img = image_in_plane(pts, z0)[::-1]
    loop = np.vstack([pts, img])
    # segments: path (n), drop (1), image reversed (n), rise (1, the closing segment)
    wl = np.concatenate([w, [w.mean()], w[::-1], [w.mean()]])
    tl = np.concatenate([t, [t.mean()], t[::-1], [t.mean()]])
    return 0.5 * polyline_loop_inductance(loop, wl, tl)


def mirror_segments(starts_m, ends_m, plane_z_m):
    r"""Segments mirrored each in its own horizontal plane z = plane_z_m[k] (the image method).

    .. math:: (x, y, z) \mapsto (x, y, 2 z_p - z)

    The image carries the opposite current, so its mutual inductance with the loop is
    subtracted (a perfectly conducting plane; valid above the frequency where the plane is
    thicker than a skin depth).

    Parameters
    ----------
    starts_m, ends_m : array (N, 3)
        Segment ends [m].
    plane_z_m : array (N,)
        Height of the plane each segment is mirrored in [m].

    Returns
    -------
    (array (N, 3), array (N, 3))
        Mirrored starts and ends [m].

    References
    ----------
    .. [1] C. R. Paul, "Inductance: Loop and Partial", Wiley, 2010, ch. 6 (images).

    Examples
    --------
    >>> a, b = mirror_segments([[0, 0, 1e-3]], [[1e-3, 0, 1e-3]], [0.0])
    >>> a.tolist(), b.tolist()
    ([[0.0, 0.0, -0.001]], [[0.001, 0.0, -0.001]])
    """
    starts_m = np.atleast_2d(as_finite("starts_m", starts_m))
    ends_m = np.atleast_2d(as_finite("ends_m", ends_m))
    plane_z_m = np.broadcast_to(as_finite("plane_z_m", plane_z_m), (len(starts_m),))
    m0, m1 = np.empty_like(starts_m), np.empty_like(ends_m)
    for z0 in np.unique(plane_z_m):
        sel = plane_z_m == z0
        m0[sel] = image_in_plane(starts_m[sel], z0)
        m1[sel] = image_in_plane(ends_m[sel], z0)
    return m0, m1
