"""Grip and sliding: the friction the roof must supply, slips, and slides.

Grip demand is quasi-static, as a coordinator reckons it: the horizontal loads
(air, the car frame's pseudo-force, the gait's push) over the weight less the
aerodynamic lift. A slip is demand above the roof's static coefficient; the
contact then slides under kinetic friction until its speed over the roof
returns to zero.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.jit import small

# Carried state of the contact on the roof: pivot position (car frame, m), its
# speed and acceleration over the roof (m/s, m/s^2), and the gait's phase (rad).
Slide = namedtuple("Slide", "x u udot gait_phase")

# The horizontal force the roof must supply (N, along and across the track),
# the normal load it reckons with (N) and the friction coefficient needed.
Grip = namedtuple("Grip", "need_x need_y static_normal demand")


@small
def gait_force(phase, gait_friction, weight):
    """Horizontal push of the gait (N): its peak fraction of body weight, once per step."""
    return gait_friction * weight * math.sin(phase)


@small
def grip_demand(air, mass, frame_accel, push):
    """What the roof must hold: the air load, the pseudo-force -m a and the gait's push."""
    need_x = -(air.fx - mass * frame_accel + push)
    need_y = -air.fy
    static_normal = mass * G - air.fz
    demand = math.sqrt(need_x * need_x + need_y * need_y) / max(static_normal, 1e-6)
    return Grip(need_x, need_y, static_normal, demand)


@small
def slide_direction(need_x):
    """A new slide starts in the direction of the load, against the force the roof failed to supply."""
    return -1e-9 if need_x > 0 else 1e-9


@small
def slide_step(u, air_fx, mass, frame_accel, mu_kinetic, normal, com_accel_x, dt):
    """Advance a slide's speed u (m/s) one step: (u, du/dt, stopped)."""
    direction = 1.0 if u > 0 else -1.0
    udot = (air_fx - mass * frame_accel - mu_kinetic * normal * direction) / mass - com_accel_x
    u_new = u + udot * dt
    if u_new * u <= 0.0:
        return 0.0, 0.0, True
    return u_new, udot, False
