"""Cross-checks and invariants of the engine: frames, scaling, determinism, robustness."""


import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from physics import consist
from physics.records import Mode
from physics.scene_load import SceneError, parse_scene
from physics.simulation import simulate, simulate_batch, variants
from tests.conftest import make_scene, scene_text


def test_frames_agree_after_the_transform():
    # x_G = x_C + s(t), with s the integral of V: check s against a direct
    # trapezoid integral of the speed samples and the recorded ground positions.
    motion = 'keyframes = [{ time = "0 s", speed = "0 km/h" }, { time = "4 s", speed = "14.4 km/h" }]'
    scene = make_scene(motion=motion)
    tr = simulate(scene)
    t = tr.times
    v = tr.field("speed")
    s_direct = np.concatenate([[0.0], np.cumsum(np.diff(t) * 0.5 * (v[1:] + v[:-1]))])
    # The speed bends where the acceleration changes (finite jerk), so the trapezoids are off by
    # about dt^2 there: well under a micrometre at 240 Hz.
    assert tr.field("distance") == pytest.approx(s_direct, abs=2e-6)
    # Ground-frame x of the pivot moves with the consist while the car-frame x stays.
    x_car = tr.field("pivot_x")
    assert np.ptp(x_car) < 1e-9
    x_ground = x_car + tr.field("distance")
    assert x_ground[-1] - x_ground[0] == pytest.approx(consist.distance_travelled(scene.keyframes, t[-1]))


def test_drag_grows_with_square_of_apparent_speed():
    # At a fixed geometry (prone: no lean; a standing body leans further into a
    # stronger wind, which changes its cross-flow) drag goes with V^2.
    drags = []
    for kmh in (30, 60):
        tr = simulate(make_scene(speed=f"{kmh} km/h", body="segmented",
                                 actions=['do = "prone"\nduration = "2 s"\ntransition = "0 s"']))
        drags.append(-tr.field("aero_x")[0])
    assert drags[1] / drags[0] == pytest.approx(4.0, rel=1e-9)


def test_no_wind_no_motion_gives_no_drag_and_no_grip_demand():
    tr = simulate(make_scene(speed="0 km/h", body="segmented"))
    assert np.all(tr.field("aero_x") == 0.0)
    assert np.nanmax(tr.field("grip_demand")) < 1e-9


def test_same_scene_same_result_bit_for_bit():
    text = scene_text(body="segmented").replace(
        'wind_from = "0 deg"', 'wind_from = "0 deg"\n[air.turbulence]\nintensity = "2 m/s"\nlength_scale = "30 m"\nseed = 5')
    a = simulate(parse_scene(text, "t"))
    b = simulate(parse_scene(text, "t"))
    assert a.record.tobytes() == b.record.tobytes()
    assert np.array_equal(a.ends(), b.ends())
    c = simulate(parse_scene(text.replace("seed = 5", "seed = 6"), "t"))
    assert a.record.tobytes() != c.record.tobytes()


def test_batch_row_equals_single_run_with_turbulence():
    # Every row of a batch meets the same air as a single run of that variant:
    # the turbulence stream depends on the scene's seed only, not on the row.
    text = scene_text(body="segmented", speed="60 km/h").replace(
        'wind_from = "0 deg"', 'wind_from = "0 deg"\n[air.turbulence]\nintensity = "2 m/s"\nlength_scale = "30 m"\nseed = 5')
    scene = parse_scene(text, "t")
    v = variants(scene, 64)
    v.params["speed_scale"] = np.linspace(0.5, 2.0, 64)
    batch = simulate_batch(scene, v)
    for b in (0, 17, 63):
        single = simulate(scene, v.row(b))
        assert batch.outcomes[b].tobytes() == single.outcomes.tobytes()
        assert batch.events[b].tobytes() == single.events.tobytes()


def test_balance_is_stable_with_slow_reactions():
    # A standing performer in still air with 0.2 s reaction latency stays up.
    scene = make_scene(speed="0 km/h", body="segmented", performer_extra='reaction_time = "0.2 s"',
                       actions=['do = "stand"\nduration = "10 s"\ntransition = "0 s"'])
    tr = simulate(scene)
    assert np.nanmax(np.abs(tr.field("lean"))) < 0.05
    assert tr.outcomes[0]["balance_margin_min"] > 0.02


speeds = st.floats(min_value=0, max_value=200)
winds = st.floats(min_value=0, max_value=40)
kinds = st.sampled_from(["stand", "brace", "crouch", "duck", "kneel", "prone", "crawl", "walk", "run"])


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(speed=speeds, wind=winds, wind_from=st.floats(0, 360), mass=st.floats(20, 250),
       stature=st.floats(1.0, 2.5), kind_a=kinds, kind_b=kinds, body=st.sampled_from(["segmented", "lumped"]))
def test_generated_scenes_never_crash_or_nan(speed, wind, wind_from, mass, stature, kind_a, kind_b, body):
    actions = [f'do = "{k}"\nduration = "1.5 s"\ntransition = "0.4 s"\nspeed = "1 m/s"' for k in (kind_a, kind_b)]
    text = scene_text(speed=f"{speed} km/h", wind=f"{wind} m/s", wind_from=f"{wind_from} deg", mass=f"{mass} kg",
                      stature=f"{stature} m", actions=actions, body=body)
    try:
        scene = parse_scene(text, "gen.toml")
    except SceneError as exc:
        assert exc.problems  # only clear scene errors
        return
    tr = simulate(scene)
    for name in tr.outcomes.dtype.names:
        if not name.startswith(("takeoff", "touchdown")):
            assert not np.isnan(tr.outcomes[name]).any(), name
    live = tr.field("mode") < Mode.GONE
    assert np.isfinite(tr.ends()[live]).all()
    assert np.isfinite(tr.com_path[live]).all()


def test_halving_the_step_moves_events_less_than_a_frame_and_landings_less_than_a_centimetre():
    # The accuracy target (physics/README.md, "Numerics"), on every bundled scene.
    from tests.conftest import SCENES
    from physics.scene_load import load_scene
    for path in SCENES:
        runs = [simulate(load_scene(path, [f"simulation.rate={rate} Hz"])) for rate in (240, 480)]
        a, b = (r.events["time"] for r in runs)
        assert np.array_equal(np.isnan(a), np.isnan(b)), path.name
        assert np.nanmax(np.abs(a - b), initial=0.0) < 1 / 24, path.name
        for r0, r1 in [runs]:
            land0 = r0.outcomes["landing_margin_min"]
            land1 = r1.outcomes["landing_margin_min"]
            finite = np.isfinite(land0)
            assert np.allclose(land0[finite], land1[finite], atol=0.01), path.name


def test_first_step_loads_the_body_at_the_lean_it_takes():
    # At 110 km/h a standing performer leans about 24 deg into the wind from
    # the first step. The first step's loads are those of the leaning body (as
    # recorded and drawn), so it does not set the action's grip demand.
    scene = make_scene(speed="110 km/h", body="segmented",
                       actions=['do = "stand"\nduration = "3 s"\ntransition = "0 s"'])
    tr = simulate(scene)
    demand = tr.field("grip_demand")
    assert demand[0] == pytest.approx(demand[tr.index_at(1.0)], rel=0.01)
    assert tr.outcomes[0]["grip_demand_max"] == pytest.approx(demand[tr.index_at(1.0)], rel=0.01)
    forces = tr.segment_forces(0).sum(axis=0)
    assert forces == pytest.approx([tr.field("aero_x")[0], tr.field("aero_z")[0]], rel=1e-9)


def test_margins_stop_at_the_first_failure():
    # A performer lying prone on a roof of friction 0.3: a first braking of
    # 3.5 m/s^2 makes them slip; a harder one later in the same action would need
    # more grip still. The action's grip ratio is the one at the slip, not the
    # lower one after it, and the action after it is not assessed.
    from physics.records import Event
    from physics.verdict import summarise
    motion = ('keyframes = [{ time = "0 s", speed = "60 km/h" }, { time = "1 s", speed = "60 km/h" }, '
              '{ time = "3 s", speed = "35 km/h" }, { time = "5 s", speed = "35 km/h" }, '
              '{ time = "7 s", speed = "0 km/h" }]')
    cars = ['length = "30 m"\nroof_height = "4 m"\nroof_static = 0.3\nroof_kinetic = 0.2\nbody_static = 0.3\n'
            'body_kinetic = 0.2']
    actions = ['do = "prone"\nduration = "8 s"\ntransition = "0 s"', 'do = "prone"\nduration = "2 s"\ntransition = "0 s"']
    scene = make_scene(motion=motion, body="lumped", cars=cars, actions=actions, start='car = 1\nposition = "15 m"')
    tr = simulate(scene)
    summary = summarise(scene, tr.events, tr.outcomes)
    # The brake comes on over about a second (finite jerk) and slips the body as it builds.
    assert summary["first_failure"]["kind"] == "slip" and summary["first_failure"]["time_s"] < 1.6
    slip = tr.index_at(tr.events[Event.SLIP]["time"])
    ratio = tr.field("grip_available") / tr.field("grip_demand")
    action = summary["actions"][0]
    assert action["grip_ratio_min"] == pytest.approx(np.nanmin(ratio[:slip + 1]), rel=1e-12)
    assert np.nanmin(ratio[slip + 1:]) < 0.8 * action["grip_ratio_min"]   # the harder braking, not counted
    after = summary["actions"][1]
    assert not after["assessed"] and after["verdict"] == "fails" and after["grip_ratio_min"] is None


def test_an_envelope_row_meets_the_air_that_check_meets():
    # The default scene has turbulence. A sweep row at a speed gives the margins
    # a `check --set motion.speed=...` gives at that speed (the same air).
    from physics.scene_load import load_scene
    from physics.sweep import sweep_1d
    from tests.conftest import REPO
    path = REPO / "scenes" / "heritage_excursion.toml"
    sweep = sweep_1d(load_scene(path), "speed", 20 / 3.6, 60 / 3.6, points=5)
    for i, kmh in enumerate((20, 30, 40, 50, 60)):
        single = simulate(load_scene(path, [f"motion.speed={kmh} km/h"]))
        for name in ("grip_ratio_min", "balance_margin_min", "lift_ratio_min", "apparent_wind_max"):
            assert sweep.result.outcomes[i][name] == pytest.approx(single.outcomes[name], rel=1e-6), (kmh, name)


POSTURES_AT_REST = ["stand", "brace", "crouch", "duck", "kneel", "prone"]


@pytest.mark.parametrize("first", POSTURES_AT_REST)
def test_every_change_of_posture_at_rest_in_still_air_holds(first):
    # Common practice, no source: on a stopped consist in still air a performer
    # goes from any of these postures to any other and back without a stumble.
    # (The braced load lagged behind a deliberate change of posture and toppled
    # ten of these thirty changes.)
    from physics.verdict import summarise
    for second in POSTURES_AT_REST:
        if second == first:
            continue
        actions = [f'do = "{first}"\nduration = "3 s"\ntransition = "0 s"',
                   f'do = "{second}"\nduration = "4 s"\ntransition = "1 s"']
        scene = make_scene(speed="0 km/h", body="segmented", actions=actions)
        tr = simulate(scene)
        summary = summarise(scene, tr.events, tr.outcomes)
        assert summary["verdict"] == "holds", (first, second, summary["events"])
        assert not summary["events"], (first, second, summary["events"])


@pytest.mark.parametrize("path", __import__("tests.conftest", fromlist=["SCENES"]).SCENES, ids=lambda p: p.name)
def test_no_body_point_is_ever_inside_a_car_or_below_the_ground(path):
    # Every recorded step of every bundled scene, failures and all: the body is
    # on a roof, in the air, or lying on the ground beside or between the cars.
    from physics.scene_load import load_scene
    scene = load_scene(path)
    tr = simulate(scene)
    ends = tr.ends3()
    x, y, z = (ends[..., i].reshape(len(ends), -1) for i in range(3))
    tolerance = 0.02
    assert z.min() > -tolerance
    for car in scene.cars:
        inside = ((x > car.rear_x + tolerance) & (x < car.front_x - tolerance)
                  & (np.abs(y) < 0.5 * car.width - tolerance)
                  & (z > car.body_bottom + tolerance) & (z < car.roof_z(y) - tolerance))
        assert not inside.any(), (car.name, tr.times[np.argwhere(inside)[0][0]])


@pytest.mark.parametrize("speed,roof", [("160 km/h", "painted steel wet"), ("250 km/h", "painted steel wet"),
                                        ("200 km/h", "painted steel dry"), ("250 km/h", "painted steel dry")])
def test_a_body_blown_off_goes_off_once_and_never_rests_in_the_air(speed, roof):
    # After a slip or topple the body slides, lies, goes over the end and comes down on the ground:
    # a handful of phases, not a chatter on the roof's end, and never "in the air" while resting
    # on a roof (a body the roof holds up is on the roof, not flying).
    from physics.aftermath import phases
    scene = parse_scene(scene_text(speed=speed, roof=roof,
                                   actions=['do = "crouch"\nduration = "6 s"\ntransition = "0 s"']), "t.toml")
    tr = simulate(scene)
    steps = phases(tr)
    assert 2 <= len(steps) <= 8, [p["state"] for p in steps]
    assert steps[-1]["state"] == "on the ground beside or between the cars"
    car = scene.cars[0]
    ends = tr.ends()
    low = ends[..., 1].reshape(len(ends), -1).min(axis=1)
    x = ends[..., 0].reshape(len(ends), -1)
    over = ((x > car.rear_x) & (x < car.front_x)).any(axis=1)
    resting = (tr.field("mode") == Mode.FLIGHT) & over & (np.abs(low - car.roof_height) < 0.01)
    run = max((len(r) for r in np.split(resting, np.flatnonzero(np.diff(resting.astype(int))) + 1) if r.all()),
              default=0)
    assert run * scene.step <= 0.1


def test_gait_push_grows_with_the_gaits_speed_and_ramps_in():
    # Walking at the reference speed asks the roof for 0.2 of body weight (Redfern et al. 2001, from
    # memory); a 1 cm/s crawl asks almost nothing, so it slips no sooner than lying still would.
    from physics.beat import build_timeline
    from physics.scene_load import gait_friction_default
    assert gait_friction_default("walk", 1.4) == pytest.approx(0.2)
    assert gait_friction_default("crawl", 0.01) == pytest.approx(0.2 * 0.01 / 0.6)
    assert gait_friction_default("run", 20.0) == pytest.approx(0.4 * 1.5)
    crawl = ['do = "crawl"\nspeed = "1 cm/s"\nduration = "6 s"\ntransition = "2 s"']
    scene = parse_scene(scene_text(speed="60 km/h", roof="painted steel wet", actions=crawl), "t.toml")
    assert scene.actions[0].gait_friction == pytest.approx(0.2 * 0.01 / 0.6)
    steps = build_timeline(scene).steps
    half = np.searchsorted(steps["time"], 1.0)   # half way through the 2 s transition
    assert steps["gait_friction"][half] == pytest.approx(0.5 * scene.actions[0].gait_friction, rel=0.02)
    assert steps["gait_friction"][np.searchsorted(steps["time"], 3.0)] == pytest.approx(
        scene.actions[0].gait_friction)
    given = parse_scene(scene_text(actions=['do = "walk"\nspeed = "0.5 m/s"\ngait_friction = 0.3\n'
                                            'duration = "4 s"']), "t.toml")
    assert given.actions[0].gait_friction == 0.3   # a value the scene gives is used as given
