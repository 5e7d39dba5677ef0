"""Writing one step of a recorded run (a records.RECORD row)."""

from __future__ import annotations

import math

from physics.engine.air_load import air_load, at_height, rotate
from physics.engine.jit import kernel, small
from physics.records import Mode


@small
def record_common(r, env, mode, row, lean):
    r.mode = mode
    r.row = row
    r.lean = lean
    r.speed = env.speed
    r.distance = env.distance
    r.wind_x = env.wind_x
    r.wind_y = env.wind_y
    r.accel_y = env.body.felt_y
    r.accel_z = env.body.felt_z
    r.curvature = env.body.curvature
    r.cant_tilt = env.body.tilt
    r.body_roll = env.body.roll


@small
def record_flow(r, flow, wx, wy, com_z):
    """The air over the roof under the body and the apparent wind at its centre of mass's height."""
    bx, by = at_height(flow, wx, wy, com_z)
    r.body_wind = math.sqrt(bx * bx + by * by)
    r.flow_delta = flow.delta if flow.on else math.nan
    r.flow_gain = flow.gain
    r.flow_zone = flow.zone_height
    r.flow_base = flow.base


@small
def record_no_contact(r):
    r.pivot_x = math.nan
    r.pivot_y = math.nan
    r.contact_z = math.nan
    r.lean_rate = 0.0
    r.roll_rate = 0.0
    r.slide_speed = math.nan
    r.slide_speed_y = math.nan
    r.xcom_y = math.nan
    r.cop_y = math.nan
    r.half_width = math.nan
    r.frontal_margin = math.nan
    r.roll_required = math.nan
    r.edge_margin = math.nan
    r.roof_slope = math.nan
    r.normal = math.nan
    r.need_x = math.nan
    r.need_y = math.nan
    r.grip_demand = math.nan
    r.grip_available = math.nan
    r.xcom = math.nan
    r.support_lo = math.nan
    r.support_hi = math.nan
    r.balance_margin = math.nan
    r.lean_required = math.nan


@kernel
def record_flight(r, env, fl, posture, drag, mode, flow):
    """The body in the air (or out of the run, mode GONE) at t_k; in the air with its air load.

    A body lying on the ground stays at its ground-frame place: the consist moves on past it.
    """
    record_common(r, env, mode, fl.row, fl.lean)
    record_no_contact(r)
    r.flight_x = fl.ground_x - env.distance if fl.ground_x == fl.ground_x else fl.x
    r.flight_z = fl.z
    r.flight_vx = fl.vx
    r.flight_vz = fl.vz
    r.flight_y = fl.y
    r.flight_vy = fl.vy
    r.roll = fl.roll
    nan = math.nan
    app_x, app_y, app_z, fx, fy, fz = nan, nan, nan, nan, nan, nan
    if mode == Mode.FLIGHT:
        app_x = env.wind_x - (env.speed + fl.vx)
        app_y = env.wind_y - fl.vy
        app_z = -fl.vz
        air = air_load(posture, math.cos(fl.lean), math.sin(fl.lean), app_x, app_y, app_z, drag, flow)
        fx, fy, fz = air.fx, air.fy, air.fz
        unused, cz = rotate(posture.com_x, posture.com_z, math.cos(fl.lean), math.sin(fl.lean))
        record_flow(r, flow, app_x, app_y, cz)
    else:
        record_flow(r, flow, nan, nan, 0.0)
    r.app_x = app_x
    r.app_y = app_y
    r.app_z = app_z
    r.aero_x = fx
    r.aero_y = fy
    r.aero_z = fz


@kernel
def record_roof(r, env, seen):
    """The body on the roof at t_k: state, loads and the kernel's assessment (an on_roof.Seen)."""
    record_common(r, env, seen.mode, seen.row, seen.lean)
    r.pivot_x = seen.x
    r.contact_z = seen.roof_z
    r.lean_rate = seen.rate
    r.slide_speed = seen.u
    r.flight_x = math.nan
    r.flight_z = math.nan
    r.flight_vx = math.nan
    r.flight_vz = math.nan
    r.flight_y = math.nan
    r.flight_vy = math.nan
    r.pivot_y = seen.y
    r.slide_speed_y = seen.w
    r.roll = seen.across.roll
    r.roll_rate = seen.across.rate
    r.xcom_y = seen.across.xcom
    r.cop_y = seen.across.cop
    r.half_width = seen.across.half
    r.frontal_margin = seen.across.margin
    r.roll_required = math.atan(seen.across.required_tan)
    r.edge_margin = seen.ft.edge
    r.roof_slope = math.atan(seen.ft.slope)
    r.app_x = seen.wx
    r.app_y = env.wind_y - seen.w
    record_flow(r, seen.flow, seen.wx, seen.wy, seen.com_z)
    r.app_z = 0.0
    r.aero_x = seen.air.fx
    r.aero_y = seen.air.fy
    r.aero_z = seen.air.fz
    r.normal = seen.normal
    r.need_x = seen.grip.need_x
    r.need_y = seen.grip.need_y
    r.grip_demand = seen.grip.demand
    r.grip_available = seen.mu_static
    r.xcom = seen.xcom
    r.support_lo = seen.lo
    r.support_hi = seen.hi
    r.balance_margin = seen.margin
    r.lean_required = seen.lean_required
