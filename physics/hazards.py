"""Overhead structures: how late a duck could start and still clear.

Found by bisection on the duck's start time (the action before it lengthens,
the duck shortens), re-simulating the beat up to the end of the duck each time
(no record), to half a frame.
"""

from __future__ import annotations

import dataclasses
import math

from physics.records import Event
from physics.scene import Scene
from physics.simulation import simulate_batch, variants


def _shifted(scene: Scene, index: int, start: float) -> Scene:
    """The beat up to the end of duck `index`, the duck starting at `start`: what comes after
    the duck cannot change whether it clears, so it is not simulated."""
    actions = list(scene.actions[:index + 1])
    before, duck = actions[index - 1], actions[index]
    actions[index - 1] = dataclasses.replace(before, duration=start - before.start)
    actions[index] = dataclasses.replace(duck, start=start, duration=duck.end - start)
    return dataclasses.replace(scene, actions=tuple(actions))


def _strikes(scene: Scene) -> bool:
    events = simulate_batch(scene, variants(scene), once=True).events
    return not math.isnan(events[0, Event.STRIKE]["time"])


def latest_duck_starts(scene: Scene) -> list[dict]:
    """For every duck (or drop to prone) after another action, in a scene with
    structures: the latest start time that still clears, or None if none does."""
    if not scene.structures:
        return []
    out = []
    for index, action in enumerate(scene.actions):
        if index == 0 or action.kind not in ("duck", "prone"):
            continue
        earliest = scene.actions[index - 1].start + 1e-3
        latest = action.end - 1e-3
        if _strikes(_shifted(scene, index, earliest)):
            out.append({"action": index + 1, "name": action.label, "latest_start_s": None})
            continue
        if not _strikes(_shifted(scene, index, latest)):
            out.append({"action": index + 1, "name": action.label, "latest_start_s": latest})
            continue
        lo, hi = earliest, latest
        tolerance = 0.5 / scene.frame_rate
        while hi - lo > tolerance:
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if not _strikes(_shifted(scene, index, mid)) else (lo, mid)
        out.append({"action": index + 1, "name": action.label, "latest_start_s": lo,
                    "planned_start_s": action.start, "spare_s": lo - action.start})
    return out
