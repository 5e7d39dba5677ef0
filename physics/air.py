"""Air: density from altitude and temperature, ambient wind and gusts.

Sources:
- ISA troposphere (US Standard Atmosphere 1976): sea level 288.15 K,
  101325 Pa, lapse rate 6.5 K/km, R = 287.053 J/(kg K).
- 1-cosine discrete gust, U = (U_ds/2)(1 - cos(pi s / H)) over 0 <= s <= 2H
  (the shape used in 14 CFR 25.341; the formula from memory), applied here in
  time: a gust of duration T peaks at T/2.
"""

from __future__ import annotations


import numpy as np

from physics import G

SEA_LEVEL_TEMPERATURE = 288.15  # K
SEA_LEVEL_PRESSURE = 101325.0  # Pa
LAPSE_RATE = 0.0065  # K/m, troposphere
GAS_CONSTANT_AIR = 287.053  # J/(kg K)
TROPOPAUSE = 11000.0  # m, geopotential
EARTH_RADIUS_1976 = 6356766.0  # m, the radius US Std Atm 1976 uses for geopotential height


def geopotential(altitude: float) -> float:
    """Geopotential height (m) of a geometric altitude above sea level (m)."""
    return EARTH_RADIUS_1976 * altitude / (EARTH_RADIUS_1976 + altitude)


def isa_temperature(altitude: float) -> float:
    """ISA temperature (K) at a geometric altitude (m) in the troposphere."""
    return SEA_LEVEL_TEMPERATURE - LAPSE_RATE * geopotential(altitude)


def isa_pressure(altitude: float) -> float:
    """ISA static pressure (Pa) at geometric altitude (m), troposphere barometric formula."""
    if not -1000.0 <= geopotential(altitude) <= TROPOPAUSE:
        raise ValueError(f"altitude {altitude} m is outside the troposphere model (-1000 m to 11000 m)")
    exponent = G / (GAS_CONSTANT_AIR * LAPSE_RATE)
    return SEA_LEVEL_PRESSURE * (isa_temperature(altitude) / SEA_LEVEL_TEMPERATURE) ** exponent


def density(altitude: float = 0.0, temperature: float | None = None) -> float:
    """Air density (kg/m^3): ISA pressure at altitude, ideal gas at temperature (K).

    Without a temperature the ISA temperature of that altitude is used, so the
    default is the ISA sea-level 1.225 kg/m^3.
    """
    t = isa_temperature(altitude) if temperature is None else temperature
    if t <= 0:
        raise ValueError(f"temperature must be above absolute zero, got {t} K")
    return isa_pressure(altitude) / (GAS_CONSTANT_AIR * t)


def wind_vector(speed, from_direction):
    """Ambient wind (x along track, y lateral-left), m/s, from speed and the
    direction it blows FROM, measured from the direction of travel toward the
    left: 0 is a headwind, pi a tailwind, pi/2 from the left side. Floats or arrays."""
    return (-speed * np.cos(from_direction), -speed * np.sin(from_direction))


def gust_profile(times: np.ndarray, gusts) -> tuple[np.ndarray, np.ndarray]:
    """Sum of 1-cosine gusts sampled at times (s): arrays (ux, uy) in m/s.

    Each gust has start (s), duration (s), peak (m/s) and from_direction (rad).
    """
    ux = np.zeros_like(times)
    uy = np.zeros_like(times)
    for gust in gusts:
        phase = (times - gust.start) / gust.duration
        inside = (phase >= 0.0) & (phase <= 1.0)
        shape = np.where(inside, 0.5 * gust.peak * (1.0 - np.cos(2.0 * np.pi * phase)), 0.0)
        gx, gy = wind_vector(1.0, gust.from_direction)
        ux += shape * gx
        uy += shape * gy
    return ux, uy
