"""SI prefixes in and out."""

import pytest

from fitkit.errors import SetupError
from fitkit.units import format_quantity, parse_quantity


@pytest.mark.parametrize(
    "text, unit, expected",
    [
        ("4.7k", "ohm", 4700.0),
        ("4k7", "ohm", 4700.0),  # resistor code, IEC 60062 (from memory)
        ("2R2", "ohm", 2.2),
        ("100 ohm", "ohm", 100.0),
        ("12p", "F", 12e-12),
        ("12 pF", "F", 12e-12),
        ("1.5MHz", "Hz", 1.5e6),
        ("330u", "H", 330e-6),
        ("1e-9", "F", 1e-9),
    ],
)
def test_parse_quantity(text, unit, expected):
    assert parse_quantity(text, unit) == pytest.approx(expected)


@pytest.mark.parametrize("text", ["abc", "4.7q", "", "1..2k"])
def test_parse_quantity_refuses_nonsense(text):
    with pytest.raises(SetupError, match="cannot read"):
        parse_quantity(text, "ohm")


@pytest.mark.parametrize(
    "value, unit, stderr, expected",
    [
        (98.71e-6, "H", 0.42e-6, "98.71 uH +/- 0.42 uH"),
        (63.04, "", 1.53, "63.0 +/- 1.5"),
        (1.5e6, "Hz", None, "1.5 MHz"),
        (4.97, "ohm", 0.123, "4.97 ohm +/- 0.12 ohm"),
        (1.0e-9, "F", 2.3e-12, "1.0000 nF +/- 0.0023 nF"),
        (47.0, "ohm", None, "47 ohm"),
    ],
)
def test_format_quantity(value, unit, stderr, expected):
    assert format_quantity(value, unit, stderr) == expected
