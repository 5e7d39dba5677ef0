"""Flight: the engine's integrator against closed forms and solve_ivp; jumps and drift."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from physics import G, body
from physics.beat import segment_axes
from physics.engine import flight
from physics.engine.air_load import Drag
from physics.engine.jit import plain_python
from physics.engine.roof_air import Flow
from physics.records import POSTURE, TETHER, TETHER_OUT, Event, Mode
from physics.simulation import simulate
from physics.verdict import summarise
from tests.conftest import make_scene

DT = 1 / 240
RHO = 1.225

UNIFORM = Flow(False, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 0.0, 1.0)   # the air over the roof off: uniform wind


def posture_record(ends=None):
    """A records.POSTURE row (a lumped body has no segments to speak of)."""
    row = np.zeros(1, POSTURE).view(np.recarray)
    row.drag_ratio = 1.0
    if ends is not None:
        row.ends[0] = ends
        row.axes[0] = segment_axes(ends[None])[0]
    return row[0]


# No rigging: the flight step's tether tables, empty.
NO_TETHERS = np.zeros(0, TETHER).view(np.recarray)
NO_TETHER_STATE = np.zeros(0, TETHER_OUT).view(np.recarray)


def fly(posture, drag, mass, vx0, vz0, seconds, dt=DT, V=0.0, wind=0.0):
    """The engine's own RK4 flight step, run at float level: (n + 1, 4) x, z, vx, vz in the car frame."""
    n = int(round(seconds / dt))
    out = np.empty((n + 1, 4))
    with plain_python():
        fl = flight.Flight(0.0, 0.0, vx0, vz0, 0, 0.0, 0.0, 0.0, 0.0, 0.0, False, math.nan, 0.0, 0.0, 0.0, 0)
        out[0] = fl.x, fl.z, fl.vx, fl.vz
        for k in range(n):
            fl = flight.rk4(fl, posture, V, V, 0.0, 0.0, wind, 0.0, drag, mass, dt, UNIFORM, (0.0, 0.0, 0.0))
            out[k + 1] = fl.x, fl.z, fl.vx, fl.vz
    return out


def lumped_fly(mass, cda, vz0, seconds, rho=RHO, dt=DT, vx0=0.0, V=0.0, wind=0.0):
    zeros = np.zeros(body.N_SEGMENTS)
    return fly(posture_record(), Drag(zeros, zeros, zeros, True, 0.5 * rho * cda, 0.5 * rho * cda), mass, vx0, vz0,
               seconds, dt, V, wind)


def test_falling_from_rest_matches_closed_form():
    # Fowles & Cassiday, Analytical Mechanics sec. 2.4: v = vT tanh(g t / vT),
    # y = (vT^2 / g) ln cosh(g t / vT); 95 % of terminal speed at t = (vT/g) atanh(0.95).
    mass, cda = 80.0, 0.44
    vt = math.sqrt(mass * G / (0.5 * RHO * cda))
    t95 = vt / G * math.atanh(0.95)
    out = lumped_fly(mass, cda, 0.0, t95 + 1.0)
    t = np.arange(out.shape[0]) * DT
    speed = -out[:, 3]
    t_engine = np.interp(0.95 * vt, speed, t)
    assert t_engine == pytest.approx(t95, abs=1e-3)
    drop = -np.interp(t95, t, out[:, 1])
    assert drop == pytest.approx(vt**2 / G * math.log(math.cosh(G * t95 / vt)), abs=0.01)


def test_belly_to_earth_terminal_speed():
    # Common practice, no source: a belly-to-earth skydiver falls at about 54 m/s.
    out = lumped_fly(80.0, 0.44, 0.0, 40.0, dt=1 / 60)
    assert -out[-1, 3] == pytest.approx(54.0, rel=0.02)


def test_thrown_up_apex_matches_closed_form():
    # Fowles & Cassiday sec. 2.4: y_max = (vT^2 / 2g) ln(1 + v0^2/vT^2), t_up = (vT/g) atan(v0/vT).
    mass, cda, v0 = 70.0, 1.65, 15.0
    vt = math.sqrt(mass * G / (0.5 * RHO * cda))
    out = lumped_fly(mass, cda, v0, 3.0)
    t = np.arange(out.shape[0]) * DT
    k = np.argmax(out[:, 1])
    assert out[k, 1] == pytest.approx(vt**2 / (2 * G) * math.log(1 + v0**2 / vt**2), abs=0.005)
    t_up = np.interp(0.0, -out[k - 3:k + 3, 3], t[k - 3:k + 3])
    assert t_up == pytest.approx(vt / G * math.atan(v0 / vt), abs=1e-3)


def test_terminal_speed_worked_example():
    # FE-exam style worked problem: 70 kg, Cd 1.5, A 1.1 m^2, rho 1.22 -> 26.1 m/s.
    out = lumped_fly(70.0, 1.5 * 1.1, 0.0, 30.0, rho=1.22, dt=1 / 60)
    assert -out[-1, 3] == pytest.approx(26.1, abs=0.1)


def segmented_rhs(ends_row, constants, mass, rho, V, wind):
    """An independent numpy implementation of the cross-flow drag on a rigid posture."""
    axis = ends_row[:, 1, :] - ends_row[:, 0, :]
    e = axis / np.linalg.norm(axis, axis=1, keepdims=True)

    def rhs(t, y):
        vx, vz = y[2], y[3]
        w = np.array([wind - (V + vx), -vz])
        along = e @ w
        wn = w[None, :] - along[:, None] * e
        nmag = np.linalg.norm(wn, axis=1)
        force = 0.5 * rho * (constants.crossflow_area[:, None] * nmag[:, None] * wn
                             + constants.axial_area[:, None] * (np.abs(along) * along)[:, None] * e)
        fx, fz = force.sum(axis=0)
        return [vx, vz, fx / mass, fz / mass - G]
    return rhs


@pytest.mark.parametrize("vx0, vz0, V, wind", [(3.0, 3.0, 0.0, 0.0), (4.0, 2.5, 25.0, 0.0), (-4.0, 2.5, 25.0, 0.0),
                                               (2.0, 4.0, 15.0, -8.0), (0.0, 3.0, 40.0, 5.0)])
def test_segmented_flight_against_solve_ivp(vx0, vz0, V, wind):
    # scipy.integrate.solve_ivp (DOP853, rtol 1e-10) on an independent numpy
    # drag model: landing point (back to take-off height) within 1 cm.
    stature, mass, rho = 1.8, 78.0, 1.2
    angles = np.array([body.POSTURES["tuck"]], float)
    ends = body.segment_endpoints(angles, stature)
    constants = body.body_constants(stature)
    ref = solve_ivp(segmented_rhs(ends[0], constants, mass, rho, V, wind), (0, 3), [0, 0, vx0, vz0],
                    method="DOP853", rtol=1e-10, atol=1e-12, dense_output=True,
                    events=lambda t, y: y[1] if t > 0.05 else 1.0)
    t_land = ref.t_events[0][0]
    x_ref = ref.sol(t_land)[0]
    drag = Drag(0.5 * rho * constants.crossflow_area, 0.5 * rho * constants.axial_area,
                0.5 * rho * constants.side_area, False, 0.0, 0.0)
    out = fly(posture_record(ends[0]), drag, mass, vx0, vz0, (int(t_land / DT) + 5) * DT, V=V, wind=wind)
    z = out[:, 1]
    k = np.nonzero((z[:-1] > 0) & (z[1:] <= 0))[0][-1]
    x_engine = np.interp(0.0, [z[k + 1], z[k]], [out[k + 1, 0], out[k, 0]])
    assert x_engine == pytest.approx(x_ref, abs=0.01)


JUMP = ('do = "jump"\ntoward = "{toward}"\ntakeoff_car = 1\ntakeoff_position = "10 m"\ntakeoff_from = "rear"\n'
        'takeoff_speed = "{v} m/s"\ntakeoff_angle = "{angle} deg"\nair_posture = "upright"\nlanding_car = 1\n'
        'duration = "2 s"\ntransition = "0 s"')


def landing_offset(speed_kmh, angle=90, v=2.8, toward="front", extra_air="0 m/s"):
    """extra_air: a tailwind, e.g. equal to the consist speed for air moving with the car."""
    scene = make_scene(speed=f"{speed_kmh} km/h", body="lumped",
                       actions=[JUMP.format(toward=toward, v=v, angle=angle)],
                       start='car = 1\nposition = "10 m"\nfrom = "rear"', wind=extra_air, wind_from="180 deg")
    tr = simulate(scene)
    mode = tr.field("mode")
    takeoff = np.argmax(mode == Mode.FLIGHT)
    land = takeoff + np.argmax(mode[takeoff:] != Mode.FLIGHT)
    return tr.field("pivot_x")[land] - tr.field("pivot_x")[takeoff - 1], tr, scene


def test_straight_up_jump_drifts_back_more_with_speed():
    # Common practice, no source: a straight-up jump on a moving car lands
    # behind its take-off point in the car frame, more so the faster the car.
    d60, _, _ = landing_offset(60)
    d120, _, _ = landing_offset(120)
    assert d60 < -0.05
    assert d120 < d60 < 0


def test_straight_up_jump_in_still_air_relative_to_car_lands_in_place():
    # Common practice, no source: inside a closed car (air moving with the car,
    # no apparent wind) a straight-up jump lands on its take-off point.
    d, _, _ = landing_offset(60, extra_air="60 km/h")
    assert abs(d) < 0.01


def test_stopped_consist_jump_matches_projectile_with_drag():
    # With the consist stopped and no wind the jump is plain projectile motion
    # with drag; compare against solve_ivp of the lumped body (rho 1.225, CdA scaled by posture).
    d, tr, scene = landing_offset(0, angle=40, v=4.0)
    ratio = tr.timeline.postures["drag_ratio"][tr.timeline.actions["air_row"][0]]
    k = 0.5 * 1.225 * 0.7 * ratio / 75.0
    v0 = np.array([4.0 * math.cos(math.radians(40)), 4.0 * math.sin(math.radians(40))])

    def rhs(t, y):
        speed = math.hypot(y[2], y[3])
        return [y[2], y[3], -k * speed * y[2], -k * speed * y[3] - G]
    # The air posture leaves with its feet on the roof and lands when they come
    # back to it: the com returns to its take-off height.
    ref = solve_ivp(rhs, (0, 2), [0, 0, *v0], rtol=1e-10, atol=1e-12, events=lambda t, y: y[1] if t > 0.05 else 1)
    mode = tr.field("mode")
    takeoff = np.argmax(mode == Mode.FLIGHT)
    land = takeoff + np.argmax(mode[takeoff:] != Mode.FLIGHT)
    flight_x = tr.com_path[land - 1, 0] - tr.com_path[takeoff, 0]
    assert flight_x == pytest.approx(ref.y_events[0][0][0] + 0, abs=0.05)
    # Ground and car frames coincide when the consist is stopped.
    assert np.all(tr.field("distance") == 0.0)


def test_heritage_gap_is_cleared_standing_still():
    # Common practice, no source: gaps between heritage coaches are about 1 m;
    # an adult of ordinary fitness (standing long jump 2.16-2.28 m, coaching
    # tables after Hede 2011) clears one from a standstill on a stopped consist.
    cars = ['name = "A"\nlength = "18 m"\nroof_height = "3.9 m"\ngap = "1.0 m"',
            'name = "B"\nlength = "18 m"\nroof_height = "3.9 m"']
    jump = ('do = "jump"\ntoward = "rear"\ntakeoff_car = 1\ntakeoff_position = "0.3 m"\ntakeoff_from = "rear"\n'
            'takeoff_angle = "35 deg"\nlanding_car = 2\nduration = "3 s"\ntransition = "0.3 s"')
    scene = make_scene(speed="0 km/h", body="segmented", cars=cars, actions=[jump],
                       start='car = 1\nposition = "0.3 m"\nfrom = "rear"',
                       performer_extra='standing_long_jump = "2.2 m"\nrecovery_step = "0.6 m"\nfacing = "rear"')
    tr = simulate(scene)
    summary = summarise(scene, tr.events, tr.outcomes)
    assert summary["first_failure"] is None
    assert summary["actions"][0]["landing_margin_min_m"] > 0.3


def test_frontward_crossing_fails_above_a_speed_where_rearward_holds():
    # For a fixed effort there is a speed above which the frontward crossing of
    # the bundled gap fails while the rearward one still holds (the apparent
    # wind helps a rearward jump). Located by bisection on the consist speed.
    from physics.scene_load import load_scene
    from tests.conftest import REPO
    front = load_scene(REPO / "scenes" / "gap_crossing_frontward.toml")
    rear = load_scene(REPO / "scenes" / "gap_crossing_rearward.toml")

    def fails(scene, kmh):
        from physics.scene_load import load_scene as ls
        s = ls(scene.source, [f"motion.speed={kmh} km/h"])
        tr = simulate(s)
        return any(e["kind"] == "fall" for e in summarise(s, tr.events, tr.outcomes)["events"])
    lo, hi = 0.0, 90.0
    assert not fails(front, lo) and fails(front, hi)
    for _ in range(12):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if not fails(front, mid) else (lo, mid)
    threshold = hi
    assert 20.0 < threshold < 90.0
    assert not fails(rear, threshold + 1.0)
    print(f"frontward crossing falls above {threshold:.1f} km/h; rearward still lands there")


def test_landing_time_and_place_match_an_independent_solve_ivp():
    # A lumped body jumps on a braking consist in a quartering wind. From the
    # engine's take-off state, scipy's solve_ivp (DOP853, rtol 1e-11) of the
    # same forces finds when the lowest body point reaches the roof: the
    # engine's touchdown must be within a millisecond, and its ground x the
    # car-frame x plus the consist's travel at that very moment.
    from physics import consist
    motion = 'keyframes = [{ time = "0 s", speed = "60 km/h" }, { time = "10 s", speed = "20 km/h" }]'
    jump = ('do = "jump"\ntoward = "front"\ntakeoff_car = 1\ntakeoff_position = "10 m"\ntakeoff_from = "rear"\n'
            'takeoff_speed = "3.2 m/s"\ntakeoff_angle = "50 deg"\nair_posture = "tuck"\nlanding_car = 1\n'
            'duration = "2 s"\ntransition = "0 s"')
    scene = make_scene(motion=motion, body="lumped", actions=[jump], wind="5 m/s", wind_from="30 deg",
                       start='car = 1\nposition = "10 m"\nfrom = "rear"')
    tr = simulate(scene)
    k = int(np.argmax(tr.field("mode") == Mode.FLIGHT))
    r = tr.record[k]
    t0 = tr.times[k]
    air_row = tr.timeline.actions["air_row"][0]
    posture = tr.timeline.postures[air_row]
    low_dz = posture["ends"][..., 1].min() - posture["com_z"]
    q = 0.5 * scene.air.density * 0.7 * posture["drag_ratio"]
    ux, uy = r["wind_x"], r["wind_y"]
    mass = scene.performer.mass
    accel = (20 - 60) / 3.6 / 10.0

    def rhs(t, y):
        V = 60 / 3.6 + accel * (t0 + t)
        w = np.array([ux - (V + y[2]), uy, -y[3]])
        speed = np.linalg.norm(w)
        return [y[2], y[3], q * speed * w[0] / mass - accel, q * speed * w[2] / mass - G]

    def touch(t, y):
        return y[1] + low_dz - scene.cars[0].roof_height
    touch.terminal, touch.direction = True, -1
    ref = solve_ivp(rhs, (0, 3), [r["flight_x"], r["flight_z"], r["flight_vx"], r["flight_vz"]], method="DOP853",
                    rtol=1e-11, atol=1e-12, events=touch)
    t_ref = t0 + ref.t_events[0][0]
    out = tr.outcomes[0]
    assert out["touchdown_time"] == pytest.approx(t_ref, abs=1e-3)
    event = tr.events[Event.TOUCHDOWN]
    assert event["time"] == out["touchdown_time"]
    travel = float(consist.distance_travelled(scene.keyframes, event["time"]))
    assert event["x_ground"] - event["x_car"] == pytest.approx(travel, abs=1e-6)


def test_the_landing_roof_friction_decides_the_landing():
    # The landing check uses the friction of the roof it lands on, as scaled by
    # sweeps and Monte Carlo: with coach B's roof at 1.0, 0.2 and 0.05 of its
    # value the same touchdown holds, then is a hard landing, and the friction's
    # absorbing capacity mu_s (|vz| + g t) + sqrt(2 mu_k g d) shrinks with it.
    from physics.scene_load import load_scene
    from physics.simulation import simulate_batch, variants
    from tests.conftest import REPO
    scene = load_scene(REPO / "scenes" / "gap_crossing_rearward.toml")
    v = variants(scene, 3)
    v.roof_scale[:, 1] = [1.0, 0.2, 0.05]
    result = simulate_batch(scene, v)
    touch = result.events[:, Event.TOUCHDOWN]
    assert np.all(touch["time"] == touch["time"][0])          # the same flight each time
    hard = result.events[:, Event.HARD_LANDING]
    assert np.isnan(hard["time"][0]) and not np.isnan(hard["time"][1:]).any()
    vz = touch["available"][0]
    car = scene.cars[1]
    for row, scale in ((1, 0.2), (2, 0.05)):
        expected = (car.sole_static * scale * (vz + G * flight.LANDING_ABSORB_TIME)
                    + math.sqrt(2 * car.sole_kinetic * scale * G * max(scene.performer.recovery_step,
                                                                       flight.MIN_SKID)))
        assert hard["available"][row] == pytest.approx(expected, rel=1e-9)


def short_jump(landing_car, speed="2.0 m/s"):
    cars = ['name = "A"\nlength = "18 m"\nroof_height = "3.9 m"\ngap = "1.0 m"',
            'name = "B"\nlength = "18 m"\nroof_height = "3.9 m"']
    jump = ('do = "jump"\ntoward = "rear"\ntakeoff_car = 1\ntakeoff_position = "0.5 m"\ntakeoff_from = "rear"\n'
            f'takeoff_speed = "{speed}"\ntakeoff_angle = "35 deg"\nlanding_car = {landing_car}\n'
            'duration = "3 s"\ntransition = "0.3 s"')
    scene = make_scene(speed="0 km/h", body="segmented", cars=cars, actions=[jump],
                       start='car = 1\nposition = "0.5 m"\nfrom = "rear"',
                       performer_extra='recovery_step = "0.6 m"\nfacing = "rear"')
    tr = simulate(scene)
    return scene, tr, summarise(scene, tr.events, tr.outcomes)


def test_a_jump_that_comes_down_short_of_its_landing_car_fails():
    # Declared for car B, the weak jump comes back down on car A: a missed
    # landing that says where it came down and by how much it missed.
    scene, tr, summary = short_jump(landing_car=2)
    assert tr.outcomes[0]["touchdown_car"] == 0
    first = summary["first_failure"]
    assert first["kind"] == "missed landing"
    miss = first["x_car_m"] - scene.cars[1].front_x  # car B lies behind car A (toward -x)
    assert miss > 0 and first["demand"] == pytest.approx(miss)
    assert first["detail"] == f"came down on A, {miss:.2f} m short of B"
    assert summary["actions"][0]["landing_margin_min_m"] == pytest.approx(-miss)
    assert summary["verdict"] == "fails"
    # Declared for car A, the same jump holds.
    _, _, same = short_jump(landing_car=1)
    assert same["first_failure"] is None
