"""The step driver: one compiled kernel runs every variant of a batch.

Each iteration k takes the carried state at time t_k, meets the air and the
consist's motion of that step, assesses and records the state at t_k, then
advances it to t_(k+1): on the roof the contact model (stance and balance, grip
and sliding), in the air one Runge-Kutta step with touchdown found inside it.
Events are stamped when they happen. A failure ends the assessment (margins
stop there) while the body's motion goes on.
"""

from __future__ import annotations

import math

from physics import G
from physics.engine.air_load import body_drag
from physics.engine.airborne import flight_iteration
from physics.engine.beat_state import Beat, Env, Outputs, Plan, State, Variant, after_failure
from physics.engine.curves import car_body, track_at
from physics.engine.flight import Flight
from physics.engine.frontal import level
from physics.engine.jit import entry, kernel, small
from physics.engine.on_roof import roof_iteration
from physics.engine.recording import record_flight
from physics.engine.roof_air import uniform_flow
from physics.engine.sliding import Slide
from physics.engine.stance import restart, upright
from physics.engine.turbulence import advance_turbulence, start_turbulence
from physics.records import ActionCode, Mode


@kernel
def environment(p, track, step, next_step, tb, k, last):
    """The consist's motion, the car body's on the track and the ambient wind (mean, gusts, turbulence)
    at step k. The track is read where the performer started on the consist (a walk moves them a few
    metres along a curve of hundreds); the ambient wind is fixed to the ground, so the car's heading
    turns it."""
    speed = step.speed * p.speed_scale
    distance = step.distance * p.speed_scale
    point = track_at(track, distance + p.start_x)
    body = car_body(point, speed, p.flexibility, step.ride_y, step.ride_z, step.accel_y)
    wx = p.wind_x + step.gust_x * p.gust_scale
    wy = p.wind_y + step.gust_y * p.gust_scale
    mean_x = p.wind_x
    if point.heading != 0.0:
        c, s = math.cos(point.heading), math.sin(point.heading)
        wx, wy = wx * c + wy * s, -wx * s + wy * c
        mean_x = p.wind_x * c + p.wind_y * s
    tb = advance_turbulence(tb, step.time, abs(speed - mean_x), p.turbulence_sigma, p.turbulence_length)
    env = Env(k, step.time, speed, step.accel * p.speed_scale, distance, wx + tb.value, wy,
              next_step.speed * p.speed_scale, last, body)
    return env, tb


@kernel
def planned(inputs, state, step, act):
    """(state, plan) for step k: what the beat prescribes, or after a failure what the performer does:
    no more actions and no gait; a change of posture under way is finished, then the posture held."""
    beat = state.beat
    row = step.row
    if beat.landed == act and inputs.actions[act].code == ActionCode.JUMP:
        row = inputs.actions[act].landed_row
    if not beat.assessing:
        if beat.failed_act < 0:
            beat = after_failure(beat, act, -1)
        if beat.plan_row < 0 and not (step.settling and act == beat.failed_act):
            beat = after_failure(beat, beat.failed_act, row)
        state = State(beat, state.slide, state.balance, state.flight, state.frontal)
        if beat.plan_row < 0:
            return state, Plan(row, 0.0, 0.0, 0.0, True, 0.0)
        return state, Plan(beat.plan_row, 0.0, 0.0, 0.0, False, 0.0)
    if step.reset and (beat.mode == Mode.PLANTED or beat.mode == Mode.SLIDING) and row == step.row:
        # The pivot moves within the body (feet to knees) or the performer
        # turns: keep the hip where it was and restart the balance.
        s = state.slide
        state = State(beat, Slide(s.x + step.pivot_shift, s.u, s.udot, s.gait_phase, s.y, s.w),
                      restart(state.balance), state.flight, state.frontal)
    return state, Plan(row, step.gait_speed, step.gait_friction, step.gait_rate, step.settling != 0,
                       step.gait_speed_y)


@small
def start_state(p):
    return State(Beat(Mode.PLANTED.value, -1, -1, True, False, -1, -1),
                 Slide(p.start_x, 0.0, 0.0, 0.0, p.start_y, 0.0), upright(),
                 Flight(0.0, 0.0, 0.0, 0.0, 0, 0.0, 0.0, 0.0, 0.0, 0.0, False, math.nan, 0.0, 0.0, 0.0, 0),
                 level())


@entry
def run_variants(params, roof_scale, inputs, first, last, events, outcomes, record, scratch, tether_out):
    """Run variants first..last-1 (rows of params) through the whole beat.

    The one compiled entry point: a single recorded run calls it with one
    variant and a record of one row per step; batches with an empty record, in
    chunks on a thread pool (it releases the GIL). For each step k: the posture
    row and any restart, then the body on the roof or in the air.

    scratch: (9, n) working memory of this call (the engine allocates
    nothing): the three delay lines of the balance controller along the track
    (rows 0, 1, 4) and across it (rows 6, 7, 8) and the body's drag factors
    (rows 2, 3, 5).
    tether_out: (batch, tethers) records.TETHER_OUT, the rigging's absorber state and peaks.
    """
    steps = inputs.steps
    n = steps.shape[0]
    dt = steps[1].time - steps[0].time
    for b in range(first, last):
        p = params[b]
        out = Outputs(events, outcomes, record, record.shape[0] > 0 and b == first, tether_out)
        delay = int(round(p.reaction_time / dt))
        n_seg = inputs.body[0].crossflow_area.shape[0]
        drag = body_drag(inputs.body[0], p.density, p.drag_scale, scratch[2, :n_seg], scratch[3, :n_seg],
                         scratch[5, :n_seg])
        v = Variant(b, p, roof_scale[b], drag, p.mass, p.mass * G, dt, scratch[0, :delay + 1],
                    scratch[1, :delay + 1], scratch[4, :delay + 1], scratch[6, :delay + 1], scratch[7, :delay + 1],
                    scratch[8, :delay + 1])
        tb = start_turbulence(p.turbulence_seed, p.turbulence_sigma)
        state = start_state(p)
        for k in range(n):
            step = steps[k]
            env, tb = environment(p, inputs.track, step, steps[min(k + 1, n - 1)], tb, k, k == n - 1)
            act = step.action
            state, plan = planned(inputs, state, step, act)
            beat = state.beat
            if beat.mode == Mode.GONE:
                if out.recording:
                    record_flight(record[k], env, state.flight, inputs.postures[state.flight.row], v.drag, beat.mode,
                                  uniform_flow())
                continue
            if beat.mode != Mode.FLIGHT:
                state = roof_iteration(v, inputs, env, state, plan, act, out)
            if state.beat.mode == Mode.FLIGHT and (beat.mode == Mode.FLIGHT or state.beat.leaves_now):
                state = flight_iteration(v, inputs, env, state, act, out)
