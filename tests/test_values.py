"""One reader of part values for the whole program (loopcheck.values.parse_value)."""

import pytest

from loopcheck.values import parse_value


@pytest.mark.parametrize("text, value", [
    ("0R1", 0.1), ("1R5", 1.5), ("0R068", 0.068), ("R068", 0.068), ("10R", 10.0),
    ("68mR", 0.068), ("68m", 0.068), ("68mΩ", 0.068), ("100m", 0.1),
    ("4k7", 4700.0), ("1k5", 1500.0), ("2.2k", 2200.0), ("2.2kΩ", 2200.0),
    ("2G2", 2.2e9), ("1M", 1e6),
    ("10uF", 10e-6), ("4.7 uF", 4.7e-6), ("4u7", 4.7e-6), ("100n", 100e-9), ("100nF", 100e-9),
    ("22µH", 22e-6), ("22μH", 22e-6), ("22uH", 22e-6),
    ("0.068", 0.068), ("1.5e-3", 1.5e-3), ("1.5 ohm", 1.5), ("1.5ohms", 1.5), (" 47 ", 47.0),
    (0.068, 0.068), (3, 3.0),
])
def test_usual_spellings(text, value):
    assert parse_value(text) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text", [None, "", "DNP", "junk", "F", "1.2k5", "4k7k", "k", True])
def test_no_value(text):
    assert parse_value(text) is None


def test_one_parser_everywhere():
    # the netlist-side (stage detection) and the measurement-side readers are the same function
    from loopcheck import stages
    from loopcheck.measure import common, sense
    assert stages.parse_value is parse_value
    assert sense.parse_value is parse_value
    assert not hasattr(common, "parse_value")
