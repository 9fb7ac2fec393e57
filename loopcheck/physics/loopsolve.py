r"""Partial-element (PEEC) field solve of a current loop in layered copper.

Conductors are cut into straight cells of rectangular section that carry uniform current along
one of the axes x, y (sheet cells of a copper layer) or z (via barrels); components are lumped
links, straight conductors between their pad centres. Every cell k has a self partial
inductance L_kk, every pair of parallel cells a mutual one L_kl (cells at right angles have
none), which give the partial-inductance matrix L_p (Ruehli 1972, 1974). Kirchhoff's current law
at every node is met by writing the branch currents as loop (mesh) currents, I = C x, with C the
loop-incidence matrix of a fundamental-cycle basis of the conductor graph; the loop equations

.. math:: C^T (R + j\omega L_p) C\, x = C^T e_s V

with the source V in the series of one link s give the current in every cell (FastHenry's mesh
formulation, Kamon, Tsuk and White 1994). At the inductive limit (R = 0) this is the current
distribution of least magnetic energy :math:`\tfrac12 I^T L_p I` for a unit current in the
source link, and the loop inductance is

.. math:: L = I^T L_p I = 1 / (c_s^T (C^T L_p C)^{-1} c_s)

Copper that is not connected to the loop (another net's plane, a pour) is meshed the same way;
its loops carry the induced (eddy) currents and its net current is zero by construction.

Sheets are meshed on a rectilinear grid whose cells may be merged into rectangular blocks
(``merge_cells``): fine where the current crowds, coarse elsewhere. A conductor joins two
neighbouring blocks across their common face; where the face is not centred on a block, it ends
on the block's centre line and a rail along that line carries the current to the block's
centre, so that current crossing between blocks of unequal size pays for moving along them.

Partial inductances of cells: the exact closed form for two parallel bars of rectangular
section with uniform current (Hoer and Love 1965, the sextuple integral of 1/R in closed form)
for the self terms and pairs whose sections are close (``NEAR_RATIO``); parallel filaments with
axial offset (Grover 1946), two across each cell's width or one, further out; the filament pair
at the centres, mu0/4pi l1 l2 / R, beyond ``POINT_RATIO`` sizes. Together they agree with the
bar formula within 0.6 % (tests/test_physics_loopsolve.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import linalg
from scipy.sparse import coo_matrix, csr_matrix
from scipy.sparse.csgraph import breadth_first_order, connected_components

from loopcheck.physics._checks import as_finite, as_positive
from loopcheck.physics.constants import MU0_OVER_4PI

#: Pairs of parallel cells whose axes are nearer than NEAR_RATIO times the larger section side
#: (and whose ends are less than one section side apart along the current) use the exact bar
#: formula (Hoer and Love); the others parallel filaments (two across the width: within 0.4 %
#: of the exact formula there, tests/test_physics_loopsolve.py).
NEAR_RATIO = 1.5
#: ... pairs nearer than FAR_RATIO times the larger in-plane width: two filaments across each
#: cell's width (Gauss-Legendre), beyond one (the filament's error falls as (width/distance)^2,
#: 0.25 % at 8 widths; its length along the current is exact).
FAR_RATIO = 8.0

#: ... pairs further apart than POINT_RATIO times the larger of their largest dimensions: two
#: filaments at the centres, mu0/4pi l1 l2 / R (error within (size / R)^2 / 6: 0.5 % at 6)
POINT_RATIO = 6.0

_CHUNK = 400_000   # pairs per vectorised block


# ----------------------------------------------------------------------------- bar kernels

def _hl_f(x, y, z):
    """Hoer and Love's sixth antiderivative of 1/R: d^2/dx^2 d^2/dy^2 d^2/dz^2 f = 1/R."""
    x2, y2, z2 = x * x, y * y, z * z
    r = np.sqrt(x2 + y2 + z2)

    def log_term(a, b2, c2, ra):
        # a ln((a + r) / sqrt(b^2 + c^2)), zero where its coefficient vanishes (b = c = 0)
        den = np.sqrt(b2 + c2)
        ok = den > 0
        num = a + r
        ok &= num > 0
        with np.errstate(divide="ignore", invalid="ignore"):
            v = np.where(ok, a * np.log(np.where(ok, num, 1.0) / np.where(ok, den, 1.0)), 0.0)
        return v

    def atan_term(a, b, c):
        # atan(a b / (c r)), finite where c = 0 (then multiplied by a zero coefficient)
        den = c * r
        ok = den != 0
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(ok, np.arctan(np.where(ok, a * b / np.where(ok, den, 1.0), 0.0)), 0.0)

    out = (y2 * z2 / 4 - y2 * y2 / 24 - z2 * z2 / 24) * log_term(x, y2, z2, r)
    out += (x2 * z2 / 4 - x2 * x2 / 24 - z2 * z2 / 24) * log_term(y, x2, z2, r)
    out += (x2 * y2 / 4 - x2 * x2 / 24 - y2 * y2 / 24) * log_term(z, x2, y2, r)
    out += (x2 * x2 + y2 * y2 + z2 * z2 - 3 * x2 * y2 - 3 * y2 * z2 - 3 * x2 * z2) * r / 60
    out -= x * y * z * z2 / 6 * atan_term(x, y, z)
    out -= x * y2 * y * z / 6 * atan_term(x, z, y)
    out -= x2 * x * y * z / 6 * atan_term(y, z, x)
    return out


def _differences(c1, e1, c2, e2):
    """The four end-point differences of two intervals (centre c, extent e) and their signs."""
    a1, a2 = c1 - e1 / 2, c1 + e1 / 2
    b1, b2 = c2 - e2 / 2, c2 + e2 / 2
    return (a2 - b1, a1 - b2, a2 - b2, a1 - b1), (1.0, 1.0, -1.0, -1.0)


def bar_mutual_inductance(centre1_m, size1_m, centre2_m, size2_m, axis: int = 0):
    r"""Mutual partial inductance of two parallel bars of rectangular section, uniform current.

    Exact closed form of the Neumann integral over the two volumes (Hoer and Love 1965):

    .. math:: M = \frac{\mu_0}{4\pi}\frac{1}{A_1 A_2}\sum_{i,j,k}(\pm)\,f(X_i, Y_j, Z_k)

    with :math:`A` the sections, :math:`X_i, Y_j, Z_k` the differences of the bars' end
    coordinates along each axis and f the sixth antiderivative of 1/R. With both bars the same
    it is the bar's self inductance. The current of both bars runs along one axis, the same
    for both (the formula is symmetric in x, y, z, so which axis does not matter).

    Parameters
    ----------
    centre1_m, centre2_m : array (3,) or (P, 3)
        Bar centres [m].
    size1_m, size2_m : array (3,) or (P, 3)
        Bar extents along x, y, z [m] (one of them the length, along the current).
    axis : int
        Axis of the current in both bars: 0 = x, 1 = y, 2 = z.

    Returns
    -------
    float or array (P,)
        Mutual inductance [H] (the axis of the current must be the same for both bars; the
        caller makes sure of it).

    References
    ----------
    .. [1] C. Hoer, C. Love, "Exact inductance equations for rectangular conductors with
       applications to more complicated geometries", J. Res. NBS 69C(2), 127-137, 1965.
    .. [2] A. E. Ruehli, "Inductance calculations in a complex integrated circuit environment",
       IBM J. Res. Dev. 16(5), 470-481, 1972.

    Examples
    --------
    A bar 10 mm x 0.5 mm x 35 um with itself (Grover's bar formula gives 8.27 nH):

    >>> round(bar_mutual_inductance([0, 0, 0], [10e-3, 0.5e-3, 35e-6],
    ...                             [0, 0, 0], [10e-3, 0.5e-3, 35e-6]) * 1e9, 2)
    8.27
    """
    c1 = np.atleast_2d(as_finite("centre1_m", centre1_m))
    c2 = np.atleast_2d(as_finite("centre2_m", centre2_m))
    s1 = np.atleast_2d(as_positive("size1_m", size1_m))
    s2 = np.atleast_2d(as_positive("size2_m", size2_m))
    single = all(np.ndim(v) == 1 for v in (centre1_m, size1_m, centre2_m, size2_m))
    c1, s1, c2, s2 = np.broadcast_arrays(c1, s1, c2, s2)
    out = _bar_mutual(c1, s1, c2, s2, np.full(len(c1), int(axis)))
    return float(out[0]) if single else out


def _bar_mutual(c1, s1, c2, s2, axis):
    """Hoer-Love mutual for parallel bars whose current runs along ``axis`` (per pair)."""
    # scale to the pair's size so that the polynomial terms stay near 1 (cancellation)
    scale = np.maximum(s1.max(axis=1), s2.max(axis=1))
    d = (c1 - c2) / scale[:, None]
    a = s1 / scale[:, None]
    b = s2 / scale[:, None]
    zero = np.zeros(len(d))
    total = np.zeros(len(d))
    # f is even in each argument: along an axis where the two bars are centred on one another
    # with equal extents, the four differences are (e, -e, 0, 0) and their terms 2 f(e) - 2 f(0),
    # two evaluations instead of four (a cell with itself: 8 instead of 64; coplanar cells of one
    # layer: 32)
    sym = np.stack([(d[:, k] == 0) & (a[:, k] == b[:, k]) for k in range(3)], axis=1)
    code = sym[:, 0] * 1 + sym[:, 1] * 2 + sym[:, 2] * 4
    for cval in np.unique(code):
        sel = np.nonzero(code == cval)[0]
        terms = []
        for k in range(3):
            if sym[sel[0], k]:
                terms.append(((a[sel, k], zero[sel]), (2.0, -2.0)))
            else:
                terms.append(_differences(d[sel, k], a[sel, k], zero[sel], b[sel, k]))
        part = np.zeros(len(sel))
        for xi, sx in zip(*terms[0]):
            for yj, sy in zip(*terms[1]):
                for zk, sz in zip(*terms[2]):
                    part += sx * sy * sz * _hl_f(xi, yj, zk)
        total[sel] = part
    idx = np.arange(len(d))
    sec1 = np.prod(a, axis=1) / a[idx, axis]
    sec2 = np.prod(b, axis=1) / b[idx, axis]
    return MU0_OVER_4PI * total / (sec1 * sec2) * scale


def _filament_mutual(c1, s1, c2, s2, axis, across: bool = False):
    """Parallel filaments through the bar centres, with axial offset (Grover).

    ``across``: each bar as two filaments at the Gauss-Legendre points of its in-plane width
    (the transverse axis other than z; for z bars, x), which takes the finite width into
    account to fourth order in width / distance."""
    idx = np.arange(len(c1))
    u1 = c1[idx, axis]
    u2 = c2[idx, axis]
    l1 = s1[idx, axis]
    l2 = s2[idx, axis]
    a1, a2 = u1 - l1 / 2, u1 + l1 / 2
    b1, b2 = u2 - l2 / 2, u2 + l2 / 2
    d = c1 - c2
    d[idx, axis] = 0.0
    floor = 1e-9 * np.maximum(l1, l2)

    def pair(dd):
        rho = np.maximum(np.sqrt(np.einsum("ij,ij->i", dd, dd)), floor)

        def g(u):
            # u asinh(u / rho) - sqrt(u^2 + rho^2), written with |u| (odd times odd) for speed
            au = np.abs(u)
            r = np.sqrt(au * au + rho * rho)
            return au * np.log((au + r) / rho) - r

        return g(a2 - b1) + g(a1 - b2) - g(a2 - b2) - g(a1 - b1)

    if not across:
        return MU0_OVER_4PI * pair(d)
    side = np.where(axis == 2, 0, np.where(axis == 0, 1, 0))
    q = 0.5 / math.sqrt(3.0)
    total = np.zeros(len(c1))
    for p1 in (-q, q):
        for p2 in (-q, q):
            dd = d.copy()
            dd[idx, side] += p1 * s1[idx, side] - p2 * s2[idx, side]
            total += pair(dd)
    return MU0_OVER_4PI * total / 4.0


def partial_inductance_bars(centres_m, sizes_m, axes):
    r"""Partial-inductance matrix of axis-aligned bars (sheet cells and via barrels).

    .. math:: L_{kl} = \frac{\mu_0}{4\pi}\frac{1}{A_k A_l}\int_{V_k}\int_{V_l}
              \frac{\hat{\mathbf{u}}_k\cdot\hat{\mathbf{u}}_l}{R}\,dV_k\,dV_l

    Self terms and near parallel pairs by the exact bar formula (Hoer and Love 1965), parallel
    pairs further apart than ``NEAR_RATIO`` times the larger cell size by parallel filaments
    with axial offset (Grover 1946); pairs at right angles are zero. Current is taken in the
    +axis direction of each bar.

    Parameters
    ----------
    centres_m : array (N, 3)
        Bar centres [m].
    sizes_m : array (N, 3)
        Extents along x, y, z [m].
    axes : array (N,) of int
        Axis of the current: 0 = x, 1 = y, 2 = z.

    Returns
    -------
    array (N, N)
        Symmetric partial-inductance matrix [H].

    References
    ----------
    .. [1] C. Hoer, C. Love, J. Res. NBS 69C(2), 1965.
    .. [2] A. E. Ruehli, "Equivalent circuit models for three-dimensional multiconductor
       systems", IEEE Trans. MTT 22(3), 216-221, 1974.
    .. [3] F. W. Grover, "Inductance Calculations", 1946, ch. 5 (filaments with offset).

    Examples
    --------
    Two 10 mm strips 0.5 mm wide, 1 mm apart side by side (Grover's filaments 1 mm apart:
    4.19 nH; the strips' width adds a little):

    >>> Lp = partial_inductance_bars([[0, 0, 0], [0, 1e-3, 0]], [[10e-3, 0.5e-3, 35e-6]] * 2, [0, 0])
    >>> [round(float(v) * 1e9, 2) for v in (Lp[0, 0], Lp[0, 1])]
    [8.27, 4.23]
    """
    c = as_finite("centres_m", centres_m).reshape(-1, 3)
    s = as_positive("sizes_m", sizes_m).reshape(-1, 3)
    ax = np.asarray(axes, dtype=int).reshape(-1)
    n = len(c)
    if len(s) != n or len(ax) != n:
        raise ValueError("centres_m, sizes_m and axes must have the same length")
    L = np.zeros((n, n))
    big = s.max(axis=1)
    # in-plane width across the current: y extent of x cells, x extent of y and z cells
    across = np.where(ax == 0, s[:, 1], s[:, 0])
    for a in (0, 1, 2):
        idx = np.nonzero(ax == a)[0]
        m = len(idx)
        if m == 0:
            continue
        cc, ss, bb, ww = c[idx], s[idx], big[idx], across[idx]
        length = ss[:, a]
        cross = np.delete(ss, a, axis=1).max(axis=1)       # the larger side of each section
        La = np.empty((m, m))
        near_i: list[np.ndarray] = []
        near_j: list[np.ndarray] = []
        rows = max(1, _CHUNK // m)
        for r0 in range(0, m, rows):
            r1 = min(m, r0 + rows)
            dv = cc[r0:r1, None, :] - cc[None, :, :]
            D = np.sqrt(np.einsum("ijk,ijk->ij", dv, dv))
            lim = np.maximum(bb[r0:r1, None], bb[None, :])
            # far pairs: two filaments at their centres' distance R, M = mu0/4pi l1 l2 / R (the
            # first term of the Neumann integral's expansion; largest error, (l / R)^2 / 6, for
            # collinear filaments: 0.5 % at POINT_RATIO = 6 sizes)
            with np.errstate(divide="ignore"):
                blk = MU0_OVER_4PI * length[r0:r1, None] * length[None, :] / D
            close = (D < POINT_RATIO * lim) & (np.arange(m)[None, :] >= np.arange(r0, r1)[:, None])
            ci, cj = np.nonzero(close)
            i = ci + r0
            j = cj
            d = D[ci, cj]
            # the exact bar formula where the two sections are close (within NEAR_RATIO section
            # sizes across the current and one section size along it); the filament formula
            # takes the lengths exactly, so only the sections' nearness calls for it
            du = np.abs(cc[j, a] - cc[i, a])
            sep = np.sqrt(np.maximum(d * d - du * du, 0.0))
            gap = np.maximum(du - 0.5 * (length[i] + length[j]), 0.0)
            sec = np.maximum(cross[i], cross[j])
            near = (sep < NEAR_RATIO * sec) & (gap < sec)
            axv = np.full(len(i), a)
            vals = np.empty(len(i))
            # the exact pairs of all row blocks are computed together below (one pass finds
            # the repeated geometries of the whole grid)
            k = np.nonzero(near)[0]
            near_i.append(i[k]); near_j.append(j[k])
            mid = ~near & (d < FAR_RATIO * np.maximum(ww[i], ww[j]))
            for sel, two in ((mid, True), (~near & ~mid, False)):
                f = np.nonzero(sel)[0]
                if len(f):
                    vals[f] = _filament_mutual(cc[i[f]], ss[i[f]], cc[j[f]], ss[j[f]], axv[f], two)
            keep = ~near
            blk[ci[keep], cj[keep]] = vals[keep]
            La[r0:r1] = blk
        ni, nj = np.concatenate(near_i), np.concatenate(near_j)
        if len(ni):
            La[ni, nj] = _near_unique(cc[ni], ss[ni], cc[nj], ss[nj], a)
        # the close pairs were computed above the diagonal: mirror them below it
        La = np.triu(La) + np.triu(La, 1).T
        L[np.ix_(idx, idx)] = La
    return L


def _near_unique(c1, s1, c2, s2, axis):
    """Hoer-Love for many pairs, each distinct relative geometry computed once (grids repeat)."""
    key = np.concatenate([c1 - c2, s1, s2], axis=1)
    scale = max(float(np.max(np.abs(key))), 1e-30)
    q = np.round(key / scale * 1e9).astype(np.int64)
    uq, first, inv = np.unique(q, axis=0, return_index=True, return_inverse=True)
    zero = np.zeros((len(first), 3))
    vals = _bar_mutual(c1[first] - c2[first], s1[first], zero, s2[first], np.full(len(first), axis))
    return vals[np.asarray(inv).reshape(-1)]


# ----------------------------------------------------------------------------- the circuit

@dataclass
class Conductors:
    """The conductor graph of a loop solve.

    Bars are axis-aligned cells; links are straight conductors between two nodes at any angle
    (components, their pad-to-pad current). All lengths in metres.
    """

    n_nodes: int
    bar_nodes: np.ndarray          # (Nb, 2) int: current flows from node [0] to node [1]
    bar_centres: np.ndarray        # (Nb, 3)
    bar_sizes: np.ndarray          # (Nb, 3)
    bar_axes: np.ndarray           # (Nb,) int, the +axis direction runs from node 0 to node 1
    bar_resistance: np.ndarray     # (Nb,) [ohm]
    link_nodes: np.ndarray         # (Nl, 2) int
    link_starts: np.ndarray        # (Nl, 3)
    link_ends: np.ndarray          # (Nl, 3)
    link_widths: np.ndarray        # (Nl,) section width [m] of the link's strip
    link_thickness: np.ndarray     # (Nl,)
    link_extra_inductance: np.ndarray = field(default_factory=lambda: np.zeros(0))   # (Nl,) [H], package
    link_part: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))    # (Nl,) the part each link is of

    @property
    def n_branches(self) -> int:
        return len(self.bar_nodes) + len(self.link_nodes)


def link_partial_inductance(con: Conductors) -> tuple[np.ndarray, np.ndarray]:
    """(Lp rows of the links against the bars (Nl, Nb), Lp among the links (Nl, Nl)) [H].

    A link is a straight strip between its pad centres: self by Grover's bar formula, mutuals
    with the bars and the other links as filaments (Neumann integral, ``physics.inductance``).
    """
    from loopcheck.physics import inductance as ind

    nl, nb = len(con.link_nodes), len(con.bar_nodes)
    if nl == 0:
        return np.zeros((0, nb)), np.zeros((0, 0))
    a0, a1 = con.link_starts, con.link_ends
    length = np.linalg.norm(a1 - a0, axis=1)
    ok = length > 1e-9
    rows = np.zeros((nl, nb))
    unit = np.eye(3)
    b0 = con.bar_centres - 0.5 * con.bar_sizes[np.arange(nb), con.bar_axes][:, None] * unit[con.bar_axes]
    b1 = con.bar_centres + 0.5 * con.bar_sizes[np.arange(nb), con.bar_axes][:, None] * unit[con.bar_axes]
    gb = 0.2235 * (np.sort(con.bar_sizes, axis=1)[:, :2].sum(axis=1))
    gl = 0.2235 * (con.link_widths + con.link_thickness)
    for k in np.nonzero(ok)[0]:
        # softening of the link-cell pair: the larger of the two strips' own GMDs (a narrow cell
        # inside the link's footprint lies at about the link's GMD from it, however small the cell)
        g = np.maximum(gb, gl[k])
        rows[k] = ind.segment_mutual_inductance(np.broadcast_to(a0[k], b0.shape), np.broadcast_to(a1[k], b0.shape),
                                                b0, b1, g)
    among = np.zeros((nl, nl))
    for k in range(nl):
        if ok[k]:
            among[k, k] = float(ind.bar_self_inductance(length[k], con.link_widths[k], con.link_thickness[k]))
        for m in range(k + 1, nl):
            if ok[k] and ok[m]:
                among[k, m] = among[m, k] = ind.segment_mutual_inductance(a0[k], a1[k], a0[m], a1[m],
                                                                          0.5 * (gl[k] + gl[m]))
    if len(con.link_extra_inductance) == nl:
        among[np.arange(nl), np.arange(nl)] += con.link_extra_inductance
    return rows, among


def assemble_partial_inductance(con: Conductors) -> np.ndarray:
    """The full partial-inductance matrix [H] of bars then links (branch order of ``Conductors``)."""
    nb, nl = len(con.bar_nodes), len(con.link_nodes)
    L = np.empty((nb + nl, nb + nl))
    L[:nb, :nb] = partial_inductance_bars(con.bar_centres, con.bar_sizes, con.bar_axes)
    rows, among = link_partial_inductance(con)
    L[nb:, :nb] = rows
    L[:nb, nb:] = rows.T
    L[nb:, nb:] = among
    return L


def loop_basis(n_nodes: int, branch_nodes: np.ndarray, first: int | None = None) -> csr_matrix:
    """Loop-incidence matrix C (branches x loops) of a fundamental-cycle basis.

    A breadth-first spanning forest keeps the cycles short (sparse C). Each branch not in the
    forest closes one loop: itself plus the forest paths from its ends to their common ancestor.
    Branch k runs from branch_nodes[k, 0] to branch_nodes[k, 1]; C[k, m] = +-1 when loop m
    passes branch k along / against it. ``first``: a branch forced out of the forest (the source
    link), so that it lies in loops.
    """
    nbr = len(branch_nodes)
    u, v = branch_nodes[:, 0], branch_nodes[:, 1]
    order = np.arange(nbr)
    if first is not None:
        order = np.concatenate([order[order != first], [first]])
    # adjacency with branch ids; the forced branch last so that BFS prefers the others
    # built by hand, not through a sparse matrix: parallel branches between the same two nodes
    # (two vias in one cell, a via and a pad link) must stay apart, a conversion would sum them
    rows = np.concatenate([u[order], v[order]]).astype(np.int64)
    srt = np.argsort(rows, kind="stable")
    indices = np.concatenate([v[order], u[order]]).astype(np.int64)[srt]
    data = np.concatenate([order, order]).astype(np.int64)[srt] + 1
    indptr = np.zeros(n_nodes + 1, dtype=np.int64)
    np.cumsum(np.bincount(rows, minlength=n_nodes), out=indptr[1:])
    parent = np.full(n_nodes, -1)
    parent_branch = np.full(n_nodes, -1)
    depth = np.zeros(n_nodes, dtype=int)
    seen = np.zeros(n_nodes, dtype=bool)
    in_tree = np.zeros(nbr, dtype=bool)
    for root in range(n_nodes):
        if seen[root]:
            continue
        seen[root] = True
        queue = [root]
        qi = 0
        while qi < len(queue):
            p = queue[qi]
            qi += 1
            for e in range(indptr[p], indptr[p + 1]):
                q = indices[e]
                if not seen[q]:
                    b = data[e] - 1
                    if b == first and first is not None:
                        continue
                    seen[q] = True
                    parent[q] = p
                    parent_branch[q] = b
                    depth[q] = depth[p] + 1
                    in_tree[b] = True
                    queue.append(q)
        # nodes reachable only through the forced branch
    # nodes reached through nothing else than ``first`` would be unseen: they are (isolated)
    root = np.arange(n_nodes)
    for q in np.argsort(depth, kind="stable"):
        if parent[q] >= 0:
            root[q] = root[parent[q]]
    rows, cols, vals = [], [], []
    m = 0
    for b in np.nonzero(~in_tree)[0]:
        a, c = int(u[b]), int(v[b])
        if a == c or root[a] != root[c]:
            continue          # (only the forced branch can join two trees: it closes no loop)
        rows.append(b); cols.append(m); vals.append(1.0)
        # walk from c (end) back to the common ancestor, then from a: the loop runs a -> c
        # through b, and back c -> ancestor -> a along the tree
        pa, pc = a, c
        path_c, path_a = [], []
        while depth[pc] > depth[pa]:
            path_c.append(pc); pc = parent[pc]
        while depth[pa] > depth[pc]:
            path_a.append(pa); pa = parent[pa]
        while pa != pc:
            path_c.append(pc); pc = parent[pc]
            path_a.append(pa); pa = parent[pa]
        for node in path_c:          # c -> up: traverse tree branch from node to its parent
            tb = parent_branch[node]
            # branch tb runs u -> v; moving node -> parent
            rows.append(tb); cols.append(m); vals.append(1.0 if u[tb] == node else -1.0)
        for node in path_a:          # ancestor -> down to a: traverse parent -> node
            tb = parent_branch[node]
            rows.append(tb); cols.append(m); vals.append(1.0 if v[tb] == node else -1.0)
        m += 1
    return coo_matrix((vals, (rows, cols)), shape=(nbr, m)).tocsr()


@dataclass
class LoopSolution:
    """Currents for a unit current in the source link, and the loop's inductance."""

    inductance_h: float
    resistance_ohm: float          # 0 at the inductive limit
    currents: np.ndarray           # (Nb + Nl,) [A] per branch, + along the branch (complex at f > 0)
    energy_share: np.ndarray       # (Nb + Nl,) each branch's part of I^T Lp I / L (sums to 1)
    n_loops: int
    frequency_hz: float | None = None


def solve_loop(con: Conductors, source_link: int, Lp: np.ndarray | None = None,
               frequency_hz: float | None = None) -> LoopSolution:
    r"""Current distribution and inductance of the loop driven in link ``source_link``.

    Mesh formulation: the branch currents are loop currents, I = C x (Kirchhoff's current law
    holds for any x); with a source V in the source link,

    .. math:: C^T Z C\,x = c_s V,\quad Z = R + j\omega L_p \;(\text{or } L_p \text{ at the
              inductive limit}),\qquad Z_{loop} = V / I_s

    At the inductive limit the solution minimises the magnetic energy
    :math:`\tfrac12 I^T L_p I` for the unit current in the source, L = I^T L_p I.

    Parameters
    ----------
    con : Conductors
        The conductor graph.
    source_link : int
        Index of the link that carries the source (any series element of the loop).
    Lp : array, optional
        The partial-inductance matrix [H] if already assembled.
    frequency_hz : float, optional
        Solve with resistance at this frequency [Hz] (DC resistance per cell, no skin effect
        inside a cell); None: the inductive limit.

    Returns
    -------
    LoopSolution

    References
    ----------
    .. [1] M. Kamon, M. J. Tsuk, J. K. White, "FASTHENRY: a multipole-accelerated 3-D
       inductance extraction program", IEEE Trans. MTT 42(9), 1750-1758, 1994.
    .. [2] A. E. Ruehli, IEEE Trans. MTT 22(3), 1974.

    Examples
    --------
    A 20 x 10 mm loop of 0.5 mm strips, 35 um thick, cut into cells by
    ``rectangular_loop_conductors`` (Grover's rectangle with the strip's equivalent radius
    0.2235 (w + t): 47.4 nH):

    >>> con = rectangular_loop_conductors(20e-3, 10e-3, 0.5e-3, 35e-6, cells_across=1)
    >>> round(solve_loop(con, 0).inductance_h * 1e9, 1)
    47.5
    """
    nb = len(con.bar_nodes)
    branch_nodes = np.vstack([con.bar_nodes.reshape(-1, 2), con.link_nodes.reshape(-1, 2)]).astype(int)
    s = nb + int(source_link)
    if Lp is None:
        Lp = assemble_partial_inductance(con)
    C = loop_basis(con.n_nodes, branch_nodes, first=s).tocsc()
    cs = C[s].toarray().ravel()
    if not np.any(cs):
        raise ValueError("the source link closes no loop: its two ends are not joined by the conductors")
    LC = np.asarray((C.T @ Lp).T)          # Lp C (Lp symmetric), sparse C: cheap
    Zm = np.asarray(C.T @ LC)
    if frequency_hz is None:
        Zm = 0.5 * (Zm + Zm.T)
        x = linalg.solve(Zm, cs, assume_a="pos")
        i_s = float(cs @ x)
        I = np.asarray(C @ x).ravel() / i_s
        L = 1.0 / i_s
        R = 0.0
    else:
        w = 2 * math.pi * frequency_hz
        res = np.concatenate([con.bar_resistance, np.zeros(len(con.link_nodes))])
        Zr = np.asarray((C.T @ C.multiply(res[:, None])).toarray())
        Z = Zr + 1j * w * Zm
        x = linalg.solve(Z, cs.astype(complex), assume_a="sym")
        i_s = complex(cs @ x)
        I = np.asarray(C @ x).ravel() / i_s
        z = 1.0 / i_s
        L = float(z.imag / w)
        R = float(z.real)
    LI = Lp @ I
    energy = np.real(np.conj(I) * LI) if np.iscomplexobj(I) else I * LI
    tot = float(np.sum(energy))
    share = energy / tot if tot else np.zeros_like(energy)
    return LoopSolution(float(L), R, I, share, C.shape[1], frequency_hz)


# ----------------------------------------------------------------------------- sheet meshes

@dataclass
class SheetMesh:
    """A rectilinear grid of cells over copper layers (cell edges in metres) and its labels."""

    x_edges: np.ndarray            # (nx + 1,)
    y_edges: np.ndarray            # (ny + 1,)
    labels: np.ndarray             # (n_layers, nx, ny) int: conductor id, -1 no copper
    z: np.ndarray                  # (n_layers,) layer mid-plane heights
    thickness: np.ndarray          # (n_layers,)
    node_index: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))  # (n_layers, nx, ny), -1
    bar_cells: np.ndarray = field(default_factory=lambda: np.zeros((0, 2, 3), dtype=int))  # (Nb sheet, 2, (k, i, j))
    #: (n_layers, nx, ny) int: the block (one node of the circuit) each grid cell belongs to, -1
    #: no copper; blocks are rectangles of grid cells of one island (``merge_cells``). Empty:
    #: every copper cell is its own block.
    blocks: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))
    #: (Nb sheet, 2) int: the blocks at the two ends of each sheet conductor (the same block
    #: twice for a conductor inside one block, along its centre line)
    bar_blocks: np.ndarray = field(default_factory=lambda: np.zeros((0, 2), dtype=int))

    @property
    def x_centres(self) -> np.ndarray:
        return 0.5 * (self.x_edges[1:] + self.x_edges[:-1])

    @property
    def y_centres(self) -> np.ndarray:
        return 0.5 * (self.y_edges[1:] + self.y_edges[:-1])


def sheet_conductors(mesh: SheetMesh, resistivity_ohm_m: float,
                     vias: list[tuple] = (),
                     links: list[tuple[tuple[float, float, int], tuple[float, float, int], float, float]] = (),
                     ) -> tuple[Conductors, list[list[int]], list[int]]:
    """The conductor graph of a sheet mesh: nodes at cell centres, x and y cells between
    neighbouring cells with the same label, vias and links between the cells holding their ends.

    Parameters
    ----------
    mesh : SheetMesh
        Grid and labels; ``mesh.node_index`` (cell -> node) and ``mesh.bar_cells`` (the two
        cells of each sheet cell-to-cell conductor) are filled in.
    resistivity_ohm_m : float
        Copper resistivity [ohm m] for the cell resistances.
    vias : list of (x [m], y [m], layers, barrel diameter [m][, allowed labels])
        Vertical conductors joining the nodes of the given layers; a via whose cell holds no
        copper on a layer (or copper of a label not in ``allowed labels``) is not joined there.
    links : list of ((x, y, layer), (x, y, layer), width [m], extra inductance [H][, lift [m]])
        Lumped links (components) between two points; with a lift, the link rises by it (a
        signed height) at one end, runs across and comes down at the other (three conductors,
        ``Conductors.link_part`` says whose).

    Returns
    -------
    (Conductors, via branch indices per via (empty when not connected), node per link end
    (2 per link, -1 where no copper lies under the end))
    """
    lab = mesh.labels
    nlay, nx, ny = lab.shape
    blocks = _blocks_of(mesh)
    node = blocks
    mesh.node_index = node
    n_blocks = int(blocks.max()) + 1 if blocks.size and blocks.max() >= 0 else 0
    bx0, bx1, by0, by1 = block_bounds(mesh.x_edges, mesh.y_edges, blocks, n_blocks)
    bxc, byc = 0.5 * (bx0 + bx1), 0.5 * (by0 + by1)
    kk_, ii_, jj_ = np.nonzero(blocks >= 0)
    first_cell = np.zeros((n_blocks, 3), dtype=int)
    first_cell[blocks[kk_, ii_, jj_][::-1]] = np.column_stack([kk_, ii_, jj_])[::-1]
    # Where a face between two blocks is not centred on a block (blocks of different size side
    # by side), the conductor across it ends on the block's centre line at the face's centre
    # (a "rail" node), and the rail joins it to the block's centre through conductors of the
    # block's own size: current that crosses such a face moves along the block at the cost of
    # its inductance instead of jumping to the block's centre for free (which let a mesh of
    # mixed sizes read up to 10 % low).
    rail_nodes: dict[tuple[int, int, int], int] = {}
    tol = 1e-6 * float(min(np.min(np.diff(mesh.x_edges)), np.min(np.diff(mesh.y_edges)))) if nx and ny else 0.0
    n_nodes = n_blocks

    def attach(blk, ax, pos):
        nonlocal n_nodes
        centre = byc[blk] if ax == 0 else bxc[blk]
        out = blk.copy()
        for q in np.nonzero(np.abs(pos - centre) > tol)[0]:
            key = (int(blk[q]), ax, int(round(float(pos[q]) / tol)) if tol else 0)
            if key not in rail_nodes:
                rail_nodes[key] = n_nodes
                n_nodes += 1
            out[q] = rail_nodes[key]
        return out

    cen, siz, axs, nod, res, cells, bblk = [], [], [], [], [], [], []
    for k in range(nlay):
        t = mesh.thickness[k]
        for ax in (0, 1):
            pairs = _face_pairs(lab[k], blocks[k], mesh.x_edges, mesh.y_edges, ax)
            if pairs is None:
                continue
            A, B, width, mid, ci, cj = pairs
            if ax == 0:
                length = bxc[B] - bxc[A]
                cen.append(np.column_stack([0.5 * (bxc[A] + bxc[B]), mid, np.full(len(A), mesh.z[k])]))
                siz.append(np.column_stack([length, width, np.full(len(A), t)]))
                nxt = np.column_stack([np.full(len(A), k), ci + 1, cj])
            else:
                length = byc[B] - byc[A]
                cen.append(np.column_stack([mid, 0.5 * (byc[A] + byc[B]), np.full(len(A), mesh.z[k])]))
                siz.append(np.column_stack([width, length, np.full(len(A), t)]))
                nxt = np.column_stack([np.full(len(A), k), ci, cj + 1])
            axs.append(np.full(len(A), ax, dtype=int))
            nod.append(np.column_stack([attach(A, ax, mid), attach(B, ax, mid)]))
            res.append(resistivity_ohm_m * length / (width * t))
            cells.append(np.stack([np.column_stack([np.full(len(A), k), ci, cj]), nxt], axis=1))
            bblk.append(np.column_stack([A, B]))
    # the rails: along each block's centre line, between its attachment points and its centre
    by_rail: dict[tuple[int, int], list[tuple[float, int]]] = {}
    for (blk, ax, _), nd in rail_nodes.items():
        by_rail.setdefault((blk, ax), []).append(nd)
    if by_rail:
        # positions of the rail nodes (recovered from the key's rounded coordinate)
        pos_of = {nd: key[2] * tol for key, nd in rail_nodes.items()}
        for (blk, ax), nds in by_rail.items():
            k = int(first_cell[blk, 0])
            t = mesh.thickness[k]
            # x faces (ax 0) put their nodes on the block's vertical centre line (varying y)
            centre = byc[blk] if ax == 0 else bxc[blk]
            pts = sorted([(pos_of[nd], nd) for nd in nds] + [(float(centre), blk)])
            for (pa, na), (pb, nb_) in zip(pts[:-1], pts[1:]):
                ln = pb - pa
                if ln <= 0:
                    continue
                if ax == 0:     # a y conductor along the vertical centre line, the block's width
                    cen.append(np.array([[bxc[blk], 0.5 * (pa + pb), mesh.z[k]]]))
                    siz.append(np.array([[bx1[blk] - bx0[blk], ln, t]]))
                    axs.append(np.array([1]))
                    res.append(np.array([resistivity_ohm_m * ln / ((bx1[blk] - bx0[blk]) * t)]))
                else:
                    cen.append(np.array([[0.5 * (pa + pb), byc[blk], mesh.z[k]]]))
                    siz.append(np.array([[ln, by1[blk] - by0[blk], t]]))
                    axs.append(np.array([0]))
                    res.append(np.array([resistivity_ohm_m * ln / ((by1[blk] - by0[blk]) * t)]))
                nod.append(np.array([[na, nb_]]))
                cells.append(np.array([[first_cell[blk], first_cell[blk]]]))
                bblk.append(np.array([[blk, blk]]))
    mesh.bar_cells = np.concatenate(cells).astype(int) if cells else np.zeros((0, 2, 3), dtype=int)
    mesh.bar_blocks = np.concatenate(bblk).astype(int) if bblk else np.zeros((0, 2), dtype=int)

    def cell_of(x, y):
        i = int(np.clip(np.searchsorted(mesh.x_edges, x) - 1, 0, nx - 1))
        j = int(np.clip(np.searchsorted(mesh.y_edges, y) - 1, 0, ny - 1))
        return i, j

    via_branches: list[list[int]] = []
    nb0 = sum(len(a) for a in axs)
    count = nb0
    for via in vias:
        x, y, layers, dia = via[:4]
        allowed = via[4] if len(via) > 4 else None
        i, j = cell_of(x, y)
        stops = [k for k in sorted(set(layers)) if node[k, i, j] >= 0
                 and (allowed is None or lab[k, i, j] in allowed)]
        side = max(0.5 * dia / 0.4470, 1e-6)
        mine = []
        for ka, kb in zip(stops[:-1], stops[1:]):
            h = abs(mesh.z[ka] - mesh.z[kb])
            if h <= 0:
                continue
            # +z runs from the lower layer (larger index) to the upper one
            cen.append(np.array([[x, y, 0.5 * (mesh.z[ka] + mesh.z[kb])]]))
            siz.append(np.array([[side, side, h]]))
            axs.append(np.array([2]))
            nod.append(np.array([[node[kb, i, j], node[ka, i, j]]]))
            res.append(np.array([resistivity_ohm_m * h / (math.pi * dia * 25e-6)]))
            mine.append(count)
            count += 1
        via_branches.append(mine)
    ln, ls, le, lw, lt, lx, lp = [], [], [], [], [], [], []
    ends: list[int] = []
    tk = float(np.mean(mesh.thickness))
    for q, link in enumerate(links):
        pa, pb, width, extra = link[:4]
        lift = float(link[4]) if len(link) > 4 else 0.0
        na = node[pa[2], cell_of(pa[0], pa[1])[0], cell_of(pa[0], pa[1])[1]]
        nb_ = node[pb[2], cell_of(pb[0], pb[1])[0], cell_of(pb[0], pb[1])[1]]
        ends += [int(na), int(nb_)]
        a = (pa[0], pa[1], mesh.z[pa[2]])
        b = (pb[0], pb[1], mesh.z[pb[2]])
        if lift == 0.0 or na < 0 or nb_ < 0:
            pieces = [(na, nb_, a, b, extra)]
        else:
            # the part's current runs in its body, ``lift`` above (or below) its pads: up from
            # one pad, across, down to the other, through two nodes of its own
            a2, b2 = (a[0], a[1], a[2] + lift), (b[0], b[1], b[2] + lift)
            n1, n2 = n_nodes, n_nodes + 1
            n_nodes += 2
            pieces = [(na, n1, a, a2, 0.0), (n1, n2, a2, b2, extra), (n2, nb_, b2, b, 0.0)]
        for (u, v, s0, s1, ex) in pieces:
            ln.append((u, v)); ls.append(s0); le.append(s1)
            lw.append(width); lt.append(tk); lx.append(ex); lp.append(q)
    cat = (lambda parts, shape: np.concatenate(parts) if parts else np.zeros(shape))
    con = Conductors(
        n_nodes=int(n_nodes), bar_nodes=cat(nod, (0, 2)).astype(int), bar_centres=cat(cen, (0, 3)),
        bar_sizes=cat(siz, (0, 3)), bar_axes=cat(axs, (0,)).astype(int), bar_resistance=cat(res, (0,)),
        link_nodes=np.array(ln, dtype=int).reshape(-1, 2), link_starts=np.array(ls, dtype=float).reshape(-1, 3),
        link_ends=np.array(le, dtype=float).reshape(-1, 3), link_widths=np.array(lw, dtype=float),
        link_thickness=np.array(lt, dtype=float), link_extra_inductance=np.array(lx, dtype=float),
        link_part=np.array(lp, dtype=int))
    return con, via_branches, ends


def sheet_current_density(mesh: SheetMesh, con: Conductors, currents: np.ndarray) -> np.ndarray:
    """Sheet current density at every grid cell [A/m], shape (n_layers, nx, ny, 2) (Jx, Jy): per
    block, the current through each face that has conductors, over the block's width, averaged
    over those faces (a grid cell of its own block: the mean of its x (y) cells' I / width);
    every cell of a block takes the block's value."""
    nlay, nx, ny = mesh.labels.shape
    blocks = _blocks_of(mesh)
    n = int(blocks.max()) + 1 if blocks.size and blocks.max() >= 0 else 0
    bx0, bx1, by0, by1 = block_bounds(mesh.x_edges, mesh.y_edges, blocks, n)
    I = np.real(currents[:len(mesh.bar_cells)])
    nodes = mesh.bar_blocks
    axes = con.bar_axes[:len(mesh.bar_cells)]
    Jb = np.zeros((n, 2))
    across = nodes[:, 0] != nodes[:, 1]          # conductors through a face (not along a rail)
    for ax, span in ((0, by1 - by0), (1, bx1 - bx0)):
        sel = np.nonzero((axes == ax) & across)[0]
        face = np.zeros((n, 2))        # current through the block's low and high face
        has = np.zeros((n, 2))
        np.add.at(face[:, 1], nodes[sel, 0], I[sel])
        np.add.at(has[:, 1], nodes[sel, 0], 1.0)
        np.add.at(face[:, 0], nodes[sel, 1], I[sel])
        np.add.at(has[:, 0], nodes[sel, 1], 1.0)
        sides = (has > 0).sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            Jb[:, ax] = np.where(sides > 0, face.sum(axis=1) / np.maximum(sides, 1) / np.where(span > 0, span, 1), 0.0)
    out = np.zeros((nlay, nx, ny, 2))
    cu = blocks >= 0
    out[cu] = Jb[blocks[cu]]
    return out


def block_current_density(mesh: SheetMesh, J: np.ndarray) -> list[tuple[int, float, float, float, float, float, float]]:
    """One row per block: (layer, x0, y0, x1, y1 [m], Jx, Jy [A/m]) from the per-cell density of
    ``sheet_current_density`` (every cell of a block holds the block's value)."""
    blocks = _blocks_of(mesh)
    n = int(blocks.max()) + 1 if blocks.size and blocks.max() >= 0 else 0
    bx0, bx1, by0, by1 = block_bounds(mesh.x_edges, mesh.y_edges, blocks, n)
    k, i, j = np.nonzero(blocks >= 0)
    b = blocks[k, i, j]
    _, first = np.unique(b, return_index=True)
    return [(int(k[f]), float(bx0[b[f]]), float(by0[b[f]]), float(bx1[b[f]]), float(by1[b[f]]),
             float(J[k[f], i[f], j[f], 0]), float(J[k[f], i[f], j[f], 1])) for f in first]


def _blocks_of(mesh: SheetMesh) -> np.ndarray:
    """The block index array of a mesh (every copper cell its own block when none is set)."""
    if mesh.blocks.shape == mesh.labels.shape:
        return mesh.blocks
    out = np.full(mesh.labels.shape, -1, dtype=int)
    has = mesh.labels >= 0
    out[has] = np.arange(int(has.sum()))
    return out


def block_bounds(x_edges, y_edges, blocks: np.ndarray, n: int):
    """(x0, x1, y0, y1) arrays [m] of the n blocks' rectangles."""
    k, i, j = np.nonzero(blocks >= 0)
    b = blocks[k, i, j]
    x0 = np.full(n, np.inf); x1 = np.full(n, -np.inf)
    y0 = np.full(n, np.inf); y1 = np.full(n, -np.inf)
    xe, ye = np.asarray(x_edges), np.asarray(y_edges)
    np.minimum.at(x0, b, xe[i]); np.maximum.at(x1, b, xe[i + 1])
    np.minimum.at(y0, b, ye[j]); np.maximum.at(y1, b, ye[j + 1])
    return x0, x1, y0, y1


def _face_pairs(lab: np.ndarray, blk: np.ndarray, x_edges, y_edges, ax: int):
    """Conductors across the faces between neighbouring blocks of one island on one layer,
    along ``ax``: (low block, high block, face width [m], face centre across [m], grid index i
    and j of one low-side cell). None when there are none."""
    if ax == 0:
        a_lab, b_lab, a_blk, b_blk = lab[:-1, :], lab[1:, :], blk[:-1, :], blk[1:, :]
    else:
        a_lab, b_lab, a_blk, b_blk = lab[:, :-1], lab[:, 1:], blk[:, :-1], blk[:, 1:]
    same = (a_lab == b_lab) & (a_lab >= 0) & (a_blk != b_blk)
    i, j = np.nonzero(same)
    if len(i) == 0:
        return None
    A, B = a_blk[i, j], b_blk[i, j]
    if ax == 0:
        w = np.diff(np.asarray(y_edges))[j]
        c = 0.5 * (np.asarray(y_edges)[j] + np.asarray(y_edges)[j + 1])
    else:
        w = np.diff(np.asarray(x_edges))[i]
        c = 0.5 * (np.asarray(x_edges)[i] + np.asarray(x_edges)[i + 1])
    key = A.astype(np.int64) * (int(blk.max()) + 1) + B
    uq, first, inv = np.unique(key, return_index=True, return_inverse=True)
    inv = np.asarray(inv).reshape(-1)
    width = np.bincount(inv, weights=w)
    mid = np.bincount(inv, weights=w * c) / width
    return A[first], B[first], width, mid, i[first], j[first]


def count_sheet_branches(labels: np.ndarray, blocks: np.ndarray, x_edges, y_edges) -> int:
    """Sheet conductors ``sheet_conductors`` will make of a mesh: one across each face between
    neighbouring blocks of one island, and one along a block's centre line for each face that
    is not centred on the block (see there)."""
    total = 0
    n = int(blocks.max()) + 1 if blocks.size and blocks.max() >= 0 else 0
    if n == 0:
        return 0
    bx0, bx1, by0, by1 = block_bounds(x_edges, y_edges, blocks, n)
    centre = (0.5 * (by0 + by1), 0.5 * (bx0 + bx1))
    span = min(float(np.min(np.diff(x_edges))), float(np.min(np.diff(y_edges))))
    for k in range(labels.shape[0]):
        for ax in (0, 1):
            pairs = _face_pairs(labels[k], blocks[k], x_edges, y_edges, ax)
            if pairs is None:
                continue
            A, B, _, mid, _, _ = pairs
            total += len(A)
            for blk in (A, B):
                off = np.abs(mid - centre[ax][blk]) > 1e-6 * span
                total += len(np.unique(np.column_stack([blk[off], np.round(mid[off] / (1e-6 * span))]), axis=0))
    return total


def merge_cells(labels: np.ndarray, x_edges, y_edges, target_m: np.ndarray) -> np.ndarray:
    """Blocks of grid cells: rectangles of one island no larger than the target size of every
    cell they hold, found by halving the grid (a quadtree over the cell indices).

    A graded grid carries the fine lines of the loop's conductor edges across the whole window
    and onto every layer; merging the cells far from where the loop's current flows (large
    target) keeps them fine there and coarse elsewhere, so the number of unknowns follows the
    loop's outline rather than the grid's product. A block holds copper of one island only
    and no empty cell: the copper outline stays as the grid draws it (merging across a gap or a
    slot would close it).

    Parameters
    ----------
    labels : array (n_layers, nx, ny) of int
        Island id per grid cell, -1 no copper.
    x_edges, y_edges : array (nx + 1,), (ny + 1,)
        Grid lines [m] (or any length unit, the same for ``target_m``).
    target_m : array (n_layers, nx, ny)
        Largest block side wanted at each cell [m] (a single cell is always a block).

    Returns
    -------
    array (n_layers, nx, ny) of int
        Block index per cell (0 .. n_blocks - 1), -1 where there is no copper.

    Examples
    --------
    A 4 x 4 grid of 1 m cells, one island, a target of 2 m everywhere: four 2 x 2 blocks.

    >>> lab = np.zeros((1, 4, 4), dtype=int)
    >>> b = merge_cells(lab, np.arange(5.0), np.arange(5.0), np.full((1, 4, 4), 2.0))
    >>> int(b.max()) + 1, b[0, :2, :2].tolist()
    (4, [[0, 0], [0, 0]])
    """
    lab = np.asarray(labels)
    xe, ye = np.asarray(x_edges, dtype=float), np.asarray(y_edges, dtype=float)
    tgt = np.asarray(target_m, dtype=float)
    out = np.full(lab.shape, -1, dtype=int)
    count = 0
    tol = 1e-9 * max(float(xe[-1] - xe[0]), float(ye[-1] - ye[0]), 1e-30)
    for k in range(lab.shape[0]):
        stack = [(0, lab.shape[1], 0, lab.shape[2])]
        while stack:
            i0, i1, j0, j1 = stack.pop()    # the low half was pushed last: blocks numbered low first
            sub = lab[k, i0:i1, j0:j1]
            lo, hi = int(sub.min()), int(sub.max())
            if hi < 0:
                continue
            w, h = xe[i1] - xe[i0], ye[j1] - ye[j0]
            single = i1 - i0 == 1 and j1 - j0 == 1
            if single or (lo == hi and max(w, h) <= float(tgt[k, i0:i1, j0:j1].min()) + tol):
                out[k, i0:i1, j0:j1] = count
                count += 1
                continue
            # halve the longer side at its physical middle (graded grids keep blocks square)
            if (w >= h and i1 - i0 > 1) or j1 - j0 == 1:
                m = int(np.clip(np.searchsorted(xe, 0.5 * (xe[i0] + xe[i1])), i0 + 1, i1 - 1))
                stack += [(m, i1, j0, j1), (i0, m, j0, j1)]
            else:
                m = int(np.clip(np.searchsorted(ye, 0.5 * (ye[j0] + ye[j1])), j0 + 1, j1 - 1))
                stack += [(i0, i1, m, j1), (i0, i1, j0, m)]
    return out


def _graded_gap(gap: float, fine: float, coarse: float, growth: float) -> np.ndarray:
    """Cell sizes that fill ``gap`` exactly: the fewest cells of the profile ``fine`` at both
    ends growing by ``growth`` towards the middle (at most ``coarse``) that reach across, all
    scaled down alike to fit. No cell at an end exceeds ``fine`` and none is a sliver."""
    n = max(1, int(gap // max(coarse, fine)))
    while True:
        k = np.minimum(np.arange(n), np.arange(n)[::-1])
        sizes = np.minimum(fine * growth ** k, max(coarse, fine))
        if sizes.sum() >= gap * (1 - 1e-9):
            return sizes * (gap / sizes.sum())
        n += 1


def graded_edges(lo: float, hi: float, features, fine: float, coarse: float, growth: float = 1.5) -> np.ndarray:
    """Cell edges from lo to hi: size ``fine`` at the feature coordinates, growing by ``growth``
    per cell away from them (and from lo and hi) up to ``coarse``; every feature coordinate inside is an edge.

    Examples
    --------
    >>> graded_edges(0.0, 1.0, [0.5], 0.1, 0.4).round(3).tolist()
    [0.0, 0.1, 0.25, 0.4, 0.5, 0.6, 0.75, 0.9, 1.0]
    """
    feats = np.unique(np.clip(np.asarray(list(features), dtype=float), lo, hi))
    feats = np.unique(np.concatenate([[lo, hi], feats]))
    edges = [lo]
    for a, b in zip(feats[:-1], feats[1:]):
        gap = b - a
        if gap <= 1e-12:
            continue
        x = a
        for d in _graded_gap(gap, fine, coarse, growth)[:-1]:
            x += d
            edges.append(x)
        edges.append(b)
    e = np.array(edges)
    keep = np.concatenate([[True], np.diff(e) > 1e-9 * max(hi - lo, 1e-30)])
    return e[keep]


# ----------------------------------------------------------------------------- test geometries

def rectangular_loop_conductors(a_m: float, b_m: float, width_m: float, thickness_m: float,
                                cells_across: int = 1, cell_length_m: float | None = None,
                                z_m: float = 0.0, gap_m: float | None = None) -> Conductors:
    """A closed rectangular loop of flat strips (a x b centre-line, in the plane z = z_m) cut
    into cells, with a short link (the source) in the middle of the first side.

    The strips are ``cells_across`` cells wide; cells along them ``cell_length_m`` long (default
    the strip width). Used by the checks against Grover's rectangular-loop formula.
    """
    w = width_m
    pitch = cell_length_m or w
    na = max(2, int(round((a_m + w) / pitch)))
    nbb = max(2, int(round((b_m + w) / pitch)))
    sub = w / cells_across
    xs = np.linspace(-(a_m + w) / 2, (a_m + w) / 2, na + 1)
    ys = np.linspace(-(b_m + w) / 2, (b_m + w) / 2, nbb + 1)
    # edges: the strip's own cells across its width at the rims, long cells inside
    xe = np.unique(np.concatenate([xs[(xs > -a_m / 2 + w / 2) & (xs < a_m / 2 - w / 2)],
                                   np.linspace(-(a_m + w) / 2, -(a_m - w) / 2, cells_across + 1),
                                   np.linspace((a_m - w) / 2, (a_m + w) / 2, cells_across + 1)]))
    ye = np.unique(np.concatenate([ys[(ys > -b_m / 2 + w / 2) & (ys < b_m / 2 - w / 2)],
                                   np.linspace(-(b_m + w) / 2, -(b_m - w) / 2, cells_across + 1),
                                   np.linspace((b_m - w) / 2, (b_m + w) / 2, cells_across + 1)]))
    xc, yc = 0.5 * (xe[1:] + xe[:-1]), 0.5 * (ye[1:] + ye[:-1])
    X, Y = np.meshgrid(xc, yc, indexing="ij")
    ring = ((np.abs(X) > (a_m - w) / 2) | (np.abs(Y) > (b_m - w) / 2))
    gap = gap_m if gap_m is not None else min(xe[1:] - xe[:-1]) * 0.999
    # cut the bottom strip at x ~ 0 (between two cell columns): the source link bridges it
    icut = int(np.searchsorted(xe, 0.0))
    lab = np.where(ring, 0, -1)[None]
    mesh = SheetMesh(xe, ye, lab, np.array([z_m]), np.array([thickness_m]))
    con, _, _ = sheet_conductors(mesh, 1.7e-8)
    # remove the x cells crossing x = xe[icut] in the bottom strip, join them with a link
    node = mesh.node_index
    cut_x = xe[icut]
    bottom = con.bar_centres[:, 1] < -(b_m - w) / 2
    crossing = (con.bar_axes == 0) & bottom & (np.abs(con.bar_centres[:, 0] - cut_x) < 0.5 * con.bar_sizes[:, 0])
    keep = ~crossing
    jl = np.nonzero(yc < -(b_m - w) / 2)[0]
    pa = node[0, icut - 1, jl].tolist()
    pb = node[0, icut, jl].tolist()
    # the link: from the left cell column to the right, across the strip (several cells joined
    # by short bars across)
    con2 = Conductors(con.n_nodes, con.bar_nodes[keep], con.bar_centres[keep], con.bar_sizes[keep],
                      con.bar_axes[keep], con.bar_resistance[keep],
                      link_nodes=np.array([[pa[len(pa) // 2], pb[len(pb) // 2]]]),
                      link_starts=np.array([[xc[icut - 1], -b_m / 2, z_m]]),
                      link_ends=np.array([[xc[icut], -b_m / 2, z_m]]),
                      link_widths=np.array([w]), link_thickness=np.array([thickness_m]))
    return con2


def line_conductors(length_m: float, strips: list[tuple[float, float, int, int]], layer_z_m, thickness_m: float,
                    plane: tuple[float, int, int] | None = None, fine_m: float | None = None,
                    coarse_m: float | None = None, cell_length_m: float | None = None,
                    slot: tuple[float, float] | None = None, short_end: bool = True):
    """A straight transmission-line section of length ``length_m`` along x, cut into cells: the
    test geometry of the per-length checks (microstrip, parallel and coplanar strips).

    Parameters
    ----------
    length_m : float
        Length of the line [m].
    strips : list of (centre y [m], width [m], layer, conductor)
        The strips; conductor 0 is the outgoing conductor, 1 the return.
    layer_z_m : list of float
        Height of each layer [m].
    thickness_m : float
        Copper thickness [m].
    plane : (half width [m], layer, conductor), optional
        A wide plane centred under the line; conductor 1 makes it the return, 2 an unrelated
        plane (eddy current only).
    slot : (x [m], width [m]), optional
        A slot across the plane at x, from y = -half width to the line's far side + 3 widths
        (the return must go round its end).
    short_end : bool
        The conductors are joined at x = length (a via or a bar across); the source link joins
        them at x = 0.

    Returns
    -------
    (SheetMesh, Conductors)
    """
    zs = np.asarray(layer_z_m, dtype=float)
    ws = [w for _, w, _, _ in strips]
    fine = fine_m or min(ws) / 6
    coarse = coarse_m or 4 * max(ws)
    feats = []
    for y, w, _, _ in strips:
        feats += [y - w / 2, y, y + w / 2]
    half = plane[0] if plane else max(abs(y) + w for y, w, _, _ in strips)
    ylo, yhi = -half, half
    ye = graded_edges(ylo, yhi, feats, fine, coarse, growth=1.4)
    cl = cell_length_m or max(ws)
    xf = [0.0, length_m]
    if slot:
        xf += [slot[0] - slot[1] / 2, slot[0] + slot[1] / 2]
    xe = graded_edges(0.0, length_m, xf, min(cl, slot[1] / 2) if slot else cl, cl, growth=1.5)
    xc, yc = 0.5 * (xe[1:] + xe[:-1]), 0.5 * (ye[1:] + ye[:-1])
    nlay = len(zs)
    lab = np.full((nlay, len(xc), len(yc)), -1, dtype=int)
    for y, w, k, cond in strips:
        inside = (yc > y - w / 2) & (yc < y + w / 2)
        lab[k][:, inside] = cond
    if plane:
        lab[plane[1]][:, :] = plane[2]
        if slot:
            sx = np.abs(xc - slot[0]) < slot[1] / 2
            far = max(y + w / 2 for y, w, _, _ in strips) + 3 * max(ws)
            sy = yc < far
            lab[plane[1]][np.ix_(sx, sy)] = -1
    mesh = SheetMesh(xe, ye, lab, zs, np.full(nlay, thickness_m))
    out = [s for s in strips if s[3] == 0][0]
    ret = [s for s in strips if s[3] == 1]
    rk = ret[0][2] if ret else plane[1]
    ry = ret[0][0] if ret else out[0]
    x0, x1 = float(xc[0]), float(xc[-1])
    vias, links = [], []
    if short_end:
        if rk != out[2]:
            vias.append((x1, out[0], (out[2], rk), min(out[1], 1e-3) / 2) if ry == out[0] else None)
    vias = [v for v in vias if v]
    # the source: a link at x = 0 from the return to the outgoing conductor
    links.append(((x0, ry, rk), (x0, out[0], out[2]), out[1], 0.0))
    if short_end and (rk == out[2] or ry != out[0]):
        links.append(((x1, out[0], out[2]), (x1, ry, rk), out[1], 0.0))
    con, _, _ = sheet_conductors(mesh, 1.7e-8, vias, links)
    return mesh, con


def loop_over_plane_conductors(a_m: float, b_m: float, width_m: float, thickness_m: float, height_m: float,
                               margin_m: float = 10e-3, fine_m: float | None = None, coarse_m: float | None = None):
    """A rectangular strip loop (as ``rectangular_loop_conductors``, one cell across) at height
    ``height_m`` above a plane of another conductor that extends ``margin_m`` beyond it; the
    plane is not connected to the loop (eddy current only). Returns (SheetMesh, Conductors)."""
    w = width_m
    fine = fine_m or w
    coarse = coarse_m or max(2 * w, height_m)
    xf = [s * (a_m + w) / 2 for s in (-1, 1)] + [s * (a_m - w) / 2 for s in (-1, 1)]
    yf = [s * (b_m + w) / 2 for s in (-1, 1)] + [s * (b_m - w) / 2 for s in (-1, 1)]
    X0, Y0 = (a_m + w) / 2 + margin_m, (b_m + w) / 2 + margin_m
    xe = graded_edges(-X0, X0, xf + [-w / 2, w / 2], fine, coarse)
    ye = graded_edges(-Y0, Y0, yf, fine, coarse)
    xc, yc = 0.5 * (xe[1:] + xe[:-1]), 0.5 * (ye[1:] + ye[:-1])
    X, Y = np.meshgrid(xc, yc, indexing="ij")
    ring = ((np.abs(X) < (a_m + w) / 2) & (np.abs(Y) < (b_m + w) / 2)
            & ((np.abs(X) > (a_m - w) / 2) | (np.abs(Y) > (b_m - w) / 2)))
    # the source gap: the bottom strip's cell column at x in (-w/2, w/2) is left out
    gap = (np.abs(X) < w / 2) & (Y < -(b_m - w) / 2)
    lab = np.full((2, len(xc), len(yc)), -1, dtype=int)
    lab[0][ring & ~gap] = 0
    lab[1][:, :] = 1
    mesh = SheetMesh(xe, ye, lab, np.array([height_m, 0.0]), np.full(2, thickness_m))
    ileft = int(np.nonzero(xc < -w / 2)[0][-1])
    iright = int(np.nonzero(xc > w / 2)[0][0])
    yb = float(yc[np.argmin(np.abs(yc + b_m / 2))])
    links = [((float(xc[ileft]), yb, 0), (float(xc[iright]), yb, 0), w, 0.0)]
    con, _, _ = sheet_conductors(mesh, 1.7e-8, (), links)
    return mesh, con
