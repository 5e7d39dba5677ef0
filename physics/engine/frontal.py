"""Balance across the track: the sideways lean (roll) as an inverted pendulum over the support's width.

The same control as along the track (physics.engine.stance): the centre of
pressure answers the load felt a reaction time ago, plus a PD correction of the
roll's error, clipped to the support's half-width; over ANTICIPATION_TIME the
performer leans into a sustained side load. The loads across the track are the
side wind (its torque about the contact line from the segments' heights) and
the car body's lateral acceleration; the roll is the lean from the vertical. A
crowned roof tilts the support but not the body: standing plumb on it needs no
torque at the feet (they follow the roof), so the crown enters the grip (gravity
down the tilted roof) and not the balance. Hof's margin of stability is taken across the track as along it;
the smaller of the two is the balance margin the verdict uses. A performer
allowed to step takes a sideways step after STEP_TIME, at most SIDE_STEP long;
a step that cannot reach, or no step, is a topple toward that side.

In a gait the support across the track is the stance foot: between steps the
ankle moves the centre of pressure at most ANKLE_SHIFT either side of where the
foot was set down, and each new step sets the foot under the extrapolated
centre of mass (within the walking base), at most one placement per STEP_TIME
(foot placement after Hof, J. Biomech. 2008, 41:3086, "the extrapolated centre
of mass concept suggests a simple control of balance in walking"; from memory).
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.jit import kernel, small
from physics.engine.stance import (ANTICIPATION_TIME, KD_FACTOR, KP_FACTOR, LIE_ANGLE, MIN_PENDULUM, STEP_TIME,
                                   TOPPLE_HOLD)
from physics.records import Mode

# A sideways recovery step reaches about 20 cm (lateral perturbations in walking, J. Exp. Biol. 2010,
# 213(15):2655, as summarised to us; the paper was not re-read for this). A scene's shorter
# recovery_step caps it.
SIDE_STEP = 0.2
# In walking the ankle shifts the centre of pressure under the stance foot by at most about 2 cm, about
# 200 ms after a lateral push (same source, as summarised to us).
ANKLE_SHIFT = 0.02

# Carried state across the track: roll (lean from the vertical, rad, + toward the left) and its rate and
# acceleration; the braced load (torque coefficients, N m); how long the
# extrapolated centre of mass has been outside the support (s); whether the body
# is falling over sideways (a topple) or lies on its side; in a gait, where the
# stance foot was set down (m from the pivot line, + left) and how long ago (s).
Frontal = namedtuple("Frontal", "roll rate accel brace_a brace_b outside falling foot since")

# The load across the track on the body at its roll: torque about the contact
# line = alpha cos(roll) + beta sin(roll) (N m); the normal load (N); the
# pendulum's height (m) and the side load in the roof's plane (N, + left).
FrontalLoad = namedtuple("FrontalLoad", "alpha beta normal height side")

# One step across the track: the new state, the extrapolated centre of mass
# relative to the pivot (m, + left), the margin of stability (m, NaN not
# judged), the tangent of the roll the load needs (signed), the pivot's sideways shift by
# a step (m), what happened: 1 a step, 2 a topple, 0 nothing; and the centre
# of pressure the feet held (m from the pivot line, + left).
FrontalStep = namedtuple("FrontalStep", "frontal xcom margin required_tan shift happened cop")


@small
def level():
    """Upright across the track."""
    return Frontal(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, False, 0.0, 0.0)


@small
def roof_slope(car, y):
    """Tangent of a crowned roof's slope across the track at y: positive where it rises toward the left."""
    return -8.0 * car.crown * y / (car.width * car.width)


@small
def slope_cos_sin(slope):
    """cos and sin of the roof's slope from its tangent (no trigonometry on a flat roof)."""
    if slope == 0.0:
        return 1.0, 0.0
    c = 1.0 / math.sqrt(1.0 + slope * slope)
    return c, slope * c


@small
def roof_z_at(car, y):
    """Height of the roof (m above rail) at y across it from its centreline."""
    r = 2.0 * y / car.width
    return car.roof_height - car.crown * r * r


@small
def frontal_load(air, mass, height, slope_sin, accel_y, normal, g):
    """The load across the track on a body whose centre of mass is `height` above its contact: the
    torque of the side wind and the car's lateral pseudo-force; and the side load the roof must hold
    by friction, which also has gravity's part down a crowned roof (slope_sin: the sine of its slope)."""
    weight = mass * g
    pseudo = -mass * accel_y
    h = max(height, MIN_PENDULUM)
    return FrontalLoad(air.roll + pseudo * h, weight * h, max(normal, 1e-6), h,
                       air.fy + pseudo - weight * slope_sin)


@small
def equilibrium(load, roll):
    """Where the centre of pressure must be across the track (m from the pivot, + left) to hold the load."""
    return (load.alpha * math.cos(roll) + load.beta * math.sin(roll)) / load.normal


@kernel
def frontal_step(fr, load, inertia, half, mode, feet, recovery_step, max_lean, restart, buf_err, buf_rate, buf_ff,
                 k, mass, dt, gait, new_step):
    """Brace, command the centre of pressure (delayed), advance the roll, judge the support.

    gait: the performer walks or runs (the stance-foot support); new_step: a foot is set down now.
    """
    if restart:
        a, b = load.alpha, load.beta
    else:
        w = dt / ANTICIPATION_TIME
        a = fr.brace_a + (load.alpha - fr.brace_a) * w
        b = fr.brace_b + (load.beta - fr.brace_b) * w
    # alpha cos(roll) + beta sin(roll) = 0 with beta = W h > 0: the lean that holds the load with the
    # centre of pressure in the middle.
    aim = 0.0 if a == 0.0 else min(max(math.atan2(-a, b), -max_lean), max_lean)
    required_tan = -load.alpha / load.beta
    roll = fr.roll
    if restart:
        roll = aim
    h = load.height
    c, s = (1.0, 0.0) if roll == 0.0 else (math.cos(roll), math.sin(roll))
    ff = (load.alpha * c + load.beta * s) / load.normal      # where the load's resultant passes the roof
    xcom = ff + (0.0 if fr.rate == 0.0 else fr.rate * h * math.sqrt(h / G))
    size = buf_err.shape[0]
    slot = k % size
    buf_err[slot] = roll - aim
    buf_rate[slot] = fr.rate
    buf_ff[slot] = ff
    if restart:
        for i in range(size):
            buf_err[i] = 0.0
            buf_rate[i] = fr.rate
            buf_ff[i] = buf_ff[slot]
    old = (k + 1) % size
    foot, since = 0.0, fr.since + dt
    lo, hi = -half, half
    if gait:
        foot = fr.foot
        if new_step and since >= STEP_TIME:
            foot = min(max(xcom, -half), half)
            since = 0.0
        lo = max(foot - ANKLE_SHIFT, -half)
        hi = min(foot + ANKLE_SHIFT, half)
    if fr.falling:
        cop = half if roll > 0 else -half
    else:
        cop = buf_ff[old] + KP_FACTOR * h * buf_err[old] + KD_FACTOR * h * buf_rate[old]
        cop = min(max(cop, lo), hi)
    torque = ff * load.normal - cop * load.normal
    accel = torque / (mass * max(inertia, 1e-6))
    rate = fr.rate + accel * dt
    new_roll = roll + rate * dt
    falling = fr.falling
    if abs(new_roll) >= LIE_ANGLE:
        # Over on its side (a body sliding or toppling sideways): it lies there.
        new_roll = math.copysign(LIE_ANGLE, new_roll)
        rate = 0.0
        accel = 0.0
        falling = True
    margin = half - abs(xcom)
    happened = 0
    shift = 0.0
    outside = fr.outside
    if mode == Mode.PLANTED and not falling:
        if margin < 0.0:
            outside += dt
            reach = min(recovery_step, SIDE_STEP)
            stepping = feet and reach > 0.0
            if stepping and outside >= STEP_TIME:
                if abs(xcom) - reach > half:
                    happened = 2
                else:
                    happened = 1
                    shift = min(max(xcom, -reach), reach)
                    # The body stays where it is: the roll about the new pivot puts the centre of mass back.
                    s_new = min(max((h * math.sin(new_roll) - shift) / h, -1.0), 1.0)
                    new_roll = math.asin(s_new)
                    outside = 0.0
                    for i in range(size):
                        buf_err[i] = new_roll - aim
                        buf_rate[i] = rate
                        buf_ff[i] = equilibrium(load, new_roll)
            elif not stepping and outside >= TOPPLE_HOLD:
                happened = 2
        else:
            outside = 0.0
    if happened == 2:
        falling = True
    if happened == 1:
        foot, since = 0.0, 0.0
    return FrontalStep(Frontal(new_roll, rate, accel, a, b, outside, falling, foot, since), xcom, margin, required_tan,
                       shift, happened, cop)


@small
def held(fr, roll):
    """The roll held still (a body lying on its front, a deliberate posture change): not judged."""
    return Frontal(roll, 0.0, 0.0, fr.brace_a, fr.brace_b, 0.0, fr.falling, 0.0, 0.0)
