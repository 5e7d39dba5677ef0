"""The carried state of one variant's run, grouped by concern, and the step's surroundings.

Each concern's own state lives with it (stance.Balance, frontal.Frontal,
sliding.Slide, flight.Flight, turbulence.Turbulence); here are the records that tie them
together in the step driver.
"""

from __future__ import annotations

from collections import namedtuple

from physics.engine.jit import small
from physics.records import Mode

# What stays fixed through one variant's run: its index b and parameters (a
# records.PARAMS row), its roof friction multiplier per car, the body's drag
# factors, mass (kg) and weight (N), the engine step (s), and the delay lines
# of the balance controller along and across the track.
Variant = namedtuple("Variant", "b params roof_scale drag mass weight dt buf_err buf_rate buf_ff buf_roll_err "
                                "buf_roll_rate buf_roll_ff")
# Where the results go; `recording` when this variant fills `record`; `tethers` the rigging's
# per-variant state and peaks (records.TETHER_OUT, (batch, tethers)).
Outputs = namedtuple("Outputs", "events outcomes record recording tethers")
# Progress of the beat: the body's Mode, the last jump taken and landed (action
# indices, -1 none), whether the beat is still assessed (no failure yet),
# whether the body left the roof at t_k itself (a lift), so its flight starts
# within this step; after a failure, the action it happened in and the posture
# row the performer keeps (-1 before).
Beat = namedtuple("Beat", "mode jumped landed assessing leaves_now failed_act plan_row")
# What the performer does at a step: the posture row, the commanded gait speed
# along the track (m/s), push (fraction of weight) and rate (steps/s), whether a
# posture change is under way, and the gait speed across the roof (m/s, + left).
# After a failure the performer no longer follows the beat: the posture stays as
# it was and the gait stops.
Plan = namedtuple("Plan", "row gait_speed gait_friction gait_rate settling gait_speed_y")
State = namedtuple("State", "beat slide balance flight frontal")
# Step k: its time (s), the consist's speed (m/s), acceleration (m/s^2) and
# travel (m), the ambient wind in the car's axes (m/s), the next step's speed,
# whether this is the last step, and the car body's motion on the track (a
# curves.CarBody: felt lateral and vertical accelerations, its lateral
# acceleration over the ground, cant and roll).
Env = namedtuple("Env", "k t speed accel distance wind_x wind_y next_speed last body")


@small
def with_mode(beat, mode):
    """The beat with the body in `mode` (a records.Mode)."""
    return Beat(mode.value, beat.jumped, beat.landed, beat.assessing, False, beat.failed_act, beat.plan_row)


@small
def failed(beat):
    """The beat after a failure: no longer assessed."""
    return Beat(beat.mode, beat.jumped, beat.landed, False, beat.leaves_now, beat.failed_act, beat.plan_row)


@small
def lifted(beat):
    """The beat with the body lifted off the roof at t_k: a failure, in the air from this step."""
    return Beat(Mode.FLIGHT.value, beat.jumped, beat.landed, False, True, beat.failed_act, beat.plan_row)


@small
def after_failure(beat, act, row):
    """The beat after a failure in action `act`, the performer keeping posture `row` (-1: not yet)."""
    return Beat(beat.mode, beat.jumped, beat.landed, beat.assessing, beat.leaves_now, act, row)


@small
def travel(env, tau):
    """Consist travel (m) a time tau (s) into step k: constant acceleration within a step."""
    return env.distance + env.speed * tau + 0.5 * env.accel * tau * tau
