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
from physics.engine.frontal import roof_z_at
from physics.engine.jit import kernel, small
from physics.engine.roof import EDGE_TOLERANCE, car_at, feet_friction
from physics.engine.tether import tethers_pull

ACROSS_REACH = 0.2         # m the shoulders and arms stand out from the body's midline (from memory)
SIDE_CLEAR = 0.15          # m from a car's side to the centre of mass of a body falling down beside it (half a
                           # body's depth, from memory)
LANDING_ABSORB_TIME = 0.2  # s of leg flexion in a landing (from memory; drop-landing studies ~0.1-0.3 s)
MIN_SKID = 0.25            # m a landing can skid without a step (about a foot length, from memory)

# Carried state in the air: centre of mass (car frame, m) and its velocity
# relative to the roof (m/s); the posture row held and its lean (rad); the
# lowest body point relative to the centre of mass (m); the rear-most and
# front-most body points relative to it (m); whether the body has already come
# down off the roof; and once it lies on the ground beside or between the cars,
# where (ground frame, m; NaN before); across the track the centre of mass from
# the roofs' centreline (m, + left), its velocity (m/s) and the sideways lean it
# left with (rad); and the side edge it went over (+1 left, -1 right, 0 none).
Flight = namedtuple("Flight", "x z vx vz row lean low_dx low_dz left right fallen ground_x y vy roll side")

# Where the lowest point came down through a roof level during a step: the
# fraction of the step, the centre of mass and its velocity then.
Crossing = namedtuple("Crossing", "frac x vx vz")

# The outcome of a touchdown on car `car`: the pivot where the landed posture
# stands (m), speed left over the roof (m/s), the friction's absorbing capacity
# (m/s) and whether it is a hard landing.
Landing = namedtuple("Landing", "car pivot speed absorb hard")


@kernel
def flight_accel(posture, lean, vx, vy, vz, speed, accel, accel_y, wind_x, wind_y, drag, mass, flow, push):
    """Acceleration (car frame, m/s^2) of a rigid posture: drag relative to the air (over the roof, `flow`),
    gravity, pseudo-forces, and `push` (m/s^2, car axes: the other performer's force over the mass, held
    over the step)."""
    air = air_load(posture, math.cos(lean), math.sin(lean), wind_x - (speed + vx), wind_y - vy, -vz, drag, flow)
    return air.fx / mass - accel + push[0], air.fy / mass - accel_y + push[1], air.fz / mass - G + push[2]


@kernel
def rk4(fl, posture, speed0, speed1, accel, accel_y, wind_x, wind_y, drag, mass, dt, flow, push):
    """One classical Runge-Kutta step of the centre of mass from consist speed speed0 to speed1, in the air
    over the roof as it is at the step's start (`flow`), for an acceleration that depends on velocity
    alone (no rigging): the stage positions are not needed, and the positions' update
    p + dt v + dt^2 / 6 (k1 + k2 + k3) is the classical method's written out. rk4_tethered is the same
    method with the stages' positions passed on; this one is kept apart so a run without rigging does
    the same arithmetic as before rigging existed."""
    mid = 0.5 * (speed0 + speed1)
    k1x, k1y, k1z = flight_accel(posture, fl.lean, fl.vx, fl.vy, fl.vz, speed0, accel, accel_y, wind_x, wind_y, drag,
                                 mass, flow, push)
    k2x, k2y, k2z = flight_accel(posture, fl.lean, fl.vx + 0.5 * dt * k1x, fl.vy + 0.5 * dt * k1y,
                                 fl.vz + 0.5 * dt * k1z, mid, accel, accel_y, wind_x, wind_y, drag, mass, flow, push)
    k3x, k3y, k3z = flight_accel(posture, fl.lean, fl.vx + 0.5 * dt * k2x, fl.vy + 0.5 * dt * k2y,
                                 fl.vz + 0.5 * dt * k2z, mid, accel, accel_y, wind_x, wind_y, drag, mass, flow, push)
    k4x, k4y, k4z = flight_accel(posture, fl.lean, fl.vx + dt * k3x, fl.vy + dt * k3y, fl.vz + dt * k3z, speed1,
                                 accel, accel_y, wind_x, wind_y, drag, mass, flow, push)
    return rk4_update(fl, dt, k1x, k1y, k1z, k2x, k2y, k2z, k3x, k3y, k3z, k4x, k4y, k4z)


@small
def rk4_update(fl, dt, k1x, k1y, k1z, k2x, k2y, k2z, k3x, k3y, k3z, k4x, k4y, k4z):
    """The classical Runge-Kutta update of position and velocity from the four stages' accelerations."""
    x = fl.x + dt * (fl.vx + dt / 6.0 * (k1x + k2x + k3x))
    y = fl.y + dt * (fl.vy + dt / 6.0 * (k1y + k2y + k3y))
    z = fl.z + dt * (fl.vz + dt / 6.0 * (k1z + k2z + k3z))
    vx = fl.vx + dt / 6.0 * (k1x + 2.0 * k2x + 2.0 * k3x + k4x)
    vy = fl.vy + dt / 6.0 * (k1y + 2.0 * k2y + 2.0 * k3y + k4y)
    vz = fl.vz + dt / 6.0 * (k1z + 2.0 * k2z + 2.0 * k3z + k4z)
    return Flight(x, z, vx, vz, fl.row, fl.lean, fl.low_dx, fl.low_dz, fl.left, fl.right, fl.fallen, fl.ground_x,
                  y, vy, fl.roll, fl.side)


@kernel
def stage_accel(posture, lean, x, y, z, vx, vy, vz, speed, accel, accel_y, wind_x, wind_y, drag, mass, tethers,
                tout, flow, push):
    """The acceleration at one Runge-Kutta stage: flight_accel, and with rigging the tethers' pull,
    which depends on where the body is as well as on how fast it moves."""
    ax, ay, az = flight_accel(posture, lean, vx, vy, vz, speed, accel, accel_y, wind_x, wind_y, drag, mass, flow,
                              push)
    if tethers.shape[0] > 0:
        fx, fy, fz = tethers_pull(tethers, tout, mass, x, y, z, vx, vy, vz)
        ax += fx / mass
        ay += fy / mass
        az += fz / mass
    return ax, ay, az


@kernel
def rk4_tethered(fl, posture, speed0, speed1, accel, accel_y, wind_x, wind_y, drag, mass, dt, tethers, tout, flow,
                 push):
    """rk4 with the tethers' pull, which depends on where the body is: each stage meets the body where
    that stage puts it (p + dt/2 k_p, ...) as well as at its velocity. tethers, tout: the rigging
    (records.TETHER) and this variant's absorber state (records.TETHER_OUT); with none it gives what
    rk4 gives (tested)."""
    mid = 0.5 * (speed0 + speed1)
    k1x, k1y, k1z = stage_accel(posture, fl.lean, fl.x, fl.y, fl.z, fl.vx, fl.vy, fl.vz, speed0, accel, accel_y,
                                wind_x, wind_y, drag, mass, tethers, tout, flow, push)
    k2x, k2y, k2z = stage_accel(posture, fl.lean, fl.x + 0.5 * dt * fl.vx, fl.y + 0.5 * dt * fl.vy,
                                fl.z + 0.5 * dt * fl.vz, fl.vx + 0.5 * dt * k1x, fl.vy + 0.5 * dt * k1y,
                                fl.vz + 0.5 * dt * k1z, mid, accel, accel_y, wind_x, wind_y, drag, mass, tethers, tout,
                                flow, push)
    k3x, k3y, k3z = stage_accel(posture, fl.lean, fl.x + 0.5 * dt * (fl.vx + 0.5 * dt * k1x),
                                fl.y + 0.5 * dt * (fl.vy + 0.5 * dt * k1y), fl.z + 0.5 * dt * (fl.vz + 0.5 * dt * k1z),
                                fl.vx + 0.5 * dt * k2x, fl.vy + 0.5 * dt * k2y, fl.vz + 0.5 * dt * k2z, mid, accel,
                                accel_y, wind_x, wind_y, drag, mass, tethers, tout, flow, push)
    k4x, k4y, k4z = stage_accel(posture, fl.lean, fl.x + dt * (fl.vx + 0.5 * dt * k2x),
                                fl.y + dt * (fl.vy + 0.5 * dt * k2y), fl.z + dt * (fl.vz + 0.5 * dt * k2z),
                                fl.vx + dt * k3x, fl.vy + dt * k3y, fl.vz + dt * k3z, speed1, accel, accel_y, wind_x,
                                wind_y, drag, mass, tethers, tout, flow, push)
    return rk4_update(fl, dt, k1x, k1y, k1z, k2x, k2y, k2z, k3x, k3y, k3z, k4x, k4y, k4z)


@small
def moved(fl, x, z, vx, vz):
    """The flight at another place and velocity along the track."""
    return Flight(x, z, vx, vz, fl.row, fl.lean, fl.low_dx, fl.low_dz, fl.left, fl.right, fl.fallen, fl.ground_x,
                  fl.y, fl.vy, fl.roll, fl.side)


@small
def over_the_side(fl, side):
    """A body gone over a side edge (+1 left, -1 right): it comes down beside the cars, never back onto a
    roof."""
    return Flight(fl.x, fl.z, fl.vx, fl.vz, fl.row, fl.lean, fl.low_dx, fl.low_dz, fl.left, fl.right, True,
                  fl.ground_x, fl.y, fl.vy, fl.roll, side)


@small
def side_clearance(fl):
    """How far the centre of mass of a body going down a car's side stays from it (m): half a body's
    depth, and the reach of a body lying over sideways toward the car (its length below the centre of
    mass, turned by the roll)."""
    return SIDE_CLEAR + abs(math.tan(min(abs(fl.roll), 1.5))) * abs(fl.low_dz)


@small
def beside(car, y):
    """Whether y (m across the track) is past a car's side edges."""
    return abs(y) > 0.5 * car.width


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
def take_off(posture, row, lean, pivot_x, roof_z, vx, vz, pivot_y, vy, roll):
    """Freeze `posture` (row), leaned by `lean` and rolled sideways by `roll` about its pivot at
    (pivot_x, pivot_y, roof_z), into flight."""
    cx, cz = rotate(posture.com_x, posture.com_z, math.cos(lean), math.sin(lean))
    r = reach(posture, lean, posture.com_x, posture.com_z)
    # In the air every segment turns with the lean, feet too: the body leaves the roof, not through it.
    # A body rolled over sideways has its lowest point turned up with it, and its shoulders and feet,
    # which stand out across it, turned down.
    low_z = r.low_z * math.cos(roll) - abs(math.sin(roll)) * max(posture.half_width, ACROSS_REACH)
    z = max(roof_z + cz * math.cos(roll), roof_z - low_z)
    return Flight(pivot_x + cx, z, vx, vz, row, lean, r.low_x, low_z, r.left, r.right, False, math.nan,
                  pivot_y + cz * math.sin(roll), vy, roll, 0)


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
    if car >= 0 and beside(cars[car], after.y):
        car = -1
    if car < 0 or before.fallen:
        return -1, Crossing(-1.0, 0.0, 0.0, 0.0)
    cross = crossing(before, after, roof_z_at(cars[car], after.y))
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
def kept_out_of_cars(cars, before, after, least_clear):
    """A body below a car's roof level cannot be inside that car: it meets the end wall it flew at
    and stops against it (no bounce); a body that has fallen past a roof's end goes down beside
    that end; over the roof a touchdown has already taken it. least_clear: the least distance (m) its
    centre of mass keeps from a car's side (0: side_clearance alone)."""
    clear = max(side_clearance(after), least_clear)
    for i in range(cars.shape[0]):
        car = cars[i]
        if after.z + after.low_dz >= car.roof_height or beside(car, after.y - after.side * clear):
            continue
        if after.side != 0:
            # Gone over a side edge: it goes down along the car's side, not into the car.
            if after.x + after.right <= car.rear_x or after.x + after.left >= car.front_x:
                continue
            return Flight(after.x, after.z, after.vx, after.vz, after.row, after.lean, after.low_dx, after.low_dz,
                          after.left, after.right, after.fallen, after.ground_x,
                          after.side * (0.5 * car.width + clear), 0.0 if after.vy * after.side < 0 else after.vy,
                          after.roll, after.side), True
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
    return Flight(fl.x, -r.low_z, 0.0, 0.0, lying_row, 0.0, r.low_x, r.low_z, r.left, r.right, True, ground_x,
                  fl.y, 0.0, 0.0, fl.side)
