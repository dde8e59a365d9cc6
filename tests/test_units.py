"""Unit strings at the edges."""

import pytest

from optimiser.formats.units import UnitError, format_quantity, parse_quantity


@pytest.mark.parametrize("text, dimension, expected", [
    ("47 uF", "capacitance", 47e-6),
    ("47uF", "capacitance", 47e-6),
    ("47 µF", "capacitance", 47e-6),
    ("120 mA", "current", 0.120),
    ("10 kohm", "resistance", 1e4),
    ("10 kΩ", "resistance", 1e4),
    ("2.2 H", "inductance", 2.2),
    ("5 %", "fraction", 0.05),
    ("50 Hz", "frequency", 50.0),
    ("3 A/mm^2", "current_density", 3e6),
    ("40 degC", "temperature", 40.0),
])
def test_parses_to_si(text, dimension, expected):
    assert parse_quantity(text, dimension) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text, dimension, reason", [
    ("6,3 V", "voltage", "decimal point"),
    ("47 u F", "capacitance", "no spaces"),
    ("1 k", "resistance", "Boltzmann"),
    ("3 h", "inductance", "hours"),
    ("nan V", "voltage", "number"),
    ("1e400 V", "voltage", "finite"),
    ("47 uF", "voltage", "not a voltage"),
    ("47", "capacitance", "no unit"),
    (47, "capacitance", "needs a unit"),
    ("40 K", "temperature", "degC"),
    ("2 MF", "capacitance", "megafarad"),
])
def test_rejects_traps_with_a_reason(text, dimension, reason):
    with pytest.raises(UnitError, match=reason):
        parse_quantity(text, dimension)


def test_bare_number_for_perveance():
    assert parse_quantity(7.07e-4, "perveance") == 7.07e-4


def test_format_engineering_prefixes():
    assert format_quantity(4.7e-5, "F") == "47 uF"
    assert format_quantity(0.15, "A") == "150 mA"
    assert format_quantity(1800, "ohm") == "1.8 kohm"
