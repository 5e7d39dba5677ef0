"""One step of a body on the roof: loads and lean, balance, grip and sliding,
margins and overhead checks at t_k, then the move to t_(k+1) and whether the
body leaves the roof (a lift, an edge, a jump)."""

from __future__ import annotations

import math
from collections import namedtuple

from physics.engine.air_load import rotate
from physics.engine.beat_state import Beat, State, failed, lifted, travel, with_mode
from physics.engine.flight import take_off
from physics.engine.jit import kernel, small
from physics.engine.outcome import note_event, note_stance, note_takeoff
from physics.engine.overhead import anything_overhead, overhead_step
from physics.engine.recording import record_roof
from physics.engine.roof import car_at, roof_friction
from physics.engine.sliding import Slide, gait_force, grip_demand, slide_direction, slide_step
from physics.engine.stance import (balance_step, carry_on, delayed_cop, equilibrium_cop, judge_support, lie_down,
                                   restart, settle, stepped, with_lean)
from physics.records import ActionCode, Contact, Event, Mode

STANDING_TAKEOFF_DELAY = 0.3  # s from the start of a standing jump to take-off (the dip before it; from memory)

# Where and how the body stands this step: its posture row, how it touches
# the roof, the car under the pivot and its roof height (m), the commanded gait
# speed (m/s), the support (m from the pivot, with any recovery step) and the
# roof's friction for this contact.
Footing = namedtuple("Footing", "row contact car roof_z gait_v lo hi mu_static mu_kinetic")

# What the step found at t_k, for the record.
Seen = namedtuple("Seen", "mode row x roof_z lean rate u wx air normal grip mu_static xcom lo hi margin "
                          "lean_required")


@small
def footing(v, inputs, beat, bal, slide, plan):
    row = plan.row
    posture = inputs.postures[row]
    cars = inputs.cars
    contact = Contact.BODY.value if bal.lying else posture.contact
    car = car_at(cars, slide.x)
    if car < 0 and bal.lying:
        # A body lying over a roof's end is on that roof while its centre of mass is.
        cx, unused = rotate(posture.com_x, posture.com_z, math.cos(bal.lean), math.sin(bal.lean))
        car = car_at(cars, slide.x + cx)
    mu_s, mu_k = roof_friction(cars, car, contact, v.roof_scale)
    gait_v = plan.gait_speed if beat.mode == Mode.PLANTED and not bal.lying else 0.0
    return Footing(row, contact, car, cars[car if car >= 0 else 0].roof_height, gait_v,
                   posture.support_lo, posture.support_hi, mu_s, mu_k)


@kernel
def roof_iteration(v, inputs, env, state, plan, act, out):
    beat, slide = state.beat, state.slide
    ft = footing(v, inputs, beat, state.balance, slide, plan)
    row = plan.row
    posture = inputs.postures[row]
    wx = env.wind_x - (env.speed + slide.u + ft.gait_v)
    bal = state.balance
    # During a deliberate change of posture the performer knows where their own
    # body is: the braced load follows the posture, so the balance resumes from
    # the posture reached and not from one the anticipation is still catching up with.
    if plan.settling and beat.mode == Mode.PLANTED:
        bal = restart(bal)
    restart_now = bal.restart
    bal, load, target = settle(bal, posture, wx, env.wind_y, v.mass, env.accel + slide.udot, v.drag,
                               v.params.max_lean, v.dt, ft.contact != Contact.BODY and beat.mode != Mode.DOWN)
    if restart_now:
        v.buf_err[:] = 0.0
        v.buf_rate[:] = 0.0
        v.buf_ff[:] = equilibrium_cop(load, bal.lean)
        bal = carry_on(bal)
    if load.normal <= 0.0 and beat.mode != Mode.DOWN:
        return lift_off(v, inputs, env, State(beat, slide, bal, state.flight), ft, load, out)
    was_assessing = beat.assessing
    lean_k, rate_k = bal.lean, bal.rate
    beat, bal, xcom, margin = balance(v, inputs, env, beat, bal, load, target, ft, plan.settling, slide.x, out)
    if bal.shift != 0.0:
        # A recovery step: the feet move, the body stays; the controller starts afresh from here.
        if was_assessing:
            out.outcomes[v.b, act].recovery_steps += 1
        slide = Slide(slide.x + bal.shift, slide.u, slide.udot, slide.gait_phase)
        bal = stepped(bal)
        v.buf_err[:] = bal.lean - target.lean
        v.buf_rate[:] = bal.rate
        v.buf_ff[:] = equilibrium_cop(load, bal.lean)
    beat, grip, moved = grip_and_slide(v, inputs, env, beat, bal, load, ft, plan, slide, out)
    lean_required = 0.0 if plan.settling else target.required
    air = load.air
    if was_assessing and beat.mode != Mode.DOWN and not bal.lying:
        note_stance(out.outcomes[v.b, act], ft.mu_static, grip.demand, margin, grip.static_normal / v.weight,
                    lean_required, math.sqrt(wx * wx + env.wind_y * env.wind_y),
                    math.sqrt(air.fx * air.fx + air.fy * air.fy + air.fz * air.fz), ft.contact)
    if anything_overhead(inputs):
        beat = overhead_step(v, inputs, env, beat, posture, lean_k, slide.x, ft.roof_z, act, out)
    if out.recording:
        record_roof(out.record[env.k], env, Seen(beat.mode, row, slide.x, ft.roof_z, lean_k, rate_k, slide.u, wx, air,
                                                 load.normal, grip, ft.mu_static, xcom, ft.lo, ft.hi, margin,
                                                 lean_required))
    if beat.mode == Mode.GONE:
        # Struck: the pose at the strike stays where it was.
        return State(beat, moved, bal, take_off(posture, row, lean_k, slide.x, ft.roof_z, 0.0, 0.0))
    return leave_roof(v, inputs, env, State(beat, moved, bal, state.flight), load, ft, plan, act, out)


@small
def lift_off(v, inputs, env, state, ft, load, out):
    """The roof no longer bears the body: it flies from where it stands, at its own velocity, from t_k."""
    bal, slide = state.balance, state.slide
    note_event(out.events, v.b, Event.LIFT, env.t, slide.x, env.distance, inputs.cars, -load.normal, v.weight)
    fl = take_off(inputs.postures[ft.row], ft.row, bal.lean, slide.x, ft.roof_z,
                  slide.u + ft.gait_v + bal.rate * load.com_z, -bal.rate * load.com_x)
    return State(lifted(state.beat), slide, bal, fl)


@kernel
def balance(v, inputs, env, beat, bal, load, target, ft, settling, x, out):
    """The lean's dynamics and the support check: (beat, balance, xcom, margin of stability).

    Lying, or in a deliberate posture change, the lean is held and balance is
    not judged (xcom and margin NaN): the ankle-pivot pendulum does not describe
    a change of posture made with hands and knees.
    """
    if ft.contact == Contact.BODY or (settling and beat.mode == Mode.PLANTED):
        lean = target.lean if ft.contact != Contact.BODY else bal.lean
        return beat, with_lean(bal, lean, 0.0, 0.0), math.nan, math.nan
    posture = inputs.postures[ft.row]
    cop = delayed_cop(bal, load, target, posture, beat.mode, ft.lo, ft.hi, v.buf_err, v.buf_rate, v.buf_ff, env.k)
    bal, xcom, margin = balance_step(bal, load, target, posture, beat.mode, cop, ft.lo, ft.hi, v.mass, v.dt)
    judged = judge_support(bal, beat.mode, ft.contact == Contact.FEET, xcom, margin, ft.lo, ft.hi,
                           v.params.recovery_step, posture, v.dt)
    bal = judged.balance
    if judged.happened == 1:
        note_event(out.events, v.b, Event.RECOVERY_STEP, env.t, x, env.distance, inputs.cars, xcom, judged.bound)
    elif judged.happened == 2:
        note_event(out.events, v.b, Event.TOPPLE, env.t, x, env.distance, inputs.cars, xcom, judged.bound)
        beat = with_mode(failed(beat), Mode.DOWN)
    if beat.mode == Mode.DOWN:
        bal = lie_down(bal, posture)
    return beat, bal, xcom, margin


@kernel
def grip_and_slide(v, inputs, env, beat, bal, load, ft, plan, slide, out):
    """Grip demand, a slip if it beats static friction, and the contact's move: (beat, grip, slide at t_(k+1))."""
    phase = slide.gait_phase + 2.0 * math.pi * plan.gait_rate * v.dt
    walking = beat.mode == Mode.PLANTED and not bal.lying
    push = gait_force(phase, plan.gait_friction, v.weight) if walking else 0.0
    grip = grip_demand(load.air, v.mass, env.accel, push)
    x, u, udot = slide.x, slide.u, slide.udot
    if beat.mode == Mode.PLANTED or (beat.mode == Mode.DOWN and bal.lying and u == 0.0):
        if grip.demand > ft.mu_static:
            note_event(out.events, v.b, Event.SLIP, env.t, x, env.distance, inputs.cars, grip.demand, ft.mu_static)
            beat = failed(beat)
            if beat.mode == Mode.PLANTED:
                beat = with_mode(beat, Mode.SLIDING)
            u = slide_direction(grip.need_x)
        else:
            x += ft.gait_v * v.dt
            udot = 0.0
    if beat.mode == Mode.SLIDING or (beat.mode == Mode.DOWN and u != 0.0):
        com_accel_x = bal.accel * load.com_z - bal.rate * bal.rate * load.com_x
        u, udot, stopped = slide_step(u, load.air.fx, v.mass, env.accel, ft.mu_kinetic, load.normal, com_accel_x,
                                      v.dt)
        if stopped and beat.mode == Mode.SLIDING:
            beat = with_mode(beat, Mode.PLANTED)
        x += u * v.dt
    return beat, grip, Slide(x, u, udot, phase)


@kernel
def leave_roof(v, inputs, env, state, load, ft, plan, act, out):
    """At t_(k+1): off an edge the body flies from where it is (a body down on the roof once its
    centre of mass has gone past a car end), and a jump takes off when it is ready."""
    beat, bal, slide = state.beat, state.balance, state.slide
    posture = inputs.postures[ft.row]
    lying = beat.mode == Mode.DOWN or bal.lying
    if (over_an_end(inputs.cars, posture, bal, slide) if lying else car_at(inputs.cars, slide.x) < 0):
        fl = take_off(posture, ft.row, bal.lean, slide.x, ft.roof_z, slide.u + ft.gait_v + bal.rate * load.com_z,
                      -bal.rate * load.com_x)
        return State(with_mode(beat, Mode.FLIGHT), slide, bal, fl)
    action = inputs.actions[act]
    if (action.code != ActionCode.JUMP or beat.jumped == act or beat.mode != Mode.PLANTED
            or not beat.assessing):
        return state
    t_next = env.t + v.dt
    if plan.gait_speed != 0.0:
        direction = 1.0 if action.takeoff_vx >= 0 else -1.0
        ready = (slide.x - action.takeoff_x) * direction >= 0.0
    else:
        ready = t_next >= action.start + STANDING_TAKEOFF_DELAY
    if not ready:
        return state
    scale = v.params.takeoff_scale
    fl = take_off(inputs.postures[action.air_row], action.air_row, 0.0, slide.x, ft.roof_z, action.takeoff_vx * scale,
                  action.takeoff_vz * scale)
    speed = math.hypot(action.takeoff_vx, action.takeoff_vz) * scale
    note_event(out.events, v.b, Event.TAKEOFF, t_next, slide.x, travel(env, v.dt), inputs.cars, speed, 0.0)
    note_takeoff(out.outcomes[v.b, act], t_next, slide.x)
    return State(Beat(Mode.FLIGHT.value, act, beat.landed, beat.assessing, False, beat.failed_act, beat.plan_row),
                 slide, bal, fl)


@kernel
def over_an_end(cars, posture, bal, slide):
    """Whether a falling or lying body's centre of mass is past the end of the roof it is on."""
    cx, unused = rotate(posture.com_x, posture.com_z, math.cos(bal.lean), math.sin(bal.lean))
    return car_at(cars, slide.x + cx) < 0
