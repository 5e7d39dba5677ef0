"""The track under the car and what the car body feels on it: the unbalanced lateral acceleration of a
curve taken above or below its balancing speed, the body's roll on its suspension, the felt vertical
acceleration, the heading that turns the ambient wind, and the ride vibration (physics/track.py)."""

from __future__ import annotations

import math
from collections import namedtuple

from physics import G
from physics.engine.jit import kernel, small

# Where the car is on the track: curvature (1/m, + left), cant tilt (rad, + roof low on the left),
# heading (rad, + turned left since the start).
TrackPoint = namedtuple("TrackPoint", "curvature tilt heading")

# What the car body does at a step: its lateral acceleration felt in the roof's plane (m/s^2, + left:
# the pseudo-force pushes toward the right), the felt vertical acceleration beyond gravity (m/s^2), its
# lateral acceleration over the ground (m/s^2, + left; what a body in the air no longer shares), the
# track's cant tilt and the body's roll on its suspension (rad, + roof low on the left).
CarBody = namedtuple("CarBody", "felt_y felt_z ground_y tilt roll curvature heading")


@kernel
def track_at(track, s):
    """The track at s (m along it); straight and level before its start and past its end."""
    n = track.shape[0]
    if n == 0 or s <= track[0].s0:
        return TrackPoint(0.0, 0.0, 0.0)
    for i in range(n):
        piece = track[i]
        if s <= piece.s1:
            length = piece.s1 - piece.s0
            u = (s - piece.s0) / length if length > 0.0 else 0.0
            ds = s - piece.s0
            k = piece.k0 + (piece.k1 - piece.k0) * u
            return TrackPoint(k, piece.tilt0 + (piece.tilt1 - piece.tilt0) * u,
                              piece.heading0 + piece.k0 * ds + 0.5 * (piece.k1 - piece.k0) * u * ds)
    last = track[n - 1]
    return TrackPoint(0.0, 0.0, last.heading0 + 0.5 * (last.k0 + last.k1) * (last.s1 - last.s0))


@small
def car_body(point, speed, flexibility, ride_y, ride_z, given_y):
    """The car body's motion on the track at `speed` (m/s): the curve's unbalanced lateral acceleration
    in the plane of the canted track, the body rolling out by flexibility x the cant deficiency, the
    roof's plane tilted by cant and roll together; plus the ride and any lateral acceleration given."""
    if point.curvature == 0.0 and point.tilt == 0.0:
        return CarBody(ride_y + given_y, ride_z, ride_y + given_y, 0.0, 0.0, 0.0, point.heading)
    central = speed * speed * point.curvature
    unbalanced = central * math.cos(point.tilt) - G * math.sin(point.tilt)
    roll = -flexibility * unbalanced / G
    tilt = point.tilt + roll
    c, s = math.cos(tilt), math.sin(tilt)
    return CarBody(central * c - G * s + ride_y + given_y, central * s + G * c - G + ride_z, central + ride_y + given_y,
                   point.tilt, roll, point.curvature, point.heading)
