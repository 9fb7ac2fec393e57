"""Gerber reader: closed-form areas on small hand-written files, limits and bad input, and the
corpus of real files checked against two outside renderers (gerbv, pygerber)."""

from __future__ import annotations

import functools
import math
import os
from pathlib import Path

import pytest
import shapely

from loopcheck.errors import InputError
from loopcheck.limits import InputLimits
from loopcheck.readers.gerber import read_gerber, read_profile, sniff_gerber

import references as ref

CORPUS = ref.CORPUS
HEADER = "%FSLAX46Y46*%\n%MOMM*%\n%LPD*%\n"


def gerber(tmp_path: Path, body: str, name: str = "layer.gbr", header: str = HEADER) -> Path:
    p = tmp_path / name
    p.write_text("G04 test*\n" + header + body + "\nM02*\n")
    return p


def mm(v: float) -> str:
    """Coordinate in the 4.6 mm format of HEADER."""
    return str(int(round(v * 1e6)))


def area(tmp_path, body, **kw) -> float:
    return read_gerber(gerber(tmp_path, body, **kw)).geometry.area


# ---------------------------------------------------------------- standard apertures (closed forms)

def test_circle_flash_area_is_pi_r_squared(tmp_path):
    a = area(tmp_path, "%ADD10C,1.0*%\nD10*\nX0Y0D03*")
    assert a == pytest.approx(math.pi * 0.5 ** 2, rel=1e-9)   # area-equivalent polygon: exact


def test_circle_with_hole(tmp_path):
    a = area(tmp_path, "%ADD10C,1.0X0.4*%\nD10*\nX0Y0D03*")
    assert a == pytest.approx(math.pi * (0.25 - 0.04), rel=1e-6)


def test_rectangle_with_hole(tmp_path):
    a = area(tmp_path, "%ADD10R,2.0X1.0X0.5*%\nD10*\nX0Y0D03*")
    assert a == pytest.approx(2.0 - math.pi * 0.25 ** 2, rel=1e-6)


def test_obround_area(tmp_path):
    # stadium w x h, r = h/2: w h - (4 - pi) r^2
    a = area(tmp_path, "%ADD10O,2.0X1.0*%\nD10*\nX0Y0D03*")
    assert a == pytest.approx(2.0 - (4 - math.pi) * 0.25, rel=1e-4)
    b = area(tmp_path, "%ADD11O,0.6X1.8*%\nD11*\nX0Y0D03*", name="tall.gbr")
    assert b == pytest.approx(0.6 * 1.8 - (4 - math.pi) * 0.09, rel=1e-4)


@pytest.mark.parametrize("n", [3, 5, 6, 8, 12])
def test_polygon_aperture_area(tmp_path, n):
    # regular n-gon of circumradius R: (n/2) R^2 sin(2 pi / n)
    a = area(tmp_path, f"%ADD10P,2.0X{n}X15*%\nD10*\nX0Y0D03*", name=f"p{n}.gbr")
    assert a == pytest.approx(n / 2 * math.sin(2 * math.pi / n), rel=1e-9)


def test_polygon_rotation_in_degrees(tmp_path):
    # a square (4 vertices) at 45 deg has its sides on the axes: bounds +-R/sqrt2
    g = read_gerber(gerber(tmp_path, "%ADD10P,2.0X4X45*%\nD10*\nX0Y0D03*")).geometry
    assert g.bounds == pytest.approx((-math.sqrt(0.5),) * 2 + (math.sqrt(0.5),) * 2, abs=1e-9)


# ---------------------------------------------------------------- strokes

def cap_deficit(r: float, n: int = 16) -> float:
    """Area a stroke's two round ends lose as inscribed n-gons (the reader uses n >= 16)."""
    return math.pi * r * r - n / 2 * r * r * math.sin(2 * math.pi / n)


def test_line_with_round_aperture_is_a_stadium(tmp_path):
    # width w, length L: w L + pi (w/2)^2; the sides are exact, the caps inscribed polygons
    a = area(tmp_path, f"%ADD10C,0.2*%\nD10*\nX0Y0D02*\nG01*\nX{mm(10)}Y0D01*")
    exact = 0.2 * 10 + math.pi * 0.01
    assert exact - cap_deficit(0.1) <= a <= exact + 1e-12


def test_polyline_trace_corners_are_round(tmp_path):
    # an L-shaped trace: two stadiums (w L + pi r^2 each) sharing the corner disc and the
    # r x r corner square outside it: overlap pi r^2 + r^2 - pi r^2 / 4
    a = area(tmp_path, f"%ADD10C,0.5*%\nD10*\nX0Y0D02*\nG01*\nX{mm(10)}Y0D01*\nY{mm(10)}D01*")
    r = 0.25
    expect = 2 * (0.5 * 10 + math.pi * r * r) - (math.pi * r * r + r * r - math.pi * r * r / 4)
    # two end caps and one outer quarter-circle join are inscribed polygons
    assert expect - 1.25 * cap_deficit(r) <= a <= expect + 1e-12


def test_zero_length_line_is_a_disc(tmp_path):
    a = area(tmp_path, "%ADD10C,1.0*%\nD10*\nX0Y0D02*\nG01*\nX0Y0D01*")
    assert math.pi * 0.25 - cap_deficit(0.5) <= a <= math.pi * 0.25


def test_line_with_rectangular_aperture_sweeps_its_hull(tmp_path):
    # Minkowski sum of a segment v and a w x h rectangle: w h + |vx| h + |vy| w
    a = area(tmp_path, f"%ADD10R,1.0X0.5*%\nD10*\nX0Y0D02*\nG01*\nX{mm(3)}Y{mm(4)}D01*")
    assert a == pytest.approx(1.0 * 0.5 + 3 * 0.5 + 4 * 1.0, rel=1e-9)


def test_full_circle_arc_is_an_annulus(tmp_path):
    # G75 single-quadrant mode: equal start and end make a full circle; width 0.2 at radius 5
    a = area(tmp_path, f"%ADD10C,0.2*%\nD10*\nG75*\nX{mm(5)}Y0D02*\nG03*\nX{mm(5)}Y0I{mm(-5)}J0D01*")
    # within what the 5 um chord tolerance allows
    assert a == pytest.approx(math.pi * (5.1 ** 2 - 4.9 ** 2), rel=1e-3)


def test_quarter_arc_clockwise(tmp_path):
    # quarter of the annulus plus the two round end caps
    a = area(tmp_path, f"%ADD10C,0.2*%\nD10*\nG75*\nX0Y{mm(5)}D02*\nG02*\nX{mm(5)}Y0I0J{mm(-5)}D01*")
    expect = math.pi * (5.1 ** 2 - 4.9 ** 2) / 4 + math.pi * 0.01
    assert a == pytest.approx(expect, rel=1e-3)
    g = read_gerber(gerber(tmp_path, f"%ADD10C,0.2*%\nD10*\nG75*\nX0Y{mm(5)}D02*\nG02*\nX{mm(5)}Y0I0J{mm(-5)}D01*",
                           name="cw.gbr")).geometry
    assert g.contains(shapely.Point(5 * math.cos(math.pi / 4), 5 * math.sin(math.pi / 4)))


# ---------------------------------------------------------------- regions

def test_region_rectangle(tmp_path):
    a = area(tmp_path, f"G36*\nX0Y0D02*\nG01*\nX{mm(4)}Y0D01*\nY{mm(3)}D01*\nX0D01*\nY0D01*\nG37*")
    assert a == pytest.approx(12.0, rel=1e-12)


def test_region_with_arcs(tmp_path):
    # a 4 x 2 rectangle with a half disc of radius 1 on its right side (D shape): 8 + pi/2
    body = (f"G75*\nG36*\nX0Y0D02*\nG01*\nX{mm(4)}Y0D01*\nG03*\nX{mm(4)}Y{mm(2)}I0J{mm(1)}D01*\n"
            f"G01*\nX0D01*\nY0D01*\nG37*")
    assert area(tmp_path, body) == pytest.approx(8 + math.pi / 2, rel=1e-4)


def test_region_full_circle(tmp_path):
    body = f"G75*\nG36*\nX{mm(3)}Y0D02*\nG03*\nX{mm(3)}Y0I{mm(-3)}J0D01*\nG37*"
    assert area(tmp_path, body) == pytest.approx(math.pi * 9, rel=1e-4)


def test_region_cut_in_makes_a_hole(tmp_path):
    # 10 x 10 square with a 4 x 4 hole reached by a cut-in along y = 5 (spec 4.7.3 style)
    body = (f"G36*\nX0Y0D02*\nG01*\nX{mm(10)}Y0D01*\nY{mm(10)}D01*\nX0D01*\nY{mm(5)}D01*\n"
            f"X{mm(3)}D01*\nY{mm(7)}D01*\nX{mm(7)}D01*\nY{mm(3)}D01*\nX{mm(3)}D01*\nY{mm(5)}D01*\n"
            f"X0D01*\nY0D01*\nG37*")
    assert area(tmp_path, body) == pytest.approx(100 - 16, rel=1e-9)


# ---------------------------------------------------------------- polarity, step and repeat, image

def test_clear_polarity_cuts_earlier_dark_only(tmp_path):
    body = (f"G36*\nX0Y0D02*\nG01*\nX{mm(10)}Y0D01*\nY{mm(10)}D01*\nX0D01*\nY0D01*\nG37*\n"
            f"%LPC*%\n%ADD10R,2X2*%\nD10*\nX{mm(5)}Y{mm(5)}D03*\n"
            f"%LPD*%\n%ADD11R,1X1*%\nD11*\nX{mm(5)}Y{mm(5)}D03*")
    # 100 - 4 cleared, then 1 dark drawn back inside the hole
    assert area(tmp_path, body) == pytest.approx(97.0, rel=1e-12)


def test_step_and_repeat_copies_every_object(tmp_path):
    # 3 x 2 copies of a block holding a flash *and* a region (gerbonara 1.5.0 alone drops both the
    # block's first object and its regions)
    body = (f"%ADD10C,1*%\n%SRX3Y2I{10}J{20}*%\nD10*\nX0Y0D03*\n"
            f"G36*\nX{mm(2)}Y0D02*\nG01*\nX{mm(4)}Y0D01*\nY{mm(2)}D01*\nX{mm(2)}D01*\nY0D01*\nG37*\n%SR*%")
    layer = read_gerber(gerber(tmp_path, body))
    assert layer.object_count == 12
    assert layer.geometry.area == pytest.approx(6 * (math.pi * 0.25 + 4.0), rel=1e-9)
    assert len(getattr(layer.geometry, "geoms", [layer.geometry])) == 12
    assert layer.geometry.bounds[2] == pytest.approx(24.0)   # last column at x = 20
    assert layer.geometry.bounds[3] == pytest.approx(22.0)   # second row at y = 20


def test_step_and_repeat_limit_is_checked_before_expanding(tmp_path):
    body = "%ADD10C,0.1*%\n%SRX2000Y2000I1J1*%\nD10*\nX0Y0D03*\nX1000Y0D03*\n%SR*%"
    path = gerber(tmp_path, body)
    with pytest.raises(InputError) as err:
        read_gerber(path, InputLimits(max_step_repeat_objects=1_000_000))
    assert str(path) in str(err.value) and "step-and-repeat" in str(err.value)
    assert "\n" not in str(err.value)


def test_object_count_limit(tmp_path):
    body = "%ADD10C,0.1*%\nD10*\n" + "\n".join(f"X{k * 1000}Y0D03*" for k in range(50))
    with pytest.raises(InputError, match="limit"):
        read_gerber(gerber(tmp_path, body), InputLimits(max_objects_per_layer=20))


def test_file_size_limit(tmp_path):
    path = gerber(tmp_path, "%ADD10C,1*%\nD10*\nX0Y0D03*")
    with pytest.raises(InputError, match="over the limit"):
        read_gerber(path, InputLimits(max_file_bytes=10))


def test_negative_image(tmp_path):
    # two 2 x 2 flashes 8 mm apart: the negative is their 10 x 2 frame minus the flashes
    body = f"%ADD10R,2X2*%\nD10*\nX{mm(1)}Y{mm(1)}D03*\nX{mm(9)}Y{mm(1)}D03*"
    layer = read_gerber(gerber(tmp_path, body, header="%FSLAX46Y46*%\n%MOMM*%\n%IPNEG*%\n"))
    assert layer.negative
    assert layer.geometry.area == pytest.approx(20.0 - 8.0, rel=1e-12)
    framed = read_gerber(gerber(tmp_path, body, name="framed.gbr", header="%FSLAX46Y46*%\n%MOMM*%\n%IPNEG*%\n"),
                         negative_extent=shapely.box(-5, -5, 15, 5))
    assert framed.geometry.area == pytest.approx(200.0 - 8.0, rel=1e-12)


def test_negative_copper_by_x2_file_polarity(tmp_path):
    # a plane layer drawn as its clearances: %TF.FilePolarity,Negative% on a copper layer
    header = "%FSLAX46Y46*%\n%MOMM*%\n%TF.FileFunction,Copper,L2,Inr*%\n%TF.FilePolarity,Negative*%\n"
    body = f"%ADD10C,1*%\nD10*\nX0Y0D03*"
    layer = read_gerber(gerber(tmp_path, body, header=header), negative_extent=shapely.box(-5, -5, 5, 5))
    assert layer.negative and layer.geometry.area == pytest.approx(100 - math.pi * 0.25, rel=1e-9)


def test_inch_file_is_converted_to_mm(tmp_path):
    header = "%FSLAX25Y25*%\n%MOIN*%\n"
    layer = read_gerber(gerber(tmp_path, "%ADD10R,0.1X0.2*%\nD10*\nX100000Y0D03*", header=header))
    assert layer.units == "inch"
    assert layer.geometry.area == pytest.approx(2.54 * 5.08, rel=1e-12)
    assert layer.geometry.centroid.x == pytest.approx(25.4, rel=1e-12)


def test_aperture_rotation_lr_and_mirror_lm(tmp_path):
    body = "%ADD10R,4X1*%\nD10*\n%LR90*%\nX0Y0D03*"
    g = read_gerber(gerber(tmp_path, body)).geometry
    assert g.bounds == pytest.approx((-0.5, -2.0, 0.5, 2.0), abs=1e-9)
    body = "%ADD10R,4X1*%\nD10*\n%LS0.5*%\nX0Y0D03*"
    assert area(tmp_path, body, name="ls.gbr") == pytest.approx(1.0, rel=1e-12)


# ---------------------------------------------------------------- aperture macros

ROUNDRECT = """%AMRoundRect*
0 Rectangle with rounded corners*
4,1,4,$2,$3,$4,$5,$6,$7,$8,$9,$2,$3,0*
1,1,$1+$1,$2,$3,0*
1,1,$1+$1,$4,$5,0*
1,1,$1+$1,$6,$7,0*
1,1,$1+$1,$8,$9,0*
20,1,$1+$1,$2,$3,$4,$5,0*
20,1,$1+$1,$4,$5,$6,$7,0*
20,1,$1+$1,$6,$7,$8,$9,0*
20,1,$1+$1,$8,$9,$2,$3,0*%
"""


def test_macro_rounded_rectangle(tmp_path):
    # a 2 x 1 pad with corner radius 0.25 (corner centres +-0.75, +-0.25): w h - (4 - pi) r^2
    body = ROUNDRECT + "%ADD10RoundRect,0.25X-0.75X-0.25X0.75X-0.25X0.75X0.25X-0.75X0.25*%\nD10*\nX0Y0D03*"
    # the corner discs are area-equivalent polygons, bulging past the flat sides by < 5 um
    assert area(tmp_path, body) == pytest.approx(2.0 - (4 - math.pi) * 0.0625, rel=5e-4)


def test_macro_exposure_off_and_offset_polygon(tmp_path):
    # disc of diameter 2 with an exposure-off hole of diameter 1, and a diamond (5-primitive,
    # 4 vertices, circumscribed diameter 2) centred at x = 3
    body = "%AMHOLED*\n1,1,2,0,0*\n1,0,1,0,0*\n5,1,4,3,0,2,0*%\n%ADD10HOLED*%\nD10*\nX0Y0D03*"
    g = read_gerber(gerber(tmp_path, body)).geometry
    assert g.area == pytest.approx(math.pi * (1 - 0.25) + 2.0, rel=1e-6)
    assert not g.contains(shapely.Point(0, 0))
    assert g.contains(shapely.Point(3.0, 0.0)) and g.contains(shapely.Point(3.9, 0.0))


def test_macro_centre_line_rotation_about_origin(tmp_path):
    # a 2 x 0.5 rectangle centred at (2, 0), turned 90 deg about the macro origin -> centred at (0, 2)
    body = "%AMBAR*\n21,1,2,0.5,2,0,90*%\n%ADD10BAR*%\nD10*\nX0Y0D03*"
    g = read_gerber(gerber(tmp_path, body)).geometry
    assert g.area == pytest.approx(1.0, rel=1e-9)
    assert g.bounds == pytest.approx((-0.25, 1.0, 0.25, 3.0), abs=1e-9)


def test_macro_thermal_against_numerical_integral(tmp_path):
    from scipy.integrate import quad

    d_out, d_in, gap = 2.0, 1.4, 0.3
    body = f"%AMTH*\n7,0,0,{d_out},{d_in},{gap},0*%\n%ADD10TH*%\nD10*\nX0Y0D03*"
    R, r = d_out / 2, d_in / 2
    # the annulus inside one gap strip |y| < gap/2 (both sides), by quadrature; two strips
    strip, _ = quad(lambda y: 2 * (math.sqrt(R * R - y * y) - math.sqrt(r * r - y * y)), -gap / 2, gap / 2)
    expect = math.pi * (R * R - r * r) - 2 * strip
    assert area(tmp_path, body) == pytest.approx(expect, rel=1e-3)


def test_macro_parameters_and_variables(tmp_path):
    body = "%AMSQ*\n$3=$1x$2*\n21,1,$3,$2,0,0,0*%\n%ADD10SQ,2X0.5*%\nD10*\nX0Y0D03*"
    assert area(tmp_path, body) == pytest.approx(1.0 * 0.5, rel=1e-12)


# ---------------------------------------------------------------- X2 attributes

def test_x2_file_and_object_attributes(tmp_path):
    body = (f"%TF.GenerationSoftware,Writer,1.0*%\n%TF.FileFunction,Copper,L1,Top*%\n"
            f"%TF.FilePolarity,Positive*%\n%ADD10C,1*%\n%ADD11C,0.25*%\n"
            f"%TO.N,VIN*%\n%TO.C,C3*%\n%TO.CVal,10uF*%\n%TO.P,C3,1*%\nD10*\nX0Y0D03*\n%TD.P*%\n"
            f"%TO.P,C3,2*%\n%TO.N,GND*%\nX{mm(5)}Y0D03*\n%TD*%\n"
            f"%TO.N,VIN*%\nD11*\nX0Y{mm(1)}D02*\nG01*\nX0Y{mm(10)}D01*\n%TD*%\n"
            f"G36*\nX{mm(20)}Y0D02*\n%TO.N,GND*%\nX{mm(22)}Y0D01*\nY{mm(2)}D01*\nX{mm(20)}D01*\nY0D01*\nG37*\n%TD*%")
    layer = read_gerber(gerber(tmp_path, body, header="%FSLAX46Y46*%\n%MOMM*%\n"))
    assert layer.attributes["FileFunction"] == "Copper,L1,Top"
    assert layer.attributes["GenerationSoftware"] == "Writer,1.0"
    pins = {(p.ref, p.pin): p for p in layer.pin_flashes}
    assert pins[("C3", "1")].net == "VIN" and pins[("C3", "2")].net == "GND"
    assert pins[("C3", "2")].x_mm == pytest.approx(5.0)
    assert layer.component_values == {"C3": "10uF"}
    assert set(layer.net_copper) == {"VIN", "GND"}
    # the pad (r 0.5) and a 9 mm trace of width 0.25 that starts clear of it
    assert layer.net_copper["VIN"].area == pytest.approx(math.pi * 0.25 + 0.25 * 9 + math.pi * 0.125 ** 2, rel=1e-3)
    assert layer.net_copper["GND"].area == pytest.approx(math.pi * 0.25 + 4.0, rel=1e-6)


def test_x2_attributes_in_comments_and_escapes(tmp_path):
    body = ("G04 #@! TF.FileFunction,Copper,L2,Bot*\n%ADD10C,1*%\n"
            "G04 #@! TO.P,REF\\u002A\\u002A,6*\nG04 #@! TO.N,N/C*\nD10*\nX0Y0D03*\nG04 #@! TD*")
    layer = read_gerber(gerber(tmp_path, body))
    assert layer.attributes["FileFunction"] == "Copper,L2,Bot"
    assert layer.pin_flashes[0].ref == "REF**" and layer.pin_flashes[0].pin == "6"


# ---------------------------------------------------------------- bad input

def test_truncated_file(tmp_path):
    full = gerber(tmp_path, f"%ADD10C,1*%\nD10*\n" + "\n".join(f"X{k * 100000}Y0D03*" for k in range(40)))
    cut = tmp_path / "cut.gbr"
    cut.write_text(full.read_text()[: len(full.read_text()) // 2])
    with pytest.raises(InputError) as err:
        read_gerber(cut)
    assert str(cut) in str(err.value) and "\n" not in str(err.value)


def test_binary_garbage(tmp_path):
    junk = tmp_path / "junk.gbr"
    junk.write_bytes(bytes(range(256)) * 40)
    with pytest.raises(InputError, match="binary"):
        read_gerber(junk)
    assert not sniff_gerber(junk)


def test_text_that_is_not_gerber(tmp_path):
    p = tmp_path / "notes.gbr"
    p.write_text("hello, this is a readme\nnothing to see\n")
    with pytest.raises(InputError):
        read_gerber(p)
    assert not sniff_gerber(p)


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="cannot read"):
        read_gerber(tmp_path / "absent.gbr")


def test_undefined_aperture_gives_line_number(tmp_path):
    p = gerber(tmp_path, "%ADD10C,1*%\nD10*\nX0Y0D03*\nD99*\nX0Y0D03*")
    with pytest.raises(InputError) as err:
        read_gerber(p)
    assert err.value.line == 8 and err.value.path == str(p)   # comment, 3 header lines, then D99 on 8


def test_corpus_syntax_error_file():
    p = CORPUS / "spec-examples" / "test_syntax_error.gbr"
    if not p.exists():
        pytest.skip("corpus absent (../shared/corpus)")
    with pytest.raises(InputError) as err:
        read_gerber(p)
    msg = str(err.value)
    assert msg.startswith(f"{p}:7: ") and "aperture" in msg and "\n" not in msg


# ---------------------------------------------------------------- outline

def test_profile_with_arcs_and_a_cutout(tmp_path):
    # 40 x 30 board drawn as 4 lines in scrambled order, with a round cut-out of radius 5 drawn as
    # a full-circle arc
    body = (f"%ADD10C,0.1*%\nD10*\nG75*\nX0Y0D02*\nG01*\nX{mm(40)}Y0D01*\nX0Y{mm(30)}D02*\n"
            f"X{mm(40)}Y{mm(30)}D01*\nX{mm(40)}Y0D02*\nY{mm(30)}D01*\nX0Y{mm(30)}D02*\nY0D01*\n"
            f"X{mm(25)}Y{mm(15)}D02*\nG03*\nX{mm(25)}Y{mm(15)}I{mm(-5)}J0D01*")
    outline = read_profile(gerber(tmp_path, body))
    assert outline.area == pytest.approx(40 * 30 - math.pi * 25, rel=1e-4)
    assert len(outline.interiors) == 1


def test_profile_tolerates_small_gaps_and_rejects_open_outline(tmp_path):
    gap = (f"%ADD10C,0.1*%\nD10*\nX0Y0D02*\nG01*\nX{mm(10)}Y0D01*\nY{mm(10)}D01*\nX0D01*\n"
           f"Y{mm(0.004)}D01*")
    assert read_profile(gerber(tmp_path, gap)).area == pytest.approx(100, rel=1e-3)
    open_ = f"%ADD10C,0.1*%\nD10*\nX0Y0D02*\nG01*\nX{mm(10)}Y0D01*\nY{mm(10)}D01*\nX0D01*"
    with pytest.raises(InputError, match="outline") as err:
        read_profile(gerber(tmp_path, open_, name="open.gbr"))
    assert "open end at x=0.000 y=0.000" in str(err.value) or "open end at x=0.000 y=10.000" in str(err.value)


def test_profile_from_region(tmp_path):
    body = f"G36*\nX0Y0D02*\nG01*\nX{mm(20)}Y0D01*\nY{mm(10)}D01*\nX0D01*\nY0D01*\nG37*"
    assert read_profile(gerber(tmp_path, body)).area == pytest.approx(200)


# ---------------------------------------------------------------- corpus

# every copper layer in the corpus, by program (found by X2 FileFunction or the program's naming)
CORPUS_COPPER = [
    *[f"altium-composite-drill/Gerber/LimeSDR-QPCIe_1v2.{e}" for e in
      ["GTL", "GBL", *[f"G{k}" for k in range(1, 13)]]],
    "diptrace/keyboard_Bottom.gbr", "diptrace/mainboard_Bottom.gbr", "diptrace/mainboard_Top.gbr",
    "diptrace/panel_Bottom.gbr",
    "eagle-newer/copper_bottom.gbr", "eagle-newer/copper_top.gbr",
    "fritzing/combined.gbl", "fritzing/combined.gtl",
    "geda/controller.bottom.gbr", "geda/controller.group3.gbr", "geda/controller.top.gbr",
    "geda/driver.bottom.gbr", "geda/driver.group5.gbr", "geda/driver.top.gbr",
    "kicad-older/chibi_2024-B.Cu.gbr", "kicad-older/chibi_2024-F.Cu.gbr",
    *[f"kicad-x2-tests/{v}/Flashpads-{s}_Cu.gbr" for v in ["nox2ap", "nox2noap", "x2ap", "x2noap"]
      for s in ["F", "B"]],
    "pcb-rnd/power-art.gbl", "pcb-rnd/power-art.gtl",
    "upverter/design_export.gbl", "upverter/design_export.gtl",
    *[f"zero-length-lines/charliewatch-v2.panel-{s}_Cu.gbr" for s in ["F", "In1", "In2", "B"]],
    "spec-examples/therm_1.gbr",
]

# one or two layers per program for the default gerbv run (all of CORPUS_COPPER when
# LOOPCHECK_FULL_REFERENCE=1; benchmarks/bench_readers.py --reference prints the full table)
GERBV_DEFAULT = [
    "altium-composite-drill/Gerber/LimeSDR-QPCIe_1v2.G11", "diptrace/mainboard_Top.gbr",
    "eagle-newer/copper_bottom.gbr", "fritzing/combined.gtl", "geda/controller.top.gbr",
    "kicad-older/chibi_2024-B.Cu.gbr", "kicad-x2-tests/x2ap/Flashpads-F_Cu.gbr",
    "pcb-rnd/power-art.gtl", "upverter/design_export.gbl",
    "zero-length-lines/charliewatch-v2.panel-In2_Cu.gbr",
]
GERBV_FILES = CORPUS_COPPER if os.environ.get("LOOPCHECK_FULL_REFERENCE") else GERBV_DEFAULT
GERBV_FILES = [f for f in GERBV_FILES if f != "spec-examples/therm_1.gbr"]   # gerbv draws no thermal primitive

# pygerber reads these (it fails on the files of several programs) and is slow: three small ones
PYGERBER_FILES = ["geda/driver.top.gbr", "geda/driver.group5.gbr", "kicad-x2-tests/x2ap/Flashpads-B_Cu.gbr"]

BAND = 0.015   # 1.5 %


def corpus_file(rel: str) -> Path:
    p = CORPUS / rel
    if not p.exists():
        pytest.skip(f"corpus absent: {p}")
    return p


@functools.lru_cache(maxsize=None)
def _read_cached(path: str):
    return read_gerber(path)


def read_corpus(rel: str):
    """One read per corpus file for the whole test session (the reads are the slow part)."""
    return _read_cached(str(corpus_file(rel)))


@pytest.mark.parametrize("rel", CORPUS_COPPER)
def test_corpus_copper_reads(rel):
    layer = read_corpus(rel)
    assert layer.geometry.is_valid and layer.geometry.area > 0
    assert layer.object_count > 0


@pytest.mark.parametrize("rel", GERBV_FILES)
def test_corpus_area_agrees_with_gerbv(rel):
    """Reference: gerbv 2.x anti-aliased PNG export, coverage summed (GERBV_NAME)."""
    if not ref.gerbv_available():
        pytest.skip("gerbv not installed (Debian package gerbv)")
    p = corpus_file(rel)
    layer = read_corpus(rel)
    expect, dpi = ref.gerbv_area_of(p, layer.geometry)
    assert ref.relative_difference(layer.geometry.area, expect) < BAND, \
        f"{ref.GERBV_NAME} at {dpi} dpi: {expect:.3f} mm2, loopcheck {layer.geometry.area:.3f} mm2"


@pytest.mark.parametrize("rel", PYGERBER_FILES)
def test_corpus_area_agrees_with_pygerber(rel):
    """Reference: pygerber 2.4.3 raster renderer, pixels counted (PYGERBER_NAME)."""
    if not ref.pygerber_available():
        pytest.skip("pygerber not installed")
    p = corpus_file(rel)
    layer = read_corpus(rel)
    expect = ref.pygerber_area_mm2(p, dpmm=40)
    assert ref.relative_difference(layer.geometry.area, expect) < BAND, \
        f"{ref.PYGERBER_NAME}: {expect:.3f} mm2, loopcheck {layer.geometry.area:.3f} mm2"


def test_corpus_x2_net_attributes():
    layer = read_corpus("zero-length-lines/charliewatch-v2.panel-F_Cu.gbr")
    assert layer.attributes["FileFunction"] == "Copper,L1,Top"
    assert "Board_0-GND" in layer.net_copper
    assert all(not g.is_empty for g in layer.net_copper.values())
    assert len(layer.pin_flashes) > 100
    assert all(p.ref for p in layer.pin_flashes)
    assert sum(1 for p in layer.pin_flashes if p.pin) > 100     # fiducials carry a ref, no pin
    # net copper is part of the layer's copper
    gnd = layer.net_copper["Board_0-GND"]
    assert gnd.difference(layer.geometry).area < 1e-6 * gnd.area + 1e-9


@pytest.mark.parametrize("rel", ["kicad-older/chibi_2024-Edge.Cuts.gbr", "kicad-x2-tests/x2ap/Flashpads-Edge_Cuts.gbr",
                                 "diptrace/mainboard_BoardOutline.gbr", "eagle-newer/profile.gbr",
                                 "pcb-rnd/power-art.gko", "upverter/design_export.gko",
                                 "zero-length-lines/charliewatch-v2.panel-Edge_Cuts.gbr"])
def test_corpus_profiles(rel):
    outline = read_profile(corpus_file(rel))
    assert outline.is_valid and outline.area > 100


def test_corpus_open_outline_is_refused():
    # a fabrication drawing whose outline is not closed: the small closed loops in it are not a board
    # "no closed" is the phrase board assembly looks for to fall back to the board extent
    with pytest.raises(InputError, match="no closed board outline.*open"):
        read_profile(corpus_file("spec-examples/open_outline_altium.gbr"))


def test_corpus_sniff():
    gbr = corpus_file("geda/driver.top.gbr")
    assert sniff_gerber(gbr)
    assert not sniff_gerber(corpus_file("geda/driver.plated-drill.cnc"))


def test_cluster_union_and_cut_match_plain_shapely():
    import numpy as np

    from loopcheck.readers import fast_union as fu

    rng = np.random.default_rng(7)
    discs = [shapely.Point(x, y).buffer(r, quad_segs=4) for x, y, r in
             zip(rng.uniform(0, 50, 400), rng.uniform(0, 50, 400), rng.uniform(0.2, 2.0, 400))]
    plain = shapely.union_all(discs)
    mine = fu.union_many(discs)
    assert mine.is_valid and mine.symmetric_difference(plain).area < 1e-9
    cutters = [shapely.box(x, y, x + 3, y + 1) for x, y in zip(rng.uniform(0, 50, 60), rng.uniform(0, 50, 60))]
    cut_plain = shapely.difference(plain, shapely.union_all(cutters))
    cut_mine = fu.cut(mine, fu.union_many(cutters))
    assert cut_mine.is_valid and cut_mine.symmetric_difference(cut_plain).area < 1e-9


# ---------------------------------------------------------------- demo boards (when present)

BOARDS = Path(__file__).resolve().parents[1] / "boards"


def demo_copper_files() -> list[str]:
    """Copper layers of the demo boards: Gerber files whose X2 FileFunction says Copper."""
    out = []
    for p in sorted(BOARDS.glob("*/**/*")) if BOARDS.exists() else []:
        if p.is_file() and p.stat().st_size < 20_000_000 and sniff_gerber(p):
            head = p.read_text(errors="replace")[:4000]
            if "FileFunction,Copper" in head:
                out.append(str(p.relative_to(BOARDS)))
    return out


DEMO_COPPER = demo_copper_files()


@pytest.mark.parametrize("rel", DEMO_COPPER or ["(no demo boards yet)"])
def test_demo_board_area_agrees_with_gerbv_and_pygerber(rel):
    """References: GERBV_NAME and PYGERBER_NAME, each within 1.5 %."""
    if not DEMO_COPPER:
        pytest.skip("no demo boards under boards/ yet")
    p = BOARDS / rel
    layer = read_gerber(p)
    a = layer.geometry.area
    checked = 0
    if ref.gerbv_available():
        g, _ = ref.gerbv_area_of(p, layer.geometry)
        assert ref.relative_difference(a, g) < BAND, f"{ref.GERBV_NAME}: {g:.3f} vs {a:.3f} mm2"
        checked += 1
    if ref.pygerber_available():
        g = ref.pygerber_area_mm2(p, dpmm=40)
        assert ref.relative_difference(a, g) < BAND, f"{ref.PYGERBER_NAME}: {g:.3f} vs {a:.3f} mm2"
        checked += 1
    if not checked:
        pytest.skip("neither gerbv nor pygerber available")


def test_x2_net_copper_is_cut_only_by_clear_objects_that_come_after_it(tmp_path):
    # a 10 x 10 mm GND region, a clear 2 x 2 mm hole in it, then a VIA pad (r 0.5) in the hole:
    # the hole cuts GND's copper (drawn before it) but not the pad drawn after it
    body = (f"%ADD10C,1*%\n%TO.N,GND*%\nG36*\nX0Y0D02*\nX{mm(10)}Y0D01*\nY{mm(10)}D01*\nX0D01*\n"
            f"Y0D01*\nG37*\n%TD*%\n%LPC*%\nG36*\nX{mm(4)}Y{mm(4)}D02*\nX{mm(6)}D01*\nY{mm(6)}D01*\n"
            f"X{mm(4)}D01*\nY{mm(4)}D01*\nG37*\n%LPD*%\n%TO.N,VIA_NET*%\nD10*\nX{mm(5)}Y{mm(5)}D03*\n%TD*%")
    layer = read_gerber(gerber(tmp_path, body, header="%FSLAX46Y46*%\n%MOMM*%\n"))
    assert layer.net_copper["GND"].area == pytest.approx(100.0 - 4.0, rel=1e-9)
    assert layer.net_copper["VIA_NET"].area == pytest.approx(math.pi * 0.25, rel=1e-3)
    assert layer.geometry.area == pytest.approx(96.0 + math.pi * 0.25, rel=1e-3)
