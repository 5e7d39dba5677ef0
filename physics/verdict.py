"""From events and margins to verdicts: holds, marginal or fails, per action and overall.

A beat fails when any failure event happens. It is marginal when it holds but
a margin is below the factor the scene requires (section [safety]). After a
topple, a fall or a strike the rest of the beat is not reached and fails too.
"""

from __future__ import annotations

import math

import numpy as np

from physics import engine
from physics.scene import Scene
from physics.wind_scales import beaufort

FAILURE_KINDS = ("slip", "topple", "lift", "fall", "strike", "line", "hard landing")
TERMINAL_KINDS = ("topple", "fall", "strike")
VERDICT_ORDER = {"holds": 0, "marginal": 1, "fails": 2}


def _finite(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def event_list(scene: Scene, events: np.ndarray) -> list[dict]:
    """Events (first of each kind) in time order, as plain dicts."""
    out = []
    for kind_index, kind in enumerate(engine.EVENT_KINDS):
        row = events[kind_index]
        if math.isnan(row[0]):
            continue
        car = int(row[2])
        out.append({
            "kind": kind,
            "failure": kind in FAILURE_KINDS,
            "time_s": float(row[0]),
            "car": car + 1 if car >= 0 else None,
            "car_name": scene.cars[car].name if car >= 0 else None,
            "x_car_m": float(row[1]),
            "x_ground_m": float(row[5]),
            "demand": float(row[3]),
            "available": float(row[4]),
            "detail": describe(kind, float(row[3]), float(row[4])),
        })
    return sorted(out, key=lambda e: e["time_s"])


def describe(kind: str, demand: float, available: float) -> str:
    """The numbers behind an event in plain words (SI)."""
    if kind == "slip":
        return f"grip needed {demand:.3f}, roof gives {available:.3f}"
    if kind in ("topple", "recovery step"):
        return f"extrapolated centre of mass {abs(demand - available):.3f} m outside the support"
    if kind == "lift":
        return f"the roof no longer bears the body: contact force {-demand:.0f} N (wind lifting or tipping it off)"
    if kind == "fall":
        return "came down off the roof (gap or car end)"
    if kind == "strike":
        return f"body point {demand - available:.2f} m above the soffit at {available:.2f} m"
    if kind == "line":
        return f"{demand:.2f} m from the wire, exclusion distance {available:.2f} m"
    if kind == "hard landing":
        return f"touchdown {demand:.2f} m/s relative to the roof, friction and a step absorb {available:.2f} m/s"
    return ""


def summarise(scene: Scene, events: np.ndarray, margins: np.ndarray) -> dict:
    """Verdict per action and overall, first failure, events (JSON-ready)."""
    evs = event_list(scene, events)
    failures = [e for e in evs if e["failure"]]
    terminal_time = min((e["time_s"] for e in failures if e["kind"] in TERMINAL_KINDS), default=math.inf)
    actions = []
    for a, action in enumerate(scene.actions):
        m = margins[a]
        row = {
            "name": action.label,
            "kind": action.kind,
            "start_s": action.start,
            "end_s": action.end,
            "reached": action.start <= terminal_time,
            "grip_ratio_min": _finite(m[engine.M_GRIP]),
            "grip_demand_max": float(m[engine.M_DEMAND]),
            "balance_margin_min_m": _finite(m[engine.M_BAL]),
            "lift_ratio_min": _finite(m[engine.M_LIFT]),
            "lean_max_deg": math.degrees(m[engine.M_LEAN]),
            "apparent_wind_max_ms": float(m[engine.M_WIND]),
            "beaufort_max": beaufort(float(m[engine.M_WIND])),
            "drag_max_n": float(m[engine.M_DRAG]),
            "landing_margin_min_m": _finite(m[engine.M_LAND]),
            "clearance_min_m": _finite(m[engine.M_CLEAR]),
        }
        inside = [e["kind"] for e in failures if action.start <= e["time_s"] < action.end
                  or (a == len(scene.actions) - 1 and e["time_s"] >= action.end)]
        row["failures"] = inside
        row["verdict"] = "fails" if inside or not row["reached"] else (
            "marginal" if below_factors(scene.safety, m) else "holds")
        actions.append(row)
    overall = max((r["verdict"] for r in actions), key=VERDICT_ORDER.get, default="holds")
    first = failures[0] if failures else None
    return {"verdict": overall, "first_failure": first, "events": evs, "actions": actions}


def below_factors(safety, margins: np.ndarray) -> np.ndarray:
    """Whether any margin is below the scene's required factor: margins (..., MARGIN_KEYS) -> bool (...).

    Margins never reached stay at +inf and so never count as below.
    """
    m = margins
    return ((m[..., engine.M_GRIP] < safety.grip_ratio) | (m[..., engine.M_BAL] < safety.balance_margin)
            | (m[..., engine.M_LIFT] < safety.lift_ratio) | (m[..., engine.M_LAND] < safety.landing_margin)
            | (m[..., engine.M_CLEAR] < safety.clearance))


_FAILURE_INDEX = [engine.EVENT_KINDS.index(k) for k in FAILURE_KINDS]


def verdict_codes(scene: Scene, events: np.ndarray, margins: np.ndarray) -> np.ndarray:
    """Overall verdict per variant as 0 holds, 1 marginal, 2 fails (the rules of summarise, on a batch)."""
    failed = np.any(~np.isnan(events[:, _FAILURE_INDEX, 0]), axis=1)
    below = below_factors(scene.safety, margins).any(axis=1)
    return np.where(failed, 2, np.where(below, 1, 0))


def first_failure_kinds(events: np.ndarray) -> list[str | None]:
    """The earliest failure kind per variant of a batch, or None."""
    times = events[:, _FAILURE_INDEX, 0]
    return [None if np.all(np.isnan(row)) else FAILURE_KINDS[int(np.nanargmin(row))] for row in times]
