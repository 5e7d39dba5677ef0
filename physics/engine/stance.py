"""Stance and balance: the whole-body lean as an inverted pendulum about the pivot.

The performer braces for the load felt over about ANTICIPATION_TIME (the
anticipatory lean, solved in closed form) and corrects errors with a PD law on
the lean, delayed by the reaction time; the centre of pressure is clipped to the
support, which bounds the ankle torque. Balance is judged by the margin of
stability of Hof, Gazendam & Sinke (2005, J. Biomech. 38:1-8): the distance
from the extrapolated centre of mass x + v / omega0, omega0 = sqrt(g / l), to the
edge of the support. One recovery step may extend the support; a topple is the
extrapolated centre of mass staying outside for TOPPLE_HOLD.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.air_load import air_load, rotate
from physics.engine.jit import kernel, small
from physics.records import Mode

# Balance controller gains, as multiples of the pivot-to-com height: centre of
# pressure shift per radian of lean error and per rad/s. Chosen so that a
# standing performer is stable with up to 0.2 s reaction latency (checked in
# tests); human ankle-strategy models use gains of this size (from memory).
KP_FACTOR = 1.6
KD_FACTOR = 0.8
ANTICIPATION_TIME = 0.8   # s, the performer braces for the load felt over about this long (from memory)
TOPPLE_HOLD = 0.1         # s the extrapolated com must stay outside the reach before it is a topple
LIE_ANGLE = 1.4           # rad: a toppled body is lying on the roof past this lean
MIN_PENDULUM = 0.05       # m, shortest pendulum length used for omega0 and the gains
SETTLE_PASSES = 3         # passes of lean <-> load when the balance restarts

# Carried state: lean (rad) and its rate and acceleration; the braced load
# (torque coefficients a, b in N m and aerodynamic lift in N); the support
# extension of a recovery step behind and ahead (m); whether the step is used;
# how long the extrapolated com has been outside (s); whether the balance
# restarts this step; whether the body lies on the roof.
Balance = namedtuple("Balance", "lean rate accel brace_a brace_b brace_lift ext_lo ext_hi step_used outside "
                                "restart lying")

# Loads on a planted posture at a lean: the air load, the rotated centre of
# mass (m), the car-frame pseudo-force (N), the normal force (N) and the
# gravity + pseudo-force + air torque coefficients alpha, beta (N m) such that
# the torque about the pivot is alpha cos(lean) + beta sin(lean).
PlantedLoad = namedtuple("PlantedLoad", "air com_x com_z pseudo normal alpha beta")

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
    return Balance(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, False, 0.0, True, False)


@small
def after_landing(bal):
    """Balance on the feet after a touchdown: upright, restarting; a recovery step already used stays used."""
    return Balance(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, bal.step_used, bal.outside, True, False)


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


@kernel
def planted_load(posture, bal, wx, wy, mass, frame_accel, drag):
    """Loads on `posture` leaned by bal.lean in the apparent wind (wx, wy) (m/s).

    frame_accel: the acceleration of the contact's frame along the track (the
    consist's plus the slide's), m/s^2, which gives the pseudo-force.
    """
    c = math.cos(bal.lean)
    s = math.sin(bal.lean)
    air = air_load(posture, c, s, wx, wy, 0.0, drag)
    cx, cz = rotate(posture.com_x, posture.com_z, c, s)
    weight = mass * G
    pseudo = -mass * frame_accel
    normal = weight - air.fz - mass * (bal.accel * cx + bal.rate * bal.rate * cz)
    alpha = weight * posture.com_x + air.torque_cos + pseudo * posture.com_z
    beta = weight * posture.com_z + air.torque_sin - pseudo * posture.com_x
    return PlantedLoad(air, cx, cz, pseudo, normal, alpha, beta)


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
    return Balance(bal.lean, bal.rate, bal.accel, a, b, lift, bal.ext_lo, bal.ext_hi, bal.step_used, bal.outside,
                   bal.restart, bal.lying)


@kernel
def lean_target(bal, posture, weight, max_lean):
    """The lean that balances the braced load with the centre of pressure mid-support."""
    normal = max(weight - bal.brace_lift, 1e-6)
    quarter = 0.25 * (posture.support_hi - posture.support_lo)
    cop = min(max(posture.com_x, posture.support_lo + quarter), posture.support_hi - quarter)
    lean, solvable = solve_lean(bal.brace_a, bal.brace_b, cop * normal)
    required = abs(lean) if solvable else 0.5 * math.pi
    return LeanTarget(min(max(lean, -max_lean), max_lean), required, cop, normal)


@small
def with_lean(bal, lean, rate, accel):
    return Balance(lean, rate, accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.ext_lo, bal.ext_hi,
                   bal.step_used, bal.outside, bal.restart, bal.lying)


@small
def restart(bal):
    """The balance to be restarted next step (a new pivot, a turn, a landing)."""
    return Balance(bal.lean, bal.rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.ext_lo, bal.ext_hi,
                   bal.step_used, bal.outside, True, bal.lying)


@small
def carry_on(bal):
    """The balance once restarted: it carries on from here."""
    return Balance(bal.lean, bal.rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, bal.ext_lo, bal.ext_hi,
                   bal.step_used, bal.outside, False, bal.lying)


@kernel
def settle(bal, posture, wx, wy, mass, frame_accel, drag, max_lean, dt, leans):
    """Brace and aim for this step: (balance, load, target).

    On a restart a performer who `leans` takes the braced lean at once; the load
    is then taken again at that lean (and the lean re-aimed), so the first
    step's forces are those of the body as it stands, not of an upright one.
    """
    weight = mass * G
    load = planted_load(posture, bal, wx, wy, mass, frame_accel, drag)
    bal = brace(bal, load, dt)
    target = lean_target(bal, posture, weight, max_lean)
    if bal.restart and leans:
        for _ in range(SETTLE_PASSES):
            bal = with_lean(bal, target.lean, bal.rate, bal.accel)
            load = planted_load(posture, bal, wx, wy, mass, frame_accel, drag)
            bal = brace(bal, load, dt)
            target = lean_target(bal, posture, weight, max_lean)
    return bal, load, target


@small
def delayed_cop(bal, target, posture, mode, lo, hi, buf_err, buf_rate, k):
    """Centre of pressure (m from the pivot) the ankle strategy commands now.

    The lean error and rate enter a ring buffer; what was read reaction_time ago
    sets the command (PD). A toppled body has its pressure at the support edge.
    """
    size = buf_err.shape[0]
    buf_err[k % size] = bal.lean - target.lean
    buf_rate[k % size] = bal.rate
    old = (k + 1) % size
    if mode == Mode.DOWN:
        return hi if bal.lean > 0 else lo
    height = max(posture.com_z, MIN_PENDULUM)
    cop = target.cop + KP_FACTOR * height * buf_err[old] + KD_FACTOR * height * buf_rate[old]
    return min(max(cop, lo), hi)


@small
def balance_step(bal, load, target, posture, mode, cop, lo, hi, mass, dt):
    """Advance the lean one step about the pivot with the centre of pressure at `cop`.

    Returns (balance, xcom relative to the pivot, margin of stability).
    """
    c = math.cos(bal.lean)
    s = math.sin(bal.lean)
    torque = (mass * G * load.com_x + load.air.torque_cos * c + load.air.torque_sin * s + load.pseudo * load.com_z
              - cop * load.normal)
    accel = torque / (mass * posture.inertia)
    rate = bal.rate + accel * dt
    lean = bal.lean + rate * dt
    height = max(posture.com_z, MIN_PENDULUM)
    xcom = (bal.brace_a * c + bal.brace_b * s) / target.normal + rate * load.com_z / math.sqrt(G / height)
    margin = min(hi - xcom, xcom - lo)
    return with_lean(bal, lean, rate, accel), xcom, margin


@small
def judge_support(bal, mode, contact_feet, xcom, margin, lo, hi, recovery_step, dt):
    """Recovery step or topple when the extrapolated centre of mass leaves the support.

    Returns BalanceStep; `happened` 1 is a recovery step (the support grows by
    recovery_step on that side), 2 a topple (the body goes down).
    """
    happened = 0
    bound = hi if xcom > hi else lo
    ext_lo, ext_hi, used, outside = bal.ext_lo, bal.ext_hi, bal.step_used, bal.outside
    if mode == Mode.PLANTED:
        if margin < 0.0:
            if not used and contact_feet:
                used = True
                happened = 1
                if xcom > hi:
                    ext_hi = recovery_step
                else:
                    ext_lo = recovery_step
            else:
                outside += dt
                if outside >= TOPPLE_HOLD:
                    happened = 2
        else:
            outside = 0.0
    new = Balance(bal.lean, bal.rate, bal.accel, bal.brace_a, bal.brace_b, bal.brace_lift, ext_lo, ext_hi, used,
                  outside, bal.restart, bal.lying)
    return BalanceStep(new, xcom, margin, happened, bound)


@kernel
def lie_down(bal, posture):
    """A toppled body lies on the roof and stops turning once a leaning point touches the roof, or at LIE_ANGLE."""
    if abs(bal.lean) < LIE_ANGLE and lowest_leaning_point(posture, bal.lean) > 0.0:
        return bal
    lean = max(-LIE_ANGLE, min(LIE_ANGLE, bal.lean))
    return Balance(lean, 0.0, 0.0, bal.brace_a, bal.brace_b, bal.brace_lift, bal.ext_lo, bal.ext_hi,
                   bal.step_used, bal.outside, bal.restart, True)


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
