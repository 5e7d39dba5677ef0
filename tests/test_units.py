"""Strict unit parsing at the edge (physics/units.py)."""

import math

import pytest

from physics.units import QuantityError, parse_quantity, parse_uncertain, to_display


@pytest.mark.parametrize("text, dimension, expected", [
    ("90 mph", "speed", 40.2336),          # 1 mph = 0.44704 m/s exactly (NIST SP 811)
    ("145 km/h", "speed", 145 / 3.6),
    ("24 m", "length", 24.0),
    ("6 ft", "length", 1.8288),            # 1 ft = 0.3048 m exactly
    ("75 kg", "mass", 75.0),
    ("0.7 m^2", "area", 0.7),
    ("30 deg", "angle", math.radians(30)),
    ("12 C", "temperature", 285.15),
    ("54 F", "temperature", (54 - 32) * 5 / 9 + 273.15),
    ("285 K", "temperature", 285.0),
])
def test_parses_to_si(text, dimension, expected):
    assert parse_quantity(text, dimension) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text, dimension", [
    ("1,5 m", "length"),   # decimal comma: pint would read something else silently
    ("2 3 m", "length"),   # two numbers
    ("5 m 3", "length"),
    ("5", "length"),       # unitless where a unit is needed
    (5, "length"),
    ("5 kg", "length"),    # wrong dimension
    ("fast", "speed"),
    ("12 furlongs per fortnightly", "speed"),
    ("0.7", "area"),
    ("nan m", "length"),
])
def test_rejects_loose_input(text, dimension):
    with pytest.raises(QuantityError):
        parse_quantity(text, dimension)


def test_error_says_what_was_expected():
    with pytest.raises(QuantityError, match="speed with units"):
        parse_quantity("90", "speed")


def test_uncertain_values():
    u = parse_uncertain("0.7 m^2 +/- 15%", "area")
    assert (u.value, u.spread) == pytest.approx((0.7, 0.105))
    u = parse_uncertain("0.55 +/- 0.1", "dimensionless")
    assert (u.value, u.spread) == pytest.approx((0.55, 0.1))
    assert parse_uncertain("3 m", "length").spread == 0.0


def test_display_units():
    assert to_display(40.2336, "speed", "imperial") == pytest.approx((90.0, "mph"))
    assert to_display(1.0, "length", "imperial")[0] == pytest.approx(1 / 0.3048)
    assert to_display(100 / 3.6, "speed", "metric")[0] == pytest.approx(100.0)
