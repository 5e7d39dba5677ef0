"""The air over the roof in the pictures: the profile's arrows (side views) and bars (end view) drawn from
the recorded layer and the engine's own share at each height, only when the scene's profile is on; the
readout's wind at body height and the free-stream bound; and road words on a road consist's pictures.

Real renders: pygame under SDL_VIDEODRIVER=dummy for pixels, the recording canvas for what is drawn
where."""

from __future__ import annotations

import math
import re
import types

import numpy as np
import pytest

from physics.records import Mode
from physics.roof_air import without_roof_air
from physics.scene_load import load_scene, parse_scene
from physics.units import display
from preview import end_view
from preview.canvas import RecordingCanvas
from preview.export import frame_pixels
from preview.frame import ViewSettings, cameras, draw_frame, main_area
from preview.palette import ROOF_AIR, ROOF_AIR_ZONE
from preview.panels import legend_rows, readout_rows
from preview.session import Playback, make_playback
from preview.world import WIND_ABOVE, WIND_PER_METRE
from tests.conftest import REPO, scene_text

SIZE = (1280, 720)
T = 8.0


@pytest.fixture(scope="module")
def prone():
    return make_playback(load_scene(REPO / "scenes" / "rear_car_prone.toml"))


@pytest.fixture(scope="module")
def prone_off(prone):
    return make_playback(without_roof_air(prone.scene))


@pytest.fixture(scope="module")
def road():
    return make_playback(load_scene(REPO / "scenes" / "airfield_flatbed.toml"))


def near_front(position: str):
    """One 20 m car at 20 m/s, its bluff front 20 m ahead of nothing: a thin layer, and within 4 m of the
    front the low-speed zone behind its edge."""
    text = scene_text(speed="20 m/s", air_extra='roof_profile = "on"',
                      start=f'car = 1\nposition = "{position}"\nfrom = "front"')
    return make_playback(parse_scene(text, "<near front>"))


def drawn(pb, t, view, size=SIZE) -> RecordingCanvas:
    canvas = RecordingCanvas(size=size)
    draw_frame(canvas, pb, t, view)
    return canvas


def view_pixels(pb, t, frame):
    """The views' part of a rendered frame (above the legend, the timeline and the caution)."""
    view = ViewSettings(frame=frame)
    height = main_area(SIZE, view, pb.scene.units, pb.scene)[1]
    return frame_pixels(pb, t, view, SIZE)[:height]


def count(pixels, colour) -> int:
    return int(np.all(pixels == np.array(colour, dtype=np.uint8), axis=-1).sum())


def arrows(canvas: RecordingCanvas) -> list[tuple[tuple, tuple]]:
    """(tail, tip) of each arrow drawn with the profile: a line then its head's triangle, tip first."""
    calls = [c for c in canvas.tagged("roof-air") if c[2] == ROOF_AIR]
    out = []
    for a, b in zip(calls, calls[1:]):
        if a[0] == "line" and b[0] == "polygon":
            out.append((a[1][0], b[1][0]))
    return out


# ------------------------------------------------------------------ pixels

@pytest.mark.parametrize("frame", ["car", "ground", "end"])
def test_the_profile_is_drawn_only_when_the_scene_has_it_on(prone, prone_off, frame):
    on, off = view_pixels(prone, T, frame), view_pixels(prone_off, T, frame)
    assert count(on, ROOF_AIR) > 200
    assert count(off, ROOF_AIR) == 0
    # Off, the same step of the same beat has no layer to draw; the rest of the picture is the same kind.
    assert np.isfinite(prone.trajectory.record["flow_delta"][prone.trajectory.index_at(T)])
    assert np.isnan(prone_off.trajectory.record["flow_delta"][prone_off.trajectory.index_at(T)])


def test_hiding_the_apparent_wind_hides_the_profile_and_greys_its_legend_row(prone):
    view = ViewSettings(frame="car")
    hidden = view.toggled("wind")
    height = main_area(SIZE, view, "metric", prone.scene)[1]
    assert count(frame_pixels(prone, T, hidden, SIZE)[:height], ROOF_AIR) == 0
    shown = [r for r in legend_rows(view, "metric", 50.0, prone.scene) if r[0] == "layer"]
    greyed = [r for r in legend_rows(hidden, "metric", 50.0, prone.scene) if r[0] == "layer"]
    assert len(shown) == 1 and shown[0][1][0] == ROOF_AIR
    assert len(greyed) == 1 and greyed[0][1][0] != ROOF_AIR


def test_the_legend_names_the_profile_only_for_a_scene_with_it_on(prone, prone_off, road):
    for frame in ("car", "end"):
        view = ViewSettings(frame=frame)
        assert any(k == "layer" for k, _ in legend_rows(view, "metric", 50.0, prone.scene))
        assert not any(k == "layer" for k, _ in legend_rows(view, "metric", 50.0, prone_off.scene))
        assert not any(k == "layer" for k, _ in legend_rows(view, "metric", 50.0, road.scene))
    canvas = drawn(prone, T, ViewSettings(frame="car"))
    assert any(s.startswith("air over the roof by height") for t, s, _ in canvas.text_boxes() if t == "legend")


# -------------------------------------------------------- what is drawn where

def test_side_view_arrows_are_the_engines_share_of_the_air_at_their_heights(prone):
    tr = prone.trajectory
    i = tr.index_at(T)
    r = tr.record[i]
    canvas = drawn(prone, T, ViewSettings(frame="car"))
    cam = cameras(prone, T, ViewSettings(frame="car"), SIZE)[0]
    found = arrows(canvas)
    assert 4 <= len(found) <= 6
    car = prone.scene.cars[prone.scene.car_at(float(r["pivot_x"]))]
    roof = car.roof_z(float(r["pivot_y"]))
    wind_height = float(tr.com_path[i, 1]) + WIND_ABOVE - roof
    relative = float(r["wind_x"]) - float(r["speed"])
    heights = []
    for tail, tip in found:
        assert tail[1] == pytest.approx(tip[1])            # level
        assert tip[0] < tail[0]                            # the air moves back past the car: pointing back
        z = cam.to_world(*tip)[1] - roof
        heights.append(z)
        share = float(tr.air_share(i, [z])[0])
        speed = (tail[0] - tip[0]) / cam.scale * WIND_PER_METRE
        assert speed == pytest.approx(share * abs(relative), rel=1e-6, abs=1e-6)
        assert abs(z - wind_height) >= 0.2 - 1e-9         # clear of the apparent wind arrow
    assert min(heights) == pytest.approx(0.1, abs=1e-6) and max(heights) <= 2.0 + 1e-6
    # Slower near the roof: in a layer 4.8 m deep every height drawn is inside it.
    speeds = [tail[0] - tip[0] for tail, tip in sorted(found, key=lambda a: -a[1][1])]
    assert speeds == sorted(speeds) and speeds[0] < 0.75 * speeds[-1]
    ends = tr.ends(i)
    assert min(tip[0] for _, tip in found) > max(cam.to_screen(x, z)[0] for x, z in ends.reshape(-1, 2))


def test_a_thin_layer_is_dashed_at_its_top_and_labelled_with_its_depth():
    pb = near_front("10 m")
    tr = pb.trajectory
    i = tr.index_at(2.0)
    delta = float(tr.record["flow_delta"][i])
    assert 0.05 < delta < 0.5 and float(tr.record["flow_zone"][i]) == 0.0
    view = ViewSettings(frame="car")
    canvas = drawn(pb, 2.0, view)
    cam = cameras(pb, 2.0, view, SIZE)[0]
    words = f"air layer {display(delta, 'length', 'metric', '.1f')}"
    assert words in [s for t, s, _ in canvas.text_boxes() if t == "roof-air"]
    dashes = [c[1] for c in canvas.tagged("roof-air") if c[0] == "line" and c[1][0][1] == c[1][1][1]
              and abs(c[1][1][0] - c[1][0][0]) <= 6.5]
    assert len(dashes) >= 3
    roof = pb.scene.cars[0].roof_height
    assert cam.to_world(*dashes[0][0])[1] - roof == pytest.approx(delta, abs=1.5 / cam.scale)
    # Heights drawn: up to a quarter above the top, and at least to 1 m.
    tips = [cam.to_world(*tip)[1] - roof for _, tip in arrows(canvas)]
    assert max(tips) == pytest.approx(1.0, abs=1e-6)
    assert not canvas_has_zone(canvas)


def canvas_has_zone(canvas) -> bool:
    return any(c[2] == ROOF_AIR_ZONE for c in canvas.tagged("roof-air"))


def test_the_low_speed_zone_behind_a_bluff_front_is_shaded_to_its_height():
    pb = near_front("2 m")
    tr = pb.trajectory
    i = tr.index_at(2.0)
    zone = float(tr.record["flow_zone"][i])
    assert zone > 0.0
    for frame in ("car", "end"):
        view = ViewSettings(frame=frame)
        canvas = drawn(pb, 2.0, view)
        bands = [c for c in canvas.tagged("roof-air") if c[2] == ROOF_AIR_ZONE]
        assert len(bands) == 1
        if frame == "car":
            cam = cameras(pb, 2.0, view, SIZE)[0]
            x, y, w, h, _ = bands[0][1]
            assert h / cam.scale == pytest.approx(zone, abs=1.5 / cam.scale)
    far = near_front("10 m")
    assert not canvas_has_zone(drawn(far, 2.0, ViewSettings(frame="end")))


def test_end_view_bars_are_the_speed_along_the_track_beside_the_figure(prone):
    tr = prone.trajectory
    i = tr.index_at(T)
    r = tr.record[i]
    view = ViewSettings(frame="end")
    canvas = drawn(prone, T, view)
    cam = cameras(prone, T, view, SIZE)[0]
    bars = [c[1] for c in canvas.tagged("roof-air") if c[0] == "line" and c[2] == ROOF_AIR
            and abs(c[1][0][1] - c[1][1][1]) < 1e-6 and abs(c[1][1][0] - c[1][0][0]) > 10]
    assert 4 <= len(bars) <= 6
    relative = abs(float(r["wind_x"]) - float(r["speed"]))
    car = prone.scene.cars[prone.scene.car_at(float(r["pivot_x"]))]
    roof = car.roof_z(float(r["pivot_y"]))
    figure = [p for c in canvas.tagged("figure") if c[0] == "line" for p in c[1]]
    for (x0, y), (x1, _) in bars:
        z = (cam.ground_y - y) / cam.scale - roof        # the roof is level here (straight track, no ride)
        share = float(tr.air_share(i, [z])[0])
        assert abs(x1 - x0) / cam.scale * WIND_PER_METRE == pytest.approx(share * relative, rel=1e-6)
        assert max(x0, x1) < min(p[0] for p in figure)   # beside the figure, on its left, not through it


# ----------------------------------------------------------------- readout

def test_readout_gives_the_wind_at_body_height_only_with_the_profile_on(prone, prone_off):
    tr = prone.trajectory
    i = tr.index_at(T)
    rows, _, _ = readout_rows(prone, T, ViewSettings())
    values = {name: value for name, value, _ in rows}
    assert "apparent wind" in values
    body = float(tr.record["body_wind"][i])
    assert values["wind at body height"].startswith(display(body, "wind", "metric", ".1f"))
    free = math.hypot(float(tr.record["app_x"][i]), float(tr.record["app_y"][i]))
    assert f"({100 * body / free:.0f} % of free stream)" in values["wind at body height"]
    assert body < free
    off_rows, _, _ = readout_rows(prone_off, T, ViewSettings())
    assert "wind at body height" not in [name for name, _, _ in off_rows]
    texts = drawn(prone, T, ViewSettings()).texts()
    assert "wind at body height" in texts


def test_readout_says_the_free_stream_bound_when_it_differs(prone, prone_off):
    bound = prone.summary["uniform_air"]
    assert bound is not None and bound["verdict"] != prone.summary["verdict"]   # the scene's own claim
    _, _, why = readout_rows(prone, T, ViewSettings())
    assert f"free-stream bound: {bound['verdict'].upper()} (air over the roof off)" in why
    assert any(s.startswith("free-stream bound:") for s in drawn(prone, T, ViewSettings()).texts())
    # The same verdict either way, or the profile off: no such line.
    same = Playback(prone.trajectory, dict(prone.summary, uniform_air=dict(bound, verdict=prone.summary["verdict"])))
    assert not any(w.startswith("free-stream bound") for w in readout_rows(same, T, ViewSettings())[2])
    assert not any(w.startswith("free-stream bound") for w in readout_rows(prone_off, T, ViewSettings())[2])


def test_the_layer_label_keeps_off_the_panels_and_other_labels(prone):
    for frame, t in (("car", 8.0), ("ground", 8.0), ("end", 8.0), ("car", 1.0), ("split", 2.0)):
        for size in ((960, 540), SIZE):
            canvas = drawn(prone, t, ViewSettings(frame=frame), size)
            boxes = canvas.text_boxes()
            mine = [b for tag, s, b in boxes if tag == "roof-air"]
            others = [b for tag, s, b in boxes if tag not in ("roof-air", "consist") and s]
            for a in mine:
                assert a[0] >= 0 and a[1] >= 0 and a[0] + a[2] <= size[0] and a[1] + a[3] <= size[1]
                for b in others:
                    w = min(a[0] + a[2], b[0] + b[2]) - max(a[0], b[0])
                    h = min(a[1] + a[3], b[1] + b[3]) - max(a[1], b[1])
                    assert w <= 1.0 or h <= 1.0, (frame, t, size)


# ------------------------------------------------------------- road words

RAIL_WORDS = re.compile(r"\b(rail|rails|track|track's|sleeper|sleepers|trackside)\b", re.IGNORECASE)


def rail_words_in(canvas) -> list[str]:
    """Texts drawn with a rail word in them, the caution line aside (it names rail operators on purpose)."""
    return [s for tag, s, _ in canvas.text_boxes() if tag != "caution" and RAIL_WORDS.search(s)]


def test_road_pictures_use_road_words(road):
    found = []
    for frame in ("car", "ground", "split", "end", "plan"):
        for t in (1.0, 8.0, 15.0):
            found += rail_words_in(drawn(road, t, ViewSettings(frame=frame, show_help=True)))
    found += rail_words_in(drawn(road, 8.0, ViewSettings(frame="ground", trackside=40.0)))
    assert found == []
    rows = [p[-1] for _, p in end_view.legend_rows(ViewSettings(frame="end"), "metric", 50.0, road.scene)]
    assert "structure over the road" in rows and not any(RAIL_WORDS.search(w) for w in rows)
    banner = drawn(road, 8.0, ViewSettings(frame="ground", trackside=40.0)).tagged("banner")
    assert any("roadside camera at 40 m" in c[1][1] for c in banner if c[0] == "text")


def test_rail_pictures_keep_rail_words(prone):
    rows = [p[-1] for _, p in end_view.legend_rows(ViewSettings(frame="end"), "metric", 50.0, prone.scene)]
    assert "structure deck over the track" in rows
    texts = drawn(prone, T, ViewSettings(frame="car")).texts()
    assert "lean along track" in texts


@pytest.mark.parametrize("mode, road_words, rail_words", [
    (Mode.FLIGHT, "above the road", "above rail"),
    (Mode.GONE, "of the lane's centre", "of the track's centreline"),
])
def test_end_view_facts_off_the_roof_use_the_consists_words(road, prone, mode, road_words, rail_words):
    for pb, want, unwanted in ((road, road_words, rail_words), (prone, rail_words, road_words)):
        tr = pb.trajectory
        record = tr.record.copy()
        record["mode"][0] = mode
        com = tr.com_path3.copy()
        com[0] = (0.0, 2.0, 1.0)
        stand_in = types.SimpleNamespace(record=record, com_path3=com, scene=pb.scene)
        lines = end_view.fact_lines(stand_in, 0, pb.scene.cars[-1], "metric")
        assert len(lines) == 1 and want in lines[0] and unwanted not in lines[0]


def test_road_scene_with_a_profile_draws_it_too():
    # The profile is a scene choice on a road consist as on a train: same drawing, road words around it.
    scene = load_scene(REPO / "scenes" / "airfield_flatbed.toml", ['air.roof_profile="on"'])
    pb = make_playback(scene)
    t = 8.0
    assert np.isfinite(pb.trajectory.record["flow_delta"][pb.trajectory.index_at(t)])
    assert count(view_pixels(pb, t, "end"), ROOF_AIR) > 100
    assert rail_words_in(drawn(pb, t, ViewSettings(frame="end"))) == []
