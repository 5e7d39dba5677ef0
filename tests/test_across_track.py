"""Across the track: side wind, the roof's crown and side edges, balance in the frontal plane.

Each check names where its expected value comes from.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from physics import G, body
from physics.records import RECORD, Event, Inputs, empty_events, empty_outcomes, empty_tether_out
from physics.scene_load import parse_scene
from physics.scene_problems import SceneError
from physics.simulation import Trajectory, build_inputs, run_kernel, simulate, variants
from physics.verdict import summarise
from tests.conftest import scene_text

RHO = 1.225


def side_scene(wind=25.0, wind_from=90.0, roof="painted steel dry", offset=0.0, performer="", actions=None,
               car="", speed=0.0):
    """A stopped box car, one performer standing on its centreline unless offset (m, + left)."""
    actions = actions or '[[actions]]\ndo = "stand"\nduration = "6 s"\ntransition = "0 s"\n'
    return parse_scene(f'''
title = "across the track"
[consist]
roof = "{roof}"
[[consist.cars]]
name = "box car"
length = "14 m"
roof_height = "4.0 m"
{car}
[motion]
speed = "{speed} m/s"
[air]
density = "{RHO} kg/m^3"
wind_speed = "{wind} m/s"
wind_from = "{wind_from} deg"
[performer]
stature = "1.78 m"
mass = "76 kg"
drag_area = "0.68 m^2"
{performer}
[start]
car = 1
position = "6 m"
offset = "{offset} m"
{actions}
''', "across.toml")


def run_with(scene, accel_y):
    """Simulate with a car-body lateral acceleration (m/s^2) written into the step table: the engine's
    input for the felt lateral motion, which only a curved or rough track will set."""
    timeline, inputs = build_inputs(scene)
    steps = inputs.steps.copy()
    steps["accel_y"] = accel_y(steps["time"])
    steps.flags.writeable = False     # as the engine's own inputs: one compiled kernel serves both
    inputs = Inputs(steps, *inputs[1:])
    v = variants(scene)
    events, outcomes = empty_events(1), empty_outcomes(1, len(scene.actions))
    record = np.zeros(timeline.size, RECORD)
    run_kernel(v, inputs, events, outcomes, record, empty_tether_out(1, 0))
    return Trajectory(scene, timeline, record, events[0], outcomes[0], v)


def test_side_on_drag_area_is_smaller_than_head_on():
    # The segment table's depths (physics.body, from memory) with the far limbs in the near ones' wake:
    # about 0.6 of the frontal drag area. A standing adult's side-on silhouette is roughly two thirds of
    # the frontal one (from memory); the test holds the ratio to that band.
    assert 0.55 < body.side_ratio() < 0.72
    # The engine uses the same areas: a pure side wind on the stopped consist loads the body with
    # 1/2 rho V^2 times the calibrated side areas.
    scene = side_scene(20.0)
    tr = simulate(scene)
    constants = body.body_constants(1.78)
    scale = float(tr.params["drag_scale"])
    expected = 0.5 * RHO * 20.0 ** 2 * scale * constants.side_area.sum()
    assert -tr.record["aero_y"][10] == pytest.approx(expected, rel=1e-9)
    frontal = 0.5 * RHO * 20.0 ** 2 * 0.68
    assert -tr.record["aero_y"][10] < 0.75 * frontal


def test_a_side_wind_needs_the_lean_its_side_load_implies():
    # 25 m/s from the left on a standing performer of a stopped consist: the body leans into it until
    # gravity's torque about the feet's midline balances the wind's, W h sin(roll) = M cos(roll), with
    # the centre of pressure back in the middle (statics; M summed here over the segments in numpy).
    scene = side_scene(25.0)
    tr = simulate(scene)
    k = tr.times.size - 1
    posture = tr.timeline.postures[tr.record["row"][k]]
    constants = body.body_constants(1.78)
    q_side = 0.5 * RHO * float(tr.params["drag_scale"]) * constants.side_area
    heights = posture["axes"][:, 1]
    moment = float(np.sum(q_side * 25.0 ** 2 * heights))        # toward the right (the wind's way)
    lean = math.atan(moment / (76 * G * posture["com_z"]))
    assert tr.record["roll"][k] == pytest.approx(lean, abs=math.radians(0.3))
    side_load = -tr.record["aero_y"][k] / (76 * G)
    assert 0.2 < side_load < 0.3
    summary = summarise(scene, tr.events, tr.outcomes)
    # The headline lean is what the load needs, not the 1 degree or so of the along-track reckoning.
    assert summary["actions"][0]["lean_max_deg"] == pytest.approx(math.degrees(lean), abs=0.3)
    assert summary["verdict"] == "holds"


def test_the_crown_tilts_the_support():
    # A parabolic crown of 0.2 m on a 2.8 m roof, performer 1.0 m left of the centreline, no wind:
    # the roof's slope there is atan(-8 c y / w^2); the grip the roof must give is tan(slope) of the
    # weight (a block on an incline), and the body stands plumb (its feet follow the roof, so the
    # slope asks no torque of them): no sideways lean from the vertical.
    scene = side_scene(0.0, offset=1.0, car='crown = "0.2 m"\nwidth = "2.8 m"')
    tr = simulate(scene)
    slope = math.atan(-8 * 0.2 * 1.0 / 2.8 ** 2)
    k = 100
    assert tr.record["roof_slope"][k] == pytest.approx(slope, rel=1e-12)
    assert tr.record["contact_z"][k] == pytest.approx(4.0 - 0.2 * (2 * 1.0 / 2.8) ** 2, rel=1e-12)
    assert tr.record["grip_demand"][k] == pytest.approx(abs(math.tan(slope)), rel=1e-9)
    assert tr.record["roll_required"][k] == pytest.approx(0.0, abs=1e-12)
    assert tr.record["roll"][k] == pytest.approx(0.0, abs=1e-12)
    # The support's outer edge to the side edge: 1.4 - 1.0 - the stance's half-width.
    half = body.HALF_WIDTH_FRACTION["stand"] * 1.78
    assert tr.outcomes["edge_margin_min"][0] == pytest.approx(1.4 - 1.0 - half, abs=1e-9)


def test_a_side_wind_on_a_wet_roof_puts_the_performer_off_the_side():
    scene = side_scene(28.0, roof="painted steel wet", offset=-1.0)
    tr = simulate(scene)
    summary = summarise(scene, tr.events, tr.outcomes)
    kinds = [e["kind"] for e in summary["events"]]
    assert summary["verdict"] == "fails" and summary["first_failure"]["kind"] == "slip"
    slip = summary["events"][kinds.index("slip")]
    off = summary["events"][kinds.index("off the side")]
    assert slip["side"] == "right" and "toward the right edge" in slip["detail"]
    assert off["side"] == "right" and off["time_s"] > slip["time_s"]
    # It slid across the roof to the edge, then fell beside the car to the ground.
    on_roof = np.isfinite(tr.record["pivot_y"])
    assert np.nanmin(tr.record["pivot_y"][on_roof]) < -1.35
    assert tr.record["flight_y"][-1] < -1.4 and tr.record["flight_z"][-1] < 1.0
    # The slide follows the net load: with no other load the body moves across, not along.
    assert abs(tr.record["slide_speed"][on_roof]).max() < 1e-6
    # Over the edge it goes down along the car's side where it went over, not to an end of the car.
    in_air = np.isfinite(tr.record["flight_x"])
    assert np.abs(tr.record["flight_x"][in_air] - tr.record["pivot_x"][on_roof][-1]).max() < 0.3
    assert np.all(np.abs(tr.record["flight_y"][in_air][5:]) > 1.4)


def test_json_reports_the_margins_across_the_track():
    scene = side_scene(15.0, offset=0.5)
    tr = simulate(scene)
    row = summarise(scene, tr.events, tr.outcomes)["actions"][0]
    half = body.HALF_WIDTH_FRACTION["stand"] * 1.78
    assert row["edge_margin_min_m"] == pytest.approx(1.4 - 0.5 - half, abs=1e-9)
    assert 0 < row["frontal_balance_margin_min_m"] <= half + 1e-12
    assert row["balance_margin_min_m"] <= row["frontal_balance_margin_min_m"]
    assert row["lateral_accel_max_ms2"] == 0.0


def test_lateral_car_motion_reaches_balance_grip_and_the_report():
    # A steady 1 m/s^2 car-body acceleration to the left: the performer leans atan(a / g) into it
    # (statics of the pendulum) and the roof must give a / g of grip; the check reports the peak.
    scene = side_scene(0.0)
    tr = run_with(scene, lambda t: np.full(t.shape, 1.0))
    k = tr.times.size - 1
    assert tr.record["roll_required"][k] == pytest.approx(math.atan(1.0 / G), abs=1e-9)
    assert tr.record["roll"][k] == pytest.approx(math.atan(1.0 / G), abs=math.radians(0.2))
    assert tr.record["grip_demand"][k] == pytest.approx(1.0 / G, rel=1e-9)
    assert tr.outcomes["lateral_accel_max"][0] == pytest.approx(1.0)


def test_a_sideways_push_is_stepped_out_or_toppled_toward_its_side():
    # A half-second lateral pulse of 1.5 m/s^2: without a step the stance is too narrow and the
    # performer topples toward the right (the pseudo-force's side); allowed to step, a sideways step
    # lands at least STEP_TIME (0.3 s) after the extrapolated centre of mass left the support and is
    # no longer than about 20 cm (J. Exp. Biol. 2010, 213(15):2655, as summarised to us).
    def pulse(t):
        return np.where((t >= 1.0) & (t < 1.5), 1.5, 0.0)
    still = run_with(side_scene(0.0), pulse)
    assert int(still.events[Event.TOPPLE]["side"]) == -1
    stepper = run_with(side_scene(0.0, performer='recovery_step = "0.5 m"'), pulse)
    assert np.isnan(stepper.events[Event.TOPPLE]["time"])
    step = stepper.events[Event.RECOVERY_STEP]
    assert int(step["side"]) == -1
    outside = np.flatnonzero(stepper.record["frontal_margin"] < 0)[0]
    assert step["time"] - stepper.times[outside] >= 0.3 - stepper.scene.step - 1e-9   # counted in whole steps
    moved = np.nanmax(np.abs(stepper.record["pivot_y"]))
    assert 0.05 < moved <= 0.2 + 1e-12


def test_a_small_lateral_push_is_ridden_out():
    tr = run_with(side_scene(0.0), lambda t: np.where((t >= 1.0) & (t < 1.5), 0.5, 0.0))
    assert all(np.isnan(tr.events[k]["time"]) for k in (Event.TOPPLE, Event.RECOVERY_STEP, Event.SLIP))
    assert 0 < tr.outcomes["frontal_margin_min"][0] < body.HALF_WIDTH_FRACTION["stand"] * 1.78


def test_a_brace_widens_the_support_across_the_track():
    stand = simulate(side_scene(30.0, roof="anti-slip paint"))
    brace = simulate(side_scene(30.0, roof="anti-slip paint", actions='[[actions]]\ndo = "brace"\n'
                                'duration = "6 s"\ntransition = "0 s"\n'))
    assert brace.outcomes["frontal_margin_min"][0] > stand.outcomes["frontal_margin_min"][0] + 0.1


@pytest.mark.parametrize("key, value, words", [
    ("offset", '"1.6 m"', "past the side edge"),
    ("crown", '"0.9 m"', "car.crown"),
])
def test_bad_across_track_keys_are_named(key, value, words):
    text_offset = value if key == "offset" else '"0 m"'
    car = f"crown = {value}" if key == "crown" else ""
    with pytest.raises(SceneError) as err:
        parse_scene(scene_text(speed="0 m/s", cars=[f'length = "14 m"\nroof_height = "4.0 m"\n{car}'],
                               start=f'car = 1\nposition = "6 m"\noffset = {text_offset}',
                               actions=['do = "stand"\nduration = "2 s"']), "bad.toml")
    message = str(err.value)
    assert "bad.toml" in message and (words in message or key in message)


def test_the_bundled_crosswind_scenes():
    # The same gusting crosswind on the same box car: near the right-hand edge of a wet roof the
    # performer slips toward that edge and goes over it; braced on the centreline on tar paper it holds.
    from physics.scene_load import load_scene
    from tests.conftest import REPO
    edge = load_scene(REPO / "scenes" / "crosswind_edge.toml")
    tr = simulate(edge)
    summary = summarise(edge, tr.events, tr.outcomes)
    assert summary["verdict"] == "fails" and summary["first_failure"]["side"] == "right"
    assert [e["kind"] for e in summary["events"] if e["failure"]] == ["slip", "off the side"]
    braced = load_scene(REPO / "scenes" / "crosswind_braced.toml")
    tr = simulate(braced)
    summary = summarise(braced, tr.events, tr.outcomes)
    assert summary["verdict"] == "holds"
    row = summary["actions"][0]
    assert row["edge_margin_min_m"] > 1.0 and row["frontal_balance_margin_min_m"] > 0.05
    assert row["lean_max_deg"] > 10.0    # leaning into the side wind, as the load needs


def test_a_walk_angled_across_the_roof_reaches_the_side_edge():
    # 1.2 m/s at 30 degrees toward the right from the centreline of a 2.8 m roof, after a 0.5 s
    # ramp: 0.6 m/s across, so the feet reach the edge 1.4 m away about 2.6 s in (kinematics).
    walk = ('[[actions]]\ndo = "walk"\nspeed = "1.2 m/s"\nangle = "-30 deg"\nduration = "6 s"\n'
            'transition = "0.5 s"\n')
    scene = side_scene(0.0, actions=walk)
    tr = simulate(scene)
    off = tr.events[Event.OFF_SIDE]
    assert int(off["side"]) == -1
    assert off["time"] == pytest.approx(0.25 + 1.4 / 0.6, abs=0.05)
    # Along the track it went cos(30 deg) as far as across: 1.2 cos 30 (t - 0.25) m.
    on_roof = np.isfinite(tr.record["pivot_x"])
    k = np.flatnonzero(on_roof)[-1]
    travelled = tr.record["pivot_x"][k] - tr.record["pivot_x"][0]
    assert travelled == pytest.approx(1.2 * math.cos(math.radians(30)) * (tr.times[k] - 0.25), abs=0.02)
    assert tr.outcomes["edge_margin_min"][0] < 0.0


def test_only_a_gait_takes_an_angle():
    with pytest.raises(SceneError) as err:
        side_scene(0.0, actions='[[actions]]\ndo = "stand"\nangle = "20 deg"\nduration = "2 s"\n')
    assert "actions[0].angle" in str(err.value) or "angle" in str(err.value)


def test_a_lateral_push_in_walking_moves_the_ankle_little_and_a_step_does_the_rest():
    # Lateral perturbations in walking (J. Exp. Biol. 2010, 213(15):2655, as summarised to us): the
    # ankle shifts the centre of pressure by at most about 2 cm, about 200 ms after the push; a step
    # shifts it by about 20 cm, at least 300 ms after. A 0.3 s, 1 m/s^2 car-body push just after a
    # foot is set down, on a performer walking at 1.2 m/s.
    walk = '[[actions]]\ndo = "walk"\nspeed = "1.2 m/s"\nduration = "6 s"\ntransition = "0.5 s"\n'
    scene = side_scene(0.0, actions=walk, performer='recovery_step = "0.5 m"')
    timeline, inputs = build_inputs(scene)
    rate = inputs.steps["gait_rate"]
    phase = np.concatenate([[0.0], np.cumsum(2 * np.pi * rate * scene.step)])
    set_down = timeline.times[np.flatnonzero(np.diff(np.floor(phase / (2 * np.pi))) > 0)]
    t0 = set_down[set_down > 2.0][0] + scene.step
    assert set_down[set_down > t0][0] - t0 > 0.25         # no foot set down in the ankle's window
    tr = run_with(scene, lambda t: np.where((t >= t0) & (t < t0 + 0.3), 1.0, 0.0))
    k0 = tr.index_at(t0)
    cop = tr.record["cop_y"]
    window = slice(k0, tr.index_at(t0 + 0.2) + 1)
    assert np.max(np.abs(cop[window] - cop[k0])) <= 0.02 + 1e-12
    assert np.max(np.abs(cop[window] - cop[k0])) > 0.015  # and it uses what it has
    step = tr.events[Event.RECOVERY_STEP]
    assert int(step["side"]) == -1 and step["time"] - t0 >= 0.3
    moved = np.nanmax(np.abs(tr.record["pivot_y"]))
    assert 0.1 < moved <= 0.2 + 1e-12
    assert np.isnan(tr.events[Event.TOPPLE]["time"])


def test_the_sweeps_health_weighs_the_side_edge_margin():
    # A performer standing 1.1 m off the centreline of a 2.8 m roof, in still air: marginal on the
    # side-edge margin alone (0.14 m against 0.5 m). The continuous margin the envelope's root finding
    # follows must say so (negative), or a threshold would be put where the verdict does not change.
    from physics.simulation import simulate_batch
    from physics.sweep import health
    from physics.verdict import verdict_codes
    scene = side_scene(0.0, offset=1.1)
    result = simulate_batch(scene, variants(scene, 1))
    assert verdict_codes(scene, result.events, result.outcomes)[0] == 1
    assert health(scene, result, 1)[0] < 0
