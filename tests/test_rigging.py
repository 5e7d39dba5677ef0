"""Rigging: tethers against hand formulas, energy, an independent integration, and the scene keys.

Check values (statics and energy, worked here, no outside source needed):
- a body of mass m sliding at v on friction mu into a slack tether of stiffness k stops when
  1/2 m v^2 = 1/2 k x^2 + mu m g x, so the tether's peak force is F = -mu m g + sqrt((mu m g)^2 + k m v^2)
  (80 kg, 3 m/s, 20 kN/m, mu 0.5: 3.42 kN);
- a body falling h before its tether goes taut stops when m g (h + x) = 1/2 k x^2, so
  F = m g + sqrt((m g)^2 + 2 m g k h).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from physics import G
from physics.engine import flight
from physics.engine.air_load import Drag
from physics.engine.jit import plain_python
from physics.engine.roof_air import Flow
from physics.records import POSTURE, TETHER, TETHER_OUT, Event, FAILURES
from physics.rigging import harness_path, reach, rigging_summary
from physics.rigging_table import LIMIT_DEFAULTS, MATERIALS
from physics.scene_load import parse_scene
from physics.scene_problems import SceneError
from physics.simulation import simulate, variants
from physics.verdict import summarise
from tests.conftest import REPO, scene_text

UNIFORM = Flow(False, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 0.0, 1.0)   # the air over the roof off: uniform wind


def slide_peak(m, v, k, mu):
    return -mu * m * G + math.sqrt((mu * m * G) ** 2 + k * m * v * v)


def fall_peak(m, h, k):
    return m * G + math.sqrt((m * G) ** 2 + 2 * m * G * k * h)


def test_check_values_by_hand():
    assert slide_peak(80, 3.0, 20_000, 0.5) == pytest.approx(3422.6, abs=0.5)   # the 3.42 kN
    # The fall formula at h = 0 is the static doubling of a suddenly applied load.
    assert fall_peak(80, 0.0, 20_000) == pytest.approx(2 * 80 * G)


# ------------------------------------------------------------------ engine runs

FLAT = ('name = "flat"\nlength = "20 m"\nroof_height = "1.2 m"\ncrown = "0 m"\nroof_static = 0.6\n'
        'roof_kinetic = 0.5\nbody_static = 0.55\nbody_kinetic = 0.5')
PRONE_COM_Z = 0.0634   # m: the prone posture's centre of mass above the roof at 1.78 m (the harness's height)


def slide_scene(k="20 kN/m", length="4.05 m", extra=""):
    """A prone body slips when the consist brakes hard to a stop, then slides at some speed into a deck
    tether anchored 2 m behind it at the harness's height (a horizontal pull)."""
    motion = ('keyframes = [ { time = "0 s", speed = "10 m/s" }, { time = "0.5 s", speed = "10 m/s" }, '
              '{ time = "2.0 s", speed = "0 m/s" }, { time = "6 s", speed = "0 m/s" } ]\njerk = "50 m/s^3"')
    rig = (f'[[rigging]]\ncar = 1\nposition = "12 m"\nheight = "{PRONE_COM_Z} m"\nlength = "{length}"\n'
           f'stiffness = "{k}"\ndamping = 0\n{extra}')
    return parse_scene(scene_text(motion=motion, cars=[FLAT], actions=['do = "prone"\nduration = "6 s"\n'
                                                                       'transition = "0 s"'],
                                  extra=rig, mass="80 kg", drag_area='"0.2 m^2"',
                                  start='car = 1\nposition = "10 m"'), "<test>")


def test_slide_into_tether_peaks_as_the_energy_balance_says():
    scene = slide_scene()
    trajectory = simulate(scene)
    out = trajectory.tethers[0]
    taut = trajectory.index_at(float(out["taut_time"]))
    assert trajectory.record["speed"][taut] == 0.0          # the consist has stopped: no pseudo-force
    assert trajectory.record["mode"][taut] == 1             # sliding
    harness = harness_path(trajectory)[taut]
    assert harness[2] == pytest.approx(scene.rigging[0].anchor_z, abs=1e-3)   # a horizontal pull
    v = abs(float(trajectory.record["slide_speed"][taut]))
    assert v > 1.0
    expected = slide_peak(80.0, v, 20_000.0, 0.5)
    assert float(out["peak_force"]) == pytest.approx(expected, rel=0.01)
    arrested = trajectory.events[Event.ARRESTED]
    assert not math.isnan(arrested["time"]) and arrested["demand"] == pytest.approx(out["peak_force"])
    assert Event.ARRESTED not in FAILURES


def test_a_stiffer_tether_holds_harder_and_sooner():
    soft, stiff = simulate(slide_scene("10 kN/m")), simulate(slide_scene("40 kN/m"))
    assert stiff.tethers[0]["peak_force"] > 1.5 * soft.tethers[0]["peak_force"]
    assert stiff.events[Event.ARRESTED]["time"] < soft.events[Event.ARRESTED]["time"]


def test_an_absorber_caps_the_force_and_pays_out():
    plain = simulate(slide_scene("40 kN/m"))
    capped = simulate(slide_scene("40 kN/m", extra='absorber = { deploy_force = "1.5 kN", max_extension = "1 m" }\n'))
    assert plain.tethers[0]["peak_force"] > 2000.0
    assert capped.tethers[0]["peak_force"] == pytest.approx(1500.0, rel=1e-6)
    assert 0.0 < capped.tethers[0]["paid"] < 1.0
    assert capped.record["tether_paid"][-1, 0] == pytest.approx(capped.tethers[0]["paid"])


def test_a_slack_tether_changes_nothing():
    """A tether that never goes taut leaves the run as it was without it."""
    with_tether = simulate(slide_scene(length="15 m"))
    text = scene_text(motion=('keyframes = [ { time = "0 s", speed = "10 m/s" }, { time = "0.5 s", speed = "10 m/s" }, '
                              '{ time = "2.0 s", speed = "0 m/s" }, { time = "6 s", speed = "0 m/s" } ]\njerk = "50 m/s^3"'),
                      cars=[FLAT], actions=['do = "prone"\nduration = "6 s"\ntransition = "0 s"'], mass="80 kg",
                      drag_area='"0.2 m^2"', start='car = 1\nposition = "10 m"')
    without = simulate(parse_scene(text, "<test>"))
    assert math.isnan(with_tether.tethers[0]["taut_time"])
    np.testing.assert_array_equal(with_tether.record["pivot_x"], without.record["pivot_x"])


# ------------------------------------------------------------- the flight step

def _tether_table(anchor_z, length, k, damping=0.0, deploy=math.inf, extension=0.0):
    t = np.zeros(1, TETHER).view(np.recarray)
    t.anchor_z = anchor_z
    t.length = length
    t.stiffness = k
    t.damping_ratio = damping
    t.deploy_force = deploy
    t.max_extension = extension
    t.body_limit = 8000.0
    t.anchor_limit = 22240.0
    return t


def _posture():
    row = np.zeros(1, POSTURE).view(np.recarray)
    row.drag_ratio = 1.0
    return row[0]


NO_DRAG = Drag(np.zeros(12), np.zeros(12), np.zeros(12), True, 0.0, 0.0)


def drop(h, length, k, m=80.0, dt=1 / 240, seconds=1.5, x0=0.0):
    """The engine's flight step with tethers (plain Python): a body released at rest h below... no:
    released with its tether slack by h, anchor at the origin, no air. Rows: t, x, z, vx, vz, force."""
    tethers = _tether_table(0.0, length, k)
    state = np.zeros(1, TETHER_OUT).view(np.recarray)
    z0 = -(length - h) if x0 == 0.0 else -math.sqrt(max((length - h) ** 2 - x0 * x0, 0.0))
    rows = []
    from physics.engine import tether
    with plain_python():
        fl = flight.Flight(x0, z0, 0.0, 0.0, 0, 0.0, 0.0, 0.0, 0.0, 0.0, False, math.nan, 0.0, 0.0, 0.0, 0)
        for n in range(int(round(seconds / dt))):
            p = tether.tether_pull(tethers[0], 0.0, m, fl.x, fl.y, fl.z, fl.vx, fl.vy, fl.vz)
            rows.append((n * dt, fl.x, fl.z, fl.vx, fl.vz, p.force))
            fl = flight.rk4_tethered(fl, _posture(), 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, NO_DRAG, m, dt, tethers, state,
                                     UNIFORM, (0.0, 0.0, 0.0))
    return np.array(rows)


def test_vertical_fall_onto_a_tether_peaks_as_the_energy_balance_says():
    for h, k in ((0.5, 20_000.0), (1.2, 8_000.0)):
        rows = drop(h, 2.0, k)
        assert rows[:, 5].max() == pytest.approx(fall_peak(80.0, h, k), rel=2e-3)


def test_energy_closes_over_an_arrest_to_the_integrators_order():
    """Kinetic + potential + the tether's elastic energy, no damping and no air: what is left over shrinks
    with the step as a fourth-order method's error does once the kink at going taut is passed."""
    def drift(dt):
        m, k, length = 80.0, 20_000.0, 2.0
        rows = drop(1.0, length, k, dt=dt, x0=0.8)
        dist = np.hypot(rows[:, 1], rows[:, 2])
        stretch = np.maximum(dist - length, 0.0)
        energy = 0.5 * m * (rows[:, 3] ** 2 + rows[:, 4] ** 2) + m * G * rows[:, 2] + 0.5 * k * stretch ** 2
        return np.max(np.abs(energy - energy[0])) / (m * G * 1.0)
    coarse, fine = drift(1 / 240), drift(1 / 960)
    assert coarse < 2e-3
    assert fine < coarse / 4


def test_the_tethered_step_without_tethers_is_the_plain_step():
    tethers, state = np.zeros(0, TETHER).view(np.recarray), np.zeros(0, TETHER_OUT).view(np.recarray)
    drag = Drag(np.zeros(12), np.zeros(12), np.zeros(12), True, 0.4, 0.25)
    with plain_python():
        fl = flight.Flight(0.0, 5.0, 2.0, 3.0, 0, 0.1, 0.0, 0.0, 0.0, 0.0, False, math.nan, 0.3, 0.5, 0.0, 0)
        a = flight.rk4(fl, _posture(), 20.0, 19.9, -0.4, 0.1, 3.0, 1.0, drag, 80.0, 1 / 240, UNIFORM, (0.0, 0.0, 0.0))
        b = flight.rk4_tethered(fl, _posture(), 20.0, 19.9, -0.4, 0.1, 3.0, 1.0, drag, 80.0, 1 / 240, tethers, state,
                                UNIFORM, (0.0, 0.0, 0.0))
    assert tuple(a) == tuple(b)


# --------------------------------------------- a whole arrest against solve_ivp

def end_fall_scene():
    """A performer runs off the rear end of a tall car; a tether to an anchor at that end of the roof
    catches them below it, clear of the end wall."""
    cars = ['name = "tall"\nlength = "10 m"\nroof_height = "4.5 m"\ncrown = "0 m"']
    rig = '[[rigging]]\ncar = 1\nposition = "0 m"\nfrom = "rear"\nlength = "2.0 m"\nstiffness = "10 kN/m"\ndamping = 0\n'
    actions = ['do = "run"\nspeed = "3.5 m/s"\ntoward = "rear"\nduration = "3 s"\ntransition = "0.3 s"']
    return parse_scene(scene_text(speed="0 km/h", cars=cars, actions=actions, extra=rig, mass="80 kg",
                                  start='car = 1\nposition = "1.2 m"\nfrom = "rear"',
                                  performer_extra='facing = "rear"'), "<test>")


def test_an_arrest_in_the_air_matches_an_independent_integration():
    """Running off the end, the body's legs drop below the roof while it still overlaps the car, so the
    engine stops it against the end wall (flight.kept_out_of_cars) and it goes straight down beside it,
    held there as the tether pulls it toward the anchor. solve_ivp integrates that motion on its own:
    x held where the wall holds it, gravity and the tether along z, no air."""
    scene = end_fall_scene()
    v = variants(scene)
    v.params["drag_scale"] = 0.0          # no air: the same ODE solve_ivp integrates
    trajectory = simulate(scene, v)
    rec = trajectory.record
    in_air = np.flatnonzero(~np.isfinite(rec["pivot_x"]))
    held = int(in_air[np.flatnonzero(rec["flight_vx"][in_air] == 0.0)[0]])
    x_wall = float(rec["flight_x"][held])
    assert np.all(rec["flight_x"][held:trajectory.index_at(float(trajectory.tethers[0]["peak_time"])) + 2] == x_wall)
    t = scene.rigging[0]
    m = 80.0
    dx = x_wall - t.anchor_x

    def force(z):
        return max(t.stiffness * (math.hypot(dx, z - t.anchor_z) - t.length), 0.0)

    def ode(_, s):
        dist = math.hypot(dx, s[0] - t.anchor_z)
        return [s[1], -G - force(s[0]) * (s[0] - t.anchor_z) / dist / m]
    peak = trajectory.index_at(float(trajectory.tethers[0]["peak_time"]))
    span = np.arange(held, peak + 2)
    sol = solve_ivp(ode, (trajectory.times[held], trajectory.times[span[-1]]),
                    [rec["flight_z"][held], rec["flight_vz"][held]], t_eval=trajectory.times[span], rtol=1e-10,
                    atol=1e-12, max_step=1e-3)
    ref = np.array([force(z) for z in sol.y[0]])
    engine = rec["tether_force"][span, 0]
    assert engine.max() > 3000.0
    np.testing.assert_allclose(engine, ref, atol=5e-3 * engine.max())      # the whole arrest up to its peak
    np.testing.assert_allclose(rec["flight_z"][span], sol.y[0], atol=2e-3)
    assert not math.isnan(trajectory.events[Event.ARRESTED]["time"])
    assert math.isnan(trajectory.events[Event.FALL]["time"])      # the arrest replaces the fall


def test_an_arrest_with_no_failure_leaves_the_action_marginal_not_holding():
    """Running off the end with nothing failing before it, the tether holds the body: the arrest is not a
    failure, but the beat held only by its rigging, so the action is marginal and says why."""
    scene = end_fall_scene()
    trajectory = simulate(scene)
    summary = summarise(scene, trajectory.events, trajectory.outcomes)
    assert summary["first_failure"] is None
    assert summary["verdict"] == "marginal"
    because = summary["actions"][0]["marginal_because"]
    assert because and because[-1]["margin"].startswith("arrested by its rigging")
    assert because[-1]["value"] == pytest.approx(float(trajectory.tethers[0]["peak_force"]))


# ------------------------------------------------------------- the table

def test_running_line_anchor_load_from_statics():
    """A running line of span S, sag d: at mid-span the end anchors take sqrt((P S / 4d)^2 + (P / 2)^2)."""
    from physics.engine import tether
    t = _tether_table(0.0, 1.0, 1.0)[0]
    t.running, t.line_x0, t.line_x1, t.sag = 1, -10.0, 0.0, 0.5
    with plain_python():
        assert tether.anchor_load(t, -5.0, 1000.0) == pytest.approx(math.hypot(1000 * 10 / 2.0, 500.0))
        assert tether.anchor_load(t, -2.0, 1000.0) == pytest.approx(math.hypot(5000.0, 800.0))
        kernel = [tether.anchor_load(t, x, 1000.0) for x in (-12.0, -10.0, -7.5, -5.0, -1.0, 0.0, 3.0)]
    # The pictures' copy of the rule gives the kernel's numbers.
    from physics.rigging import anchor_load
    from physics.scene import Tether
    line = Tether("line", 0, -10.0, 0.0, 1.0, 0.0, True, -10.0, 0.0, 1.0, 1.0, "", 0.0, math.inf, 0.0, 0.5)
    assert [anchor_load(line, x, 1000.0) for x in (-12.0, -10.0, -7.5, -5.0, -1.0, 0.0, 3.0)] == pytest.approx(kernel)


def test_restraint_or_arrest_is_geometry():
    def scene(length):
        rig = f'[[rigging]]\ncar = 1\nposition = "10.3 m"\nlength = "{length}"\nstiffness = "20 kN/m"\n'
        return parse_scene(scene_text(cars=[FLAT], extra=rig), "<test>")
    short = scene("0.6 m")
    restraint = reach(short, short.rigging[0], 1.0)
    assert restraint["role"] == "restraint" and not restraint["reachable"]
    full = 0.6 + 75 * G / 20_000        # length and stretch under the weight; the anchor 0.15 m below a lying harness
    assert restraint["margins_m"]["left side edge"] == pytest.approx(1.4 - math.sqrt(full ** 2 - 0.15 ** 2))
    longer = scene("3 m")
    arrest = reach(longer, longer.rigging[0], 1.0)
    assert arrest["role"] == "arrest" and set(arrest["reachable"]) == {"left side edge", "right side edge"}


def test_summary_numbers_are_the_runs():
    scene = slide_scene()
    trajectory = simulate(scene)
    row = rigging_summary(trajectory)[0]
    assert row["peak_force_n"] == float(trajectory.tethers[0]["peak_force"])
    assert row["free_fall_m"] == 0.0
    assert 0.0 < row["deceleration_distance_m"] < 0.5
    limits = {c["what"]: c for c in row["limits"]}
    assert limits["peak force on the body"]["limit"] == LIMIT_DEFAULTS["arrest_force"]
    assert "1926.502(d)(16)" in limits["peak force on the body"]["source"]


def test_limits_from_safety_make_failures():
    scene = slide_scene(extra="")
    text = scene_text(motion=('keyframes = [ { time = "0 s", speed = "10 m/s" }, { time = "0.5 s", speed = "10 m/s" }, '
                              '{ time = "2.0 s", speed = "0 m/s" }, { time = "6 s", speed = "0 m/s" } ]\njerk = "50 m/s^3"'),
                      cars=[FLAT], actions=['do = "prone"\nduration = "6 s"\ntransition = "0 s"'], mass="80 kg",
                      drag_area='"0.2 m^2"', start='car = 1\nposition = "10 m"',
                      extra=(f'[safety]\narrest_force = "1 kN"\nanchor_load = "1.5 kN"\n[[rigging]]\ncar = 1\n'
                             f'position = "12 m"\nheight = "{PRONE_COM_Z} m"\nlength = "4.05 m"\n'
                             'stiffness = "20 kN/m"\ndamping = 0\n'))
    strict = simulate(parse_scene(text, "<test>"))
    assert simulate(scene).tethers[0]["peak_force"] > 1500
    assert not math.isnan(strict.events[Event.BODY_FORCE]["time"])
    assert not math.isnan(strict.events[Event.ANCHOR_OVERLOAD]["time"])
    words = [e["kind"] for e in summarise(strict.scene, strict.events, strict.outcomes)["events"] if e["failure"]]
    assert "body arrest force over limit" in words and "anchor overload" in words
    row = rigging_summary(strict)[0]
    assert {c["what"]: c["source"] for c in row["limits"]}["peak anchor load"] == "set in the scene's [safety]"


def test_material_gives_stiffness_over_length():
    scene = slide_scene()
    text = scene_text(extra='[[rigging]]\ncar = 1\nposition = "12 m"\nlength = "2.5 m"\nmaterial = "static rope"\n')
    tether = parse_scene(text, "<test>").rigging[0]
    assert tether.stiffness == pytest.approx(MATERIALS["static rope"] / 2.5)
    assert scene.rigging[0].damping_ratio == 0.0


@pytest.mark.parametrize("rig, path, words", [
    ('car = 1\nposition = "12 m"\nlength = "2 m"\n', "rigging[1]", "either stiffness"),
    ('car = 1\nposition = "12 m"\nlength = "2 m"\nstiffness = "20 kN"\n', "rigging[1].stiffness", "N/m"),
    ('car = 1\nposition = "25 m"\nlength = "2 m"\nstiffness = "20 kN/m"\n', "rigging[1].position", "past the end"),
    ('car = 1\nline = { from = "8 m", to = "2 m" }\nlength = "2 m"\nstiffness = "20 kN/m"\n', "rigging[1].line.to",
     "not beyond"),
    ('car = 1\nposition = "2 m"\nlength = "2 m"\nmaterial = "chain"\n', "rigging[1].material", "static rope"),
    ('car = 1\nposition = "2 m"\nlength = "2 m"\nstiffness = "20 kN/m"\nabsorber = { deploy_force = "4 m" }\n',
     "rigging[1].absorber.deploy_force", "force"),
    ('car = 1\nposition = "2 m"\noffset = "3 m"\nlength = "2 m"\nstiffness = "20 kN/m"\n', "rigging[1].offset",
     "side edge"),
])
def test_bad_rigging_is_named_by_its_key(rig, path, words):
    with pytest.raises(SceneError) as info:
        parse_scene(scene_text(extra="[[rigging]]\n" + rig), "<test>")
    rendered = info.value.render()
    assert f": {path}: " in rendered and words in rendered


def test_a_tether_stretched_at_the_start_or_too_stiff_for_the_step_is_refused():
    far = scene_text(extra='[[rigging]]\ncar = 1\nposition = "16 m"\nlength = "2 m"\nstiffness = "20 kN/m"\n')
    with pytest.raises(SceneError) as info:
        parse_scene(far, "<test>")
    assert "rigging[1].length: 2 m does not reach the performer's start, 6.00 m" in info.value.render()
    stiff = scene_text(extra='[[rigging]]\ncar = 1\nposition = "11 m"\nlength = "2 m"\nstiffness = "5000 kN/m"\n')
    with pytest.raises(SceneError) as info:
        parse_scene(stiff, "<test>")
    assert "rigging[1].stiffness" in info.value.render() and "rate" in info.value.render()
    # The same tether at a step fine enough is accepted.
    parse_scene(stiff + '[simulation]\nrate = "2000 Hz"\n', "<test>")


def test_bad_rigging_exits_with_a_message_not_a_traceback(tmp_path, capsys):
    from preview.cli import main
    bad = tmp_path / "bad.toml"
    bad.write_text(scene_text(extra='[[rigging]]\ncar = 3\nposition = "2 m"\nlength = "2 m"\nstiffness = "x"\n'))
    code = main(["check", str(bad)])
    err = capsys.readouterr().err
    assert code != 0 and "Traceback" not in err and "rigging[1].car" in err and "rigging[1].stiffness" in err


def test_bundled_rigging_scenes():
    held = simulate(parse_scene((REPO / "scenes" / "tethered_brake_slip.toml").read_text(), "held"))
    row = rigging_summary(held)[0]
    assert not math.isnan(held.events[Event.ARRESTED]["time"])
    assert all(c["within"] for c in row["limits"])
    over = simulate(parse_scene((REPO / "scenes" / "tethered_edge_fall_overload.toml").read_text(), "over"))
    row = rigging_summary(over)[0]
    assert not math.isnan(over.events[Event.ANCHOR_OVERLOAD]["time"])
    within = {c["what"]: c["within"] for c in row["limits"]}
    assert within["peak anchor load"] is False and within["free fall"] is False   # as its header says
    assert "hanging against the left side" in row["hangs"]


def test_the_legends_say_what_a_tethers_colour_means_only_with_rigging():
    from physics.scene_load import load_scene
    from preview.frame import ViewSettings
    from preview.palette import FAILURE, HOLDS, MARGINAL
    from preview.panels import legend_rows
    from preview.world import tether_colour
    rigged = load_scene(REPO / "scenes" / "tethered_brake_slip.toml")
    plain = load_scene(REPO / "scenes" / "heritage_excursion.toml")
    for frame in ("car", "end"):
        rows = [payload for kind, payload in legend_rows(ViewSettings(frame=frame), "metric", None, rigged)
                if kind == "zone" and "tether" in payload[1]]
        # The three colours the drawing uses, at a quarter, three quarters and twice the limit.
        assert [colour for colour, _ in rows] == [tether_colour(f, 8000.0) for f in (2000.0, 6000.0, 16000.0)]
        assert [colour for colour, _ in rows] == [HOLDS, MARGINAL, FAILURE]
        assert not [p for k, p in legend_rows(ViewSettings(frame=frame), "metric", None, plain)
                    if k == "zone" and "tether" in p[1]]


def test_the_briefs_first_page_names_every_failure_and_rigging_limit_exceeded(tmp_path):
    # The signed page must not stop at the first failure: the anchor overload and the free fall over
    # its limit are on it too.
    import pypdfium2
    from preview.cli import main
    out = tmp_path / "brief.pdf"
    assert main(["brief", str(REPO / "scenes" / "tethered_edge_fall_overload.toml"), "-o", str(out)]) == 0
    page = pypdfium2.PdfDocument(str(out))[0].get_textpage().get_text_range().replace("\r", "").replace("\n", " ")
    assert "Also failed: anchor overload" in page
    assert "peak anchor load 55029 N over its limit 22240 N" in page
    assert "free fall 2.09 m over its limit 1.80 m" in page


@pytest.mark.parametrize("name, over", [("tethered_brake_slip", False), ("tethered_edge_fall_overload", True)])
def test_the_arrest_callout_is_never_green_and_red_when_any_rigging_limit_is_over(name, over):
    from physics.scene_load import load_scene
    from preview.canvas import RecordingCanvas
    from preview.frame import VECTOR_KEYS, ViewSettings, draw_frame
    from preview.palette import FAILURE, MARGINAL
    from preview.session import make_playback
    pb = make_playback(load_scene(REPO / "scenes" / f"{name}.toml"))
    arrest = next(e for e in pb.summary["events"] if e["kind"] == "arrested")
    canvas = RecordingCanvas(size=(1280, 720))
    draw_frame(canvas, pb, min(arrest["time_s"] + 0.5, pb.scene.duration), ViewSettings(vectors=frozenset(VECTOR_KEYS)))
    callouts = [c for c in canvas.calls if c[0] == "text" and c[1][1].startswith("ARRESTED")]
    assert callouts, "no arrest callout drawn"
    assert {c[2] for c in callouts} == {FAILURE if over else MARGINAL}
