"""Flight and landing.

In the air the body keeps the posture it left with, as a rigid body under
gravity, the car frame's pseudo-force and quadratic drag relative to the air,
integrated by the classical Runge-Kutta method in the car frame. Touchdown is
when its lowest point comes down through the roof of the car beneath it.

Landing rule: the legs flex for LANDING_ABSORB_TIME, pressing the feet down
hard, so static friction takes out up to mu_s (|vz| + g t) of the horizontal
speed over the roof; what is left must skid out within one recovery step
(or MIN_SKID) under kinetic friction, v^2 = 2 mu_k g d, else it is a hard
landing and the body slides on.
"""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.air_load import air_load, rotate
from physics.engine.jit import kernel, small
from physics.engine.roof import EDGE_TOLERANCE, car_at, feet_friction

LANDING_ABSORB_TIME = 0.2  # s of leg flexion in a landing (from memory; drop-landing studies ~0.1-0.3 s)
MIN_SKID = 0.25            # m a landing can skid without a step (about a foot length, from memory)

# Carried state in the air: centre of mass (car frame, m) and its velocity
# relative to the roof (m/s); the posture row held and its lean (rad); the
# lowest body point relative to the centre of mass (m); the rear-most and
# front-most body points relative to it (m); whether the body has already come
# down off the roof; and once it lies on the ground beside or between the cars,
# where (ground frame, m; NaN before).
Flight = namedtuple("Flight", "x z vx vz row lean low_dx low_dz left right fallen ground_x")

# Where the lowest point came down through a roof level during a step: the
# fraction of the step, the centre of mass and its velocity then.
Crossing = namedtuple("Crossing", "frac x vx vz")

# The outcome of a touchdown on car `car`: the pivot where the landed posture
# stands (m), speed left over the roof (m/s), the friction's absorbing capacity
# (m/s) and whether it is a hard landing.
Landing = namedtuple("Landing", "car pivot speed absorb hard")


@kernel
def flight_accel(posture, lean, vx, vz, speed, accel, wind_x, wind_y, drag, mass):
    """Acceleration (car frame, m/s^2) of a rigid posture: drag relative to the air, gravity, pseudo-force."""
    air = air_load(posture, math.cos(lean), math.sin(lean), wind_x - (speed + vx), wind_y, -vz, drag)
    return air.fx / mass - accel, air.fz / mass - G


@kernel
def rk4(fl, posture, speed0, speed1, accel, wind_x, wind_y, drag, mass, dt):
    """One classical Runge-Kutta step of the centre of mass from consist speed speed0 to speed1."""
    mid = 0.5 * (speed0 + speed1)
    k1x, k1z = flight_accel(posture, fl.lean, fl.vx, fl.vz, speed0, accel, wind_x, wind_y, drag, mass)
    k2x, k2z = flight_accel(posture, fl.lean, fl.vx + 0.5 * dt * k1x, fl.vz + 0.5 * dt * k1z, mid, accel, wind_x,
                            wind_y, drag, mass)
    k3x, k3z = flight_accel(posture, fl.lean, fl.vx + 0.5 * dt * k2x, fl.vz + 0.5 * dt * k2z, mid, accel, wind_x,
                            wind_y, drag, mass)
    k4x, k4z = flight_accel(posture, fl.lean, fl.vx + dt * k3x, fl.vz + dt * k3z, speed1, accel, wind_x, wind_y,
                            drag, mass)
    x = fl.x + dt * (fl.vx + dt / 6.0 * (k1x + k2x + k3x))
    z = fl.z + dt * (fl.vz + dt / 6.0 * (k1z + k2z + k3z))
    vx = fl.vx + dt / 6.0 * (k1x + 2.0 * k2x + 2.0 * k3x + k4x)
    vz = fl.vz + dt / 6.0 * (k1z + 2.0 * k2z + 2.0 * k3z + k4z)
    return moved(fl, x, z, vx, vz)


@small
def moved(fl, x, z, vx, vz):
    """The flight at another place and velocity."""
    return Flight(x, z, vx, vz, fl.row, fl.lean, fl.low_dx, fl.low_dz, fl.left, fl.right, fl.fallen, fl.ground_x)


# The reach of a posture leaned about a point, relative to that point (m): the
# lowest body point (x, z) and the rear-most and front-most x.
Reach = namedtuple("Reach", "low_x low_z left right")


@kernel
def reach(posture, lean, about_x, about_z):
    """How far the posture leaned by `lean` about (about_x, about_z) reaches down, back and forward."""
    c = math.cos(lean)
    s = math.sin(lean)
    best_z = math.inf
    best_x = 0.0
    left = math.inf
    right = -math.inf
    for i in range(posture.ends.shape[0]):
        for j in range(2):
            x, z = rotate(posture.ends[i, j, 0] - about_x, posture.ends[i, j, 1] - about_z, c, s)
            left = min(left, x)
            right = max(right, x)
            if z < best_z:
                best_z = z
                best_x = x
    return Reach(best_x, best_z, left, right)


@kernel
def take_off(posture, row, lean, pivot_x, roof_z, vx, vz):
    """Freeze `posture` (row), leaned by `lean` about its pivot at (pivot_x, roof_z), into flight."""
    cx, cz = rotate(posture.com_x, posture.com_z, math.cos(lean), math.sin(lean))
    r = reach(posture, lean, posture.com_x, posture.com_z)
    # In the air every segment turns with the lean, feet too: the body leaves the roof, not through it.
    z = max(roof_z + cz, roof_z - r.low_z)
    return Flight(pivot_x + cx, z, vx, vz, row, lean, r.low_x, r.low_z, r.left, r.right, False, math.nan)


@kernel
def crossing(before, after, level):
    """Where the lowest point went down through height `level` (m) in a step, frac -1 if it did not."""
    z0 = before.z + before.low_dz
    z1 = after.z + after.low_dz
    if not (after.vz < 0.0 and z1 <= level < z0 + 1e-9):
        return Crossing(-1.0, 0.0, 0.0, 0.0)
    frac = min(max((z0 - level) / max(z0 - z1, 1e-12), 0.0), 1.0)  # rounding may put z0 a hair below level
    return Crossing(frac, before.x + frac * (after.x - before.x), before.vx + frac * (after.vx - before.vx),
                    before.vz + frac * (after.vz - before.vz))


@kernel
def touchdown_car(cars, before, after, by_com):
    """(car, crossing) of a touchdown this step, car -1 if the body did not come down onto a roof.

    The roof under the lowest point takes the body; after a failure (by_com) only if the centre of
    mass is over the same roof: a body going over a roof's end does not come back onto it.
    """
    car = car_at(cars, after.x + after.low_dx)
    if by_com and car_at(cars, after.x) != car:
        car = -1
    if car < 0 or before.fallen:
        return -1, Crossing(-1.0, 0.0, 0.0, 0.0)
    cross = crossing(before, after, cars[car].roof_height)
    return (car if cross.frac >= 0.0 else -1), cross


@kernel
def land(cars, car, cross, fl, landed, roof_scale, step_length):
    """The landing rule on car `car`, the feet of the `landed` posture where the lowest point touched."""
    pivot = cross.x + fl.low_dx - reach(landed, 0.0, 0.0, 0.0).low_x
    mu_s, mu_k = feet_friction(cars, car, roof_scale)
    impact = mu_s * (abs(cross.vz) + G * LANDING_ABSORB_TIME)
    residual = max(abs(cross.vx) - impact, 0.0)
    skid = math.sqrt(2.0 * mu_k * G * max(step_length, MIN_SKID))
    return Landing(car_at(cars, pivot), pivot, residual if cross.vx > 0 else -residual, impact + skid,
                   residual > skid)


@small
def inside_margin(cars, car, x):
    """Distance (m) from x to the nearer end of `car`, inward positive, outward negative."""
    return min(x - cars[car].rear_x, cars[car].front_x - x)


@kernel
def kept_out_of_cars(cars, before, after):
    """A body below a car's roof level cannot be inside that car: it meets the end wall it flew at
    and stops against it (no bounce); a body that has fallen past a roof's end goes down beside
    that end; over the roof a touchdown has already taken it."""
    for i in range(cars.shape[0]):
        car = cars[i]
        if after.z + after.low_dz >= car.roof_height:
            continue
        if after.x + after.right <= car.rear_x or after.x + after.left >= car.front_x:
            continue
        if before.x + before.left >= car.front_x - EDGE_TOLERANCE:
            return moved(after, car.front_x - after.left, after.z, 0.0, after.vz), True
        if before.x + before.right <= car.rear_x + EDGE_TOLERANCE:
            return moved(after, car.rear_x - after.right, after.z, 0.0, after.vz), True
        if after.fallen or after.x < car.rear_x or after.x > car.front_x:
            # Its lowest point already went down past this roof's end, or its centre of mass is past
            # it: the body goes down past the end wall on that side, not back up onto the roof.
            if after.x < 0.5 * (car.rear_x + car.front_x):
                return moved(after, car.rear_x - after.right, after.z, 0.0, after.vz), True
            return moved(after, car.front_x - after.left, after.z, 0.0, after.vz), True
        # It came down onto the roof: it rests on it, to touch down as it settles.
        return moved(after, after.x, car.roof_height - after.low_dz, after.vx, 0.0), True
    return after, False


@kernel
def on_the_ground(fl, lying, lying_row, ground_x):
    """The body come to rest lying on the ground beside or between the cars, at ground-frame x
    (the lying posture's centre of mass where the flying body's was)."""
    r = reach(lying, 0.0, lying.com_x, lying.com_z)
    return Flight(fl.x, -r.low_z, 0.0, 0.0, lying_row, 0.0, r.low_x, r.low_z, r.left, r.right, True, ground_x)
