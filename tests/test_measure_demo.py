"""Issue 5 acceptance on the demo boards (invented scenarios, boards/): the sprawling LED-driver
layout against the tidy one, and the 4-layer synchronous buck against the tidy 2-layer board."""

from pathlib import Path

import pytest

from loopcheck.analysis import analyse
from loopcheck.load import load_board
from loopcheck.project import load_project

BOARDS = Path(__file__).resolve().parents[1] / "boards"
_cache: dict[str, object] = {}


def analysis(name):
    folder = BOARDS / name
    if not (folder / "loopcheck.toml").exists():
        pytest.skip(f"demo board {name} not built (boards/make_demo_boards.py)")
    if name not in _cache:
        proj = load_project(folder)
        _cache[name] = analyse(load_board(proj), proj)
    return _cache[name]


def value(an, q):
    ms = [m for m in an.measurements if m.quantity == q]
    assert ms, q
    assert ms[0].value is not None, (q, ms[0].not_made)
    return ms[0].value


def test_sprawl_hot_loop_area_at_least_three_times_tidy():
    tidy, sprawl = analysis("led-driver-tidy"), analysis("led-driver-sprawl")
    assert value(sprawl, "hot_loop.area") >= 3 * value(tidy, "hot_loop.area")


def test_sprawl_input_cap_at_least_three_times_farther():
    tidy, sprawl = analysis("led-driver-tidy"), analysis("led-driver-sprawl")
    assert value(sprawl, "input_cap.path_length") >= 3 * value(tidy, "input_cap.path_length")


def test_kelvin_error_sprawl_above_2_tidy_below_half_percent():
    tidy, sprawl = analysis("led-driver-tidy"), analysis("led-driver-sprawl")
    assert value(sprawl, "sense.kelvin_error") > 2.0
    assert value(tidy, "sense.kelvin_error") < 0.5


def test_four_layer_loop_inductance_below_tidy_two_layer():
    tidy, four = analysis("led-driver-tidy"), analysis("sync-buck-4layer")
    assert value(four, "hot_loop.inductance") < value(tidy, "hot_loop.inductance")


@pytest.mark.parametrize("name", ["led-driver-tidy", "led-driver-sprawl", "sync-buck-4layer"])
def test_demo_board_measured_without_integrity_problems(name):
    an = analysis(name)
    assert an.integrity == [] and an.measurement_stopped is None
    assert len(an.stages) == 1
    for m in an.measurements:
        assert (m.value is None) == (m.not_made is not None)
    if name == "sync-buck-4layer":
        nm = {m.quantity: m.not_made for m in an.measurements if m.value is None}
        assert nm == {"sense.kelvin_error": "no sense resistor in this stage",
                      "sense.pair_area": "no sense resistor in this stage"}
    else:
        assert all(m.value is not None for m in an.measurements)
