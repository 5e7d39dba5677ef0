"""Grip and sliding: the friction the roof must supply, slips, and slides.

Grip demand is quasi-static, as a coordinator reckons it: the loads in the
roof's plane (air, the car frame's pseudo-forces along and across the track,
gravity down a crowned roof, the gait's push) over the normal load (the weight
on the tilted roof less the aerodynamic lift). A slip is demand above the roof's
static coefficient; the contact then slides over the roof, along and across the
track, under kinetic friction opposite its motion until it stops.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics.engine.jit import small

# Carried state of the contact on the roof: pivot position (car frame, m), its
# speed and acceleration over the roof (m/s, m/s^2), the gait's phase (rad), and
# across the track its offset from the roof's centreline (m, + left) and speed (m/s).
Slide = namedtuple("Slide", "x u udot gait_phase y w")

# The horizontal force the roof must supply (N, along and across the track),
# the normal load it reckons with (N) and the friction coefficient needed.
Grip = namedtuple("Grip", "need_x need_y static_normal demand")


@small
def gait_force(phase, gait_friction, weight):
    """Horizontal push of the gait (N): its peak fraction of body weight, once per step."""
    return gait_friction * weight * math.sin(phase)


@small
def grip_demand(air, mass, frame_accel, push, side, slope_cos, g):
    """What the roof must hold: the air load, the pseudo-force -m a and the gait's push along the track;
    `side` across it (N, + left: the air, the crown, the car's lateral motion); slope_cos: the cosine of
    the roof's tilt across the track; g: gravity as felt on the car body (m/s^2)."""
    need_x = -(air.fx - mass * frame_accel + push)
    need_y = -side
    static_normal = mass * g * slope_cos - air.fz
    demand = math.sqrt(need_x * need_x + need_y * need_y) / max(static_normal, 1e-6)
    return Grip(need_x, need_y, static_normal, demand)


@small
def slide_direction(need_x, need_y):
    """A new slide starts in the direction of the load, against the force the roof failed to supply:
    (u, w), a start of 1e-9 m/s."""
    size = math.sqrt(need_x * need_x + need_y * need_y)
    if size <= 0.0:
        return 1e-9, 0.0
    return -1e-9 * need_x / size, -1e-9 * need_y / size


@small
def slide_step(u, w, load_x, load_y, mass, mu_kinetic, normal, com_accel_x, dt):
    """Advance a slide's velocity over the roof (u along, w across, m/s) one step under the loads in
    the roof's plane (N) and kinetic friction against the motion: (u, w, du/dt, stopped)."""
    speed = math.sqrt(u * u + w * w)
    if speed <= 0.0:
        return 0.0, 0.0, 0.0, True
    friction = mu_kinetic * normal / speed
    udot = (load_x - friction * u) / mass - com_accel_x
    wdot = (load_y - friction * w) / mass
    u_new = u + udot * dt
    w_new = w + wdot * dt
    if u_new * u + w_new * w <= 0.0:
        return 0.0, 0.0, 0.0, True
    return u_new, w_new, udot, False
