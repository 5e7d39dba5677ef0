"""The named vocabulary of the engine: every record, column and code that crosses
into or out of the compiled kernel, defined once here and read and written by
name everywhere (numpy structured dtypes, named tuples and IntEnum codes, all of
which numba compiles).

Inside the kernel every number is SI. Positions along the consist are in the
car frame (x = 0 at the lead car's front end, negative toward the rear) unless a
name says ground.
"""

from __future__ import annotations

from collections import namedtuple
from enum import IntEnum

import numpy as np

N_SEGMENTS = 12  # the stick figure's segments (physics.body.SEGMENTS)


class Mode(IntEnum):
    """What the body is doing on a step."""

    PLANTED = 0   # feet, knees or body held on the roof by static friction
    SLIDING = 1   # the contact slides under kinetic friction
    FLIGHT = 2    # airborne: a rigid posture under gravity and drag
    DOWN = 3      # toppled: falls over without control, then lies on the roof
    GONE = 4      # off the consist or struck: nothing more is simulated


class Contact(IntEnum):
    """How a posture touches the roof."""

    FEET = 0
    KNEES = 1
    BODY = 2      # prone, crawling, or lying after a topple


class ActionCode(IntEnum):
    POSTURE = 0   # stand, brace, crouch, duck, kneel, prone
    GAIT = 1      # walk, run, crawl
    JUMP = 2


class Event(IntEnum):
    """Event kinds; the first of each kind in a run is kept."""

    SLIP = 0
    TOPPLE = 1
    LIFT = 2
    FALL = 3
    STRIKE = 4
    LINE = 5
    HARD_LANDING = 6
    MISSED_LANDING = 7
    RECOVERY_STEP = 8
    TAKEOFF = 9
    TOUCHDOWN = 10
    OFF_SIDE = 11
    ARRESTED = 12          # a tether stopped a body going away from its anchor (not a failure)
    ANCHOR_OVERLOAD = 13   # an anchor's load passed its limit
    BODY_FORCE = 14        # the tethers' pull on the body passed the arrest-force limit
    HOLD_LOST = 15         # a hand hold (a grab or a catch) passed its breaking force and let go (not a failure
                           # in itself: what the released body does next is judged)


# Plain words shown to people, and which kinds are failures. A failure ends the
# assessment of the beat: margins stop at it and later actions are not assessed.
EVENT_WORDS = {
    Event.SLIP: "slip", Event.TOPPLE: "topple", Event.LIFT: "lift", Event.FALL: "fall",
    Event.STRIKE: "strike", Event.LINE: "line", Event.HARD_LANDING: "hard landing",
    Event.MISSED_LANDING: "missed landing", Event.RECOVERY_STEP: "recovery step",
    Event.TAKEOFF: "take-off", Event.TOUCHDOWN: "touchdown",
    Event.OFF_SIDE: "off the side", Event.ARRESTED: "arrested", Event.ANCHOR_OVERLOAD: "anchor overload",
    Event.BODY_FORCE: "body arrest force over limit", Event.HOLD_LOST: "hold let go",
}
FAILURES = (Event.SLIP, Event.TOPPLE, Event.LIFT, Event.FALL, Event.STRIKE, Event.LINE, Event.HARD_LANDING,
            Event.MISSED_LANDING, Event.OFF_SIDE, Event.ANCHOR_OVERLOAD, Event.BODY_FORCE)
N_EVENTS = len(Event)

# ---------------------------------------------------------------- per variant
# One row per variant of a batch (a sweep value, a Monte Carlo sample, a
# what-if). Roof friction varies per car and so lives in its own (B, cars)
# array of multipliers, `roof_scale`.
PARAMS = np.dtype([
    ("speed_scale", "f8"),        # multiplies the whole speed profile
    ("wind_x", "f8"),             # ambient mean wind, along the track (+ toward the front), m/s
    ("wind_y", "f8"),             # ambient mean wind, lateral (+ left), m/s
    ("density", "f8"),            # air density, kg/m^3
    ("mass", "f8"),               # performer mass, kg
    ("drag_scale", "f8"),         # multiplies the body's drag areas (segment table or lumped)
    ("reaction_time", "f8"),      # postural reaction latency, s
    ("turbulence_sigma", "f8"),   # standard deviation of the along-track turbulence, m/s (0 = none)
    ("turbulence_length", "f8"),  # turbulence length scale, m
    ("turbulence_seed", "i8"),
    ("gust_scale", "f8"),         # multiplies every discrete gust
    ("max_lean", "f8"),           # largest lean the performer will hold, rad
    ("recovery_step", "f8"),      # length of the one recovery step, m (0 = none)
    ("start_x", "f8"),            # starting pivot position, car frame, m
    ("start_y", "f8"),            # starting pivot offset across the roof from its centreline, m (+ left)
    ("takeoff_scale", "f8"),      # multiplies every take-off velocity
    ("flexibility", "f8"),        # car-body roll per unit of cant deficiency on the suspension
])

# -------------------------------------------------------------- shared inputs
# Per engine step: the consist's motion, the discrete gusts and the beat's
# prescribed timeline (state-independent, shared by every variant).
STEP = np.dtype([
    ("time", "f8"), ("speed", "f8"), ("accel", "f8"), ("distance", "f8"),
    ("accel_y", "f8"),            # car-body lateral acceleration given directly (tests), m/s^2 (+ left)
    ("ride_y", "f8"), ("ride_z", "f8"),  # ride vibration of the car body, across and up, m/s^2
    ("gust_x", "f8"), ("gust_y", "f8"),
    ("action", "i8"),             # index of the action under way
    ("row", "i8"),                # posture row of this step
    ("reset", "u1"),              # the pivot or facing changes here: balance restarts
    ("settling", "u1"),           # inside a deliberate posture change: balance not assessed
    ("pivot_shift", "f8"),        # how far the pivot moves within the body at a reset, m
    ("gait_speed", "f8"),         # commanded speed relative to the roof, m/s, signed (+ front)
    ("gait_speed_y", "f8"),       # its part across the roof, m/s (+ left)
    ("gait_friction", "f8"),      # peak horizontal gait force / body weight
    ("gait_rate", "f8"),          # steps per second
])

# One posture (a row): the figure relative to its pivot (the contact point on
# the roof), body frame turned to the car frame by the facing.
POSTURE = np.dtype([
    ("ends", "f8", (N_SEGMENTS, 2, 2)),  # segment endpoints [segment, proximal/distal, x/z], m
    ("axes", "f8", (N_SEGMENTS, 4)),     # segment midpoint x, z and unit axis x, z
    ("rotates", "u1", (N_SEGMENTS,)),    # whether the segment leans with the body (1) or stays put on the roof
    ("com_x", "f8"), ("com_z", "f8"),    # centre of mass, m
    ("inertia", "f8"),                   # moment of inertia about the pivot per kg of body mass, m^2
    ("support_lo", "f8"), ("support_hi", "f8"),  # rear-most and front-most support, m
    ("half_width", "f8"),                # half the support's width across the roof (frontal plane), m
    ("contact", "i8"),                   # Contact
    ("drag_ratio", "f8"),                # drag area in a headwind relative to standing
])

ACTION = np.dtype([
    ("code", "i8"),               # ActionCode
    ("start", "f8"),              # s
    ("takeoff_x", "f8"),          # jumps: take-off pivot position, car frame, m
    ("takeoff_vx", "f8"),         # take-off velocity relative to the roof, m/s
    ("takeoff_vz", "f8"),
    ("landing_car", "i8"),        # declared landing car (0-based), -1 for none
    ("air_row", "i8"),            # posture row held in the air
    ("landed_row", "i8"),         # posture row after a landing
])

CAR = np.dtype([
    ("front_x", "f8"), ("rear_x", "f8"), ("roof_height", "f8"),   # roof height at its centreline
    ("width", "f8"), ("crown", "f8"),                # roof width and the rise of its centre over its edges, m
    ("sole_static", "f8"), ("sole_kinetic", "f8"),   # footwear on the roof
    ("body_static", "f8"), ("body_kinetic", "f8"),   # clothing and pads (knees, prone, lying)
    # The air over this roof (physics.roof_air): the boundary layer thickness added by the gaps and
    # ends ahead of it (m); the speed-up over a streamlined lead front (factor) and how far back from
    # the car's front it reaches (m); the low-speed zone behind a bluff front edge or a step up: its
    # length back from the car's front and its height (m; 0 for none).
    ("flow_added", "f8"), ("speedup", "f8"), ("speedup_length", "f8"), ("zone_length", "f8"),
    ("zone_height", "f8"),
])

# The air over the roofs, shared by every car (one row): whether the profile is on, its power law's
# exponent 1/n, the flat-plate coefficient of delta / x = plate Re_x^(-1/7), the length of train
# ahead of the first car (m), the share of the air's velocity kept in a low-speed zone, and the
# air's dynamic viscosity (Pa s).
AIRFLOW = np.dtype([("on", "u1"), ("inv_n", "f8"), ("plate", "f8"), ("ahead", "f8"), ("zone_factor", "f8"),
                    ("viscosity", "f8")])

STRUCTURE = np.dtype([("x_start", "f8"), ("span", "f8"), ("soffit", "f8")])  # ground frame; soffit above rail
LINE = np.dtype([("x_start", "f8"), ("x_end", "f8"), ("wire_height", "f8"), ("exclusion", "f8")])

# The track as pieces of linearly changing curvature (1/m, + turning left) and
# cant tilt (rad, + the car's roof low on the left) from s0 to s1 (m along the
# track, the coordinate structures use), with the heading at s0 (rad, + left).
TRACK = np.dtype([("s0", "f8"), ("s1", "f8"), ("k0", "f8"), ("k1", "f8"), ("tilt0", "f8"), ("tilt1", "f8"),
                  ("heading0", "f8")])

BODY = np.dtype([
    ("crossflow_area", "f8", (N_SEGMENTS,)),  # Cd * breadth * length per segment, m^2 (before drag_scale)
    ("axial_area", "f8", (N_SEGMENTS,)),      # Cd * end area per segment, m^2
    ("side_area", "f8", (N_SEGMENTS,)),       # Cd * depth * length per segment in a side wind, m^2
    ("lumped_side_ratio", "f8"),              # the lumped body's side-on drag area over its frontal
    ("lumped", "u1"),                         # 1: one drag area at the centre of mass (a hand calculation)
    ("lumped_drag_area", "f8"),               # standing Cd*A of the lumped body, m^2
    ("lying_row", "i8"),                      # posture row of the body lying on the ground after a fall
])

# A tether from an anchor (or a running line's ring) to the harness, taken at the body's centre of
# mass. A point anchor has line_x0 == line_x1 == anchor_x; a running line runs from line_x0 to line_x1
# (line_x0 < line_x1) at (anchor_y, anchor_z) and its ring slides freely along it. Car frame, SI.
MAX_TETHERS = 4
TETHER = np.dtype([
    ("anchor_x", "f8"), ("anchor_y", "f8"), ("anchor_z", "f8"),   # anchor (or the line's) position, m
    ("line_x0", "f8"), ("line_x1", "f8"),  # a running line's ends along the track, m (equal: a point anchor)
    ("running", "u1"),                     # 1: a running line
    ("length", "f8"),                      # unstretched tether length, m
    ("stiffness", "f8"),                   # N/m
    ("damping_ratio", "f8"),               # of the tether with the body's mass on it
    ("deploy_force", "f8"),                # energy absorber deploys above this force, N (inf: none)
    ("max_extension", "f8"),               # absorber pays out at most this, m (0: none)
    ("sag", "f8"),                         # a running line's sag at mid-span under the load, m
    ("body_limit", "f8"),                  # arrest force on the body the scene allows, N
    ("anchor_limit", "f8"),                # load an anchor may take, N
])

Inputs = namedtuple("Inputs", "steps postures actions cars structures lines body track airflow tethers")


class LinkCode(IntEnum):
    """How two performers act on each other (physics.partners)."""

    PUSH = 0    # a force the actor puts on the partner while in reach: shove, pull, throw, contact punch
    HOLD = 1    # a grab: a hand hold, a one-sided spring-damper from where it closed, up to a breaking force
    CATCH = 2   # a catch: a hold closed on a partner in the air, taking push and pull, up to a breaking force


# One interaction between the two performers of a scene (physics.partners), performers 0 and 1. The
# force on the partner is the negative of the force on the actor. Car frame, SI.
LINK = np.dtype([
    ("code", "i8"),               # LinkCode
    ("actor", "i8"),              # 0 or 1; the partner is the other
    ("start", "f8"), ("end", "f8"),   # s
    ("force", "f8"),              # PUSH: peak force, N (a pulse: a half sine; steady: ramps of `ramp` s)
    ("steady", "u1"),             # PUSH: 1 steady (ramped in and out), 0 a half-sine pulse
    ("ramp", "f8"),               # PUSH, steady: ramp time in and out, s
    ("toward", "i8"),             # PUSH: +1 away from the actor, -1 toward the actor (a pull), 0 fixed direction
    ("dir_x", "f8"), ("dir_y", "f8"),   # PUSH, fixed direction: horizontal unit vector (car axes)
    ("up", "f8"),                 # PUSH: the force's angle above the horizontal, rad
    ("reach", "f8"),              # largest shoulder-to-partner distance at which the hands touch, m
    ("breaking", "f8"),           # HOLD, CATCH: force at which the hold lets go, N
    ("stiffness", "f8"),          # HOLD, CATCH: N/m
    ("damping", "f8"),            # HOLD, CATCH: damping ratio with the two bodies' reduced mass
    ("close", "f8"),              # CATCH: how near the arms gather the flyer, shoulders to centre of mass, m
    ("draw", "f8"),               # CATCH: how fast the arms draw the flyer in until then, m/s
    ("facing", "i8"),             # the actor's facing (+1 front): a push's direction when they stand at one place
])

# Per variant pair and link: what the interaction did.
LINK_OUT = np.dtype([
    ("engaged", "f8"),            # first time the hands were on the partner, s (NaN: never within reach)
    ("rest", "f8"),               # HOLD, CATCH: the hold's length, m (a catch's shortens as it gathers)
    ("released", "f8"),           # when it ended: out of reach, let go, or the window closed, s (NaN: never)
    ("lost", "f8"),               # when a hold passed its breaking force, s (NaN: it held)
    ("peak", "f8"),               # largest force between them, N
    ("impulse", "f8"),            # the impulse it gave the partner, magnitude of the integral of the force, N s
    ("ix", "f8"), ("iy", "f8"), ("iz", "f8"),   # its components, N s (car axes)
    ("gx", "f8"), ("gy", "f8"), ("gz", "f8"),   # CATCH: the flyer's offset when gathered, m (NaN before)
    ("ox", "f8"), ("oy", "f8"), ("oz", "f8"),   # HOLD, CATCH: the partner's offset from the actor last step, m
])

# -------------------------------------------------------------------- outputs
EVENT = np.dtype([
    ("time", "f8"),               # s (NaN: did not happen)
    ("x_car", "f8"),              # where, car frame, m
    ("x_ground", "f8"),           # where, ground frame, m
    ("car", "i8"),                # car index under it, -1 for none
    ("demand", "f8"),             # the numbers behind it (see verdict.describe)
    ("available", "f8"),
    ("target_car", "i8"),         # a missed landing: the car declared for it; else -1
    ("side", "i8"),               # toward which side: +1 left, -1 right, 0 along the track
])

# Per variant and tether: the absorber's state and the run's peaks, written as the run goes.
TETHER_OUT = np.dtype([
    ("paid", "f8"),               # absorber pay-out so far, m
    ("rate", "f8"),               # stretch rate at the last step, m/s (to find an arrest)
    ("peak_force", "f8"),         # highest tether force, N
    ("peak_anchor", "f8"),        # highest anchor load, N (a running line: its end anchor's)
    ("peak_time", "f8"),          # when the tether force peaked, s (NaN: never taut)
    ("taut_time", "f8"),          # first time the tether went taut, s (NaN: never)
])

# Per action: extremes of the margins while the beat is assessed, and the
# facts of a jump. Minima start at +inf, maxima at 0, times at NaN.
OUTCOME = np.dtype([
    ("grip_ratio_min", "f8"),          # static friction available / needed
    ("grip_demand_max", "f8"),         # friction needed (horizontal load / net normal load)
    ("balance_margin_min", "f8"),      # margin of stability, m
    ("lift_ratio_min", "f8"),          # normal force / weight, quasi-static
    ("lean_max", "f8"),                # lean needed to balance the load, rad
    ("apparent_wind_max", "f8"),       # m/s
    ("drag_max", "f8"),                # aerodynamic force, N
    ("landing_margin_min", "f8"),      # distance inside the declared landing car's nearest end, m (negative: missed)
    ("clearance_min", "f8"),           # overhead clearance (structures, line exclusion zones), m
    ("takeoff_time", "f8"), ("takeoff_x", "f8"),
    ("touchdown_time", "f8"), ("touchdown_x", "f8"), ("touchdown_car", "i8"),
    ("touchdown_speed", "f8"),         # horizontal speed relative to the roof at touchdown, m/s
    ("recovery_steps", "i8"),          # recovery steps taken
    ("frontal_margin_min", "f8"),      # margin of stability across the track (frontal plane), m
    ("edge_margin_min", "f8"),         # distance from the support to the nearer side edge of the roof, m
    ("lateral_accel_max", "f8"),       # car-body lateral acceleration felt on the roof, m/s^2
    ("body_wind_max", "f8"),           # apparent wind at the centre of mass's height (the air over the roof), m/s
])
OUTCOME_MINIMA = ("grip_ratio_min", "balance_margin_min", "lift_ratio_min", "landing_margin_min", "clearance_min",
                  "frontal_margin_min", "edge_margin_min")
OUTCOME_TIMES = ("takeoff_time", "takeoff_x", "touchdown_time", "touchdown_x", "touchdown_speed")

# Per recorded step: physical state, the air it met, the loads on it and the
# kernel's own assessment. Geometry (segment ends, centre of mass on the roof,
# support) and ratios are derived from these in numpy (physics.simulation).
RECORD = np.dtype([
    ("mode", "i8"),               # Mode
    ("row", "i8"),                # posture row drawn and loaded
    ("pivot_x", "f8"),            # contact point, car frame, m (NaN in flight)
    ("pivot_y", "f8"),            # contact point across the roof from its centreline, m (+ left; NaN in flight)
    ("contact_z", "f8"),          # roof height under the contact, m
    ("lean", "f8"),               # whole-body lean about the pivot (in flight: of the frozen posture), rad
    ("lean_rate", "f8"),          # rad/s
    ("roll", "f8"),               # sideways lean (frontal plane), rad (+ toward the left)
    ("roll_rate", "f8"),          # rad/s
    ("slide_speed_y", "f8"),      # speed of the contact over the roof across the track, m/s
    ("slide_speed", "f8"),        # speed of the contact over the roof, m/s
    ("flight_x", "f8"), ("flight_z", "f8"),    # in flight: centre of mass, car frame, m (NaN on the roof)
    ("flight_vx", "f8"), ("flight_vz", "f8"),  # in flight: its velocity relative to the roof, m/s
    ("flight_y", "f8"), ("flight_vy", "f8"),   # in flight: centre of mass across the track (m) and its velocity
    ("speed", "f8"),              # consist speed, m/s
    ("distance", "f8"),           # consist travel since t = 0, m
    ("wind_x", "f8"), ("wind_y", "f8"),  # ambient wind incl. gusts and turbulence, m/s
    ("app_x", "f8"), ("app_y", "f8"), ("app_z", "f8"),  # apparent wind on the body, m/s
    ("aero_x", "f8"), ("aero_y", "f8"), ("aero_z", "f8"),  # aerodynamic force, N
    ("normal", "f8"),             # roof's normal force, N
    ("need_x", "f8"), ("need_y", "f8"),  # horizontal force the roof must supply by friction, N
    ("grip_demand", "f8"),        # friction needed (quasi-static)
    ("grip_available", "f8"),     # static friction of the roof under the contact
    ("xcom", "f8"),               # extrapolated centre of mass relative to the pivot, m
    ("support_lo", "f8"), ("support_hi", "f8"),  # support of the feet (or knees, hands) relative to the pivot, m
    ("balance_margin", "f8"),     # margin of stability, m
    ("lean_required", "f8"),      # rad
    ("xcom_y", "f8"),             # extrapolated centre of mass across the track relative to the pivot, m
    ("cop_y", "f8"),              # centre of pressure across the track relative to the pivot, m
    ("half_width", "f8"),         # half the support's width across the track, m
    ("frontal_margin", "f8"),     # margin of stability across the track, m
    ("roll_required", "f8"),      # sideways lean the load needs, rad (signed, + toward the left)
    ("edge_margin", "f8"),        # support to the nearer side edge, m
    ("roof_slope", "f8"),         # slope of the roof across the track under the contact, rad (+ rising to the left)
    ("accel_y", "f8"),            # car-body lateral acceleration felt in the roof's plane, m/s^2 (+ left)
    ("accel_z", "f8"),            # felt vertical acceleration of the car body beyond gravity, m/s^2
    ("curvature", "f8"),          # of the track under the performer's car, 1/m (+ turning left)
    ("cant_tilt", "f8"),          # the track's cant as a tilt, rad (+ roof low on the left)
    ("body_roll", "f8"),          # the car body's roll on its suspension, rad (+ roof low on the left)
    ("body_wind", "f8"),          # apparent wind at the centre of mass's height, horizontal, m/s
    ("flow_delta", "f8"),         # boundary layer thickness over the roof under the body, m (NaN: uniform air)
    ("flow_gain", "f8"),          # speed-up over a streamlined lead front (1: none)
    ("flow_zone", "f8"),          # height of a low-speed zone under the body, m (0: none)
    ("flow_base", "f8"),          # height of the posture's pivot above that roof, m
    ("tether_force", "f8", (MAX_TETHERS,)),   # each tether's tension, N (0 slack)
    ("tether_paid", "f8", (MAX_TETHERS,)),    # each absorber's pay-out so far, m
    # The other performer's force on this body at t_k (N, car axes; 0 alone or out of reach) and where it
    # acts (the shoulders on the roof, the centre of mass in the air; car frame, m; NaN with no force).
    ("touch_fx", "f8"), ("touch_fy", "f8"), ("touch_fz", "f8"),
    ("touch_x", "f8"), ("touch_y", "f8"), ("touch_z", "f8"),
])


def empty_outcomes(batch: int, actions: int) -> np.ndarray:
    out = np.zeros((batch, actions), OUTCOME)
    for name in OUTCOME_MINIMA:
        out[name] = np.inf
    for name in OUTCOME_TIMES:
        out[name] = np.nan
    out["touchdown_car"] = -1
    return out


def empty_tether_out(batch: int, tethers: int) -> np.ndarray:
    out = np.zeros((batch, tethers), TETHER_OUT)
    out["peak_time"] = np.nan
    out["taut_time"] = np.nan
    return out


def empty_link_out(batch: int, links: int) -> np.ndarray:
    out = np.zeros((batch, links), LINK_OUT)
    for name in ("engaged", "rest", "released", "lost", "gx", "gy", "gz", "ox", "oy", "oz"):
        out[name] = np.nan
    return out


def empty_events(batch: int) -> np.ndarray:
    out = np.zeros((batch, N_EVENTS), EVENT)
    for name in EVENT.names:
        out[name] = -1 if name in ("car", "target_car") else (0 if name == "side" else np.nan)
    return out
