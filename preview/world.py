"""What one view shows of the world: track and scenery, structures and lines, the
consist, the jumps' take-off marks and landing zones, the figure with its trail
and force vectors, the failure marker, and the drift figure of a flight.

Forces are drawn to one scale (FORCE_PER_METRE; the per-segment air loads to a
second, stated scale), weight at the centre of mass and the roof's reaction
below the roof at the contact, apart from it. Labels that can move are placed
through the frame's Layout.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from physics import body
from physics.records import Event, Mode
from physics.units import display
from preview import air_layer
from preview.camera import CAR, GROUND, Camera
from preview.canvas import measure
from preview.layout import Box, fit
from preview.palette import (AERO, CAR_BODY, CAR_EDGE, FAILURE, FAINT, FIGURE_TONES, GROUND_TONE, HOLDS, INK,
                             LANDING_ZONE, LINE_ZONE, MARGINAL, PANEL, PAPER, PSEUDO, REACTION, ROOF_AIR,
                             ROOF_AIR_ZONE, SEGMENT_AERO, SKY, SOFT_INK, STRUCTURE, TOUCH, TRAIL, WEIGHT, WIND)

FORCE_PER_METRE = 800.0         # N drawn as 1 m, every whole-body force: a standing body's weight reaches its roof
SEGMENT_FORCE_PER_METRE = 80.0  # the per-segment air loads, drawn ten times larger, with a bar of their own
WIND_PER_METRE = 10.0           # m/s of apparent wind drawn as 1 m
WIND_ABOVE = 1.3                # m: the apparent wind arrow is drawn this far above the centre of mass
REACTION_OFFSET = 12            # px the roof's reaction is drawn beside the weight's line
# Failures at a place fixed in the ground (a structure, a line): in the ground frame their marker and
# ghost stay there; every other failure happened on a car and is drawn on the car as it moves on.
GROUND_FIXED = ("strike", "line")


def draw_view(canvas, playback, t: float, view, cam: Camera, layout, area: Box) -> None:
    cast = cast_of(playback)
    k = followed(playback, view)
    tr = cast[k].trajectory   # the performer the readout follows: its vectors, drift and air over the roof
    scene = playback.scene
    i = tr.index_at(t)
    draw_backdrop(canvas, cam)
    draw_scenery(canvas, cam, scene.units, road=scene.road)
    keep_clear(layout, tr, i, cam, view)
    for other in cast:
        if other.trajectory is not tr:
            keep_figure_clear(layout, other.trajectory, i, cam)
    draw_structures(canvas, scene, cam)
    draw_consist(canvas, scene, cam)
    for one in cast:
        draw_jumps(canvas, playback, t, cam, layout, area, one.trajectory)
    draw_roof_air(canvas, tr, i, view, cam, layout, area)
    for one in cast:
        draw_trail(canvas, one.trajectory, i, view, cam)
    for one in sorted(cast, key=lambda c: c.trajectory is not tr):   # the followed one's callout placed first
        failure = one.failure
        if failure is not None and t >= failure["time_s"] - 1e-9:
            # Under the figure: the body as it is now stays in sight over the marker of where it failed.
            draw_failure_marker(canvas, playback, failure, cam, layout, area, one.trajectory,
                                compact=one.trajectory is not tr)
            draw_figure(canvas, one.trajectory, one.trajectory.index_at(failure["time_s"]), cam, ghost=True,
                        pinned=failure["kind"] in GROUND_FIXED)
    if scene.rigging:   # under the figure; their labels last, in the places the others leave free
        draw_rigging(canvas, playback, t, cam, layout, area, labels=False)
    for one in sorted(cast, key=lambda c: c.trajectory is tr):   # the followed one on top
        draw_figure(canvas, one.trajectory, i, cam, tone=one.tone)
    draw_vectors(canvas, tr, i, view, cam)
    if len(cast) > 1:
        for one in cast:
            draw_touch(canvas, one.trajectory, i, cam, lambda x, y, z: (x, z), partner_of(cast, one))
        for one in cast:
            head = head_point(one.trajectory, i, cam)
            if head is not None:
                # Also above the apparent wind arrow over the followed figure's head (kept clear of labels).
                com = one.trajectory.com_path[i]
                tops = ([cam.to_screen(float(com[0]), float(com[1]) + WIND_ABOVE)[1] - 8]
                        if one.trajectory is tr and "wind" in view.vectors and np.isfinite(com).all() else [])
                name_label(canvas, layout, area, one, head, tops=tops)
    draw_structure_labels(canvas, scene, cam, layout, area)
    if cam.frame == GROUND:
        draw_drift(canvas, tr, i, cam, layout, area)
    if scene.rigging:
        draw_rigging(canvas, playback, t, cam, layout, area, labels=True)


# ------------------------------------------------------------ two performers

class Performer(NamedTuple):
    """One performer in the picture: its recorded run, its name ("" for a one-performer scene), its own
    first failure (or None) and its tone (palette.FIGURE_TONES, in cast order)."""

    trajectory: object
    name: str
    failure: dict | None
    tone: int


def cast_of(playback) -> list[Performer]:
    """The performers in the picture, in cast order: one for a one-performer scene (the beat's first
    failure), two for a pair (each with its own first failure, labelled with its name)."""
    tr = playback.trajectory
    if not tr.partners:
        return [Performer(tr, "", playback.summary.get("first_failure"), 0)]
    per = playback.summary.get("performers") or []
    tracks = (tr,) + tuple(tr.partners)
    return [Performer(one, one.scene.name, per[k]["first_failure"] if k < len(per) else None, min(k, 1))
            for k, one in enumerate(tracks)]


def followed(playback, view) -> int:
    """The index in the cast of the performer the readout follows (the view's `follow`, cycled by a key)."""
    count = 1 + len(playback.trajectory.partners)
    return int(getattr(view, "follow", 0)) % count


def partner_of(cast: list, one: Performer):
    """The other performer's run, or None."""
    return next((c.trajectory for c in cast if c.trajectory is not one.trajectory), None)


def touch_at(tr, i: int):
    """The other performer's force on this body at step i, (fx, fy, fz) N and where it acts (x, y, z),
    car frame; None while no force acts."""
    r = tr.record[i]
    where = (float(r["touch_x"]), float(r["touch_y"]), float(r["touch_z"]))
    force = (float(r["touch_fx"]), float(r["touch_fy"]), float(r["touch_fz"]))
    if not all(map(math.isfinite, where + force)) or math.hypot(*force) < 0.5:
        return None
    return force, where


def draw_touch(canvas, tr, i: int, cam, plane, other=None) -> None:
    """The push or pull between the performers on this body at its touch point, on the side views' force
    scale: a push (the force pointing away from the other body, `other`'s run) drawn ending at the point it
    pushes on, a pull starting from it. `plane(x, y, z)` picks the view's two axes of a car-frame point
    or force."""
    found = touch_at(tr, i)
    if found is None:
        return
    force, where = found
    ref = other.com_path3[i] if other is not None else np.full(3, np.nan)
    away = sum(f * (w - r) for f, w, r in zip(force, where, ref))
    push = not (math.isfinite(away) and away < 0.0)
    force_arrow(canvas, cam, plane(*where), plane(*force), TOUCH, "touch", push=push)


def head_point(tr, i: int, cam) -> tuple[float, float] | None:
    """The top of the figure's head in pixels (side views), or None with no body in the picture."""
    ends = tr.ends(i)
    if not np.isfinite(ends).all() or (tr.field("mode")[i] == Mode.GONE and _struck_by(tr, i)):
        return None
    pts = _screen_ends(tr, i, cam).reshape(-1, 2)
    n = int(np.argmin(pts[:, 1]))
    return float(pts[n, 0]), float(pts[n, 1])


NAME_REACH = 130.0   # px: a name label stands at most this far from its figure's head (else it is left out)


def name_label(canvas, layout, area: Box, one: Performer, head, spots=None, leader=None, tops=()) -> Box | None:
    """The performer's name in its tone on a small panel just above its head (else beside it), or centred
    on the first free one of `spots` (top-centre points) or just above one of the heights `tops` (px), where
    it covers no other label; failing those,
    the free place nearest above the head within NAME_REACH, with a thin leader in its tone to the head
    (to the ring `leader` = (x, y, r) when given). Left out (None) when nothing near is free."""
    canvas.tag = "names"
    ts = label_size(canvas)
    w, h = canvas_measure(one.name, ts, True)
    w, h = w + 8, h + 4
    x, y = head
    if spots is None:
        spots = [(x, y - h - 8), (x + 10 + w / 2, y - h - 4), (x - w / 2 - 10, y - h - 4)] + [
            (x + dx, top - h) for top in tops for dx in (0.0, -w / 2 - 8)]
    box = next((b for b in (Box(sx - w / 2, sy, w, h) for sx, sy in spots) if b.inside(area) and layout.free(b)),
               None)
    if box is None:
        near = Box(max(area.x, x - NAME_REACH), max(area.y, y - NAME_REACH), 0, 0)   # searched near the head only
        near = Box(near.x, near.y, min(area.right, x + NAME_REACH) - near.x, min(area.bottom, y + NAME_REACH) - near.y)
        box = layout.nearest_free(w, h, near, x - w / 2, y - h - 8, step=6.0) if near.w > w and near.h > h else None
        if box is None or math.hypot(box.x + w / 2 - x, box.bottom - y) > NAME_REACH:
            return None
        leader = leader or (x, y, 0.0)
    layout.reserve(box)
    tone = FIGURE_TONES[one.tone][0]
    if leader is not None:   # to the edge of the ring of radius r round (x, y) that faces the box
        lx, ly, r = leader
        up = box.bottom <= ly
        canvas.line((min(max(lx, box.x + 4), box.right - 4), box.bottom if up else box.y),
                    (lx, ly - r if up else ly + r), tone, 1)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.rect(box.x, box.y, box.w, box.h, tone, width=1)
    canvas.text((box.x + 4, box.y + 2), one.name, tone, ts, bold=True)
    return box


def keep_clear(layout, tr, i: int, cam: Camera, view) -> None:
    """The figure's box (with a head's room around it) and the apparent wind arrow above it are
    kept free of labels."""
    ends = tr.ends(i)
    if not np.isfinite(ends).all():
        return
    pts = [cam.to_screen(x, z) for x, z in ends.reshape(-1, 2)]
    com = tr.com_path[i]
    app_x = float(tr.record["app_x"][i])
    if "wind" in view.vectors and math.isfinite(app_x):
        pts += [cam.to_screen(com[0], com[1] + WIND_ABOVE),
                cam.to_screen(com[0] - app_x / WIND_PER_METRE, com[1] + WIND_ABOVE)]
    for unused, (x0, top, x1, soffit) in structures_in_view(tr.scene, cam):
        layout.reserve(Box(x0, top, x1 - x0, soffit - top))   # the deck and its soffit stay in sight
    pts = np.array(pts)
    pad = 0.15 * cam.scale
    x0, y0 = pts.min(axis=0) - pad
    x1, y1 = pts.max(axis=0) + pad
    layout.reserve(Box(x0, y0, x1 - x0, y1 - y0))


def keep_figure_clear(layout, tr, i: int, cam: Camera) -> None:
    """Another performer's figure (with a head's room around it) is kept free of labels."""
    ends = tr.ends(i)
    if not np.isfinite(ends).all():
        return
    pts = np.array([cam.to_screen(x, z) for x, z in ends.reshape(-1, 2)])
    pad = 0.15 * cam.scale
    (x0, y0), (x1, y1) = pts.min(axis=0) - pad, pts.max(axis=0) + pad
    layout.reserve(Box(x0, y0, x1 - x0, y1 - y0))


def draw_backdrop(canvas, cam: Camera) -> None:
    canvas.tag = "backdrop"
    canvas.rect(0, cam.top, cam.width, cam.height, SKY)
    rail_y = cam.to_screen(0.0, 0.0)[1]
    if rail_y < cam.top + cam.height:
        canvas.rect(0, rail_y, cam.width, cam.top + cam.height - rail_y, GROUND_TONE)


def draw_scenery(canvas, cam: Camera, units: str = "metric", road: bool = False) -> None:
    """Rail, sleepers and lineside posts (tagged "scenery"), or for a road consist the road with its
    lane markings and marker posts (tagged "road", preview.road); then distance boards, fixed to the ground."""
    left = cam.to_world(0, 0)[0] + cam.distance
    right = cam.to_world(cam.width, 0)[0] + cam.distance
    if road:
        from preview.road import draw_road_side
        draw_road_side(canvas, cam)
    else:
        canvas.tag = "scenery"
        rail = cam.ground_to_screen(0.0, 0.0)[1]
        canvas.line((0, rail), (cam.width, rail), SOFT_INK, 2)
        for x in np.arange(math.floor(left / 0.65) * 0.65, right + 0.65, 0.65):
            px = cam.ground_to_screen(x, 0.0)[0]
            canvas.line((px, rail + 2), (px, rail + 7), FAINT, 2)
        for x in np.arange(math.floor(left / 20.0) * 20.0, right + 20.0, 20.0):
            canvas.line(cam.ground_to_screen(x, 0.0), cam.ground_to_screen(x, 1.0), FAINT, 3)  # a low post
    canvas.tag = "distance"
    step = 100.0 if units == "metric" else 300 * 0.3048     # a board every 100 m or 300 ft
    bottom = cam.top + cam.height
    ts = label_size(canvas) - 1
    for x in np.arange(math.floor(left / step) * step, right + step, step):
        px, py = cam.ground_to_screen(x, 0.0)
        words = display(x, "length", units, ".0f")
        w, h = measure(words, ts, mono=True)
        if py + 14 + h <= bottom and w / 2 + 4 <= px <= cam.width - w / 2 - 4:
            canvas.rect(px - w / 2 - 3, py + 12, w + 6, h + 2, PANEL)
            canvas.text((px, py + 13 + h / 2), words, INK, ts, anchor="center", mono=True)


def structures_in_view(scene, cam: Camera):
    """(structure, (left, deck top, right, soffit) in pixels) for each structure in the picture."""
    for s in scene.structures:
        x0, top = cam.ground_to_screen(s.x_start, s.soffit + 1.2)
        x1, soffit = cam.ground_to_screen(s.x_start + s.span, s.soffit)
        if x1 >= 0 and x0 <= cam.width:
            yield s, (x0, top, x1, soffit)


def draw_structures(canvas, scene, cam: Camera) -> None:
    canvas.tag = "structures"
    for s, (x0, top, x1, soffit) in structures_in_view(scene, cam):
        canvas.rect(x0, top, x1 - x0, soffit - top, STRUCTURE)
        canvas.line((x0, soffit), (x1, soffit), INK, 2)
        if s.kind in ("bridge", "footbridge", "overbridge"):
            for xs in (s.x_start, s.x_start + s.span):
                base = cam.ground_to_screen(xs, 0.0)
                canvas.line(base, cam.ground_to_screen(xs, s.soffit), FAINT, 4)   # beside the track
        elif s.kind == "sign gantry":
            xs = s.x_start + s.span / 2                                             # its upright, beside the road
            canvas.line(cam.ground_to_screen(xs, 0.0), cam.ground_to_screen(xs, s.soffit), FAINT, 4)
    for line in scene.lines:
        x0, wire = cam.ground_to_screen(line.x_start, line.wire_height)
        x1, zone = cam.ground_to_screen(line.x_end, line.wire_height - line.exclusion)
        canvas.rect(x0, wire, x1 - x0, zone - wire, LINE_ZONE, alpha=90)
        canvas.line((x0, wire), (x1, wire), FAILURE, 2)


def draw_structure_labels(canvas, scene, cam: Camera, layout, area: Box) -> None:
    """Each structure in the picture named with its soffit, placed where it covers nothing."""
    canvas.tag = "structures"
    for s, (x0, top, x1, soffit) in structures_in_view(scene, cam):
        ts = label_size(canvas)
        label = fit(f"{s.name}, soffit {display(s.soffit, 'length', scene.units)}", ts, area.w - 8)
        w, h = canvas_measure(label, ts)
        mid = (x0 + x1) / 2
        box = layout.place(w + 6, h + 4, [(mid - w / 2, top - h - 8), (mid - w / 2, soffit + 4),
                                          (x1 + 6, top), (x0 - w - 12, top)], area)
        canvas.rect(box.x, box.y, box.w, box.h, PANEL)
        canvas.text((box.x + 3, box.y + 2), label, INK, ts)


def label_size(canvas) -> int:
    """The labels' text size on this canvas (the panels' body size)."""
    from preview.panels import text_size
    return text_size(canvas.size, getattr(canvas, "text_boost", 0))


def canvas_measure(text: str, size: int, bold: bool = False) -> tuple[int, int]:
    from preview.canvas import measure
    return measure(text, size, bold)


def draw_consist(canvas, scene, cam: Camera) -> None:
    """Each car from the side: a rail car's body on two bogies, or a road vehicle as preview.road draws it."""
    from preview.road import ROAD_REACH, draw_vehicle_side
    for n, car in enumerate(scene.cars):
        canvas.tag = "consist"
        x0, roof = cam.to_screen(car.rear_x, car.roof_height)
        x1, floor = cam.to_screen(car.front_x, car.body_bottom)
        reach = ROAD_REACH * cam.scale if car.road else 0.0
        if x1 + reach < 0 or x0 - reach > cam.width:
            continue
        if car.road:
            draw_vehicle_side(canvas, cam, car, scene.cars[n + 1] if n + 1 < len(scene.cars) else None)
        else:
            canvas.rect(x0, roof, x1 - x0, floor - roof, CAR_BODY)
            canvas.rect(x0, roof, x1 - x0, floor - roof, CAR_EDGE, width=2)
            canvas.line((x0, roof), (x1, roof), INK, 3)
            wheel_r = 0.42 * cam.scale
            for bogie in (car.rear_x + min(2.5, car.length * 0.2), car.front_x - min(2.5, car.length * 0.2)):
                for dx in (-0.9, 0.9):
                    cx, cy = cam.to_screen(bogie + dx, 0.42)
                    canvas.circle((cx, cy), wheel_r, CAR_EDGE, 0)
                    canvas.circle((cx, cy), wheel_r * 0.35, PAPER, 0)
        # The name at the middle of the part of the car in the picture.
        ts = label_size(canvas) + 1
        seen0, seen1 = max(x0, 4.0), min(x1, cam.width - 4.0)
        name = fit(car.name, ts, max(0.0, seen1 - seen0 - 8))
        if name:
            canvas.text(((seen0 + seen1) / 2, (roof + floor) / 2), name, CAR_EDGE, ts, anchor="center")


def draw_jumps(canvas, playback, t: float, cam: Camera, layout, area: Box, tr=None) -> None:
    """For each jump under way or done: the take-off mark, the declared landing car's roof as the
    landing zone with its edges, and where the body came down with its margin or shortfall (`tr`: the
    performer whose jumps, the first by default)."""
    tr = playback.trajectory if tr is None else tr
    scene = tr.scene
    canvas.tag = "jump"
    for a, action in enumerate(scene.actions):
        if action.kind != "jump" or action.takeoff_x is None or not (action.start <= t):
            continue
        car = scene.cars[action.landing_car]
        x0, roof = cam.to_screen(car.rear_x, car.roof_height)
        x1, _ = cam.to_screen(car.front_x, car.roof_height)
        canvas.rect(x0, roof - 5, x1 - x0, 5, LANDING_ZONE)
        for xe in (x0, x1):
            canvas.line((xe, roof - 12), (xe, roof + 2), HOLDS, 2)
        tx, ty = cam.to_screen(action.takeoff_x, scene.cars[scene.car_at(action.takeoff_x) or 0].roof_height)
        draw_takeoff_mark(canvas, tx, ty, layout, area)
        out = tr.outcomes[a]
        if math.isfinite(out["touchdown_time"]) and t >= out["touchdown_time"]:
            lx, ly = cam.to_screen(float(out["touchdown_x"]), car.roof_height)
            draw_landing_mark(canvas, scene, car, float(out["landing_margin_min"]), lx, ly, layout, area)


def draw_takeoff_mark(canvas, tx: float, ty: float, layout, area: Box) -> None:
    """A jump's take-off: a small triangle under the point (pixels) and the word beside it."""
    canvas.polygon([(tx, ty), (tx - 6, ty + 10), (tx + 6, ty + 10)], INK)
    ts = label_size(canvas)
    box = layout.place(*_label_size("take-off", ts - 1), [(tx - 20, ty + 12), (tx - 60, ty + 12)], area)
    canvas.text((box.x + 2, box.y + 1), "take-off", INK, ts - 1)


def landing_words(scene, car, margin: float) -> str:
    """Where a jump came down against its landing car: inside by the margin, or outside by the shortfall."""
    return (f"landed {display(margin, 'length', scene.units)} inside {car.name}" if margin >= 0 else
            f"came down {display(-margin, 'length', scene.units)} outside {car.name}")


def draw_landing_mark(canvas, scene, car, margin: float, lx: float, ly: float, layout, area: Box) -> None:
    """Where a jump came down (pixels): a ring, green when inside the required landing margin, and its words."""
    colour = HOLDS if margin >= scene.safety.landing_margin else FAILURE
    canvas.circle((lx, ly), 6, colour, 2)
    ts = label_size(canvas)
    words = landing_words(scene, car, margin)
    w, h = _label_size(words, ts)
    box = layout.place(w, h, [(lx - w / 2, ly + 14), (lx + 10, ly - h - 10), (lx - w - 10, ly - h - 10)], area)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.text((box.x + 3, box.y + 2), words, colour, ts)


def _label_size(text: str, size: int, bold: bool = False) -> tuple[int, int]:
    w, h = canvas_measure(text, size, bold)
    return w + 6, h + 4


def _screen_ends(tr, i, cam: Camera, pinned: bool = False) -> np.ndarray:
    """Segment endpoints in pixels; `pinned` keeps a past pose where it was in the ground frame."""
    ends = tr.ends(i)
    shift = float(tr.field("distance")[i]) if pinned and cam.frame == GROUND else None
    out = np.empty(ends.shape)
    for s in range(ends.shape[0]):
        for j in range(2):
            x, z = ends[s, j]
            out[s, j] = cam.ground_to_screen(x + shift, z) if shift is not None else cam.to_screen(x, z)
    return out


def _struck_by(tr, i: int) -> bool:
    strike = tr.events[Event.STRIKE]["time"]
    return math.isfinite(strike) and tr.times[i] >= strike


def draw_figure(canvas, tr, i: int, cam: Camera, ghost: bool = False, pinned: bool = False, tone: int = 0) -> None:
    """Stick figure: far limbs lighter and thinner, near limbs in ink, head as a ring; `tone`: the
    performer's (palette.FIGURE_TONES: the second of two in umber, tagged "partner").

    A body out of the run is drawn where it lies on the ground; a struck body
    is shown by its ghost at the strike only.
    """
    canvas.tag = "ghost" if ghost else ("partner" if tone else "figure")
    near_ink, far_ink = FIGURE_TONES[tone]
    if not np.isfinite(tr.ends(i)).all():
        return
    if not ghost and tr.field("mode")[i] == Mode.GONE and _struck_by(tr, i):
        return
    pts = _screen_ends(tr, i, cam, pinned=pinned)
    stature_px = tr.scene.performer.stature * cam.scale
    far = (body.UARM_F, body.FARM_F, body.THIGH_F, body.SHANK_F, body.FOOT_F)
    order = list(far) + [s for s in range(body.N_SEGMENTS) if s not in far and s != body.HEAD]
    for s in order:
        color = FAINT if ghost else (far_ink if s in far else near_ink)
        width = max(2, int(stature_px * (0.035 if s == body.TRUNK else 0.02)))
        canvas.line(pts[s, 0], pts[s, 1], color, width)
    neck, top = pts[body.HEAD, 0], pts[body.HEAD, 1]
    head_c = (neck[0] + 0.6 * (top[0] - neck[0]), neck[1] + 0.6 * (top[1] - neck[1]))
    radius = 0.4 * math.hypot(top[0] - neck[0], top[1] - neck[1])
    canvas.line(neck, head_c, FAINT if ghost else near_ink, max(2, int(stature_px * 0.02)))
    canvas.circle(head_c, radius, FAINT if ghost else near_ink, max(2, int(stature_px * 0.015)))


def draw_trail(canvas, tr, i: int, view, cam: Camera) -> None:
    """The centre of mass path, drawn at rest in the current frame: the last few
    seconds, or the whole of the current flight if that began earlier."""
    canvas.tag = "trail"
    n = max(1, int(view.trail_seconds / tr.scene.step))
    mode = tr.field("mode")
    start = max(0, i - n)
    if mode[i] == Mode.FLIGHT:
        grounded = np.nonzero(mode[:i + 1] != Mode.FLIGHT)[0]
        start = min(start, int(grounded[-1]) + 1 if grounded.size else 0)
    xs = tr.com_path[start:i + 1:4, 0]
    zs = tr.com_path[start:i + 1:4, 1]
    dist = tr.field("distance")[start:i + 1:4]
    points = []
    for x, z, s in zip(xs, zs, dist):
        if math.isfinite(x) and math.isfinite(z):
            # At rest in this frame: ground-frame points keep their ground x.
            points.append(cam.ground_to_screen(x + s, z) if cam.frame == GROUND else cam.to_screen(x, z))
    canvas.polyline(points, TRAIL, 2)


def force_arrow(canvas, cam, origin, force, color, tag, per_metre=FORCE_PER_METRE, push=False, shift=0.0):
    """A force drawn to scale from its point of application, or, for contact
    forces (push=True), drawn ending at the point it pushes on; shift: pixels aside."""
    canvas.tag = tag
    x, z = origin
    dx, dz = force[0] / per_metre, force[1] / per_metre
    a, b = ((x - dx, z - dz), (x, z)) if push else ((x, z), (x + dx, z + dz))
    pa, pb = cam.to_screen(*a), cam.to_screen(*b)
    canvas.arrow((pa[0] + shift, pa[1]), (pb[0] + shift, pb[1]), color, 3)


def draw_vectors(canvas, tr, i: int, view, cam: Camera) -> None:
    f = lambda name: float(tr.record[name][i])  # noqa: E731
    com = tuple(tr.com_path[i])
    mode = int(f("mode"))
    if not all(map(math.isfinite, com)) or mode == Mode.GONE:
        return
    on_roof = mode in (Mode.PLANTED, Mode.SLIDING, Mode.DOWN)
    if mode in (Mode.PLANTED, Mode.SLIDING) and "balance" in view.vectors:
        draw_balance(canvas, f, com, cam)  # under the arrows that start at the centre of mass
    if "weight" in view.vectors:
        force_arrow(canvas, cam, com, (0.0, -tr.weight), WEIGHT, "weight")
    if "aero" in view.vectors:
        force_arrow(canvas, cam, com, (f("aero_x"), f("aero_z")), AERO, "aero")
    if "segments" in view.vectors:
        ends = tr.ends(i)
        forces = tr.segment_forces(i)
        for s in range(body.N_SEGMENTS):
            mid = (ends[s, :, 0].mean(), ends[s, :, 1].mean())
            force_arrow(canvas, cam, mid, forces[s], SEGMENT_AERO, "segments", SEGMENT_FORCE_PER_METRE)
    if on_roof and "reaction" in view.vectors:
        base = (f("pivot_x"), f("contact_z"))
        aside = -REACTION_OFFSET if tr.timeline.postures["support_lo"][int(f("row"))] < 0 else REACTION_OFFSET
        force_arrow(canvas, cam, base, (0.0, f("normal")), REACTION, "normal", push=True, shift=aside)
        force_arrow(canvas, cam, base, (f("need_x"), 0.0), REACTION, "friction", push=True, shift=aside)
    pseudo = float(tr.pseudo_force_path[i])
    if "pseudo" in view.vectors and cam.frame == CAR and abs(pseudo) > 1.0:
        force_arrow(canvas, cam, com, (pseudo, 0.0), PSEUDO, "pseudo")
    if "wind" in view.vectors:
        canvas.tag = "wind"
        head = (com[0], com[1] + WIND_ABOVE)
        w = (f("app_x"), f("app_z") if math.isfinite(f("app_z")) else 0.0)
        if all(map(math.isfinite, w)):
            p0 = cam.to_screen(head[0] - w[0] / WIND_PER_METRE, head[1] - w[1] / WIND_PER_METRE)
            canvas.arrow(p0, cam.to_screen(*head), WIND, 2)


def draw_roof_air(canvas, tr, i: int, view, cam: Camera, layout, area: Box) -> None:
    """The air over the roof under the body (scene air.roof_profile = "on", shown with the apparent wind):
    at a few heights above the roof, an arrow as long as the air's speed along the track relative to the
    car on the apparent wind's scale, standing just upstream of the figure and pointing at it; a shaded
    band for a low-speed zone; a dashed line at the layer's top, labelled with its thickness where a
    label fits beside it (none rather than one away from it). Drawn behind the figure, in a softer blue
    than the wind's, and kept clear of labels."""
    if "wind" not in view.vectors or not air_layer.shown(tr.scene):
        return
    ends = tr.ends(i)
    com = tr.com_path[i]
    if not (np.isfinite(ends).all() and np.isfinite(com).all()):
        return
    r = tr.record[i]
    px_, py_ = float(r["pivot_x"]), float(r["pivot_y"])
    k = tr.scene.car_at(px_ if math.isfinite(px_) else float(com[0]))
    if k is None:
        return
    roof = tr.scene.cars[k].roof_z(py_ if math.isfinite(py_) else 0.0)
    profile = air_layer.profile_at(tr, i, skip=float(com[1]) + WIND_ABOVE - roof)
    if profile is None:
        return
    canvas.tag = "roof-air"
    xs = ends[..., 0]
    downstream = profile.along[-1] >= 0.0                   # air moving ahead: the stack stands behind the body
    head = float(xs.min()) - 0.3 if downstream else float(xs.max()) + 0.3
    tails = head - profile.along / WIND_PER_METRE
    x_lo, x_hi = min(head, float(tails.min())) - 0.2, max(head, float(tails.max())) + 0.2
    if profile.zone > 0.0:
        (a, top), (b, bottom) = cam.to_screen(x_lo, roof + profile.zone), cam.to_screen(x_hi, roof)
        canvas.rect(a, top, b - a, bottom - top, ROOF_AIR_ZONE, alpha=170)
    for z, tail in zip(profile.heights, tails):
        canvas.arrow(cam.to_screen(float(tail), roof + z), cam.to_screen(head, roof + z), ROOF_AIR, 2, head=7)
    p0, p1 = cam.to_screen(x_lo, roof + float(profile.heights[-1])), cam.to_screen(x_hi, roof)
    layout.reserve(Box(p0[0], p0[1] - 5, p1[0] - p0[0], p1[1] - p0[1] + 5))   # the arrows kept clear of labels
    ts = label_size(canvas) - 1
    words = air_layer.layer_words(profile.delta, tr.scene.units)
    (a, line_y), (b, _) = cam.to_screen(x_lo, roof + profile.delta), cam.to_screen(x_hi, roof + profile.delta)
    top_arrow = cam.to_screen(float(tails[-1]), roof + float(profile.heights[-1]))
    if line_y >= max(area.y, cam.top) + 4:
        air_layer.dashed(canvas, (a, line_y), (b, line_y), ROOF_AIR)
        w, h = _label_size(words, ts)
        spots = [(b + 6, line_y - h / 2), (a - w - 6, line_y - h / 2), ((a + b - w) / 2, line_y - h - 3)]
    else:
        words += ", its top above the picture"
        w, h = _label_size(words, ts)
        side = top_arrow[0] + 6 if not downstream else top_arrow[0] - w - 6
        spots = [(side, top_arrow[1] - h / 2), (min(a, b), top_arrow[1] - h - 8)]
    draw_free_label(canvas, words, SOFT_INK, ts, w, h, spots, layout, area)


def draw_free_label(canvas, words: str, colour, ts: int, w: float, h: float, spots, layout, area: Box) -> bool:
    """A small boxed label at the first of its spots that is free and inside the area, else none (a label
    whose words are said elsewhere too: better missing than away from what it names)."""
    for x, y in spots:
        box = Box(x, y, w, h)
        if box.inside(area) and layout.free(box):
            layout.reserve(box)
            canvas.rect(box.x, box.y, box.w, box.h, PANEL)
            canvas.text((box.x + 3, box.y + 2), words, colour, ts)
            return True
    return False


def draw_balance(canvas, f, com, cam: Camera) -> None:
    canvas.tag = "balance"
    canvas.circle(cam.to_screen(*com), 5, INK, 0)
    pivot, roof = f("pivot_x"), f("contact_z")
    lo, hi = pivot + f("support_lo"), pivot + f("support_hi")
    if math.isfinite(lo):
        canvas.line(cam.to_screen(lo, roof - 0.03), cam.to_screen(hi, roof - 0.03), HOLDS, 4)
    xcom = pivot + f("xcom")
    if math.isfinite(xcom):
        px, py = cam.to_screen(xcom, roof - 0.03)
        color = HOLDS if lo <= xcom <= hi else FAILURE
        canvas.polygon([(px, py - 2), (px - 6, py + 10), (px + 6, py + 10)], color)


def tether_colour(force: float, limit: float):
    """A tether's colour by its tension against the body's arrest-force limit: slack, well within
    (under half), near it, or over it."""
    if force <= 0.0:
        return FAINT
    if force < 0.5 * limit:
        return HOLDS
    return MARGINAL if force <= limit else FAILURE


def small_label(canvas, layout, area: Box, words: str, colour, size: int, near) -> None:
    """A short label on a panel at the first free place near one of the points `near` (beside, above or
    below it); left out when none is free: the colour of what it labels still says it."""
    w, h = canvas_measure(words, size, True)
    w, h = w + 8, h + 4
    for px, py in near:
        for x, y in ((px, py - h / 2), (px - w, py - h / 2), (px - w / 2, py - h), (px - w / 2, py)):
            box = Box(x, y, w, h)
            if area.x <= box.x and box.right <= area.right and area.y <= box.y and box.bottom <= area.bottom \
                    and layout.free(box):
                layout.reserve(box)
                canvas.rect(box.x, box.y, box.w, box.h, PANEL)
                canvas.text((box.x + 4, box.y + 2), words, colour, size, bold=True)
                return


def tension_label(canvas, layout, area: Box, anchor, end, words: str, colour, size: int) -> None:
    """A tether's tension beside it, from its middle toward its anchor: the first free place."""
    along = [(anchor[0] + f * (end[0] - anchor[0]), anchor[1] + f * (end[1] - anchor[1]))
             for f in (0.5, 0.35, 0.2, 0.0)]
    small_label(canvas, layout, area, words, colour, size,
                [(x + dx, y + dy) for x, y in along for dx, dy in ((8, 0), (-8, 0), (0, -12), (0, 12))])


def draw_rigging(canvas, playback, t: float, cam: Camera, layout, area: Box, labels: bool) -> None:
    """Each tether from its anchor (a running line drawn with its end anchors, the ring where the tether
    leaves it) to the harness, coloured by its tension against the limit; once a tether has arrested the
    body, a ring where it did. With `labels` only the words: the tension and a running line's end-anchor
    load beside them, and the arrest with its peak force, each where a free place is (else left out)."""
    from physics.rigging import anchor_load, harness_path
    from physics.units import display
    canvas.tag = "rigging"
    tr = playback.trajectory
    scene = playback.scene
    i = tr.index_at(t)
    harness = harness_path(tr)[i]
    limit = scene.safety.arrest_force
    ts = max(label_size(canvas) - 1, 10)
    for n, tether in enumerate(scene.rigging):
        z = tether.anchor_z
        if tether.running:
            # The line and its end anchors coloured by the end anchors' load against their limit.
            load = anchor_load(tether, float(harness[0]), float(tr.record["tether_force"][i, n])) \
                if np.isfinite(harness[0]) else 0.0
            ink = CAR_EDGE if load <= 0.0 else tether_colour(load, scene.safety.anchor_load)
            a, b = cam.to_screen(tether.line_x0, z), cam.to_screen(tether.line_x1, z)
            if not labels:
                canvas.line(a, b, ink, 2 if load <= 0.0 else 3)
                for end in (a, b):
                    canvas.rect(end[0] - 4, end[1] - 4, 8, 8, ink)
            elif load > 0.0:
                small_label(canvas, layout, area, f"end anchor {display(load, 'force', scene.units, '.0f')}", ink,
                            ts, [(b[0], b[1] - 16), (a[0], a[1] - 16), (b[0] + 10, b[1])])
        anchor = cam.to_screen(min(max(harness[0], tether.line_x0), tether.line_x1) if np.isfinite(harness[0])
                               else tether.anchor_x, z)
        if not labels:
            canvas.circle(anchor, 5, CAR_EDGE, 2)
        if not np.isfinite(harness).all():
            continue
        force = float(tr.record["tether_force"][i, n])
        colour = tether_colour(force, limit)
        end = cam.to_screen(harness[0], harness[2])
        if not labels:
            canvas.line(anchor, end, colour, 3 if force > 0 else 1)
        elif force > 0.0:
            tension_label(canvas, layout, area, anchor, end, display(force, "force", scene.units, ".0f"), colour, ts)
    arrest = next((e for e in playback.summary["events"] if e["kind"] == "arrested"), None)
    if arrest is not None and t >= arrest["time_s"] - 1e-9:
        j = tr.index_at(arrest["time_s"])
        px, py = cam.to_screen(harness_path(tr)[j][0], harness_path(tr)[j][2])
        if area.x <= px <= area.right and area.y <= py <= area.bottom:
            peak = float(arrest["demand"])
            # An arrest is never a clean hold (its action is marginal); any rigging figure over its limit
            # (the body's force, an anchor's load, the free fall) makes it a failure's colour.
            over = peak > limit or any(not lim["within"] for t in playback.summary.get("rigging", [])
                                       for lim in t["limits"])
            colour = FAILURE if over else MARGINAL
            if not labels:
                canvas.circle((px, py), 11, colour, 3)
                return
            label = (f"ARRESTED  {arrest['time_s']:.2f} s  peak {display(peak, 'force', scene.units, '.0f')}"
                     f" (limit {display(limit, 'force', scene.units, '.0f')})")
            w, h = canvas_measure(label, ts, True)
            spots = [(px + 20, py + 20), (px - 32 - w, py + 20), (px + 20, py - 30 - h), (px - 32 - w, py - 30 - h)]
            free = [b for b in (Box(x, y, w + 12, h + 8).clamped(area) for x, y in spots) if layout.free(b)]
            if not free:   # nowhere free nearby (a crowded small view): the nearest free place, else no label
                nearest = layout.nearest_free(w + 12, h + 8, area, px, py)
                free = [nearest] if nearest is not None else []
            if not free:
                return
            box = layout.reserve(free[0])
            canvas.rect(box.x, box.y, box.w, box.h, PANEL)
            canvas.rect(box.x, box.y, box.w, box.h, colour, width=2)
            canvas.text((box.x + 6, box.y + 4), fit(label, ts, box.w - 12, bold=True), colour, ts, bold=True)


def draw_failure_marker(canvas, playback, failure, cam: Camera, layout, area: Box, tr=None,
                        compact: bool = False) -> None:
    """A ringed cross where the failure happened, and a callout with its kind, time and numbers (`tr`:
    the performer who failed, the first by default; `compact`: the callout without its numbers)."""
    canvas.tag = "failure"
    tr = playback.trajectory if tr is None else tr
    i = tr.index_at(failure["time_s"])
    z = tr.com_path[i, 1]
    z = z if math.isfinite(z) else playback.scene.cars[0].roof_height + 1.0
    if cam.frame == GROUND and failure["kind"] in GROUND_FIXED:
        px, py = cam.ground_to_screen(failure["x_ground_m"], z)   # where the structure or line is
    else:
        px, py = cam.to_screen(failure["x_car_m"], z)             # on the car, wherever it now is
    label = failure_label(failure)
    if not (area.x <= px <= area.right and area.y <= py <= area.bottom):
        draw_failure_pointer(canvas, label, px, py, cam, layout, area, playback.scene.units)
        return
    draw_failure_callout(canvas, failure, px, py, layout, area, compact=compact)


def failure_label(failure: dict) -> str:
    """A failure's kind and time; with two performers, whose it is first."""
    who = f"{failure['performer']}: " if failure.get("performer") else ""
    return f"{who}{failure['kind'].upper()}  {failure['time_s']:.2f} s"


def draw_failure_callout(canvas, failure: dict, px: float, py: float, layout, area: Box,
                         beside: bool = False, compact: bool = False) -> None:
    """The ringed cross at a failure's place (pixels) and its callout: kind, time and the numbers behind
    it; `beside`: the callout may also stand level with the marker, to its left or right; `compact`: the
    kind and time only (two performers: the one not followed, whose numbers the readout does not say)."""
    canvas.tag = "failure"
    label = failure_label(failure)
    r = 16
    canvas.circle((px, py), r, FAILURE, 3)
    canvas.line((px - r * 0.7, py - r * 0.7), (px + r * 0.7, py + r * 0.7), FAILURE, 3)
    canvas.line((px - r * 0.7, py + r * 0.7), (px + r * 0.7, py - r * 0.7), FAILURE, 3)
    ts = label_size(canvas)
    (lw, lh), (dw, dh) = canvas_measure(label, ts + 3, True), canvas_measure(failure["detail"], ts)

    def spots_for(width: float, h: float) -> list:
        spots = [(px + 30, py - r - 38 - h), (px - 30 - width, py - r - 38 - h), (px + 30, py + r + 20),
                 (px - 30 - width, py + r + 20), (px - width / 2, py - r - 64 - h)]
        if beside:
            spots[2:2] = [(px - 60 - width, py - h / 2), (px + 60, py - h / 2)]
        return spots

    width, h = min(area.w - 12, max(lw, dw) + 16), lh + dh + 12
    if not compact and layout.free_place(width, h, spots_for(width, h), area) is None:
        compact = True   # no free place for the numbers too: the kind and time (the readout says the numbers)
    if compact:
        width, h = min(area.w - 12, lw + 16), lh + 8
    detail = fit(failure["detail"], ts, width - 16)
    box = layout.place(width, h, spots_for(width, h), area)
    anchor = (box.x, box.bottom) if box.x > px else (box.right, box.bottom)
    if box.x + 8 <= px <= box.right - 8:
        anchor = (px, box.bottom)     # the box straddles the marker: a straight leader
    if box.bottom >= py >= box.y:     # level with the marker: from its side to the box's near side
        canvas.line((px + (r if box.x > px else -r), py), (box.x if box.x > px else box.right, py), FAILURE, 2)
    else:
        canvas.line((px, py - r if box.bottom < py else py + r),
                    anchor if box.bottom < py else (anchor[0], box.y), FAILURE, 2)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.rect(box.x, box.y, box.w, box.h, FAILURE, width=2)
    canvas.text((box.x + 8, box.y + 4), fit(label, ts + 3, box.w - 16, bold=True), FAILURE, ts + 3, bold=True)
    if not compact:
        canvas.text((box.x + 8, box.y + 6 + lh), detail, INK, ts)


def draw_failure_pointer(canvas, label: str, px: float, py: float, cam: Camera, layout, area: Box,
                         units: str) -> None:
    """The failure happened outside this view (the ground frame keeps it where it was): a tag at
    the view's edge pointing toward it, with how far away it is."""
    behind = px < area.x
    metres = abs((px - (area.x if behind else area.right)) / cam.scale)
    words = f"{label}, {display(metres, 'length', units, '.0f')} {'back' if behind else 'ahead'} off the picture"
    ts = label_size(canvas)
    words = fit(words, ts, area.w / 2)
    w, h = _label_size(words, ts)
    w += 14
    y = min(max(py - h / 2, area.y), area.bottom - h)
    box = layout.place(w, h, [(area.x if behind else area.right - w, y), (area.x if behind else area.right - w,
                                                                          area.bottom - h - 40)], area)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.rect(box.x, box.y, box.w, box.h, FAILURE, width=2)
    mid = box.y + box.h / 2
    tip, back = (box.x + 2, box.x + 10) if behind else (box.right - 2, box.right - 10)
    canvas.polygon([(tip, mid), (back, mid - 5), (back, mid + 5)], FAILURE)
    canvas.text((box.x + (14 if behind else 3), box.y + 2), words, FAILURE, ts)


def draw_drift(canvas, tr, i: int, cam: Camera, layout, area: Box) -> None:
    """During a flight, in the ground frame: how far the body has gone over the ground and relative to the car."""
    mode = tr.field("mode")
    if mode[i] != Mode.FLIGHT:
        return
    grounded = np.nonzero(mode[:i + 1] != Mode.FLIGHT)[0]
    k0 = int(grounded[-1]) + 1 if grounded.size else 0
    com = tr.com_path
    dist = tr.field("distance")
    over_ground = (com[i, 0] + dist[i]) - (com[k0, 0] + dist[k0])
    relative = com[i, 0] - com[k0, 0]
    units = tr.scene.units
    air = f"in the air {tr.times[i] - tr.times[k0]:.2f} s"
    canvas.tag = "drift"
    ts = label_size(canvas)
    px, py = cam.ground_to_screen(com[i, 0] + dist[i], com[i, 1])
    # The long wording, then a short one; none where the picture has no free place for it (a crowded
    # view): the readout says "in the air" and the drift is secondary to what is drawn.
    for words in (f"{air}: {display(over_ground, 'length', units)} over the ground, "
                  f"{display(relative, 'length', units)} relative to the car",
                  f"{air}; {display(relative, 'length', units)} relative to the car"):
        words = fit(words, ts, area.w - 16)
        w, h = _label_size(words, ts)
        box = layout.place(w, h, [(px - w / 2, py - 3 * cam.scale), (px - w / 2, py + cam.scale),
                                  (area.x + 8, area.bottom - h - 8)], area, optional=True)
        if box is not None:
            canvas.rect(box.x, box.y, box.w, box.h, PANEL)
            canvas.text((box.x + 3, box.y + 2), words, TRAIL, ts)
            return
