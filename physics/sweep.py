"""Sweeps over one or two scene parameters on the engine's batch axis, and the
thresholds where the verdict changes, refined by root finding.

A parameter here is a quantity a coordinator varies: the consist's top speed,
the ambient wind speed or direction, roof friction, performer mass or drag
area, gust size, take-off effort. Each maps onto one column of the engine's
per-variant parameters, so a whole sweep is one batch.

Two performers run as one beat (physics.simulation.pair_batch): a verdict is
the worse of the two, a margin the smaller, a first failure the earlier (named
with its performer, `first_failures`). Mass, drag area and effort are one
performer's and are refused for a pair: the engine's rows keep each
performer's own (simulation.PERFORMER_FIELDS), so a sweep of them would vary
the first performer alone under a name that reads as both.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from physics.air import wind_vector
from physics.scene import Scene
from physics.scene_load import LIMITS
from physics.simulation import BatchResult, Variants, drag_calibration, simulate_batch, variants
from physics.verdict import NAMES, action_codes, first_failure_kinds, verdict_codes

# name -> (dimension for parsing and display, description)
PARAMETERS = {
    "speed": ("speed", "top speed of the consist (the whole speed profile scales)"),
    "wind_speed": ("speed", "ambient wind speed"),
    "wind_from": ("angle", "direction the ambient wind blows from (0 = ahead)"),
    "friction": ("dimensionless", "static roof friction of the performer's car (all friction scales)"),
    "mass": ("mass", "performer mass"),
    "drag_area": ("area", "performer's standing drag area"),
    "gust": ("speed", "peak of the largest gust (all gusts scale)"),
    "effort": ("length", "standing long jump (take-off speed scales with its square root)"),
}


class SweepError(ValueError):
    """A sweep that cannot be run as asked; the message says why."""


# The scene value each parameter stands for, whose limits (scene_load.LIMITS) a sweep keeps to.
_LIMITED_AS = {"speed": "speed", "wind_speed": "wind_speed", "friction": "roof_static", "mass": "mass",
               "drag_area": "drag_area", "gust": "gust", "effort": "standing_long_jump"}


def check_range(name: str, start: float, stop: float) -> None:
    """A sweep range a scene could give: finite, FROM below TO, within the value's own limits."""
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise SweepError(f"{name}: the range must be finite")
    if not stop > start:
        raise SweepError(f"{name}: FROM must be below TO")
    if name in _LIMITED_AS:
        low, high = LIMITS[_LIMITED_AS[name]]
        if start < low or stop > high:
            raise SweepError(f"{name}: the range {start:g}..{stop:g} (SI) leaves the {low:g}..{high:g} (SI) "
                             "a scene may give")


# Sweep parameters that are one performer's own: refused for two performers.
PER_PERFORMER = ("mass", "drag_area", "effort")


def pair_words(scene: Scene) -> str:
    """'worse of Dana and Eli' (what a pair's margins and verdicts are); '' for one performer."""
    return f"worse of {scene.cast[0].name} and {scene.cast[1].name}" if scene.pair else ""


def base_value(scene: Scene, name: str) -> float:
    """The scene's own value of a sweep parameter (SI)."""
    if scene.pair and name in PER_PERFORMER:
        raise SweepError(f"{name} is one performer's own value; with two performers "
                         f"({scene.cast[0].name}, {scene.cast[1].name}) roofbeat does not sweep it: vary speed, "
                         "wind_speed, wind_from, friction or gust, or change each performer's value in the "
                         "scene file")
    if name == "speed":
        return max(k.speed for k in scene.keyframes)
    if name == "wind_speed":
        return scene.air.wind_speed
    if name == "wind_from":
        return scene.air.wind_from
    if name == "friction":
        if scene.cars[scene.start_car].sole_static <= 0:
            raise SweepError("friction cannot be varied from a roof with no friction at all")
        return scene.cars[scene.start_car].sole_static
    if name == "mass":
        return scene.performer.mass
    if name == "drag_area":
        if scene.performer.drag_area is None:
            raise SweepError("drag_area can be varied only when the scene gives performer.drag_area")
        return scene.performer.drag_area
    if name == "gust":
        if not scene.air.gusts:
            raise SweepError("gust can be varied only when the scene has [[air.gusts]]")
        return max(g.peak for g in scene.air.gusts)
    if name == "effort":
        if scene.performer.standing_long_jump is None:
            raise SweepError("effort can be varied only when the scene gives performer.standing_long_jump")
        return scene.performer.standing_long_jump
    raise SweepError(f"unknown parameter {name!r}; expected one of {', '.join(PARAMETERS)}")


def apply(scene: Scene, v: Variants, name: str, values: np.ndarray) -> None:
    """Set parameter `name` to `values` (SI) in the rows of v, in place."""
    base = base_value(scene, name)
    p = v.params
    if name == "speed":
        if base <= 0:
            raise SweepError("speed cannot be varied for a consist that never moves")
        p["speed_scale"] = values / base
    elif name in ("wind_speed", "wind_from"):
        speed = values if name == "wind_speed" else scene.air.wind_speed
        direction = values if name == "wind_from" else scene.air.wind_from
        p["wind_x"], p["wind_y"] = wind_vector(speed, direction)
    elif name == "friction":
        v.roof_scale[:] = (np.asarray(values, dtype=float) / base)[:, None]
    elif name == "mass":
        p["mass"] = values
    elif name == "drag_area":
        p["drag_scale"] = drag_calibration(scene) * values / base
    elif name == "gust":
        p["gust_scale"] = values / base
    elif name == "effort":
        p["takeoff_scale"] = np.sqrt(values / base)


def first_failures(scene: Scene, result: BatchResult) -> list[str | None]:
    """The earliest failure kind per variant, or None; with two performers the kind of the earlier of the
    two with its performer's name, "slip (Eli)" (the one whose failure came first; the first on a tie)."""
    if not scene.pair:
        return first_failure_kinds(result.events)
    from physics.verdict import first_failure_time
    kinds = [first_failure_kinds(e) for e in result.pair.events]
    times = np.stack([first_failure_time(e) for e in result.pair.events])
    out = []
    for b in range(times.shape[1]):
        who = int(np.argmin(times[:, b]))
        out.append(None if not np.isfinite(times[who, b]) else f"{kinds[who][b]} ({scene.cast[who].name})")
    return out


def performer_verdicts(scene: Scene, result: BatchResult) -> dict:
    """Two performers: each one's own verdict code per variant, by name ({} for one performer)."""
    if not scene.pair:
        return {}
    return {part.name: action_codes(part, events, outcomes).max(axis=-1)
            for part, events, outcomes in zip(scene.cast, result.pair.events, result.pair.outcomes)}


def health(scene: Scene, result: BatchResult, level: int) -> np.ndarray:
    """A continuous margin per variant whose sign separates verdict <= level-1 from >= level.

    level 2 (holds at all vs fails): the grip margin (grip ratio - 1) and the
    lift margin where those decide; other failures count as -1, no failure +1.
    level 1 (holds with the factors vs not): the smallest margin relative to
    its required factor; any failure counts as -1.
    """
    m = result.outcomes
    codes = verdict_codes(scene, result.events, m)
    kinds = first_failure_kinds(result.events)
    s = scene.safety
    out = np.empty(codes.shape)
    for b in range(codes.size):
        grip = np.min(m[b]["grip_ratio_min"])
        if level == 2:
            if kinds[b] is None:
                out[b] = min(1.0, grip - 1.0) if math.isfinite(grip) else 1.0
            elif kinds[b] == "slip":
                out[b] = grip - 1.0
            elif kinds[b] == "lift":
                out[b] = np.min(m[b]["lift_ratio_min"])
            else:
                out[b] = -1.0
        else:
            if codes[b] == 2:
                out[b] = -1.0
                continue
            terms = [grip / s.grip_ratio - 1.0, (np.min(m[b]["balance_margin_min"]) - s.balance_margin) / 0.1,
                     np.min(m[b]["lift_ratio_min"]) / max(s.lift_ratio, 1e-9) - 1.0,
                     (np.min(m[b]["landing_margin_min"]) - s.landing_margin) / 0.5,
                     (np.min(m[b]["clearance_min"]) - s.clearance) / 0.5,
                     (np.min(m[b]["edge_margin_min"]) - s.edge_margin) / 0.5]
            finite = [t for t in terms if math.isfinite(t)]
            out[b] = min(finite) if finite else 1.0
    return out


@dataclass(frozen=True)
class Threshold:
    kind: str            # "holds with factors" or "holds at all"
    value: float         # SI, where the verdict changes
    tolerance: float     # SI
    below: str           # verdict just below
    above: str           # verdict just above
    failure_beyond: str | None


@dataclass(frozen=True)
class Sweep:
    name: str
    values: np.ndarray
    codes: np.ndarray
    result: BatchResult
    thresholds: list


def sweep_1d(scene: Scene, name: str, start: float, stop: float, points: int = 41,
             tolerance: float | None = None) -> Sweep:
    """Simulate `points` values of one parameter as one batch, then refine every
    verdict change to `tolerance` (SI; default 0.1 % of the range) with brentq."""
    if points < 3:
        raise SweepError("a sweep needs at least 3 points")
    check_range(name, start, stop)
    values = np.linspace(start, stop, points)
    result = _run(scene, name, values)
    codes = verdict_codes(scene, result.events, result.outcomes)
    tol = tolerance or 1e-3 * (stop - start)
    thresholds = []
    for label, level in LEVELS:
        ok = codes < level
        for i in np.nonzero(ok[:-1] != ok[1:])[0]:
            thresholds.append(_refine(scene, name, values[i], values[i + 1], level, label, tol))
    return Sweep(name, values, codes, result, thresholds)


def _run(scene: Scene, name: str, values: np.ndarray) -> BatchResult:
    v = variants(scene, len(values))
    apply(scene, v, name, np.asarray(values, dtype=float))
    return simulate_batch(scene, v)


def _refine(scene, name, a, b, level, label, tol) -> Threshold:
    def f(v):
        return float(health(scene, _run(scene, name, np.array([v])), level)[0])
    fa, fb = f(a), f(b)
    if fa == 0.0 or fb == 0.0 or np.sign(fa) == np.sign(fb):
        value = 0.5 * (a + b)
    else:
        value = brentq(f, a, b, xtol=tol)
    just = _run(scene, name, np.array([value - tol, value + tol]))
    codes = verdict_codes(scene, just.events, just.outcomes)
    kinds = first_failures(scene, just)
    return Threshold(label, value, tol, NAMES[codes[0]], NAMES[codes[1]], kinds[1] or kinds[0])


# The two levels a sweep's limits are given for: the verdict codes that count as holding at each.
LEVELS = (("holds with the required factors", 1), ("holds at all", 2))


@dataclass(frozen=True)
class Limit:
    """How far a swept value can go and still hold, at one level."""

    level: str                  # "holds with the required factors" or "holds at all"
    value: float | None         # the highest value that holds (SI), refined; None when none in the range holds
    bound: bool                 # the sweep's own end still holds: the limit lies beyond it, this is a bound
    all_below: bool             # every swept value below it holds too
    failure_beyond: str | None  # the first failure just above it


def limits(sweep: Sweep) -> list[Limit]:
    """The highest value that holds, for each level: the one reading of a sweep that `envelope`,
    the brief and the plots all use. With the factors never exceeds at all."""
    out = []
    for label, level in LEVELS:
        ok = sweep.codes < level
        if not ok.any():
            out.append(Limit(label, None, False, False, None))
            continue
        top = int(np.flatnonzero(ok)[-1])
        all_below = bool(ok[:top + 1].all())
        if top == len(ok) - 1:
            out.append(Limit(label, float(sweep.values[-1]), True, all_below, None))
            continue
        edge = [t for t in sweep.thresholds if t.kind == label and sweep.values[top] <= t.value
                <= sweep.values[top + 1]]
        value = edge[0].value if edge else float(sweep.values[top])
        out.append(Limit(label, value, False, all_below, edge[0].failure_beyond if edge else None))
    factors, at_all = out
    if factors.value is not None and at_all.value is not None and factors.value > at_all.value:
        # The same change of verdict refined on two margins: the smaller is what the physics supports.
        out[0] = Limit(factors.level, at_all.value, at_all.bound, factors.all_below, factors.failure_beyond)
    return out


def sweep_2d(scene: Scene, first: tuple, second: tuple, points: int = 25):
    """Verdict map over two parameters (one batch): values1, values2, codes (n2, n1)."""
    (n1, a1, b1), (n2, a2, b2) = first, second
    check_range(n1, a1, b1)
    check_range(n2, a2, b2)
    v1, v2 = np.linspace(a1, b1, points), np.linspace(a2, b2, points)
    grid1, grid2 = np.meshgrid(v1, v2)
    v = variants(scene, grid1.size)
    apply(scene, v, n1, grid1.ravel())
    apply(scene, v, n2, grid2.ravel())
    result = simulate_batch(scene, v)
    return v1, v2, verdict_codes(scene, result.events, result.outcomes).reshape(grid1.shape), result
