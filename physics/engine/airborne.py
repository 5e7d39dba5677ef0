"""One step of a body in the air: record it, advance it, find its touchdown or its fall."""

from __future__ import annotations

import math

from physics.engine.air_load import air_load, at_height, rotate
from physics.engine.beat_state import Beat, State, failed, travel, with_mode
from physics.engine.flight import (ACROSS_REACH, Flight, beside, crossing, inside_margin, kept_out_of_cars, land,
                                   on_the_ground, rk4, rk4_tethered, take_off, touchdown_car)
from physics.engine.frontal import held, level, roof_z_at
from physics.engine.jit import apart, kernel, small
from physics.engine.outcome import note_air, note_event, note_landing_margin, note_target, note_touchdown
from physics.engine.overhead import anything_overhead, overhead_step
from physics.engine.recording import record_flight
from physics.engine.roof import car_at
from physics.engine.roof_air import raised, roof_flow, uniform_flow
from physics.engine.sliding import Slide
from physics.engine.stance import Balance, after_landing
from physics.engine.tether import watch_tethers
from physics.records import Event, Mode


@apart
def flight_iteration(v, inputs, env, state, act, out, touch):
    """Assess and record the body in the air at t_k, then one RK4 step with touchdown inside it; touch: the
    other performer's force on the body (partners.Touch; None alone), held over the step."""
    fl = state.flight
    beat = state.beat
    if beat.leaves_now:
        beat = with_mode(beat, Mode.FLIGHT)
    posture = inputs.postures[fl.row]
    if anything_overhead(inputs):
        cx, cz = rotate(posture.com_x, posture.com_z, math.cos(fl.lean), math.sin(fl.lean))
        beat = overhead_step(v, inputs, env, beat, posture, fl.lean, fl.x - cx, fl.z - cz, act, out)
    flow = flight_flow(v, inputs, env, fl, posture)
    if beat.assessing and beat.mode == Mode.FLIGHT:
        # The air met in the air counts in the action's maxima, as on the roof.
        app_x = env.wind_x - (env.speed + fl.vx)
        app_y = env.wind_y - fl.vy
        c, s = math.cos(fl.lean), math.sin(fl.lean)
        air = air_load(posture, c, s, app_x, app_y, -fl.vz, v.drag, flow)
        unused, cz = rotate(posture.com_x, posture.com_z, c, s)
        bx, by = at_height(flow, app_x, app_y, cz)
        note_air(out.outcomes[v.b, act], math.sqrt(app_x * app_x + app_y * app_y),
                 math.sqrt(air.fx * air.fx + air.fy * air.fy + air.fz * air.fz), math.sqrt(bx * bx + by * by))
    if out.recording:
        record_flight(out.record[env.k], env, fl, posture, v.drag, beat.mode, flow)
    tout = out.tethers[v.b]
    if inputs.tethers.shape[0] > 0 and beat.mode == Mode.FLIGHT:
        watch_tethers(v, inputs, env, True, fl.x, fl.y, fl.z, fl.vx, fl.vy, fl.vz, out)
    if beat.mode == Mode.GONE or env.last:
        return State(beat, state.slide, state.balance, fl, state.frontal)
    if touch is None:
        push = (0.0, 0.0, 0.0)
    else:
        push = (touch.fx / v.mass, touch.fy / v.mass, touch.fz / v.mass)
    if inputs.tethers.shape[0] > 0:
        new = rk4_tethered(fl, posture, env.speed, env.next_speed, env.accel, env.body.ground_y, env.wind_x,
                           env.wind_y, v.drag, v.mass, v.dt, inputs.tethers, tout, flow, push)
    else:
        new = rk4(fl, posture, env.speed, env.next_speed, env.accel, env.body.ground_y, env.wind_x, env.wind_y, v.drag,
                  v.mass, v.dt, flow, push)
    car, cross = touchdown_car(inputs.cars, fl, new, not beat.assessing)
    if car >= 0:
        return touch_down(v, inputs, env, State(beat, state.slide, state.balance, fl, state.frontal), car, cross, act,
                          out)
    beat, new = check_fall(v, inputs, env, beat, fl, new, act, out)
    # A tether pulls a body hanging beside a car against its side, shoulders and arms too: its centre
    # of mass stays their reach out from the side, not half a body's depth.
    new, unused = kept_out_of_cars(inputs.cars, fl, new, ACROSS_REACH if inputs.tethers.shape[0] > 0 else 0.0)
    if new.z + new.low_dz <= 0.0:
        # On the ground beside or between the cars: it stays where it came down, in the ground frame.
        if inputs.tethers.shape[0] > 0:
            # With rigging a fall is the body reaching the ground (the tethers did not hold it).
            note_event(out.events, v.b, Event.FALL, env.t + v.dt, new.x + new.low_dx, travel(env, v.dt),
                       inputs.cars, lowest_roof(inputs.cars), 0.0)
            note_target(out.events, v.b, Event.FALL, env.t + v.dt, inputs.actions[act].landing_car)
            beat = failed(beat)
        lying_row = inputs.body[0].lying_row
        new = on_the_ground(new, inputs.postures[lying_row], lying_row, new.x + travel(env, v.dt))
        beat = with_mode(beat, Mode.GONE)
    return State(beat, state.slide, state.balance, new, state.frontal)


@kernel
def flight_flow(v, inputs, env, fl, posture):
    """The air over the roof under a body in the air, as it is at the step's start: that of the roof
    below its centre of mass, read from the height of its posture's pivot above it; uniform beside the
    cars, over a gap or once fallen."""
    if not inputs.airflow[0].on or fl.fallen:
        return uniform_flow()
    cars = inputs.cars
    car = car_at(cars, fl.x)
    if car < 0:
        return uniform_flow()
    unused, cz = rotate(posture.com_x, posture.com_z, math.cos(fl.lean), math.sin(fl.lean))
    flow = roof_flow(inputs.airflow[0], cars, car, fl.x, fl.y, env.wind_x - env.speed, env.wind_y, v.params.density)
    return raised(flow, fl.z - cz - roof_z_at(cars[car], fl.y))


@small
def lowest_roof(cars):
    low = math.inf
    for i in range(cars.shape[0]):
        low = min(low, cars[i].roof_height)
    return low


@kernel
def check_fall(v, inputs, env, beat, before, after, act, out):
    """Below every roof with none beneath: a fall. A descent through the declared
    landing car's roof level outside it sets the landing margin (the miss)."""
    cars = inputs.cars
    declared = inputs.actions[act].landing_car
    if declared >= 0 and beat.assessing:
        cross = crossing(before, after, cars[declared].roof_height)
        if cross.frac >= 0.0:
            note_landing_margin(out.outcomes[v.b, act], inside_margin(cars, declared, cross.x + before.low_dx))
    over = car_at(cars, after.x + after.low_dx)
    if before.fallen or (over >= 0 and not beside(cars[over], after.y)):
        return beat, after
    low = lowest_roof(cars)
    cross = crossing(before, after, low)
    if cross.frac < 0.0:
        return beat, after
    fallen = Flight(after.x, after.z, after.vx, after.vz, after.row, after.lean, after.low_dx, after.low_dz,
                    after.left, after.right, True, after.ground_x, after.y, after.vy, after.roll, after.side)
    if inputs.tethers.shape[0] > 0:
        # Tethers may yet hold it: the fall is noted if it reaches the ground, an arrest if they stop it.
        return beat, fallen
    tau = cross.frac * v.dt
    note_event(out.events, v.b, Event.FALL, env.t + tau, cross.x + before.low_dx, travel(env, tau), cars,
               low - (after.z + after.low_dz), 0.0)
    note_target(out.events, v.b, Event.FALL, env.t + tau, declared)
    return failed(beat), fallen


@kernel
def touch_down(v, inputs, env, state, car, cross, act, out):
    """The landing rule at touchdown; notes the touchdown, the landing margin, a missed or hard landing, or a fall."""
    cars = inputs.cars
    action = inputs.actions[act]
    beat = state.beat
    if not beat.assessing:
        return come_down(v, inputs, env, state, car, cross)
    ld = land(cars, car, cross, state.flight, inputs.postures[action.landed_row], v.roof_scale,
              v.params.recovery_step)
    tau = cross.frac * v.dt
    t = env.t + tau
    s = travel(env, tau)
    declared = action.landing_car if action.landing_car >= 0 else car
    margin = inside_margin(cars, declared, ld.pivot)
    note_event(out.events, v.b, Event.TOUCHDOWN, t, ld.pivot, s, cars, abs(cross.vx), abs(cross.vz))
    note_touchdown(out.outcomes[v.b, act], t, ld.pivot, ld.car, abs(cross.vx))
    if beat.assessing:
        note_landing_margin(out.outcomes[v.b, act], margin)
    if ld.car < 0:
        # The lowest point touched a roof but the feet stand over a gap or past an end.
        note_event(out.events, v.b, Event.FALL, t, ld.pivot, s, cars, margin, 0.0)
        note_target(out.events, v.b, Event.FALL, t, declared)
        fl = take_off(inputs.postures[action.landed_row], action.landed_row, 0.0, ld.pivot,
                      roof_z_at(cars[car], state.flight.y), 0.0, 0.0, state.flight.y, 0.0, 0.0)
        return State(with_mode(failed(beat), Mode.GONE), state.slide, state.balance, fl, state.frontal)
    if ld.car != declared:
        note_event(out.events, v.b, Event.MISSED_LANDING, t, ld.pivot, s, cars, -margin, 0.0)
        note_target(out.events, v.b, Event.MISSED_LANDING, t, declared)
        beat = failed(beat)
    if ld.hard:
        note_event(out.events, v.b, Event.HARD_LANDING, t, ld.pivot, s, cars, abs(cross.vx), ld.absorb)
        beat = failed(beat)
    mode = Mode.SLIDING.value if ld.hard else Mode.PLANTED.value
    slide = Slide(ld.pivot, ld.speed if ld.hard else 0.0, 0.0, state.slide.gait_phase, state.flight.y,
                  state.flight.vy if ld.hard else 0.0)
    # After a failure the performer keeps the posture they landed in.
    plan_row = beat.plan_row if beat.assessing else action.landed_row
    return State(Beat(mode, beat.jumped, act, beat.assessing, False, beat.failed_act, plan_row), slide,
                 after_landing(state.balance), state.flight, level())



@kernel
def come_down(v, inputs, env, state, car, cross):
    """After a failure the body comes down onto a roof as it is, not onto its feet: down on the
    roof at the lean it flew with, its lowest point the contact, sliding on the speed it keeps."""
    fl = state.flight
    beat = state.beat
    bal = state.balance
    lying = Balance(fl.lean, 0.0, 0.0, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, 0.0, 0.0, True, True)
    slide = Slide(cross.x + fl.low_dx, cross.vx, 0.0, state.slide.gait_phase, fl.y, fl.vy)
    return State(Beat(Mode.DOWN.value, beat.jumped, beat.landed, beat.assessing, False, beat.failed_act,
                      beat.plan_row), slide, lying, fl, held(state.frontal, fl.roll))
