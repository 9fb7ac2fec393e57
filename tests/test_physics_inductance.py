"""Inductance: closed forms, the partial-inductance loop engine and its quadrature, each check
against a published formula or an outside computation (scipy's quadrature and elliptic
integrals)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from loopcheck.physics import inductance as ind
from loopcheck.physics.constants import MU0

R_WIRE = 0.25e-3
T_CU = 35e-6
# strip whose flat-strip equivalent radius (Grover's GMD, 0.2235 (w + t)) equals R_WIRE
W_EQ = R_WIRE / 0.2235 - T_CU


def polygon(radius, n, z=0.0):
    th = np.arange(n) * 2 * np.pi / n
    return np.column_stack([radius * np.cos(th), radius * np.sin(th), np.full(n, z)])


def subdivide(points, k):
    out = []
    for i in range(len(points)):
        a = points[i]
        b = points[(i + 1) % len(points)]
        out.extend(a + (b - a) * j / k for j in range(k))
    return np.array(out)


def neumann_reference(a0, a1, b0, b1, gmd=0.0):
    """Outside reference: scipy's adaptive quad of the Neumann integral (inner integral closed)."""
    la = np.linalg.norm(a1 - a0)
    lb = np.linalg.norm(b1 - b0)
    ua = (a1 - a0) / la
    ub = (b1 - b0) / lb

    def inner(s):
        p = a0 + s * ua
        ra = math.sqrt(float(np.sum((p - b0) ** 2)) + gmd * gmd)
        rb = math.sqrt(float(np.sum((p - b1) ** 2)) + gmd * gmd)
        return math.log((ra + rb + lb) / (ra + rb - lb))

    value, _ = integrate.quad(inner, 0.0, la, limit=500, epsabs=0.0, epsrel=1e-11)
    return 1e-7 * float(np.dot(ua, ub)) * value


# ------------------------------------------------------------------ closed forms

def test_bar_self_inductance_grover():
    # Grover, "Inductance Calculations" (1946), ch. 5, rectangular bar:
    # l = 10 mm, w = 0.5 mm, t = 35 um -> 8.27 nH (Grover 1946, rectangular bar).
    assert ind.bar_self_inductance(10e-3, 0.5e-3, 35e-6) == pytest.approx(8.27e-9, rel=0.01)


def test_parallel_filaments_grover():
    # Grover (1946), ch. 5, two equal parallel filaments: l = 10 mm, d = 1 mm -> 4.19 nH.
    assert ind.parallel_filament_mutual(10e-3, 1e-3) == pytest.approx(4.19e-9, rel=0.01)


def test_loop_engine_self_term_matches_grover_bar():
    # The engine's self term (filament at the section GMD) against Grover's bar formula
    # (1946, ch. 5): the two agree to 0.1 % for a long bar.
    mat = ind.partial_inductance_matrix(np.array([[0, 0, 0.0]]), np.array([[10e-3, 0, 0]]),
                                        ind.strip_equivalent_radius(0.5e-3, 35e-6))
    assert mat[0, 0] == pytest.approx(ind.bar_self_inductance(10e-3, 0.5e-3, 35e-6), rel=0.001)


def test_round_wire_limit_of_filament_engine():
    # Grover (1946) ch. 5, round wire at high frequency: (mu0 l / 2 pi)(ln(2l/r) - 1);
    # the engine with GMD = r agrees to 0.5 % for l / r = 100.
    pts = np.array([[0, 0, 0.0], [25e-3, 0, 0]])
    lp = ind.polyline_partial_inductance(pts, gmd_m=0.25e-3)
    assert lp == pytest.approx(ind.round_wire_self_inductance(25e-3, 0.25e-3), rel=0.005)
    # DC form differs by 1/4 in the bracket
    dc = ind.round_wire_self_inductance(25e-3, 0.25e-3, high_frequency=False)
    assert dc - ind.round_wire_self_inductance(25e-3, 0.25e-3) == pytest.approx(
        MU0 * 25e-3 / (2 * math.pi) * 0.25, rel=1e-9)


def test_reference_loop_formulas_check_values():
    # Grover (1946) ch. 16 rectangle of round wire; ch. 13 circular ring (check values worked from Grover's formulas).
    assert ind.rectangular_loop_inductance(20e-3, 10e-3, R_WIRE) == pytest.approx(38.54e-9, rel=0.001)
    assert ind.rectangular_loop_inductance(10e-3, 10e-3, R_WIRE) == pytest.approx(23.32e-9, rel=0.001)
    # square form (2 mu0 a / pi)(ln(a/r) - 0.774), Grover ch. 16
    a = 10e-3
    assert ind.rectangular_loop_inductance(a, a, R_WIRE) == pytest.approx(
        2 * MU0 * a / math.pi * (math.log(a / R_WIRE) - 0.774), rel=0.001)
    assert ind.circular_loop_inductance(10e-3, R_WIRE) == pytest.approx(47.35e-9, rel=0.001)


def test_via_johnson_graham():
    # Johnson & Graham, "High-Speed Digital Design" (1993), sec. 7.2:
    # L = 5.08 h [ln(4h/d) + 1] nH, h = 0.063 in, d = 0.016 in -> 1.20 nH.
    assert ind.via_inductance(0.063 * 25.4e-3, 0.016 * 25.4e-3) == pytest.approx(1.20e-9, rel=0.02)


@pytest.mark.parametrize("u, per_mm", [(1.0, 0.421e-9), (0.5, 0.556e-9)])
def test_microstrip_hammerstad_check_values(u, per_mm):
    # Hammerstad, "Equations for microstrip circuit design" (1975), Z0 at eps_r = 1; L' = Z0/c0.
    assert ind.microstrip_inductance_per_length(u * 1e-3, 1e-3) * 1e-3 == pytest.approx(per_mm, rel=0.005)


def test_wide_microstrip_tends_to_plate_pair():
    # Outside consistency: Hammerstad's wide-strip Z0 (1975) tends to the parallel-plate
    # value mu0 h / w (Paul 2010, ch. 4) as w/h grows: within 1 % at w/h = 1000.
    h, w = 1e-4, 0.1
    plate = ind.plate_pair_inductance(h, 1.0, w)
    assert plate == pytest.approx(MU0 * h / w, rel=1e-12)
    assert ind.microstrip_inductance_per_length(w, h) == pytest.approx(plate, rel=0.01)


def test_coaxial_circles_maxwell_against_direct_quadrature():
    # Maxwell's formula (Treatise, 1873, art. 701) with scipy.special.ellipk/ellipe (m = k^2),
    # checked against scipy's own double quadrature of the Neumann integral of two circles:
    # M = (mu0/4pi) R1 R2 int int cos(p - q) / sqrt(R1^2 + R2^2 - 2 R1 R2 cos(p - q) + z^2).
    r1, r2, z = 10e-3, 7e-3, 3e-3
    val, _ = integrate.quad(lambda p: 2 * math.pi * math.cos(p)
                            / math.sqrt(r1**2 + r2**2 - 2 * r1 * r2 * math.cos(p) + z**2),
                            0, 2 * math.pi, epsrel=1e-12)
    direct = 1e-7 * r1 * r2 * val
    assert ind.coaxial_circles_mutual(r1, r2, z) == pytest.approx(direct, rel=1e-9)


# ------------------------------------------------------------------ segment pairs

@pytest.mark.parametrize("angle", [0.2, 0.7, 1.3, 2.0, 2.8, math.pi])
def test_touching_filaments_closed_form_against_scipy(angle):
    # Filaments meeting at a point (Grover 1946 ch. 7, form recalled): checked against scipy's
    # adaptive quadrature of the Neumann integral; the engine's graded quadrature of the same
    # touching pair (no singularity handling by hand) must agree too.
    l1, l2 = 3e-3, 5e-3
    o = np.zeros(3)
    e1 = np.array([l1, 0.0, 0.0])
    e2 = np.array([l2 * math.cos(angle), l2 * math.sin(angle), 0.0])
    closed = ind.touching_filaments_mutual(l1, l2, angle)
    assert closed == pytest.approx(neumann_reference(o, e1, o, e2), rel=1e-8, abs=1e-22)
    assert ind.segment_mutual_inductance(o, e1, o, e2) == pytest.approx(closed, rel=1e-6, abs=1e-20)
    # collinear limit, Paul, "Inductance: Loop and Partial" (2010) ch. 5
    if angle == math.pi:
        paul = 1e-7 * ((l1 + l2) * math.log(l1 + l2) - l1 * math.log(l1) - l2 * math.log(l2))
        assert -closed == pytest.approx(paul, rel=1e-12)


def test_perpendicular_segments_have_no_mutual():
    # Neumann integral: dl1 . dl2 = 0 (Grover 1946).
    m = ind.segment_mutual_inductance([0, 0, 0], [1e-3, 0, 0], [2e-3, 0, 0], [2e-3, 3e-3, 0])
    assert m == 0.0


def test_parallel_closed_form_in_engine():
    # Side-by-side equal parallel segments give Grover's parallel-filament formula (1946, ch. 5);
    # antiparallel flips the sign.
    m = ind.segment_mutual_inductance([0, 0, 0], [10e-3, 0, 0], [0, 1e-3, 0], [10e-3, 1e-3, 0])
    assert m == pytest.approx(ind.parallel_filament_mutual(10e-3, 1e-3), rel=1e-10)
    m2 = ind.segment_mutual_inductance([0, 0, 0], [10e-3, 0, 0], [10e-3, 1e-3, 0], [0, 1e-3, 0])
    assert m2 == pytest.approx(-m, rel=1e-12)
    # offset parallel pair against scipy quadrature
    a0, a1 = np.array([0, 0, 0.0]), np.array([4e-3, 0, 0])
    b0, b1 = np.array([6e-3, 0.5e-3, 0.2e-3]), np.array([9e-3, 0.5e-3, 0.2e-3])
    assert ind.segment_mutual_inductance(a0, a1, b0, b1) == pytest.approx(
        neumann_reference(a0, a1, b0, b1), rel=1e-8)


def test_random_segment_pairs_against_scipy_quadrature():
    # The vectorised tiers (2-node far, 8-node mid, graded near) against scipy's adaptive
    # quadrature of the softened Neumann integral, over random pairs from touching to far.
    rng = np.random.default_rng(7)
    a0s, a1s, b0s, b1s, gs = [], [], [], [], []
    for trial in range(150):
        a0 = rng.normal(size=3)
        a1 = a0 + rng.normal(size=3) * rng.uniform(0.2, 2)
        d = rng.normal(size=3)
        d /= np.linalg.norm(d)
        dist = 10 ** rng.uniform(-2.5, 1.2)
        b0 = a1 + d * dist if trial % 3 == 0 else 0.5 * (a0 + a1) + d * dist
        b1 = b0 + rng.normal(size=3) * rng.uniform(0.2, 2)
        a0s.append(a0), a1s.append(a1), b0s.append(b0), b1s.append(b1)
        gs.append(10 ** rng.uniform(-4, -1))
    got = ind.segment_mutual_inductance(np.array(a0s), np.array(a1s), np.array(b0s),
                                        np.array(b1s), np.array(gs))
    for k in range(len(gs)):
        ref = neumann_reference(a0s[k], a1s[k], b0s[k], b1s[k], gs[k])
        scale = 1e-7 * min(np.linalg.norm(a1s[k] - a0s[k]), np.linalg.norm(b1s[k] - b0s[k]))
        assert abs(got[k] - ref) <= 1e-5 * scale + 1e-5 * abs(ref), k


# ------------------------------------------------------------------ loops

def test_rectangular_loop_of_strips_against_grover():
    # Grover (1946) ch. 16: 20 x 10 mm, r = 0.25 mm -> 38.54 nH; strips with r_eq = r.
    rect = np.array([[0, 0, 0], [20e-3, 0, 0], [20e-3, 10e-3, 0], [0, 10e-3, 0.0]])
    got = ind.polyline_loop_inductance(rect, W_EQ, T_CU)
    assert got == pytest.approx(38.54e-9, rel=0.03)
    # cutting the sides into pieces leaves the loop unchanged: collinear pieces are exact;
    # opposite pieces far apart count as filaments while whole opposite sides use the strip
    # GMD, which differ by O((w/D)^2) = 1.4e-4 here
    for k in (2, 10, 40):
        assert ind.polyline_loop_inductance(subdivide(rect, k), W_EQ, T_CU) == pytest.approx(got, rel=3e-4)
    # repeating the first point at the end means the same loop
    closed = np.vstack([rect, rect[:1]])
    again = ind.polyline_loop_inductance(closed, W_EQ, T_CU, require_closed=True)
    assert again == pytest.approx(got, rel=1e-12)


def test_square_loop_of_strips_against_grover():
    # Grover (1946) ch. 16 square: 10 mm, r = 0.25 mm -> 23.32 nH.
    sq = np.array([[0, 0, 0], [10e-3, 0, 0], [10e-3, 10e-3, 0], [0, 10e-3, 0.0]])
    assert ind.polyline_loop_inductance(sq, W_EQ, T_CU) == pytest.approx(23.32e-9, rel=0.03)
    # direction, rotation in the board plane and position do not matter
    c, s_ = math.cos(0.7), math.sin(0.7)
    rot = np.array([[c, -s_, 0], [s_, c, 0], [0, 0, 1.0]])
    moved = sq[::-1] @ rot.T + np.array([5e-3, -2e-3, 7e-3])
    assert ind.polyline_loop_inductance(moved, W_EQ, T_CU) == pytest.approx(
        ind.polyline_loop_inductance(sq, W_EQ, T_CU), rel=1e-9)


def test_polygon_loop_against_circular_ring():
    # Grover (1946) ch. 13, ring R = 10 mm, r = 0.25 mm -> 47.35 nH; a 64-gon of strips.
    got = ind.polyline_loop_inductance(polygon(10e-3, 64), W_EQ, T_CU)
    assert got == pytest.approx(47.35e-9, rel=0.03)


@pytest.mark.parametrize("r1, r2, z", [(10e-3, 8e-3, 2e-3), (10e-3, 10e-3, 0.5e-3), (5e-3, 12e-3, 0.0)])
def test_neumann_quadrature_coaxial_circles_against_maxwell(r1, r2, z):
    # Maxwell's elliptic-integral formula (1873, art. 701) via scipy.special against the
    # engine's Neumann quadrature of two 256-gons: within 0.5 %.
    m = ind.loop_mutual_inductance(polygon(r1, 256), polygon(r2, 256, z))
    assert m == pytest.approx(ind.coaxial_circles_mutual(r1, r2, z), rel=0.005)


@pytest.mark.parametrize("u, per_mm", [(0.5, 0.556e-9), (1.0, 0.421e-9), (5.0, 0.1647e-9),
                                        (30.0, 0.0373e-9)])
def test_trace_over_plane_image_loop_against_hammerstad(u, per_mm):
    # Trace + its mirror image (closed at the ends) per length, from two lengths so the end
    # effects cancel, against Hammerstad's L' = Z0_air / c0 (1975): within 5 % from narrow
    # (w/h = 0.5) to wide (w/h = 30) traces; the wide ones rely on the strip-to-strip GMD
    # (Grover 1946 ch. 3). (Check values at w/h = 5 and 30 worked from Hammerstad's formula.)
    h = 1e-3
    w = u * h
    per = []
    lengths = (100e-3, 200e-3)
    assert ind.microstrip_inductance_per_length(w, h) * 1e-3 == pytest.approx(per_mm, rel=0.005)
    for length in lengths:
        trace = np.array([[0, 0, h], [length, 0, h]])
        per.append(ind.path_over_plane_inductance(trace, w, T_CU, 0.0))
    per_length = (per[1] - per[0]) / (lengths[1] - lengths[0])
    assert per_length * 1e-3 == pytest.approx(per_mm, rel=0.05)
    # the image helper really mirrors
    img = ind.image_in_plane(np.array([[1.0, 2.0, 0.3]]), 0.1)
    assert np.allclose(img, [[1.0, 2.0, -0.1]])


def test_loop_with_via_segments_is_positive_and_grows_with_height():
    # A loop over a plane through two vias: taller vias, more inductance (Paul 2010 ch. 5).
    vals = []
    for h in (0.2e-3, 0.8e-3, 1.6e-3):
        pts = np.array([[0, 0, 0], [10e-3, 0, 0], [10e-3, 0, -h], [0, 0, -h]])
        vals.append(ind.polyline_loop_inductance(pts, 0.5e-3, T_CU))
    assert vals[0] > 0 and np.all(np.diff(vals) > 0)


def test_strip_to_strip_gmd_against_direct_average():
    # Grover (1946) ch. 3: ln GMD = mean of ln distance over both sections. The closed form
    # for thin parallel strips against a direct numerical average (midpoint rule, 2000^2 pts),
    # and the classical value for two equal strips touching edge to edge, g = 0.8925 w.
    u = np.array([[1.0, 0.0, 0.0]])
    n_pts = 2000
    x = (np.arange(n_pts) + 0.5) / n_pts
    for off, wa, wb in (((0.0, 0.3, 0.2), 1.0, 0.5), ((0.0, -0.7, 0.05), 0.4, 0.9)):
        pa = np.column_stack([np.zeros(n_pts), x * wa - wa / 2, np.zeros(n_pts)])
        pb = np.array(off) + np.column_stack([np.zeros(n_pts), x * wb - wb / 2, np.zeros(n_pts)])
        direct = np.mean(np.log(np.linalg.norm(pa[:, None, :] - pb[None, :, :], axis=2)))
        # the strip lies along n = z x u = +y
        got = ind._strip_log_gmd(u, np.array([off]), np.array([wa]), np.array([wb]))[0]
        assert got == pytest.approx(direct, abs=1e-5)
    edge = ind._strip_log_gmd(u, np.array([[0.0, 1.0, 0.0]]), np.array([1.0]), np.array([1.0]))[0]
    assert math.exp(edge) == pytest.approx(math.exp(2 * math.log(2) - 1.5), rel=1e-9)
    assert math.exp(edge) == pytest.approx(0.8925, rel=1e-3)


def test_bar_cut_into_pieces_shorter_than_its_width_is_unchanged():
    # Partial inductances add (Ruehli 1972): a 10 mm x 0.5 mm bar as 200 pieces of 50 um
    # (a tenth of its width) has the inductance of the whole bar, Grover's formula (1946).
    pts = np.column_stack([np.linspace(0, 10e-3, 201), np.zeros(201), np.zeros(201)])
    whole = ind.polyline_partial_inductance(pts[[0, -1]], 0.5e-3, 35e-6)
    assert ind.polyline_partial_inductance(pts, 0.5e-3, 35e-6) == pytest.approx(whole, rel=1e-6)
    assert whole == pytest.approx(ind.bar_self_inductance(10e-3, 0.5e-3, 35e-6), rel=0.001)


def test_partial_matrix_sums_to_loop_and_is_symmetric():
    # Ruehli (1972): the loop inductance is the sum of the partial-inductance matrix.
    pts = polygon(5e-3, 12) + np.array([0, 0, 1e-3]) * np.arange(12)[:, None] / 12
    mat = ind.partial_inductance_matrix(pts, np.roll(pts, -1, axis=0), 0.1e-3)
    assert np.allclose(mat, mat.T, rtol=0, atol=1e-24)
    assert np.all(np.diag(mat) > 0)
    assert mat.sum() == pytest.approx(ind.polyline_loop_inductance(pts, gmd_m=0.1e-3), rel=1e-12)


def test_mixed_strip_and_round_sections_in_one_matrix():
    # A loop of traces (strips) and two vias (round barrels, GMD = radius, Grover 1946 ch. 3)
    # in one matrix; same sum as the strip-only loop where the via segments are given as
    # strips of the same GMD, to within what the strip GMD changes for near parallel pairs.
    h = 1.6e-3
    pts = np.array([[0, 0, 0], [10e-3, 0, 0], [10e-3, 0, -h], [0, 0, -h]])
    widths = np.array([0.5e-3, np.nan, 0.5e-3, np.nan])
    mat = ind.partial_inductance_matrix(pts, np.roll(pts, -1, axis=0), 0.15e-3,
                                        widths_m=widths, thicknesses_m=35e-6)
    g = np.where(np.isnan(widths), 0.15e-3, 0.2235 * (0.5e-3 + 35e-6))
    soft = ind.partial_inductance_matrix(pts, np.roll(pts, -1, axis=0), g)
    assert np.allclose(np.diag(mat), np.diag(soft), rtol=1e-12)
    assert mat.sum() == pytest.approx(soft.sum(), rel=0.05)
    # a trace and its image as a strip pair through segment_mutual_inductance equals the loop
    # engine's value for that pair
    a0, a1 = np.array([0, 0, 0.2e-3]), np.array([20e-3, 0, 0.2e-3])
    m = ind.segment_mutual_inductance(a0, a1, a0 * [1, 1, -1], a1 * [1, 1, -1],
                                      widths_m=1e-3, thicknesses_m=35e-6)
    pair = ind.partial_inductance_matrix(np.array([a0, a0 * [1, 1, -1]]), np.array([a1, a1 * [1, 1, -1]]),
                                         widths_m=1e-3, thicknesses_m=35e-6)
    assert m == pytest.approx(pair[0, 1], rel=1e-12)
    assert m < ind.segment_mutual_inductance(a0, a1, a0 * [1, 1, -1], a1 * [1, 1, -1], 0.2235 * 1.035e-3)


def test_partial_matrix_is_positive_definite_for_random_segments():
    # The magnetic energy (1/2) i^T Lp i of any current distribution is positive, so the
    # partial-inductance matrix is positive definite (Paul, "Inductance: Loop and Partial",
    # 2010, ch. 5); the approximations here must not break that, nor give a loop L <= 0.
    rng = np.random.default_rng(11)
    for _ in range(10):
        pts = rng.normal(size=(30, 3)) * 1e-3
        widths = rng.uniform(0.1e-3, 3e-3, size=30)
        mat = ind.partial_inductance_matrix(pts, np.roll(pts, -1, axis=0), widths_m=widths,
                                            thicknesses_m=35e-6)
        assert np.linalg.eigvalsh(mat).min() > 0
        assert ind.polyline_loop_inductance(pts, widths, 35e-6) == pytest.approx(mat.sum(), rel=1e-9)


# ------------------------------------------------------------------ bad arguments

@pytest.mark.parametrize("call, name", [
    (lambda: ind.bar_self_inductance(10e-3, 0.0, 35e-6), "width_m"),
    (lambda: ind.bar_self_inductance(-1.0, 1e-3, 35e-6), "length_m"),
    (lambda: ind.parallel_filament_mutual(1e-3, float("nan")), "distance_m"),
    (lambda: ind.via_inductance(1.6e-3, 0.0), "diameter_m"),
    (lambda: ind.microstrip_inductance_per_length(-1e-3, 1e-3), "width_m"),
    (lambda: ind.strip_equivalent_radius(1e-3, -1.0), "thickness_m"),
    (lambda: ind.segment_mutual_inductance([0, 0, 0], [0, 0, 0], [1, 0, 0], [1, 1, 0]), "a0, a1"),
    (lambda: ind.segment_mutual_inductance([0, 0, 0], [1, 0, 0], [0, 0, 0], [1, 0, 0]), "gmd_m"),
    (lambda: ind.polyline_loop_inductance(np.array([[0, 0, 0], [1, 0, 0], [1, 0, 0], [0, 1, 0.0]]),
                                          1e-3, 35e-6), "points_m"),
    (lambda: ind.polyline_loop_inductance(np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0.0]]), 1e-3, 35e-6,
                                          require_closed=True), "points_m"),
    (lambda: ind.polyline_loop_inductance(np.array([[0, 0, 0], [1, 0, 0], [0, np.nan, 0]]), 1e-3, 35e-6),
     "points_m"),
    (lambda: ind.polyline_loop_inductance(np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0.0]]), -1e-3, 35e-6),
     "widths_m"),
    (lambda: ind.polyline_loop_inductance(np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0.0]]), [1e-3, 1e-3], 35e-6),
     "widths_m"),
    (lambda: ind.polyline_loop_inductance(np.array([[0, 0, 0], [1, 0, 0.0]]), 1e-3, 35e-6), "points_m"),
    (lambda: ind.coaxial_circles_mutual(1e-3, 1e-3, 0.0), "separation_m"),
    (lambda: ind.touching_filaments_mutual(1e-3, 1e-3, 0.0), "angle_rad"),
    (lambda: ind.partial_inductance_matrix(np.zeros((1, 3)), np.ones((1, 3)), -1.0), "gmd_m"),
    (lambda: ind.partial_inductance_matrix(np.zeros((2, 3)), np.ones((2, 3)), widths_m=[1e-3, np.nan],
                                           thicknesses_m=35e-6), "gmd_m"),
    (lambda: ind.partial_inductance_matrix(np.zeros((1, 3)), np.ones((1, 3)), widths_m=-1e-3,
                                           thicknesses_m=35e-6), "widths_m"),
    (lambda: ind.segment_mutual_inductance([0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0], -1.0), "gmd_m"),
    (lambda: ind.path_over_plane_inductance(np.array([[0, 0, 1e-3], [1e-3, 0, -1e-3]]), 1e-4, 35e-6, 0.0),
     "points_m"),
    (lambda: ind.loop_mutual_inductance(np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0.0]]),
                                        np.array([[0, 0, 0], [1, 0, 0.0]])), "points_b_m"),
])
def test_bad_arguments_name_the_argument(call, name):
    with pytest.raises(ValueError, match=name):
        call()
