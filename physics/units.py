"""The one unit registry of roofbeat, and strict parsing of quantities.

Every physical value in a scene is a string such as "90 mph" or "12 C". It is
parsed here once, its dimension checked, and returned as an SI float. Nothing
from pint enters the step loop. pint on its own is lenient ("1,5 m" or
"2 3 m" can parse to something); the grammar below is deliberately strict.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import pint

def _registry() -> pint.UnitRegistry:
    # pint can cache its parsed definitions on disk, which halves start-up;
    # without a writable cache folder it works the same, only slower.
    try:
        return pint.UnitRegistry(cache_folder=":auto:")
    except (OSError, ValueError, TypeError):
        return pint.UnitRegistry()


ureg = _registry()
ureg.define("kph = kilometer / hour")

# A plain decimal number, then one space-separated unit expression that starts
# with a letter, a degree sign or a percent sign. No thousands separators,
# decimal commas, fractions or second numbers.
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_QUANTITY_RE = re.compile(rf"^(?P<num>{_NUMBER})\s*(?P<unit>[A-Za-z°µ%][A-Za-z0-9°µ%/*^ ._²³-]*)?$")
MAX_QUANTITY = 64  # characters: "145 km/h" or "0.72 m^2 +/- 15%" fit many times over
_UNCERTAIN_RE = re.compile(r"^(?P<value>.+?)\s*(?:\+/-|±)\s*(?P<spread>.+)$")

# Temperatures in scenes are written the way people say them. pint reads "C"
# as coulomb and "F" as farad, so these are mapped before pint sees them.
_TEMPERATURE_UNITS = {
    "c": "degC", "°c": "degC", "degc": "degC", "celsius": "degC", "deg c": "degC",
    "f": "degF", "°f": "degF", "degf": "degF", "fahrenheit": "degF", "deg f": "degF",
    "k": "kelvin", "kelvin": "kelvin",
}

# Dimension name -> (pint dimensionality string, SI unit to convert to).
DIMENSIONS = {
    "length": ("[length]", "m"),
    "speed": ("[length] / [time]", "m/s"),
    "acceleration": ("[length] / [time] ** 2", "m/s**2"),
    "jerk": ("[length] / [time] ** 3", "m/s**3"),
    "time": ("[time]", "s"),
    "mass": ("[mass]", "kg"),
    "area": ("[length] ** 2", "m**2"),
    "density": ("[mass] / [length] ** 3", "kg/m**3"),
    "angle": ("", "radian"),
    "frequency": ("1 / [time]", "Hz"),
    "temperature": ("[temperature]", "kelvin"),
    "force": ("[mass] * [length] / [time] ** 2", "N"),
    "stiffness": ("[mass] / [time] ** 2", "N/m"),
    "impulse": ("[mass] * [length] / [time]", "N*s"),
    "dimensionless": ("", ""),
}

EXAMPLES = {
    "length": '"24 m" or "6 ft"',
    "speed": '"90 mph", "145 km/h" or "12 m/s"',
    "acceleration": '"0.8 m/s^2"',
    "jerk": '"2 m/s^3"',
    "time": '"2.5 s"',
    "mass": '"75 kg" or "165 lb"',
    "area": '"0.7 m^2"',
    "density": '"1.2 kg/m^3"',
    "angle": '"30 deg"',
    "frequency": '"2 Hz"',
    "temperature": '"12 C", "54 F" or "285 K"',
    "force": '"4 kN" or "900 lbf"',
    "stiffness": '"20 kN/m" or "1400 lbf/ft"',
    "impulse": '"8 N s" or "2 lbf s"',
    "dimensionless": "a plain number such as 0.55",
}


class QuantityError(ValueError):
    """A value that is not a quantity of the expected dimension."""


@dataclass(frozen=True)
class Uncertain:
    """A value with a symmetric spread: value +/- spread, both SI floats."""

    value: float
    spread: float


def _expected(dimension: str) -> str:
    article = "an" if dimension[0] in "aeiou" else "a"
    return f"{article} {dimension} with units, e.g. {EXAMPLES[dimension]}"


def parse_quantity(text: object, dimension: str) -> float:
    """Parse a string like "145 km/h" strictly and return its SI value.

    Raises QuantityError with a message saying what was expected.
    """
    if dimension == "dimensionless":
        return _parse_plain_number(text)
    if isinstance(text, bool) or not isinstance(text, str):
        raise QuantityError(f"expected {_expected(dimension)} as a quoted string, got {_short(text)}")
    if len(text) > MAX_QUANTITY:
        raise QuantityError(f"expected {_expected(dimension)}, got a text of {len(text)} characters "
                            f"(at most {MAX_QUANTITY})")
    text = text.strip()
    match = _QUANTITY_RE.match(text)
    if not match or not match.group("unit"):
        raise QuantityError(f"expected {_expected(dimension)}, got {text!r}")
    number = float(match.group("num"))
    if re.search(r"(?:^|\s)[\d.]+(?:\s|$)", match.group("unit")):
        raise QuantityError(f"expected one number and a unit, got {text!r}")
    unit_text = match.group("unit").strip().replace("²", "^2").replace("³", "^3")
    if dimension == "temperature":
        unit_text = _TEMPERATURE_UNITS.get(unit_text.lower(), unit_text)
    try:
        quantity = ureg.Quantity(number, unit_text)
        dimensionality, si_unit = DIMENSIONS[dimension]
        if dimension == "angle":
            # Radians are dimensionless in pint, and so is a percent: an angle
            # must be made of radians (degrees, arc minutes, turns...).
            if str(ureg.get_root_units(quantity.units)[1]) != "radian":
                raise QuantityError(f"expected {_expected(dimension)}, got {text!r} (not an angle unit)")
        elif not quantity.check(dimensionality):
            raise QuantityError(f"expected {_expected(dimension)}, got {text!r} (a {quantity.dimensionality})")
        value = float(quantity.to(si_unit).magnitude)
    except QuantityError:
        raise
    except Exception:  # pint fails in many ways on odd unit text ("m-", "m/", "m^-0"): all mean the same
        raise QuantityError(f"unknown unit {unit_text!r} in {text!r}; expected {_expected(dimension)}") from None
    if not math.isfinite(value):
        raise QuantityError(f"expected a finite {dimension}, got {text!r}")
    return value


def _short(value: object) -> str:
    """A value for a message: its repr, cut short."""
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _parse_plain_number(value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise QuantityError(f"expected {EXAMPLES['dimensionless']}, got {_short(value)}")
    if not math.isfinite(float(value)):
        raise QuantityError(f"expected a finite number, got {value!r}")
    return float(value)


def parse_uncertain(text: object, dimension: str) -> Uncertain:
    """Parse "0.7 m^2 +/- 15%" or "0.55 +/- 0.1" into value and spread (SI).

    A bare value (no +/-) has zero spread. A spread written in percent is a
    fraction of the value.
    """
    if isinstance(text, str):
        if len(text) > 2 * MAX_QUANTITY:
            raise QuantityError(f"expected a value +/- a spread such as \"0.72 m^2 +/- 15%\", got a text of "
                                f"{len(text)} characters (at most {2 * MAX_QUANTITY})")
        match = _UNCERTAIN_RE.match(text)
        if match:
            value = _parse_value_text(match.group("value"), dimension)
            spread_text = match.group("spread").strip()
            if spread_text.endswith("%"):
                spread = abs(value) * _percent(spread_text, text)
            else:
                spread = _parse_value_text(spread_text, dimension)
            if spread < 0:
                raise QuantityError(f"the spread in {text!r} must not be negative")
            return Uncertain(value, spread)
    return Uncertain(_parse_value_text(text, dimension), 0.0)


def _percent(spread_text: str, whole: str) -> float:
    number = spread_text[:-1].strip()
    if not re.fullmatch(_NUMBER, number):
        raise QuantityError(f"expected a percentage such as '15%' after +/- in {whole!r}")
    return float(number) / 100.0


def _parse_value_text(text: object, dimension: str) -> float:
    if dimension == "dimensionless" and isinstance(text, str):
        if not re.fullmatch(r"\s*" + _NUMBER + r"\s*", text):
            raise QuantityError(f"expected {EXAMPLES['dimensionless']}, got {text!r}")
        return float(text)
    return parse_quantity(text, dimension)


def to_display(value_si: float, dimension: str, system: str) -> tuple[float, str]:
    """Convert an SI value to the display unit of 'metric' or 'imperial'."""
    unit = DISPLAY_UNITS[system][dimension]
    si_unit = _DISPLAY_DIMENSIONS[dimension][1]
    if dimension == "temperature":
        return float(ureg.Quantity(value_si, "kelvin").to(unit).magnitude), DISPLAY_SYMBOLS[unit]
    return float(ureg.Quantity(value_si, si_unit).to(unit).magnitude), DISPLAY_SYMBOLS[unit]


DISPLAY_UNITS = {
    "metric": {"length": "m", "speed": "km/h", "wind": "m/s", "force": "N", "mass": "kg",
               "acceleration": "m/s**2", "area": "m**2", "temperature": "degC", "time": "s"},
    "imperial": {"length": "ft", "speed": "mph", "wind": "mph", "force": "lbf", "mass": "lb",
                 "acceleration": "ft/s**2", "area": "ft**2", "temperature": "degF", "time": "s"},
}
# Display-only dimensions: a wind speed shows in its own unit; forces are never parsed.
_DISPLAY_DIMENSIONS = {**DIMENSIONS, "wind": DIMENSIONS["speed"]}
DISPLAY_SYMBOLS = {"m": "m", "km/h": "km/h", "m/s": "m/s", "N": "N", "kg": "kg", "m/s**2": "m/s²",
                   "m**2": "m²", "degC": "°C", "s": "s", "ft": "ft", "mph": "mph", "lbf": "lbf",
                   "lb": "lb", "ft/s**2": "ft/s²", "ft**2": "ft²", "degF": "°F"}


def display(value_si: float, dimension: str, system: str, spec: str = ".2f") -> str:
    """A value in the display units of 'metric' or 'imperial', with its unit: "1.23 m", "4.04 ft"."""
    value, unit = to_display(value_si, dimension, system)
    return f"{value:{spec}} {unit}"
