"""The plan view: the consist's roofs from above in the car frame, x along the
track to the right (travel →) and y across it with the left of travel at the
top.

It shows every roof as its outline with its side edges and the gaps between
cars, structures and overhead lines as they pass over, the path of the body
(the contact point on the roof, the centre of mass in the air) up to now and,
faint, the rest of it, the figure as seen from above, a jump's take-off,
landing zone and where it came down, where the body went over a side edge or
came down on the ground, and the first failure with the side view's marker
and callout. The framing is fixed for the whole beat (the whole path fits),
so the plan reads as a map. Every position comes from the recorded trajectory.

The roof map is in the car frame, so a curve does not bend it; when the track
under the beat curves, an inset shows the track's centreline from above over
the whole beat (travel → where the beat starts) with the consist on it now,
and says which curve the performer's mark is on or comes to next: its side,
radius, cant, where it runs along the track and how far into it the mark is.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from physics import body
from physics.records import Event, Mode
from physics.units import display
from preview import curves
from preview.end_view import FAR, struck_out
from preview.layout import Box, Layout, fit, wrap
from preview.road import way
from preview.palette import (CAR_BODY, CAR_EDGE, CURVE, FAILURE, FAINT, FIGURE_TONES, GROUND_TONE, HOLDS, INK,
                             LANDING_ZONE, LINE_ZONE, PANEL, SOFT_INK, STRUCTURE, TRAIL)
from preview.world import (canvas_measure, cast_of, draw_failure_callout, draw_landing_mark, draw_takeoff_mark,
                           draw_touch, followed, label_size, name_label, partner_of)

DEFAULT_ZOOM = 1.5     # ViewSettings' default zoom: the fitted picture
GAUGE = 1.435          # m between the rails, drawing value
BED = 1.7              # m: half-width of the track bed drawn under the cars, drawing value
MIN_SPAN = 16.0        # m of track at least in the picture
ROOF, AIR = 1, 2       # what a step of the path is


@dataclass(frozen=True)
class PlanCamera:
    """Along (x, car frame) and across (y, + left of travel) the track, metres <-> pixels, from above."""

    frame: str
    scale: float       # pixels per metre
    width: int
    height: int
    top: int
    x_center: float    # car-frame x at origin_x
    origin_x: float
    origin_y: float    # screen y of the track's centreline (y = 0)
    left: float = 0.0  # screen x where the fitted drawing begins (beside the readout)

    def to_screen(self, x: float, y: float) -> tuple[float, float]:
        return (self.origin_x + (x - self.x_center) * self.scale, self.origin_y - y * self.scale)


# ------------------------------------------------------------------ path

_PATHS: dict = {}   # path_points by run (a frame asks for it many times)


def path_points(tr) -> np.ndarray:
    """(T, 2) the body seen from above, car frame (m): the contact on the roof, the centre of mass in
    the air; NaN on the ground or out of the run (read-only, remembered for the last few runs)."""
    found = _PATHS.get(id(tr.record))
    if found is not None and found[0] is tr.record:
        return found[1]
    if len(_PATHS) > 8:
        _PATHS.clear()
    pts = _path_points(tr)
    pts.flags.writeable = False
    _PATHS[id(tr.record)] = (tr.record, pts)
    return pts


def _path_points(tr) -> np.ndarray:
    rec = tr.record
    on = np.isfinite(rec["pivot_x"]) & np.isfinite(rec["pivot_y"])
    air = (rec["mode"] == Mode.FLIGHT) & np.isfinite(rec["flight_x"]) & np.isfinite(rec["flight_y"])
    x = np.where(on, rec["pivot_x"], np.where(air, rec["flight_x"], np.nan))
    y = np.where(on, rec["pivot_y"], np.where(air, rec["flight_y"], np.nan))
    return np.stack([x, y], axis=-1)


def path_kinds(tr) -> np.ndarray:
    """(T,) ROOF, AIR or 0 for each step of the path."""
    pts = path_points(tr)
    finite = np.isfinite(pts).all(axis=-1)
    on = np.isfinite(tr.record["pivot_x"])
    return np.where(finite & on, ROOF, np.where(finite, AIR, 0))


def runs(kinds: np.ndarray, lo: int, hi: int) -> list[tuple[int, int, int]]:
    """(kind, start, stop) of each stretch of one kind (not 0) between steps lo and hi."""
    part = kinds[lo:hi]
    if part.size == 0:
        return []
    cuts = np.concatenate([[0], np.flatnonzero(np.diff(part)) + 1, [part.size]])
    return [(int(part[a]), lo + int(a), lo + int(b)) for a, b in zip(cuts[:-1], cuts[1:]) if part[a]]


def ground_index(tr) -> int | None:
    """The first step the body lies on the ground off the consist (not struck out of the run), or None."""
    gone = np.flatnonzero(tr.field("mode") == Mode.GONE)
    if not gone.size or struck_out(tr, int(gone[0])):
        return None
    return int(gone[0]) if np.isfinite(tr.com_path3[gone[0]]).all() else None


# ---------------------------------------------------------------- camera

def camera(tr, t: float, size, region: Box, zoom: float = DEFAULT_ZOOM, follow=None) -> PlanCamera:
    """The plan's camera: the whole path (and where the body came down) of every performer with a
    margin, at least MIN_SPAN of track, and room across for the widest roof and the farthest a body
    goes; zoomed in, it keeps the body followed (`follow`, the first by default) in the picture."""
    scene = tr.scene
    runs = (tr,) + tuple(tr.partners)
    pts = np.vstack([path_points(one) for one in runs])
    pts = pts[np.isfinite(pts).all(axis=-1)]
    for one in runs:
        g = ground_index(one)
        if g is not None:
            pts = np.vstack([pts, one.com_path3[g, :2]])
    if not pts.size:
        pts = np.array([[scene.start_x, scene.start_y]])
    x_lo, x_hi = float(pts[:, 0].min()) - 3.0, float(pts[:, 0].max()) + 3.0
    mid = 0.5 * (x_lo + x_hi)
    span = max(MIN_SPAN, x_hi - x_lo)
    y_half = max(max(c.width for c in scene.cars) / 2 + 1.3, float(np.abs(pts[:, 1]).max()) + 0.9)
    s0 = min(region.w / span, region.h / (2 * y_half))
    scale = s0 * zoom / DEFAULT_ZOOM
    room = max(0.0, region.w / 2 / scale - 2.0)
    follow = tr if follow is None else follow
    now = _current_point(follow, follow.index_at(t), pts)
    centre = min(max(mid, now[0] - room), now[0] + room) if scale > s0 else mid
    return PlanCamera("plan", scale, size[0], size[1], 0, centre, region.x + region.w / 2,
                      region.y + region.h / 2, region.x)


def _current_point(tr, i: int, fallback: np.ndarray) -> tuple[float, float]:
    p = path_points(tr)[i]
    if np.isfinite(p).all():
        return float(p[0]), float(p[1])
    com = tr.com_path3[i]
    if np.isfinite(com[:2]).all():
        return float(com[0]), float(com[1])
    return float(fallback[-1, 0]), float(fallback[-1, 1])


# ------------------------------------------------------------------ draw

def draw(canvas, playback, t: float, view, cam: PlanCamera, layout, area: Box) -> None:
    """The plan view at time t (with two performers, each one's path, marks and figure, named)."""
    cast = cast_of(playback)
    tr, scene = cast[followed(playback, view)].trajectory, playback.scene
    i = tr.index_at(t)
    if scene.road:
        from preview.road import draw_road_plan
        draw_road_plan(canvas, cam, float(tr.field("distance")[i]))
    else:
        draw_bed(canvas, cam)
    draw_cars(canvas, scene, cam)
    draw_overhead(canvas, scene, cam, float(tr.field("distance")[i]))   # over the roofs, see-through
    for one in cast:
        keep_clear(layout, one.trajectory, i, scene, cam, area)
        draw_landing_zones(canvas, one.trajectory.scene, t, cam)
    for one in cast:
        draw_path(canvas, one.trajectory, i, cam, one.tone)
    for one in sorted(cast, key=lambda c: c.trajectory is not tr):   # the followed one's labels placed first
        draw_jumps(canvas, playback, t, cam, layout, area, one.trajectory)
        draw_off_side(canvas, one.trajectory, t, one.failure, cam, layout, area)
        draw_ground(canvas, one.trajectory, i, cam, layout, area)
        if one.failure is not None and t >= one.failure["time_s"] - 1e-9:
            draw_failure(canvas, one.trajectory, one.failure, cam, layout, area, compact=one.trajectory is not tr)
    for one in sorted(cast, key=lambda c: c.trajectory is tr):   # the followed one on top
        draw_figure(canvas, one.trajectory, i, cam, one.tone)
    if len(cast) > 1:
        for one in cast:
            draw_touch(canvas, one.trajectory, i, cam, lambda x, y, z: (x, y), partner_of(cast, one))
        for one in cast:
            pts = one.trajectory.ends3(i)
            if np.isfinite(pts).all() and not struck_out(one.trajectory, i):
                # Off the roof (kept clear of labels), above or below it, with a leader to the ring.
                x, y = _current_point(one.trajectory, i, pts[:, 0, :2])
                here = cam.to_screen(x, y)
                k = scene.car_at(x)
                roof = roof_box(scene.cars[k], cam) if k is not None else Box(here[0], here[1], 0, 0)
                h = canvas_measure(one.name, label_size(canvas), True)[1] + 4
                r = max(10.0, 0.6 * cam.scale)
                above, below = (roof.y - h - 6, roof.bottom + 6) if y >= 0 else (roof.bottom + 6, roof.y - h - 6)
                spots = [(here[0] + dx, yy) for yy in (above, below) for dx in (0.0, 40.0, -40.0)]
                name_label(canvas, layout, area, one, here, spots, leader=(here[0], here[1], r))
    draw_car_words(canvas, scene, cam, layout, area)
    draw_overhead_labels(canvas, scene, cam, float(tr.field("distance")[i]), layout, area)
    draw_track_inset(canvas, tr, i, cam, layout, area)      # last: it goes where nothing else is


def draw_bed(canvas, cam: PlanCamera) -> None:
    """The track bed and the rails under the consist, across the whole picture."""
    canvas.tag = "scenery"
    _, top = cam.to_screen(0.0, BED)
    _, bottom = cam.to_screen(0.0, -BED)
    canvas.rect(0, top, cam.width, bottom - top, GROUND_TONE)
    for side in (-1, 1):
        _, y = cam.to_screen(0.0, side * GAUGE / 2)
        canvas.line((0, y), (cam.width, y), FAINT, 2)


def _in_view(cam: PlanCamera, x0: float, x1: float) -> bool:
    a, b = cam.to_screen(x0, 0.0)[0], cam.to_screen(x1, 0.0)[0]
    return b >= 0 and a <= cam.width


def draw_overhead(canvas, scene, cam: PlanCamera, distance: float) -> None:
    """Structures passing over (a band across the picture) and overhead lines (the wire over the
    track's centre with its exclusion distance either side), where they are over the consist now."""
    canvas.tag = "structures"
    for s in scene.structures:
        x0, x1 = s.x_start - distance, s.x_start + s.span - distance
        if _in_view(cam, x0, x1):
            a, b = cam.to_screen(x0, 0.0)[0], cam.to_screen(x1, 0.0)[0]
            canvas.rect(a, cam.top, b - a, cam.height, STRUCTURE, alpha=90)
    for line in scene.lines:
        x0, x1 = line.x_start - distance, line.x_end - distance
        if _in_view(cam, x0, x1):
            (a, top), (b, bottom) = cam.to_screen(x0, line.exclusion), cam.to_screen(x1, -line.exclusion)
            canvas.rect(a, top, b - a, bottom - top, LINE_ZONE, alpha=110)
            canvas.line(cam.to_screen(x0, 0.0), cam.to_screen(x1, 0.0), FAILURE, 2)


def roof_box(car, cam: PlanCamera) -> Box:
    (x0, y0), (x1, y1) = cam.to_screen(car.rear_x, car.width / 2), cam.to_screen(car.front_x, -car.width / 2)
    return Box(x0, y0, x1 - x0, y1 - y0)


def draw_cars(canvas, scene, cam: PlanCamera) -> None:
    """Each roof: its outline, its side edges in ink and, on a crowned roof, its ridge faint."""
    from preview.road import draw_vehicle_plan
    for n, car in enumerate(scene.cars):
        if car.road:   # what lies off its roof: a tractor's chassis across the gap, a rigid truck's cab
            draw_vehicle_plan(canvas, cam, car, scene.cars[n + 1] if n + 1 < len(scene.cars) else None)
        canvas.tag = "consist"
        b = roof_box(car, cam)
        if b.right < 0 or b.x > cam.width:
            continue
        canvas.rect(b.x, b.y, b.w, b.h, CAR_BODY)
        canvas.rect(b.x, b.y, b.w, b.h, CAR_EDGE, width=2)
        canvas.line((b.x, b.y), (b.right, b.y), INK, 3)
        canvas.line((b.x, b.bottom), (b.right, b.bottom), INK, 3)
        if car.crown > 0:
            canvas.line((b.x + 4, b.y + b.h / 2), (b.right - 4, b.y + b.h / 2), FAINT, 1)


def keep_clear(layout, tr, i: int, scene, cam: PlanCamera, area: Box) -> None:
    """The roofs in the picture and the figure are kept free of labels."""
    for car in scene.cars:
        b = roof_box(car, cam)
        x0, x1 = max(b.x, area.x), min(b.right, area.right)
        if x1 > x0:
            layout.reserve(Box(x0, b.y, x1 - x0, b.h))
    p = _current_point(tr, i, np.array([[scene.start_x, scene.start_y]]))
    px, py = cam.to_screen(*p)
    r = max(14.0, 0.8 * cam.scale)
    layout.reserve(Box(px - r, py - r, 2 * r, 2 * r))


def draw_landing_zones(canvas, scene, t: float, cam: PlanCamera) -> None:
    """A jump's landing roof tinted, its ends marked, once the jump is under way (as the side view)."""
    canvas.tag = "jump"
    for action in scene.actions:
        if action.kind != "jump" or action.landing_car is None or action.start > t:
            continue
        b = roof_box(scene.cars[action.landing_car], cam)
        canvas.rect(b.x, b.y, b.w, b.h, LANDING_ZONE, alpha=170)
        for x in (b.x, b.right):
            canvas.line((x, b.y - 6), (x, b.bottom + 6), HOLDS, 2)


def draw_path(canvas, tr, i: int, cam: PlanCamera, tone: int = 0) -> None:
    """The path still to come faint, then the path so far over it: a line on the roof, dots in the air
    (`tone` 1: the second of two performers, its path so far in its own lighter tone)."""
    canvas.tag = "path"
    pts, kinds = path_points(tr), path_kinds(tr)
    dot_every = max(1, int(0.05 / tr.scene.step))
    done = FIGURE_TONES[tone][1] if tone else TRAIL
    for lo, hi, colour, width in ((i, kinds.size, SOFT_INK, 1), (0, i + 1, done, 3)):
        for kind, a, b in runs(kinds, lo, hi):
            seg = pts[a:b]
            if kind == ROOF:
                step = max(1, seg.shape[0] // 800)
                canvas.polyline(_screen_points(cam, np.vstack([seg[::step], seg[-1:]])), colour, width)
            else:
                for x, y in seg[::dot_every]:
                    canvas.circle(cam.to_screen(x, y), 2 if colour == SOFT_INK else 3, colour)


def _screen_points(cam: PlanCamera, xy: np.ndarray) -> list[tuple[float, float]]:
    """PlanCamera.to_screen of many points (n, 2) at once, the same arithmetic."""
    sx = cam.origin_x + (xy[:, 0] - cam.x_center) * cam.scale
    sy = cam.origin_y - xy[:, 1] * cam.scale
    return list(zip(sx.tolist(), sy.tolist()))


def _y_near(tr, time: float, forward: bool) -> float:
    """The path's y at a time, or at the nearest step with one (searching forward or back), m."""
    pts = path_points(tr)[:, 1]
    k = tr.index_at(time)
    order = range(k, pts.size) if forward else range(k, -1, -1)
    for j in order:
        if math.isfinite(pts[j]):
            return float(pts[j])
    return 0.0


def draw_jumps(canvas, playback, t: float, cam: PlanCamera, layout, area: Box, tr=None) -> None:
    """Each jump under way or done: the side view's take-off mark and where it came down (`tr`: the
    performer whose jumps, the first by default)."""
    tr = playback.trajectory if tr is None else tr
    scene = tr.scene
    canvas.tag = "jump"
    for a, action in enumerate(scene.actions):
        if action.kind != "jump" or action.takeoff_x is None or action.start > t:
            continue
        out = tr.outcomes[a]
        took = float(out["takeoff_time"])
        ty = _y_near(tr, took if math.isfinite(took) else action.start, forward=False)
        draw_takeoff_mark(canvas, *cam.to_screen(action.takeoff_x, ty), layout, area)
        down = float(out["touchdown_time"])
        if math.isfinite(down) and t >= down and action.landing_car is not None:
            lx, ly = cam.to_screen(float(out["touchdown_x"]), _y_near(tr, down, forward=True))
            draw_landing_mark(canvas, scene, scene.cars[action.landing_car], float(out["landing_margin_min"]),
                              lx, ly, layout, area)


def off_side_point(tr) -> tuple[float, float] | None:
    """Where the body went over a side edge (car frame x, the edge's y), or None."""
    row = tr.events[Event.OFF_SIDE]
    if not math.isfinite(row["time"]) or int(row["car"]) < 0:
        return None
    side = int(row["side"]) or (1 if _y_near(tr, float(row["time"]), forward=False) > 0 else -1)
    return float(row["x_car"]), side * tr.scene.cars[int(row["car"])].width / 2


def draw_off_side(canvas, tr, t: float, failure, cam: PlanCamera, layout, area: Box) -> None:
    """A ring where the body went over the side edge, unless that is the first failure (marked in full)."""
    point = off_side_point(tr)
    time = float(tr.events[Event.OFF_SIDE]["time"])
    if point is None or t < time or (failure and failure["kind"] == "off the side"):
        return
    canvas.tag = "failure"
    px, py = cam.to_screen(*point)
    canvas.circle((px, py), 8, FAILURE, 2)
    _label(canvas, f"off the side {time:.2f} s", FAILURE, [(px + 12, py + 6), (px + 12, py - 26)], layout, area,
           "plan-labels")


def draw_ground(canvas, tr, i: int, cam: PlanCamera, layout, area: Box) -> None:
    """Where the body came down on the ground (a cross), and once there, where it lies now: left
    behind by a moving consist, it may be out of the picture, and a tag says how far back."""
    g = ground_index(tr)
    if g is None or i < g:
        return
    canvas.tag = "ground"
    x, y = (float(v) for v in tr.com_path3[g, :2])
    px, py = cam.to_screen(x, y)
    for d in (-1, 1):
        canvas.line((px - 7, py - 7 * d), (px + 7, py + 7 * d), INK, 2)
    _label(canvas, f"came down on the ground {tr.times[g]:.2f} s", INK, [(px + 12, py + 4), (px + 12, py - 24),
                                                                         (px - 200, py + 8)], layout, area,
           "plan-labels")
    now = tr.com_path3[i]
    nx = cam.to_screen(float(now[0]), float(now[1]))[0]
    if nx < area.x:
        back = (area.x - nx) / cam.scale
        below = cam.to_screen(0.0, -BED)[1] + 6
        _label(canvas, f"◀ body on the ground {display(back, 'length', tr.scene.units, '.0f')} back", INK,
               [(area.x + 4, below), (area.x + 4, below + 24), (area.x + 4, area.bottom - 30)], layout, area,
               "plan-labels")


def draw_failure(canvas, tr, failure, cam: PlanCamera, layout, area: Box, compact: bool = False) -> None:
    """The side view's failure marker and callout, at the failure's place on the plan: over the side
    edge for a fall off the side, else where the body was across the roof."""
    k = tr.index_at(failure["time_s"])
    point = off_side_point(tr) if failure["kind"] == "off the side" else None
    if point is None:
        y = path_points(tr)[k, 1]
        y = y if math.isfinite(y) else tr.com_path3[k, 1]
        point = (failure["x_car_m"], float(y) if math.isfinite(y) else 0.0)
    px, py = cam.to_screen(*point)
    px, py = min(max(px, area.x + 20), area.right - 20), min(max(py, area.y + 20), area.bottom - 20)
    draw_failure_callout(canvas, failure, px, py, layout, area, beside=True, compact=compact)


def draw_figure(canvas, tr, i: int, cam: PlanCamera, tone: int = 0) -> None:
    """The figure from above (limbs of the left side lighter, as in the side view), the head as a ring,
    and a thin ring round where it is; `tone`: the performer's (palette.FIGURE_TONES, the second
    tagged "partner")."""
    canvas.tag = "partner" if tone else "figure"
    near_ink, far_ink = FIGURE_TONES[tone]
    ends = tr.ends3(i)
    if not np.isfinite(ends).all() or struck_out(tr, i):
        return
    pts = np.array([[cam.to_screen(p[0], p[1]) for p in seg] for seg in ends])
    width = max(2, int(0.03 * cam.scale))
    for s in list(FAR) + [s for s in range(body.N_SEGMENTS) if s not in FAR and s != body.HEAD]:
        canvas.line(pts[s, 0], pts[s, 1], far_ink if s in FAR else near_ink, width)
    canvas.line(pts[body.UARM_N, 0], pts[body.UARM_F, 0], near_ink, width)
    canvas.line(pts[body.THIGH_N, 0], pts[body.THIGH_F, 0], near_ink, width)
    head = pts[body.HEAD].mean(axis=0)
    canvas.circle(head, max(3.0, 0.1 * cam.scale), near_ink, 2)
    here = _current_point(tr, i, ends[:, 0, :2])
    canvas.circle(cam.to_screen(*here), max(10.0, 0.6 * cam.scale), near_ink, 1)


# ---------------------------------------------------------------- inset

INSET_MAP = (190, 96)  # px: the inset's map, width and height (smaller on a small picture)
INSET_WORDS = 320      # px: the width of its words beside the map (more with a text boost)


def beat_span(tr) -> tuple[float, float]:
    """The stretch of track the consist covers in the beat (m along the track): from its rear at the
    start to its front at the end."""
    scene = tr.scene
    distance = tr.field("distance")
    rear = min(c.rear_x for c in scene.cars) + float(np.nanmin(distance))
    front = max(c.front_x for c in scene.cars) + float(np.nanmax(distance))
    return rear, front


def _path_box(tr, cam: PlanCamera) -> Box:
    """The box round the whole path from above (and where the body came to the ground), on the screen."""
    pts = path_points(tr)
    pts = pts[np.isfinite(pts).all(axis=-1)]
    g = ground_index(tr)
    if g is not None:
        pts = np.vstack([pts, tr.com_path3[g, :2]]) if pts.size else tr.com_path3[g:g + 1, :2]
    if not pts.size:
        return Box(0, 0, 0, 0)
    xy = np.array([cam.to_screen(float(x), float(y)) for x, y in pts])
    (x0, y0), (x1, y1) = xy.min(axis=0) - 12, xy.max(axis=0) + 12
    return Box(x0, y0, x1 - x0, y1 - y0)


def draw_track_inset(canvas, tr, i: int, cam: PlanCamera, layout, area: Box) -> None:
    """When the track under the beat curves: its centreline from above over the beat in a small panel,
    curves in their colour, the consist on it now and the performer's mark, with the curve's words."""
    scene = tr.scene
    if not curves.has_curve(scene):
        return
    canvas.tag = "track-inset"
    ts = label_size(canvas) - 1
    lh = ts + 4
    map_w, map_h = INSET_MAP if area.h >= 480 else (150, 72)
    words_w = INSET_WORDS + 20 * getattr(canvas, "text_boost", 0)
    words = [line for part in curves.curve_words(tr, i) for line in wrap(part, ts, words_w)]
    title = fit(f"the {way(scene)} over the beat, from above", ts, words_w)
    w = 12 + map_w + 14 + words_w + 10
    h = 8 + max(map_h, lh * (len(words) + 1)) + 8
    probe = Layout(list(layout.taken) + [_path_box(tr, cam)])   # clear of the body's whole path too
    below, above = cam.to_screen(0.0, -BED)[1], cam.to_screen(0.0, BED)[1]
    spots = [(area.right - w - 10, area.bottom - h - 10), (area.x + 10, area.bottom - h - 10),
             (area.right - w - 10, below + 10), (area.right - w - 10, above - h - 10)]
    box = probe.place(w, h, spots, area)
    layout.reserve(box)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.rect(box.x, box.y, box.w, box.h, FAINT, width=1)
    canvas.rect(box.x, box.y, 3, box.h, CURVE)
    top = box.y + 8
    draw_inset_map(canvas, tr, i, Box(box.x + 12, top, map_w, map_h))
    canvas.text((box.x + 12 + map_w + 14, top), title, SOFT_INK, ts)
    for k, line in enumerate(words):
        canvas.text((box.x + 12 + map_w + 14, top + lh * (k + 1)), line, INK, ts)


def inset_geometry(tr, region: Box):
    """The centreline over the beat fitted to `region`: (s, screen points, a function from s to the
    screen, pixels per metre)."""
    s0, s1 = beat_span(tr)
    pad = 0.06 * (s1 - s0) + 5.0
    line = curves.centreline(tr.scene, s0 - pad, s1 + pad, step=max(0.5, (s1 - s0) / 400))
    s, x, y = line[:, 0], line[:, 1], line[:, 2]
    span = max(float(np.ptp(x)), float(np.ptp(y)) * region.w / region.h, 1.0)
    scale = min(region.w / max(float(np.ptp(x)), 1e-6), region.h / max(float(np.ptp(y)), 1e-6), region.w / span)
    cx, cy = 0.5 * (x.min() + x.max()), 0.5 * (y.min() + y.max())
    sx = region.x + region.w / 2 + (x - cx) * scale
    sy = region.y + region.h / 2 - (y - cy) * scale      # left of travel up, as in the plan

    def at(v: float) -> tuple[float, float]:
        return float(np.interp(v, s, sx)), float(np.interp(v, s, sy))
    return s, np.stack([sx, sy], axis=-1), at, scale


def draw_inset_map(canvas, tr, i: int, region: Box) -> None:
    """The centreline (curves thicker, in their colour), the consist now and the performer's mark."""
    s, pts, at, scale = inset_geometry(tr, region)
    on_curve = np.zeros(s.size, bool)
    for c in curves.curves(tr.scene):
        on_curve |= (s >= c.start) & (s <= c.end)
    cuts = np.concatenate([[0], np.flatnonzero(np.diff(on_curve.astype(int))) + 1, [s.size]])
    for a, b in zip(cuts[:-1], cuts[1:]):
        seg = [tuple(p) for p in pts[max(0, a - 1):b]]
        canvas.polyline(seg, CURVE if on_curve[a] else SOFT_INK, 3 if on_curve[a] else 2)
    for c in curves.curves(tr.scene):      # where each curve starts and ends, a short cross-tick
        for edge in (c.start, c.end):
            if s[0] <= edge <= s[-1]:
                p0, p1 = at(edge - 1.0), at(edge + 1.0)
                dx, dy = p1[0] - p0[0], p1[1] - p0[1]
                norm = math.hypot(dx, dy) or 1.0
                mx, my = at(edge)
                canvas.line((mx - 6 * dy / norm, my + 6 * dx / norm), (mx + 6 * dy / norm, my - 6 * dx / norm),
                            CURVE, 2)
    scene = tr.scene
    distance = float(tr.field("distance")[i])
    rear = min(c.rear_x for c in scene.cars) + distance
    front = max(c.front_x for c in scene.cars) + distance
    consist = [at(v) for v in np.linspace(rear, front, 12)]
    canvas.polyline(consist, CAR_EDGE, 7)
    mark = at(curves.mark_position(tr, i))
    canvas.circle(mark, 5, PANEL)
    canvas.circle(mark, 5, INK, 2)
    draw_inset_bar(canvas, scene.units, scale, region)


def draw_inset_bar(canvas, units: str, px_per_m: float, region: Box) -> None:
    """A round length at the inset map's bottom right, at most a third of its width."""
    from preview.panels import scale_bar
    value, unit, px = scale_bar(1.0, "length", units, px_per_m, region.w / 3)
    x1, y = region.right, region.bottom
    canvas.line((x1 - px, y), (x1, y), SOFT_INK, 2)
    for x in (x1 - px, x1):
        canvas.line((x, y - 4), (x, y + 1), SOFT_INK, 2)
    words = f"{value:g} {unit}"
    ts = label_size(canvas) - 2
    canvas.text((x1 - px / 2 - canvas_measure(words, ts)[0] / 2, y - ts - 7), words, SOFT_INK, ts)


# ---------------------------------------------------------------- labels

def _label(canvas, words: str, colour, candidates, layout, area: Box, tag: str) -> Box:
    """One label on a panel-coloured box, placed where it covers nothing."""
    canvas.tag = tag
    ts = label_size(canvas)
    words = fit(words, ts, area.w - 16)
    w, h = canvas_measure(words, ts)
    box = layout.place(w + 6, h + 4, candidates, area)
    canvas.rect(box.x, box.y, box.w, box.h, PANEL)
    canvas.text((box.x + 3, box.y + 2), words, colour, ts)
    return box


def draw_car_words(canvas, scene, cam: PlanCamera, layout, area: Box) -> None:
    """Car names on their roofs, which side edge is which, and each gap's length."""
    canvas.tag = "consist"
    ts = label_size(canvas) + 1
    seen = [car for car in scene.cars if roof_box(car, cam).right > area.x and roof_box(car, cam).x < area.right]
    for car in seen:
        b = roof_box(car, cam)
        x0, x1 = max(b.x, area.x + 4), min(b.right, area.right - 4)
        name = fit(car.name, ts, max(0.0, x1 - x0 - 8))
        if name:
            canvas.text(((x0 + x1) / 2, b.y + 0.22 * b.h), name, CAR_EDGE, ts, anchor="center")  # clear of a path
    if seen:
        b = roof_box(seen[0], cam)
        x = max(b.x, cam.left) + 8
        _label(canvas, "left side edge", INK, [(x, b.y - 26), (x + 120, b.y - 26)], layout, area, "plan-labels")
        _label(canvas, "right side edge", INK, [(x, b.bottom + 6), (x + 120, b.bottom + 6)], layout, area,
               "plan-labels")
    for ahead, behind in zip(scene.cars, scene.cars[1:]):
        gap = ahead.rear_x - behind.front_x
        mid = cam.to_screen(0.5 * (ahead.rear_x + behind.front_x), -max(ahead.width, behind.width) / 2)
        if gap > 0.05 and area.x < mid[0] < area.right:
            words = f"gap {display(gap, 'length', scene.units, '.1f')}"
            w = canvas_measure(words, label_size(canvas))[0] + 6
            _label(canvas, words, SOFT_INK, [(mid[0] - w / 2, mid[1] + 26), (mid[0] - w / 2, mid[1] + 50)], layout,
                   area, "plan-labels")


def draw_overhead_labels(canvas, scene, cam: PlanCamera, distance: float, layout, area: Box) -> None:
    """Each structure or line over the picture, named with its height."""
    units = scene.units
    items = [(s.x_start - distance, s.x_start + s.span - distance, f"{s.name}, soffit "
              f"{display(s.soffit, 'length', units)}") for s in scene.structures]
    items += [(w.x_start - distance, w.x_end - distance, f"overhead line, wire "
               f"{display(w.wire_height, 'length', units)}, exclusion {display(w.exclusion, 'length', units)}")
              for w in scene.lines]
    for x0, x1, words in items:
        if not _in_view(cam, x0, x1):
            continue
        a = max(cam.to_screen(x0, 0.0)[0], cam.left)
        _, top = cam.to_screen(0.0, BED)
        _label(canvas, words, INK, [(a + 4, top - 30), (a + 4, area.y + 4)], layout, area, "structures")


# ---------------------------------------------------------------- legend

def legend_rows(view, units: str, px_per_m: float | None, scene=None) -> list[tuple]:
    """The plan's legend: its paths and marks, a length bar, and the timeline's marks."""
    from preview.panels import bar_row, pair_legend_rows, timeline_legend_rows
    from preview.world import FORCE_PER_METRE
    rows = [("trail", (TRAIL, "contact on the roof, up to now")),
            ("dots", (TRAIL, "centre of mass in the air")),
            ("trail", (SOFT_INK, "path still to come")),
            ("zone", (LANDING_ZONE, "landing zone (a jump's landing roof)")),
            ("ring", (FAILURE, "failure, over a side edge")),
            bar_row(1.0, "length", SOFT_INK, "(lengths)", units, px_per_m),
            ("zone", (STRUCTURE, f"structure over the {way(scene)}")),
            ("zone", (LINE_ZONE, "overhead line exclusion zone"))]
    if scene is not None and getattr(scene, "pair", False):   # two performers: the second's path, their force
        rows[1:1] = [("trail", (FIGURE_TONES[1][1], f"{scene.cast[1].name}'s contact on the roof, up to now"))]
        rows += pair_legend_rows(scene) + [bar_row(FORCE_PER_METRE, "force", INK, "(force between them)", units,
                                                   px_per_m)]
    return rows + timeline_legend_rows(scene)
