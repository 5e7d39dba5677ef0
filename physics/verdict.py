"""From events and outcomes to verdicts: holds, marginal or fails, per action and overall.

One rule, used by `check`, by batches (sweeps, Monte Carlo) and by the
preview's running verdict:

- the beat is assessed up to its first failure (physics.records.FAILURES);
  an action that had not ended by then fails (the failure happened in it, or
  before it and the action was never assessed);
- an action that ended before any failure is marginal when one of its margins
  is below the factor the scene requires ([safety]), else it holds;
- the beat's verdict is its worst action's;
- the preview's running verdict (verdict_so_far) judges an action once it has
  ended, sooner from the step a margin recorded at every step falls short, and a
  failure from the moment it happens.
"""

from __future__ import annotations

import math

import numpy as np

from physics.records import EVENT_WORDS, FAILURES, Event
from physics.scene import Scene
from physics.units import display
from physics.wind_scales import beaufort

HOLDS, MARGINAL, FAILS = 0, 1, 2
SIDE_WORDS = {1: "left", -1: "right"}   # events.side, in the direction of travel
NAMES = ("holds", "marginal", "fails")

# Margin (records.OUTCOME field) -> the [safety] factor it is held to and its words.
FACTORS = (
    ("grip_ratio_min", "grip_ratio", "grip ratio", ""),
    ("balance_margin_min", "balance_margin", "balance margin", "m"),
    ("lift_ratio_min", "lift_ratio", "lift ratio", ""),
    ("landing_margin_min", "landing_margin", "landing margin", "m"),
    ("clearance_min", "clearance", "overhead clearance", "m"),
    ("edge_margin_min", "edge_margin", "side-edge margin", "m"),
)
_FAILURE_INDEX = [int(k) for k in FAILURES]


def _finite(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def first_failure_time(events: np.ndarray) -> np.ndarray:
    """Time of the first failure per variant (inf when none): events (..., kinds) -> (...)."""
    times = events["time"][..., _FAILURE_INDEX]
    return np.where(np.isnan(times), np.inf, times).min(axis=-1)


def below_factors(safety, outcomes: np.ndarray) -> np.ndarray:
    """Whether any margin is below the scene's required factor: outcomes (...) -> bool (...).

    Margins never reached stay at +inf and so never count as below.
    """
    below = np.zeros(outcomes.shape, dtype=bool)
    for field, factor, _, _ in FACTORS:
        below |= outcomes[field] < getattr(safety, factor)
    return below


def action_codes(scene: Scene, events: np.ndarray, outcomes: np.ndarray, until: float = math.inf) -> np.ndarray:
    """Verdict code per action: events (..., kinds), outcomes (..., actions) -> (..., actions).

    `until`: judge the beat as far as time `until` only (the preview's running
    verdict): later failures and actions not yet started do not count.
    """
    first = first_failure_time(events)
    first = np.where(first <= until, first, np.inf)[..., None]
    starts, ends = beat_spans(scene)
    codes = np.where(below_factors(scene.safety, outcomes), MARGINAL, HOLDS)
    # An action in which a tether arrested the body held only by its rigging: at least marginal.
    arrested = events["time"][..., int(Event.ARRESTED)]
    arrested = np.where(np.isnan(arrested) | (arrested > until), np.inf, arrested)[..., None]
    codes = np.where((arrested >= starts) & (arrested < ends), np.maximum(codes, MARGINAL), codes)
    codes = np.where(starts > until, HOLDS, codes)
    return np.where(first < ends, FAILS, codes)


def beat_spans(scene: Scene) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (s) of each action a verdict is judged over; a failure after a performer's last action's
    planned end still belongs to it (its end is inf). Two performers read as one beat: the first
    performer's actions, then the second's (simulation.pair_batch)."""
    starts, ends = [], []
    for part in scene.performers:
        ends += [a.end for a in part.actions[:-1]] + [np.inf]
        starts += [a.start for a in part.actions]
    return np.array(starts), np.array(ends)


def verdict_codes(scene: Scene, events: np.ndarray, outcomes: np.ndarray, until: float = math.inf) -> np.ndarray:
    """The beat's verdict code per variant (the worst action's)."""
    return action_codes(scene, events, outcomes, until).max(axis=-1)


def first_failure_kinds(events: np.ndarray) -> list[str | None]:
    """The earliest failure kind per variant of a batch, or None."""
    times = events["time"][:, _FAILURE_INDEX]
    return [None if np.all(np.isnan(row)) else EVENT_WORDS[FAILURES[int(np.nanargmin(row))]] for row in times]


ARRESTED_WORDS = "arrested by its rigging, peak tether force"


def arrest_shortfall(scene: Scene, events: np.ndarray, action: int) -> list[dict]:
    """Why an action the rigging arrested the body in is marginal: the arrest, with the tether's peak
    force beside the limit on the body ([] when no arrest happened in it)."""
    row = events[Event.ARRESTED]
    t = float(row["time"])
    last = action == len(scene.actions) - 1
    a = scene.actions[action]
    if math.isnan(t) or not (a.start <= t and (t < a.end or last)):
        return []
    return [{"margin": ARRESTED_WORDS, "value": float(row["demand"]), "required": float(row["available"]),
             "unit": "N"}]


def shortfalls(safety, outcome) -> list[dict]:
    """The margins of one action below their required factors: why it is marginal."""
    out = []
    for field, factor, words, unit in FACTORS:
        value, required = float(outcome[field]), float(getattr(safety, factor))
        if value < required:
            out.append({"margin": words, "value": value, "required": required, "unit": unit})
    return out


def event_list(scene: Scene, events: np.ndarray) -> list[dict]:
    """Events (the first of each kind) in time order, as plain dicts."""
    out = []
    for kind in Event:
        row = events[kind]
        if math.isnan(row["time"]):
            continue
        car = int(row["car"])
        out.append({
            "kind": EVENT_WORDS[kind],
            "failure": kind in FAILURES,
            "time_s": float(row["time"]),
            "car": car + 1 if car >= 0 else None,
            "car_name": scene.cars[car].name if car >= 0 else None,
            "side": SIDE_WORDS.get(int(row["side"])),
            "x_car_m": float(row["x_car"]),
            "x_ground_m": float(row["x_ground"]),
            "demand": float(row["demand"]),
            "available": float(row["available"]),
            "detail": describe(scene, kind, row),
        })
    return sorted(out, key=lambda e: e["time_s"])


def apart(a: float, b: float, digits: int = 3) -> tuple[str, str]:
    """a and b with as many decimals (3 to 6) as it takes to tell them apart: a slip by 0.0004 reads
    'needed 0.6004, roof gives 0.6000', not a tie."""
    for n in range(digits, 7):
        x, y = f"{a:.{n}f}", f"{b:.{n}f}"
        if x != y:
            break
    return x, y


def describe(scene: Scene, kind: Event, row) -> str:
    """The numbers behind an event in plain words, in the scene's display units."""
    demand, available = float(row["demand"]), float(row["available"])
    u = scene.units
    side = SIDE_WORDS.get(int(row["side"]))
    if kind == Event.SLIP:
        toward = f", sideways toward the {side} edge" if side else ""
        need, have = apart(demand, available)
        return f"grip needed {need}, roof gives {have}{toward}"
    if kind == Event.OFF_SIDE:
        how = "lying" if demand < 0.01 else f"moving across the roof at {display(demand, 'wind', u)}"
        return f"went over the {side} side edge, {how}"
    if kind in (Event.TOPPLE, Event.RECOVERY_STEP) and side:
        return (f"extrapolated centre of mass {display(abs(demand - available), 'length', u, '.3f')} outside "
                f"the support, sideways toward the {side} edge")
    if kind in (Event.TOPPLE, Event.RECOVERY_STEP):
        side = "front" if demand > available else "rear"
        return (f"extrapolated centre of mass {display(abs(demand - available), 'length', u, '.3f')} outside "
                f"the support, toward the consist's {side}")
    if kind == Event.LIFT:
        return (f"the roof no longer bears the body: contact force {display(-demand, 'force', u, '.0f')} "
                "(wind lifting or tipping it off)")
    if kind == Event.FALL:
        return _fall(scene, row)
    if kind == Event.STRIKE:
        return (f"body point {display(demand - available, 'length', u)} above the soffit at "
                f"{display(available, 'length', u)}")
    if kind == Event.LINE:
        return (f"{display(demand, 'length', u)} from the wire, exclusion distance "
                f"{display(available, 'length', u)}")
    if kind == Event.HARD_LANDING:
        return (f"touchdown {display(demand, 'wind', u)} relative to the roof, friction and a step absorb "
                f"{display(available, 'wind', u)}")
    if kind == Event.MISSED_LANDING:
        return _missed_landing(scene, row)
    if kind == Event.TAKEOFF:
        return f"take-off at {display(demand, 'wind', u)} relative to the roof"
    if kind == Event.ARRESTED:
        return (f"a tether stopped the body: peak tether force {display(demand, 'force', u, '.0f')} "
                f"(limit on the body {display(available, 'force', u, '.0f')})")
    if kind == Event.ANCHOR_OVERLOAD:
        return f"peak anchor load {display(demand, 'force', u, '.0f')}, limit {display(available, 'force', u, '.0f')}"
    if kind == Event.BODY_FORCE:
        return (f"the tethers pull the body with up to {display(demand, 'force', u, '.0f')}, limit "
                f"{display(available, 'force', u, '.0f')}")
    if kind == Event.TOUCHDOWN:
        return (f"touchdown at {display(demand, 'wind', u)} along and {display(available, 'wind', u)} down, "
                "relative to the roof")
    return ""


def _fall(scene: Scene, row) -> str:
    """Where a body came down off the roofs: in which gap or past which end, how far from the nearest roof."""
    x = float(row["x_car"])
    u = scene.units
    cars = sorted(scene.cars, key=lambda c: c.rear_x)            # rear to front
    if x < cars[0].rear_x:
        return f"came down {display(cars[0].rear_x - x, 'length', u)} past the rear end of {cars[0].name}"
    if x > cars[-1].front_x:
        return f"came down {display(x - cars[-1].front_x, 'length', u)} past the front end of {cars[-1].name}"
    for behind, ahead in zip(cars, cars[1:]):
        if behind.front_x <= x <= ahead.rear_x:
            near, gap = (behind, x - behind.front_x) if x - behind.front_x <= ahead.rear_x - x \
                else (ahead, ahead.rear_x - x)
            return (f"came down in the gap between {behind.name} and {ahead.name}, "
                    f"{display(gap, 'length', u)} from {near.name}'s end")
    return "came down off the roof"


def _missed_landing(scene: Scene, row) -> str:
    target = scene.cars[int(row["target_car"])]
    landed = scene.cars[int(row["car"])].name if row["car"] >= 0 else "no roof"
    x = float(row["x_car"])
    # Cars run front (x = 0) to rear (negative x): ahead of the target is past it for a rearward jump.
    ahead = x > target.front_x
    jump = next((a for a in scene.actions if a.kind == "jump" and a.landing_car is not None
                 and scene.cars[a.landing_car] is target), None)
    toward_front = jump is None or jump.toward > 0
    words = "past" if ahead == toward_front else "short of"
    return f"came down on {landed}, {display(float(row['demand']), 'length', scene.units)} {words} {target.name}"


def summarise(scene: Scene, events: np.ndarray, outcomes: np.ndarray) -> dict:
    """Verdict per action and overall, first failure, events (JSON-ready)."""
    evs = event_list(scene, events)
    failures = [e for e in evs if e["failure"]]
    first_time = failures[0]["time_s"] if failures else math.inf
    codes = action_codes(scene, events, outcomes)
    actions = []
    for a, action in enumerate(scene.actions):
        m = outcomes[a]
        row = {
            "name": action.label,
            "kind": action.kind,
            "start_s": action.start,
            "end_s": action.end,
            "assessed": action.start <= first_time,
            "verdict": NAMES[codes[a]],
            "failures": [e["kind"] for e in failures if action.start <= e["time_s"] < action.end
                         or (a == len(scene.actions) - 1 and e["time_s"] >= action.end)],
            "marginal_because": (shortfalls(scene.safety, m) + arrest_shortfall(scene, events, a)
                                 if codes[a] == MARGINAL else []),
            # Every margin below its factor while the action was assessed (before any failure), failing or not.
            "below_required": shortfalls(scene.safety, m),
            "grip_ratio_min": _finite(m["grip_ratio_min"]),
            "grip_demand_max": float(m["grip_demand_max"]),
            "balance_margin_min_m": _finite(m["balance_margin_min"]),
            "lift_ratio_min": _finite(m["lift_ratio_min"]),
            "lean_max_deg": math.degrees(m["lean_max"]),
            "apparent_wind_max_ms": float(m["apparent_wind_max"]),
            # At the centre of mass's height in the air over the roof; the free stream's when it is off.
            "body_wind_max_ms": float(m["body_wind_max"]),
            "beaufort_max": beaufort(float(m["apparent_wind_max"])),
            "drag_max_n": float(m["drag_max"]),
            "landing_margin_min_m": _finite(m["landing_margin_min"]),
            "clearance_min_m": _finite(m["clearance_min"]),
            "takeoff_s": _finite(m["takeoff_time"]),
            "touchdown_s": _finite(m["touchdown_time"]),
            "recovery_steps": int(m["recovery_steps"]),
            "frontal_balance_margin_min_m": _finite(m["frontal_margin_min"]),
            "edge_margin_min_m": _finite(m["edge_margin_min"]),
            "lateral_accel_max_ms2": float(m["lateral_accel_max"]),
        }
        actions.append(row)
    overall = NAMES[int(codes.max())] if len(codes) else "holds"
    return {"verdict": overall, "first_failure": failures[0] if failures else None, "events": evs,
            "actions": actions, "required_factors": required_factors(scene.safety),
            "air_over_roof": "on" if scene.air.roof_flow is not None else "off"}


def beat_summary(trajectory) -> dict:
    """summarise() of a recorded run. With two performers: the beat's verdict is the worse of the two,
    its first failure the earlier (with the performer's name), its events and actions both performers'
    in time order and in cast order (each with "performer"), and `performers` gives each one's own
    name, verdict, first failure, actions and events; `interactions` what each interaction did."""
    scene = trajectory.scene
    if not scene.pair:
        return summarise(scene, trajectory.events, trajectory.outcomes)
    from physics.partners import interaction_summary
    per = []
    for part, tr in zip(scene.cast, (trajectory,) + trajectory.partners):
        s = summarise(part, tr.events, tr.outcomes)
        for row in s["events"] + s["actions"] + ([s["first_failure"]] if s["first_failure"] else []):
            row["performer"] = part.name
        per.append({"name": part.name, "verdict": s["verdict"], "first_failure": s["first_failure"],
                    "actions": s["actions"], "events": s["events"]})
    failures = [p["first_failure"] for p in per if p["first_failure"]]
    first = min(failures, key=lambda e: e["time_s"]) if failures else None
    return {"verdict": NAMES[max(NAMES.index(p["verdict"]) for p in per)], "first_failure": first,
            "events": sorted((e for p in per for e in p["events"]), key=lambda e: e["time_s"]),
            "actions": [a for p in per for a in p["actions"]], "required_factors": required_factors(scene.safety),
            "air_over_roof": "on" if scene.air.roof_flow is not None else "off", "performers": per,
            "interactions": interaction_summary(scene, trajectory.links)}


def required_factors(safety) -> dict:
    return {words: {"value": float(getattr(safety, factor)), "unit": unit} for _, factor, words, unit in FACTORS}


def verdict_so_far(scene: Scene, events: np.ndarray, outcomes: np.ndarray, t: float, record=None,
                   times=None) -> tuple[str, list[dict]]:
    """The preview's running verdict at time t, and why it is marginal so far.

    The same rule as the beat's verdict, applied as the beat unfolds: a failure
    counts from the moment it happens; an action's margins count once it has
    ended (its minima are over the whole action, so judging it earlier would
    show a shortfall before it happened). Given the run's `record` and `times`,
    the action under way is marginal from the step one of the margins the record
    carries at every step falls short (running_shortfalls). At the end of the beat
    this is the beat's verdict. `because`: the shortfalls of the marginal actions.
    """
    codes = action_codes(scene, events[None], outcomes[None], until=t)[0]
    first = float(first_failure_time(events[None])[0])
    failed = math.isfinite(first) and first <= t
    ends = np.array([a.end for a in scene.actions])
    finished = ends <= t + 1e-9
    codes = np.where(finished | (codes == FAILS), codes, HOLDS)
    if failed:
        return NAMES[FAILS], []
    because = [dict(s, action=scene.actions[a].label) for a in np.flatnonzero(codes == MARGINAL)
               for s in shortfalls(scene.safety, outcomes[a]) + arrest_shortfall(scene, events, int(a))]
    if record is not None:
        under_way = [a for a in range(len(scene.actions)) if not finished[a] and scene.actions[a].start <= t]
        for a in under_way:
            short = running_shortfalls(scene, record, times, scene.actions[a].start, t)
            if short:
                codes[a] = max(codes[a], MARGINAL)
                because += [dict(s, action=scene.actions[a].label) for s in short]
    return NAMES[int(codes.max()) if codes.size else HOLDS], because


# The margins the record carries at every step on the roof, as the action's minima take them:
# (words, required factor, unit), in FACTORS' order.
RUNNING = tuple((words, factor, unit) for _, factor, words, unit in FACTORS
                if factor in ("grip_ratio", "balance_margin", "edge_margin"))


def running_shortfalls(scene: Scene, record: np.ndarray, times: np.ndarray, start: float, t: float) -> list[dict]:
    """The margins of the action that began at `start` that have fallen short of their required factors by
    time t, as `shortfalls` gives them: the grip ratio, the balance margin (the smaller of along and
    across the track) and the side-edge margin, from the record's steps (the steps the action's own
    minima are taken from, up to the first failure)."""
    steps = record[(times >= start - 1e-9) & (times <= t + 1e-9)]
    if steps.size == 0:
        return []
    demand = steps["grip_demand"]
    with np.errstate(divide="ignore", invalid="ignore"):
        grip = np.where(demand > 1e-12, steps["grip_available"] / demand, np.nan)
    balance = np.fmin(steps["balance_margin"], steps["frontal_margin"])
    out = []
    for values, (words, factor, unit) in zip((grip, balance, steps["edge_margin"]), RUNNING):
        if not np.isfinite(values).any():
            continue
        value, required = float(np.nanmin(values)), float(getattr(scene.safety, factor))
        if value < required:
            out.append({"margin": words, "value": value, "required": required, "unit": unit})
    return out
