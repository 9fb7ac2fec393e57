"""The hot loop's field solve (measure/loopfield.py) on boards: closed-form loops, the demo boards
and a tidy board with a ground pour beside its loop.

References (computed in loopcheck.physics.closedforms, each checked there against its source):
- Grover, "Inductance Calculations" (1946): rectangular loop of round wire with the flat strip's
  equivalent radius 0.2235 (w + t); two equal coaxial rectangles from parallel filaments.
- the image method for a loop over a conducting plane of another net (Paul, "Inductance: Loop
  and Partial", 2010, ch. 6): L = L_free - M(loop, image at twice the height).
"""

from __future__ import annotations

import shutil
import sys
from pathlib import Path

import pytest
from shapely.geometry import box

from loopcheck.measure.hotloop import build_loop, loop_inductance, measure_hot_loop
from loopcheck.measure.loopfield import solve_field_loop
from loopcheck.measure.netcopper import MeasureContext
from loopcheck.physics import closedforms as cf

from measure_boards import OZ1_M, make_board
from test_measure_hotloop import LOOP, W, rect_loop_copper, stage

ROOT = Path(__file__).resolve().parent.parent


def by_quantity(ms):
    return {m.quantity: m for m in ms}


def test_rectangular_loop_on_a_board_vs_grover():
    # Grover (1946), 30 x 15 mm of 0.5 mm strips: 78.39 nH; within 10 % (acceptance of issue 10)
    cu, pads = rect_loop_copper()
    ms = by_quantity(measure_hot_loop(MeasureContext(make_board([cu, []], pads)), stage()))
    L = ms["hot_loop.inductance"]
    assert L.detail["inductance_method"] == "field"
    ref = cf.rectangular_loop_inductance(30e-3, 15e-3, 0.2235 * (W * 1e-3 + OZ1_M))
    assert L.value * 1e-9 == pytest.approx(ref, rel=0.10)
    # the fast estimate rides along in the detail, within 15 % of the field solve
    assert L.detail["fast_estimate_nH"] == pytest.approx(L.value, rel=0.15)
    # where the inductance sits: copper legs and the parts, shares summing to 100 %
    shares = {s["part"]: s["share_pct"] for s in L.detail["inductance_shares"]}
    assert sum(shares.values()) == pytest.approx(100, abs=0.5)
    assert any(k.startswith("GND copper") for k in shares) and any(k.startswith("part C1") for k in shares)
    # the current centroid encloses about the loop's area
    assert L.detail["centroid_area_mm2"] == pytest.approx(450, rel=0.10)


def test_rectangular_loop_over_an_unrelated_plane_vs_image():
    # image method, Grover's rectangles: L_free - M(loop, image 2h below), h = 1.5 mm; within 10 %
    cu, pads = rect_loop_copper()
    b = make_board([cu, box(-10, -10, 40, 25)], pads, dielectric_mm=[1.5])
    ms = by_quantity(measure_hot_loop(MeasureContext(b), stage()))
    L = ms["hot_loop.inductance"]
    h = 1.5e-3 + OZ1_M             # between the copper mid-planes
    free = cf.rectangular_loop_inductance(30e-3, 15e-3, 0.2235 * (W * 1e-3 + OZ1_M))
    ref = free - cf.coaxial_rectangles_mutual(30e-3, 15e-3, 2 * h)
    assert L.value * 1e-9 == pytest.approx(ref, rel=0.10)
    assert L.value * 1e-9 < 0.85 * free                # the plane's eddy current lowers it
    # the fast method's assumptions say "fast"; the field one lists its mesh
    fast = MeasureContext(b, inductance_method="fast")
    mf = by_quantity(measure_hot_loop(fast, stage()))["hot_loop.inductance"]
    assert mf.detail["inductance_method"] == "fast"
    assert any("field solve window" in a for a in L.assumptions)


def test_current_density_and_centroid_are_in_the_detail():
    cu, pads = rect_loop_copper()
    ctx = MeasureContext(make_board([cu, []], pads))
    loop = build_loop(ctx, LOOP)
    res = solve_field_loop(ctx, loop)
    dens = res.detail["current_density_a_per_mm"]
    assert set(dens) == {"top"}
    # 1 A in a 0.5 mm strip: about 2 A/mm of sheet current along the strips
    mags = sorted((c[4] ** 2 + c[5] ** 2) ** 0.5 for c in dens["top"])
    assert 1.0 < mags[len(mags) // 2] < 4.0
    nets = {c["net"] for c in res.detail["current_centroid"]}
    assert nets == {"VIN", "SW", "GND"}


def _demo_loop(folder: Path):
    sys.path.insert(0, str(ROOT / "benchmarks"))
    from loopsolve_common import board_loops
    return board_loops(str(folder))


@pytest.fixture(scope="module")
def demo_values():
    out = {}
    for name in ("led-driver-tidy", "led-driver-sprawl", "sync-buck-4layer"):
        ctx, loops = _demo_loop(ROOT / "boards" / name)
        st, loop = loops[0]
        out[name] = (solve_field_loop(ctx, loop).inductance_h, loop_inductance(ctx, loop)[0])
    return out


def test_four_layer_demo_below_the_tidy_two_layer(demo_values):
    assert demo_values["sync-buck-4layer"][0] < demo_values["led-driver-tidy"][0]
    assert demo_values["led-driver-tidy"][0] < demo_values["led-driver-sprawl"][0]


@pytest.mark.parametrize("name", ["led-driver-tidy", "led-driver-sprawl", "sync-buck-4layer"])
def test_field_and_fast_agree_on_the_demo_boards(demo_values, name):
    # issue 10: the fast method agrees with the field solve within 15 % on every demo board
    field, fast = demo_values[name]
    assert fast == pytest.approx(field, rel=0.15)


def test_fast_reads_above_the_field_solve_on_the_tidy_demo_where_current_crowds(demo_values):
    # the tidy loop is small (about 5 x 8 mm) in 1.5-2 mm wide copper: at the edge rates the
    # current crowds to the copper's inner edges, which the fast method (uniform current on the
    # traced centre line) does not see, so it cannot read below the field solve there
    field, fast = demo_values["led-driver-tidy"]
    assert fast > field


def test_ground_pour_beside_the_tidy_loop_lowers_its_inductance(tmp_path, demo_values):
    # issue 10: a top-layer ground pour beside the loop is more return copper, not a mirror;
    # the loop must read lower (or the same), never higher
    sys.path.insert(0, str(ROOT / "boards"))
    import demo_geometry
    import make_demo_boards
    from loopcheck.synth import write_fab

    b = demo_geometry.led_tidy()
    b.pour("GND", 1, box(26.2, 5.0, 33.5, 18.5))
    folder = tmp_path / "tidy-pour"
    folder.mkdir()
    write_fab(b.board(), folder)
    (folder / "loopcheck.toml").write_text(make_demo_boards.PROJECTS["led-driver-tidy"])
    ctx, loops = _demo_loop(folder)
    st, loop = loops[0]
    with_pour = solve_field_loop(ctx, loop).inductance_h
    assert with_pour <= demo_values["led-driver-tidy"][0] * 1.005
    shutil.rmtree(folder)


def test_mesh_halved_changes_a_wide_copper_loop_by_under_3_percent():
    # issue 10: "halving the mesh changes the loop inductance by less than 3 %". An 8 x 5 mm
    # loop in 2 mm wide copper (width a quarter of the loop's span: the current crowds to the
    # inner edges, which is where a coarse mesh errs); default mesh against the cells halved.
    from measure_boards import smd, square_pad, trace
    from shapely.ops import unary_union
    a, b, w = 8.0, 5.0, 2.0
    vin = unary_union([trace([(0, b), (a, b)], w), square_pad(0, b, w), square_pad(a, b, w)])
    sw = trace([(a, b - 1.2 - w / 2), (a, 1.2 + w / 2)], w)
    gnd = unary_union([trace([(a, 0), (0, 0), (0, b - w - 1.0)], w), square_pad(a, 0, w),
                       square_pad(0, b - w - 1.0, w)])
    pads = [smd("VIN", "C1", 1, 0, b), smd("GND", "C1", 2, 0, b - w - 1.0), smd("VIN", "Q1", 1, a, b),
            smd("SW", "Q1", 2, a, b - 1.2 - w / 2), smd("SW", "D1", 1, a, 1.2 + w / 2), smd("GND", "D1", 2, a, 0)]
    ctx = MeasureContext(make_board([[vin, sw, gnd], []], pads))
    loop = build_loop(ctx, LOOP)
    default = solve_field_loop(ctx, loop)
    # the same mesh plan (window, feature lines, growth) with every cell halved
    halved = solve_field_loop(ctx, loop, scale=0.5, plan_index=default.detail["mesh"]["plan_step"])
    assert halved.detail["mesh"]["fine_mm"] == pytest.approx(default.detail["mesh"]["fine_mm"] / 2, rel=0.01)
    assert halved.detail["mesh"]["cells"] > 3 * default.detail["mesh"]["cells"]
    assert halved.inductance_h == pytest.approx(default.inductance_h, rel=0.03)
    # crowding matters here: the fast method's uniform current on the centre line reads higher
    assert loop_inductance(ctx, loop)[0] > 1.05 * default.inductance_h
