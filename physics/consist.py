"""The consist's motion: speed from keyframes, its acceleration and distance.

Speed runs straight between keyframes and is constant before the first and
after the last, except that real brakes and drives change the acceleration at a
finite rate (jerk): each change of acceleration at a keyframe is spread over
|change| / jerk, centred on the keyframe (narrowed to half the time to the
neighbouring keyframes where they are closer, so the jerk there is higher).
The speed after each blend is exactly the straight-line one; at a keyframe it
differs from the written speed by change * duration / 8 (2 cm/s for a change of
1 m/s^2 at the default jerk). Acceleration is piecewise linear, so speed and
distance are integrated exactly in closed form.
"""

from __future__ import annotations

import numpy as np

# m/s^3: passenger rail drives and brakes change their acceleration gently; about 1-2 m/s^3 is
# the comfort limit used for them (from memory). A scene may state its own (`motion.jerk`).
DEFAULT_JERK = 2.0


def _blends(keyframes, jerk: float):
    """(first speed, blend starts s_k, durations d_k, acceleration changes da_k) of a profile."""
    t = np.array([k.time for k in keyframes], dtype=float)
    v = np.array([k.speed for k in keyframes], dtype=float)
    if t.size < 2:
        return (v[0] if v.size else 0.0), np.zeros(0), np.zeros(0), np.zeros(0)
    slopes = np.concatenate([[0.0], np.diff(v) / np.diff(t), [0.0]])
    change = np.diff(slopes)                                  # at each keyframe
    gaps = np.diff(t)
    room = np.minimum(np.concatenate([[np.inf], gaps]), np.concatenate([gaps, [np.inf]]))
    duration = np.minimum(np.abs(change) / max(jerk, 1e-9), room)
    duration = np.where(change == 0.0, 0.0, duration)
    return v[0], t - duration / 2, duration, change


def _ramp_integrals(times, start, duration):
    """For each blend: the ramp (0 -> 1) and its first and second integrals over time, at `times`."""
    x = times[:, None] - start[None, :]
    d = np.maximum(duration, 1e-12)[None, :]
    inside = (x > 0) & (x < d)
    after = x >= d
    ramp = np.where(after, 1.0, np.where(inside, x / d, 0.0))
    r1 = np.where(after, x - d / 2, np.where(inside, x * x / (2 * d), 0.0))
    r2 = np.where(after, d * d / 6 + (x - d) * d / 2 + (x - d) ** 2 / 2,
                  np.where(inside, x ** 3 / (6 * d), 0.0))
    return ramp, r1, r2   # a step (duration 0) gives the step's own integrals


def _scalar_or_array(fn):
    """A scalar time gives a float, an array of times an array."""
    def wrapped(keyframes, times, jerk: float = DEFAULT_JERK):
        out = fn(keyframes, np.atleast_1d(np.asarray(times, dtype=float)), jerk)
        return float(out[0]) if np.ndim(times) == 0 else out
    wrapped.__doc__, wrapped.__name__ = fn.__doc__, fn.__name__
    return wrapped


@_scalar_or_array
def speed_at(keyframes, times, jerk: float = DEFAULT_JERK) -> np.ndarray:
    """Consist speed (m/s) at times (s)."""
    v0, start, duration, change = _blends(keyframes, jerk)
    if not change.size:
        return np.full(times.shape, v0)
    _, r1, _ = _ramp_integrals(times, start, duration)
    return v0 + r1 @ change


@_scalar_or_array
def acceleration_at(keyframes, times, jerk: float = DEFAULT_JERK) -> np.ndarray:
    """Consist acceleration (m/s^2) at times (s)."""
    _, start, duration, change = _blends(keyframes, jerk)
    if not change.size:
        return np.zeros(times.shape)
    ramp, _, _ = _ramp_integrals(times, start, duration)
    return ramp @ change


@_scalar_or_array
def distance_travelled(keyframes, times, jerk: float = DEFAULT_JERK) -> np.ndarray:
    """Distance s(t) (m) the consist has moved since t = 0."""
    v0, start, duration, change = _blends(keyframes, jerk)
    if not change.size:
        return v0 * times
    _, _, r2 = _ramp_integrals(times, start, duration)
    _, _, r2_zero = _ramp_integrals(np.zeros(1), start, duration)
    return v0 * times + (r2 - r2_zero) @ change
