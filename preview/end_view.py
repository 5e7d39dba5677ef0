"""The end view: a section across the track at the performer, looking forward
(travel goes into the picture), so the left of travel is on the left of the
screen, as someone standing behind the performer would see it.

It shows the car under the performer cut across (roof with its crown, sides,
underframe, wheels and rails), the figure in the frontal plane with its
sideways lean and support, the loads across the track on the side views'
force scale (air load, the friction the roof must supply, weight, roof
reaction, the lateral pseudo-force, apparent wind) and what is overhead near
the performer: structures' soffits and overhead lines with their exclusion
zones. Off the roof the figure is drawn where the record puts it, in the air
beside the car and then on the ground. Every number comes from the recorded
trajectory (car frame, SI); track gauge, wheels and deck depth are drawing
values, not physics.

On a curve (or with a ride) the section turns: the rails and sleeper by the
track's cant, the car body, its roof and everything drawn in the body's axes
(the figure on the roof, its support, the roof's reaction and friction, the air
load and the apparent wind) by the cant plus the body's roll on its suspension,
about rail level at the track's centreline; the ground, the structures and the
lines stay level. The weight is drawn straight down and the pseudo-force as
the car body's acceleration reversed, both in level axes (together they are
what the roof's axes feel). In the air and on the ground the engine's places
are level already (gravity straight down), so the body is drawn as recorded.
A box beside the track says the cant, the roll and the lateral acceleration
felt on the roof.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from physics import G, body
from physics.records import Event, Mode
from physics.units import display
from preview import air_layer, curves
from preview.layout import Box, fit
from preview.report import floor_to
from preview.palette import (AERO, CAR_BODY, CAR_EDGE, CURVE, FAILURE, FAINT, FIGURE_TONES, GROUND_TONE, HOLDS,
                             INK, LINE_ZONE, PANEL, PSEUDO, REACTION, ROOF_AIR, ROOF_AIR_ZONE, SKY, SOFT_INK,
                             STRUCTURE, TOUCH, TRAIL, WEIGHT, WIND)
from preview.world import (FORCE_PER_METRE, REACTION_OFFSET, WIND_ABOVE, WIND_PER_METRE, _label_size, canvas_measure,
                           cast_of, draw_failure_callout, draw_free_label, draw_touch, followed, force_arrow,
                           label_size, name_label, partner_of, touch_at)

DEFAULT_ZOOM = 1.5     # ViewSettings' default zoom: the fitted picture
GAUGE = 1.435          # m between the rails (standard gauge), drawing value
WHEEL = 0.84           # m wheel diameter, drawing value (as the side view draws them)
DECK = 1.2             # m depth of a structure's deck above its soffit, drawing value (as the side view)
AHEAD = 30.0           # m: a structure or line this far ahead (or under way) is drawn
BEHIND = 5.0           # m: and for this far once passed
ZONE_FILL = tuple(int(0.45 * a + 0.55 * b) for a, b in zip(LINE_ZONE, SKY))   # the zone, faint


@dataclass(frozen=True)
class EndCamera:
    """Across the track (y, + left of travel) and up (z), metres <-> pixels, looking forward."""

    frame: str
    scale: float       # pixels per metre
    width: int
    height: int
    top: int
    origin_x: float    # screen x of the track's centreline (y = 0)
    ground_y: float    # screen y of rail level (z = 0)
    tilt: float = 0.0  # rad: axes turned by this (+ their left side low) about rail level at the centreline

    def level(self, y: float, z: float) -> tuple[float, float]:
        """A point given in these (turned) axes in level axes, m."""
        if self.tilt == 0.0:
            return y, z
        c, s = math.cos(self.tilt), math.sin(self.tilt)
        return y * c + z * s, -y * s + z * c

    def to_screen(self, y: float, z: float) -> tuple[float, float]:
        y, z = self.level(y, z)
        return (self.origin_x - y * self.scale, self.ground_y - z * self.scale)

    def turned(self, tilt: float) -> "EndCamera":
        """This camera for axes turned by `tilt` (rad, + left side low): the track's, the car body's."""
        return self if tilt == self.tilt else replace(self, tilt=tilt)


def camera(tr, t: float, size, region: Box, zoom: float = DEFAULT_ZOOM, follow=None) -> EndCamera:
    """The end view's camera: one scale for the whole beat, fitted to the region so the widest roof,
    the farthest any performer's body goes across and the tallest one's head above the highest roof
    all fit; zoom keeps the highest roof's centre where it is. (`follow`: the performer followed; the
    framing is the whole beat's, the same for each.)"""
    scene = tr.scene
    runs = (tr,) + tuple(tr.partners)
    half = max(c.width for c in scene.cars) / 2
    across = np.abs(np.concatenate([one.com_path3[:, 1] for one in runs]))
    reach = float(np.nanmax(across)) if np.isfinite(across).any() else 0.0
    y_half = max(half + 2.2, reach + 1.0)
    roof = max(c.roof_height for c in scene.cars)
    z_head = roof + 1.2 * max(one.scene.performer.stature for one in runs) + 0.3
    overhead = [s.soffit + DECK + 0.3 for s in scene.structures] + [w.wire_height + w.exclusion + 0.3
                                                                     for w in scene.lines]
    z_hi = max([z_head] + [min(z, z_head + 5.0) for z in overhead])
    z_lo = -0.6
    s0 = min(region.w / (2 * y_half), region.h / (z_hi - z_lo))
    roof_y = region.bottom + z_lo * s0 - roof * s0
    scale = s0 * zoom / DEFAULT_ZOOM
    return EndCamera("end", scale, size[0], size[1], 0, region.x + region.w / 2, roof_y + roof * scale)


def draw(canvas, playback, t: float, view, cam: EndCamera, layout, area: Box) -> None:
    """The end view at time t: the section at the performer followed (with two, the other one drawn
    where it is across the track, named with how far ahead or behind the section it stands)."""
    cast = cast_of(playback)
    tr, scene = cast[followed(playback, view)].trajectory, playback.scene
    i = tr.index_at(t)
    x = section_x(tr, i)
    near = nearby_overhead(scene, x + float(tr.field("distance")[i]))
    car, ahead = section_car(scene, x)
    cant, roll = curves.tilt(tr, i)
    draw_backdrop(canvas, cam)
    draw_overhead(canvas, cam, near)
    draw_car(canvas, cam.turned(cant + roll), car, faint=ahead != 0, track=cam.turned(cant))
    if scene.road:
        from preview.road import draw_road_end
        draw_road_end(canvas, cam.turned(cant))
    else:
        draw_track(canvas, cam.turned(cant))
    draw_zone_edges(canvas, cam, near)
    keep_clear(layout, tr, i, view, cam, car if ahead == 0 else None)
    for other in cast:
        pts = other.trajectory.ends3(i).reshape(-1, 3)
        if other.trajectory is not tr and np.isfinite(pts).all():
            pose = pose_camera(other.trajectory, i, cam)
            _reserve_around(layout, [pose.to_screen(y, z) for _, y, z in pts], 0.2 * cam.scale)
    draw_roof_air(canvas, tr, i, view, cam, car if ahead == 0 else None, layout, area)
    for one in cast:
        draw_trail(canvas, one.trajectory, i, view, cam)
    for one in sorted(cast, key=lambda c: c.trajectory is not tr):   # the followed one's callout placed first
        if one.failure is not None and t >= one.failure["time_s"] - 1e-9:
            draw_failure(canvas, playback, one.failure, cam, layout, area, one.trajectory,
                         compact=one.trajectory is not tr)
    if scene.rigging and ahead == 0:
        draw_tethers(canvas, playback, i, cam.turned(cant + roll), pose_camera(tr, i, cam), car, layout, area)
    # Looking forward: the performer farther ahead first, the one nearer the camera over it.
    for one in sorted(cast, key=lambda c: -_along(c.trajectory, i)):
        draw_figure(canvas, one.trajectory, i, cam, tone=one.tone)
    draw_vectors(canvas, tr, i, view, cam)
    if len(cast) > 1:
        for one in cast:
            draw_touch_across(canvas, one.trajectory, i, pose_camera(one.trajectory, i, cam), partner_of(cast, one))
        for one in cast:
            head = head_point(one.trajectory, i, cam)
            if head is not None:
                d = _along(one.trajectory, i) - x
                units = scene.units
                words = ("" if one.trajectory is tr or abs(d) < 0.05 else
                         f", {display(abs(d), 'length', units, '.1f')} {'ahead' if d > 0 else 'behind'}")
                name_label(canvas, layout, area, one._replace(name=one.name + words), head)
    draw_side_words(canvas, cam, car, layout, area)
    draw_car_name(canvas, cam.turned(cant + roll), car, ahead, scene.units, layout, area)
    draw_track_words(canvas, tr, i, cam, car, layout, area)
    draw_overhead_labels(canvas, cam, near, scene.units, layout, area)
    draw_facts(canvas, tr, i, cam, car if ahead == 0 else None, layout, area)


# ------------------------------------------------------------------ where

def section_x(tr, i: int) -> float:
    """Car-frame x of the section: the body's centre of mass (its last known place if it has none)."""
    x = tr.com_path3[:i + 1, 0]
    x = x[np.isfinite(x)]
    return float(x[-1]) if x.size else float(tr.scene.start_x)


def pose_camera(tr, i: int, cam: EndCamera) -> EndCamera:
    """The camera for the body as recorded at step i: on the roof its places are in the car body's axes,
    turned by the cant and the body's roll; in the air and on the ground they are level."""
    if not math.isfinite(float(tr.field("pivot_x")[i])):
        return cam.turned(0.0)
    cant, roll = curves.tilt(tr, i)
    return cam.turned(cant + roll)


def section_car(scene, x: float):
    """The car cut by the section and 0; over a gap or behind the consist, the nearest car ahead (seen
    in the distance, looking forward) and how far ahead it is (m, > 0); ahead of the consist, its lead
    car and how far behind the section it is (m, < 0)."""
    k = scene.car_at(x)
    if k is not None:
        return scene.cars[k], 0.0
    ahead = [c for c in scene.cars if c.rear_x > x]
    if not ahead:
        lead = max(scene.cars, key=lambda c: c.front_x)
        return lead, lead.front_x - x
    car = min(ahead, key=lambda c: c.rear_x - x)
    return car, car.rear_x - x


def nearby_overhead(scene, x_ground: float) -> list[tuple]:
    """(kind, item, distance) for each structure and line near the section: distance > 0 ahead,
    0 overhead now, < 0 passed (m, ground frame)."""
    out = []
    for kind, items in (("structure", scene.structures), ("line", scene.lines)):
        for item in items:
            x0, x1 = (item.x_start, item.x_start + item.span) if kind == "structure" else (item.x_start, item.x_end)
            d = x0 - x_ground if x_ground < x0 else (x1 - x_ground if x_ground > x1 else 0.0)
            if -BEHIND <= d <= AHEAD:
                out.append((kind, item, d))
    return out


# ---------------------------------------------------------------- shapes

def draw_backdrop(canvas, cam: EndCamera) -> None:
    canvas.tag = "backdrop"
    canvas.rect(0, cam.top, cam.width, cam.height, SKY)
    rail_y = cam.to_screen(0.0, 0.0)[1]
    bottom = cam.top + cam.height
    if rail_y < bottom:
        canvas.rect(0, rail_y, cam.width, bottom - rail_y, GROUND_TONE)
        canvas.line((0, rail_y), (cam.width, rail_y), SOFT_INK, 2)


def draw_overhead(canvas, cam: EndCamera, near) -> None:
    """Decks over the whole width (solid when overhead now, faint when ahead or passed) and the
    lines' exclusion zones as faint discs round the wire, centred over the track."""
    canvas.tag = "structures"
    for kind, item, d in near:
        if kind == "structure":
            _, soffit = cam.to_screen(0.0, item.soffit)
            _, top = cam.to_screen(0.0, item.soffit + DECK)
            canvas.rect(0, top, cam.width, soffit - top, STRUCTURE, alpha=255 if d == 0 else 70)
            canvas.line((0, soffit), (cam.width, soffit), INK if d == 0 else FAINT, 2)
        else:
            centre = cam.to_screen(0.0, item.wire_height)
            canvas.circle(centre, item.exclusion * cam.scale, ZONE_FILL)
            canvas.circle(centre, 4, FAILURE)


def draw_zone_edges(canvas, cam: EndCamera, near) -> None:
    """The exclusion zones' edges over the car (a roof inside a zone shows so)."""
    canvas.tag = "structures"
    for kind, item, d in near:
        if kind == "line":
            centre = cam.to_screen(0.0, item.wire_height)
            canvas.circle(centre, item.exclusion * cam.scale, FAILURE if d == 0 else LINE_ZONE, 2)
            canvas.circle(centre, 4, FAILURE)


def roof_points(car, n: int = 25) -> list[tuple[float, float]]:
    """(y, z) along the roof from the right edge to the left, m."""
    ys = np.linspace(-car.width / 2, car.width / 2, n)
    return [(float(y), float(car.roof_z(y))) for y in ys]


def _quad(cam: EndCamera, y0: float, z0: float, y1: float, z1: float) -> list[tuple[float, float]]:
    """The corners of a rectangle given in the camera's axes, on the screen."""
    return [cam.to_screen(y0, z0), cam.to_screen(y1, z0), cam.to_screen(y1, z1), cam.to_screen(y0, z1)]


def draw_car(canvas, cam: EndCamera, car, faint: bool = False, track: EndCamera | None = None) -> None:
    """The car cut across: wheels and bogie frame (in the track's axes, `track`), then the body with its
    crowned roof and side edges (in the body's, `cam`). A car seen ahead of the section (over a gap) is a
    faint outline only."""
    canvas.tag = "consist"
    if car is None:
        return
    track = track or cam
    roof = [cam.to_screen(y, z) for y, z in roof_points(car)]
    body_pts = ([cam.to_screen(-car.width / 2, car.body_bottom)] + roof + [cam.to_screen(car.width / 2,
                                                                                         car.body_bottom)])
    if faint:
        canvas.polygon(body_pts, FAINT, 2)
        return
    if car.road:
        from preview.road import draw_vehicle_end
        draw_vehicle_end(canvas, cam, track, car)   # dual tyres, axle and chassis rails
        canvas.tag = "consist"
    else:
        for side in (-1, 1):
            canvas.polygon(_quad(track, side * GAUGE / 2 + 0.07, WHEEL, side * GAUGE / 2 - 0.07, 0.0), CAR_EDGE)
        canvas.polygon(_quad(track, GAUGE / 2 + 0.25, 0.75, -GAUGE / 2 - 0.25, 0.45), CAR_EDGE)
    canvas.polygon(body_pts, CAR_BODY)
    canvas.polygon(body_pts, CAR_EDGE, 2)
    canvas.polyline(roof, INK, 3)
    for y in (-car.width / 2, car.width / 2):   # the side edges, upright in the body's axes
        z = car.roof_z(y)
        canvas.line(cam.to_screen(y, z + 6 / cam.scale), cam.to_screen(y, z - 8 / cam.scale), INK, 3)


def draw_track(canvas, cam: EndCamera) -> None:
    """Sleeper and the two rails at rail level, in the track's axes (turned by the cant)."""
    canvas.tag = "scenery"
    canvas.polygon(_quad(cam, GAUGE / 2 + 0.55, 0.0, -GAUGE / 2 - 0.55, -0.12), FAINT)
    rail = max(2.0, 0.08 * cam.scale) / cam.scale
    for side in (-1, 1):
        canvas.polygon(_quad(cam, side * GAUGE / 2 + 0.04, 0.15, side * GAUGE / 2 + 0.04 - rail, 0.0), CAR_EDGE)


def keep_clear(layout, tr, i: int, view, cam: EndCamera, car) -> None:
    """The figure (with room round it), the apparent wind arrow above it and the car's section are
    kept free of labels."""
    pts = tr.ends3(i).reshape(-1, 3)
    pad = 0.2 * cam.scale
    pose = pose_camera(tr, i, cam)
    if np.isfinite(pts).all():
        _reserve_around(layout, [pose.to_screen(y, z) for _, y, z in pts], pad)
        r, com = tr.record[i], tr.com_path3[i]
        if "wind" in view.vectors and math.isfinite(r["app_y"]) and np.isfinite(com).all():
            head = (float(com[1]), float(com[2]) + WIND_ABOVE)
            tail = (head[0] - float(r["app_y"]) / WIND_PER_METRE, head[1] - _or0(r["app_z"]) / WIND_PER_METRE)
            _reserve_around(layout, [pose.to_screen(*head), pose.to_screen(*tail)], 8)
    if car is not None:
        cant, roll = curves.tilt(tr, i)
        body = cam.turned(cant + roll)
        corners = [body.to_screen(y, z) for y in (-car.width / 2, car.width / 2)
                   for z in (car.roof_height, 0.0)]   # the body, its bogie and wheels down to the rails
        xs, ys = [p[0] for p in corners], [p[1] for p in corners]
        layout.reserve(Box(min(xs), min(ys) - 8, max(xs) - min(xs), max(ys) - min(ys) + 8))


def _reserve_around(layout, points, pad: float) -> None:
    xy = np.array(points)
    (x0, y0), (x1, y1) = xy.min(axis=0) - pad, xy.max(axis=0) + pad
    layout.reserve(Box(x0, y0, x1 - x0, y1 - y0))


def draw_roof_air(canvas, tr, i: int, view, cam: EndCamera, car, layout, area: Box) -> None:
    """The air over the roof under the body (scene air.roof_profile = "on", shown with the apparent wind),
    in the roof's axes: at a few heights above the roof, a bar as long as the air's speed ALONG the track
    relative to the car (on the apparent wind's scale), from a faint upright beside the figure out to its
    left; a shaded band for a low-speed zone; a dashed line at the layer's top, labelled where it fits.

    Along, not across: the layer slows the air along the track, which at speed is nearly all of it (the
    across part, the same share of the side wind, is a few pixels here, and the apparent wind arrow above
    the head draws it already); a bar with no head says how much without pointing across the picture."""
    if car is None or "wind" not in view.vectors or not air_layer.shown(tr.scene):
        return
    r = tr.record[i]
    pts = tr.ends3(i).reshape(-1, 3)
    com = tr.com_path3[i]
    if not (np.isfinite(pts).all() and np.isfinite(com).all()):
        return
    y = float(r["pivot_y"]) if math.isfinite(float(r["pivot_y"])) else float(com[1])   # in the air: under the body
    roof = car.roof_z(y)
    profile = air_layer.profile_at(tr, i, skip=float(com[2]) + WIND_ABOVE - roof)
    if profile is None:
        return
    canvas.tag = "roof-air"
    axes = pose_camera(tr, i, cam)                       # the roof's axes: the profile stands on the roof
    start = float(pts[:, 1].max()) + 0.25                # just left of the figure (+ y is left of travel)
    ends = start + np.abs(profile.along) / WIND_PER_METRE
    y_hi = float(ends.max()) + 0.2
    if profile.zone > 0.0:
        band = [axes.to_screen(start, roof), axes.to_screen(y_hi, roof), axes.to_screen(y_hi, roof + profile.zone),
                axes.to_screen(start, roof + profile.zone)]
        canvas.polygon(band, ROOF_AIR_ZONE)
    canvas.line(axes.to_screen(start, roof), axes.to_screen(start, roof + float(profile.heights[-1])), ROOF_AIR, 1)
    for z, end in zip(profile.heights, ends):
        a, b = axes.to_screen(start, roof + z), axes.to_screen(float(end), roof + z)
        canvas.line(a, b, ROOF_AIR, 3)
        canvas.line((b[0], b[1] - 4), (b[0], b[1] + 4), ROOF_AIR, 2)
    _reserve_around(layout, [axes.to_screen(start, roof + float(profile.heights[0])),
                             axes.to_screen(y_hi, roof + float(profile.heights[-1]))], 4)   # kept clear of labels
    ts = label_size(canvas) - 1
    words = air_layer.layer_words(profile.delta, tr.scene.units)
    y_lo = float(pts[:, 1].min()) - 0.25
    a, b = axes.to_screen(y_hi, roof + profile.delta), axes.to_screen(y_lo, roof + profile.delta)
    top = axes.to_screen(float(ends[-1]), roof + float(profile.heights[-1]))
    if min(a[1], b[1]) >= area.y + 4:
        air_layer.dashed(canvas, a, b, ROOF_AIR)
        w, h = _label_size(words, ts)
        spots = [(a[0] - w - 6, a[1] - h / 2), (b[0] + 6, b[1] - h / 2), (a[0], a[1] - h - 3)]
    else:
        words += ", its top above the picture"
        w, h = _label_size(words, ts)
        spots = [(top[0] - w - 6, top[1] - h / 2), (top[0], top[1] - h - 8)]
    draw_free_label(canvas, words, SOFT_INK, ts, w, h, spots, layout, area)


# ---------------------------------------------------------------- figure

FAR = (body.UARM_F, body.FARM_F, body.THIGH_F, body.SHANK_F, body.FOOT_F)


def struck_out(tr, i: int) -> bool:
    """Whether the body is out of the run at step i because a structure or line struck it."""
    strike = tr.events[Event.STRIKE]["time"]
    return int(tr.field("mode")[i]) == Mode.GONE and math.isfinite(strike) and tr.times[i] >= strike


def screen_ends(tr, i: int, cam: EndCamera) -> np.ndarray:
    """(12, 2, 2) segment ends in pixels: across (y) and up (z); on the roof turned with the car body."""
    ends = tr.ends3(i)
    cam = pose_camera(tr, i, cam)
    return np.array([[cam.to_screen(p[1], p[2]) for p in seg] for seg in ends])


def draw_tethers(canvas, playback, i: int, car_cam: EndCamera, pose: EndCamera, car, layout, area: Box) -> None:
    """The tethers anchored on the car in the section, seen along the track: from the anchor (a running
    line seen end-on, a ring) to the harness, coloured by tension against the limit on the body, the
    tension beside it."""
    from physics.rigging import harness_path
    from preview.world import tension_label, tether_colour
    canvas.tag = "rigging"
    tr, scene = playback.trajectory, playback.scene
    harness = harness_path(tr)[i]
    ts = max(label_size(canvas) - 1, 10)
    for n, tether in enumerate(scene.rigging):
        if scene.cars[tether.car] is not car:
            continue
        anchor = car_cam.to_screen(tether.anchor_y, tether.anchor_z)
        canvas.circle(anchor, 5, CAR_EDGE, 2)
        if not np.isfinite(harness).all():
            continue
        force = float(tr.record["tether_force"][i, n])
        colour = tether_colour(force, scene.safety.arrest_force)
        end = pose.to_screen(float(harness[1]), float(harness[2]))
        canvas.line(anchor, end, colour, 3 if force > 0 else 1)
        if force > 0.0:
            tension_label(canvas, layout, area, anchor, end, display(force, "force", scene.units, ".0f"), colour, ts)


def draw_figure(canvas, tr, i: int, cam: EndCamera, ghost: bool = False, tone: int = 0) -> None:
    """The stick figure seen from behind (or the front), limbs of the left side lighter as in the side
    view; shoulders and hips joined across; `tone`: the performer's (palette.FIGURE_TONES, the second
    tagged "partner"). A body struck out of the run is shown by its ghost only."""
    canvas.tag = "ghost" if ghost else ("partner" if tone else "figure")
    near_ink, far_ink = FIGURE_TONES[tone]
    if not np.isfinite(tr.ends3(i)).all():
        return
    if not ghost and struck_out(tr, i):
        return
    pts = screen_ends(tr, i, cam)
    stature_px = tr.scene.performer.stature * cam.scale
    thin, thick = max(2, int(stature_px * 0.02)), max(2, int(stature_px * 0.035))
    ink = FAINT if ghost else near_ink
    for s in list(FAR) + [s for s in range(body.N_SEGMENTS) if s not in FAR and s != body.HEAD]:
        colour = FAINT if ghost else (far_ink if s in FAR else near_ink)
        canvas.line(pts[s, 0], pts[s, 1], colour, thick if s == body.TRUNK else thin)
    canvas.line(pts[body.UARM_N, 0], pts[body.UARM_F, 0], ink, thin)     # shoulders
    canvas.line(pts[body.THIGH_N, 0], pts[body.THIGH_F, 0], ink, thin)   # hips
    neck, top = pts[body.HEAD, 0], pts[body.HEAD, 1]
    head_c = (neck[0] + 0.6 * (top[0] - neck[0]), neck[1] + 0.6 * (top[1] - neck[1]))
    radius = 0.4 * math.hypot(top[0] - neck[0], top[1] - neck[1])
    canvas.line(neck, head_c, ink, thin)
    canvas.circle(head_c, radius, ink, max(2, int(stature_px * 0.015)))
    if not ghost and tr.field("mode")[i] == Mode.GONE:   # lying along the track it is small end-on: ringed
        com = tr.com_path3[i]
        canvas.circle(pose_camera(tr, i, cam).to_screen(float(com[1]), float(com[2])), max(12.0, 0.5 * cam.scale),
                      near_ink, 1)


def draw_touch_across(canvas, tr, i: int, cam: EndCamera, other=None) -> None:
    """The push or pull between the performers on this body at its touch point, seen along the track: its
    part across and up as an arrow (the side views' scale), and its part along the track, when that is
    most of it, as a ring with a cross (into the picture, toward the front) or a dot (out of it)."""
    found = touch_at(tr, i)
    if found is None:
        return
    (fx, fy, fz), (x, y, z) = found
    draw_touch(canvas, tr, i, cam, lambda a, b, c: (b, c), other)
    if abs(fx) >= 0.5 * math.hypot(fx, fy, fz):
        canvas.tag = "touch"
        px, py = cam.to_screen(y, z)
        canvas.circle((px, py), 7, TOUCH, 2)
        if fx > 0:
            canvas.line((px - 4, py - 4), (px + 4, py + 4), TOUCH, 2)
            canvas.line((px - 4, py + 4), (px + 4, py - 4), TOUCH, 2)
        else:
            canvas.circle((px, py), 2, TOUCH)


def _along(tr, i: int) -> float:
    """Car-frame x of the body at step i (its last known place if it has none now), m."""
    return section_x(tr, i)


def head_point(tr, i: int, cam: EndCamera) -> tuple[float, float] | None:
    """The top of the figure's head in pixels, or None with no body in the picture."""
    if not np.isfinite(tr.ends3(i)).all() or struck_out(tr, i):
        return None
    pts = screen_ends(tr, i, cam)
    n = int(np.argmin(pts[..., 1].ravel()))
    return float(pts.reshape(-1, 2)[n, 0]), float(pts[..., 1].min())


def draw_trail(canvas, tr, i: int, view, cam: EndCamera) -> None:
    """The centre of mass across and up over the last few seconds, or the whole current flight."""
    canvas.tag = "trail"
    mode = tr.field("mode")
    start = max(0, i - max(1, int(view.trail_seconds / tr.scene.step)))
    if mode[i] in (Mode.FLIGHT, Mode.GONE):
        grounded = np.nonzero(np.isin(mode[:i + 1], (Mode.PLANTED, Mode.SLIDING, Mode.DOWN)))[0]
        start = min(start, int(grounded[-1]) if grounded.size else 0)
    points = []
    for k in range(start, i + 1, 4):
        _, y, z = tr.com_path3[k]
        if math.isfinite(y) and math.isfinite(z):
            points.append(pose_camera(tr, k, cam).to_screen(float(y), float(z)))
    canvas.polyline(points, TRAIL, 2)


# --------------------------------------------------------------- vectors

def draw_vectors(canvas, tr, i: int, view, cam: EndCamera) -> None:
    """The loads in the frontal plane, to the side views' scale: weight, air load and pseudo-force at
    the centre of mass, the roof's reaction and the friction it must supply at the contact, and the
    apparent wind above the head."""
    r = tr.record[i]
    com = tr.com_path3[i]
    mode = int(r["mode"])
    if not np.isfinite(com).all() or mode == Mode.GONE:
        return
    level = cam.turned(0.0)
    cam = pose_camera(tr, i, cam)          # the body's axes on the roof, level in the air
    at = (float(com[1]), float(com[2]))
    at_level = cam.level(*at)
    if mode in (Mode.PLANTED, Mode.SLIDING) and "balance" in view.vectors:
        draw_balance(canvas, r, at, cam)
    if "weight" in view.vectors:
        force_arrow(canvas, level, at_level, (0.0, -tr.weight), WEIGHT, "weight")
    if "aero" in view.vectors and math.isfinite(r["aero_y"]):
        force_arrow(canvas, cam, at, (float(r["aero_y"]), _or0(r["aero_z"])), AERO, "aero")
    on_roof = mode in (Mode.PLANTED, Mode.SLIDING, Mode.DOWN)
    if on_roof and "reaction" in view.vectors and math.isfinite(r["pivot_y"]):
        base = (float(r["pivot_y"]), float(r["contact_z"]))
        force_arrow(canvas, cam, base, (0.0, _or0(r["normal"])), REACTION, "normal", push=True, shift=REACTION_OFFSET)
        force_arrow(canvas, cam, base, (_or0(r["need_y"]), 0.0), REACTION, "friction", push=True)
    pseudo = pseudo_force(tr, i, on_roof=math.isfinite(float(r["pivot_x"])))
    if "pseudo" in view.vectors and math.hypot(*pseudo) > 1.0:
        force_arrow(canvas, level, at_level, pseudo, PSEUDO, "pseudo")
    if "wind" in view.vectors and math.isfinite(r["app_y"]):
        canvas.tag = "wind"
        head = (at[0], at[1] + WIND_ABOVE)
        w = (float(r["app_y"]), _or0(r["app_z"]))
        tail = cam.to_screen(head[0] - w[0] / WIND_PER_METRE, head[1] - w[1] / WIND_PER_METRE)
        canvas.arrow(tail, cam.to_screen(*head), WIND, 2)


def car_acceleration(tr, i: int) -> tuple[float, float]:
    """The car body's acceleration across and up in level axes (m/s^2, + left, + up) at step i: what it
    feels in its own axes (records' accel_y, accel_z beyond gravity) turned back by its cant and roll."""
    r = tr.record[i]
    cant, roll = curves.tilt(tr, i)
    c, s = math.cos(cant + roll), math.sin(cant + roll)
    fy, fz = _or0(r["accel_y"]), _or0(r["accel_z"]) + G
    return fy * c + fz * s, -fy * s + fz * c - G


def pseudo_force(tr, i: int, on_roof: bool = True) -> tuple[float, float]:
    """The pseudo-force across and up in level axes (N): the mass times the car body's acceleration,
    reversed. In the air the engine keeps only its part across the track (gravity alone acts up and down)."""
    ay, az = car_acceleration(tr, i)
    m = float(tr.params["mass"])
    return -m * ay, (-m * az if on_roof else 0.0)


def _or0(value) -> float:
    value = float(value)
    return value if math.isfinite(value) else 0.0


def draw_balance(canvas, r, com, cam: EndCamera) -> None:
    """Centre of mass, the support across the roof under the pivot (its half-width each side), a faint
    upright from the contact to read the sideways lean against, and the extrapolated centre of mass
    across: green inside the support, red outside."""
    canvas.tag = "balance"
    pivot, roof, half = float(r["pivot_y"]), float(r["contact_z"]), float(r["half_width"])
    if not (math.isfinite(pivot) and math.isfinite(roof)):
        return
    canvas.line(cam.to_screen(pivot, roof), cam.to_screen(pivot, roof + 1.0), FAINT, 1)
    canvas.circle(cam.to_screen(*com), 5, INK, 0)
    if math.isfinite(half):
        canvas.line(cam.to_screen(pivot - half, roof - 0.03), cam.to_screen(pivot + half, roof - 0.03), HOLDS, 4)
    xcom = float(r["xcom_y"])
    if math.isfinite(xcom):
        px, py = cam.to_screen(pivot + xcom, roof - 0.03)
        colour = HOLDS if not math.isfinite(half) or abs(xcom) <= half else FAILURE
        canvas.polygon([(px, py - 2), (px - 6, py + 10), (px + 6, py + 10)], colour)


def draw_failure(canvas, playback, failure, cam: EndCamera, layout, area: Box, tr=None, compact=False) -> None:
    """The figure's ghost at the first failure and the side view's marker and callout, placed across
    at the contact (or, in the air, the centre of mass) and up at the centre of mass (`tr`: the
    performer who failed, the first by default)."""
    tr = playback.trajectory if tr is None else tr
    k = tr.index_at(failure["time_s"])
    draw_figure(canvas, tr, k, cam, ghost=True)
    com = tr.com_path3[k]
    y = float(tr.field("pivot_y")[k])
    y = y if math.isfinite(y) else float(com[1])
    z = float(com[2])
    if not (math.isfinite(y) and math.isfinite(z)):
        return
    px, py = pose_camera(tr, k, cam).to_screen(y, z)
    px, py = min(max(px, area.x + 20), area.right - 20), min(max(py, area.y + 20), area.bottom - 20)
    draw_failure_callout(canvas, failure, px, py, layout, area, beside=True, compact=compact)


# ---------------------------------------------------------------- labels

def _label(canvas, words: str, colour, candidates, layout, area: Box, tag: str, boxed: bool = True) -> Box:
    """One label placed where it covers nothing (on a panel-coloured box when `boxed`)."""
    canvas.tag = tag
    ts = label_size(canvas)
    words = fit(words, ts, area.w - 16)
    w, h = canvas_measure(words, ts)
    box = layout.place(w + 6, h + 4, candidates, area)
    if boxed:
        canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.text((box.x + 3, box.y + 2), words, colour, ts)
    return box


def draw_side_words(canvas, cam: EndCamera, car, layout, area: Box) -> None:
    """'left of travel' and 'right of travel' on the ground beside the car, so the view reads at a glance."""
    half = car.width / 2 if car is not None else 1.4
    for side, words in ((1, "◀ left of travel"), (-1, "right of travel ▶")):
        px, py = cam.to_screen(side * (half + 0.4), -0.15)
        w = canvas_measure(words, label_size(canvas))[0] + 6
        x = px - w if side > 0 else px
        _label(canvas, words, INK, [(x, py), (x, py - 30)], layout, area, "end-labels")


def draw_car_name(canvas, cam: EndCamera, car, ahead: float, units: str, layout, area: Box) -> None:
    """The car cut by the section, named in its body, or the car seen ahead over a gap with its distance."""
    if car is None:
        return
    if ahead != 0:
        where = "ahead" if ahead > 0 else "behind, the body is ahead of the consist"
        words = f"no roof here: {car.name} {display(abs(ahead), 'length', units, '.1f')} {where}"
        px, py = cam.to_screen(0.0, car.roof_height + 0.3)
        w = canvas_measure(words, label_size(canvas))[0]
        _label(canvas, words, SOFT_INK, [(px - w / 2, py - 24), (px - w / 2, py + 30)], layout, area, "end-labels")
        return
    canvas.tag = "consist"
    ts = label_size(canvas) + 1
    px, py = cam.to_screen(0.0, 0.5 * (car.roof_height + car.body_bottom))
    name = fit(car.name, ts, car.width * cam.scale - 12)
    if name:
        canvas.text((px, py), name, CAR_EDGE, ts, anchor="center")


def draw_overhead_labels(canvas, cam: EndCamera, near, units: str, layout, area: Box) -> None:
    """Each structure or line near the performer: its height and how far ahead it is (or that it is overhead)."""
    for kind, item, d in near:
        spec = ".0f" if abs(d) >= 10 else ".1f"
        when = ("overhead now" if d == 0 else f"{display(d, 'length', units, spec)} ahead" if d > 0 else
                f"passed, {display(-d, 'length', units, spec)} behind")
        if kind == "structure":
            words = f"{item.name}, soffit {display(item.soffit, 'length', units)}: {when}"
            z = item.soffit + DECK
        else:
            words = (f"overhead line, wire {display(item.wire_height, 'length', units)}, exclusion "
                     f"{display(item.exclusion, 'length', units)}: {when}")
            z = item.wire_height + item.exclusion
        px, py = cam.to_screen(0.0, z)
        _label(canvas, words, INK if d == 0 else SOFT_INK, [(px + 0.5 * cam.scale, py - 26), (area.right - 400, py + 4),
                                                           (px + 0.5 * cam.scale, py + 4)], layout, area, "structures")


def fact_lines(tr, i: int, car, units: str) -> list[str]:
    """A few words on the body across the track at step i: lean, margins, or where it is off the roof
    (`car`: the car cut by the section, None over a gap or off the consist)."""
    r = tr.record[i]
    mode = int(r["mode"])
    road = bool(getattr(tr.scene, "road", False))
    num = lambda name: float(r[name])  # noqa: E731
    side = lambda y: "left" if y > 0 else "right"  # noqa: E731
    if mode in (Mode.PLANTED, Mode.SLIDING):
        out = []
        if math.isfinite(num("roll")):
            need = num("roll_required")
            # The lean at which the side load is held with no push from the feet (the feet carry the rest).
            needs = f"; held with no push from the feet at {math.degrees(need):+.1f}°" if math.isfinite(need) else ""
            roll = math.degrees(num("roll"))
            roof = math.degrees(sum(curves.tilt(tr, i)))
            if abs(roof) >= math.degrees(curves.LEVEL):   # the roof's upright is not plumb
                out.append(f"sideways lean {roll:+.1f}° ({roll + roof:+.1f}° from plumb; + toward the left){needs}")
            else:
                out.append(f"sideways lean {roll:+.1f}° (+ toward the left){needs}")
        for name, words in (("frontal_margin", "balance margin across"), ("edge_margin", "support to the side edge")):
            if math.isfinite(num(name)):
                out.append(f"{words} {display(floor_to(num(name)), 'length', units, '+.2f')}")   # rounded down
        # The loads across the track in numbers: the arrows are on the side views' one scale and short
        # at ordinary loads.
        air, need = num("aero_y"), num("need_y")
        if math.isfinite(air) and math.isfinite(need) and max(abs(air), abs(need)) >= 1.0:
            out.append(f"air across {display(abs(air), 'force', units, '.0f')} toward the {side(air)}; the roof "
                       f"holds {display(abs(need), 'force', units, '.0f')} across")
        if math.isfinite(num("slide_speed_y")) and abs(num("slide_speed_y")) > 0.01:
            out.append(f"sliding across the roof at {display(abs(num('slide_speed_y')), 'wind', units)}")
        return out
    if mode == Mode.DOWN:
        return ["down on the roof"]
    y, z = float(tr.com_path3[i, 1]), float(tr.com_path3[i, 2])
    if not (math.isfinite(y) and math.isfinite(z)):
        return []
    if mode == Mode.FLIGHT:
        if car is None:
            where = "no roof beneath"
        elif abs(y) > car.width / 2:
            where = f"{display(abs(y) - car.width / 2, 'length', units)} beyond the {side(y)} side edge"
        else:
            where = f"over {car.name}'s roof"
        return [f"in the air: {where}, {display(z, 'length', units)} {'above the road' if road else 'above rail'}"]
    if mode == Mode.GONE:
        centre = "the lane's centre" if road else "the track's centreline"
        return [f"on the ground, {display(abs(y), 'length', units)} {side(y)} of {centre}"]
    return []


def track_lines(tr, i: int) -> list[str]:
    """What the track does under the performer's car at step i, for a scene with a curve or a ride: where
    it is, the cant and the body's roll (when the roof is tilted) and the lateral acceleration felt on the
    roof; nothing for a straight, still track."""
    if not curves.shows_track(tr.scene):
        return []
    lines = [curves.place_words(tr, i)]
    cant, roll = curves.tilt(tr, i)
    if abs(cant) >= curves.LEVEL or abs(roll) >= curves.LEVEL:
        lines.append(curves.tilt_words(tr, i))
    lines.append(f"lateral {curves.lateral_words(float(tr.record['accel_y'][i]), tr.scene.units)}, felt on the roof")
    return lines


def draw_track_words(canvas, tr, i: int, cam: EndCamera, car, layout, area: Box) -> None:
    """The track lines in one box beside the track, above the ground on the left (else on the right)."""
    lines = track_lines(tr, i)
    if not lines:
        return
    canvas.tag = "end-track"
    ts = label_size(canvas)
    lines = [fit(line, ts, area.w / 2 - 12) for line in lines]
    w = max(canvas_measure(line, ts)[0] for line in lines) + 12
    lh = ts + 5
    h = lh * len(lines) + 8
    _, rail_y = cam.to_screen(0.0, 0.0)
    half = car.width / 2 if car is not None else 1.4
    left_x = cam.to_screen(half + 0.6, 0.0)[0] - w
    right_x = cam.to_screen(-half - 0.6, 0.0)[0]
    spots = [(area.x + 10, rail_y - h - 12), (left_x, rail_y - h - 12), (right_x, rail_y - h - 12),
             (area.x + 10, area.bottom - h - 6)]
    box = layout.place(w, h, spots, area)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.rect(box.x, box.y, 3, box.h, CURVE)
    for k, line in enumerate(lines):
        canvas.text((box.x + 8, box.y + 4 + lh * k), line, INK, ts)


def draw_facts(canvas, tr, i: int, cam: EndCamera, car, layout, area: Box) -> None:
    """The fact lines in one box to the right of the car, at roof height."""
    lines = fact_lines(tr, i, car, tr.scene.units)
    if not lines or struck_out(tr, i):
        return
    canvas.tag = "end-facts"
    ts = label_size(canvas)
    lines = [fit(line, ts, area.w / 2) for line in lines]
    w = max(canvas_measure(line, ts)[0] for line in lines) + 12
    lh = ts + 5
    h = lh * len(lines) + 8
    half = car.width / 2 if car is not None else 1.4
    px, py = cam.to_screen(-half - 0.6, (car.roof_height if car is not None else tr.scene.cars[0].roof_height) + 0.8)
    spots = [(px, py - h), (px, py + 10), (area.right - w - 10, area.bottom - h - 10)]
    com = tr.com_path3[i]
    if int(tr.field("mode")[i]) in (Mode.FLIGHT, Mode.GONE) and np.isfinite(com).all():
        bx, by = pose_camera(tr, i, cam).to_screen(float(com[1]), float(com[2]))   # off the roof: beside the body
        spots = [(bx + 24, by - h - 24), (bx - w - 24, by - h - 24), (bx - w / 2, by - h - 40)] + spots
    box = layout.place(w, h, spots, area)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    for k, line in enumerate(lines):
        canvas.text((box.x + 6, box.y + 4 + lh * k), line, INK, ts)


# ---------------------------------------------------------------- legend

def legend_rows(view, units: str, px_per_m: float | None, scene=None) -> list[tuple]:
    """The end view's legend: the vector keys it draws, its paths and zones, the scale bars, the timeline."""
    from preview.panels import VECTOR_LEGEND, bar_row, pair_legend_rows, rigging_legend_rows, timeline_legend_rows
    rows = [("vector", (key, colour if name in view.vectors else FAINT, words))
            for key, name, colour, words in VECTOR_LEGEND if name != "segments"]
    if pair_legend_rows(scene):
        rows.append(("force", (TOUCH, "push or pull between performers; along the track: ⊗ to the front, "
                                      "⊙ to the rear")))
    rows.append(("trail", (TRAIL, f"centre of mass, last {view.trail_seconds:g} s")))
    rows.append(bar_row(FORCE_PER_METRE, "force", INK, "(every force)", units, px_per_m))
    rows.append(bar_row(WIND_PER_METRE, "wind", WIND, "(apparent wind)", units, px_per_m))
    rows.append(bar_row(1.0, "length", SOFT_INK, "(lengths)", units, px_per_m))
    rows.append(("zone", (LINE_ZONE, "overhead line exclusion zone")))
    road = scene is not None and bool(getattr(scene, "road", False))
    rows.append(("zone", (STRUCTURE, "structure over the road" if road else "structure deck over the track")))
    rows += air_layer.legend_row(view, scene, end=True)
    return rows + rigging_legend_rows(scene) + timeline_legend_rows(scene)
