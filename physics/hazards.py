"""Overhead structures: how late a duck could start and still clear.

Found by bisection on the duck's start time (the action before it lengthens,
the duck shortens), re-simulating the beat up to the end of the duck each time
(no record), to half a frame.

With two performers each one's ducks are searched in its own actions; the beat
then runs whole (both performers' timelines stay as long as each other) and
only that performer's strikes count. A duck right after an interaction is not
searched: moving its start would move the interaction's end, which the scene
fixes.
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


def _in_pair(scene: Scene, who: int, index: int, start: float) -> Scene:
    """The pair beat with performer `who`'s duck `index` starting at `start`, the rest of its actions
    kept (the two timelines must stay as long as each other); the first performer's scene carries the cast."""
    part = scene.cast[who]
    shifted = _shifted(part, index, start).actions + part.actions[index + 1:]
    cast = list(scene.cast)
    cast[who] = dataclasses.replace(part, actions=shifted)
    return dataclasses.replace(cast[0], cast=tuple(cast), interactions=scene.interactions)


def _strikes(scene: Scene, who: int = 0) -> bool:
    result = simulate_batch(scene, variants(scene), once=True)
    events = result.pair.events[who] if scene.pair else result.events
    return not math.isnan(events[0, Event.STRIKE]["time"])


def latest_duck_starts(scene: Scene) -> list[dict]:
    """For every duck (or drop to prone) after another action, in a scene with
    structures: the latest start time that still clears, or None if none does.
    With two performers each row names its performer ("performer")."""
    if not scene.structures:
        return []
    out = []
    for who, part in enumerate(scene.performers):
        for index, action in enumerate(part.actions):
            if index == 0 or action.kind not in ("duck", "prone"):
                continue
            if scene.pair and part.actions[index - 1].interaction:
                out.append({"action": index + 1, "name": action.label, "performer": part.name,
                            "latest_start_s": None, "not_searched": "the action before it is an interaction, "
                            "whose times the scene fixes"})
                continue
            row = _latest(scene, who, index)
            if scene.pair:
                row["performer"] = part.name
            out.append(row)
    return out


def _latest(scene: Scene, who: int, index: int) -> dict:
    part = scene.performers[who]
    action = part.actions[index]

    def strikes(start: float) -> bool:
        if scene.pair:
            return _strikes(_in_pair(scene, who, index, start), who)
        return _strikes(_shifted(scene, index, start))
    earliest = part.actions[index - 1].start + 1e-3
    latest = action.end - 1e-3
    if strikes(earliest):
        return {"action": index + 1, "name": action.label, "latest_start_s": None}
    if not strikes(latest):
        return {"action": index + 1, "name": action.label, "latest_start_s": latest}
    lo, hi = earliest, latest
    tolerance = 0.5 / scene.frame_rate
    while hi - lo > tolerance:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if not strikes(mid) else (lo, mid)
    return {"action": index + 1, "name": action.label, "latest_start_s": lo,
            "planned_start_s": action.start, "spare_s": lo - action.start}
