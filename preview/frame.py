"""One picture of a beat: a pure function of (trajectory, time, view settings).

Draws through the Canvas interface only: the window, the exports and the brief
all call `draw_frame`. Nothing here recomputes physics; every number comes from
the recorded trajectory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from physics import body
from physics.records import Mode
from physics.verdict import running_verdict
from physics.units import to_display
from physics.wind_scales import beaufort
from preview.camera import CAR, GROUND, Camera, camera_for
from preview.caution import CAUTION_SHORT
from preview.session import Playback
from preview.timecode import timecode

# A calm production palette of our own.
PAPER = (236, 234, 229)
SKY = (226, 230, 233)
GROUND_TONE = (205, 200, 190)
INK = (43, 49, 56)
SOFT_INK = (120, 126, 133)
FAINT = (178, 182, 186)
CAR_BODY = (196, 202, 208)
CAR_EDGE = (92, 100, 110)
FAR_LIMB = (150, 156, 163)
AERO = (31, 122, 140)
WEIGHT = (70, 70, 70)
REACTION = (106, 76, 147)
PSEUDO = (199, 125, 0)
WIND = (80, 140, 190)
FAILURE = (209, 73, 91)
MARGINAL = (200, 150, 40)
HOLDS = (62, 130, 92)
PANEL = (250, 249, 246)
STRUCTURE = (150, 128, 110)
LINE_ZONE = (230, 180, 180)

NEWTONS_PER_METRE = 400.0   # force vectors: 400 N drawn as 1 m
WIND_PER_METRE = 10.0       # apparent wind arrow: 10 m/s drawn as 1 m
TIMELINE_H = 26
CAUTION_H = 24

VECTOR_KEYS = ("weight", "aero", "segments", "reaction", "pseudo", "wind", "balance")


@dataclass(frozen=True)
class ViewSettings:
    frame: str = CAR                 # "car", "ground" or "split"
    zoom: float = 1.5
    vectors: frozenset = field(default_factory=lambda: frozenset({"weight", "aero", "reaction", "pseudo", "wind",
                                                                   "balance"}))
    trail_seconds: float = 3.0
    show_help: bool = False
    message: str = ""                # e.g. a scene error while the last good run keeps playing
    what_if: str = ""                # e.g. "speed +10 km/h"
    caption: bool = False            # burn-in caption for exports

    def toggled(self, key: str) -> "ViewSettings":
        return replace(self, vectors=self.vectors ^ {key})


def main_area(size: tuple[int, int]) -> tuple[int, int]:
    """Height available to the views above the timeline and the caution line."""
    return size[0], size[1] - TIMELINE_H - CAUTION_H - 12


def cameras(playback: Playback, t: float, view: ViewSettings, size) -> list[Camera]:
    width, height = main_area(size)
    tr = playback.trajectory
    if view.frame == "split":
        half = height // 2
        return [camera_for(tr, t, GROUND, (width, half), view.zoom, 0),
                camera_for(tr, t, CAR, (width, half), view.zoom, half)]
    return [camera_for(tr, t, view.frame, (width, height), view.zoom, 0)]


def draw_frame(canvas, playback: Playback, t: float, view: ViewSettings) -> None:
    """Draw the whole picture for time t."""
    canvas.fill(PAPER)
    for cam in cameras(playback, t, view, canvas.size):
        draw_view(canvas, playback, t, view, cam)
    draw_readout(canvas, playback, t, view)
    draw_timeline(canvas, playback, t)
    draw_caution(canvas)
    if view.show_help:
        draw_help(canvas)
    if view.message:
        draw_message(canvas, view.message)


def draw_view(canvas, playback: Playback, t: float, view: ViewSettings, cam: Camera) -> None:
    tr = playback.trajectory
    i = tr.index_at(t)
    canvas.tag = "backdrop"
    canvas.rect(0, cam.top, cam.width, cam.height, SKY)
    rail_y = cam.to_screen(0.0, 0.0)[1]
    if rail_y < cam.top + cam.height:
        canvas.rect(0, rail_y, cam.width, cam.top + cam.height - rail_y, GROUND_TONE)
    draw_scenery(canvas, cam)
    draw_structures(canvas, playback.scene, cam)
    draw_consist(canvas, playback.scene, cam)
    draw_trail(canvas, tr, i, view, cam)
    failure = playback.summary.get("first_failure")
    if failure and t >= failure["time_s"]:
        draw_figure(canvas, tr, tr.index_at(failure["time_s"]), cam, ghost=True)
    draw_figure(canvas, tr, i, cam)
    draw_vectors(canvas, tr, i, view, cam)
    if failure and t >= failure["time_s"] - 1e-9:
        draw_failure_marker(canvas, playback, failure, cam)
    canvas.tag = "frame label"
    label = "GROUND FRAME - track and scenery at rest" if cam.frame == GROUND else \
        "CAR FRAME - consist at rest, scenery streams past"
    canvas.rect(cam.width - 440, cam.top + 8, 430, 26, PANEL, alpha=230)
    canvas.text((cam.width - 20, cam.top + 12), label, INK, 15, anchor="topright", bold=True)
    if not view.vectors:
        return
    draw_legend(canvas, cam)


def draw_scenery(canvas, cam: Camera) -> None:
    """Sleepers, poles and distance markers, fixed to the ground."""
    canvas.tag = "scenery"
    left = cam.to_world(0, 0)[0] + cam.distance
    right = cam.to_world(cam.width, 0)[0] + cam.distance
    rail = cam.ground_to_screen(0.0, 0.0)[1]
    canvas.line((0, rail), (cam.width, rail), SOFT_INK, 2)
    for x in np.arange(math.floor(left / 0.65) * 0.65, right + 0.65, 0.65):
        px = cam.ground_to_screen(x, 0.0)[0]
        canvas.line((px, rail + 2), (px, rail + 7), FAINT, 2)
    for x in np.arange(math.floor(left / 40.0) * 40.0, right + 40.0, 40.0):
        base = cam.ground_to_screen(x, 0.0)
        top = cam.ground_to_screen(x, 7.0)
        canvas.line(base, top, SOFT_INK, 3)
        canvas.line(top, (top[0] + 0.6 * cam.scale, top[1]), SOFT_INK, 2)
    for x in np.arange(math.floor(left / 100.0) * 100.0, right + 100.0, 100.0):
        px, py = cam.ground_to_screen(x, 0.0)
        canvas.rect(px - 16, py + 12, 32, 16, PANEL)
        canvas.text((px, py + 20), f"{x:.0f}", INK, 11, anchor="center", mono=True)


def draw_structures(canvas, scene, cam: Camera) -> None:
    canvas.tag = "structures"
    for s in scene.structures:
        x0, top = cam.ground_to_screen(s.x_start, s.soffit + 1.2)
        x1, soffit = cam.ground_to_screen(s.x_start + s.span, s.soffit)
        canvas.rect(x0, top, x1 - x0, soffit - top, STRUCTURE)
        canvas.line((x0, soffit), (x1, soffit), INK, 2)
        canvas.text(((x0 + x1) / 2, top - 4), f"{s.name}  soffit {s.soffit:.2f} m", INK, 12, anchor="midbottom")
        if s.kind in ("bridge", "footbridge"):
            for xs in (s.x_start, s.x_start + s.span):
                base = cam.ground_to_screen(xs, 0.0)
                canvas.line(base, cam.ground_to_screen(xs, s.soffit), STRUCTURE, 5)
    for line in scene.lines:
        x0, wire = cam.ground_to_screen(line.x_start, line.wire_height)
        x1, zone = cam.ground_to_screen(line.x_end, line.wire_height - line.exclusion)
        canvas.rect(x0, wire, x1 - x0, zone - wire, LINE_ZONE, alpha=90)
        canvas.line((x0, wire), (x1, wire), FAILURE, 2)


def draw_consist(canvas, scene, cam: Camera) -> None:
    canvas.tag = "consist"
    for car in scene.cars:
        x0, roof = cam.to_screen(car.rear_x, car.roof_height)
        x1, floor = cam.to_screen(car.front_x, car.body_bottom)
        canvas.rect(x0, roof, x1 - x0, floor - roof, CAR_BODY)
        canvas.rect(x0, roof, x1 - x0, floor - roof, CAR_EDGE, width=2)
        canvas.line((x0, roof), (x1, roof), INK, 3)
        wheel_r = 0.42 * cam.scale
        for bogie in (car.rear_x + min(2.5, car.length * 0.2), car.front_x - min(2.5, car.length * 0.2)):
            for dx in (-0.9, 0.9):
                cx, cy = cam.to_screen(bogie + dx, 0.42)
                canvas.circle((cx, cy), wheel_r, CAR_EDGE, 0)
                canvas.circle((cx, cy), wheel_r * 0.35, PAPER, 0)
        name_x = (x0 + x1) / 2
        canvas.text((name_x, (roof + floor) / 2), car.name, CAR_EDGE, 13, anchor="center")


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


def draw_figure(canvas, tr, i: int, cam: Camera, ghost: bool = False) -> None:
    """Stick figure: far limbs lighter and thinner, near limbs in ink, head as a ring."""
    canvas.tag = "ghost" if ghost else "figure"
    if not np.isfinite(tr.ends(i)).all():
        return
    if not ghost and tr.field("mode")[i] == Mode.GONE:
        return  # struck or fallen: the ghost at the failure shows the last pose
    pts = _screen_ends(tr, i, cam, pinned=ghost)
    stature_px = tr.scene.performer.stature * cam.scale
    far = (body.UARM_F, body.FARM_F, body.THIGH_F, body.SHANK_F, body.FOOT_F)
    order = list(far) + [s for s in range(body.N_SEGMENTS) if s not in far and s != body.HEAD]
    for s in order:
        color = FAINT if ghost else (FAR_LIMB if s in far else INK)
        width = max(2, int(stature_px * (0.035 if s == body.TRUNK else 0.02)))
        canvas.line(pts[s, 0], pts[s, 1], color, width)
    neck, top = pts[body.HEAD, 0], pts[body.HEAD, 1]
    head_c = (neck[0] + 0.6 * (top[0] - neck[0]), neck[1] + 0.6 * (top[1] - neck[1]))
    radius = 0.4 * math.hypot(top[0] - neck[0], top[1] - neck[1])
    canvas.line(neck, head_c, FAINT if ghost else INK, max(2, int(stature_px * 0.02)))
    canvas.circle(head_c, radius, FAINT if ghost else INK, max(2, int(stature_px * 0.015)))


def draw_trail(canvas, tr, i: int, view: ViewSettings, cam: Camera) -> None:
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
    canvas.polyline(points, WIND, 2)


def _force_arrow(canvas, cam, origin, force, color, tag, push=False):
    """A force drawn to scale from its point of application, or, for contact
    forces (push=True), drawn ending at the point it pushes on."""
    canvas.tag = tag
    x, z = origin
    dx, dz = force[0] / NEWTONS_PER_METRE, force[1] / NEWTONS_PER_METRE
    if push:
        canvas.arrow(cam.to_screen(x - dx, z - dz), cam.to_screen(x, z), color, 3)
    else:
        canvas.arrow(cam.to_screen(x, z), cam.to_screen(x + dx, z + dz), color, 3)


def draw_vectors(canvas, tr, i: int, view: ViewSettings, cam: Camera) -> None:
    f = lambda name: float(tr.record[name][i])  # noqa: E731
    com = tuple(tr.com_path[i])
    if not all(map(math.isfinite, com)):
        return
    mode = int(f("mode"))
    if mode == Mode.GONE:
        return
    on_roof = mode in (Mode.PLANTED, Mode.SLIDING, Mode.DOWN)
    if "weight" in view.vectors:
        _force_arrow(canvas, cam, com, (0.0, -tr.weight), WEIGHT, "weight")
    if "aero" in view.vectors:
        _force_arrow(canvas, cam, com, (f("aero_x"), f("aero_z")), AERO, "aero")
    if "segments" in view.vectors:
        ends = tr.ends(i)
        forces = tr.segment_forces(i)
        for s in range(body.N_SEGMENTS):
            mid = (ends[s, :, 0].mean(), ends[s, :, 1].mean())
            _force_arrow(canvas, cam, mid, forces[s] * 3.0, AERO, "segments")
    if on_roof and "reaction" in view.vectors:
        base = (f("pivot_x"), f("contact_z"))
        _force_arrow(canvas, cam, base, (0.0, f("normal")), REACTION, "normal", push=True)
        _force_arrow(canvas, cam, base, (f("need_x"), 0.0), REACTION, "friction", push=True)
    pseudo = float(tr.pseudo_force_path[i])
    if "pseudo" in view.vectors and cam.frame == CAR and abs(pseudo) > 1.0:
        _force_arrow(canvas, cam, com, (pseudo, 0.0), PSEUDO, "pseudo")
    if "wind" in view.vectors:
        canvas.tag = "wind"
        head = (com[0], com[1] + 1.3)
        w = (f("app_x"), f("app_z") if math.isfinite(f("app_z")) else 0.0)
        p0 = cam.to_screen(head[0] - w[0] / WIND_PER_METRE, head[1] - w[1] / WIND_PER_METRE)
        canvas.arrow(p0, cam.to_screen(*head), WIND, 2)
    if on_roof and "balance" in view.vectors:
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


def draw_failure_marker(canvas, playback, failure, cam: Camera) -> None:
    """A ringed cross with a short stem and a label box: kind, time and the numbers."""
    canvas.tag = "failure"
    tr = playback.trajectory
    i = tr.index_at(failure["time_s"])
    z = tr.com_path[i, 1]
    z = z if math.isfinite(z) else playback.scene.cars[0].roof_height + 1.0
    x = failure["x_car_m"]
    if cam.frame == GROUND:
        px, py = cam.ground_to_screen(failure["x_ground_m"], z)
    else:
        px, py = cam.to_screen(x, z)
    r = 16
    canvas.circle((px, py), r, FAILURE, 3)
    canvas.line((px - r * 0.7, py - r * 0.7), (px + r * 0.7, py + r * 0.7), FAILURE, 3)
    canvas.line((px - r * 0.7, py + r * 0.7), (px + r * 0.7, py - r * 0.7), FAILURE, 3)
    canvas.line((px, py - r), (px + 30, py - r - 40), FAILURE, 2)
    label = f"{failure['kind'].upper()}  {failure['time_s']:.2f} s"
    detail = failure["detail"]
    w = max(len(label) * 9, len(detail) * 7) + 16
    canvas.rect(px + 30, py - r - 84, w, 46, PANEL, alpha=235)
    canvas.rect(px + 30, py - r - 84, w, 46, FAILURE, width=2)
    canvas.text((px + 38, py - r - 80), label, FAILURE, 15, bold=True)
    canvas.text((px + 38, py - r - 60), detail, INK, 12)


def draw_legend(canvas, cam: Camera) -> None:
    canvas.tag = "legend"
    x, y = cam.width - 250, cam.top + 40
    canvas.rect(x, y, 240, 30, PANEL, alpha=220)
    bar = 400.0 / NEWTONS_PER_METRE * cam.scale
    canvas.line((x + 10, y + 20), (x + 10 + bar, y + 20), INK, 3)
    canvas.line((x + 10, y + 14), (x + 10, y + 26), INK, 2)
    canvas.line((x + 10 + bar, y + 14), (x + 10 + bar, y + 26), INK, 2)
    canvas.text((x + 18 + bar, y + 12), "400 N", INK, 12)


def draw_readout(canvas, playback: Playback, t: float, view: ViewSettings) -> None:
    canvas.tag = "readout"
    tr = playback.trajectory
    scene = tr.scene
    i = tr.index_at(t)
    f = lambda name: float(tr.record[name][i])  # noqa: E731
    system = scene.units
    speed, speed_u = to_display(f("speed"), "speed", system)
    app = math.hypot(f("app_x"), f("app_y")) if math.isfinite(f("app_x")) else float("nan")
    wind, wind_u = to_display(app, "wind", system) if math.isfinite(app) else (float("nan"), "")
    demand, avail = f("grip_demand"), f("grip_available")
    grip = f"{avail / demand:.2f} (needs {demand:.2f}, roof {avail:.2f})" if demand > 1e-6 else "no load"
    mos = f("balance_margin")
    bal = f"{to_display(mos, 'length', system)[0]:+.2f} {to_display(0, 'length', system)[1]}" \
        if math.isfinite(mos) else "n/a"
    lean = f"{math.degrees(f('lean')):+.1f}°" if math.isfinite(f("lean")) else "n/a"
    verdict = running_verdict(scene, tr.events, tr.outcomes, t)
    action = scene.actions[int(tr.timeline.steps["action"][i])].label
    rows = [
        ("timecode", f"{timecode(t, scene.frame_rate)}   {t:6.2f} s"),
        ("action", action),
        ("vehicle speed", f"{speed:.1f} {speed_u}"),
        ("apparent wind", f"{wind:.1f} {wind_u}, Beaufort {beaufort(app)}" if math.isfinite(app) else "n/a"),
        ("grip ratio", grip if math.isfinite(demand) else "n/a (airborne)"),
        ("balance margin", bal),
        ("lean", lean),
    ]
    x, y = 12, 10
    canvas.rect(x, y, 360, 30 + 20 * len(rows), PANEL, alpha=235)
    title = scene.title if len(scene.title) <= 44 else scene.title[:43] + "…"
    canvas.text((x + 10, y + 6), title, INK, 13, bold=True)
    for k, (name, value) in enumerate(rows):
        canvas.text((x + 10, y + 28 + 20 * k), name, SOFT_INK, 12)
        canvas.text((x + 130, y + 28 + 20 * k), value, INK, 12, mono=True)
    color = {"holds": HOLDS, "marginal": MARGINAL, "fails": FAILURE}[verdict]
    canvas.rect(x, y + 32 + 20 * len(rows), 360, 26, color)
    canvas.text((x + 10, y + 36 + 20 * len(rows)), f"verdict so far: {verdict.upper()}", PANEL, 14, bold=True)
    if view.what_if:
        canvas.text((x + 10, y + 64 + 20 * len(rows)), f"what-if: {view.what_if}", PSEUDO, 13, bold=True)


def timeline_rect(size) -> tuple[int, int, int, int]:
    width, height = size
    return 12, height - CAUTION_H - TIMELINE_H - 6, width - 24, TIMELINE_H


def draw_timeline(canvas, playback: Playback, t: float) -> None:
    """Action blocks, event ticks and the playhead; click or drag here to scrub."""
    canvas.tag = "timeline"
    x, y, w, h = timeline_rect(canvas.size)
    duration = playback.scene.duration
    canvas.rect(x, y, w, h, PANEL)
    for k, a in enumerate(playback.summary["actions"]):
        x0 = x + w * a["start_s"] / duration
        x1 = x + w * a["end_s"] / duration
        tone = (214, 219, 224) if k % 2 == 0 else (200, 207, 214)
        canvas.rect(x0, y, x1 - x0, h, tone)
        canvas.text((x0 + 4, y + 6), a["name"][:20], INK, 11)
    for e in playback.summary["events"]:
        px = x + w * min(e["time_s"], duration) / duration
        canvas.line((px, y - 4), (px, y + h), FAILURE if e["failure"] else PSEUDO, 3)
    px = x + w * min(t, duration) / duration
    canvas.line((px, y - 6), (px, y + h + 2), INK, 3)


def draw_caution(canvas) -> None:
    canvas.tag = "caution"
    width, height = canvas.size
    canvas.rect(0, height - CAUTION_H, width, CAUTION_H, INK)
    canvas.text((10, height - CAUTION_H + 5), CAUTION_SHORT, PANEL, 11)


HELP = [
    ("space", "play / pause"), ("left / right", "step one frame back / forward"),
    ("[ and ]", "playback rate 0.1x - 2x"), ("F", "frame: car / ground / split"),
    ("1-7", "weight, aerodynamic, per segment, ground reaction, pseudo-force, wind, balance"),
    ("+ / -", "zoom"), ("up / down", "what-if: vehicle speed +/- 5 km/h"),
    ("W / S", "what-if: ambient wind +/- 1 m/s"), ("0", "clear what-if"), ("Home", "restart"),
    ("P", "screenshot to PNG"), ("H", "this help"), ("Esc", "quit"), ("mouse", "click or drag the timeline to scrub"),
]


def draw_help(canvas) -> None:
    canvas.tag = "help"
    width, height = canvas.size
    w, h = 560, 40 + 22 * len(HELP)
    x, y = (width - w) // 2, (height - h) // 2
    canvas.rect(x, y, w, h, PANEL, alpha=245)
    canvas.rect(x, y, w, h, INK, width=2)
    canvas.text((x + 16, y + 10), "Controls", INK, 15, bold=True)
    for k, (key, what) in enumerate(HELP):
        canvas.text((x + 16, y + 36 + 22 * k), key, INK, 13, mono=True)
        canvas.text((x + 150, y + 36 + 22 * k), what, INK, 13)


def draw_message(canvas, message: str) -> None:
    canvas.tag = "message"
    width, _ = canvas.size
    lines = message.splitlines()[:6]
    h = 14 + 18 * len(lines)
    canvas.rect(390, 10, width - 400 - 450, h, PANEL, alpha=245)
    canvas.rect(390, 10, width - 400 - 450, h, FAILURE, width=2)
    for k, line in enumerate(lines):
        canvas.text((398, 16 + 18 * k), line[:90], FAILURE, 12)
