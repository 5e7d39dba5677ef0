"""What the picture says must be what the physics says, and be readable.

Label layout (no text over another, none out of its box) on every bundled
scene's key frames at the smallest supported window and at 720p; the legend
and scale bars in the scene's display units; the readout after a failure; the
running verdict; jump and duck marks; the trackside camera and the drift
figure; the window's legend, trackside and units keys.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from physics.records import Mode
from physics.scene_load import load_scene
from physics.units import display
from physics.verdict import verdict_so_far
from preview.canvas import RecordingCanvas
from preview.frame import ViewSettings, cameras, draw_frame
from preview.session import make_playback
from tests.conftest import REPO, SCENES

# Texts that must never cover one another: the panels and the labels that are placed.
PLACED = {"readout", "banner", "legend", "timeline", "caution", "message", "structures", "jump", "failure",
          "drift", "rigging", "names"}
# Placed in the views: they keep off the figure (two performers' name labels too).
WORLD_LABELS = {"structures", "jump", "failure", "drift", "rigging", "names"}
BOXED = {"readout", "banner", "legend", "caution", "message", "failure", "drift", "rigging", "names"}  # on a box


@pytest.fixture(scope="module")
def playbacks():
    return {p.stem: make_playback(load_scene(p)) for p in SCENES}


def key_times(pb) -> list[float]:
    """Start, middle, the failure and just after it, the middle of a flight, a touchdown, the end."""
    tr, duration = pb.trajectory, pb.scene.duration
    times = [0.3, duration / 2, duration - 0.05]
    first = pb.summary["first_failure"]
    if first:
        times += [first["time_s"], min(duration, first["time_s"] + 0.3)]
    flying = np.flatnonzero(tr.field("mode") == Mode.FLIGHT)
    if flying.size:
        times.append(float(tr.times[flying[flying.size // 2]]))
    for e in pb.summary["events"]:
        if e["kind"] == "touchdown":
            times.append(min(duration, e["time_s"] + 0.1))
    for s in pb.summary["arrivals"]:
        times.append(s["time_s"])
    return times


def drawn(pb, t, view, size) -> RecordingCanvas:
    canvas = RecordingCanvas(size=size)
    draw_frame(canvas, pb, t, view)
    return canvas


def overlap(a, b) -> float:
    w = min(a[0] + a[2], b[0] + b[2]) - max(a[0], b[0])
    h = min(a[1] + a[3], b[1] + b[3]) - max(a[1], b[1])
    return max(0.0, w) * max(0.0, h)


def inside(a, b, slack=0.5) -> bool:
    return (a[0] >= b[0] - slack and a[1] >= b[1] - slack and a[0] + a[2] <= b[0] + b[2] + slack
            and a[1] + a[3] <= b[1] + b[3] + slack)


def layout_faults(canvas: RecordingCanvas) -> list[str]:
    width, height = canvas.size
    texts = [(tag, s, box) for tag, s, box in canvas.text_boxes() if s]
    faults = []
    for tag, s, box in texts:
        if not inside(box, (0, 0, width, height)):
            faults.append(f"{tag} {s!r} leaves the picture: {box}")
    placed = [(tag, s, box) for tag, s, box in texts if tag in PLACED]
    for k, (tag_a, a, box_a) in enumerate(placed):
        for tag_b, b, box_b in placed[k + 1:]:
            if overlap(box_a, box_b) > 1.0:
                faults.append(f"{tag_a} {a!r} overlaps {tag_b} {b!r}")
    backgrounds = {}
    for kind, args, _, tag in canvas.calls:
        if kind == "rect" and tag in BOXED:
            backgrounds.setdefault(tag, []).append(args)
    for tag, s, box in texts:
        if tag in BOXED and not any(inside(box, r) for r in backgrounds.get(tag, [])):
            faults.append(f"{tag} {s!r} runs out of its box")
    # Nothing filled is drawn over a label afterwards (a car body, a panel, another label's box).
    for k, (kind, args, _, tag) in enumerate(canvas.calls):
        if kind != "text" or tag not in PLACED or not args[1]:
            continue
        for later_kind, later, _, later_tag in canvas.calls[k + 1:]:
            if later_kind == "rect" and later[4] == 0 and later_tag != tag and overlap(args[2], later[:4]) > 1.0:
                faults.append(f"{tag} {args[1]!r} is covered by a {later_tag} box drawn after it")
                break
    figures, run = [], []   # one figure per view: a run of consecutive figure lines
    for kind, args, _, tag in canvas.calls + [("end", None, None, "")]:
        if tag == "figure" and kind == "line":
            run += list(args)
        elif tag != "figure" and run:
            figures.append(run)
            run = []
    for points in figures:
        xs, ys = [p[0] for p in points], [p[1] for p in points]
        body = (min(xs), min(ys), max(xs) - min(xs), max(ys) - min(ys))
        for tag, s, box in texts:
            if tag in WORLD_LABELS and overlap(box, body) > 1.0:
                faults.append(f"{tag} {s!r} covers the figure")
    return faults


@pytest.mark.parametrize("size", [(960, 540), (1280, 720)], ids=lambda s: f"{s[0]}x{s[1]}")
def test_labels_never_overlap_or_leave_their_boxes_on_any_bundled_scene(playbacks, size):
    faults = []
    for name, pb in playbacks.items():
        for frame in ("car", "ground", "split"):
            for t in key_times(pb):
                canvas = drawn(pb, t, ViewSettings(frame=frame), size)
                faults += [f"{name} {frame} t={t:.2f}: {f}" for f in layout_faults(canvas)]
    assert not faults, "\n".join(faults[:20])


def test_help_message_and_imperial_units_fit_too(playbacks):
    pb = playbacks["night_freight"]
    long_message = "scene not re-loaded, still playing the last good one:\n" + "x = 1 " * 200
    for size in ((960, 540), (1280, 720)):
        canvas = drawn(pb, 6.0, ViewSettings(frame="split", message=long_message), size)
        assert not layout_faults(canvas)
        help_canvas = drawn(pb, 6.0, ViewSettings(show_help=True), size)
        help_box = [c[1] for c in help_canvas.tagged("help") if c[0] == "rect"][0]
        for tag, s, box in help_canvas.text_boxes():
            if tag == "help":
                assert inside(box, help_box), s


def texts_of(canvas, tag) -> str:
    return " | ".join(s for t, s, _ in canvas.text_boxes() if t == tag)


def test_legend_and_scale_bars_are_in_the_display_units(playbacks):
    pb = playbacks["heritage_excursion"]
    metric = texts_of(drawn(pb, 5.0, ViewSettings(vectors=frozenset(ViewSettings().vectors | {"segments"})),
                            (1280, 720)), "legend")
    assert " N (every force)" in metric and " N (per-segment loads only)" in metric and "m/s (apparent wind)" in metric
    imperial = make_playback(dataclasses.replace(pb.scene, units="imperial"))
    canvas = drawn(imperial, 5.0, ViewSettings(), (1280, 720))
    legend, readout = texts_of(canvas, "legend"), texts_of(canvas, "readout")
    assert "lbf (every force)" in legend and "mph (apparent wind)" in legend and " N " not in legend
    assert "mph" in readout and "km/h" not in readout and "m/s" not in readout


def test_scale_bar_length_is_its_value_at_the_drawing_scale(playbacks):
    from preview.panels import scale_bar
    from preview.world import FORCE_PER_METRE
    pb = playbacks["heritage_excursion"]
    cam = cameras(pb, 1.0, ViewSettings(), (1280, 720))[0]
    value, unit, px = scale_bar(FORCE_PER_METRE, "force", "imperial", cam.scale)
    newtons = value * 4.4482216152605   # lbf to N, exact by definition
    assert unit == "lbf" and px == pytest.approx(newtons / FORCE_PER_METRE * cam.scale)
    assert 24 <= px <= 60


def test_weight_and_roof_reaction_are_drawn_apart(playbacks):
    pb = playbacks["heritage_excursion"]
    canvas = drawn(pb, 2.0, ViewSettings(), (1280, 720))
    weight = [c for c in canvas.tagged("weight") if c[0] == "line"][0][1]
    normal = [c for c in canvas.tagged("normal") if c[0] == "line"][0][1]
    assert abs(weight[0][0] - normal[0][0]) >= 8   # different x: not on one line
    assert normal[0][1] > weight[0][1]             # the reaction comes up from below the roof


def test_readout_says_what_became_of_the_body_after_a_failure(playbacks):
    pb = playbacks["footbridge_late_duck"]
    first = pb.summary["first_failure"]
    before = texts_of(drawn(pb, first["time_s"] - 0.5, ViewSettings(), (1280, 720)), "readout")
    assert "grip ratio" in before and "balance margin" in before
    after = texts_of(drawn(pb, first["time_s"] + 0.5, ViewSettings(), (1280, 720)), "readout")
    assert "grip ratio" not in after and "balance margin" not in after
    assert "plan stopped at the strike" in after and "FAILS" in after
    assert "state | struck: out of the run" in after
    from tests.conftest import scene_text
    from physics.scene_load import parse_scene
    slide = make_playback(parse_scene(scene_text(speed="200 km/h", roof="painted steel wet", actions=[
        'do = "crouch"\nduration = "6 s"\ntransition = "0 s"']), "slide.toml"))
    tr = slide.trajectory
    phase = slide.summary["aftermath"][0]
    assert phase["state"] == "sliding" and phase["distance_m"] > 1.0
    t = 0.5 * (phase["from_s"] + phase["to_s"])
    so_far = abs(tr.field("pivot_x")[tr.index_at(t)] - tr.field("pivot_x")[tr.index_at(phase["from_s"])])
    words = texts_of(drawn(slide, t, ViewSettings(), (1280, 720)), "readout")
    assert f"state | sliding, {display(so_far, 'length', 'metric')} so far" in words
    gap = playbacks["gap_crossing_frontward"]
    end = texts_of(drawn(gap, gap.scene.duration, ViewSettings(), (1280, 720)), "readout")
    assert "off the consist, on the ground" in end


def test_running_verdict_judges_an_action_when_it_ends_and_says_why():
    from preview.report import marginal_words
    scene = load_scene(REPO / "scenes" / "airfield_flatbed.toml")
    pb = make_playback(scene)
    walk = next(a for a in pb.summary["actions"] if a["name"] == "walk")
    assert walk["verdict"] == "marginal" and pb.summary["verdict"] == "marginal"
    tr = pb.trajectory
    early, because = verdict_so_far(scene, tr.events, tr.outcomes, walk["end_s"] - 0.5)
    assert early == "holds" and because == []
    late, because = verdict_so_far(scene, tr.events, tr.outcomes, walk["end_s"])
    assert late == "marginal" and {b["margin"] for b in because} == {m["margin"] for m in walk["marginal_because"]}
    readout = texts_of(drawn(pb, walk["end_s"], ViewSettings(), (1280, 720)), "readout")
    first_reason = marginal_words(walk["marginal_because"][:1], "metric")
    assert "MARGINAL" in readout and first_reason in readout
    final, _ = verdict_so_far(scene, tr.events, tr.outcomes, scene.duration)
    assert final == pb.summary["verdict"]


@pytest.mark.parametrize("name", ["airfield_flatbed", "roof_fight_shove", "grab_saves_slip"])
def test_running_margins_at_an_actions_end_are_its_own_minima(name):
    # The running verdict judges the action under way on the record's steps; at the action's end those
    # steps give the same minima the verdict takes from the engine's outcome of the action (before the
    # first failure), so the running verdict never disagrees with the action's own once it ends.
    from physics.verdict import first_failure_time, running_shortfalls
    pb = make_playback(load_scene(REPO / "scenes" / f"{name}.toml"))
    runs = (pb.trajectory,) + pb.trajectory.partners
    checked = 0
    for run in runs:
        scene, out = run.scene, run.outcomes
        first = float(first_failure_time(run.events[None])[0])
        for a, action in enumerate(scene.actions):
            if math.isfinite(first) and action.end > first:
                break
            strict = dataclasses.replace(scene.safety, grip_ratio=math.inf, balance_margin=math.inf,
                                         edge_margin=math.inf)   # every value "short": all three reported
            short = {s["margin"]: s["value"] for s in running_shortfalls(
                dataclasses.replace(scene, safety=strict), run.record, run.times, action.start, action.end - 1e-6)}
            for words, field in (("grip ratio", "grip_ratio_min"), ("balance margin", "balance_margin_min"),
                                 ("side-edge margin", "edge_margin_min")):
                if math.isfinite(out[a][field]):
                    assert short[words] == pytest.approx(float(out[a][field]), rel=1e-6), (name, a, words)
                    checked += 1
    assert checked >= 6


def test_readout_clearance_is_the_engines_clearance(playbacks):
    # The readout's overhead clearance, from the recorded pose, over the duck equals the engine's minimum.
    pb = playbacks["footbridge_duck"]
    tr = pb.trajectory
    duck = next(a for a, s in zip(pb.scene.actions, pb.summary["actions"]) if s["kind"] == "duck")
    k = [i for i in range(tr.times.size) if duck.start <= tr.times[i] < duck.end]
    gaps = [tr.overhead_gap(i)[0] for i in k]
    best = k[int(np.argmin(gaps))]
    assert min(gaps) == pytest.approx(pb.summary["actions"][1]["clearance_min_m"], abs=1e-9)
    readout = texts_of(drawn(pb, tr.times[best], ViewSettings(), (1280, 720)), "readout")
    assert f"overhead clearance | {display(min(gaps), 'length', 'metric', '+.2f')} to" in readout


def test_timeline_marks_structure_arrivals_and_latest_duck_start(playbacks):
    from preview.palette import MARGINAL, STRUCTURE
    from preview.panels import timeline_rect
    pb = playbacks["footbridge_late_duck"]
    duck = pb.summary["ducks"][0]
    assert duck["latest_start_s"] < duck["planned_start_s"]   # the bundled late duck is late
    canvas = drawn(pb, 1.0, ViewSettings(), (1280, 720))
    x, _, w, _ = timeline_rect((1280, 720))
    flags = [c[1] for c in canvas.tagged("timeline") if c[0] == "polygon" and c[2] == MARGINAL]
    assert len(flags) == 1 and flags[0][2][0] == pytest.approx(x + w * duck["latest_start_s"] / pb.scene.duration)
    marks = [c[1] for c in canvas.tagged("timeline") if c[0] == "rect" and c[2] == STRUCTURE]
    assert len(marks) == len(pb.scene.structures) == len(pb.summary["arrivals"])


def test_jump_shows_take_off_landing_zone_and_the_landing_margin(playbacks):
    pb = playbacks["gap_crossing_rearward"]
    out = pb.trajectory.outcomes
    jump = next(a for a, act in enumerate(pb.scene.actions) if act.kind == "jump")
    after = float(out[jump]["touchdown_time"]) + 0.1
    jumps = texts_of(drawn(pb, after, ViewSettings(), (1280, 720)), "jump")
    margin = display(float(out[jump]["landing_margin_min"]), "length", "metric")
    assert "take-off" in jumps and f"landed {margin} inside coach B" in jumps
    before = texts_of(drawn(pb, float(out[jump]["touchdown_time"]) - 0.1, ViewSettings(), (1280, 720)), "jump")
    assert "take-off" in before and "landed" not in before


def test_trackside_camera_stays_put_while_the_consist_passes(playbacks):
    pb = playbacks["gap_crossing_rearward"]
    view = ViewSettings(frame="ground", trackside=60.0)
    a, b = (cameras(pb, t, view, (1280, 720))[0] for t in (1.0, 1.5))
    assert a.center_x == b.center_x == 60.0
    car = pb.scene.cars[0]
    assert a.to_screen(car.rear_x, 0)[0] != b.to_screen(car.rear_x, 0)[0]   # the consist moves in the picture
    assert a.ground_to_screen(60.0, 0) == b.ground_to_screen(60.0, 0)        # the track does not
    banner = texts_of(drawn(pb, 1.0, view, (1280, 720)), "banner")
    assert "trackside camera at 60 m" in banner


def test_drift_figure_in_the_air_is_the_recorded_flight(playbacks):
    pb = playbacks["gap_crossing_rearward"]
    tr = pb.trajectory
    flying = np.flatnonzero(tr.field("mode") == Mode.FLIGHT)
    i, k0 = int(flying[len(flying) // 2]), int(flying[0])
    canvas = drawn(pb, float(tr.times[i]), ViewSettings(frame="ground"), (1280, 720))
    words = texts_of(canvas, "drift")
    dist = tr.field("distance")
    over_ground = tr.com_path[i, 0] + dist[i] - (tr.com_path[k0, 0] + dist[k0])
    relative = tr.com_path[i, 0] - tr.com_path[k0, 0]
    assert display(over_ground, "length", "metric") in words and display(relative, "length", "metric") in words
    assert abs(over_ground) > 3 * abs(relative)   # over the ground it went on with the train
    assert texts_of(drawn(pb, float(tr.times[i]), ViewSettings(frame="car"), (1280, 720)), "drift") == ""


def test_failure_out_of_the_ground_view_is_pointed_at_not_drawn_elsewhere(playbacks):
    # A strike is at the bridge, fixed in the ground: once the bridge is out of the picture the
    # marker is a tag at the edge pointing back to it.
    pb = playbacks["footbridge_late_duck"]
    first = pb.summary["first_failure"]
    canvas = drawn(pb, first["time_s"] + 0.8, ViewSettings(frame="ground", trackside=200.0), (1280, 720))
    words = texts_of(canvas, "failure")
    assert "back off the picture" in words and "STRIKE" in words
    assert not [c for c in canvas.tagged("failure") if c[0] == "circle"]
    # A fall into a gap happened at the cars: the marker rides with them (a camera beside the gap sees it).
    fall = playbacks["gap_crossing_frontward"]
    first = fall.summary["first_failure"]
    t = first["time_s"] + 2.0
    tr = fall.trajectory
    beside = first["x_car_m"] + float(tr.field("distance")[tr.index_at(t)])
    canvas = drawn(fall, t, ViewSettings(frame="ground", trackside=beside), (1280, 720))
    assert [c for c in canvas.tagged("failure") if c[0] == "circle"]


def test_window_keys_for_legend_trackside_and_units(playbacks):
    from preview.window import PlayerState, handle_key
    pb = playbacks["heritage_excursion"]
    state = PlayerState(pb, ViewSettings(), t=4.0)
    handle_key(state, "l")
    assert not state.view.legend
    handle_key(state, "c")
    tr = pb.trajectory
    i = tr.index_at(4.0)
    assert state.view.frame == "ground"
    assert state.view.trackside == pytest.approx(tr.com_path[i, 0] + tr.field("distance")[i])
    handle_key(state, "c")
    assert state.view.trackside is None
    handle_key(state, "u")
    assert state.playback.scene.units == "imperial" and state.units == "imperial"
    assert state.playback.summary["verdict"] == pb.summary["verdict"]
    handle_key(state, "up")   # the what-if step is 5 mph in imperial
    assert state.speed_delta == pytest.approx(5 * 0.44704)
    assert "+5 mph" in state.view.what_if
    readout = texts_of(drawn(state.playback, 4.0, state.view, (1280, 720)), "readout")
    assert "mph" in readout and "km/h" not in readout


def test_pixels_of_a_frame_at_the_smallest_window_show_the_whole_caution(playbacks, tmp_path):
    from preview.caution import CAUTION_SHORT
    canvas = drawn(playbacks["wind_lift"], 1.0, ViewSettings(frame="split"), (960, 540))
    caution = " ".join(s for t, s, _ in canvas.text_boxes() if t == "caution")
    assert caution == CAUTION_SHORT
    assert math.isclose(sum(1 for t, _, _ in canvas.text_boxes() if t == "caution"), 2)


def test_a_still_before_the_failure_says_how_the_whole_beat_ends(playbacks):
    pb = playbacks["gap_crossing_frontward"]
    first = pb.summary["first_failure"]
    words = texts_of(drawn(pb, first["time_s"] - 0.4, ViewSettings(), (1280, 720)), "readout")
    assert "verdict so far: HOLDS" in words
    assert f"whole beat: FAILS (fall at {first['time_s']:.2f} s)" in words
    calm = texts_of(drawn(playbacks["heritage_excursion"], 3.0, ViewSettings(), (1280, 720)), "readout")
    assert "whole beat" not in calm   # a beat that holds needs no warning line


def test_ghost_of_a_failure_on_the_car_rides_with_the_car_in_the_ground_frame(playbacks):
    def ghost_x(pb, t):
        canvas = drawn(pb, t, ViewSettings(frame="ground", trackside=0.0), (1280, 720))
        xs = [p[0] for kind, args, _, tag in canvas.calls if tag == "ghost" and kind == "line" for p in args]
        return min(xs)
    slip = playbacks["gap_crossing_frontward"]   # a fall at the cars: its ghost moves with them
    t0 = slip.summary["first_failure"]["time_s"] + 0.1
    tr = slip.trajectory
    moved = tr.field("distance")[tr.index_at(t0 + 0.2)] - tr.field("distance")[tr.index_at(t0)]
    cam = cameras(slip, t0, ViewSettings(frame="ground", trackside=0.0), (1280, 720))[0]
    assert ghost_x(slip, t0 + 0.2) - ghost_x(slip, t0) == pytest.approx(moved * cam.scale, rel=1e-6)
    strike = playbacks["footbridge_late_duck"]   # a strike happens at the bridge: its ghost stays there
    t1 = strike.summary["first_failure"]["time_s"] + 0.1
    assert ghost_x(strike, t1 + 0.2) == pytest.approx(ghost_x(strike, t1))


def test_the_highest_apparent_wind_reported_includes_the_air_met_in_flight(playbacks):
    for name, pb in playbacks.items():
        tr = pb.trajectory
        first = pb.summary["first_failure"]
        until = first["time_s"] if first else math.inf
        seen = np.hypot(tr.field("app_x"), tr.field("app_y"))[(tr.times < until - 1e-9)]
        seen = seen[np.isfinite(seen)]
        if not seen.size:
            continue   # failed at the first step: nothing assessed
        reported = max(a["apparent_wind_max_ms"] for a in pb.summary["actions"])
        assert seen.max() <= reported + 1e-9, name


def test_tethers_are_drawn_with_their_tension_and_an_arrest_with_its_peak(playbacks):
    # The held slip: before the arrest a slack tether and no marker; after it the tension in display
    # units beside a taut tether coloured by its load, and the arrest with its peak force and the limit.
    pb = playbacks["tethered_brake_slip"]
    arrest = next(e for e in pb.summary["events"] if e["kind"] == "arrested")
    before = drawn(pb, 0.3, ViewSettings(frame="car"), (1280, 720))
    assert any(kind == "line" and tag == "rigging" for kind, _, _, tag in before.calls)
    assert "ARRESTED" not in texts_of(before, "rigging")
    after = drawn(pb, arrest["time_s"] + 0.05, ViewSettings(frame="car"), (1280, 720))
    words = texts_of(after, "rigging")
    assert f"ARRESTED  {arrest['time_s']:.2f} s  peak {arrest['demand']:.0f} N (limit 8000 N)" in words
    i = pb.trajectory.index_at(arrest["time_s"] + 0.05)
    force = float(pb.trajectory.record["tether_force"][i, 0])
    assert force > 0 and f"{force:.0f} N" in words


def test_a_running_line_over_its_anchor_limit_is_drawn_in_the_failure_colour(playbacks):
    from preview.palette import FAILURE
    pb = playbacks["tethered_edge_fall_overload"]
    overload = next(e for e in pb.summary["events"] if e["kind"] == "anchor overload")
    tr = pb.trajectory
    i = int(np.argmax(tr.record["tether_force"][:, 0]))         # the arrest's peak: the anchors far over
    canvas = drawn(pb, float(tr.times[i]), ViewSettings(frame="car"), (1280, 720))
    colours = [colour for kind, _, colour, tag in canvas.calls if kind == "line" and tag == "rigging"]
    assert overload["demand"] > pb.scene.safety.anchor_load and FAILURE in colours
    calm = drawn(pb, 0.3, ViewSettings(frame="car"), (1280, 720))
    assert FAILURE not in [colour for kind, _, colour, tag in calm.calls if kind == "line" and tag == "rigging"]
