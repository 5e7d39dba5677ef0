"""Road vehicles and the road under them, for a consist of trucks and trailers (Scene.road).

The side view draws each vehicle kind with its own outline and tyres and the road as an
asphalt band with lane markings; the end view the vehicle cut across on dual tyres over
the road with its lane lines; the plan view the lane from above. Physics is the same as
for rail cars: a vehicle's length and roof height are the roof a performer stands on
(a tractor unit's cab roof, a trailer's deck or box roof, a rigid truck's box), and
what lies off that roof is drawn outside it: a tractor unit's chassis and coupling deck
run back from its cab across the gap and under the front of the trailer it pulls; a
rigid truck's cab stands ahead of its box. Every size here is a drawing value (from
memory), not physics: ground level (z = 0) is the road surface.
"""

from __future__ import annotations

import math

import numpy as np

from preview.palette import ASPHALT, CAR_BODY, CAR_EDGE, FAINT, GLAZING, INK, LANE_MARK, PAPER, SOFT_INK

TYRE = 1.0            # m: a truck tyre's diameter
AXLE_STEP = 1.3       # m between the axles of a group
KINGPIN = 0.9         # m: the coupling sits this far behind a semi-trailer's front end
COUPLING = 1.2        # m: height of a tractor's coupling deck with no trailer on it
CAB = 2.3             # m: a rigid truck's cab, ahead of its box
CAB_TOP = 3.0         # m: a rigid truck's cab roof (at most the box's roof)
LANDING_LEGS = 3.2    # m behind a semi-trailer's front end
ROAD_DEPTH = 0.35     # m of asphalt drawn under the road surface in the side view
DASH, DASH_PERIOD = 3.0, 12.0   # m: a lane marking's dash and its period
POST_STEP = 50.0      # m between the marker posts at the road's edge
LANE_HALF = 1.75      # m: half a lane's width
MARK_WIDTH = 0.15     # m: a lane marking's width
SHOULDER = 0.6        # m of asphalt beyond the edge line
ROAD_REACH = 4.0      # m: how far a road vehicle is drawn beyond its roof (a rigid truck's cab)

SEMI_TRAILERS = ("box trailer", "flatbed trailer")


def way(scene) -> str:
    """What the consist runs on, in the words a view shows: "road" for road vehicles, else "track"."""
    return "road" if getattr(scene, "road", False) else "track"


def beside(scene) -> str:
    """The camera beside the way: "roadside" or "trackside"."""
    return f"{way(scene)}side"


# ---------------------------------------------------------------- side view

def draw_road_side(canvas, cam) -> None:
    """The road in the side view: an asphalt band under the surface, the lane marking's dashes on it
    and a marker post at the road's edge every POST_STEP, fixed to the ground."""
    canvas.tag = "road"
    left = cam.to_world(0, 0)[0] + cam.distance
    right = cam.to_world(cam.width, 0)[0] + cam.distance
    road = cam.ground_to_screen(0.0, 0.0)[1]
    band = max(6.0, ROAD_DEPTH * cam.scale)
    canvas.rect(0, road, cam.width, band, ASPHALT)
    canvas.line((0, road), (cam.width, road), SOFT_INK, 2)
    mark = max(2, int(round(0.18 * band)))
    for x in np.arange(math.floor(left / DASH_PERIOD) * DASH_PERIOD, right + DASH_PERIOD, DASH_PERIOD):
        a, b = cam.ground_to_screen(x, 0.0)[0], cam.ground_to_screen(x + DASH, 0.0)[0]
        canvas.line((a, road + band / 2), (b, road + band / 2), LANE_MARK, mark)
    for x in np.arange(math.floor(left / POST_STEP) * POST_STEP, right + POST_STEP, POST_STEP):
        canvas.line(cam.ground_to_screen(x, 0.0), cam.ground_to_screen(x, 1.0), FAINT, 3)   # a marker post
        top = cam.ground_to_screen(x, 0.95)
        canvas.line(top, cam.ground_to_screen(x, 0.8), LANE_MARK, 3)


def tyre(canvas, cam, x: float) -> None:
    """One tyre seen from the side at car-frame x, on the road."""
    r = TYRE / 2 * cam.scale
    c = cam.to_screen(x, TYRE / 2)
    canvas.circle(c, r, CAR_EDGE, 0)
    canvas.circle(c, r * 0.4, PAPER, 0)


def _box(cam, x0: float, z0: float, x1: float, z1: float) -> tuple[float, float, float, float]:
    (a, top), (b, bottom) = cam.to_screen(x0, z1), cam.to_screen(x1, z0)
    return a, top, b - a, bottom - top


def _body(canvas, cam, car) -> None:
    """The part a performer stands on: a box or a deck from its floor to its roof, the roof in ink."""
    x, y, w, h = _box(cam, car.rear_x, car.body_bottom, car.front_x, car.roof_height)
    canvas.rect(x, y, w, h, CAR_BODY)
    canvas.rect(x, y, w, h, CAR_EDGE, width=2)
    canvas.line((x, y), (x + w, y), INK, 3)


def _cab(canvas, cam, rear: float, front: float, bottom: float, top: float, roof_line: bool) -> None:
    """A cab from the side: upright back, a raked windscreen at the front, a side window."""
    rake = min(0.35, 0.15 * (front - rear))
    pts = [cam.to_screen(x, z) for x, z in ((rear, bottom), (rear, top), (front - rake, top),
                                            (front, top - 0.5), (front, bottom))]
    canvas.polygon(pts, CAR_BODY)
    canvas.polygon(pts, CAR_EDGE, 2)
    win = [cam.to_screen(x, z) for x, z in ((front - 1.0, top - 0.95), (front - 1.0, top - 0.25),
                                            (front - rake - 0.05, top - 0.25), (front - 0.08, top - 0.6),
                                            (front - 0.08, top - 0.95))]
    if front - rear > 1.3 and top - bottom > 1.2:
        canvas.polygon(win, GLAZING)
    if roof_line:
        canvas.line(cam.to_screen(rear, top), cam.to_screen(front - rake, top), INK, 3)


def _chassis(canvas, cam, x0: float, x1: float, top: float) -> None:
    x, y, w, h = _box(cam, x0, min(0.75, top - 0.12), x1, top)
    canvas.rect(x, y, w, h, CAR_EDGE)


def draw_vehicle_side(canvas, cam, car, behind=None) -> None:
    """One road vehicle from the side; `behind`: the next vehicle toward the rear (a tractor unit's
    chassis and coupling deck run under its front end)."""
    canvas.tag = "consist"
    if car.kind == "tractor unit":
        coupled = behind is not None and behind.kind in SEMI_TRAILERS
        fifth = car.rear_x - car.gap_behind - KINGPIN if coupled else car.rear_x - 1.2
        height = behind.body_bottom if coupled else COUPLING
        _chassis(canvas, cam, fifth - 1.3, car.front_x - 0.1, height - 0.12)
        x, y, w, h = _box(cam, fifth - 0.6, height - 0.12, fifth + 0.6, height)
        canvas.rect(x, y, w, h, INK)                                      # the coupling deck
        _cab(canvas, cam, car.rear_x, car.front_x, car.body_bottom, car.roof_height, roof_line=True)
        for xt in (car.front_x - 0.6, fifth - AXLE_STEP / 2, fifth + AXLE_STEP / 2):
            tyre(canvas, cam, xt)
        return
    if car.kind == "rigid box truck":
        cab_rear, cab_front = car.front_x + 0.15, car.front_x + 0.15 + CAB
        _chassis(canvas, cam, car.rear_x + 0.3, cab_front - 0.2, min(1.0, car.body_bottom))
        _cab(canvas, cam, cab_rear, cab_front, 0.95, min(car.roof_height, CAB_TOP), roof_line=False)
        _body(canvas, cam, car)
        group = car.rear_x + 0.3 * car.length
        axles = (group - AXLE_STEP / 2, group + AXLE_STEP / 2) if car.length > 6.0 else (group,)
        for xt in (cab_front - 0.7,) + axles:
            tyre(canvas, cam, xt)
        return
    # A semi-trailer: its box or deck, landing legs near the front, an axle group at the rear.
    _body(canvas, cam, car)
    if car.length > 5.0:
        legs = car.front_x - LANDING_LEGS
        canvas.line(cam.to_screen(legs, car.body_bottom), cam.to_screen(legs, 0.3), CAR_EDGE, 3)
        foot = _box(cam, legs - 0.15, 0.22, legs + 0.15, 0.3)
        canvas.rect(*foot, CAR_EDGE)
    n = 3 if car.length >= 10.0 else (2 if car.length >= 5.0 else 1)
    for k in range(n):
        tyre(canvas, cam, car.rear_x + 1.2 + k * AXLE_STEP)


# ---------------------------------------------------------------- end view

def draw_road_end(canvas, cam) -> None:
    """The road cut across (in the track's axes): asphalt under the surface, the lane's two
    markings either side of the vehicle."""
    from preview.end_view import _quad
    canvas.tag = "road"
    reach = cam.width / cam.scale
    canvas.polygon(_quad(cam, reach, 0.0, -reach, -0.18), ASPHALT)
    thick = max(4.0, 0.05 * cam.scale) / cam.scale
    for y in (LANE_HALF, -LANE_HALF):
        canvas.polygon(_quad(cam, y + MARK_WIDTH / 2, thick, y - MARK_WIDTH / 2, 0.0), LANE_MARK)


def draw_vehicle_end(canvas, cam, track, car) -> None:
    """Under a road vehicle's body cut across: dual tyres each side and the axle in the track's
    axes, the chassis rails up to the body in the body's."""
    from preview.end_view import _quad
    canvas.tag = "consist"
    half = car.width / 2
    for side in (-1, 1):
        outer = side * (half - 0.1)
        inner = side * (half - 0.1 - 0.62)
        canvas.polygon(_quad(track, outer, TYRE, inner, 0.0), CAR_EDGE)
        mid = (outer + inner) / 2
        canvas.line(track.to_screen(mid, 0.05), track.to_screen(mid, TYRE - 0.05), PAPER, 1)   # the pair
    canvas.polygon(_quad(track, half - 0.7, 0.58, -half + 0.7, 0.42), CAR_EDGE)              # the axle
    if car.body_bottom > 0.7:
        for side in (-1, 1):
            canvas.polygon(_quad(cam, side * 0.55, car.body_bottom, side * 0.35, 0.62), CAR_EDGE)


# ---------------------------------------------------------------- plan view

def draw_road_plan(canvas, cam, distance: float) -> None:
    """The road from above under the consist: asphalt for its lane and half the next, the lane's edge line
    on the right of travel, and the dashed centreline on the left moving with the ground."""
    canvas.tag = "road"
    _, top = cam.to_screen(0.0, 2 * LANE_HALF)                  # this lane and half the next, left of travel
    _, bottom = cam.to_screen(0.0, -LANE_HALF - SHOULDER)
    canvas.rect(0, top, cam.width, bottom - top, ASPHALT)
    _, edge = cam.to_screen(0.0, -LANE_HALF)
    w = max(2, int(round(MARK_WIDTH * cam.scale)))
    canvas.line((0, edge), (cam.width, edge), LANE_MARK, w)
    _, centre = cam.to_screen(0.0, LANE_HALF)
    x_lo = (0 - cam.origin_x) / cam.scale + cam.x_center + distance
    x_hi = (cam.width - cam.origin_x) / cam.scale + cam.x_center + distance
    for x in np.arange(math.floor(x_lo / DASH_PERIOD) * DASH_PERIOD, x_hi + DASH_PERIOD, DASH_PERIOD):
        a, b = cam.to_screen(x - distance, 0.0)[0], cam.to_screen(x + DASH - distance, 0.0)[0]
        canvas.line((a, centre), (b, centre), LANE_MARK, w)


def draw_vehicle_plan(canvas, cam, car, behind=None) -> None:
    """What of a road vehicle lies off its roof, from above: a tractor unit's chassis across the gap
    to the trailer, a rigid truck's cab ahead of its box."""
    canvas.tag = "consist"
    if car.kind == "tractor unit":
        coupled = behind is not None and behind.kind in SEMI_TRAILERS
        tail = car.rear_x - car.gap_behind - KINGPIN - 0.6 if coupled else car.rear_x - 2.0
        (x0, y0), (x1, y1) = cam.to_screen(tail, 0.55), cam.to_screen(car.rear_x, -0.55)
        canvas.rect(x0, y0, x1 - x0, y1 - y0, CAR_EDGE)
    elif car.kind == "rigid box truck":
        half = min(car.width, 2.5) / 2
        (x0, y0), (x1, y1) = cam.to_screen(car.front_x + 0.15, half), cam.to_screen(car.front_x + 0.15 + CAB, -half)
        canvas.rect(x0, y0, x1 - x0, y1 - y0, CAR_BODY)
        canvas.rect(x0, y0, x1 - x0, y1 - y0, CAR_EDGE, width=2)
