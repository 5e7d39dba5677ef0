"""Two performers acting on each other: shoves, pulls, throws, contact punches, grabs and catches.

Each step the forces between the two are worked out from where both bodies are at t_k and held over
the step: the force on the partner and its reaction on the actor are equal and opposite at every
step, so the pair's momentum changes only by the outside forces (the roof, the air, gravity), and in
the air not at all by their own pushes (tested).

Where a force acts: on the roof at the shoulders (the top of the trunk), through the arms, so it
enters the lean's balance (along and across the track), the grip and the normal load like the air
load; in the air at the centre of mass (a rigid posture has no turning dynamics there).

- A push (shove, pull, throw, contact punch) acts while the partner is within reach: a half-sine
  pulse of its peak force over the action, or a steady force ramped in and out; away from the actor
  (a pull: toward), horizontally from shoulders to shoulders unless a fixed direction is given, and
  tilted up by its angle.
- A hold (a grab) closes the first time the partner is within reach during the action. During a
  deliberate change of posture with both planted it follows unloaded; otherwise it keeps the length
  it had: slack closer in, a spring-damper beyond it (tension k x + c x', c = 2 zeta
  sqrt(k mu) with the two bodies' reduced mass mu), never pushing.
- A catch closes on a partner in the air within reach and gathers the flyer in: its length shortens at
  the arms' `draw` speed, or with the distance when the flyer comes nearer faster (no spring pushes the
  flyer back out; the damper takes the flyer's speed toward the catcher over the arms' travel), down to
  `close` (the flyer's centre of mass at the catcher's chest); a flyer who drops or lags is pulled in
  by the spring-damper. Once gathered the two are held together in every direction
  about the offset they had then (a spring-damper on the offset and the relative velocity): the arms
  and chest take the flyer's momentum, pushes as well as pulls.
- Where the hands act jumps when a body lands or takes off (the centre of mass in the air, the shoulders
  on the roof) or takes a recovery step (the pivot moves at once): the part of a step's change of offset
  that the relative velocity does not explain moves a hold's or catch's anchors with it, so that
  bookkeeping puts no force on either body.
- A hold or a catch lets go for good when its force passes the breaking force (event HOLD_LOST on both
  performers); every link ends with its action.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics.engine.air_load import rotate
from physics.engine.frontal import roof_z_at
from physics.engine.jit import kernel, small
from physics.engine.roof import car_at
from physics.records import LinkCode, Mode

TRUNK = 1   # physics.body.TRUNK: its far end is the shoulders

# The other performer's force on a body at t_k: whether there is any, its components (N, car axes) and
# where it acts on the roof: the shoulders in the posture's own frame before the lean, from the pivot (m).
Touch = namedtuple("Touch", "on fx fy fz px pz")

# Where a body's hands act and take hold at t_k: whether the body can be touched (not out of the run),
# the point (car frame, m) and its velocity relative to the roof (m/s), that point in the posture's
# frame (m from the pivot, before the lean; 0 in the air), whether the body is in the air, planted on
# the roof, and in a deliberate change of posture.
Hands = namedtuple("Hands", "ok x y z vx vy vz px pz airborne planted settling")


@kernel
def hands_of(inputs, state, row, gait_v, gait_vy, settling):
    """Where the body's shoulders (on the roof) or centre of mass (in the air) are at t_k, and how fast
    they move; row: the posture row on the roof; gait_v, gait_vy: the commanded gait (m/s); settling: a
    deliberate change of posture under way."""
    mode = state.beat.mode
    if mode == Mode.GONE:
        return Hands(False, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, False, False, False)
    if mode == Mode.FLIGHT:
        fl = state.flight
        return Hands(not fl.fallen, fl.x, fl.y, fl.z, fl.vx, fl.vy, fl.vz, 0.0, 0.0, True, False, False)
    posture = inputs.postures[row]
    px, pz = posture.ends[TRUNK, 1, 0], posture.ends[TRUNK, 1, 1]
    bal, slide = state.balance, state.slide
    rx, rz = rotate(px, pz, math.cos(bal.lean), math.sin(bal.lean))
    cars = inputs.cars
    car = car_at(cars, slide.x)
    z0 = roof_z_at(cars[car if car >= 0 else 0], slide.y)
    walking = mode == Mode.PLANTED and not bal.lying
    vx = slide.u + (gait_v if walking else 0.0) + bal.rate * rz
    vy = slide.w + (gait_vy if walking else 0.0)
    planted = mode == Mode.PLANTED and not bal.lying
    return Hands(True, slide.x + rx, slide.y, z0 + rz, vx, vy, -bal.rate * rx, px, pz, False, planted,
                 planted and settling)


@small
def push_profile(link, t):
    """The share of a push's peak force at time t: a half sine over the action, or steady between ramps."""
    span = link.end - link.start
    if link.steady:
        ramp = min(link.ramp, 0.5 * span)
        if ramp <= 0.0:
            return 1.0
        return min(1.0, (t - link.start) / ramp, (link.end - t) / ramp)
    return math.sin(math.pi * (t - link.start) / span)


@kernel
def link_force(link, lout, t, dt, actor, partner, mass_a, mass_p):
    """The force (N, car axes) link puts on the partner at t (its reaction is on the actor), and whether
    a hold let go now. lout: this link's records.LINK_OUT, written as it goes."""
    if t < link.start or t >= link.end or lout.lost == lout.lost or not actor.ok or not partner.ok:
        if not math.isnan(lout.engaged) and math.isnan(lout.released):
            lout.released = t
        return 0.0, 0.0, 0.0, False
    dx, dy, dz = partner.x - actor.x, partner.y - actor.y, partner.z - actor.z
    dist = math.sqrt(dx * dx + dy * dy + dz * dz)
    if link.code == LinkCode.PUSH:
        if dist > link.reach or link.force <= 0.0:
            return 0.0, 0.0, 0.0, False
        if math.isnan(lout.engaged):
            lout.engaged = t
        if link.toward == 0:
            hx, hy = link.dir_x, link.dir_y
        else:
            h = math.sqrt(dx * dx + dy * dy)
            hx, hy = (dx / h, dy / h) if h > 1e-3 else (float(link.facing), 0.0)
            hx, hy = hx * link.toward, hy * link.toward
        f = link.force * push_profile(link, t)
        c = math.cos(link.up)
        return f * c * hx, f * c * hy, f * math.sin(link.up), False
    if math.isnan(lout.engaged):
        if dist > link.reach or (link.code == LinkCode.CATCH and not partner.airborne):
            return 0.0, 0.0, 0.0, False
        lout.engaged = t
        lout.rest = dist
    follow_jump(lout, dt, actor, partner, dx, dy, dz, dist)
    rest_rate = 0.0
    if link.code == LinkCode.CATCH:
        if lout.rest > link.close:
            # The arms draw the flyer in, or take up the slack of one who comes nearer faster: never a push back.
            rest_rate = -link.draw
            lout.rest = max(link.close, min(lout.rest - link.draw * dt, dist))
        if lout.rest <= link.close:
            return gathered(link, lout, t, actor, partner, mass_a, mass_p, dx, dy, dz)
    if dist < 1e-9:
        return 0.0, 0.0, 0.0, False
    if actor.planted and partner.planted and (actor.settling or partner.settling):
        # A deliberate change of posture (a rise, a crouch) with both planted: the hold follows it
        # unloaded; it is loaded by the bodies moving apart otherwise (a slide, a fall, a step away).
        lout.rest = dist
        return 0.0, 0.0, 0.0, False
    ux, uy, uz = dx / dist, dy / dist, dz / dist
    rate = ux * (partner.vx - actor.vx) + uy * (partner.vy - actor.vy) + uz * (partner.vz - actor.vz)
    mu = mass_a * mass_p / (mass_a + mass_p)
    stretch_rate = rate - rest_rate
    tension = link.stiffness * (dist - lout.rest) + 2.0 * link.damping * math.sqrt(link.stiffness * mu) * stretch_rate
    if link.code == LinkCode.HOLD:   # pulls only; a gathering catch's damper takes the flyer's approach too
        tension = max(tension, 0.0) if dist > lout.rest else 0.0
    if abs(tension) > link.breaking:
        lout.lost = t
        lout.released = t
        lout.peak = max(lout.peak, abs(tension))
        return 0.0, 0.0, 0.0, True
    return -tension * ux, -tension * uy, -tension * uz, False


JUMP = 0.02   # m: a change of offset in one step this far from what the velocities give is a jump of reference


@small
def follow_jump(lout, dt, actor, partner, dx, dy, dz, dist):
    """Move a hold's or catch's anchors (its length; a gathered catch's offset) by the part of this step's
    change of offset (dx, dy, dz) that the relative velocity does not explain: a landing, a take-off or a
    recovery step moves where the hands act at once, not the bodies."""
    if lout.ox == lout.ox:
        ex = lout.ox + (partner.vx - actor.vx) * dt
        ey = lout.oy + (partner.vy - actor.vy) * dt
        ez = lout.oz + (partner.vz - actor.vz) * dt
        jx, jy, jz = dx - ex, dy - ey, dz - ez
        if jx * jx + jy * jy + jz * jz > JUMP * JUMP:
            lout.rest = max(0.0, lout.rest + dist - math.sqrt(ex * ex + ey * ey + ez * ez))
            if lout.gx == lout.gx:
                lout.gx += jx
                lout.gy += jy
                lout.gz += jz
    lout.ox, lout.oy, lout.oz = dx, dy, dz


@kernel
def gathered(link, lout, t, actor, partner, mass_a, mass_p, dx, dy, dz):
    """A gathered catch: the flyer held about its offset (dx, dy, dz from the catcher) when gathered, in
    every direction: (force on the flyer (N, car axes), whether the catch let go now)."""
    if lout.gx != lout.gx:
        lout.gx, lout.gy, lout.gz = dx, dy, dz
    mu = mass_a * mass_p / (mass_a + mass_p)
    k = link.stiffness
    c = 2.0 * link.damping * math.sqrt(k * mu)
    fx = -k * (dx - lout.gx) - c * (partner.vx - actor.vx)
    fy = -k * (dy - lout.gy) - c * (partner.vy - actor.vy)
    fz = -k * (dz - lout.gz) - c * (partner.vz - actor.vz)
    size = math.sqrt(fx * fx + fy * fy + fz * fz)
    if size > link.breaking:
        lout.lost = t
        lout.released = t
        lout.peak = max(lout.peak, size)
        return 0.0, 0.0, 0.0, True
    return fx, fy, fz, False


@kernel
def links_between(links, lout, t, dt, a, b, mass_a, mass_b):
    """The forces between performers 0 and 1 at t: (force on 1 (N, car axes), whether a hold let go now).
    The force on 0 is its negative."""
    fx, fy, fz = 0.0, 0.0, 0.0
    lost = False
    for i in range(links.shape[0]):
        link = links[i]
        o = lout[i]
        if link.actor == 0:
            px, py, pz, gone = link_force(link, o, t, dt, a, b, mass_a, mass_b)
            sign = 1.0
        else:
            px, py, pz, gone = link_force(link, o, t, dt, b, a, mass_b, mass_a)
            sign = -1.0
        lost = lost or gone
        size = math.sqrt(px * px + py * py + pz * pz)
        if size > 0.0:
            o.peak = max(o.peak, size)
            o.ix += px * dt
            o.iy += py * dt
            o.iz += pz * dt
            o.impulse = math.sqrt(o.ix * o.ix + o.iy * o.iy + o.iz * o.iz)
        fx += sign * px
        fy += sign * py
        fz += sign * pz
    return fx, fy, fz, lost


@small
def touch_on(hands, fx, fy, fz):
    """The touch of force (fx, fy, fz) on a body whose hands are `hands`."""
    on = fx != 0.0 or fy != 0.0 or fz != 0.0
    return Touch(on, fx, fy, fz, hands.px, hands.pz)
