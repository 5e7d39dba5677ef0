"""Rigging: tethers from an anchor, or from the ring of a running line, to the performer's harness.

The harness point is taken at the body's centre of mass. A tether is a one-sided spring-damper:
slack while the distance from its anchor (a running line: the nearest point of the line, where its
ring slides freely) to the harness is under its length; taut beyond it, with tension
k * stretch + c * stretch rate, never negative, c = 2 zeta sqrt(k m) for the damping ratio zeta with
the body's mass m on it. An energy absorber in series pays out at its deploy force (rigid-plastic,
without mass) until its largest extension, after which the tether is stiff again.

The anchor load of a point anchor is the tension. A running line carries the tether's pull P as a
point load on a span S sagging d at mid-span; along the span the sag is taken proportional to
a * b (a, b the ring's distances to the two ends: a loaded cable's shape), so the line's horizontal
tension is H = P S / (4 d) wherever the ring is, and the more loaded end anchor takes
sqrt(H^2 + (P max(a, b) / S)^2) (statics of a cable under a point load; at mid-span
sqrt((P S / 4d)^2 + (P / 2)^2)). The line itself is taken straight for the body's motion.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics.engine.jit import kernel, small
from physics.engine.outcome import note_event, note_side
from physics.records import Event

# A tether's pull on the body at one moment: its components on the body (N, car axes), the
# tension (N), the stretch beyond its length and pay-out (m, negative slack), the stretch rate
# (m/s), the anchor's load (N) and the harness's distance from the anchor point (m).
Pull = namedtuple("Pull", "fx fy fz force stretch rate anchor dist")


@small
def ring_x(t, x):
    """Where along the track the tether leaves its anchor: a running line's ring slides to the point
    of the line nearest the harness (m, car frame)."""
    if t.running:
        return min(max(x, t.line_x0), t.line_x1)
    return t.anchor_x


@small
def anchor_load(t, x, force):
    """The load on the most loaded anchor (N) for tension `force` with the harness at x."""
    if not t.running:
        return force
    span = t.line_x1 - t.line_x0
    a = min(max(x, t.line_x0), t.line_x1) - t.line_x0
    h = force * span / (4.0 * t.sag)
    end = force * max(a, span - a) / span
    return math.sqrt(h * h + end * end)


@kernel
def tether_pull(t, paid, mass, x, y, z, vx, vy, vz):
    """The pull of tether t (a records.TETHER row) with `paid` (m) paid out by its absorber on a harness
    at (x, y, z) moving at (vx, vy, vz) relative to the roof (car frame)."""
    dx = x - ring_x(t, x)
    dy = y - t.anchor_y
    dz = z - t.anchor_z
    dist = math.sqrt(dx * dx + dy * dy + dz * dz)
    stretch = dist - t.length - paid
    if stretch <= 0.0 or dist <= 1e-9:
        return Pull(0.0, 0.0, 0.0, 0.0, stretch, 0.0, 0.0, dist)
    ux, uy, uz = dx / dist, dy / dist, dz / dist
    rate = ux * vx + uy * vy + uz * vz
    force = t.stiffness * stretch + 2.0 * t.damping_ratio * math.sqrt(t.stiffness * mass) * rate
    force = max(force, 0.0)
    if paid < t.max_extension and force > t.deploy_force:
        force = t.deploy_force
    return Pull(-force * ux, -force * uy, -force * uz, force, stretch, rate, anchor_load(t, x, force), dist)


@kernel
def tethers_pull(tethers, tout, mass, x, y, z, vx, vy, vz):
    """The tethers' pull together on the body (N, car axes), each absorber's pay-out as it stands."""
    fx, fy, fz = 0.0, 0.0, 0.0
    for i in range(tethers.shape[0]):
        p = tether_pull(tethers[i], tout[i].paid, mass, x, y, z, vx, vy, vz)
        fx += p.fx
        fy += p.fy
        fz += p.fz
    return fx, fy, fz


@small
def paid_out(t, paid, stretch):
    """The absorber's pay-out after the harness reached `stretch` beyond length and pay-out: it pays
    out while the elastic tension would pass the deploy force, up to its largest extension."""
    if paid >= t.max_extension or t.stiffness * stretch <= t.deploy_force:
        return paid
    return min(paid + stretch - t.deploy_force / t.stiffness, t.max_extension)


@kernel
def watch_tethers(v, inputs, env, free, x, y, z, vx, vy, vz, out):
    """At t_k: each tether's pull on the harness at (x, y, z) moving at (vx, vy, vz), its absorber's
    pay-out, the run's peaks and first taut moment, the record, and the events: an anchor overload, the
    pull on the body over its limit, and an arrest (a taut tether stopping a body that is not
    following the plan, `free`: after a failure or in the air). Returns the pull together (N)."""
    tethers = inputs.tethers
    fx, fy, fz = 0.0, 0.0, 0.0
    tout = out.tethers[v.b]
    for i in range(tethers.shape[0]):
        t = tethers[i]
        o = tout[i]
        p = tether_pull(t, o.paid, v.mass, x, y, z, vx, vy, vz)
        if p.stretch > 0.0:
            o.paid = paid_out(t, o.paid, p.stretch)
            if math.isnan(o.taut_time):
                o.taut_time = env.t
        if p.force > o.peak_force:
            o.peak_force = p.force
            o.peak_time = env.t
        o.peak_anchor = max(o.peak_anchor, p.anchor)
        if p.anchor > t.anchor_limit:
            note_event(out.events, v.b, Event.ANCHOR_OVERLOAD, env.t, x, env.distance, inputs.cars, p.anchor,
                       t.anchor_limit)
            # Its number is the highest anchor load over the run.
            out.events[v.b, Event.ANCHOR_OVERLOAD].demand = max(out.events[v.b, Event.ANCHOR_OVERLOAD].demand,
                                                                p.anchor)
        if free and p.stretch > 0.0 and o.rate > 0.0 and p.rate <= 0.0:
            note_event(out.events, v.b, Event.ARRESTED, env.t, x, env.distance, inputs.cars, o.peak_force,
                       t.body_limit)
            note_side(out.events, v.b, Event.ARRESTED, env.t, 1 if y > 0.0 else -1)
        if p.stretch > 0.0 and not math.isnan(out.events[v.b, Event.ARRESTED].time):
            # The arrest's number is the tether's peak force over the run, bounces after it included.
            out.events[v.b, Event.ARRESTED].demand = max(out.events[v.b, Event.ARRESTED].demand, o.peak_force)
        o.rate = p.rate if p.stretch > 0.0 else 0.0
        if out.recording:
            out.record[env.k].tether_force[i] = p.force
            out.record[env.k].tether_paid[i] = o.paid
        fx += p.fx
        fy += p.fy
        fz += p.fz
    total = math.sqrt(fx * fx + fy * fy + fz * fz)
    if tethers.shape[0] > 0 and total > tethers[0].body_limit:
        note_event(out.events, v.b, Event.BODY_FORCE, env.t, x, env.distance, inputs.cars, total,
                   tethers[0].body_limit)
        out.events[v.b, Event.BODY_FORCE].demand = max(out.events[v.b, Event.BODY_FORCE].demand, total)
    return fx, fy, fz
