"""One step of a body on the roof: loads and lean, balance along and across the
track, grip and sliding, margins and overhead checks at t_k, then the move to
t_(k+1) and whether the body leaves the roof (a lift, an end, a side edge, a
jump)."""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.air_load import AirLoad, at_height, rotate
from physics.engine.beat_state import Beat, State, failed, lifted, travel, with_mode
from physics.engine.flight import over_the_side, take_off
from physics.engine.frontal import frontal_load, frontal_step, held, level, roof_slope, roof_z_at, slope_cos_sin
from physics.engine.jit import kernel, small
from physics.engine.outcome import note_event, note_side, note_stance, note_takeoff
from physics.engine.overhead import anything_overhead, overhead_step
from physics.engine.recording import record_roof
from physics.engine.roof import car_at, roof_friction
from physics.engine.roof_air import roof_flow
from physics.engine.sliding import Slide, gait_force, grip_demand, slide_direction, slide_step
from physics.engine.tether import watch_tethers
from physics.engine.stance import (LIE_ANGLE, balance_step, carry_on, delayed_cop, equilibrium_cop, judge_support,
                                   laid, lie_down, restart, settle, stepped, with_lean)
from physics.records import ActionCode, Contact, Event, Mode

STANDING_TAKEOFF_DELAY = 0.3  # s from the start of a standing jump to take-off (the dip before it; from memory)

# Where and how the body stands this step: its posture row, how it touches
# the roof, the car under the pivot and its roof height there (m), the
# commanded gait speed (m/s), the support (m from the pivot, with any recovery
# step), the roof's friction for this contact, the tangent of its slope across
# the track and that slope's cosine and sine, the distance from the support's
# outer edge to the nearer side edge (m) and the gait's speed across (m/s).
Footing = namedtuple("Footing", "row contact car roof_z gait_v lo hi mu_static mu_kinetic slope slope_cos slope_sin "
                                "edge gait_vy")

# What the step found at t_k, for the record.
Seen = namedtuple("Seen", "mode row x roof_z lean rate u wx air normal grip mu_static xcom lo hi margin "
                          "lean_required y w across ft wy flow com_z")


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
    walking = beat.mode == Mode.PLANTED and not bal.lying
    gait_v = plan.gait_speed if walking else 0.0
    gait_vy = plan.gait_speed_y if walking else 0.0
    under = cars[car if car >= 0 else 0]
    edge = 0.5 * under.width - abs(slide.y) - posture.half_width
    slope = roof_slope(under, slide.y)
    slope_cos, slope_sin = slope_cos_sin(slope)
    return Footing(row, contact, car, roof_z_at(under, slide.y), gait_v, posture.support_lo, posture.support_hi,
                   mu_s, mu_k, slope, slope_cos, slope_sin, edge, gait_vy)


# Across the track at t_k, for the record: the roll and its rate (rad, rad/s),
# the extrapolated centre of mass (m from the pivot), the margin of stability
# (m, NaN not judged), the tangent of the roll the load needs, the support's
# half-width (m) and the centre of pressure across the track (m from the pivot line).
Across = namedtuple("Across", "roll rate xcom margin required_tan half cop")


@kernel
def roof_iteration(v, inputs, env, state, plan, act, out, touch):
    """One step on the roof; touch: the other performer's force on the body (partners.Touch)."""
    beat, slide = state.beat, state.slide
    ft = footing(v, inputs, beat, state.balance, slide, plan)
    row = plan.row
    posture = inputs.postures[row]
    wx = env.wind_x - (env.speed + slide.u + ft.gait_v)
    wy = env.wind_y - (slide.w + ft.gait_vy)
    bal = state.balance
    flow = roof_flow(inputs.airflow[0], inputs.cars, ft.car, slide.x, slide.y, env.wind_x - env.speed, env.wind_y,
                     v.params.density)
    # During a deliberate change of posture the performer knows where their own
    # body is: the braced load follows the posture, so the balance resumes from
    # the posture reached and not from one the anticipation is still catching up with.
    if plan.settling and beat.mode == Mode.PLANTED:
        bal = restart(bal)
    restart_now = bal.restart
    g = G + env.body.felt_z
    bal, load, target = settle(bal, posture, wx, wy, v.mass, env.accel + slide.udot, v.drag,
                               v.params.max_lean, v.dt, ft.contact != Contact.BODY and beat.mode != Mode.DOWN, g,
                               flow, touch)
    if restart_now:
        v.buf_err[:] = 0.0
        v.buf_rate[:] = 0.0
        v.buf_ff[:] = equilibrium_cop(load, bal.lean)
        bal = carry_on(bal)
    if load.normal <= 0.0 and beat.mode != Mode.DOWN:
        return lift_off(v, inputs, env, State(beat, slide, bal, state.flight, state.frontal), ft, load, out)
    was_assessing = beat.assessing
    lean_k, rate_k = bal.lean, bal.rate
    beat, bal, xcom, margin = balance(v, inputs, env, beat, bal, load, target, ft, plan.settling, slide.x, out)
    if bal.shift != 0.0:
        # A recovery step: the feet move, the body stays; the controller starts afresh from here.
        if was_assessing:
            out.outcomes[v.b, act].recovery_steps += 1
        slide = Slide(slide.x + bal.shift, slide.u, slide.udot, slide.gait_phase, slide.y, slide.w)
        bal = stepped(bal)
        v.buf_err[:] = bal.lean - target.lean
        v.buf_rate[:] = bal.rate
        v.buf_ff[:] = equilibrium_cop(load, bal.lean)
    side_load = frontal_load(load.air, v.mass, load.com_z, ft.slope_sin, env.body.felt_y, load.normal, g)
    beat, bal, fr, slide, across = sideways(v, inputs, env, beat, bal, state.frontal, side_load, ft, plan, slide,
                                            restart_now, was_assessing, act, out)
    pull = load.air
    side = side_load.side
    if inputs.tethers.shape[0] > 0:
        # The tethers hold the body's sliding contact: their stretch is measured to the harness where the
        # posture's centre of mass stands upright over the contact (a lean or a topple does not stretch
        # them), and their pull adds to the loads the roof's friction must hold and to the normal load,
        # not to the balance.
        tx, ty, tz = watch_tethers(v, inputs, env, not beat.assessing or beat.mode != Mode.PLANTED,
                                   slide.x + posture.com_x, slide.y, ft.roof_z + posture.com_z,
                                   slide.u + ft.gait_v, slide.w + ft.gait_vy, 0.0, out)
        pull = AirLoad(load.air.fx + tx, load.air.fy + ty, load.air.fz + tz, load.air.torque_cos,
                       load.air.torque_sin, load.air.roll)
        side += ty
    beat, grip, moved = grip_and_slide(v, inputs, env, beat, bal, load, pull, side, ft, plan, slide, g, out)
    lean_required = 0.0 if plan.settling else target.required
    air = load.wind
    if was_assessing and beat.mode != Mode.DOWN and not bal.lying:
        bx, by = at_height(flow, wx, wy, load.com_z)
        note_stance(out.outcomes[v.b, act], ft.mu_static, grip.demand, margin, across.margin, ft.edge,
                    grip.static_normal / v.weight, lean_required, across.required_tan, math.sqrt(wx * wx + wy * wy),
                    math.sqrt(air.fx * air.fx + air.fy * air.fy + air.fz * air.fz), abs(env.body.felt_y), ft.contact,
                    math.sqrt(bx * bx + by * by))
    if anything_overhead(inputs):
        beat = overhead_step(v, inputs, env, beat, posture, lean_k, slide.x, ft.roof_z, act, out)
    if out.recording:
        record_roof(out.record[env.k], env, Seen(beat.mode, row, slide.x, ft.roof_z, lean_k, rate_k, slide.u, wx, air,
                                                 load.normal, grip, ft.mu_static, xcom, ft.lo, ft.hi, margin,
                                                 lean_required, slide.y, slide.w, across, ft, wy, flow, load.com_z))
    if beat.mode == Mode.GONE:
        # Struck: the pose at the strike stays where it was.
        return State(beat, moved, bal, take_off(posture, row, lean_k, slide.x, ft.roof_z, 0.0, 0.0, slide.y, 0.0,
                                                across.roll), fr)
    return leave_roof(v, inputs, env, State(beat, moved, bal, state.flight, fr), load, ft, plan, act, out)


@small
def lift_off(v, inputs, env, state, ft, load, out):
    """The roof no longer bears the body: it flies from where it stands, at its own velocity, from t_k."""
    bal, slide, fr = state.balance, state.slide, state.frontal
    note_event(out.events, v.b, Event.LIFT, env.t, slide.x, env.distance, inputs.cars, -load.normal, v.weight)
    fl = fly_from(inputs.postures[ft.row], ft, bal, fr, slide, load, ft.roof_z)
    return State(lifted(state.beat), slide, bal, fl, fr)


@small
def fly_from(posture, ft, bal, fr, slide, load, roof_z):
    """The body leaving the roof as it is: its lean and roll, at its own velocity (the contact's slide
    and gait, and the lean's and roll's rates at the centre of mass)."""
    return take_off(posture, ft.row, bal.lean, slide.x, roof_z, slide.u + ft.gait_v + bal.rate * load.com_z,
                    -bal.rate * load.com_x, slide.y, slide.w + ft.gait_vy + fr.rate * load.com_z * math.cos(fr.roll),
                    fr.roll)


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
def sideways(v, inputs, env, beat, bal, fr, side_load, ft, plan, slide, restart_now, was_assessing, act, out):
    """Balance across the track: (beat, balance, frontal, slide, Across).

    Judged standing or kneeling, as along the track; held still lying, on hands
    and knees, or in a deliberate posture change; a body toppling sideways
    falls on until it lies on its side.
    """
    posture = inputs.postures[ft.row]
    nan = math.nan
    judged = (ft.contact != Contact.BODY and not (plan.settling and beat.mode == Mode.PLANTED)
              and (beat.mode == Mode.PLANTED or beat.mode == Mode.SLIDING)) or fr.falling
    if not judged or bal.lying:
        fr = held(fr, fr.roll)
        return beat, bal, fr, slide, Across(fr.roll, 0.0, nan, nan, 0.0, posture.half_width, nan)
    roll_k, rate_k = fr.roll, fr.rate
    gait = ft.contact == Contact.FEET and plan.gait_rate > 0.0 and beat.mode == Mode.PLANTED
    cycle = 2.0 * math.pi
    new_step = math.floor((slide.gait_phase + cycle * plan.gait_rate * v.dt) / cycle) > math.floor(
        slide.gait_phase / cycle)
    step = frontal_step(fr, side_load, posture.inertia, posture.half_width, beat.mode, ft.contact == Contact.FEET,
                        v.params.recovery_step, v.params.max_lean, restart_now, v.buf_roll_err, v.buf_roll_rate,
                        v.buf_roll_ff, env.k, v.mass, v.dt, gait, new_step)
    fr = step.frontal
    toward = 1 if step.xcom > 0 else -1
    if step.happened == 1:
        if was_assessing:
            out.outcomes[v.b, act].recovery_steps += 1
        note_event(out.events, v.b, Event.RECOVERY_STEP, env.t, slide.x, env.distance, inputs.cars, abs(step.xcom),
                   posture.half_width)
        note_side(out.events, v.b, Event.RECOVERY_STEP, env.t, toward)
        slide = Slide(slide.x, slide.u, slide.udot, slide.gait_phase, slide.y + step.shift, slide.w)
    elif step.happened == 2 and beat.mode == Mode.PLANTED:
        note_event(out.events, v.b, Event.TOPPLE, env.t, slide.x, env.distance, inputs.cars, abs(step.xcom),
                   posture.half_width)
        note_side(out.events, v.b, Event.TOPPLE, env.t, toward)
        beat = with_mode(failed(beat), Mode.DOWN)
    if fr.falling and abs(fr.roll) >= LIE_ANGLE:
        if beat.mode == Mode.SLIDING and not bal.lying:
            # Rolled over onto its side while sliding (no step can be taken on sliding feet): a topple too,
            # and the body slides on lying down.
            note_event(out.events, v.b, Event.TOPPLE, env.t, slide.x, env.distance, inputs.cars, abs(step.xcom),
                       posture.half_width)
            note_side(out.events, v.b, Event.TOPPLE, env.t, 1 if fr.roll > 0 else -1)
            beat = with_mode(failed(beat), Mode.DOWN)
        bal = laid(bal)
    margin = step.margin if beat.mode == Mode.PLANTED or step.happened == 2 else nan
    return beat, bal, fr, slide, Across(roll_k, rate_k, step.xcom, margin, step.required_tan, posture.half_width,
                                        step.cop)


@kernel
def grip_and_slide(v, inputs, env, beat, bal, load, pull, side, ft, plan, slide, g, out):
    """Grip demand, a slip if it beats static friction, and the contact's move: (beat, grip, slide at t_(k+1)).
    pull: the air load, with any tethers' pull added."""
    phase = slide.gait_phase + 2.0 * math.pi * plan.gait_rate * v.dt
    walking = beat.mode == Mode.PLANTED and not bal.lying
    push = gait_force(phase, plan.gait_friction, v.weight) if walking else 0.0
    grip = grip_demand(pull, v.mass, env.accel, push, side, ft.slope_cos, g)
    x, u, udot, y, w = slide.x, slide.u, slide.udot, slide.y, slide.w
    if beat.mode == Mode.PLANTED or (beat.mode == Mode.DOWN and bal.lying and u == 0.0 and w == 0.0):
        if grip.demand > ft.mu_static:
            note_event(out.events, v.b, Event.SLIP, env.t, x, env.distance, inputs.cars, grip.demand, ft.mu_static)
            if abs(grip.need_y) > abs(grip.need_x):
                note_side(out.events, v.b, Event.SLIP, env.t, 1 if grip.need_y < 0 else -1)
            beat = failed(beat)
            if beat.mode == Mode.PLANTED:
                beat = with_mode(beat, Mode.SLIDING)
            u, w = slide_direction(grip.need_x, grip.need_y)
        else:
            x += ft.gait_v * v.dt
            y += ft.gait_vy * v.dt
            udot = 0.0
    if beat.mode == Mode.SLIDING or (beat.mode == Mode.DOWN and (u != 0.0 or w != 0.0)):
        com_accel_x = bal.accel * load.com_z - bal.rate * bal.rate * load.com_x
        u, w, udot, stopped = slide_step(u, w, pull.fx - v.mass * env.accel, side, v.mass, ft.mu_kinetic,
                                         grip.static_normal, com_accel_x, v.dt)
        if stopped and beat.mode == Mode.SLIDING:
            beat = with_mode(beat, Mode.PLANTED)
        x += u * v.dt
        y += w * v.dt
    return beat, grip, Slide(x, u, udot, phase, y, w)


@kernel
def leave_roof(v, inputs, env, state, load, ft, plan, act, out):
    """At t_(k+1): past a side edge or off an end the body flies from where it is (a body down on
    the roof once its centre of mass has gone past an edge), and a jump takes off when it is ready."""
    beat, bal, slide, fr = state.beat, state.balance, state.slide, state.frontal
    posture = inputs.postures[ft.row]
    lying = beat.mode == Mode.DOWN or bal.lying
    car = car_at(inputs.cars, slide.x)
    com_y = slide.y + load.com_z * math.sin(fr.roll) if lying else slide.y
    if car >= 0 and abs(com_y) > 0.5 * inputs.cars[car].width:
        toward = 1 if com_y > 0 else -1
        note_event(out.events, v.b, Event.OFF_SIDE, env.t + v.dt, slide.x, travel(env, v.dt), inputs.cars,
                   abs(slide.w + ft.gait_vy), abs(com_y) - 0.5 * inputs.cars[car].width)
        note_side(out.events, v.b, Event.OFF_SIDE, env.t + v.dt, toward)
        # Off it from the highest roof under the support (its inner side on a crowned roof).
        inner = roof_z_at(inputs.cars[car], slide.y - toward * min(posture.half_width, abs(slide.y)))
        fl = over_the_side(fly_from(posture, ft, bal, fr, slide, load, inner), toward)
        return State(with_mode(failed(beat), Mode.FLIGHT), slide, bal, fl, fr)
    if (over_an_end(inputs.cars, posture, bal, slide) if lying else car < 0):
        return State(with_mode(beat, Mode.FLIGHT), slide, bal, fly_from(posture, ft, bal, fr, slide, load, ft.roof_z),
                     fr)
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
                  action.takeoff_vz * scale, slide.y, 0.0, 0.0)
    speed = math.hypot(action.takeoff_vx, action.takeoff_vz) * scale
    note_event(out.events, v.b, Event.TAKEOFF, t_next, slide.x, travel(env, v.dt), inputs.cars, speed, 0.0)
    note_takeoff(out.outcomes[v.b, act], t_next, slide.x)
    return State(Beat(Mode.FLIGHT.value, act, beat.landed, beat.assessing, False, beat.failed_act, beat.plan_row),
                 slide, bal, fl, level())


@kernel
def over_an_end(cars, posture, bal, slide):
    """Whether a falling or lying body's centre of mass is past the end of the roof it is on."""
    cx, unused = rotate(posture.com_x, posture.com_z, math.cos(bal.lean), math.sin(bal.lean))
    return car_at(cars, slide.x + cx) < 0
