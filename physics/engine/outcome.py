"""Writing what a run found: the first event of each kind, and per action the
extremes of the margins (records of physics.records EVENT and OUTCOME)."""

from __future__ import annotations

import math

from physics.engine.jit import kernel, small
from physics.engine.roof import car_at
from physics.records import Contact


@kernel
def note_event(events, b, kind, t, x_car, distance, cars, demand, available):
    """Keep the first event of `kind` for variant b; distance = consist travel at t (m)."""
    ev = events[b, kind]
    if math.isnan(ev.time):
        ev.time = t
        ev.x_car = x_car
        ev.x_ground = x_car + distance
        ev.car = car_at(cars, x_car)
        ev.demand = demand
        ev.available = available


@small
def note_target(events, b, kind, t, target_car):
    """The car a landing was declared for, on the event of `kind` noted at time t."""
    if events[b, kind].time == t:
        events[b, kind].target_car = target_car


@small
def note_side(events, b, kind, t, side):
    """The side (+1 left, -1 right) of the event of `kind` noted at time t."""
    if events[b, kind].time == t:
        events[b, kind].side = side


@small
def note_stance(out, mu_static, demand, margin, margin_y, edge, lift_ratio, lean_required, roll_tan, wind, drag,
                accel_y, contact, body_wind):
    """Margins of a step on the roof into the action's outcome record `out`. The balance margin is the
    smaller of the margins along and across the track; the one across is kept on its own too. The lean
    needed is the tilt from the vertical of the leans along (rad) and across (its tangent) together."""
    if demand > 1e-12:
        out.grip_ratio_min = min(out.grip_ratio_min, mu_static / demand)
    out.grip_demand_max = max(out.grip_demand_max, demand)
    out.edge_margin_min = min(out.edge_margin_min, edge)
    out.lateral_accel_max = max(out.lateral_accel_max, accel_y)
    if contact != Contact.BODY:
        if margin == margin:  # not judged (NaN) during deliberate posture changes
            out.balance_margin_min = min(out.balance_margin_min, margin)
        if margin_y == margin_y:
            out.frontal_margin_min = min(out.frontal_margin_min, margin_y)
            out.balance_margin_min = min(out.balance_margin_min, margin_y)
        # atan(sqrt(tan^2 a + tan^2 b)) lies between max(a, b) and a + b: work it out only when it may
        # be a new largest.
        # (atan(x) <= x bounds b from above).
        if lean_required + abs(roll_tan) > out.lean_max:
            if roll_tan == 0.0 or lean_required >= 1.5:
                tilt = max(lean_required, math.atan(abs(roll_tan)))
            else:
                tilt = math.atan(math.sqrt(math.tan(lean_required) ** 2 + roll_tan * roll_tan))
            out.lean_max = max(out.lean_max, tilt)
    out.lift_ratio_min = min(out.lift_ratio_min, lift_ratio)
    note_air(out, wind, drag, body_wind)


@small
def note_air(out, wind, drag, body_wind):
    """The apparent wind (m/s, horizontal: the free stream's and at the centre of mass's height) and the
    air load (N) met into the action's outcome."""
    out.apparent_wind_max = max(out.apparent_wind_max, wind)
    out.body_wind_max = max(out.body_wind_max, body_wind)
    out.drag_max = max(out.drag_max, drag)


@small
def note_clearance(out, gap):
    out.clearance_min = min(out.clearance_min, gap)


@small
def note_landing_margin(out, margin):
    out.landing_margin_min = min(out.landing_margin_min, margin)


@small
def note_takeoff(out, t, x):
    if math.isnan(out.takeoff_time):
        out.takeoff_time = t
        out.takeoff_x = x


@small
def note_touchdown(out, t, x, car, speed):
    if math.isnan(out.touchdown_time):
        out.touchdown_time = t
        out.touchdown_x = x
        out.touchdown_car = car
        out.touchdown_speed = speed
