"""The roofs of the consist: which car is under a point and the friction it gives."""

from __future__ import annotations

from physics.engine.jit import kernel, small
from physics.records import Contact

EDGE_TOLERANCE = 1e-9  # m: a point this close past a car end still counts as on it


@kernel
def car_at(cars, x):
    """Index of the car whose roof spans car-frame x (m), or -1 (a gap or off the ends)."""
    for i in range(cars.shape[0]):
        if cars[i].rear_x - EDGE_TOLERANCE <= x <= cars[i].front_x + EDGE_TOLERANCE:
            return i
    return -1


@small
def feet_friction(cars, car, roof_scale):
    """(static, kinetic) friction of footwear on car `car`'s roof, with this variant's multiplier."""
    return cars[car].sole_static * roof_scale[car], cars[car].sole_kinetic * roof_scale[car]


@kernel
def roof_friction(cars, car, contact, roof_scale):
    """(static, kinetic) friction coefficients for `contact` on car `car`; (0, 0) off the roof.

    Footwear on the feet; clothing and pads for knees and body. roof_scale: this
    variant's multiplier per car (sweeps and Monte Carlo).
    """
    if car < 0:
        return 0.0, 0.0
    if contact == Contact.FEET:
        return feet_friction(cars, car, roof_scale)
    return cars[car].body_static * roof_scale[car], cars[car].body_kinetic * roof_scale[car]

