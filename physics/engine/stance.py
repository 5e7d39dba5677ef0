"""Stance and balance: the whole-body lean as an inverted pendulum about the pivot.

The centre of pressure answers the load the body felt a reaction time ago (it
moves to where that load is held, the automatic postural response) and a PD
law on the lean's error, both delayed by the reaction time; it is clipped to
the support, which bounds the ankle torque. Over about ANTICIPATION_TIME the
performer leans into the load (the braced lean, solved in closed form), which
brings the centre of pressure back toward the middle of the feet. Balance is
judged by the margin of stability of Hof, Gazendam & Sinke (2005, J. Biomech.
38:1-8): the distance from the extrapolated centre of mass x + v / omega0,
omega0 = sqrt(g / l), to the edge of the support, x being where the load's
resultant passes the roof. A performer allowed to step takes recovery steps
(as many as it takes, each after STEP_TIME, at most recovery_step long); a
topple is a step that cannot reach, or the extrapolated centre of mass staying
outside for TOPPLE_HOLD when no step is allowed.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.air_load import AirLoad, air_load, rotate
from physics.engine.jit import kernel, small
from physics.records import Mode

# Balance controller gains, as multiples of the pivot-to-com height: centre of
# pressure shift per radian of lean error and per rad/s. Chosen so that a
# standing performer is stable with up to 0.2 s reaction latency (checked in
# tests); human ankle-strategy models use gains of this size (from memory).
KP_FACTOR = 1.6
KD_FACTOR = 0.8
ANTICIPATION_TIME = 2.5   # s, the performer leans into a sustained load over about this long (calibrated, see tests)
TOPPLE_HOLD = 0.1         # s the extrapolated com must stay outside the reach before it is a topple
# s from the extrapolated com leaving the support to a recovery step landing: a step reaches about 20 cm
# after at least 300 ms (lateral perturbations in walking, J. Exp. Biol. 2010, 213(15):2655, as
# summarised to us; the paper was not re-read for this).
STEP_TIME = 0.3
LIE_ANGLE = 1.4           # rad: a toppled body is lying on the roof past this lean
MIN_PENDULUM = 0.05       # m, shortest pendulum length used for omega0 and the gains
SETTLE_PASSES = 3         # passes of lean <-> load when the balance restarts
# Fraction of the support from the heel to the toes where a steady stance keeps its centre of pressure:
# in quiet standing it lies a few centimetres ahead of the ankle (from memory), about 0.04 m of a
# 0.27 m foot whose ankle is 0.07 m from the heel.
QUIET_COP = 0.4

# Carried state: lean (rad) and its rate and acceleration; the braced load
# (torque coefficients a, b in N m and aerodynamic lift in N); the support
# extension of a recovery step behind and ahead (m); whether the step is used;
# how long the extrapolated com has been outside (s); whether the balance
# restarts this step; whether the body lies on the roof.
Balance = namedtuple("Balance", "lean rate accel brace_a brace_b brace_lift steps shift outside restart lying")

# Loads on a planted posture at a lean: the air load, the rotated centre of
# mass (m), the car-frame pseudo-force (N), the normal force (N), the
# gravity + pseudo-force + air torque coefficients alpha, beta (N m) such that
# the torque about the pivot is alpha cos(lean) + beta sin(lean), and the
# weight as felt on the car (N: mass x gravity and the car body's vertical
# acceleration); `air` holds the other performer's force too (partners.Touch), `wind` the air's alone.
PlantedLoad = namedtuple("PlantedLoad", "air com_x com_z pseudo normal alpha beta weight wind")

# The lean the performer aims for: its value (rad, within max_lean), the lean
# the load would need (rad; pi/2 when no lean balances it), the centre of
# pressure aimed at (m) and the net normal load braced for (N).
LeanTarget = namedtuple("LeanTarget", "lean required cop normal")

# One step of the balance dynamics: new state, the extrapolated centre of mass
# relative to the pivot (m), the margin of stability (m; NaN when not judged),
# and what happened: 1 a recovery step, 2 a topple, 0 nothing; with the support
# bound it concerned (m).
BalanceStep = namedtuple("BalanceStep", "balance xcom margin happened bound")


@small
def upright():
    """A standing body about to take its braced lean."""
    return Balance(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, True, False)


@small
def after_landing(bal):
    """Balance on the feet after a touchdown: upright, restarting; the recovery steps taken stay counted."""
    return Balance(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, bal.steps, 0.0, 0.0, True, False)


@small
def wrap(angle):
    """Angle into (-pi, pi]; inputs here lie within (-2 pi, 2 pi)."""
    if angle > math.pi:
        return angle - 2.0 * math.pi
    if angle <= -math.pi:
        return angle + 2.0 * math.pi
    return angle


@small
def solve_lean(alpha, beta, target):
    """Lean theta (rad) with alpha cos(theta) + beta sin(theta) = target, nearest upright.

    Returns (theta, solvable); an unsolvable load gives the angle of best effort.
    """
    r = math.sqrt(alpha * alpha + beta * beta)
    if r < 1e-12:
        return 0.0, False
    phi = math.atan2(beta, alpha)
    ratio = target / r
    if abs(ratio) > 1.0:
        return (phi if ratio > 0 else phi + math.pi), False
    d = math.acos(ratio)
    t1 = wrap(phi + d)
    t2 = wrap(phi - d)
    return (t1 if abs(t1) < abs(t2) else t2), True


@small
def touched(air, touch, c, s):
    """The air load with the other performer's force (a partners.Touch) added at its point: forces,
    pivot torque along the track and roll torque across it, as the air load's own segments add."""
    fx, fy, fz, px, pz = touch.fx, touch.fy, touch.fz, touch.px, touch.pz
    unused, z = rotate(px, pz, c, s)
    return AirLoad(air.fx + fx, air.fy + fy, air.fz + fz, air.torque_cos + pz * fx - px * fz,
                   air.torque_sin - px * fx - pz * fz, air.roll + fy * z)


@kernel
def planted_load(posture, bal, wx, wy, mass, frame_accel, drag, g, flow, touch):
    """Loads on `posture` leaned by bal.lean in the apparent wind (wx, wy) (m/s) of the air over the roof
    `flow`, with the other performer's force `touch` (partners.Touch; None alone).

    frame_accel: the acceleration of the contact's frame along the track (the
    consist's plus the slide's), m/s^2, which gives the pseudo-force; g: gravity
    as felt on the car body (m/s^2).
    """
    c = math.cos(bal.lean)
    s = math.sin(bal.lean)
    wind = air_load(posture, c, s, wx, wy, 0.0, drag, flow)
    air = wind
    if touch is not None:
        # (None for one performer: numba drops this branch from that kernel.)
        if touch.on:
            air = touched(wind, touch, c, s)
    cx, cz = rotate(posture.com_x, posture.com_z, c, s)
    weight = mass * g
    pseudo = -mass * frame_accel
    normal = weight - air.fz - mass * (bal.accel * cx + bal.rate * bal.rate * cz)
    alpha = weight * posture.com_x + air.torque_cos + pseudo * posture.com_z
    beta = weight * posture.com_z + air.torque_sin - pseudo * posture.com_x
    return PlantedLoad(air, cx, cz, pseudo, normal, alpha, beta, weight, wind)


@small
def brace(bal, load, dt):
    """The braced load: the load itself on a restart, else low-passed over ANTICIPATION_TIME."""
    if bal.restart:
        a, b, lift = load.alpha, load.beta, load.air.fz
    else:
        w = dt / ANTICIPATION_TIME
        a = bal.brace_a + (load.alpha - bal.brace_a) * w
        b = bal.brace_b + (load.beta - bal.brace_b) * w
        lift = bal.brace_lift + (load.air.fz - bal.brace_lift) * w
    return Balance(bal.lean, bal.rate, bal.accel, a, b, lift, bal.steps, bal.shift, bal.outside, bal.restart,
                   bal.lying)


@small
def aimed_cop(posture):
    """Where the performer keeps the centre of pressure when the load is steady: QUIET_COP of the way
    from the heel (the support's shorter side from the pivot) toward the toes."""
    lo, hi = posture.support_lo, posture.support_hi
    if hi >= -lo:
        return lo + QUIET_COP * (hi - lo)
    return hi - QUIET_COP * (hi - lo)


@kernel
def lean_target(bal, posture, weight, max_lean):
    """The lean that balances the braced load with the centre of pressure where the performer keeps
    it (aimed_cop); and the lean the load needs, the lean at which the load's resultant passes under
    the body's own centre of mass (for a standing body, the ankle: the reckoning tan(lean) = F / W)."""
    normal = max(weight - bal.brace_lift, 1e-6)
    cop = aimed_cop(posture)
    lean, unused = solve_lean(bal.brace_a, bal.brace_b, cop * normal)
    quarter = 0.25 * (posture.support_hi - posture.support_lo)
    under = min(max(posture.com_x, posture.support_lo + quarter), posture.support_hi - quarter)
    needed, solvable = solve_lean(bal.brace_a, bal.brace_b, under * normal)
    required = abs(needed) if solvable else 0.5 * math.pi
    return LeanTarget(min(max(lean, -max_lean), max_lean), required, cop, normal)


@small
def with_lean(bal, lean, rate, accel):
    return Balance(lean, rate, accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, bal.shift,
                   bal.outside, bal.restart, bal.lying)


@small
def stepped(bal):
    """The balance once a recovery step's shift has been applied to the contact."""
    return Balance(bal.lean, bal.rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, 0.0,
                   bal.outside, bal.restart, bal.lying)


@small
def restart(bal):
    """The balance to be restarted next step (a new pivot, a turn, a landing)."""
    return Balance(bal.lean, bal.rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, bal.shift,
                   bal.outside, True, bal.lying)


@small
def carry_on(bal):
    """The balance once restarted: it carries on from here."""
    return Balance(bal.lean, bal.rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, bal.shift,
                   bal.outside, False, bal.lying)


@kernel
def settle(bal, posture, wx, wy, mass, frame_accel, drag, max_lean, dt, leans, g, flow, touch):
    """Brace and aim for this step: (balance, load, target).

    On a restart a performer who `leans` takes the braced lean at once; the load
    is then taken again at that lean (and the lean re-aimed), so the first
    step's forces are those of the body as it stands, not of an upright one.
    """
    weight = mass * g
    load = planted_load(posture, bal, wx, wy, mass, frame_accel, drag, g, flow, touch)
    bal = brace(bal, load, dt)
    target = lean_target(bal, posture, weight, max_lean)
    if bal.restart and leans:
        for _ in range(SETTLE_PASSES):
            bal = with_lean(bal, target.lean, bal.rate, bal.accel)
            load = planted_load(posture, bal, wx, wy, mass, frame_accel, drag, g, flow, touch)
            bal = brace(bal, load, dt)
            target = lean_target(bal, posture, weight, max_lean)
    return bal, load, target


@small
def equilibrium_cop(load, lean):
    """Where the centre of pressure must be (m from the pivot) for the load on the body at this lean to
    turn it neither way: the point where gravity, the pseudo-force and the air load together pass the roof."""
    return (load.alpha * math.cos(lean) + load.beta * math.sin(lean)) / max(load.normal, 1e-6)


@small
def delayed_cop(bal, load, target, posture, mode, lo, hi, buf_err, buf_rate, buf_ff, k):
    """Centre of pressure (m from the pivot) the ankle strategy commands now.

    What the body felt reaction_time ago sets the command: the centre of
    pressure that held the load it felt then (the automatic postural response
    to a felt push), plus a PD correction of the lean's error and rate then,
    all clipped to the support. A toppled body has its pressure at the support
    edge.
    """
    size = buf_err.shape[0]
    buf_err[k % size] = bal.lean - target.lean
    buf_rate[k % size] = bal.rate
    buf_ff[k % size] = equilibrium_cop(load, bal.lean)
    old = (k + 1) % size
    if mode == Mode.DOWN:
        return hi if bal.lean > 0 else lo
    height = max(posture.com_z, MIN_PENDULUM)
    cop = buf_ff[old] + KP_FACTOR * height * buf_err[old] + KD_FACTOR * height * buf_rate[old]
    return min(max(cop, lo), hi)


@small
def balance_step(bal, load, target, posture, mode, cop, lo, hi, mass, dt):
    """Advance the lean one step about the pivot with the centre of pressure at `cop`.

    Returns (balance, xcom relative to the pivot, margin of stability). The
    extrapolated centre of mass is Hof's x + v / omega0 with the load's own
    equilibrium point for x: where gravity, the pseudo-force and the air load
    together pass the roof (the centre of mass itself in still air at rest).
    """
    c = math.cos(bal.lean)
    s = math.sin(bal.lean)
    torque = (load.weight * load.com_x + load.air.torque_cos * c + load.air.torque_sin * s + load.pseudo * load.com_z
              - cop * load.normal)
    accel = torque / (mass * posture.inertia)
    rate = bal.rate + accel * dt
    lean = bal.lean + rate * dt
    height = max(posture.com_z, MIN_PENDULUM)
    xcom = equilibrium_cop(load, bal.lean) + rate * load.com_z / math.sqrt(G / height)
    margin = min(hi - xcom, xcom - lo)
    return with_lean(bal, lean, rate, accel), xcom, margin


@small
def lean_for_com(posture, com_x):
    """The lean that puts the posture's centre of mass at com_x (m) from the pivot."""
    reach = math.hypot(posture.com_x, posture.com_z)
    phase = math.atan2(posture.com_x, posture.com_z)
    return math.asin(min(max(com_x / max(reach, 1e-9), -1.0), 1.0)) - phase


@small
def judge_support(bal, mode, contact_feet, xcom, margin, lo, hi, recovery_step, posture, dt):
    """Recovery steps or a topple when the extrapolated centre of mass leaves the support.

    A performer who may step (recovery_step > 0, on their feet) steps once the
    extrapolated centre of mass has been outside for STEP_TIME: the feet move
    (the pivot shifts, `shift`, at most recovery_step) to put the support's
    middle under it, the body where it was; as many steps as it takes. A step
    that cannot reach it, or a performer who may not step, is a topple once it
    has been outside for TOPPLE_HOLD. Returns BalanceStep; `happened` 1 is a
    recovery step, 2 a topple.
    """
    happened = 0
    bound = hi if xcom > hi else lo
    lean, rate, steps, shift, outside = bal.lean, bal.rate, bal.steps, 0.0, bal.outside
    if mode == Mode.PLANTED:
        if margin < 0.0:
            outside += dt
            stepping = contact_feet and recovery_step > 0.0
            wanted = xcom - 0.5 * (lo + hi)
            if stepping and outside >= STEP_TIME:
                if abs(wanted) - recovery_step > 0.5 * (hi - lo):
                    happened = 2            # no step reaches it
                else:
                    happened = 1
                    shift = min(max(wanted, -recovery_step), recovery_step)
                    cx, cz = rotate(posture.com_x, posture.com_z, math.cos(lean), math.sin(lean))
                    lean = lean_for_com(posture, cx - shift)
                    # The body keeps its rigid posture: a step is no longer than leaves every leaning
                    # point above the roof (a long step would put a knee through it).
                    for unused in range(30):
                        if lowest_leaning_point(posture, lean) >= 0.0:
                            break
                        shift *= 0.8
                        lean = lean_for_com(posture, cx - shift)
                    unused, cz_new = rotate(posture.com_x, posture.com_z, math.cos(lean), math.sin(lean))
                    rate = rate * cz / max(cz_new, MIN_PENDULUM)   # the centre of mass keeps its speed
                    steps += 1.0
                    outside = 0.0
            elif not stepping and outside >= TOPPLE_HOLD:
                happened = 2
        else:
            outside = 0.0
    new = Balance(lean, rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, steps, shift, outside,
                  bal.restart, bal.lying)
    return BalanceStep(new, xcom, margin, happened, bound)


@small
def laid(bal):
    """A body that has fallen over sideways, lying on its side on the roof."""
    return Balance(bal.lean, 0.0, 0.0, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, bal.shift,
                   bal.outside, bal.restart, True)


@kernel
def lie_down(bal, posture):
    """A toppled body lies on the roof and stops turning once a leaning point touches the roof, or at LIE_ANGLE."""
    if abs(bal.lean) < LIE_ANGLE and lowest_leaning_point(posture, bal.lean) > 0.0:
        return bal
    lean = max(-LIE_ANGLE, min(LIE_ANGLE, bal.lean))
    return Balance(lean, 0.0, 0.0, bal.brace_a, bal.brace_b, bal.brace_lift, bal.steps, bal.shift,
                   bal.outside, bal.restart, True)


@kernel
def lowest_leaning_point(posture, lean):
    """Height above the roof (m) of the lowest point of the segments that lean with the body."""
    c = math.cos(lean)
    s = math.sin(lean)
    low = math.inf
    for i in range(posture.ends.shape[0]):
        if posture.rotates[i]:
            for j in range(2):
                unused, z = rotate(posture.ends[i, j, 0], posture.ends[i, j, 1], c, s)
                low = min(low, z)
    return low
