"""The stackup heights the measurements use come from board.stackup, never from hidden defaults."""

from __future__ import annotations

import pytest
from shapely.geometry import box

from loopcheck.board import Dielectric
from loopcheck.measure.netcopper import dielectric_between, layer_thickness_m, layer_z_mm
from measure_boards import make_board


def four_layer():
    b = make_board([box(0, 0, 10, 10)] * 4, [], dielectric_mm=[0.2, 1.0, 0.2], copper_m=35e-6)
    b.stackup.dielectrics = [Dielectric(0.2e-3, 4.3), Dielectric(1.0e-3, 4.5), Dielectric(0.2e-3, 4.3)]
    return b


def test_heights_and_dielectrics_from_the_stackup():
    b = four_layer()
    assert dielectric_between(b, 0, 1) == pytest.approx((0.2e-3, 4.3))
    assert dielectric_between(b, 2, 1) == pytest.approx((1.0e-3, 4.5))
    # stacked dielectrics in series: t / sum(t_i / er_i)
    t = 1.4e-3
    assert dielectric_between(b, 0, 3) == pytest.approx((t, t / (0.4e-3 / 4.3 + 1.0e-3 / 4.5)))
    assert layer_thickness_m(b, 2) == 35e-6
    z = layer_z_mm(b)
    assert z[3] == 0.0
    assert z[0] == pytest.approx(0.2 + 1.0 + 0.2 + 3 * 0.035)


def test_a_stackup_that_does_not_fit_the_board_is_an_error_not_a_default():
    b = four_layer()
    b.stackup.dielectrics = b.stackup.dielectrics[:2]
    with pytest.raises(ValueError, match="does not match"):
        dielectric_between(b, 2, 3)
    with pytest.raises(ValueError, match="does not match"):
        layer_z_mm(b)
    with pytest.raises(ValueError, match="no dielectric"):
        dielectric_between(four_layer(), 1, 1)
