"""The preview with two performers: both figures in every view, told apart and named; the force between
them on each body while it acts; the readout following one (a key cycles it); each one's failure marker;
a timeline lane each; the running verdict the worse of the two; both in the CSV and glTF exports. And a
one-performer scene draws none of it.

Real parts: the bundled pair scene simulated by the engine, drawn by the real frame code on a recording
canvas and on a pygame surface (SDL's dummy video driver).
"""

from __future__ import annotations

import csv
import json
import math
import struct

import numpy as np
import pytest

from physics.scene_load import load_scene, parse_scene
from physics.verdict import verdict_so_far
from preview import panels, world
from preview.canvas import RecordingCanvas
from preview.frame import ViewSettings, cameras, draw_frame
from preview.palette import INK, PARTNER, STRUCTURE, TOUCH
from preview.session import make_playback
from tests.conftest import REPO

PAIR = REPO / "scenes" / "roof_fight_shove.toml"
ONE = REPO / "scenes" / "heritage_excursion.toml"
VIEWS = ("car", "ground", "split", "end", "plan")
SHOVE = 2.2       # s: Dana's shove on Eli acts from 2.0 s to 2.4 s
QUIET = 1.0       # s: no force between them


@pytest.fixture(scope="module")
def pair():
    return make_playback(load_scene(PAIR))


@pytest.fixture(scope="module")
def fast_pair():
    """The same fight at 110 km/h: the shove slips Eli, who goes down and off the end."""
    return make_playback(load_scene(PAIR, ['motion.speed="110 km/h"']))


@pytest.fixture(scope="module")
def one():
    return make_playback(load_scene(ONE))


def drawn(pb, t, view, size=(1280, 720)) -> RecordingCanvas:
    canvas = RecordingCanvas(size=size)
    draw_frame(canvas, pb, t, view)
    return canvas


def texts(canvas, tag) -> list[str]:
    return [s for tg, s, _ in canvas.text_boxes() if tg == tag]


# ------------------------------------------------------------------ figures

@pytest.mark.parametrize("frame", VIEWS)
def test_both_figures_and_both_names_in_every_view(pair, frame):
    canvas = drawn(pair, SHOVE, ViewSettings(frame=frame))
    assert canvas.tagged("figure") and canvas.tagged("partner"), "one of the two figures is missing"
    assert {c[2] for c in canvas.tagged("partner") if c[0] == "line"} <= {PARTNER, (184, 158, 140)}
    names = texts(canvas, "names")
    per_view = 2 if frame == "split" else 1
    assert sum(n.startswith("Dana") for n in names) == per_view
    assert sum(n.startswith("Eli") for n in names) == per_view


def test_second_figure_pixels_are_where_its_record_puts_it(pair):
    """On a real pygame surface: umber pixels round Eli's recorded trunk, ink round Dana's, none of one
    tone at the other's place."""
    from physics import body
    from preview.export import frame_pixels
    size, view = (1280, 720), ViewSettings(frame="car")
    pixels = frame_pixels(pair, SHOVE, view, size)
    cam = cameras(pair, SHOVE, view, size)[0]

    def count(rgb, tr):
        i = tr.index_at(SHOVE)
        (x0, z0), (x1, z1) = tr.ends(i)[body.TRUNK]
        px, py = cam.to_screen((x0 + x1) / 2, (z0 + z1) / 2)
        patch = pixels[int(py) - 6:int(py) + 7, int(px) - 6:int(px) + 7].reshape(-1, 3)
        return int((np.abs(patch.astype(int) - rgb).sum(axis=1) == 0).sum())

    dana, eli = pair.trajectory, pair.trajectory.partners[0]
    assert abs(float(dana.com_path[dana.index_at(SHOVE), 0] - eli.com_path[eli.index_at(SHOVE), 0])) > 0.3
    assert count(PARTNER, eli) >= 4 and count(INK, dana) >= 4
    assert count(PARTNER, dana) == 0 and count(INK, eli) == 0


@pytest.mark.parametrize("frame", VIEWS)
def test_names_and_labels_never_overlap(pair, fast_pair, frame):
    from tests import test_pictures as tp
    placed = tp.PLACED | {"names"}
    for pb in (pair, fast_pair):
        for follow in (0, 1):
            for t in (0.3, SHOVE, 3.0, pb.scene.duration - 0.05):
                for size in ((960, 540), (1280, 720)):
                    canvas = drawn(pb, t, ViewSettings(frame=frame, follow=follow), size)
                    boxes = [(tg, s, b) for tg, s, b in canvas.text_boxes() if tg in placed and s]
                    for k, (ta, a, ba) in enumerate(boxes):
                        for tb, b, bb in boxes[k + 1:]:
                            assert tp.overlap(ba, bb) <= 1.0, f"{frame} t={t}: {ta} {a!r} overlaps {tb} {b!r}"
                    assert not tp.layout_faults(canvas), tp.layout_faults(canvas)


# -------------------------------------------------------------------- touch

def touch_lines(canvas):
    return [c for c in canvas.tagged("touch") if c[0] == "line"]


@pytest.mark.parametrize("frame", ("car", "ground", "plan"))
def test_touch_arrows_only_while_the_force_acts_equal_and_opposite(pair, frame):
    assert not drawn(pair, QUIET, ViewSettings(frame=frame)).tagged("touch")
    assert not drawn(pair, 3.0, ViewSettings(frame=frame)).tagged("touch")
    lines = touch_lines(drawn(pair, SHOVE, ViewSettings(frame=frame)))
    assert len(lines) == 2, lines
    dx = [b[0] - a[0] for (a, b), *_ in (c[1:] for c in lines)]
    assert dx[0] * dx[1] < 0 and math.isclose(abs(dx[0]), abs(dx[1]), rel_tol=0.25)
    assert all(c[2] == TOUCH for c in lines)


def test_touch_arrow_heads_sit_on_each_body_touch_point(pair):
    """A push is drawn ending at the point it pushes on: each head's tip is the record's touch point."""
    view = ViewSettings(frame="car")
    canvas = drawn(pair, SHOVE, view)
    cam = cameras(pair, SHOVE, view, canvas.size)[0]
    tips = [c[1][0] for c in canvas.tagged("touch") if c[0] == "polygon"]
    for tr in (pair.trajectory,) + pair.trajectory.partners:
        r = tr.record[tr.index_at(SHOVE)]
        point = cam.to_screen(float(r["touch_x"]), float(r["touch_z"]))
        assert min(math.dist(point, tip) for tip in tips) < 1.0


def test_end_view_marks_a_push_along_the_track(pair):
    canvas = drawn(pair, SHOVE, ViewSettings(frame="end"))
    rings = [c for c in canvas.tagged("touch") if c[0] == "circle" and c[1][1] == 7]
    assert len(rings) == 2
    assert not drawn(pair, QUIET, ViewSettings(frame="end")).tagged("touch")


def test_legend_says_the_touch_colour_for_a_pair_only(pair, one):
    for frame in VIEWS:
        rows = panels.legend_rows(ViewSettings(frame=frame), "metric", 50.0, pair.scene)
        assert any(kind == "force" and p[0] == TOUCH and "between performers" in p[-1] for kind, p in rows)
        rows = panels.legend_rows(ViewSettings(frame=frame), "metric", 50.0, one.scene)
        assert not any(kind == "force" for kind, _ in rows)


# ------------------------------------------------------------- the readout

def test_tab_cycles_the_followed_performer_and_the_readout_says_who(pair, one):
    from preview.window import PlayerState, handle_key
    state = PlayerState(pair, ViewSettings())
    rows = dict((n, v) for n, v, _ in panels.readout_rows(pair, SHOVE, state.view)[0])
    assert rows["following"].startswith("Dana") and rows["action"] == "shove Eli"
    handle_key(state, "tab")
    assert state.view.follow == 1
    rows = dict((n, v) for n, v, _ in panels.readout_rows(pair, SHOVE, state.view)[0])
    assert rows["following"].startswith("Eli") and rows["action"] == "take the shove"
    canvas = drawn(pair, SHOVE, state.view)
    assert any(s.startswith("Eli (2 of 2") for s in texts(canvas, "readout"))
    handle_key(state, "tab")
    assert state.view.follow == 0
    single = PlayerState(one, ViewSettings())
    handle_key(single, "tab")
    assert single.view == ViewSettings()
    assert "following" not in [n for n, _, _ in panels.readout_rows(one, 1.0, single.view)[0]]


def test_the_units_key_reaches_both_performers(pair):
    # The window's U key: every number in the display units, whoever the readout follows (the second
    # performer's own scene once kept the units of the file).
    from preview.window import PlayerState, switch_units
    state = PlayerState(pair, ViewSettings(follow=1))
    switch_units(state)
    pb = state.playback
    assert [run.scene.units for run in (pb.trajectory,) + pb.trajectory.partners] == ["imperial", "imperial"]
    rows = dict((n, v) for n, v, _ in panels.readout_rows(pb, SHOVE, state.view)[0])
    assert rows["following"].startswith("Eli")
    assert "mph" in rows["vehicle speed"] and "km/h" not in " ".join(rows.values())


def test_each_performer_reaches_a_structure_at_its_own_time_on_its_own_lane():
    # A high footbridge over the fight (the consist's front reaches it at 0.1 s): Dana stands 0.7 m nearer
    # the front than Eli and reaches it first.
    text = PAIR.read_text() + (
        '\n[[structures]]\nkind = "footbridge"\nname = "high footbridge"\nreached_at = "0.1 s"\n'
        'span = "3 m"\nsoffit = "9 m"\n')
    pb = make_playback(parse_scene(text, "fight_under_bridge.toml"))
    arrivals = pb.summary["arrivals"]
    assert [(a["performer"], a["lane"]) for a in arrivals] == [("Dana", 0), ("Eli", 1)]
    bridge = pb.scene.structures[0].x_start
    for run, arrival in zip((pb.trajectory,) + pb.trajectory.partners, arrivals):
        # Each at its own centre of mass's passing of the bridge's near edge (ground frame), to a step.
        k = run.index_at(arrival["time_s"])
        ground = run.com_path[:, 0] + run.field("distance")
        assert ground[k - 1] < bridge <= ground[k]
    assert arrivals[1]["time_s"] - arrivals[0]["time_s"] > 0.04
    canvas = drawn(pb, 1.0, ViewSettings())
    lines = [pts for kind, pts, color, tag in canvas.calls
             if tag == "timeline" and kind == "line" and color == STRUCTURE]
    assert len(lines) == 2 and lines[0][0][0] < lines[1][0][0] and lines[0][0][1] < lines[1][0][1]


def test_the_cameras_follow_the_followed_performer(pair):
    a = cameras(pair, SHOVE, ViewSettings(frame="car"), (1280, 720))[0]
    b = cameras(pair, SHOVE, ViewSettings(frame="car", follow=1), (1280, 720))[0]
    assert b.center_x < a.center_x   # Eli stands behind Dana, toward the rear


def test_help_lists_the_follow_key_for_a_pair(pair, one):
    assert ("Tab", panels.FOLLOW_HELP[1]) in panels.help_rows(pair.scene)
    assert panels.FOLLOW_HELP not in panels.help_rows(one.scene)
    canvas = drawn(pair, SHOVE, ViewSettings(show_help=True))
    assert "Tab" in texts(canvas, "help")


def test_running_verdict_is_the_worse_of_each_performer_judged_on_its_own(pair, fast_pair):
    for pb in (pair, fast_pair):
        scene, tr = pb.scene, pb.trajectory
        for t in (0.5, SHOVE, 3.0, scene.duration):
            each = [verdict_so_far(part, run.events, run.outcomes, t, run.record, run.times)[0]
                    for part, run in zip(scene.cast, (tr,) + tr.partners)]
            name, _ = panels.running_verdict(pb, t)
            assert name == max(each, key=panels.VERDICT_ORDER.index)
        assert panels.running_verdict(pb, scene.duration)[0] == pb.summary["verdict"]
    assert fast_pair.summary["verdict"] == "fails"


def test_running_verdict_is_marginal_while_the_shove_takes_a_margin_below_its_factor(pair):
    # During Dana's shove her balance margin is already below 0.03 m: the running verdict says so then,
    # not only when the action ends (it once showed a green HOLDS beside a negative balance margin).
    dana = pair.trajectory
    k = dana.index_at(SHOVE)
    assert np.nanmin(np.fmin(dana.record["balance_margin"], dana.record["frontal_margin"])[:k + 1]) < 0.03
    name, because = panels.running_verdict(pair, SHOVE)
    assert name == "marginal" and any(b["margin"] == "balance margin" for b in because)
    assert panels.running_verdict(pair, QUIET)[0] == "holds"


def test_each_performer_failure_marker_is_labelled_with_its_name(fast_pair):
    first = fast_pair.summary["first_failure"]
    assert first["performer"] == "Eli"
    before = drawn(fast_pair, first["time_s"] - 0.1, ViewSettings(frame="car"))
    assert not [s for s in texts(before, "failure") if "Eli:" in s]
    for frame in ("car", "end", "plan"):
        after = drawn(fast_pair, min(fast_pair.scene.duration, first["time_s"] + 0.2), ViewSettings(frame=frame))
        assert any(s.startswith(f"Eli: {first['kind'].upper()}") for s in texts(after, "failure")), frame
    rows, verdict, why = panels.readout_rows(fast_pair, fast_pair.scene.duration, ViewSettings())
    assert verdict[0].endswith("FAILS") and why[0].startswith("Eli: ")


# ---------------------------------------------------------------- timeline

def test_a_timeline_lane_each_named_and_one_lane_for_one_performer(pair, one):
    canvas = drawn(pair, SHOVE, ViewSettings())
    words = texts(canvas, "timeline")
    assert {"Dana", "Eli", "take the shove", "hold ground"} <= set(words)
    x, y, w, h = panels.timeline_rect(canvas.size, scene=pair.scene)
    assert h == 2 * panels.LANE_H + 2
    label_y = {s: box[1] for tg, s, box in canvas.text_boxes() if tg == "timeline"}
    assert label_y["take the shove"] > label_y["hold ground"] + panels.LANE_H / 2
    assert panels.timeline_rect(canvas.size, scene=one.scene)[3] == panels.TIMELINE_H
    assert panels.timeline_rect(canvas.size) == panels.timeline_rect(canvas.size, scene=one.scene)


# ------------------------------------------------------- one performer as before

def test_a_one_performer_scene_runs_no_partner_drawing(one, monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("partner drawing code ran for a one-performer scene")
    for name in ("name_label", "draw_touch", "keep_figure_clear"):
        monkeypatch.setattr(world, name, refuse)
    from preview import end_view, plan_view
    for module in (end_view, plan_view):
        for name in ("name_label", "draw_touch"):
            monkeypatch.setattr(module, name, refuse)
    for frame in VIEWS:
        for t in (0.5, one.scene.duration / 2):
            canvas = drawn(one, t, ViewSettings(frame=frame))
            assert not canvas.tagged("partner") and not canvas.tagged("names") and not canvas.tagged("touch")
            assert "following" not in texts(canvas, "readout")


# ------------------------------------------------------------------ exports

def test_csv_has_each_performer_prefixed_and_the_force_between_them(pair, one, tmp_path):
    from preview.beat_data import beat_times, csv_columns, write_csv
    times = beat_times(pair.scene, 24, None, None)
    write_csv(pair, times, tmp_path / "pair.csv")
    with open(tmp_path / "pair.csv", encoding="utf-8") as f:
        first = f.readline()
        assert first.startswith("#") and "CAUTION" in first and "Dana and Eli" in first
        rows = list(csv.DictReader(f))
    assert len(rows) == len(times)
    head = list(rows[0])
    assert head[:4] == ["time_s", "timecode", "consist_travel_m", "consist_speed_ms"]
    assert "dana_com_x_car_m" in head and "eli_com_x_car_m" in head and "eli_action" in head
    acting = [r for r in rows if r["eli_touch_force_x_N"]]
    assert acting and all(2.0 - 1e-6 <= float(r["time_s"]) <= 2.4 + 1e-6 for r in acting)
    for r in acting:
        assert math.isclose(float(r["eli_touch_force_x_N"]), -float(r["dana_touch_force_x_N"]), abs_tol=1e-3)
    assert rows[0]["eli_action"] == "take the shove" and rows[0]["dana_action"] == "square up"
    one_head = csv_columns("metric")[0]
    assert one_head[:4] == ["time_s", "timecode", "mode", "action"] and not any("touch" in c for c in one_head)
    write_csv(one, beat_times(one.scene, 24, None, None), tmp_path / "one.csv")
    with open(tmp_path / "one.csv", encoding="utf-8") as f:
        f.readline()
        assert next(csv.reader(f)) == one_head


def test_glb_has_a_figure_node_each(pair, one, tmp_path):
    from preview.beat_data import beat_times, write_glb

    def doc(pb, name):
        write_glb(pb, beat_times(pb.scene, 24, None, None), tmp_path / name)
        data = (tmp_path / name).read_bytes()
        length = struct.unpack("<I", data[12:16])[0]
        return json.loads(data[20:20 + length])

    names = [n["name"] for n in doc(pair, "pair.glb")["nodes"]]
    assert "performer: Dana" in names and "performer: Eli" in names and "Eli head_top" in names
    assert "performer" in [n["name"] for n in doc(one, "one.glb")["nodes"]]
