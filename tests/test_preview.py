"""The preview: drawing logic through the recording canvas, real pixels under
SDL_VIDEODRIVER=dummy, exports that decode, and the real window driven by keys."""

import os
import subprocess
import sys

import numpy as np
import pytest

from physics.scene_load import load_scene
from preview.camera import CAR, GROUND, camera_for
from preview.canvas import RecordingCanvas
from preview.export import frame_pixels, write_frames
from preview.session import make_playback
from preview.frame import ViewSettings, cameras, draw_frame
from preview.palette import AERO, CAR_BODY, FAILURE, INK
from preview.world import FORCE_PER_METRE
from tests.conftest import REPO

SIZE = (1280, 720)


@pytest.fixture(scope="module")
def heritage():
    return make_playback(load_scene(REPO / "scenes" / "heritage_excursion.toml"))


@pytest.fixture(scope="module")
def late_duck():
    return make_playback(load_scene(REPO / "scenes" / "footbridge_late_duck.toml"))


def near(pixels, point, color, radius=6, tolerance=40):
    """Whether any pixel within radius of point is within tolerance of color."""
    x, y = int(round(point[0])), int(round(point[1]))
    patch = pixels[max(0, y - radius):y + radius + 1, max(0, x - radius):x + radius + 1].astype(int)
    return bool(np.any(np.abs(patch - np.array(color)).max(axis=-1) <= tolerance))


def test_camera_maps_both_ways(heritage):
    for frame in (CAR, GROUND):
        cam = camera_for(heritage.trajectory, 5.0, frame, SIZE)
        for x, z in [(-25.0, 3.9), (-10.0, 0.0), (3.0, 6.0)]:
            px, py = cam.to_screen(x, z)
            assert cam.to_world(px, py) == pytest.approx((x, z), abs=1e-9)
        # A ground point and the car point on top of it at this moment land on the same pixel.
        s = cam.distance
        assert cam.ground_to_screen(-25.0 + s, 1.0) == pytest.approx(cam.to_screen(-25.0, 1.0))


def test_recording_canvas_sees_figure_where_the_trajectory_says(heritage):
    t = 2.0
    canvas = RecordingCanvas(SIZE)
    view = ViewSettings(frame=CAR)
    draw_frame(canvas, heritage, t, view)
    cam = cameras(heritage, t, view, SIZE)[0]
    i = heritage.trajectory.index_at(t)
    trunk = heritage.trajectory.ends(i)[1]
    expected = (cam.to_screen(*trunk[0]), cam.to_screen(*trunk[1]))
    lines = [c[1] for c in canvas.tagged("figure") if c[0] == "line"]
    assert any(np.allclose(np.array(line), np.array(expected), atol=1e-6) for line in lines)
    texts = canvas.texts()
    assert any("CAR FRAME" in s for s in texts)
    assert any("not a safety certificate" in s for s in texts)
    assert any(s.startswith("00:00:02:00") for s in texts)


def test_vector_toggles_change_what_is_drawn(heritage):
    full, bare = RecordingCanvas(SIZE), RecordingCanvas(SIZE)
    draw_frame(full, heritage, 2.0, ViewSettings())
    draw_frame(bare, heritage, 2.0, ViewSettings(vectors=frozenset()))
    assert full.tagged("aero") and full.tagged("weight") and full.tagged("normal")
    assert not bare.tagged("aero") and not bare.tagged("weight")


def test_pixels_show_figure_vector_and_failure_marker(late_duck):
    tr = late_duck.trajectory
    failure = late_duck.summary["first_failure"]
    assert failure["kind"] == "strike"
    view = ViewSettings(frame=CAR)
    t = failure["time_s"] - 0.5
    pixels = frame_pixels(late_duck, t, view, SIZE)
    cam = cameras(late_duck, t, view, SIZE)[0]
    i = tr.index_at(t)
    trunk_mid = tr.ends(i)[1].mean(axis=0)
    assert near(pixels, cam.to_screen(*trunk_mid), INK)
    com = tuple(tr.com_path[i])
    aero = (tr.field("aero_x")[i], tr.field("aero_z")[i])
    tip = cam.to_screen(com[0] + 0.8 * aero[0] / FORCE_PER_METRE, com[1] + 0.8 * aero[1] / FORCE_PER_METRE)
    assert near(pixels, tip, AERO, radius=4)
    # The failure marker appears at the failure place once its time has come, and not before.
    after = failure["time_s"] + 0.3
    cam = cameras(late_duck, after, view, SIZE)[0]
    marker = cam.to_screen(failure["x_car_m"], tr.com_path[tr.index_at(failure["time_s"]), 1])
    assert near(frame_pixels(late_duck, after, view, SIZE), marker, FAILURE, radius=18, tolerance=30)
    assert not near(pixels, marker, FAILURE, radius=18, tolerance=30)


def test_car_frame_keeps_the_consist_still_and_moves_the_scenery(heritage):
    t1, t2 = 1.0, 1.5   # the performer stands still
    view = ViewSettings(frame=CAR)
    a, b = frame_pixels(heritage, t1, view, SIZE), frame_pixels(heritage, t2, view, SIZE)
    cam = cameras(heritage, t1, view, SIZE)[0]
    car = heritage.scene.cars[1]
    body_y = int(cam.to_screen(0, car.roof_height * 0.6)[1])
    rail_y = int(cam.to_screen(0, 0.0)[1])
    assert np.array_equal(a[body_y, 420:860], b[body_y, 420:860])
    assert not np.array_equal(a[rail_y + 3:rail_y + 8], b[rail_y + 3:rail_y + 8])   # sleepers stream past


def test_ground_frame_keeps_the_scenery_still_and_moves_the_consist(heritage):
    view = ViewSettings(frame=GROUND)
    cams = [cameras(heritage, t, view, SIZE)[0] for t in (1.0, 1.2)]
    assert cams[0].center_x == cams[1].center_x   # the camera holds between re-frames
    a, b = (frame_pixels(heritage, t, view, SIZE) for t in (1.0, 1.2))
    rail_y = int(cams[0].to_screen(0, 0.0)[1])
    assert np.array_equal(a[rail_y + 3:rail_y + 8], b[rail_y + 3:rail_y + 8])
    wheel_y = int(cams[0].to_screen(0, 0.42)[1])
    assert not np.array_equal(a[wheel_y], b[wheel_y])


def test_split_view_has_both_frames(heritage):
    canvas = RecordingCanvas(SIZE)
    draw_frame(canvas, heritage, 3.0, ViewSettings(frame="split"))
    texts = canvas.texts()
    assert any("GROUND FRAME" in s for s in texts) and any("CAR FRAME" in s for s in texts)
    pixels = frame_pixels(heritage, 3.0, ViewSettings(frame="split"), SIZE)
    half = (720 - 62) // 2
    for top in (0, half):
        band = pixels[top:top + half].reshape(-1, 3).astype(int)
        assert np.any(np.abs(band - np.array(CAR_BODY)).max(axis=1) == 0)


def test_gif_and_mp4_exports_decode_with_the_right_frames(heritage, tmp_path):
    from PIL import Image
    times = np.arange(0, 1.0, 1 / 10)
    gif = write_frames(heritage, times, ViewSettings(frame="split"), (640, 360), tmp_path / "clip.gif")
    with Image.open(gif) as im:
        assert im.n_frames == len(times) and im.size == (640, 360)
        assert im.info["duration"] == 100
    import imageio_ffmpeg
    mp4 = write_frames(heritage, times, ViewSettings(), (640, 352), tmp_path / "clip.mp4")
    reader = imageio_ffmpeg.read_frames(str(mp4))
    meta = next(reader)
    frames = list(reader)
    assert meta["size"] == (640, 352) and len(frames) == len(times)
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_interrupted_export_leaves_nothing_under_the_name(heritage, tmp_path, monkeypatch):
    import preview.export as export
    calls = {"n": 0}
    real = export.frame_pixels

    def failing(*args):
        calls["n"] += 1
        if calls["n"] > 3:
            raise KeyboardInterrupt
        return real(*args)
    monkeypatch.setattr(export, "frame_pixels", failing)
    for name in ("cut.gif", "cut.mp4", "cut_frames"):
        calls["n"] = 0
        with pytest.raises(KeyboardInterrupt):
            write_frames(heritage, np.arange(0, 1, 0.1), ViewSettings(), (640, 352), tmp_path / name)
        assert not (tmp_path / name).exists()
    assert list(tmp_path.iterdir()) == []


def test_render_command_writes_png_frames(tmp_path):
    env = dict(os.environ, SDL_VIDEODRIVER="dummy")
    out = tmp_path / "frames"
    run = subprocess.run([sys.executable, "-m", "preview.cli", "render", "-o", str(out), "--from", "1", "--to", "1.5",
                          "--size", "640x360", "--frame", "ground"], cwd=REPO, env=env, capture_output=True, text=True,
                         timeout=300)
    assert run.returncode == 0, run.stderr
    assert len(list(out.glob("frame_*.png"))) == 13
    bad = subprocess.run([sys.executable, "-m", "preview.cli", "render", "-o", str(tmp_path / "x.gif"), "--size", "big"],
                         cwd=REPO, env=env, capture_output=True, text=True, timeout=300)
    assert bad.returncode == 2 and "--size" in bad.stderr and "Traceback" not in bad.stderr  # an option value: usage


def test_play_without_display_writes_a_clip(tmp_path):
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "SDL_VIDEODRIVER")}
    run = subprocess.run([sys.executable, "-m", "preview.cli", "play", str(REPO / "scenes" / "footbridge_duck.toml")],
                         cwd=tmp_path, env=env, capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stderr
    assert "no display available" in run.stderr and len(run.stderr.strip().splitlines()) == 1
    assert (tmp_path / "roofbeat-footbridge_duck.gif").stat().st_size > 10_000


def test_window_controls_drive_the_real_loop(tmp_path):
    from preview.window import run_window
    path = tmp_path / "scene.toml"
    path.write_text((REPO / "scenes" / "heritage_excursion.toml").read_text())
    scene = load_scene(path)
    keys = {2: ["f"], 3: ["2"], 4: ["]"], 5: ["space"], 6: ["right", "right"], 7: ["p"], 8: ["h"],
            9: ["up"] * 24, 10: ["0"], 11: ["escape"]}
    state = run_window(scene, path, [], size=(640, 360), max_frames=50, scripted_keys=keys, screenshot_dir=tmp_path)
    assert state.view.frame == "ground"
    assert "aero" not in state.view.vectors
    assert state.rate_index == 4 and not state.playing
    assert state.view.show_help
    assert state.speed_delta == 0.0 and state.playback.summary["verdict"] != "fails"
    assert len(list(tmp_path.glob("roofbeat-*.png"))) == 1
    assert not state.running


def test_what_if_speed_resimulates_with_a_new_verdict(heritage):
    from preview.window import PlayerState, handle_key
    state = PlayerState(heritage, ViewSettings())
    for _ in range(24):
        handle_key(state, "up")
    assert state.playback.summary["verdict"] == "fails"
    assert "+120 km/h" in state.view.what_if


def test_broken_save_keeps_the_last_good_run(tmp_path, heritage):
    import time

    from preview.window import PlayerState, SceneWatcher
    path = tmp_path / "scene.toml"
    text = (REPO / "scenes" / "heritage_excursion.toml").read_text()
    path.write_text(text)
    state = PlayerState(heritage, ViewSettings())
    watcher = SceneWatcher(path, [])
    time.sleep(0.01)
    path.write_text(text.replace('speed = "40 km/h"', 'speed = "40"'))
    os.utime(path, ns=(time.time_ns(), time.time_ns() + 1_000_000))
    watcher.poll(state)
    assert "motion.speed" in state.view.message and state.playback is heritage
    path.write_text(text.replace('speed = "40 km/h"', 'speed = "60 km/h"'))
    os.utime(path, ns=(time.time_ns(), time.time_ns() + 2_000_000))
    watcher.poll(state)
    assert state.view.message == "" and state.playback is not heritage
    assert state.playback.trajectory.field("speed")[0] == pytest.approx(60 / 3.6)


def test_gif_keeps_the_preview_colours_exactly(heritage, late_duck, tmp_path):
    from PIL import Image
    failure = late_duck.summary["first_failure"]["time_s"]
    gif = write_frames(late_duck, np.array([0.0, failure + 0.3]), ViewSettings(), (640, 360), tmp_path / "c.gif")
    with Image.open(gif) as im:
        im.seek(1)
        colours = {c for _, c in im.convert("RGB").getcolors(maxcolors=1 << 16)}
    assert FAILURE in colours and INK in colours and CAR_BODY in colours
