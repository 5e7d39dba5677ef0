"""What the rigging did in a recorded run, tether by tether, against its limits (JSON-ready, SI).

Restraint or arrest is geometry alone: whether the tether, at its full length, its absorber's whole
pay-out and its stretch under the body's weight, lets the harness reach a side edge or an end of the
roof at all, in each direction, at any harness height from lying (0.15 m) to standing. The rest is
read from the run: the peaks the kernel kept (records.TETHER_OUT) and the harness's path as the
kernel measured the tethers to it (on the roof where the posture's centre of mass stands upright over
the contact, in the air the centre of mass).
"""

from __future__ import annotations

import math

import numpy as np

from physics import G
from physics.records import FAILURES, Event
from physics.rigging_table import LIMIT_SOURCES, limit_source

LYING_HARNESS = 0.15   # m above the roof: a harness at the centre of mass of a body lying on it (from memory)
EDGE_WORDS = ("left side edge", "right side edge", "front end", "rear end")


def anchor_load(tether, x: float, force: float) -> float:
    """The most loaded anchor's load (N) for tension `force` with the harness at car-frame x: the kernel's
    rule (engine.tether.anchor_load) for the pictures, which have only the recorded tension."""
    if not tether.running:
        return force
    span = tether.line_x1 - tether.line_x0
    a = min(max(x, tether.line_x0), tether.line_x1) - tether.line_x0
    return math.hypot(force * span / (4.0 * tether.sag), force * max(a, span - a) / span)


def harness_path(trajectory) -> np.ndarray:
    """(T, 3) the harness as the kernel measures the tethers to it, car frame (m)."""
    rec, postures = trajectory.record, trajectory.timeline.postures
    on_roof = np.isfinite(rec["pivot_x"])
    cx, cz = postures["com_x"][rec["row"]], postures["com_z"][rec["row"]]
    x = np.where(on_roof, rec["pivot_x"] + cx, rec["flight_x"])
    y = np.where(on_roof, rec["pivot_y"], rec["flight_y"])
    z = np.where(on_roof, rec["contact_z"] + cz, rec["flight_z"])
    return np.stack([x, y, z], axis=-1)


def reach(scene, tether, standing_harness: float) -> dict:
    """Whether the tether lets the harness reach each side edge and end of its car's roof: the
    straight distance from its anchor (a running line: its nearest end or its line) to each, against
    the tether's reach (length, absorber pay-out, stretch under the body's weight) over the height
    between anchor and harness. Returns the role and, per direction, the margin (m, + cannot reach)."""
    car = scene.cars[tether.car]
    stretch = scene.performer.mass * G / tether.stiffness
    full = tether.length + tether.max_extension + stretch
    heights = (LYING_HARNESS, standing_harness)
    dz = 0.0 if heights[0] <= tether.height <= heights[1] else min(abs(tether.height - h) for h in heights)
    horizontal = math.sqrt(max(full * full - dz * dz, 0.0))
    distances = (0.5 * car.width - tether.anchor_y, 0.5 * car.width + tether.anchor_y,
                 car.front_x - tether.line_x1, tether.line_x0 - car.rear_x)
    margins = {words: d - horizontal for words, d in zip(EDGE_WORDS, distances)}
    role = "restraint" if all(m > 0 for m in margins.values()) else "arrest"
    return {"role": role, "reach_m": horizontal, "stretch_allowance_m": stretch, "margins_m": margins,
            "reachable": [w for w, m in margins.items() if m <= 0]}


def _first_failure_time(events) -> float | None:
    times = [float(events[k]["time"]) for k in FAILURES if not math.isnan(events[k]["time"])]
    return min(times) if times else None


def where_hanging(scene, trajectory, point) -> str:
    """Where the harness ends up, in plain words."""
    x, y, z = (float(v) for v in point)
    if trajectory.record["mode"][-1] == 4 and not math.isnan(float(trajectory.events[Event.FALL]["time"])):
        return "on the ground: the tethers did not hold the body off it"
    car_index = scene.car_at(x)
    if car_index is None:
        near = min(scene.cars, key=lambda c: min(abs(x - c.front_x), abs(x - c.rear_x)))
        end = "front" if abs(x - near.front_x) < abs(x - near.rear_x) else "rear"
        return (f"hanging past the {end} end of {near.name}, harness {max(near.roof_height - z, 0.0):.2f} m below "
                "its roof")
    car = scene.cars[car_index]
    if abs(y) > 0.5 * car.width:
        side = "left" if y > 0 else "right"
        return (f"hanging against the {side} side of {car.name}, harness {max(car.roof_height - z, 0.0):.2f} m "
                "below the roof edge")
    edge = 0.5 * car.width - abs(y)
    if abs(y) < 0.05:
        return f"on the roof of {car.name}, harness on its centreline"
    return f"on the roof of {car.name}, harness {edge:.2f} m inside the {'left' if y > 0 else 'right'} side edge"


def rigging_summary(trajectory) -> list[dict]:
    """Per tether: restraint or arrest, peaks, travel, free fall, deceleration distance and where the
    body hangs, each against its limit with the limit's source."""
    scene = trajectory.scene
    if not scene.rigging or scene.pair:   # the loader refuses rigging with two performers
        return []
    safety = scene.safety
    path = harness_path(trajectory)
    events = trajectory.events
    start_t = _first_failure_time(events)
    arrest_t = float(events[Event.ARRESTED]["time"])
    standing = float(np.max(trajectory.timeline.postures["com_z"]))
    out = []
    for i, tether in enumerate(scene.rigging):
        o = trajectory.tethers[i]
        taut_t = float(o["taut_time"])
        peak_t = float(o["peak_time"])
        row = {
            "name": tether.name, "car": tether.car + 1, "car_name": scene.cars[tether.car].name,
            "kind": "running line" if tether.running else "point anchor",
            "anchor_m": [tether.anchor_x, tether.anchor_y, tether.anchor_z],
            "line_m": [tether.line_x0, tether.line_x1] if tether.running else None,
            "sag_m": tether.sag if tether.running else None,
            "length_m": tether.length, "stiffness_n_per_m": tether.stiffness, "material": tether.material or None,
            "damping_ratio": tether.damping_ratio,
            "absorber": ({"deploy_force_n": tether.deploy_force, "max_extension_m": tether.max_extension,
                          "paid_out_m": float(o["paid"])} if tether.absorber else None),
            "geometry": reach(scene, tether, standing),
            "taut_s": None if math.isnan(taut_t) else taut_t,
            "peak_force_n": float(o["peak_force"]),
            "peak_s": None if math.isnan(peak_t) else peak_t,
            "peak_body_force_n": float(o["peak_force"]),
            "peak_anchor_load_n": float(o["peak_anchor"]),
            "went_before_held_m": None, "free_fall_m": None, "deceleration_distance_m": None,
        }
        if not math.isnan(taut_t):
            taut_p = path[trajectory.index_at(taut_t)]
            if start_t is not None and start_t <= taut_t:
                start_p = path[trajectory.index_at(start_t)]
                row["went_before_held_m"] = float(np.linalg.norm(taut_p - start_p))
                row["free_fall_m"] = float(max(start_p[2] - taut_p[2], 0.0))
            elif start_t is None or start_t > taut_t:
                row["went_before_held_m"] = 0.0
                row["free_fall_m"] = 0.0
            stop_t = arrest_t if not math.isnan(arrest_t) and arrest_t >= taut_t else peak_t
            if not math.isnan(stop_t):
                row["deceleration_distance_m"] = float(np.linalg.norm(path[trajectory.index_at(stop_t)] - taut_p))
        row["hangs"] = where_hanging(scene, trajectory, path[-1])
        row["limits"] = _limits(safety, row)
        out.append(row)
    return out


def _limits(safety, row) -> list[dict]:
    checks = (("peak force on the body", "peak_body_force_n", "arrest_force", "N"),
              ("peak anchor load", "peak_anchor_load_n", "anchor_load", "N"),
              ("free fall", "free_fall_m", "free_fall", "m"),
              ("deceleration distance", "deceleration_distance_m", "deceleration_distance", "m"))
    out = []
    for words, key, limit, unit in checks:
        value, bound = row[key], float(getattr(safety, limit))
        out.append({"what": words, "value": value, "limit": bound, "unit": unit,
                    "within": None if value is None else value <= bound,
                    "source": limit_source(limit, bound)})
    return out


__all__ = ["LIMIT_SOURCES", "anchor_load", "harness_path", "reach", "rigging_summary", "where_hanging"]
