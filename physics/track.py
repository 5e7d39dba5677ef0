"""The track under the consist: straights and curves with cant, and the ride of the car body.

A scene's `[[track]]` sections follow one another from where the lead car's
front is at t = 0 (the coordinate structures and lines use). A curve has a
radius, a cant (the outer rail raised, in length) and a side; an optional
transition at each of its ends changes curvature and cant linearly from the
straight to the full curve (a clothoid and a linear cant ramp). The engine reads
the track as pieces of linearly changing curvature and cant tilt
(records.TRACK) and evaluates them where the performer's car is.

The rail base (the distance between the rails' centres, over which cant tilts
the car) is the gauge plus 3.5 in: standard gauge, 56.5 in, gives the 60 in that
the 49 CFR 213.57 formula's constant 0.0007 implies (from memory).

Ride vibration is a seeded random process: a sum of sinusoids of random phase
with a flat spectrum over a frequency band, scaled to a stated RMS, across and
up and down, the same in every command for the same scene.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from physics import G
from physics.records import TRACK

STANDARD_GAUGE = 1.435          # m (4 ft 8.5 in)
RAIL_HEAD = 0.0889              # m: rail base = gauge + 3.5 in (see the module's docstring)
# The car body's roll per unit of cant deficiency on its suspension (the flexibility coefficient):
# about 0.2-0.4 for passenger coaches, a design limit near 0.4 (EN 14363's definition; values from
# memory). A scene may set its own.
DEFAULT_FLEXIBILITY = 0.25
# Ride levels, RMS car-body acceleration across and up and down (m/s^2), over a 0.5-10 Hz band (from
# memory, rounded). `rough` is held under the car-body limits of 49 CFR 299.313 (0.35 g peak lateral,
# 0.45 g peak-to-peak vertical), checked in the tests.
RIDE_LEVELS = {"smooth": (0.1, 0.15), "typical": (0.25, 0.3), "rough": (0.5, 0.45)}
RIDE_BAND = (0.5, 10.0)
RIDE_TONES = 64


@dataclass(frozen=True)
class TrackSection:
    length: float          # m
    radius: float          # m; inf for a straight
    cant: float            # m, the outer rail's rise
    turn: int              # +1 left, -1 right, 0 straight
    transition: float      # m at each end of a curve
    gauge: float           # m

    @property
    def rail_base(self) -> float:
        return self.gauge + RAIL_HEAD


@dataclass(frozen=True)
class Ride:
    lateral_rms: float     # m/s^2
    vertical_rms: float    # m/s^2
    band: tuple[float, float]  # Hz
    seed: int
    level: str             # smooth, typical, rough or "explicit"


def pieces(sections) -> np.ndarray:
    """The track as records.TRACK pieces: linear curvature (1/m, + left) and cant tilt (rad, + the roof
    low on the left) between s0 and s1 (m), with the heading (rad, + left) at s0."""
    rows = []
    s = 0.0
    for sec in sections:
        k = sec.turn / sec.radius if sec.turn and math.isfinite(sec.radius) else 0.0
        tilt = sec.turn * math.asin(min(sec.cant / sec.rail_base, 1.0)) if sec.turn else 0.0
        ramp = min(sec.transition, 0.5 * sec.length) if k else 0.0
        if ramp > 0:
            rows += [(s, s + ramp, 0.0, k, 0.0, tilt), (s + ramp, s + sec.length - ramp, k, k, tilt, tilt),
                     (s + sec.length - ramp, s + sec.length, k, 0.0, tilt, 0.0)]
        else:
            rows.append((s, s + sec.length, k, k, tilt, tilt))
        s += sec.length
    table = np.zeros(len(rows), TRACK)
    heading = 0.0
    for i, (s0, s1, k0, k1, t0, t1) in enumerate(rows):
        table[i] = (s0, s1, k0, k1, t0, t1, heading)
        heading += 0.5 * (k0 + k1) * (s1 - s0)
    return table


def ride_profile(times: np.ndarray, ride: Ride | None) -> tuple[np.ndarray, np.ndarray]:
    """(lateral, vertical) car-body acceleration from the ride (m/s^2) at `times` (s); zeros without one."""
    if ride is None:
        return np.zeros_like(times), np.zeros_like(times)
    rng = np.random.default_rng(ride.seed)
    out = []
    for rms in (ride.lateral_rms, ride.vertical_rms):
        f = np.linspace(ride.band[0], ride.band[1], RIDE_TONES)
        phase = rng.uniform(0.0, 2 * np.pi, RIDE_TONES)
        amplitude = rms * math.sqrt(2.0 / RIDE_TONES)     # each tone's RMS is amplitude / sqrt 2
        out.append(amplitude * np.sin(2 * np.pi * f[None, :] * times[:, None] + phase[None, :]).sum(axis=1))
    return out[0], out[1]


# ------------------------------------------------ hand formulas the tests hold the engine to
def cfr_213_57_max_speed(curve_degrees: float, cant_in: float, unbalance_in: float) -> float:
    """Maximum speed (mph) on a curve of `curve_degrees` with `cant_in` of cant and `unbalance_in` of cant
    deficiency: 49 CFR 213.57, V = sqrt((Ea + Eu) / (0.0007 D))."""
    return math.sqrt((cant_in + unbalance_in) / (0.0007 * curve_degrees))


def equilibrium_cant(rail_base: float, speed: float, radius: float) -> float:
    """Cant (m) at which a curve of `radius` is balanced at `speed`: E = G v^2 / (g R) (small angles)."""
    return rail_base * speed * speed / (G * radius)


def radius_of_degree_curve(degrees: float) -> float:
    """Radius (m) of a curve of `degrees` of curvature by the chord definition on 100 ft: R = 50 ft / sin(D/2)."""
    return 50 * 0.3048 / math.sin(math.radians(degrees) / 2)
