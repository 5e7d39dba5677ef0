"""What became of the body after the beat's first failure, read from a recorded run.

After a failure the engine goes on with the physics (a slide runs out, a
topple goes down, a fall ends on the ground); this module turns the record of
that into phases a person can read: sliding so far, down on the roof, in the
air, on the ground beside or between the cars, struck. With two performers
each one's phases run from its own first failure (`cast_phases`).
"""

from __future__ import annotations

import math

import numpy as np

from physics.records import Event, Mode

PHASE_WORDS = {
    Mode.PLANTED: "stopped on the roof",
    Mode.SLIDING: "sliding",
    Mode.DOWN: "down on the roof",
    Mode.FLIGHT: "in the air",
    Mode.GONE: "off the consist",
}


def _first_failure_time(trajectory) -> float:
    from physics.verdict import first_failure_time
    return float(first_failure_time(trajectory.events))


def phases(trajectory) -> list[dict]:
    """Phases of the body from the first failure to the end of the beat (empty when the beat holds)."""
    start = _first_failure_time(trajectory)
    if not math.isfinite(start):
        return []
    k0 = trajectory.index_at(start)
    mode = trajectory.field("mode")[k0:]
    if mode.size == 0:
        return []
    cuts = np.concatenate([[0], np.flatnonzero(np.diff(mode)) + 1, [mode.size]])
    out = []
    for a, b in zip(cuts[:-1], cuts[1:]):
        out.append(_phase(trajectory, k0 + a, k0 + b - 1, int(mode[a])))
    return out


def cast_phases(trajectory) -> list[list[dict]]:
    """Each performer's phases from its own first failure (cast order; one list for one performer)."""
    return [phases(tr) for tr in (trajectory,) + tuple(trajectory.partners)]


def _phase(tr, first: int, last: int, mode: int) -> dict:
    times = tr.times
    phase = {"state": PHASE_WORDS[Mode(mode)], "from_s": float(times[first]), "to_s": float(times[last])}
    if mode in (Mode.SLIDING, Mode.DOWN, Mode.PLANTED):
        phase["distance_m"] = _moved(tr, first, last)
        speed = np.hypot(tr.field("slide_speed")[first:last + 1], tr.field("slide_speed_y")[first:last + 1])
        phase["peak_speed_ms"] = float(np.nanmax(speed)) if speed.size else 0.0
    elif mode == Mode.GONE:
        struck = not math.isnan(tr.events[Event.STRIKE]["time"]) and tr.events[Event.STRIKE]["time"] <= times[first]
        if struck:
            phase["state"] = "struck: out of the run"
        else:
            com = tr.com_path3[first]
            widest = max(car.width for car in tr.scene.cars)
            phase["state"] = ("on the ground beside or between the cars" if abs(com[1]) <= 0.5 * widest else
                              f"on the ground beside the track, {'left' if com[1] > 0 else 'right'} of the cars")
            phase["ground_x_m"] = float(com[0] + tr.field("distance")[first])
            phase["ground_y_m"] = float(com[1])
    return phase


def _moved(tr, first: int, last: int) -> float:
    """How far the contact moved over the roof between two steps (m), along and across the track."""
    x, y = tr.field("pivot_x"), tr.field("pivot_y")
    return float(math.hypot(x[last] - x[first], y[last] - y[first]))


def state_at(trajectory, index: int) -> dict | None:
    """The body's phase at a step after the first failure (with `so_far_m` while sliding); None before it."""
    start = _first_failure_time(trajectory)
    t = trajectory.times[index]
    if not math.isfinite(start) or t < start:
        return None
    for phase in phases(trajectory):
        if phase["from_s"] <= t <= phase["to_s"]:
            if phase["state"] == "sliding":
                k0 = trajectory.index_at(phase["from_s"])
                phase["so_far_m"] = _moved(trajectory, k0, index)
            return phase
    return None
