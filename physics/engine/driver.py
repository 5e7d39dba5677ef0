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
from physics.engine.outcome import note_event
from physics.engine.partners import hands_of, links_between, touch_on
from physics.engine.recording import record_flight
from physics.engine.roof_air import uniform_flow
from physics.engine.sliding import Slide
from physics.engine.stance import restart, upright
from physics.engine.turbulence import advance_turbulence, start_turbulence
from physics.records import ActionCode, Event, Mode


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


@small
def variant(p, roof_scale, inputs, b, dt, scratch):
    """The fixed facts of variant b's run, its balance delay lines and drag factors in `scratch`."""
    delay = int(round(p.reaction_time / dt))
    n_seg = inputs.body[0].crossflow_area.shape[0]
    drag = body_drag(inputs.body[0], p.density, p.drag_scale, scratch[2, :n_seg], scratch[3, :n_seg],
                     scratch[5, :n_seg])
    return Variant(b, p, roof_scale, drag, p.mass, p.mass * G, dt, scratch[0, :delay + 1],
                   scratch[1, :delay + 1], scratch[4, :delay + 1], scratch[6, :delay + 1], scratch[7, :delay + 1],
                   scratch[8, :delay + 1])


@kernel
def advance(v, inputs, env, state, plan, act, out, touch):
    """One step of one body from t_k to t_(k+1): on the roof, then in the air if it is (or goes) there;
    touch: the other performer's force on it (partners.Touch; None for a performer alone, so that kernel
    carries none of it)."""
    beat = state.beat
    if beat.mode == Mode.GONE:
        if out.recording:
            record_flight(out.record[env.k], env, state.flight, inputs.postures[state.flight.row], v.drag, beat.mode,
                          uniform_flow())
        return state
    if beat.mode != Mode.FLIGHT:
        state = roof_iteration(v, inputs, env, state, plan, act, out, touch)
    if state.beat.mode == Mode.FLIGHT and (beat.mode == Mode.FLIGHT or state.beat.leaves_now):
        state = flight_iteration(v, inputs, env, state, act, out, touch)
    return state


@entry
def run_variants(params, roof_scale, inputs, first, last, events, outcomes, record, scratch, tether_out):
    """Run variants first..last-1 (rows of params) through the whole beat.

    The entry point for one performer: a single recorded run calls it with one
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
        v = variant(p, roof_scale[b], inputs, b, dt, scratch)
        tb = start_turbulence(p.turbulence_seed, p.turbulence_sigma)
        state = start_state(p)
        for k in range(n):
            step = steps[k]
            env, tb = environment(p, inputs.track, step, steps[min(k + 1, n - 1)], tb, k, k == n - 1)
            act = step.action
            state, plan = planned(inputs, state, step, act)
            state = advance(v, inputs, env, state, plan, act, out, None)


@kernel
def hands_now(inputs, state, plan):
    return hands_of(inputs, state, plan.row, plan.gait_speed, plan.gait_speed_y, plan.settling)


@small
def record_touch(r, hands, touch):
    """The other performer's force on this body at t_k and where it acts, into a records.RECORD row."""
    r.touch_fx = touch.fx
    r.touch_fy = touch.fy
    r.touch_fz = touch.fz
    nan = math.nan
    r.touch_x = hands.x if touch.on else nan
    r.touch_y = hands.y if touch.on else nan
    r.touch_z = hands.z if touch.on else nan


@entry
def run_pairs(params, roof_scale, inputs_a, inputs_b, links, first, last, events, outcomes, record_a, record_b,
              scratch_a, scratch_b, tether_out, link_out):
    """Run pairs first..last-1 of two performers acting on each other (physics.engine.partners) through
    the whole beat: performer 0 in the even rows of params, roof_scale, events, outcomes and tether_out,
    performer 1 in the odd rows, each with its own inputs (the same consist, air and steps' times; its
    own body, timeline and actions). links: records.LINK; link_out: (pairs, links) records.LINK_OUT.
    Each step both bodies are seen at t_k, the forces between them are worked out and held over the
    step (equal and opposite), then each body advances as a performer alone does."""
    steps_a, steps_b = inputs_a.steps, inputs_b.steps
    n = steps_a.shape[0]
    dt = steps_a[1].time - steps_a[0].time
    for i in range(first, last):
        a, b = 2 * i, 2 * i + 1
        pa, pb = params[a], params[b]
        recording = record_a.shape[0] > 0 and i == first
        out_a = Outputs(events, outcomes, record_a, recording, tether_out)
        out_b = Outputs(events, outcomes, record_b, recording, tether_out)
        va = variant(pa, roof_scale[a], inputs_a, a, dt, scratch_a)
        vb = variant(pb, roof_scale[b], inputs_b, b, dt, scratch_b)
        tb_a = start_turbulence(pa.turbulence_seed, pa.turbulence_sigma)
        tb_b = start_turbulence(pb.turbulence_seed, pb.turbulence_sigma)
        state_a, state_b = start_state(pa), start_state(pb)
        for k in range(n):
            last_step = k == n - 1
            env_a, tb_a = environment(pa, inputs_a.track, steps_a[k], steps_a[min(k + 1, n - 1)], tb_a, k, last_step)
            env_b, tb_b = environment(pb, inputs_b.track, steps_b[k], steps_b[min(k + 1, n - 1)], tb_b, k, last_step)
            act_a, act_b = steps_a[k].action, steps_b[k].action
            state_a, plan_a = planned(inputs_a, state_a, steps_a[k], act_a)
            state_b, plan_b = planned(inputs_b, state_b, steps_b[k], act_b)
            hands_a = hands_now(inputs_a, state_a, plan_a)
            hands_b = hands_now(inputs_b, state_b, plan_b)
            fx, fy, fz, lost = links_between(links, link_out[i], env_a.t, dt, hands_a, hands_b, va.mass, vb.mass)
            if lost:
                note_event(events, a, Event.HOLD_LOST, env_a.t, hands_a.x, env_a.distance, inputs_a.cars, 0.0, 0.0)
                note_event(events, b, Event.HOLD_LOST, env_b.t, hands_b.x, env_b.distance, inputs_b.cars, 0.0, 0.0)
            touch_a = touch_on(hands_a, -fx, -fy, -fz)
            touch_b = touch_on(hands_b, fx, fy, fz)
            state_a = advance(va, inputs_a, env_a, state_a, plan_a, act_a, out_a, touch_a)
            state_b = advance(vb, inputs_b, env_b, state_b, plan_b, act_b, out_b, touch_b)
            if recording:
                record_touch(record_a[k], hands_a, touch_a)
                record_touch(record_b[k], hands_b, touch_b)
