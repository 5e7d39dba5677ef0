"""The rehearsal ladder: how a beat is built up in speed over rehearsals, and the abort limits a crew
can watch on set.

Rungs run from walking pace to the planned top speed (the whole speed profile scales, as in the
envelope); each rung's margins are set beside the factors the scene requires, and the first rung
where one falls short is named. The abort limits are the envelope's own limits, found by the same
sweep and root finding over stated ranges (so `roofbeat envelope` over the same range gives the same
numbers): the highest top speed, and the highest ambient wind at the scene's wind direction, at which
the beat still holds with the required factors. For a rehearsal on a stationary vehicle, the wind
machine's air speed that gives the performer the planned speed's apparent wind.

With two performers every margin is the worse of the two, a rung's verdict the
worse of theirs (each one's own is kept beside it) and a first failure names
its performer.
"""

from __future__ import annotations

import math

import numpy as np

from physics.air import wind_vector
from physics.scene import Scene
from physics.scene_load import LIMITS
from physics.roof_air import without_roof_air
from physics.sweep import (SweepError, _run, base_value, first_failures, limits, pair_words, performer_verdicts,
                           sweep_1d)
from physics.verdict import FACTORS, NAMES, shortfalls, verdict_codes

# The first rung: walking pace, 5 km/h (common practice, no source: build up from a walk).
WALKING_PACE = 5 / 3.6
# The sweeps behind the abort limits: top speed from walking pace to 2.5 times the planned (at least
# 10 m/s), ambient wind from calm to 40 m/s (a strong storm); points before refinement.
SPEED_RANGE_FACTOR = 2.5
WIND_TOP = 40.0
POINTS = 41


def speed_range(scene: Scene) -> tuple[float, float]:
    """Walking pace to 2.5 times the planned top speed (at least 10 m/s), within what a scene may give."""
    top = base_value(scene, "speed")
    return WALKING_PACE, min(max(SPEED_RANGE_FACTOR * top, 10.0), LIMITS["speed"][1])


def rung_speeds(scene: Scene, rungs: int) -> np.ndarray:
    top = base_value(scene, "speed")
    if top <= WALKING_PACE:
        return np.array([top])
    return np.linspace(WALKING_PACE, top, rungs)


def build_ladder(scene: Scene, rungs: int = 5) -> dict:
    """The ladder's rungs, the first rung short of the factors, the abort limits and the wind machine
    (JSON-ready, SI)."""
    if base_value(scene, "speed") <= 0:
        raise SweepError("a ladder needs a consist that moves")
    speeds = rung_speeds(scene, rungs)
    result = _run(scene, "speed", speeds)
    codes = verdict_codes(scene, result.events, result.outcomes)
    kinds = first_failures(scene, result)
    each = performer_verdicts(scene, result)
    rows = []
    for i, speed in enumerate(speeds):
        worst = _worst(result.outcomes[i])
        rows.append({"rung": i + 1, "speed_ms": float(speed), "verdict": NAMES[codes[i]],
                     "first_failure": kinds[i],
                     "margins": {words: (float(worst[field]) if math.isfinite(worst[field]) else None)
                                 for field, _, words, _ in FACTORS},
                     "below_required": shortfalls(scene.safety, worst)})
        if each:
            rows[-1]["performers"] = {name: NAMES[codes_of[i]] for name, codes_of in each.items()}
    if scene.air.roof_flow is not None:
        # Each rung's verdict with the free stream at every height beside the profile's (the bound).
        uniform = without_roof_air(scene)
        bound = _run(uniform, "speed", speeds)
        for row, code in zip(rows, verdict_codes(uniform, bound.events, bound.outcomes)):
            row["uniform_air_verdict"] = NAMES[code]
    short = next((r["rung"] for r in rows if r["verdict"] != "holds"), None)
    out = {"scene": scene.title, "units": "SI", "rungs": rows, "first_rung_short": short,
           "scaling_note": scaling_note(scene),
           "abort_limits": abort_limits(scene), "wind_machine": wind_machine(scene)}
    if scene.pair:
        out["performers"] = [part.name for part in scene.cast]
        out["margins_are"] = pair_words(scene)
    return out


def _worst(outcomes):
    """The worst of each margin over the beat's actions, as one outcome row (inf where never met)."""
    row = outcomes[0].copy()
    for field, _, _, _ in FACTORS:
        row[field] = np.min(outcomes[field])
    return row


def scaling_note(scene: Scene) -> str | None:
    """When the speed changes within the beat: the sweeps scale the whole profile with its keyframe times
    kept, so its braking and acceleration scale too; a beat that fails on its braking rate can fail at a
    lower top speed braked as hard. None for a steady speed."""
    speeds = [k.speed for k in scene.keyframes]
    if scene.speed_log is None and (len(speeds) < 2 or max(speeds) == min(speeds)):
        return None
    return ("the speed limits scale the whole speed profile with its times kept, so its braking and "
            "acceleration scale with it: braked as hard as planned from a lower speed, the beat can still fail "
            "(check such a rung with its own keyframes)")


def abort_limits(scene: Scene) -> dict:
    """The highest top speed and the highest ambient wind at the scene's direction that still hold with
    the required factors, with the sweep ranges that found them."""
    out = {}
    low, high = speed_range(scene)
    for name, start, stop in (("speed", low, high), ("wind_speed", 0.0, WIND_TOP)):
        sweep = sweep_1d(scene, name, start, stop, points=POINTS)
        factored, at_all = limits(sweep)
        out[name] = {"range": [start, stop], "points": POINTS, "holds_with_factors": factored.value,
                     "limits": [{"level": lim.level, "value": lim.value, "bound": lim.bound,
                                 "all_below": lim.all_below, "failure_beyond": lim.failure_beyond}
                                for lim in (factored, at_all)]}
    out["wind_from_deg"] = math.degrees(scene.air.wind_from)
    if scene.air.roof_flow is not None:
        # The air over the roof's coefficients are soft: the same limits with the free stream at every
        # height (the bound) stand beside them.
        bound = abort_limits(without_roof_air(scene))
        out["uniform_air"] = {name: bound[name]["holds_with_factors"] for name in ("speed", "wind_speed")}
    return out


def wind_machine(scene: Scene) -> dict:
    """The air speed a wind machine must give a performer on a stationary vehicle for the apparent
    wind of the planned top speed in the scene's mean wind, and the direction it must blow from
    (deg, 0 from ahead, + from the left)."""
    top = base_value(scene, "speed")
    wx, wy = wind_vector(scene.air.wind_speed, scene.air.wind_from)
    ax, ay = wx - top, wy
    speed = math.hypot(ax, ay)
    return {"air_speed_ms": speed, "from_deg": math.degrees(math.atan2(-ay, -ax)) if speed > 0 else 0.0,
            "note": "a wind machine on a stationary vehicle lacks the air's profile over a moving roof, "
                    "the car's motion, its jolts and its curves: it rehearses the wind, not the ride"}
