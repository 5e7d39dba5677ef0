"""Random numbers and the turbulent part of the ambient wind.

Random numbers: the splitmix64 generator (Steele, Lea & Flood 2014, "Fast
splittable pseudorandom number generators", OOPSLA; constants as in Vigna's
public-domain reference code) and the Box-Muller transform to normal deviates.
The stream depends only on the scene's turbulence seed, so every command that
runs the same scene at the same values meets the same air.

Turbulence: a first-order Gauss-Markov process along the track with standard
deviation sigma. The body crosses eddies of length scale L at its speed through
the air, so successive samples dt apart correlate by exp(-dt |V - u| / L)
(Taylor's frozen-turbulence hypothesis), with |V - u| at least 1 m/s. Samples
lie on a fixed clock of TURBULENCE_STEP and are interpolated, so a finer engine
step sees the same air.
"""

from __future__ import annotations

import math
from collections import namedtuple

import numpy as np

from physics.engine.jit import kernel, small

TURBULENCE_STEP = 1.0 / 60.0   # s between samples of the process
START_CORRELATION = 0.9        # correlation of the first two samples (any value in (0, 1) keeps the variance)
_MASK = 0xFFFFFFFFFFFFFFFF

# Carried state of the process: generator state, the two samples around now,
# a spare normal deviate, and the interpolated value at the current step (m/s).
Turbulence = namedtuple("Turbulence", "rng knot_time knot_prev knot_next spare has_spare value")


@small
def splitmix64(state):
    """Next state and the generator's 64-bit output (uint64 arithmetic wraps)."""
    state = (state + np.uint64(0x9E3779B97F4A7C15)) & np.uint64(_MASK)
    z = state
    z = ((z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)) & np.uint64(_MASK)
    z = ((z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)) & np.uint64(_MASK)
    return state, z ^ (z >> np.uint64(31))


@small
def uniform(state):
    """Next state and a uniform deviate in (0, 1) from the top 53 bits of the output."""
    state, z = splitmix64(state)
    return state, (float(z >> np.uint64(11)) + 0.5) * (1.0 / 9007199254740992.0)


@small
def normal_pair(state):
    """Next state and two independent standard normal deviates (Box-Muller)."""
    state, u1 = uniform(state)
    state, u2 = uniform(state)
    r = math.sqrt(-2.0 * math.log(u1))
    return state, r * math.cos(2.0 * math.pi * u2), r * math.sin(2.0 * math.pi * u2)


@small
def start_turbulence(seed, sigma):
    """The process at t = 0 for a scene's seed and intensity (sigma 0: still)."""
    rng = np.uint64(seed) * np.uint64(2654435761) + np.uint64(12345)
    if sigma <= 0.0:
        return Turbulence(rng, 0.0, 0.0, 0.0, 0.0, False, 0.0)
    # Each of the first two samples takes the first deviate of a fresh pair.
    rng, z1, unused = normal_pair(rng)
    rng, z2, unused = normal_pair(rng)
    first = sigma * z1
    second = first * START_CORRELATION + sigma * math.sqrt(1.0 - START_CORRELATION**2) * z2
    return Turbulence(rng, 0.0, first, second, 0.0, False, first)


@kernel
def advance_turbulence(tb, t, relative_speed, sigma, length):
    """The process at time t (s), the body moving through the air at relative_speed (m/s)."""
    if sigma <= 0.0:
        return tb
    rng, knot_time, prev, nxt, spare, has_spare = tb.rng, tb.knot_time, tb.knot_prev, tb.knot_next, tb.spare, \
        tb.has_spare
    while t >= knot_time + TURBULENCE_STEP:
        knot_time += TURBULENCE_STEP
        e = math.exp(-TURBULENCE_STEP * max(relative_speed, 1.0) / length)
        if has_spare:
            z = spare
            has_spare = False
        else:
            rng, z, spare = normal_pair(rng)
            has_spare = True
        prev = nxt
        nxt = nxt * e + sigma * math.sqrt(1.0 - e * e) * z
    w = (t - knot_time) / TURBULENCE_STEP
    return Turbulence(rng, knot_time, prev, nxt, spare, has_spare, prev + (nxt - prev) * w)
