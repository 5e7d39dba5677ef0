"""The consist's motion: speed from keyframes, its acceleration and distance.

Speed is linear between keyframes and constant before the first and after the
last, so acceleration is piecewise constant and distance is exact (trapezoids).
"""

from __future__ import annotations

import numpy as np


def _arrays(keyframes) -> tuple[np.ndarray, np.ndarray]:
    t = np.array([k.time for k in keyframes], dtype=float)
    v = np.array([k.speed for k in keyframes], dtype=float)
    return t, v


def speed_at(keyframes, times) -> np.ndarray:
    """Consist speed (m/s) at times (s)."""
    t, v = _arrays(keyframes)
    return np.interp(np.asarray(times, dtype=float), t, v)


def acceleration_at(keyframes, times) -> np.ndarray:
    """Consist acceleration (m/s^2) at times (s); right-continuous at keyframes."""
    t, v = _arrays(keyframes)
    times = np.asarray(times, dtype=float)
    if t.size < 2:
        return np.zeros_like(times)
    slopes = np.diff(v) / np.diff(t)
    idx = np.searchsorted(t, times, side="right") - 1
    inside = (idx >= 0) & (idx < slopes.size)
    return np.where(inside, slopes[np.clip(idx, 0, slopes.size - 1)], 0.0)


def distance_travelled(keyframes, times) -> np.ndarray:
    """Distance s(t) (m) the consist has moved since t = 0."""
    t, v = _arrays(keyframes)
    times = np.asarray(times, dtype=float)
    knots = np.union1d(np.concatenate([[0.0], t[t > 0]]), [])
    knot_speed = np.interp(knots, t, v)
    cumulative = np.concatenate([[0.0], np.cumsum(np.diff(knots) * 0.5 * (knot_speed[1:] + knot_speed[:-1]))])
    idx = np.clip(np.searchsorted(knots, times, side="right") - 1, 0, knots.size - 1)
    base_t = knots[idx]
    v0 = knot_speed[idx]
    v1 = np.interp(times, t, v)
    return cumulative[idx] + (times - base_t) * 0.5 * (v0 + v1)
