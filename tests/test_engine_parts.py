"""The engine's parts alone, at float level, against closed forms and hand cases.

Each part is a function of named records (physics/engine/); here they run as
their Python source (jit.plain_python), the same code numba compiles.
"""

import math

import numpy as np
import pytest

from physics import G, body
from physics.beat import segment_axes
from physics.engine import air_load, flight, overhead, roof, sliding, stance, turbulence
from physics.engine.jit import plain_python
from physics.engine.roof_air import Flow
from physics.records import CAR, LINE, POSTURE, STRUCTURE, Contact

STATURE = 1.78

UNIFORM = Flow(False, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 0.0, 1.0)   # the air over the roof off: uniform wind


@pytest.fixture(autouse=True)
def python_source():
    with plain_python(), np.errstate(over="ignore"):
        yield


def posture_of(name, com=(0.0, 1.0), support=(-0.05, 0.2)):
    ends = body.segment_endpoints(np.array([body.POSTURES[name]], float), STATURE)
    ends[..., 1] -= ends[..., 1].min()
    row = np.zeros(1, POSTURE).view(np.recarray)
    row.ends[0] = ends[0]
    row.axes[0] = segment_axes(ends)[0]
    row.rotates[0] = 1
    row.com_x, row.com_z = com
    row.support_lo, row.support_hi = support
    row.inertia = com[1] ** 2
    row.drag_ratio = 1.0
    return row[0]


def test_lean_into_a_steady_load_matches_closed_form():
    # A body of weight W whose centre of mass is h above the pivot, pushed by a
    # horizontal load F at that height, balances with the pressure under the
    # centre of mass when tan(lean) = F / W (statics; into the load): the lean the
    # load needs. The performer aims to keep the pressure at `aimed_cop` instead,
    # so leans a little more: W h sin(lean) - F h cos(lean) = W * aimed.
    W, h = 75 * G, 1.0
    posture = posture_of("stand", com=(0.0, h), support=(-0.1, 0.1))
    aimed = stance.aimed_cop(posture)
    assert aimed == pytest.approx(-0.1 + stance.QUIET_COP * 0.2)
    for F in (0.0, 50.0, 200.0, 400.0):
        braced = stance.Balance(0.0, 0.0, 0.0, -h * F, W * h, 0.0, 0.0, 0.0, 0.0, False, False)
        target = stance.lean_target(braced, posture, W, math.radians(60))
        assert target.required == pytest.approx(math.atan2(F, W), abs=1e-12)
        lean = target.lean
        assert W * h * math.sin(lean) - F * h * math.cos(lean) == pytest.approx(W * aimed, abs=1e-9)


def test_lean_solve_is_exact_nearest_upright_or_says_unsolvable():
    rng = np.random.default_rng(3)
    for alpha, beta, target in rng.normal(size=(200, 3)):
        theta, ok = stance.solve_lean(alpha, beta, target)
        r = math.hypot(alpha, beta)
        assert ok == (abs(target) <= r)
        if ok:
            assert alpha * math.cos(theta) + beta * math.sin(theta) == pytest.approx(target, abs=1e-9)
            other = 2 * math.atan2(beta, alpha) - theta  # the second root
            assert abs(theta) <= abs(stance.wrap(other)) + 1e-12


@pytest.mark.parametrize("name", sorted(body.POSTURES))
def test_air_load_matches_the_body_drag_area(name):
    # physics.body.drag_area is the same cross-flow rule written in numpy:
    # a headwind w on an unleaned posture gives F = 1/2 rho CdA w^2.
    rho, w = 1.225, 17.0
    constants = body.body_constants(STATURE)
    posture = posture_of(name)
    drag = air_load.Drag(0.5 * rho * constants.crossflow_area, 0.5 * rho * constants.axial_area,
                         0.5 * rho * constants.side_area, False, 0.0, 0.0)
    load = air_load.air_load(posture, 1.0, 0.0, -w, 0.0, 0.0, drag, UNIFORM)
    cda = body.drag_area(np.asarray(posture.ends)[None], constants)[0]
    assert load.fx == pytest.approx(-0.5 * rho * cda * w * w, rel=1e-12)
    assert load.fy == 0.0


def test_lumped_air_load_is_one_drag_area_at_the_centre_of_mass():
    posture = posture_of("stand", com=(0.1, 1.0))
    q = 0.5 * 1.2 * 0.7
    load = air_load.air_load(posture, 1.0, 0.0, -10.0, 3.0, 0.0, air_load.Drag(None, None, None, True, q, 0.6 * q),
                             UNIFORM)
    speed = math.hypot(10.0, 3.0)
    # Across the track the lumped body shows its side-on drag area (here 0.6 of the frontal).
    assert (load.fx, load.fy, load.fz) == pytest.approx((-q * speed * 10.0, 0.6 * q * speed * 3.0, 0.0))
    assert load.roll == pytest.approx(1.0 * load.fy)             # com_z * fy
    assert load.torque_cos == pytest.approx(1.0 * load.fx)      # com_z * fx - com_x * fz
    assert load.torque_sin == pytest.approx(-0.1 * load.fx)     # -com_x * fx - com_z * fz


def cars_table():
    cars = np.zeros(2, CAR).view(np.recarray)
    cars[0] = (0.0, -20.0, 3.9, 2.8, 0.0, 0.6, 0.5, 0.4, 0.3, 0.0, 1.0, 0.0, 0.0, 0.0)
    cars[1] = (-21.0, -41.0, 4.1, 2.8, 0.0, 0.8, 0.6, 0.5, 0.4, 0.0, 1.0, 0.0, 0.0, 0.0)
    return cars


def test_roof_friction_per_car_contact_and_scale():
    cars = cars_table()
    scale = np.array([1.0, 0.5])
    assert roof.car_at(cars, -10.0) == 0 and roof.car_at(cars, -20.5) == -1 and roof.car_at(cars, -30.0) == 1
    assert roof.roof_friction(cars, 1, Contact.FEET, scale) == (0.4, 0.3)
    assert roof.roof_friction(cars, 1, Contact.KNEES, scale) == (0.25, 0.2)
    assert roof.roof_friction(cars, -1, Contact.FEET, scale) == (0.0, 0.0)


def test_landing_rule_at_its_boundary():
    # Impact friction takes out mu_s (|vz| + g 0.2 s); the rest must skid out
    # within MIN_SKID at mu_k: v^2 = 2 mu_k g d (hand numbers below).
    cars = cars_table()
    landed = posture_of("crouch")
    low_x = flight.reach(landed, 0.0, 0.0, 0.0).low_x
    fl = flight.Flight(0.0, 0.0, 0.0, 0.0, 0, 0.0, 0.3, -1.0, -0.4, 0.4, False, math.nan, 0.0, 0.0, 0.0, 0)
    impact = 0.6 * (3.0 + G * flight.LANDING_ABSORB_TIME)
    skid = math.sqrt(2 * 0.5 * G * flight.MIN_SKID)
    for vx, hard in ((impact + skid - 0.01, False), (impact + skid + 0.01, True)):
        cross = flight.Crossing(0.5, -10.0, vx, -3.0)
        ld = flight.land(cars, 0, cross, fl, landed, np.ones(2), 0.0)
        assert ld.hard == hard
        assert ld.pivot == pytest.approx(-10.0 + 0.3 - low_x)
        assert ld.absorb == pytest.approx(impact + skid)
    # Half the friction on that roof: the same touchdown is hard.
    cross = flight.Crossing(0.5, -10.0, impact + skid - 0.01, -3.0)
    assert flight.land(cars, 0, cross, fl, landed, np.array([0.5, 1.0]), 0.0).hard


def test_overhead_hand_case():
    # A standing performer 1.78 m tall on a 3.9 m roof under a 5.2 m soffit:
    # the head is 0.48 m into the structure; a wire at 7.0 m with a 1.0 m
    # exclusion distance is 0.32 m clear of the head.
    posture = posture_of("stand")
    structures = np.array([(10.0, 4.0, 5.2)], STRUCTURE).view(np.recarray)
    lines = np.array([(-50.0, 100.0, 7.0, 1.0)], LINE).view(np.recarray)
    ov = overhead.overhead_check(posture, 0.0, -8.0, 3.9, False, 20.0, structures, lines)
    assert ov.struck and ov.strike_z == pytest.approx(3.9 + STATURE) and ov.soffit == 5.2
    assert ov.clearance == pytest.approx(5.2 - 3.9 - STATURE)
    assert not ov.in_zone
    clear = overhead.overhead_check(posture, 0.0, -8.0, 3.9, False, 0.0, structures, lines)
    assert not clear.struck and clear.clearance == pytest.approx(7.0 - 1.0 - 3.9 - STATURE)


def test_grip_demand_and_slide():
    air = air_load.AirLoad(-120.0, 30.0, 40.0, 0.0, 0.0, 0.0)
    grip = sliding.grip_demand(air, 75.0, -1.0, 0.0, 30.0, 1.0, G)
    assert grip.need_x == pytest.approx(120.0 - 75.0)
    assert grip.static_normal == pytest.approx(75 * G - 40.0)
    assert grip.demand == pytest.approx(math.hypot(45.0, -30.0) / (75 * G - 40.0))
    # On a roof tilted 0.1 rad across the track the normal load is W cos(0.1) less the lift.
    assert sliding.grip_demand(air, 75.0, -1.0, 0.0, 30.0, math.cos(0.1), G).static_normal == pytest.approx(
        75 * G * math.cos(0.1) - 40.0)
    # A slide under kinetic friction alone decelerates at mu_k g and stops.
    u, w, udot, stopped = sliding.slide_step(-1.0, 0.0, 0.0, 0.0, 75.0, 0.5, 75 * G, 0.0, 0.01)
    assert udot == pytest.approx(0.5 * G) and u == pytest.approx(-1.0 + 0.01 * 0.5 * G) and not stopped
    assert w == 0.0
    assert sliding.slide_step(-0.01, 0.0, 0.0, 0.0, 75.0, 0.5, 75 * G, 0.0, 0.01)[3]
    # Sliding at 45 degrees across the track, friction opposes the motion: mu_k g along each axis / sqrt 2.
    u, w, udot, stopped = sliding.slide_step(-1.0, -1.0, 0.0, 0.0, 75.0, 0.5, 75 * G, 0.0, 0.01)
    assert udot == pytest.approx(0.5 * G / math.sqrt(2)) and w == pytest.approx(u)


def test_splitmix64_reference_outputs():
    # The first outputs of splitmix64 from state 0, as printed by the public
    # reference implementation (from memory; checked here with Python integers too).
    state = np.uint64(0)
    outputs = []
    for _ in range(2):
        state, z = turbulence.splitmix64(state)
        outputs.append(int(z))
    assert outputs == [0xE220A8397B1DCDAF, 0x6E789E6AA1B965F4]


def test_turbulence_has_its_intensity_and_correlation():
    # First-order Gauss-Markov: stationary standard deviation sigma, and samples
    # dt apart correlate by exp(-dt V / L) (V the body's speed through the air).
    sigma, length, speed = 1.5, 40.0, 20.0
    tb = turbulence.start_turbulence(7, sigma)
    knots = []
    step = turbulence.TURBULENCE_STEP
    for k in range(1, 40_000):
        tb = turbulence.advance_turbulence(tb, k * step, speed, sigma, length)
        knots.append(tb.knot_prev)
    x = np.array(knots)
    assert x.std() == pytest.approx(sigma, rel=0.05)
    lag = np.corrcoef(x[:-1], x[1:])[0, 1]
    assert lag == pytest.approx(math.exp(-step * speed / length), abs=0.01)
