"""The end and plan views: real renders (pygame under SDL_VIDEODRIVER=dummy and the
recording canvas) of the bundled default scene and of a side wind that puts the
performer off the side of the roof; the render command and the window's F key.

Checked on properties that hold whatever the engine's numbers: where the body is
drawn against the roof, that the plan's path crosses the side edge, that forces
are drawn to the legend's scale, that labels stay apart and the caution stays."""

from __future__ import annotations

import math
import os
import subprocess
import sys

import numpy as np
import pytest

from physics.records import Event, Mode
from physics.scene_load import load_scene, parse_scene
from preview.canvas import RecordingCanvas
from preview.caution import CAUTION_SHORT
from preview.export import frame_pixels
from preview.frame import ViewSettings, cameras, draw_frame
from preview.palette import INK, TRAIL
from preview.session import make_playback
from tests.conftest import REPO

SIZES = [(960, 540), (1280, 720)]

SIDE_WIND = """title = "Side wind on a box car"
[consist]
roof = "painted steel wet"

[[consist.cars]]
name = "box car"
length = "14 m"
roof_height = "4.0 m"

[motion]
speed = "0 m/s"

[air]
wind_speed = "28 m/s"
wind_from = "90 deg"

[performer]
stature = "1.78 m"
mass = "76 kg"
drag_area = "0.68 m^2"

[start]
car = 1
position = "6 m"
offset = "-1.0 m"

[[actions]]
do = "stand"
duration = "6 s"
"""

LINE = """
[[lines]]
start = "0 m"
end = "40 m"
wire_height = "5.9 m"
exclusion = "1.0 m"
"""


@pytest.fixture(scope="module")
def side():
    return make_playback(parse_scene(SIDE_WIND, "side_wind.toml"))


@pytest.fixture(scope="module")
def heritage():
    return make_playback(load_scene(REPO / "scenes" / "heritage_excursion.toml"))


def drawn(pb, t, frame, size=(1280, 720)) -> RecordingCanvas:
    canvas = RecordingCanvas(size=size)
    draw_frame(canvas, pb, t, ViewSettings(frame=frame))
    return canvas


def figure_points(canvas) -> np.ndarray:
    return np.array([p for kind, args, _, tag in canvas.calls if tag == "figure" and kind == "line" for p in args])


def off_side_time(pb) -> float:
    t = float(pb.trajectory.events[Event.OFF_SIDE]["time"])
    assert np.isfinite(t), "the side wind no longer puts the performer off the side"
    return t


def on_ground_time(pb) -> float:
    """A time well after the body came to lie on the ground beside the car."""
    tr = pb.trajectory
    gone = np.flatnonzero(tr.field("mode") == Mode.GONE)
    assert gone.size, "the body never came to the ground"
    return min(pb.scene.duration, float(tr.times[gone[0]]) + 0.5)


def near(pixels, point, colour, radius=5, tolerance=40) -> bool:
    x, y = int(round(point[0])), int(round(point[1]))
    patch = pixels[max(0, y - radius):y + radius + 1, max(0, x - radius):x + radius + 1].astype(int)
    return bool(np.any(np.abs(patch - np.array(colour)).max(axis=-1) <= tolerance))


# ------------------------------------------------------------------ end view

def test_side_wind_scene_goes_off_the_side_toward_the_right(side):
    tr = side.trajectory
    t = off_side_time(side)
    assert 0.1 < t < 3.0
    assert int(tr.events[Event.OFF_SIDE]["side"]) == -1   # blown from the left, over the right edge
    assert any(e["kind"] == "off the side" for e in side.summary["events"])


def test_end_view_on_the_roof_draws_the_figure_standing_on_it(heritage):
    car = heritage.scene.cars[1]
    for size in SIZES:
        canvas = drawn(heritage, 2.0, "end", size)
        cam = cameras(heritage, 2.0, ViewSettings(frame="end"), size)[0]
        pts = figure_points(canvas)
        left, right = cam.to_screen(car.width / 2, 0)[0], cam.to_screen(-car.width / 2, 0)[0]
        assert left < right   # looking forward: the left of travel is on the left of the screen
        assert (pts[:, 0] > left).all() and (pts[:, 0] < right).all()
        roof_y = cam.to_screen(0.0, car.roof_height)[1]
        assert pts[:, 1].max() <= roof_y + 2 and pts[:, 1].min() < roof_y - 0.8 * 1.78 * cam.scale
        texts = canvas.texts()
        assert any("END VIEW" in s and "left of travel on the left" in s for s in texts)
        assert " ".join(s for tag, s, _ in canvas.text_boxes() if tag == "caution") == CAUTION_SHORT


def test_end_view_after_off_the_side_shows_the_body_beside_the_car_and_below_its_roof(side):
    t = on_ground_time(side)
    car = side.scene.cars[0]
    view = ViewSettings(frame="end")
    canvas = drawn(side, t, "end")
    cam = cameras(side, t, view, (1280, 720))[0]
    pts = figure_points(canvas)
    assert pts.size, "no figure drawn after the fall"
    left_edge = cam.to_screen(car.width / 2, 0.0)[0]
    right_edge = cam.to_screen(-car.width / 2, 0.0)[0]
    edge_roof_y = cam.to_screen(0.0, car.roof_z(car.width / 2))[1]
    assert (pts[:, 0] > right_edge).all(), "the body is still over the roof, not beside the car to the right"
    assert (pts[:, 1] > edge_roof_y).all(), "the body is not below roof level"
    assert pts[:, 0].min() > left_edge
    # The real pixels: ink where the body lies, none of the figure's ink over the roof.
    pixels = frame_pixels(side, t, view, (1280, 720))
    assert near(pixels, pts.mean(axis=0), INK)
    words = " | ".join(canvas.texts())
    assert "on the ground" in words and "right" in words


def test_end_view_in_the_air_after_the_edge_is_past_the_edge(side):
    tr = side.trajectory
    t0 = off_side_time(side)
    flying = np.flatnonzero((tr.field("mode") == Mode.FLIGHT) & (tr.times > t0 + 0.2))
    if not flying.size:
        pytest.skip("no flight after the edge in this run")
    t = float(tr.times[flying[0]])
    canvas = drawn(side, t, "end")
    cam = cameras(side, t, ViewSettings(frame="end"), (1280, 720))[0]
    com = tr.com_path3[tr.index_at(t)]
    assert com[1] < -side.scene.cars[0].width / 2   # the record: past the right edge
    trunk = [args for kind, args, _, tag in canvas.calls if tag == "figure" and kind == "line"]
    assert trunk and min(p[0] for line in trunk for p in line) > cam.to_screen(0.0, 0.0)[0]


def test_end_view_lateral_forces_are_drawn_to_the_legends_scale(side):
    from preview.panels import scale_bar
    from preview.world import FORCE_PER_METRE
    t = 0.3 * off_side_time(side)
    tr = side.trajectory
    r = tr.record[tr.index_at(t)]
    assert abs(r["aero_y"]) > 50 and abs(r["need_y"]) > 50
    canvas = drawn(side, t, "end")
    cam = cameras(side, t, ViewSettings(frame="end"), (1280, 720))[0]
    for tag, force in (("aero", float(r["aero_y"])), ("friction", float(r["need_y"]))):
        start = [c[1][0] for c in canvas.tagged(tag) if c[0] == "line"][0]
        tip = [c[1][0] for c in canvas.tagged(tag) if c[0] == "polygon"][0]
        assert tip[0] - start[0] == pytest.approx(-force / FORCE_PER_METRE * cam.scale, rel=1e-6, abs=0.5)
    assert np.sign(r["aero_y"]) != np.sign(r["need_y"])   # the roof holds against the air load
    value, unit, px = scale_bar(FORCE_PER_METRE, "force", "metric", cam.scale)
    bars = [c for c in canvas.tagged("legend") if c[0] == "line" and c[2] == INK]
    assert any(abs((b[1][1][0] - b[1][0][0]) - px) < 0.5 for b in bars)
    assert any(f"{value:g} {unit} (every force)" in s for s in canvas.texts())


def test_end_view_draws_the_support_roll_and_balance_point(side):
    from preview.palette import HOLDS
    t = 0.3 * off_side_time(side)
    tr = side.trajectory
    r = tr.record[tr.index_at(t)]
    canvas = drawn(side, t, "end")
    cam = cameras(side, t, ViewSettings(frame="end"), (1280, 720))[0]
    bar = [c[1] for c in canvas.tagged("balance") if c[0] == "line" and c[2] == HOLDS][0]
    assert abs(bar[1][0] - bar[0][0]) == pytest.approx(2 * r["half_width"] * cam.scale, rel=1e-6)
    assert (bar[0][0] + bar[1][0]) / 2 == pytest.approx(cam.to_screen(float(r["pivot_y"]), 0)[0], abs=1e-6)
    facts = " | ".join(s for tag, s, _ in canvas.text_boxes() if tag == "end-facts")
    assert f"{np.degrees(r['roll']):+.1f}°" in facts


def test_end_view_shows_an_overhead_line_zone_near_the_performer():
    scene = parse_scene(SIDE_WIND.replace('speed = "0 m/s"', 'speed = "5 m/s"').replace('"28 m/s"', '"0 m/s"')
                        + LINE, "line.toml")
    pb = make_playback(scene)
    canvas = drawn(pb, 1.0, "end")
    cam = cameras(pb, 1.0, ViewSettings(frame="end"), (1280, 720))[0]
    centre = cam.to_screen(0.0, 5.9)
    rings = [c[1] for c in canvas.tagged("structures") if c[0] == "circle"]
    assert any(np.allclose(c, centre) and r == pytest.approx(1.0 * cam.scale) for c, r in rings)
    assert any("overhead line" in s and "exclusion 1.00 m" in s for s in canvas.texts())


# ----------------------------------------------------------------- plan view

def test_plan_view_path_crosses_the_side_edge(side):
    car = side.scene.cars[0]
    t = on_ground_time(side)
    canvas = drawn(side, t, "plan")
    cam = cameras(side, t, ViewSettings(frame="plan"), (1280, 720))[0]
    edge_y = cam.to_screen(0.0, -car.width / 2)[1]
    centre_y = cam.to_screen(0.0, 0.0)[1]
    points = [p for kind, args, colour, tag in canvas.calls if tag == "path" and colour == TRAIL
              for p in (args if kind == "polyline" else [args[0]] if kind == "circle" else [])]
    ys = np.array([p[1] for p in points])
    assert ys.size
    assert (ys < edge_y).any() and (ys > edge_y + 3).any(), "the path drawn does not cross the right side edge"
    assert ys.max() > centre_y   # the right of travel is below the centreline
    pixels = frame_pixels(side, t, ViewSettings(frame="plan"), (1280, 720))
    beyond = [p for p in points if p[1] > edge_y + 6]
    assert any(near(pixels, p, TRAIL, radius=2, tolerance=30) for p in beyond)


def test_plan_view_marks_the_failure_and_the_edge_before_and_after(side):
    first = side.summary["first_failure"]
    before = drawn(side, max(0.0, first["time_s"] - 0.01), "plan") if first["time_s"] > 0.02 else None
    if before is not None:
        assert not [c for c in before.tagged("failure") if c[0] == "circle"]
    after = drawn(side, on_ground_time(side), "plan")
    words = " | ".join(s for tag, s, _ in after.text_boxes() if tag == "failure" or tag == "plan-labels")
    assert first["kind"].upper() in words
    assert "off the side" in words
    assert "came down on the ground" in words
    banner = " ".join(s for tag, s, _ in after.text_boxes() if tag == "banner")
    assert "PLAN VIEW" in banner and "left of travel at the top" in banner


def test_plan_view_of_the_default_scene_shows_the_walk_so_far_and_to_come(heritage):
    walk = next(a for a in heritage.scene.actions if a.kind == "walk")
    t = walk.start + 0.5 * walk.duration
    canvas = drawn(heritage, t, "plan")
    cam = cameras(heritage, t, ViewSettings(frame="plan"), (1280, 720))[0]
    lines = [c for c in canvas.tagged("path") if c[0] == "polyline"]
    done = [p for c in lines if c[2] == TRAIL for p in c[1]]
    to_come = [p for c in lines if c[2] != TRAIL for p in c[1]]
    assert done and to_come
    here = heritage.trajectory.field("pivot_x")[heritage.trajectory.index_at(t)]
    x_now = cam.to_screen(float(here), 0.0)[0]
    # Walking toward the rear (left on the plan): done lies ahead of the body, to come behind it.
    assert min(p[0] for p in done) >= x_now - 2 and max(p[0] for p in to_come) <= x_now + 2
    roofs = [c for c in canvas.tagged("consist") if c[0] == "rect" and c[1][4] == 0]
    assert len(roofs) >= 2   # the roof under the performer and its neighbour across the gap


# ------------------------------------------------------------- both views

PLACED = {"readout", "banner", "legend", "timeline", "caution", "message", "structures", "jump", "failure",
          "end-labels", "end-facts", "plan-labels"}


def label_faults(canvas) -> list[str]:
    width, height = canvas.size
    texts = [(tag, s, box) for tag, s, box in canvas.text_boxes() if s and tag in PLACED]
    faults = [f"{tag} {s!r} leaves the picture" for tag, s, (x, y, w, h) in texts
              if x < -0.5 or y < -0.5 or x + w > width + 0.5 or y + h > height + 0.5]
    for k, (ta, a, (ax, ay, aw, ah)) in enumerate(texts):
        for tb, b, (bx, by, bw, bh) in texts[k + 1:]:
            if max(0, min(ax + aw, bx + bw) - max(ax, bx)) * max(0, min(ay + ah, by + bh) - max(ay, by)) > 1.0:
                faults.append(f"{ta} {a!r} overlaps {tb} {b!r}")
    return faults


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_labels_of_both_views_stay_apart_and_in_the_picture(side, heritage, size):
    faults = []
    for name, pb in (("side wind", side), ("heritage", heritage)):
        first = pb.summary["first_failure"]
        times = [0.3, pb.scene.duration / 2, pb.scene.duration - 0.05]
        if first:
            times += [first["time_s"] + 0.1, on_ground_time(pb) if name == "side wind" else first["time_s"]]
        for frame in ("end", "plan"):
            for t in times:
                faults += [f"{name} {frame} t={t:.2f}: {f}" for f in label_faults(drawn(pb, t, frame, size))]
    assert not faults, "\n".join(faults[:20])


def test_pixels_of_both_views_keep_the_caution_line(heritage):
    from preview.panels import caution_height
    for frame in ("end", "plan"):
        pixels = frame_pixels(heritage, 3.0, ViewSettings(frame=frame), (960, 540))
        band = pixels[540 - caution_height((960, 540)) + 2:538].reshape(-1, 3).astype(int)
        assert np.mean(np.abs(band - np.array(INK)).max(axis=1) <= 10) > 0.6   # the dark caution band


def test_window_f_key_cycles_side_end_and_plan_views(heritage):
    from preview.window import PlayerState, handle_key
    state = PlayerState(heritage, ViewSettings(), t=2.0)
    seen = []
    for _ in range(5):
        handle_key(state, "f")
        seen.append(state.view.frame)
    assert seen == ["ground", "split", "end", "plan", "car"]
    state.view = ViewSettings(frame="end")
    handle_key(state, "c")   # the trackside camera lives in the ground frame
    assert state.view.frame == "ground" and state.view.trackside is not None
    from preview.panels import HELP
    assert any("end" in words and "plan" in words for key, words in HELP if key == "F")


# --------------------------------------------------------------- command line

def roofbeat(*args, cwd=REPO):
    env = dict(os.environ, SDL_VIDEODRIVER="dummy")
    return subprocess.run([sys.executable, "-m", "preview.cli", *args], capture_output=True, text=True, cwd=cwd,
                          env=env, timeout=300)


def test_render_end_and_plan_write_png_frames(tmp_path):
    from PIL import Image
    scene = tmp_path / "side_wind.toml"
    scene.write_text(SIDE_WIND)
    for frame in ("end", "plan"):
        out = tmp_path / f"{frame}_frames"
        run = roofbeat("render", str(scene), "-o", str(out), "--frame", frame, "--from", "0.5", "--to", "2.5",
                       "--fps", "2", "--size", "640x360")
        assert run.returncode == 0, run.stderr
        assert f"{frame} view" in run.stdout
        frames = sorted(out.glob("frame_*.png"))
        assert len(frames) == 5
        with Image.open(frames[-1]) as im:
            assert im.size == (640, 360)
            assert len(im.convert("RGB").getcolors(maxcolors=1 << 16)) > 20   # a drawn picture, not a blank


def test_render_with_bad_view_options_says_what_is_wrong(tmp_path):
    bad = roofbeat("render", "-o", str(tmp_path / "x.gif"), "--frame", "top")
    assert bad.returncode == 2 and "--frame" in bad.stderr and "end" in bad.stderr and "plan" in bad.stderr
    assert "Traceback" not in bad.stderr
    trackside = roofbeat("render", "-o", str(tmp_path / "y.gif"), "--frame", "plan", "--trackside", "50 m")
    assert trackside.returncode == 2 and "--trackside" in trackside.stderr and "plan" in trackside.stderr
    assert "Traceback" not in trackside.stderr and not (tmp_path / "y.gif").exists()
    broken = tmp_path / "broken.toml"
    broken.write_text(SIDE_WIND.replace('offset = "-1.0 m"', 'offset = "-3.0 m"'))
    out = roofbeat("render", str(broken), "-o", str(tmp_path / "z.gif"), "--frame", "end")
    assert out.returncode == 3 and "start.offset" in out.stderr and "Traceback" not in out.stderr


def test_readout_balance_margin_is_the_smaller_of_both_planes():
    # The bundled curve scene at 7.0 s: the performer is stepping sideways, the margin across the track
    # negative while the one along it is positive; the readout gives the smaller, says it is across,
    # and rounds it down.
    from physics.scene_load import load_scene
    from preview.frame import ViewSettings
    from preview.panels import readout_rows
    from preview.session import make_playback
    from tests.conftest import REPO
    pb = make_playback(load_scene(REPO / "scenes" / "curve_too_fast.toml"))
    i = pb.trajectory.index_at(7.0)
    along, across = pb.trajectory.record["balance_margin"][i], pb.trajectory.record["frontal_margin"][i]
    assert across < 0 < along
    rows, _, _ = readout_rows(pb, 7.0, ViewSettings())
    value = dict((r[0], r[1]) for r in rows)["balance margin"]
    assert value.endswith("(across)") and value.startswith("-")
    assert float(value.split()[0]) == pytest.approx(math.floor(across * 100) / 100, abs=1e-9)
