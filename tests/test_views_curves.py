"""The views on a curving track and a rough ride: real renders (pygame under SDL_VIDEODRIVER=dummy and
the recording canvas) of a fast left curve that topples the performer off the right side, a slow
curve with a large cant that they stand on, a short right curve, a rough ride on a straight and the
same car on a still straight.

Checked on what is drawn against what the engine recorded: the end view's roof, the support's
upright, the figure and the roof's reaction turn with the car body by the cant plus the body's
roll, the rails and sleeper by the cant alone, while the ground and the weight stay level and
plumb; the timeline marks the times the performer's mark reaches each curve's start and end; the
readout and the end view say the lateral acceleration felt on the roof only when there is a curve
or a ride; the plan's inset shows the track turning the right way; labels stay apart and the
caution line stays in every picture."""

from __future__ import annotations

import math

import numpy as np
import pytest

from physics.records import Event
from physics.scene_load import parse_scene
from preview.canvas import RecordingCanvas
from preview.caution import CAUTION_SHORT
from preview.export import frame_pixels
from preview.frame import ViewSettings, cameras, draw_frame
from preview.palette import CURVE, FAINT, INK, PANEL, REACTION, WEIGHT
from preview.panels import TICK_H, readout_rows, timeline_rect
from preview.session import make_playback
from tests.test_views_across import label_faults

SIZES = [(960, 540), (1280, 720)]


def scene(title="curve", speed="30 m/s", roof="painted steel wet", track="", ride="", units=""):
    return f"""title = "{title}"
{units}
[consist]
roof = "{roof}"
flexibility = 0.25

[[consist.cars]]
name = "coach"
length = "20 m"
roof_height = "4.0 m"

[motion]
speed = "{speed}"

[air]
wind_speed = "{speed}"
wind_from = "180 deg"

[performer]
stature = "1.78 m"
mass = "76 kg"
drag_area = "0.68 m^2"

[start]
car = 1
position = "5 m"
{track}
{ride}
[[actions]]
do = "stand"
duration = "12 s"
"""


def curve_track(radius="300 m", cant="0.05 m", turn="left", transition="60 m", length="5000 m", after=""):
    return f"""
[[track]]
length = "30 m"

[[track]]
length = "{length}"
radius = "{radius}"
cant = "{cant}"
turn = "{turn}"
transition = "{transition}"
{after}"""


FAST = scene(track=curve_track())                      # pushed off the right side at a few seconds
SLOW = scene("slow canted curve", speed="10 m/s", roof="painted steel dry", track=curve_track(cant="0.15 m"))
SHORT = scene("short right curve", speed="20 m/s", roof="painted steel dry",
              track=curve_track(turn="right", transition="20 m", length="100 m",
                                after='\n[[track]]\nlength = "500 m"\n'))
RIDE = scene("rough ride", ride='[ride]\nlevel = "rough"\nseed = 4\n')
PLAIN = scene("still straight")


@pytest.fixture(scope="module")
def runs():
    return {name: make_playback(parse_scene(text, f"{name}.toml"))
            for name, text in (("fast", FAST), ("slow", SLOW), ("short", SHORT), ("ride", RIDE), ("plain", PLAIN))}


def drawn(pb, t, frame, size=(1280, 720)) -> RecordingCanvas:
    canvas = RecordingCanvas(size=size)
    draw_frame(canvas, pb, t, ViewSettings(frame=frame))
    return canvas


def record_at(pb, t):
    return pb.trajectory.record[pb.trajectory.index_at(t)]


def tilt_at(pb, t) -> tuple[float, float]:
    r = record_at(pb, t)
    return float(r["cant_tilt"]), float(r["body_roll"])


def left_low(p_left, p_right) -> float:
    """The angle (rad) by which a screen chord from its left end to its right end is low on the left."""
    return math.atan2(p_left[1] - p_right[1], p_right[0] - p_left[0])


def left_of_up(p_from, p_to) -> float:
    """The angle (rad) of a screen direction from straight up, + toward the left of the screen."""
    return math.atan2(-(p_to[0] - p_from[0]), -(p_to[1] - p_from[1]))


def roof_line(canvas):
    """The roof's drawn line, from its right edge to its left: the ink polyline of the car."""
    lines = [c[1] for c in canvas.tagged("consist") if c[0] == "polyline" and c[2] == INK]
    assert len(lines) == 1
    return lines[0]


# ------------------------------------------------------------------ engine

def test_the_fast_curve_pushes_the_performer_off_the_right_side(runs):
    pb = runs["fast"]
    tr = pb.trajectory
    first = pb.summary["first_failure"]
    assert first is not None and first["side"] == "right" and 1.0 < first["time_s"] < 6.0
    assert int(tr.events[Event.OFF_SIDE]["side"]) == -1
    cant, roll = tilt_at(pb, 4.0)
    assert cant > 0 and roll < 0 and cant + roll < 0    # cant low on the left, the body rolled out past it
    assert record_at(pb, 4.0)["accel_y"] > 2.0           # + left in the record: a push to the right
    assert tilt_at(runs["ride"], 4.0) == (0.0, 0.0) and tilt_at(runs["plain"], 4.0) == (0.0, 0.0)


# ---------------------------------------------------------------- end view

@pytest.mark.parametrize("name,t", [("fast", 2.0), ("fast", 4.0), ("slow", 11.0), ("short", 4.0)])
def test_end_view_roof_is_turned_by_cant_plus_roll(runs, name, t):
    pb = runs[name]
    car = pb.scene.cars[0]
    cant, roll = tilt_at(pb, t)
    for size in SIZES:
        canvas = drawn(pb, t, "end", size)
        cam = cameras(pb, t, ViewSettings(frame="end"), size)[0]
        roof = roof_line(canvas)
        right, left = roof[0], roof[-1]
        # The edges differ in height by the width times the sine of the tilt, in pixels.
        assert (left[1] - right[1]) == pytest.approx(car.width * math.sin(cant + roll) * cam.scale, abs=0.6)
        assert left_low(left, right) == pytest.approx(cant + roll, abs=math.radians(0.2))
        sleeper = [c[1] for c in canvas.tagged("scenery") if c[0] == "polygon" and c[2] == FAINT][0]
        # The sleeper's top is drawn from the left of travel (screen left) to the right.
        assert left_low(sleeper[0], sleeper[1]) == pytest.approx(cant, abs=math.radians(0.2))
        ground = [c[1] for c in canvas.tagged("backdrop") if c[0] == "line"][0]
        assert ground[0][1] == ground[1][1]      # the ground stays level


def test_end_view_slow_curve_roof_is_low_on_the_left_in_real_pixels(runs):
    """The real render: the roof's ink just inside each side edge, the left lower by width x sin(tilt)."""
    pb = runs["slow"]
    t = 11.0
    cant, roll = tilt_at(pb, t)
    assert math.degrees(cant + roll) > 5.0
    canvas = drawn(pb, t, "end")
    roof = roof_line(canvas)
    pixels = frame_pixels(pb, t, ViewSettings(frame="end"), (1280, 720)).astype(int)
    tops = []
    for end, inward in ((roof[0], -1), (roof[-1], 1)):      # right edge, then left
        x = int(round(end[0])) + inward * 6
        column = pixels[int(end[1]) - 25:int(end[1]) + 25, x]
        ink = np.flatnonzero(np.abs(column - np.array(INK)).max(axis=1) <= 40)
        assert ink.size, "no roof ink near the edge"
        tops.append(int(end[1]) - 25 + int(ink[0]))
    cam = cameras(pb, t, ViewSettings(frame="end"), (1280, 720))[0]
    width_px = abs(roof[-1][0] - roof[0][0]) - 12
    assert tops[1] - tops[0] == pytest.approx(width_px * math.tan(cant + roll), abs=2.5)
    assert tops[1] - tops[0] > 0.08 * cam.scale * pb.scene.cars[0].width   # the left edge visibly lower


def test_end_view_straight_and_ride_roofs_are_level_and_untilted(runs):
    for name in ("plain", "ride"):
        canvas = drawn(runs[name], 3.0, "end")
        right, left = roof_line(canvas)[0], roof_line(canvas)[-1]
        assert abs(left[1] - right[1]) < 1e-6
    fast = roof_line(drawn(runs["fast"], 0.5, "end"))       # on the straight before the curve
    assert abs(fast[-1][1] - fast[0][1]) < 1e-6


def test_end_view_figure_and_support_turn_with_the_body_and_weight_stays_plumb(runs):
    """On the slow curve's roof: the support's upright is square to the drawn roof and turned by cant plus
    roll; the head leans off that upright by the recorded roll; the roof's reaction runs along the
    upright; the weight points straight down."""
    pb = runs["slow"]
    t = 11.0
    r = record_at(pb, t)
    cant, roll = tilt_at(pb, t)
    canvas = drawn(pb, t, "end")
    uprights = [c[1] for c in canvas.tagged("balance") if c[0] == "line" and c[2] == FAINT]
    assert len(uprights) == 1
    base, top = uprights[0]
    up = left_of_up(base, top)
    assert up == pytest.approx(cant + roll, abs=math.radians(0.2))
    roof = roof_line(canvas)
    assert left_low(roof[-1], roof[0]) == pytest.approx(up, abs=math.radians(0.2))   # square to the roof
    heads = [c[1] for c in canvas.tagged("figure") if c[0] == "circle"]
    head = heads[0][0]
    assert left_of_up(base, head) - up == pytest.approx(float(r["roll"]), abs=math.radians(0.5))
    normal = [c[1] for c in canvas.tagged("normal") if c[0] == "line" and c[2] == REACTION][0]
    assert left_of_up(normal[0], normal[1]) == pytest.approx(up, abs=math.radians(0.5))
    weight = [c[1] for c in canvas.tagged("weight") if c[0] == "line" and c[2] == WEIGHT][0]
    assert weight[0][0] == pytest.approx(weight[1][0], abs=1e-6) and weight[1][1] > weight[0][1]


def test_end_view_says_cant_roll_and_lateral_only_with_a_curve_or_ride(runs):
    words = " | ".join(t for tag, t, _ in drawn(runs["fast"], 4.0, "end").text_boxes() if tag == "end-track")
    assert "curve to the left, radius 300 m" in words
    assert "cant 50 mm (1.9°)" in words and "outward" in words and "low on the right" in words
    accel = float(record_at(runs["fast"], 4.0)["accel_y"])
    assert f"lateral {accel:.2f} m/s² toward the right" in words
    slow = " | ".join(t for tag, t, _ in drawn(runs["slow"], 11.0, "end").text_boxes() if tag == "end-track")
    assert "cant 150 mm" in slow and "inward" in slow and "low on the left" in slow and "toward the left" in slow
    ride = [t for tag, t, _ in drawn(runs["ride"], 3.0, "end").text_boxes() if tag == "end-track"]
    assert ride[0].startswith("straight track; rough ride") and any(t.startswith("lateral ") for t in ride)
    assert not any("cant" in t for t in ride)
    assert not [t for tag, t, _ in drawn(runs["plain"], 3.0, "end").text_boxes() if tag == "end-track"]
    before = " | ".join(drawn(runs["fast"], 0.5, "end").texts())
    assert "straight track, a curve to the left 20 m ahead" in before and "cant" not in before
    after = " | ".join(drawn(runs["short"], 11.0, "end").texts())   # past the short curve, on the straight
    assert "straight track" in after and "ahead" not in after and "cant" not in after


# ---------------------------------------------------------------- timeline

def curve_lines(canvas):
    return [c[1] for c in canvas.tagged("timeline") if c[0] == "line" and c[2] == CURVE]


@pytest.mark.parametrize("name,enter,leave", [
    ("fast", 35.0 / 30.0, None),           # the mark (5 m behind the front) reaches s = 30 m; never leaves
    ("short", 35.0 / 20.0, 135.0 / 20.0),  # a 100 m curve at 20 m/s
])
def test_timeline_marks_the_curve_where_the_performers_mark_meets_it(runs, name, enter, leave):
    pb = runs[name]
    for size in SIZES:
        canvas = drawn(pb, 3.0, "car", size)
        x, y, w, h = timeline_rect(size)
        at = lambda s: x + w * s / pb.scene.duration  # noqa: E731
        lines = curve_lines(canvas)
        ticks = sorted(a[0] for a, b in lines if a[0] == b[0])
        spans = [(a, b) for a, b in lines if a[1] == b[1]]
        expected = [at(enter)] + ([at(leave)] if leave is not None else [])
        assert ticks == pytest.approx(expected, abs=1.0)
        assert len(spans) == 1
        (a, b), = spans
        assert a[0] == pytest.approx(at(enter), abs=1.0)
        assert b[0] == pytest.approx(at(leave) if leave is not None else x + w, abs=1.0)
        assert y - TICK_H <= a[1] < y
        legend = [t for tag, t, _ in canvas.text_boxes() if tag == "legend"]
        assert "timeline: on a curve, its start and end" in legend
        # The real render: the curve's colour at the entry tick, above the timeline.
        pixels = frame_pixels(pb, 3.0, ViewSettings(frame="car"), size).astype(int)
        patch = pixels[y - TICK_H:y - 3, int(round(at(enter))) - 1:int(round(at(enter))) + 2].reshape(-1, 3)
        assert (np.abs(patch - np.array(CURVE)).max(axis=1) <= 12).any()


def test_timeline_has_no_curve_marks_or_legend_row_without_a_curve(runs):
    for name in ("ride", "plain"):
        for frame in ("car", "end", "plan"):
            canvas = drawn(runs[name], 3.0, frame)
            assert not curve_lines(canvas)
            assert not any("on a curve" in t for t in canvas.texts())


# ----------------------------------------------------------------- readout

def test_readout_has_the_lateral_line_only_with_a_curve_or_a_ride(runs):
    for name, t, way in (("fast", 4.0, "toward the right"), ("slow", 11.0, "toward the left"), ("ride", 3.0, None)):
        pb = runs[name]
        rows, _, _ = readout_rows(pb, t, ViewSettings())
        lateral = [value for row, value, _ in rows if row == "lateral on roof"]
        assert len(lateral) == 1
        accel = float(record_at(pb, t)["accel_y"])
        assert lateral[0].startswith(f"{abs(accel):.2f} m/s²")
        if way:
            assert lateral[0].endswith(way)
        else:
            assert lateral[0].endswith("toward the right" if accel > 0 else "toward the left")
        for frame in ("car", "end", "plan"):
            assert "lateral on roof" in drawn(pb, t, frame).texts()
    rows, _, _ = readout_rows(runs["plain"], 3.0, ViewSettings())
    assert not [row for row, _, _ in rows if row == "lateral on roof"]
    assert "lateral on roof" not in drawn(runs["plain"], 3.0, "car").texts()


def test_readout_lateral_line_in_imperial_units():
    pb = make_playback(parse_scene(scene(track=curve_track(), units='units = "imperial"'), "imperial.toml"))
    rows, _, _ = readout_rows(pb, 4.0, ViewSettings())
    value = [v for row, v, _ in rows if row == "lateral on roof"][0]
    accel = float(record_at(pb, 4.0)["accel_y"])
    assert value == f"{accel / 0.3048:.2f} ft/s² toward the right"
    words = " | ".join(drawn(pb, 4.0, "end").texts())
    assert "cant 2.0 in" in words


# -------------------------------------------------------------- plan view

def inset(canvas):
    calls = canvas.tagged("track-inset")
    box = [c[1] for c in calls if c[0] == "rect" and c[2] == PANEL][0]
    curve = [p for c in calls if c[0] == "polyline" and c[2] == CURVE for p in c[1]]
    words = [c[1][1] for c in calls if c[0] == "text"]
    return box, curve, words


def test_plan_inset_says_where_the_curve_is_and_turns_the_right_way(runs):
    box, curve, words = inset(drawn(runs["fast"], 4.0, "plan"))
    text = " ".join(words)
    assert "curve to the left, radius 300 m, cant 50 mm" in text
    assert "from 30 m to 5030 m along the track" in text
    assert "the performer's mark is 85 m into it" in text      # -5 m + 30 m/s x 4 s = 115 m
    assert curve[-1][1] < curve[0][1] - 20      # a left curve heads up the inset (left of travel at the top)
    _, _, early = inset(drawn(runs["fast"], 0.5, "plan"))
    assert "it starts 20 m ahead of the performer's mark" in " ".join(early)
    _, right, late = inset(drawn(runs["short"], 11.0, "plan"))
    assert right[-1][1] > right[0][1] + 5      # a right curve heads down
    assert "curve to the right" in " ".join(late) and "left it" in " ".join(late)
    for name in ("ride", "plain"):
        assert not drawn(runs[name], 3.0, "plan").tagged("track-inset")


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_plan_inset_keeps_clear_of_the_roof_and_the_body(runs, size):
    from preview.plan_view import path_points, roof_box
    for name, t in (("fast", 4.0), ("fast", 9.0), ("slow", 11.0)):
        pb = runs[name]
        canvas = drawn(pb, t, "plan", size)
        (x, y, w, h, _), _, _ = inset(canvas)
        cam = cameras(pb, t, ViewSettings(frame="plan"), size)[0]
        for car in pb.scene.cars:
            b = roof_box(car, cam)
            assert max(0, min(x + w, b.right) - max(x, b.x)) * max(0, min(y + h, b.bottom) - max(y, b.y)) == 0
        pts = path_points(pb.trajectory)
        pts = pts[np.isfinite(pts).all(axis=-1)]
        screen = np.array([cam.to_screen(*p) for p in pts])
        inside = (screen[:, 0] > x) & (screen[:, 0] < x + w) & (screen[:, 1] > y) & (screen[:, 1] < y + h)
        assert not inside.any(), f"{name} t={t}: the inset covers the body's path"


# ------------------------------------------------------------ every picture

@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_labels_stay_apart_and_the_caution_line_stays(runs, size):
    from preview.panels import caution_height
    faults = []
    for name in ("fast", "slow", "ride"):
        pb = runs[name]
        for frame in ("end", "plan", "car"):
            for t in (0.5, 3.0, 4.4, 11.0):
                canvas = drawn(pb, t, frame, size)
                caution = " ".join(s for tag, s, _ in canvas.text_boxes() if tag == "caution")
                assert caution == CAUTION_SHORT
                faults += [f"{name} {frame} t={t}: {f}" for f in label_faults(canvas)
                           + [f for f in _track_label_faults(canvas)]]
    assert not faults, "\n".join(faults[:20])
    pixels = frame_pixels(runs["fast"], 4.0, ViewSettings(frame="end"), size)
    band = pixels[size[1] - caution_height(size) + 2:size[1] - 2].reshape(-1, 3).astype(int)
    assert np.mean(np.abs(band - np.array(INK)).max(axis=1) <= 10) > 0.6


def _track_label_faults(canvas) -> list[str]:
    """The end view's track box and the plan's inset against every other placed text."""
    mine = [(tag, s, box) for tag, s, box in canvas.text_boxes() if tag in ("end-track", "track-inset")]
    others = [(tag, s, box) for tag, s, box in canvas.text_boxes()
              if tag not in ("end-track", "track-inset") and tag not in ("consist",) and s]
    faults = []
    width, height = canvas.size
    for ta, a, (ax, ay, aw, ah) in mine:
        if ax < -0.5 or ay < -0.5 or ax + aw > width + 0.5 or ay + ah > height + 0.5:
            faults.append(f"{ta} {a!r} leaves the picture")
        for tb, b, (bx, by, bw, bh) in others:
            if max(0, min(ax + aw, bx + bw) - max(ax, bx)) * max(0, min(ay + ah, by + bh) - max(ay, by)) > 1.0:
                faults.append(f"{ta} {a!r} overlaps {tb} {b!r}")
    return faults
