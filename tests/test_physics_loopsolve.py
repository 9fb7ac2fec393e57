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
