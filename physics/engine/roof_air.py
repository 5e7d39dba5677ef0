"""The air over the roof, in the engine: the flow a body meets this step and the share of the free
stream it keeps at a height above the roof (physics/roof_air.py has the model and its sources).

The air at a roof moves with the consist; the boundary layer grown from the lead car's front keeps
the air near the roof moving with the cars, so a body low on the roof meets only a share f(z) of the
air's velocity relative to the car. The apparent wind on a segment at height z is then
f(z) (wind - car velocity) - body velocity relative to the car, which is the uniform apparent wind
plus (f - 1) times the air's velocity relative to the car: with the profile off f = 1 and nothing
changes.
"""

from __future__ import annotations

from collections import namedtuple

from physics.engine.jit import kernel, small

MIN_HEIGHT = 0.01  # m: the profile is read no lower than this (a power law has no slope at the wall)
REYNOLDS_POWER = -1.0 / 7.0  # delta / x = plate Re_x^(-1/7), the flat-plate law

# The flow over the roof under a body this step: on (False: uniform free stream), the air's velocity
# relative to the car (ax, ay), m/s; the height above the roof of the posture's pivot (m); the
# boundary layer's thickness there (m) and its power law's exponent 1/n; the speed-up over a
# streamlined lead front (a factor); the height of a low-speed zone behind a bluff front edge or a
# step up (m, 0 for none) and the share of the air's velocity kept inside it.
Flow = namedtuple("Flow", "on ax ay base delta inv_n gain zone_height zone_factor")


@small
def uniform_flow():
    """The free stream at every height: today's uniform wind."""
    return Flow(False, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 0.0, 1.0)


@small
def raised(flow, base):
    """The same flow for a posture whose pivot is `base` m above the roof."""
    return Flow(flow.on, flow.ax, flow.ay, base, flow.delta, flow.inv_n, flow.gain, flow.zone_height,
                flow.zone_factor)


@kernel
def roof_flow(airflow, cars, car, x, y, ax, ay, density):
    """The flow over car `car` at car-frame (x, y) for air moving at (ax, ay) relative to the car (m/s).

    Uniform when the profile is off, off the roofs (a gap, beside the cars) or when the air does not
    come from the front (the boundary layer is grown from the lead car's front)."""
    if not airflow.on or car < 0 or ax >= 0.0:
        return uniform_flow()
    c = cars[car]
    if abs(y) > 0.5 * c.width:
        return uniform_flow()
    run = airflow.ahead - x
    delta = c.flow_added
    if run > 0.0:
        delta += airflow.plate * run * (-ax * run * density / airflow.viscosity) ** REYNOLDS_POWER
    from_front = c.front_x - x
    gain = c.speedup if from_front <= c.speedup_length else 1.0
    zone = c.zone_height if from_front <= c.zone_length else 0.0
    return Flow(True, ax, ay, 0.0, delta, airflow.inv_n, gain, zone, airflow.zone_factor)


@small
def flow_factor(flow, z):
    """The share of the air's velocity relative to the car kept at height z (m) above the pivot."""
    h = flow.base + z
    if h < flow.zone_height:
        return flow.zone_factor
    if h >= flow.delta:
        return flow.gain
    return flow.gain * (max(h, MIN_HEIGHT) / flow.delta) ** flow.inv_n
