"""The partial-element field solve (loopcheck.physics.loopsolve) against published solutions.

Each check names its source beside it. Per-length inductances are taken from two line lengths
(L(2l) - L(l)) / l, so that the ends of the line cancel.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import ellipk

from loopcheck.physics import closedforms as cf
from loopcheck.physics import loopsolve as ls

MU0 = 4e-7 * math.pi
H = 1e-3          # the height used for the line checks [m]
T_THIN = 2e-6     # a thin strip: the formulas below are for zero-thickness strips


def per_length(strips, z, plane=None, fine=None, coarse=None, cell=None, lengths=(8 * H, 16 * H)):
    values = []
    for ell in lengths:
        _, con = ls.line_conductors(ell, strips, z, T_THIN, plane=plane, fine_m=fine, coarse_m=coarse,
                                    cell_length_m=cell)
        values.append(ls.solve_loop(con, 0).inductance_h)
    return (values[1] - values[0]) / (lengths[1] - lengths[0])


# ------------------------------------------------------------------ exact bar formula

def test_bar_self_inductance_vs_grover():
    # Grover, "Inductance Calculations" (1946), ch. 5, straight bar of rectangular section:
    # l = 10 mm, w = 0.5 mm, t = 35 um -> 8.27 nH (the Hoer-Love form is exact, Grover's the
    # l >> w + t expansion of it)
    L = ls.bar_mutual_inductance([0, 0, 0], [10e-3, 0.5e-3, 35e-6], [0, 0, 0], [10e-3, 0.5e-3, 35e-6])
    assert L == pytest.approx(cf.bar_self_inductance(10e-3, 0.5e-3, 35e-6), rel=2e-3)
    assert L * 1e9 == pytest.approx(8.27, abs=0.01)


@pytest.mark.parametrize("d_mm", [1.0, 3.0, 10.0])
def test_bar_mutual_tends_to_parallel_filaments(d_mm):
    # Grover (1946) ch. 5, parallel filaments: M = (mu0 l / 2 pi)[asinh(l/d) - sqrt(1 + d^2/l^2) + d/l];
    # l = 10 mm, d = 1 mm: 4.19 nH. Thin bars (0.05 mm) converge to it as width/d -> 0
    # (Hoer and Love 1965 reduce to the filament formula in that limit).
    d = d_mm * 1e-3
    M = ls.bar_mutual_inductance([0, 0, 0], [10e-3, 50e-6, 5e-6], [0, d, 0], [10e-3, 50e-6, 5e-6])
    assert M == pytest.approx(cf.parallel_filament_mutual(10e-3, d), rel=2e-3)
    if d_mm == 1.0:
        assert M * 1e9 == pytest.approx(4.19, abs=0.01)


def test_far_pair_tiers_agree_with_the_exact_bar_formula():
    # the filament tiers used for far pairs against Hoer and Love's exact form (1965): square
    # cells side by side at 2 .. 12 cell sizes, and stacked 1 mm apart
    s = np.array([1e-3, 1e-3, 35e-6])
    for d in (2.0, 3.0, 8.0, 12.0):
        for dz in (0.0, 1.0):
            c2 = np.array([[0.0, d * 1e-3, dz * 1e-3]])
            exact = ls._bar_mutual(np.zeros((1, 3)), s[None], c2, s[None], np.array([0]))[0]
            Lp = ls.partial_inductance_bars(np.vstack([np.zeros((1, 3)), c2]), np.vstack([s, s]), [0, 0])
            assert Lp[0, 1] == pytest.approx(exact, rel=3e-3)


def test_every_pair_tier_agrees_with_the_exact_bar_formula_across_shapes():
    # Hoer and Love's exact form (1965) against what partial_inductance_bars uses for the pair
    # (the exact form near, two or one filaments further, the filament pair at the centres
    # beyond POINT_RATIO sizes): long, square and short cells, side by side, end to end, on
    # other layers and diagonal, from touching to 20 sizes apart; within 0.6 %
    rng = np.random.default_rng(7)
    worst = 0.0
    for _ in range(400):
        s1 = np.array([rng.uniform(0.1, 3.0), rng.uniform(0.1, 1.5), 0.035]) * 1e-3
        s2 = np.array([rng.uniform(0.1, 3.0), rng.uniform(0.1, 1.5), 0.035]) * 1e-3
        span = max(s1.max(), s2.max())
        direction = rng.normal(size=3)
        direction[2] = rng.choice([0.0, direction[2]])
        direction /= np.linalg.norm(direction)
        c2 = direction * span * rng.uniform(0.6, 20.0)
        exact = ls._bar_mutual(np.zeros((1, 3)), s1[None], c2[None], s2[None], np.array([0]))[0]
        if abs(exact) < 1e-15:
            continue
        Lp = ls.partial_inductance_bars(np.vstack([np.zeros(3), c2]), np.vstack([s1, s2]), [0, 0])
        worst = max(worst, abs(Lp[0, 1] / exact - 1))
    assert worst < 6e-3


# ------------------------------------------------------------------ merged cells (blocks)

def _ring(h_mm, gap=(2.5, 3.5)):
    """A 12 x 8 mm rectangular ring of 2 mm copper cut by a gap in its left side, the source
    link across the gap; a grid of h_mm cells with lines on every copper edge."""
    import shapely
    from shapely.geometry import box
    cu = box(-1, -1, 11, 7).difference(box(1, 1, 9, 5)).difference(box(-1.5, gap[0], 1.5, gap[1]))
    xe = ls.graded_edges(-1, 11, [1, 9], h_mm, h_mm, 1.0)
    ye = ls.graded_edges(-1, 7, [1, gap[0], gap[1], 5], h_mm, h_mm, 1.0)
    X, Y = np.meshgrid(0.5 * (xe[1:] + xe[:-1]), 0.5 * (ye[1:] + ye[:-1]), indexing="ij")
    lab = np.where(shapely.contains_xy(cu, X, Y), 0, -1)[None]
    link = [((0.0, (gap[0] - 0.125) * 1e-3, 0), (0.0, (gap[1] + 0.125) * 1e-3, 0), 1e-3, 0.0)]
    return xe, ye, X, Y, lab, link


def _ring_inductance(xe, ye, lab, link, blocks=None):
    kw = {} if blocks is None else {"blocks": blocks}
    mesh = ls.SheetMesh(xe * 1e-3, ye * 1e-3, lab, np.array([0.0]), np.array([35e-6]), **kw)
    con, _, _ = ls.sheet_conductors(mesh, 1.7e-8, (), link)
    return ls.solve_loop(con, 0).inductance_h, len(con.bar_nodes)


def test_blocks_aligned_with_a_coarser_grid_are_that_grid():
    # 2 x 2 blocks of a grid of 0.125 mm cells that fall on the lines of the 0.25 mm grid make
    # exactly the 0.25 mm grid's conductors: the same inductance to rounding
    import shapely
    from shapely.geometry import box
    cu = box(0, 0, 8, 8).difference(box(2, 2, 6, 6)).difference(box(-1, 3.5, 2.5, 4.5))
    link = [((1.0e-3, 3.375e-3, 0), (1.0e-3, 4.625e-3, 0), 1.0e-3, 0.0)]
    out = []
    for h, target in ((0.25, None), (0.125, 0.251)):
        xe = np.arange(0, 8 + 1e-9, h)
        X, Y = np.meshgrid(0.5 * (xe[1:] + xe[:-1]), 0.5 * (xe[1:] + xe[:-1]), indexing="ij")
        lab = np.where(shapely.contains_xy(cu, X, Y), 0, -1)[None]
        blocks = None if target is None else ls.merge_cells(lab, xe, xe, np.full(lab.shape, target))
        out.append(_ring_inductance(xe, xe, lab, link, blocks))
    assert out[1][0] == pytest.approx(out[0][0], rel=1e-9)
    assert out[1][1] == out[0][1]


def test_blocks_of_mixed_sizes_read_as_the_fine_mesh():
    # blocks growing away from the ring's inner edge (where the current crowds), side by side
    # with cells of other sizes: current crossing a face between unequal blocks moves along a
    # rail at the cost of its inductance; without the rails the mixed mesh read 8-50 % low.
    # Against the fine mesh of the same ring (a numerical property, no published value)
    import shapely
    from shapely.geometry import box
    xe, ye, X, Y, lab, link = _ring(0.125)
    fine, n_fine = _ring_inductance(xe, ye, lab, link)
    d = shapely.distance(shapely.boundary(box(1, 1, 9, 5)), shapely.points(X, Y))
    for grade in (0.5, 1.0):
        blocks = ls.merge_cells(lab, xe, ye, (0.126 + grade * d)[None])
        L, n = _ring_inductance(xe, ye, lab, link, blocks)
        assert n < 0.4 * n_fine
        assert L == pytest.approx(fine, rel=0.03)
    # and fine cells on one side of a straight strip, blocks on the other (the face between
    # them runs along the current)
    blocks = ls.merge_cells(lab, xe, ye, np.where(Y < 0.0, 0.501, 0.126)[None])
    assert _ring_inductance(xe, ye, lab, link, blocks)[0] == pytest.approx(fine, rel=0.02)


def test_blocks_never_hold_two_islands_or_empty_cells():
    # the ring's gap stays open however coarse the blocks: merging across it would short the loop
    xe, ye, X, Y, lab, link = _ring(0.125)
    blocks = ls.merge_cells(lab, xe, ye, np.full(lab.shape, 4.0))
    assert np.all((blocks >= 0) == (lab >= 0))
    for b in np.unique(blocks[blocks >= 0]):
        k, i, j = np.nonzero(blocks == b)
        assert len(np.unique(lab[k, i, j])) == 1
        assert len(i) == (i.max() - i.min() + 1) * (j.max() - j.min() + 1)      # a rectangle
    L, _ = _ring_inductance(xe, ye, lab, link, blocks)
    assert L > 5e-9                                                             # no short


def test_a_lifted_link_runs_up_across_and_down():
    # a part's current above its pads: three conductors of the part, the middle one lifted;
    # the loop's inductance grows with the lift (more area between the part and the copper)
    xe, ye, X, Y, lab, link = _ring(0.25)
    mesh = ls.SheetMesh(xe * 1e-3, ye * 1e-3, lab, np.array([0.0]), np.array([35e-6]))
    values = []
    for lift in (0.0, 0.5e-3, 1.0e-3):
        con, _, _ = ls.sheet_conductors(mesh, 1.7e-8, (), [link[0] + (lift,)])
        assert len(con.link_nodes) == (1 if lift == 0 else 3)
        assert list(con.link_part) == [0] * len(con.link_nodes)
        if lift:
            assert con.link_starts[1, 2] == pytest.approx(lift) and con.link_ends[1, 2] == pytest.approx(lift)
        values.append(ls.solve_loop(con, 0).inductance_h)
    assert values[0] < values[1] < values[2]


# ------------------------------------------------------------------ loops and lines

@pytest.mark.parametrize("a_mm,b_mm,across", [(20, 10, 1), (20, 10, 2), (10, 10, 2)])
def test_rectangular_strip_loop_vs_grover(a_mm, b_mm, across):
    # Grover (1946), rectangle of round wire, with the flat strip's equivalent radius
    # r = 0.2235 (w + t) (GMD of a rectangle, Grover ch. 3): within 3 %
    w, t = 0.5e-3, 35e-6
    con = ls.rectangular_loop_conductors(a_mm * 1e-3, b_mm * 1e-3, w, t, cells_across=across)
    L = ls.solve_loop(con, 0).inductance_h
    ref = cf.rectangular_loop_inductance(a_mm * 1e-3, b_mm * 1e-3, 0.2235 * (w + t))
    assert L == pytest.approx(ref, rel=0.03)


@pytest.mark.parametrize("u", [0.2, 1.0, 5.0])
def test_strip_over_its_return_plane_vs_microstrip(u):
    # Hammerstad and Jensen, "Accurate models for microstrip computer-aided design", IEEE MTT-S
    # 1980 (Wheeler, IEEE Trans. MTT 25, 1977), eps_r = 1: L' = Z0_air / c0; u = 1: 0.421 nH/mm.
    # Within 5 %.
    w = u * H
    Lp = per_length([(0.0, w, 0, 0)], [H, 0.0], plane=(12 * H, 1, 1), fine=min(w, H) / 6, coarse=2 * H, cell=H)
    assert Lp == pytest.approx(cf.microstrip_inductance_per_length(w, H), rel=0.05)


def test_return_current_in_the_plane_vs_johnson_graham():
    # Johnson and Graham, "High-Speed Digital Design" (1993), ch. 5: current density in a wide
    # plane under a trace at height h: J(x) = I / (pi h) / (1 + (x/h)^2); within 10 % at
    # x = 0, h, 3h (a narrow strip, w = 0.2 h, far from the line's ends)
    ell = 32 * H
    mesh, con = ls.line_conductors(ell, [(0.0, 0.2 * H, 0, 0)], [H, 0.0], T_THIN, plane=(20 * H, 1, 1),
                                   fine_m=H / 6, coarse_m=H / 2, cell_length_m=2 * H)
    sol = ls.solve_loop(con, 0)
    J = ls.sheet_current_density(mesh, con, sol.currents)
    i = int(np.argmin(np.abs(mesh.x_centres - ell / 2)))
    ret = -J[1, i, :, 0]                        # the return runs against the strip's current
    for x in (0.0, H, 3 * H):
        ref = cf.plane_return_current_density(1.0, H, x)
        assert np.interp(x, mesh.y_centres, ret) == pytest.approx(ref, rel=0.10)
    # the whole return current is in the plane
    assert np.trapezoid(ret, mesh.y_centres) == pytest.approx(1.0, rel=0.02)


@pytest.mark.parametrize("u", [0.5, 1.0, 3.0])
def test_strips_one_above_the_other_vs_wheeler(u):
    # Wheeler, "Transmission-line properties of parallel strips separated by a dielectric
    # sheet", IEEE Trans. MTT 13(2), 1965: the pair is two strips over their plane of symmetry,
    # L' = 2 L'_microstrip(w, h/2) (eps_r = 1); within 5 %
    w = u * H
    Lp = per_length([(0.0, w, 0, 0), (0.0, w, 1, 1)], [H, 0.0], fine=w / 8, coarse=2 * H, cell=H)
    assert Lp == pytest.approx(cf.parallel_strips_inductance_per_length(w, H), rel=0.05)


@pytest.mark.parametrize("s_mm,w_mm,check_nh_mm", [(0.5, 0.5, 0.804), (0.2, 1.0, 0.522), (1.0, 0.3, 1.136)])
def test_coplanar_strips_vs_conformal_mapping(s_mm, w_mm, check_nh_mm):
    # Gupta, Garg, Bahl and Bhartia, "Microstrip Lines and Slotlines", 2nd ed. (1996), ch. 7:
    # coplanar strips, L' = mu0 K(k) / K(k'), k = S / (S + 2W); within 5 %
    S, W = s_mm * 1e-3, w_mm * 1e-3
    ref = cf.coplanar_strips_inductance_per_length(W, S)
    assert ref * 1e6 == pytest.approx(check_nh_mm, abs=0.001)
    k = S / (S + 2 * W)
    assert ref == pytest.approx(MU0 * ellipk(k * k) / ellipk(1 - k * k), rel=1e-12)
    Lp = per_length([(-(S + W) / 2, W, 0, 0), ((S + W) / 2, W, 0, 1)], [0.0], fine=min(S, W) / 8,
                    coarse=2e-3, cell=1e-3)
    assert Lp == pytest.approx(ref, rel=0.05)


def test_loop_over_an_unrelated_plane_vs_its_image():
    # the image method (a perfectly conducting plane of another net; Paul, "Inductance: Loop and
    # Partial", 2010, ch. 6): L = L_free - M(loop, its mirror image at twice the distance to the
    # plane); Grover (1946) for both terms. Within 5 %. The plane carries eddy current only.
    a, b, w, t, h = 20e-3, 10e-3, 0.5e-3, 35e-6, 1.5e-3
    free = ls.rectangular_loop_conductors(a, b, w, t, cells_across=1)
    L_free = ls.solve_loop(free, 0).inductance_h
    mesh, con = ls.loop_over_plane_conductors(a, b, w, t, h, margin_m=12e-3)
    L_plane = ls.solve_loop(con, 0).inductance_h
    g = 0.2235 * (w + t)
    ref_free = cf.rectangular_loop_inductance(a, b, g)
    ref = ref_free - cf.coaxial_rectangles_mutual(a, b, 2 * (h - t / 2))
    assert L_free == pytest.approx(ref_free, rel=0.03)
    assert L_plane == pytest.approx(ref, rel=0.05)
    assert L_plane < 0.8 * L_free


def test_slot_across_the_return_plane_raises_the_inductance_and_shows_the_detour():
    # a slot under the trace forces the return round its end (Johnson and Graham 1993, ch. 7
    # on split planes): the inductance rises and the plane current at the slot's end grows
    ell = 16 * H
    kw = dict(plane=(10 * H, 1, 1), fine_m=H / 5, coarse_m=2 * H, cell_length_m=H)
    m0, c0 = ls.line_conductors(ell, [(0.0, H, 0, 0)], [H, 0.0], T_THIN, **kw)
    m1, c1 = ls.line_conductors(ell, [(0.0, H, 0, 0)], [H, 0.0], T_THIN, slot=(ell / 2, 0.5 * H), **kw)
    s0, s1 = ls.solve_loop(c0, 0), ls.solve_loop(c1, 0)
    assert s1.inductance_h > s0.inductance_h * 1.05
    J0 = ls.sheet_current_density(m0, c0, s0.currents)
    J1 = ls.sheet_current_density(m1, c1, s1.currents)
    i0 = int(np.argmin(np.abs(m0.x_centres - ell / 2)))
    i1 = int(np.argmin(np.abs(m1.x_centres - ell / 2)))
    far = 0.5 * H + 3 * H                       # the slot ends here: the current goes round it
    j_end0 = np.abs(J0[1, i0, m0.y_centres > far, 0]).sum()
    j_end1 = np.abs(J1[1, i1, m1.y_centres > far, 0]).sum()
    assert j_end1 > 3 * j_end0
    # under the trace, in the slot, no current
    under = np.abs(m1.y_centres) < 0.5 * H
    assert np.all(J1[1, i1, under, 0] == 0)


def test_frequency_solve_tends_to_the_inductive_limit():
    # at high frequency the resistive solve tends to the least-energy current (Kamon, Tsuk and
    # White 1994: (R + jwL) I = V); at 100 MHz a 20 x 10 mm loop is within 1 % of it, and its
    # resistance is positive
    con = ls.rectangular_loop_conductors(20e-3, 10e-3, 0.5e-3, 35e-6, cells_across=2)
    hi = ls.solve_loop(con, 0)
    f = ls.solve_loop(con, 0, frequency_hz=100e6)
    assert f.inductance_h == pytest.approx(hi.inductance_h, rel=0.01)
    assert f.resistance_ohm > 0
    # uniform current at DC-like frequency: more inductance than the crowded high-frequency one
    low = ls.solve_loop(con, 0, frequency_hz=1.0)
    assert low.inductance_h >= hi.inductance_h * 0.999


def test_energy_shares_sum_to_one_and_kirchhoff_holds():
    con = ls.rectangular_loop_conductors(20e-3, 10e-3, 0.5e-3, 35e-6, cells_across=2)
    sol = ls.solve_loop(con, 0)
    assert sol.energy_share.sum() == pytest.approx(1.0, rel=1e-9)
    nodes = np.vstack([con.bar_nodes, con.link_nodes])
    net = np.zeros(con.n_nodes)
    np.add.at(net, nodes[:, 0], -sol.currents)
    np.add.at(net, nodes[:, 1], sol.currents)
    assert np.max(np.abs(net)) < 1e-9
    assert sol.currents[len(con.bar_nodes)] == pytest.approx(1.0)


def test_loop_basis_keeps_parallel_branches_apart():
    # two branches between the same two nodes (two via records in one cell) and a third path:
    # a graph with 3 nodes and 4 branches has 4 - 3 + 1 = 2 independent loops (Kirchhoff);
    # a basis that summed the parallel pair indexed past its branches
    import numpy as np

    from loopcheck.physics.loopsolve import loop_basis

    branches = np.array([[1, 2], [2, 0], [0, 1], [0, 1]])
    C = loop_basis(3, branches).toarray()
    assert C.shape == (4, 2)
    assert np.linalg.matrix_rank(C) == 2
