"""Curves, cant and the car body's ride: the engine against the formulas and tables they come from."""

from __future__ import annotations

import math

import numpy as np
import pytest

from physics import G
from physics.records import Event
from physics.scene_load import parse_scene
from physics.scene_problems import SceneError
from physics.simulation import simulate
from physics.track import (RIDE_LEVELS, Ride, cfr_213_57_max_speed, equilibrium_cant, radius_of_degree_curve,
                           ride_profile)
from tests.conftest import scene_text

MPH = 0.44704
INCH = 0.0254


def curve_scene(speed_ms, radius, cant, turn="left", flexibility=0.0, extra="", actions=None, wind=None,
                wind_from=180.0, start='position = "5 m"', ride="", straight="20 m", transition="0 m",
                roof="anti-slip paint"):
    """One car on a straight then a long curve; by default a tailwind as fast as the car, so the air
    is still over the roof and the curve alone loads the performer."""
    actions = actions or '[[actions]]\ndo = "kneel"\nduration = "8 s"\ntransition = "0 s"\n'
    wind = speed_ms if wind is None else wind
    return parse_scene(f'''
title = "curve"
[consist]
roof = "{roof}"
flexibility = {flexibility}
[[consist.cars]]
length = "20 m"
roof_height = "4.0 m"
[motion]
speed = "{speed_ms} m/s"
[air]
density = "1.225 kg/m^3"
wind_speed = "{wind} m/s"
wind_from = "{wind_from} deg"
[performer]
stature = "1.78 m"
mass = "76 kg"
drag_area = "0.68 m^2"
{extra}
[start]
car = 1
{start}
[[track]]
length = "{straight}"
[[track]]
length = "5000 m"
radius = "{radius} m"
cant = "{cant} m"
turn = "{turn}"
transition = "{transition}"
{ride}
{actions}
''', "curve.toml")


@pytest.mark.parametrize("degrees, cant_in, table_mph", [(1, 3, 93), (2, 0, 46), (4, 6, 57)])
def test_cfr_213_57_formula_reproduces_its_appendix_table(degrees, cant_in, table_mph):
    # 49 CFR 213.57, V = sqrt((Ea + Eu) / (0.0007 D)), with 3 in of unbalance, against its Appendix A
    # table (92.6 against 93, 46.3 against 46, 56.7 against 57 mph).
    v = cfr_213_57_max_speed(degrees, cant_in, 3.0)
    assert round(v) == table_mph
    assert v == pytest.approx({1: 92.6, 2: 46.3, 4: 56.7}[degrees], abs=0.05)


def test_the_engine_feels_three_inches_of_unbalance_at_the_cfr_speed():
    # 1 degree curve, 3 in of cant, at the 49 CFR 213.57 speed for 3 in of unbalance: over the 60 in
    # rail base of standard gauge that is 3/60 g = 0.49 m/s^2 across the roof (a rigid car body).
    v = cfr_213_57_max_speed(1, 3.0, 3.0) * MPH
    scene = curve_scene(v, radius_of_degree_curve(1), 3 * INCH)
    tr = simulate(scene)
    k = tr.index_at(6.0)
    assert tr.record["curvature"][k] == pytest.approx(1 / radius_of_degree_curve(1))
    assert tr.record["accel_y"][k] == pytest.approx(G * 3 / 60, rel=0.01)
    assert G * 3 / 60 == pytest.approx(0.49, abs=0.005)
    # The check reports it, and the kneeling performer's grip demand is that over g (statics), read
    # early in the curve, before the turning of the ground-fixed tailwind adds a side wind.
    assert tr.outcomes["lateral_accel_max"][0] == pytest.approx(G * 3 / 60, rel=0.01)
    early = tr.index_at(1.2)
    assert tr.record["curvature"][early] > 0
    assert tr.record["grip_demand"][early] == pytest.approx(3 / 60, rel=0.02)


def test_at_the_balancing_speed_the_roof_feels_no_side_load():
    # Equilibrium cant E = G v^2 / (g R): at that speed the unbalanced acceleration vanishes (to the
    # small-angle difference of the formula, under 0.01 m/s^2 here).
    radius, v = 800.0, 25.0
    cant = equilibrium_cant(1.435 + 0.0889, v, radius)
    tr = simulate(curve_scene(v, radius, cant))
    assert abs(tr.record["accel_y"][tr.index_at(6.0)]) < 0.01
    # Below that speed the body is pushed to the inside of the curve (the left), above it outward.
    slow = simulate(curve_scene(0.5 * v, radius, cant))
    fast = simulate(curve_scene(1.5 * v, radius, cant))
    assert slow.record["accel_y"][slow.index_at(6.0)] < -0.3 and fast.record["accel_y"][fast.index_at(6.0)] > 0.3


def test_the_body_rolls_out_by_its_flexibility():
    # A body that rolls s times the cant deficiency adds about s to the unbalanced acceleration felt
    # on its roof (small angles): s = 0.3 gives about 1.3 times the rigid body's.
    rigid = simulate(curve_scene(30.0, 600.0, 0.05))
    soft = simulate(curve_scene(30.0, 600.0, 0.05, flexibility=0.3))
    k = rigid.index_at(6.0)
    assert soft.record["accel_y"][k] / rigid.record["accel_y"][k] == pytest.approx(1.3, rel=0.01)
    assert soft.record["body_roll"][k] == pytest.approx(-0.3 * rigid.record["accel_y"][k] / G, rel=0.01)


def test_a_right_hand_curve_mirrors_a_left_hand_one():
    left = simulate(curve_scene(30.0, 600.0, 0.05, "left"))
    right = simulate(curve_scene(30.0, 600.0, 0.05, "right"))
    for name in ("accel_y", "curvature", "cant_tilt", "roll"):
        np.testing.assert_allclose(right.record[name], -left.record[name], atol=1e-12)


def test_the_curve_turns_a_ground_fixed_wind():
    # A wind from ahead, ground-fixed: after a quarter turn to the left it comes from the car's right,
    # blowing toward its left (+y), at the same speed (rotation of axes).
    radius = 200.0
    quarter = math.pi * radius / 2
    text = f'''
title = "quarter turn"
[consist]
roof = "anti-slip paint"
[[consist.cars]]
length = "20 m"
roof_height = "4.0 m"
[motion]
speed = "20 m/s"
[air]
wind_speed = "8 m/s"
wind_from = "0 deg"
[performer]
stature = "1.78 m"
mass = "76 kg"
[start]
car = 1
position = "0 m"
[[track]]
length = "{quarter} m"
radius = "{radius} m"
turn = "left"
[[actions]]
do = "prone"
duration = "{quarter / 20 + 2} s"
transition = "0 s"
'''
    tr = simulate(parse_scene(text, "quarter.toml"))
    end = tr.times.size - 1
    assert tr.record["wind_y"][end] == pytest.approx(8.0, abs=1e-6)
    assert tr.record["wind_x"][end] == pytest.approx(0.0, abs=1e-6)
    assert tr.record["wind_x"][0] == pytest.approx(-8.0, abs=1e-9)


def test_rough_ride_stays_within_the_high_speed_car_body_limits():
    # 49 CFR 299.313: car-body acceleration at most 0.35 g lateral (peak) and 0.45 g vertical
    # peak-to-peak; the `rough` level is held under both, over two minutes, for ten seeds.
    times = np.arange(0, 120, 1 / 240)
    lateral, vertical = RIDE_LEVELS["rough"]
    for seed in range(10):
        y, z = ride_profile(times, Ride(lateral, vertical, (0.5, 10.0), seed, "rough"))
        assert np.max(np.abs(y)) <= 0.35 * G
        assert np.max(z) - np.min(z) <= 0.45 * G
        assert np.sqrt(np.mean(y ** 2)) == pytest.approx(lateral, rel=0.05)
    # The same scene gives the same ride in every command: it depends on the seed alone.
    again = ride_profile(times, Ride(lateral, vertical, (0.5, 10.0), 3, "rough"))
    np.testing.assert_array_equal(again[0], ride_profile(times, Ride(lateral, vertical, (0.5, 10.0), 3, "rough"))[0])


def test_the_ride_reaches_balance_grip_and_the_report():
    ride = '[ride]\nlevel = "rough"\nseed = 4\n'
    tr = simulate(curve_scene(20.0, 5000.0, 0.0, ride=ride, actions='[[actions]]\ndo = "stand"\nduration = "8 s"\n'
                                                                     'transition = "0 s"\n'))
    felt = tr.record["accel_y"]
    assert np.std(felt) > 0.3 and tr.outcomes["lateral_accel_max"][0] == pytest.approx(np.max(np.abs(felt)), rel=1e-9)
    assert np.std(tr.record["accel_z"]) > 0.3
    # The roof must hold the ride's side load: grip demand follows it.
    assert np.max(tr.record["grip_demand"]) > 0.05


def test_a_curve_taken_too_fast_puts_a_standing_performer_off_the_side():
    # 30 m/s on a 300 m left-hand curve with 50 mm of cant: about 2.5 m/s^2 of unbalance outward
    # (to the right), more than a standing performer's stance and grip hold.
    stand = '[[actions]]\ndo = "stand"\nduration = "12 s"\ntransition = "0 s"\n'
    tr = simulate(curve_scene(30.0, 300.0, 0.05, actions=stand, flexibility=0.25, straight="30 m",
                              transition="60 m", roof="painted steel wet"))
    assert tr.record["accel_y"][tr.index_at(8.0)] > 2.0
    assert int(tr.events[Event.OFF_SIDE]["side"]) == -1
    slow = simulate(curve_scene(15.0, 300.0, 0.05, actions=stand, flexibility=0.25, straight="30 m",
                                transition="60 m", roof="painted steel wet"))
    assert np.isnan(slow.events[Event.OFF_SIDE]["time"])


def test_a_straight_smooth_track_changes_nothing():
    # The same scene with and without an explicit straight track: the same run, to the last bit.
    from tests.conftest import REPO
    text = (REPO / "scenes" / "crosswind_edge.toml").read_text()
    plain = simulate(parse_scene(text, "a.toml"))
    straight = simulate(parse_scene(text + '\n[[track]]\nlength = "2000 m"\n', "b.toml"))
    for name in plain.record.dtype.names:
        np.testing.assert_array_equal(plain.record[name], straight.record[name], err_msg=name)


@pytest.mark.parametrize("track, words", [
    ('[[track]]\nlength = "100 m"\nradius = "400 m"\n', "turn"),
    ('[[track]]\nlength = "100 m"\nradius = "10 m"\nturn = "left"\n', "radius"),
    ('[[track]]\nlength = "100 m"\nradius = "400 m"\nturn = "left"\ntransition = "60 m"\n', "transition"),
    ('[ride]\nlevel = "bumpy"\n', "ride.level"),
    ('[ride]\nlevel = "rough"\nlateral_rms = "1 m/s^2"\n', "not both"),
])
def test_bad_track_and_ride_keys_are_named(track, words):
    with pytest.raises(SceneError) as err:
        parse_scene(scene_text(speed="10 m/s", cars=['length = "14 m"\nroof_height = "4.0 m"'],
                               start='car = 1\nposition = "6 m"', actions=['do = "stand"\nduration = "2 s"'],
                               extra=track), "bad.toml")
    message = str(err.value)
    assert "bad.toml" in message and words in message


def test_the_bundled_curve_and_rough_ride_scenes(capsys):
    # A tight curve taken too fast: a sideways step, then a slip toward the outside (the right of a
    # left-hand curve) and over the edge. The envelope over speed finds where the beat stops holding
    # on the curve, and a run just either side of its limits agrees. The rough ride: a kneeling
    # performer holds, with the ride's lateral acceleration reported.
    import json

    from physics.scene_load import load_scene
    from physics.verdict import summarise
    from preview.cli import main
    from tests.conftest import REPO
    path = REPO / "scenes" / "curve_too_fast.toml"
    scene = load_scene(path)
    tr = simulate(scene)
    summary = summarise(scene, tr.events, tr.outcomes)
    assert summary["verdict"] == "fails" and summary["first_failure"]["side"] == "right"
    assert int(tr.events[Event.OFF_SIDE]["side"]) == -1
    assert summary["actions"][0]["lateral_accel_max_ms2"] > 2.5
    assert main(["envelope", str(path), "--vary", "speed=20 km/h..90 km/h", "--points", "15", "--json"]) == 0
    limits = json.loads(capsys.readouterr().out)["limits"]
    holds, not_fail = limits[0]["value"], limits[1]["value"]
    assert 40 / 3.6 < holds < not_fail < 75 / 3.6
    for speed, verdict in ((0.97 * holds, "holds"), (1.03 * not_fail, "fails")):
        s = load_scene(path, [f'motion.speed="{speed} m/s"'])
        t = simulate(s)
        assert summarise(s, t.events, t.outcomes)["verdict"] == verdict
    rough = load_scene(REPO / "scenes" / "rough_freight_kneel.toml")
    tr = simulate(rough)
    summary = summarise(rough, tr.events, tr.outcomes)
    assert summary["verdict"] == "holds"
    assert 1.0 < summary["actions"][0]["lateral_accel_max_ms2"] < 0.35 * G
