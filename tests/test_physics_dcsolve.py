"""DC sheet solver checked against exact formulas, van der Pauw's theorem and a conformal-mapping
value. Each check names its source. Grids are moderate so the file runs in a few seconds."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
import shapely.affinity as aff

from loopcheck.physics.dcsolve import (
    Contact,
    LumpedLink,
    SheetLayer,
    ViaLink,
    choose_pitch_mm,
    four_terminal_resistance,
    solve_dc,
    two_terminal_resistance,
)
from loopcheck.physics.raster import RasterGrid, cell_coverage, face_apertures, narrowest_width_mm


def rel(a: float, b: float) -> float:
    return abs(a / b - 1.0)


# ---------------------------------------------------------------------------------- raster


def test_cell_coverage_and_face_apertures_of_an_offset_box():
    # exact geometry: area and cut lengths of an axis-aligned box
    box = shapely.box(0.3, 0.2, 10.3, 3.45)
    grid = RasterGrid.covering((0, 0, 11, 4), 0.5)
    cov = cell_coverage(box, grid)
    assert cov.sum() * 0.25 == pytest.approx(box.area, rel=1e-9)
    fx, fy = face_apertures(box, grid)
    # vertical face at x = 3.0: rows 0..6 span y = 0..3.5; the box covers 0.2..3.45
    assert fx[:7, 5] == pytest.approx([0.6, 1, 1, 1, 1, 1, 0.9])
    # horizontal face at y = 0.5, columns 0 (x 0..0.5) and 20 (x 10..10.5)
    assert fy[0, 0] == pytest.approx(0.4) and fy[0, 20] == pytest.approx(0.6)


def test_disc_coverage_matches_its_area():
    # exact: pi r^2 (the 256-gon's own area)
    disc = shapely.Point(1, 2).buffer(3.0, quad_segs=64)
    grid = RasterGrid.covering(disc.bounds, 0.1)
    assert cell_coverage(disc, grid).sum() * 0.01 == pytest.approx(disc.area, rel=2e-4)


def test_narrowest_neck_width():
    # exact geometry: a 0.5 mm neck between two 5 mm squares; a 0.2 mm wall of a frame
    dumbbell = shapely.union_all([shapely.box(0, 0, 5, 5), shapely.box(5, 2, 8, 2.5),
                                  shapely.box(8, 0, 13, 5)])
    assert narrowest_width_mm(dumbbell, precision=1.01) == pytest.approx(0.5, rel=0.01)
    frame = shapely.box(0, 0, 10, 10).difference(shapely.box(1, 1, 9.8, 9))
    assert narrowest_width_mm(frame, precision=1.01) == pytest.approx(0.2, rel=0.01)
    assert narrowest_width_mm(frame) == pytest.approx(0.2, rel=0.05)
    # a dead-end stub does not count as a neck
    stubbed = shapely.union_all([shapely.box(0, 0, 5, 5), shapely.box(5, 2, 8, 2.1)])
    assert narrowest_width_mm(stubbed) > 1.0


def test_auto_pitch_puts_several_cells_across_the_neck():
    dumbbell = shapely.union_all([shapely.box(0, 0, 5, 5), shapely.box(5, 2, 8, 2.5),
                                  shapely.box(8, 0, 13, 5)])
    layer = SheetLayer(dumbbell, 1.0)
    pitch, capped = choose_pitch_mm([layer])
    assert not capped and 0.5 / pitch >= 5
    pitch, capped = choose_pitch_mm([layer], max_cells=2000)
    assert capped and pitch > 0.1


# ---------------------------------------------------------------------------------- physics


@pytest.mark.parametrize("angle_deg, pitch", [(0.0, None), (0.0, 0.3), (30.0, None), (30.0, 0.17)])
def test_uniform_strip_is_rs_l_over_w(angle_deg, pitch):
    # exact: R = Rs * L / W for a uniform strip between full-width contacts
    rs, length, width = 0.5e-3, 20.0, 2.0

    def rot(g):
        return aff.rotate(g, angle_deg, origin=(0, 0))

    layer = SheetLayer(rot(shapely.box(0, 0, length, width)), rs)
    a = Contact("a", 0, rot(shapely.box(0, 0, 1.0, width)))
    b = Contact("b", 0, rot(shapely.box(length - 1.0, 0, length, width)))
    r = two_terminal_resistance([layer], a, b, pitch_mm=pitch)
    assert rel(r, rs * (length - 2.0) / width) < 0.01


def test_strip_potential_current_density_and_contact_currents():
    # exact: uniform field in a strip, phi linear; J_s = I / W; J = I / (W t)
    rs, length, width, current, t = 1e-3, 10.0, 1.0, 2.0, 35e-6
    layer = SheetLayer(shapely.box(0, 0, length, width), rs)
    contacts = [Contact("in", 0, shapely.box(0, 0, 0.5, width), current_a=current),
                Contact("out", 0, shapely.box(length - 0.5, 0, length, width), potential_v=0.0),
                Contact("tap", 0, shapely.Point(3.3, 0.5)),
                Contact("tap_area", 0, shapely.box(6.0, 0.0, 7.0, 1.0))]
    sol = solve_dc([layer], contacts, pitch_mm=0.1)
    field_v_per_mm = rs * current / width  # V per mm of length
    assert sol.contact_potential("in") == pytest.approx(field_v_per_mm * (length - 1.0), rel=1e-6)
    assert sol.potential_at(0, 3.3, 0.5) == pytest.approx(field_v_per_mm * (length - 0.5 - 3.3), rel=1e-6)
    assert sol.contact_potential("tap_area") == pytest.approx(field_v_per_mm * (length - 0.5 - 6.5), rel=1e-6)
    assert sol.contact_current("out") == pytest.approx(-current, rel=1e-9)
    assert sol.contact_current("tap") == 0.0
    j, layer_k, x, y = sol.peak_current_density
    assert j == pytest.approx(current / (width * 1e-3), rel=1e-6) and layer_k == 0
    jv = sol.peak_volume_current_density(t)[0]
    assert jv == pytest.approx(current / (width * 1e-3 * t), rel=1e-6)
    mid = sol.current_density(0)[5, 50]
    assert mid == pytest.approx(current / 1e-3, rel=1e-6)
    jx, jy = sol.current_density_vector(0)
    assert jx[5, 50] > 0 and abs(jy[5, 50]) < 1e-6 * jx[5, 50]
    assert np.isnan(jx[5, 2])  # inside the equipotential contact


@pytest.mark.parametrize("pitch", [None, 0.1])
def test_annulus_between_concentric_contacts(pitch):
    # exact: R = Rs ln(r2 / r1) / (2 pi) (radial current in a sheet)
    r1, r2, rs = 1.0, 4.0, 1.0
    disc = shapely.Point(0, 0).buffer(r2 + 0.5, quad_segs=128)
    inner = shapely.Point(0, 0).buffer(r1, quad_segs=128)
    outer = disc.difference(shapely.Point(0, 0).buffer(r2, quad_segs=128))
    r = two_terminal_resistance([SheetLayer(disc, rs)], Contact("i", 0, inner),
                                Contact("o", 0, outer), pitch_mm=pitch)
    assert rel(r, rs * math.log(r2 / r1) / (2 * math.pi)) < 0.02


def _vdp_pair(layer, points, pitch=None):
    a, b, c, d = (Contact(n, 0, shapely.Point(p)) for n, p in zip("ABCD", points))
    r_ab_cd = four_terminal_resistance([layer], a, b, d, c, pitch_mm=pitch)  # (V_D - V_C) / I_AB
    r_bc_da = four_terminal_resistance([layer], b, c, a, d, pitch_mm=pitch)  # (V_A - V_D) / I_BC
    return r_ab_cd, r_bc_da


def test_van_der_pauw_square_with_corner_contacts():
    # L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of discs
    # of arbitrary shape", Philips Res. Rep. 13, 1958, eq. (1): exp(-pi R1/Rs) + exp(-pi R2/Rs) = 1;
    # by symmetry R1 = R2 = Rs ln 2 / pi for a square with contacts at its corners.
    rs, side = 2.0, 10.0
    r1, r2 = _vdp_pair(SheetLayer(shapely.box(0, 0, side, side), rs),
                       [(0, 0), (side, 0), (side, side), (0, side)])
    assert abs(math.exp(-math.pi * r1 / rs) + math.exp(-math.pi * r2 / rs) - 1.0) < 0.02
    assert rel(r1, rs * math.log(2) / math.pi) < 0.02
    assert rel(r2, rs * math.log(2) / math.pi) < 0.02


def test_van_der_pauw_irregular_shape():
    # L. J. van der Pauw, Philips Res. Rep. 13, 1958, eq. (1): holds for any simply connected
    # sheet with four point contacts on its edge (here an irregular pentagon, unequal R1, R2).
    rs = 0.7
    pentagon = shapely.Polygon([(0, 0), (12, 1), (10, 7), (4, 9), (-1, 5)])
    r1, r2 = _vdp_pair(SheetLayer(pentagon, rs), [(0, 0), (12, 1), (10, 7), (-1, 5)])
    assert rel(r1, r2) > 1.0  # a genuinely asymmetric case
    assert abs(math.exp(-math.pi * r1 / rs) + math.exp(-math.pi * r2 / rs) - 1.0) < 0.02


def test_van_der_pauw_with_contacts_on_slanted_edges():
    # van der Pauw 1958 eq. (1) again, contacts at mid-edge points (not vertices), rotated sheet
    rs = 1.0
    quad = aff.rotate(shapely.Polygon([(0, 0), (9, 0), (11, 6), (2, 8)]), 17, origin=(0, 0))
    coords = list(quad.exterior.coords)[:4]
    mids = [((coords[k][0] + coords[k + 1 - 4 * (k == 3)][0]) / 2,
             (coords[k][1] + coords[k + 1 - 4 * (k == 3)][1]) / 2) for k in range(4)]
    r1, r2 = _vdp_pair(SheetLayer(quad, rs), mids)
    assert abs(math.exp(-math.pi * r1 / rs) + math.exp(-math.pi * r2 / rs) - 1.0) < 0.02


def test_right_angle_bend_adds_056_squares():
    # common practice value (conformal mapping): the corner square of a 90 degree bend in a
    # strip counts as about 0.56 squares
    width, arm = 1.0, 4.0
    bend = shapely.union_all([shapely.box(0, 0, arm + width, width),
                              shapely.box(arm, 0, arm + width, arm + width)])
    a = Contact("a", 0, shapely.box(0, 0, 0.5, width))
    b = Contact("b", 0, shapely.box(arm, arm + width - 0.5, arm + width, arm + width))
    r = two_terminal_resistance([SheetLayer(bend, 1.0)], a, b)
    corner_squares = r - 2 * (arm - 0.5) / width
    assert corner_squares == pytest.approx(0.56, abs=0.05)


@pytest.mark.parametrize("n_vias", [1, 2, 5])
def test_two_layers_joined_by_n_vias(n_vias):
    # exact (series-parallel): R = Rs0 l0 / W + R_via / N + Rs1 l1 / W, the vias landing in
    # equipotential pads spanning the strip width
    width, length, rs0, rs1, r_via = 2.0, 10.0, 0.5e-3, 1.0e-3, 0.01
    top = shapely.box(0, 0, length, width)
    bottom = shapely.box(length - 2, 0, 2 * length - 2, width)
    vias = [ViaLink(length - 1, (k + 0.5) * width / n_vias, 0, 1, r_via) for k in range(n_vias)]
    contacts = [Contact("a", 0, shapely.box(0, 0, 0.5, width), potential_v=1.0),
                Contact("pad0", 0, shapely.box(length - 2, 0, length, width), equipotential=True),
                Contact("pad1", 1, shapely.box(length - 2, 0, length, width), equipotential=True),
                Contact("b", 1, shapely.box(2 * length - 2.5, 0, 2 * length - 2, width), potential_v=0.0)]
    sol = solve_dc([SheetLayer(top, rs0), SheetLayer(bottom, rs1)], contacts, vias)
    expected = (rs0 + rs1) * (length - 2.5) / width + r_via / n_vias
    assert rel(sol.resistance("a", "b"), expected) < 0.01
    assert sol.contact_current("b") == pytest.approx(-sol.contact_current("a"), rel=1e-9)


def test_two_layers_with_via_pads_in_a_wide_sheet():
    # exact limit: vias of R >> copper resistance dominate; with N vias R -> R_via / N + copper
    # (the copper part is bounded by the one-layer result), checked as a bracket
    sheet = shapely.box(0, 0, 10, 10)
    r_via = 0.05
    vias = [ViaLink(5, 2 + 2 * k, 0, 1, r_via, radius_mm=0.3) for k in range(4)]
    a = Contact("a", 0, shapely.box(0, 0, 1, 10))
    b = Contact("b", 1, shapely.box(9, 0, 10, 10))
    r = two_terminal_resistance([SheetLayer(sheet, 1e-3), SheetLayer(sheet, 1e-3)], a, b, vias)
    assert r_via / 4 < r < r_via / 4 + 2e-3 * 9 / 10 * 1.5


def test_kelvin_sense_across_a_lumped_resistor():
    # exact: taps on the resistor's equipotential pads read I * R_sense; taps 1 mm out onto the
    # strips read I * (R_sense + Rs * 2 mm / W)
    rs, width, current, r_sense = 5e-4, 3.0, 5.0, 0.01
    copper = shapely.union_all([shapely.box(0, 0, 10, width), shapely.box(12, 0, 22, width)])
    contacts = [Contact("in", 0, shapely.box(0, 0, 0.5, width), current_a=current),
                Contact("out", 0, shapely.box(21.5, 0, 22, width), potential_v=0.0),
                Contact("pad1", 0, shapely.box(8.5, 0, 10, width), equipotential=True),
                Contact("pad2", 0, shapely.box(12, 0, 13.5, width), equipotential=True),
                Contact("s1", 0, shapely.Point(9.5, 1.5)), Contact("s2", 0, shapely.Point(12.5, 1.5)),
                Contact("t1", 0, shapely.box(7, 1, 8, 2)), Contact("t2", 0, shapely.box(14, 1, 15, 2))]
    link = LumpedLink((9.5, 1.5), (12.5, 1.5), 0, 0, r_sense)
    sol = solve_dc([SheetLayer(copper, rs)], contacts, links=[link])
    assert sol.voltage("s1", "s2") == pytest.approx(current * r_sense, rel=1e-6)
    assert sol.voltage("t1", "t2") == pytest.approx(current * (r_sense + rs * 2.0 / width), rel=1e-4)


def test_pitch_convergence_of_a_necked_shape():
    # convergence: the result moves less than 1 % when the pitch halves
    shape = shapely.union_all([shapely.box(0, 0, 5, 5), shapely.box(4.9, 2.1, 8.1, 2.6),
                               shapely.box(8, 0, 13, 5)])
    shape = shape.difference(shapely.Point(2.5, 2.5).buffer(1.0))
    layer = SheetLayer(shape, 1.0)
    a = Contact("a", 0, shapely.Point(0.6, 0.6).buffer(0.4))
    b = Contact("b", 0, shapely.box(12, 0, 13, 5))
    pitch, _ = choose_pitch_mm([layer], [a, b])
    r1 = two_terminal_resistance([layer], a, b, pitch_mm=pitch)
    r2 = two_terminal_resistance([layer], a, b, pitch_mm=pitch / 2)
    assert rel(r1, r2) < 0.01
    # the neck dominates: at least its own length in squares (6.4 squares for 3.2 x 0.5)
    assert r2 > 3.0 / 0.5


def test_pitch_convergence_with_via_pads():
    # convergence: two layers, finite via pads; halving the pitch moves R by under 1 %
    sheet = shapely.box(0, 0, 8, 4)
    vias = [ViaLink(4, 1, 0, 1, 1e-3, radius_mm=0.3), ViaLink(4, 3, 0, 1, 1e-3, radius_mm=0.3)]
    a = Contact("a", 0, shapely.box(0, 0, 0.5, 4))
    b = Contact("b", 1, shapely.box(7.5, 0, 8, 4))
    layers = [SheetLayer(sheet, 1e-3), SheetLayer(sheet, 2e-3)]
    r1 = two_terminal_resistance(layers, a, b, vias, pitch_mm=0.1)
    r2 = two_terminal_resistance(layers, a, b, vias, pitch_mm=0.05)
    assert rel(r1, r2) < 0.01


def test_current_only_contacts_are_referenced_and_must_sum_to_zero():
    # Kirchhoff's current law: the currents into an isolated piece must sum to zero
    layer = SheetLayer(shapely.box(0, 0, 4, 1), 1.0)
    ok = solve_dc([layer], [Contact("p", 0, shapely.box(0, 0, 0.5, 1), current_a=1.0),
                            Contact("n", 0, shapely.box(3.5, 0, 4, 1), current_a=-1.0)], pitch_mm=0.1)
    assert ok.contact_potential("n") == 0.0
    assert ok.voltage("p", "n") == pytest.approx(3.0, rel=1e-6)
    with pytest.raises(ValueError, match="sum to"):
        solve_dc([layer], [Contact("p", 0, shapely.box(0, 0, 0.5, 1), current_a=1.0),
                           Contact("n", 0, shapely.box(3.5, 0, 4, 1), current_a=-0.5)], pitch_mm=0.1)


def test_undriven_island_has_undefined_potential():
    copper = shapely.union_all([shapely.box(0, 0, 4, 1), shapely.box(0, 3, 4, 4)])
    sol = solve_dc([SheetLayer(copper, 1.0)],
                   [Contact("p", 0, shapely.box(0, 0, 0.5, 1), potential_v=1.0),
                    Contact("n", 0, shapely.box(3.5, 0, 4, 1), potential_v=0.0),
                    Contact("island", 0, shapely.Point(2, 3.5))], pitch_mm=0.1)
    assert math.isnan(sol.contact_potential("island"))
    assert any("not connected" in n for n in sol.notes)


# ---------------------------------------------------------------------------------- bad input


def _strip():
    return SheetLayer(shapely.box(0, 0, 4, 1), 1.0)


def _ends():
    return [Contact("a", 0, shapely.box(0, 0, 0.5, 1), potential_v=1.0),
            Contact("b", 0, shapely.box(3.5, 0, 4, 1), potential_v=0.0)]


@pytest.mark.parametrize("call, needle", [
    (lambda: solve_dc([], _ends()), "layers"),
    (lambda: solve_dc([SheetLayer(shapely.Polygon(), 1.0)], _ends()), r"layers\[0\].geometry"),
    (lambda: solve_dc([SheetLayer(shapely.box(0, 0, 4, 1), -1.0)], _ends()),
     r"layers\[0\].sheet_resistance_ohm"),
    (lambda: solve_dc([_strip()], _ends(), pitch_mm=0.0), "pitch_mm"),
    (lambda: solve_dc([_strip()], []), "contacts"),
    (lambda: solve_dc([_strip()], [Contact("a", 0, shapely.Polygon(), potential_v=1.0)]),
     r"contacts\[0\].*geometry"),
    (lambda: solve_dc([_strip()], _ends() + [Contact("far", 0, shapely.box(10, 10, 11, 11))]),
     "'far'.*outside the copper"),
    (lambda: solve_dc([_strip()], _ends() + [Contact("pt", 0, shapely.Point(2, 5))]),
     "'pt'.*outside the copper"),
    (lambda: solve_dc([_strip()], _ends() + [Contact("hi", 3, shapely.Point(2, 0.5))]),
     r"'hi'.*layer"),
    (lambda: solve_dc([_strip()], [Contact("a", 0, shapely.Point(1, 0.5), current_a=1.0,
                                           potential_v=0.0)]), "not both"),
    (lambda: solve_dc([_strip()], _ends() + [Contact("a", 0, shapely.Point(2, 0.5))]), "twice"),
    (lambda: solve_dc([_strip()], [Contact("t", 0, shapely.Point(2, 0.5))]), "drives"),
    (lambda: solve_dc([_strip()], _ends(), [ViaLink(2, 0.5, 0, 1, 0.01)]), r"vias\[0\].layer_b"),
    (lambda: solve_dc([_strip(), _strip()], _ends(), [ViaLink(2, 7, 0, 1, 0.01)]),
     r"vias\[0\].*outside the copper"),
    (lambda: solve_dc([_strip(), _strip()], _ends(), [ViaLink(2, 0.5, 0, 1, -1.0)]),
     r"vias\[0\].resistance_ohm"),
    (lambda: solve_dc([_strip()], _ends(), solver="magic"), "solver"),
    (lambda: two_terminal_resistance([_strip()], "a", _ends()[1]), "contact_a"),
])
def test_bad_arguments_raise_value_error_naming_them(call, needle):
    with pytest.raises(ValueError, match=needle):
        call()


def test_overlapping_driven_contacts_are_refused():
    with pytest.raises(ValueError, match="'a' and 'b' overlap"):
        solve_dc([_strip()], [Contact("a", 0, shapely.box(0, 0, 2, 1), potential_v=1.0),
                              Contact("b", 0, shapely.box(1, 0, 3, 1), potential_v=0.0)], pitch_mm=0.1)


def test_unconnected_terminals_are_reported():
    copper = shapely.union_all([shapely.box(0, 0, 4, 1), shapely.box(0, 3, 4, 4)])
    with pytest.raises(ValueError, match="not connected"):
        two_terminal_resistance([SheetLayer(copper, 1.0)], Contact("a", 0, shapely.box(0, 0, 1, 1)),
                                Contact("b", 0, shapely.box(0, 3, 1, 4)), pitch_mm=0.1)


@pytest.mark.parametrize("gap_fraction", [0.3, 0.6])
def test_rectangle_with_two_electrodes_on_one_edge(gap_fraction):
    # exact (conformal mapping, derived by two Schwarz-Christoffel maps): w = sn(z | m) maps the
    # rectangle [-K, K] x [0, K'] onto the upper half-plane (NIST DLMF 22.18(ii)); electrodes on
    # the bottom edge over |x| >= x0 land on s <= |w| <= 1 with s = sn(x0 | m), and mapping back
    # with modulus s gives R = Rs * 2 K(s^2) / K(1 - s^2). Evaluated with scipy.special.
    from scipy.special import ellipj, ellipk

    m = 0.5
    k_full, k_prime = ellipk(m), ellipk(1 - m)
    s = ellipj(gap_fraction * k_full, m)[0]
    expected = 2 * ellipk(s * s) / ellipk(1 - s * s)
    scale = 10.0 / (2 * k_full)  # a 10 mm wide rectangle
    half, height, x0 = k_full * scale, k_prime * scale, gap_fraction * k_full * scale
    # electrodes are equipotential tabs below the edge, so the sheet itself is the rectangle
    tab_a, tab_b = shapely.box(-half, -0.5, -x0, 0), shapely.box(x0, -0.5, half, 0)
    copper = shapely.union_all([shapely.box(-half, 0, half, height), tab_a, tab_b])
    r = two_terminal_resistance([SheetLayer(copper, 1.0)], Contact("a", 0, tab_a),
                                Contact("b", 0, tab_b))
    assert rel(r, expected) < 0.005


def test_annulus_current_density_is_i_over_2_pi_r():
    # exact: radial current, J_s(r) = I / (2 pi r) [A/m]
    r1, r2, current = 1.0, 4.0, 3.0
    disc = shapely.Point(0, 0).buffer(r2 + 0.5, quad_segs=128)
    inner = shapely.Point(0, 0).buffer(r1, quad_segs=128)
    outer = disc.difference(shapely.Point(0, 0).buffer(r2, quad_segs=128))
    sol = solve_dc([SheetLayer(disc, 1e-3)], [Contact("i", 0, inner, current_a=current),
                                              Contact("o", 0, outer, potential_v=0.0)], pitch_mm=0.1)
    mag = sol.current_density(0)
    xs, ys = np.meshgrid(sol.grid.x_centres_mm, sol.grid.y_centres_mm)
    ring = np.abs(np.hypot(xs, ys) - 2.5) < 0.05
    assert np.median(mag[ring]) == pytest.approx(current / (2 * math.pi * 2.5e-3), rel=0.02)
    peak, _, x, y = sol.peak_current_density
    assert peak == pytest.approx(current / (2 * math.pi * r1 * 1e-3), rel=0.1)
    assert math.hypot(x, y) < r1 + 0.2


def test_zero_ohm_links_put_two_layers_in_parallel():
    # exact: two sheets joined at both ends conduct in parallel, 1/R = (W/L)(1/Rs0 + 1/Rs1)
    length, width, rs0, rs1 = 10.0, 2.0, 1e-3, 3e-3
    strip = shapely.box(0, 0, length, width)
    contacts = [Contact("a", 0, shapely.box(0, 0, 1, width), potential_v=1.0),
                Contact("b", 0, shapely.box(length - 1, 0, length, width), potential_v=0.0),
                Contact("a1", 1, shapely.box(0, 0, 1, width), equipotential=True),
                Contact("b1", 1, shapely.box(length - 1, 0, length, width), equipotential=True)]
    links = [ViaLink(0.5, 1.0, 0, 1, 0.0), ViaLink(length - 0.5, 1.0, 0, 1, 0.0)]
    sol = solve_dc([SheetLayer(strip, rs0), SheetLayer(strip, rs1)], contacts, links)
    expected = 1.0 / ((width / (length - 2)) * (1 / rs0 + 1 / rs1))
    assert rel(sol.resistance("a", "b"), expected) < 1e-6
    assert sol.contact_potential("a1") == pytest.approx(1.0)


def test_a_pad_island_smaller_than_a_cell_joined_by_a_via_in_pad():
    # a 0.1 mm top pad, its own island, on a via that lands in a bottom strip; on a 0.5 mm grid
    # the pad crosses no cell face (the old solver refused it: "no grid cell"). Its cell becomes a
    # node joined by the via: R = R_via + Rs L / W of the strip (exact, series), within the
    # one-cell end effect of the coarse grid
    rs, r_via = 0.5e-3, 0.01
    top = shapely.box(1.7, 1.2, 1.8, 1.3)
    bottom = shapely.box(0, 0, 20, 2)
    pad = Contact("pad", 0, top)
    end = Contact("end", 1, shapely.box(19, 0, 20, 2))
    via = ViaLink(1.75, 1.25, 0, 1, r_via, radius_mm=0.05)
    r = two_terminal_resistance([SheetLayer(top, rs), SheetLayer(bottom, rs)], pad, end, [via], pitch_mm=0.5)
    expected = r_via + rs * (19 - 1.75) / 2
    assert rel(r, expected) < 0.05


def test_via_lands_on_a_coarse_grid_join_the_layers():
    # vias whose lands are smaller than a cell (the centre rule finds no cell inside) and larger
    # than several: both join the layers; with R_via >> copper, R -> R_via / N (bracket as above)
    sheet = shapely.box(0, 0, 10, 10)
    r_via = 0.05
    for radius in (0.05, 0.8):
        vias = [ViaLink(5, 2 + 2 * k, 0, 1, r_via, radius_mm=radius) for k in range(4)]
        a = Contact("a", 0, shapely.box(0, 0, 1, 10))
        b = Contact("b", 1, shapely.box(9, 0, 10, 10))
        r = two_terminal_resistance([SheetLayer(sheet, 1e-3), SheetLayer(sheet, 1e-3)], a, b, vias,
                                    pitch_mm=0.5)
        assert r_via / 4 < r < r_via / 4 + 2e-3 * 9 / 10 * 1.5
