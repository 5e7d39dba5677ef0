"""Two performers acting on each other: the issue's check values, and the scene keys.

Check values (physics.engine.partners): in the air a shove conserves the pair's momentum (to the
integrator's rounding: the forces are equal and opposite and held over each step); a catch in the
air conserves it across the catch and leaves the two moving together at the common velocity
(m1 v1 + m2 v2) / (m1 + m2) (Newton's third law; a perfectly inelastic collision, any mechanics
text); on the roof the reaction of a steady push adds F / W to the pusher's grip demand (lumped
bodies, still air or a headwind along the push: the loads add along the track)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from physics import G
from physics.records import Event, Mode
from physics.scene_load import SceneError, parse_scene
from physics.simulation import simulate, variants
from tests.conftest import REPO

HEAD = """
title = "two performers (test)"
[consist]
roof = "painted steel dry"
[[consist.cars]]
name = "flat car"
length = "20 m"
roof_height = "1.2 m"
[motion]
speed = "{speed} km/h"
"""


def performer(name, position, actions, mass=80, facing="front", lumped=False):
    body = 'body = "lumped"\ndrag_area = "0.7 m^2"\n' if lumped else 'drag_area = "0.7 m^2"\n'
    text = (f'[[performers]]\nname = "{name}"\nstature = "1.8 m"\nmass = "{mass} kg"\n{body}facing = "{facing}"\n'
            f'recovery_step = "0.5 m"\nstart = {{ car = 1, position = "{position} m", from = "front" }}\n')
    for a in actions:
        text += "[[performers.actions]]\n" + "".join(
            f"{k} = {str(v).lower() if isinstance(v, bool) else repr(v)}\n".replace("'", '"') for k, v in a.items())
    return text


def jump_up(speed, duration):
    return {"do": "jump", "takeoff_car": 1, "takeoff_position": "10 m", "takeoff_from": "front",
            "takeoff_speed": f"{speed} m/s", "takeoff_angle": "90 deg", "air_posture": "upright", "landing_car": 1,
            "duration": f"{duration} s", "transition": "0 s"}


def still_air(scene):
    """The scene's variant with next to no air, so that only the performers and gravity act in the air."""
    v = variants(scene)
    v.params["density"] = 1e-12
    return v


def momentum(tr, mass):
    """(T, 3) the body's momentum relative to the roof in the air (NaN on the roof)."""
    r = tr.record
    return mass * np.stack([r["flight_vx"], r["flight_vy"], r["flight_vz"]], axis=-1)


def both_in_air(a, b):
    return np.isfinite(a.record["flight_vx"]) & np.isfinite(b.record["flight_vx"]) & (a.record["mode"] == 2) & (
        b.record["mode"] == 2)


def test_a_shove_in_the_air_conserves_the_pairs_momentum():
    text = HEAD.format(speed=0) + performer("Ada", 10, [
        jump_up(3.0, 0.4), {"do": "shove", "partner": "Bo", "force": "300 N", "duration": "0.3 s",
                            "transition": "0 s"}, {"do": "stand", "duration": "1 s"}]) + performer(
        "Bo", 10.5, [jump_up(3.0, 0.4), {"do": "stand", "duration": "1.3 s"}], mass=70)
    scene = parse_scene(text, "shove_in_air.toml")
    a = simulate(scene, still_air(scene))
    b = a.partners[0]
    air = both_in_air(a, b)
    pushing = air & (np.abs(b.record["touch_fx"]) > 0)
    assert pushing.sum() > 30, "the shove must act while both are in the air"
    total = momentum(a, 80) + momentum(b, 70)
    t = a.times
    total[:, 2] += 150 * G * t   # gravity's impulse on both
    span = total[air]
    # Each body's own momentum changes by the shove's impulse (about 57 N s) ...
    assert np.ptp(momentum(b, 70)[air][:, 0]) > 40
    # ... the pair's does not, to rounding.
    assert np.ptp(span[:, 0]) < 1e-9 and np.ptp(span[:, 1]) < 1e-9 and np.ptp(span[:, 2]) < 1e-9
    # The recorded forces are equal and opposite at every step.
    assert np.array_equal(a.record["touch_fx"], -b.record["touch_fx"])
    assert a.links[0]["impulse"] == pytest.approx(abs(np.ptp(momentum(b, 70)[air][:, 0])), rel=0.05)


def test_a_catch_in_the_air_conserves_momentum_and_gathers_the_flyer_in():
    text = HEAD.format(speed=0) + performer("Cy", 10.9, [
        {"do": "stand", "duration": "0.35 s", "transition": "0 s"},
        {"do": "jump", "takeoff_car": 1, "takeoff_position": "10.9 m", "takeoff_from": "front",
         "takeoff_speed": "3 m/s", "takeoff_angle": "45 deg", "air_posture": "upright", "landing_car": 1,
         "duration": "1.65 s", "transition": "0 s"}], mass=65) + performer(
        "Di", 10, [jump_up(4.2, 0.35), {"do": "catch", "partner": "Cy", "duration": "1.65 s", "transition": "0 s"}],
        mass=85)
    scene = parse_scene(text, "catch_in_air.toml")
    cy = simulate(scene, still_air(scene))
    di = cy.partners[0]
    air = both_in_air(cy, di)
    first, last = np.flatnonzero(air)[[0, -1]]
    link = cy.links[0]
    assert math.isfinite(link["engaged"]), "the catch closes"
    assert not link["lost"] <= cy.times[last], "the catch holds while both are in the air"
    total = momentum(cy, 65) + momentum(di, 85)
    total[:, 2] += 150 * G * cy.times
    assert np.ptp(total[air][:, 0]) < 1e-9 and np.ptp(total[air][:, 2]) < 1e-9
    # The pair's velocity is what it was before the catch: the catch moves only their velocity difference.
    v = lambda tr, k: np.array([tr.record["flight_vx"][k], tr.record["flight_vz"][k]])  # noqa: E731
    pair = lambda k: (65 * v(cy, k) + 85 * v(di, k)) / 150 + np.array([0.0, G * cy.times[k]])  # noqa: E731
    np.testing.assert_allclose(pair(last), pair(first), atol=1e-9)
    # The flyer comes toward the catcher and the arms take speed out of that approach ...
    rel = lambda k: np.linalg.norm(v(cy, k) - v(di, k))  # noqa: E731
    assert rel(first) > 2.0 and rel(last) < 0.75 * rel(first)
    # ... and gather the flyer in: nearer than where the hands closed, never held at arm's length.
    d = np.linalg.norm(cy.com_path - di.com_path, axis=1)
    closed = cy.index_at(float(link["engaged"]))
    assert d[last] < d[closed] - 0.3
    force = np.sqrt(sum(di.record[f"touch_f{a}"] ** 2 for a in "xyz"))
    assert 0.0 < force[air].max() < 1200.0


def test_a_hold_is_not_loaded_by_where_the_hands_act_jumping():
    # Ivo holds Jo's arm while Jo hops straight up in still air and lands. Where Jo's hold point is taken
    # jumps as the take-off posture starts and at take-off and landing (the shoulders on the roof, the
    # centre of mass in the air); the bodies themselves barely move apart, so the hold stays slack.
    # Before the link followed such jumps the hold took 855 N at once and let go.
    text = HEAD.format(speed=0) + performer("Ivo", 10.6, [
        {"do": "stand", "duration": "0.5 s", "transition": "0 s"},
        {"do": "grab", "partner": "Jo", "duration": "2.5 s", "transition": "0 s"}], facing="rear") + performer(
        "Jo", 10, [{"do": "stand", "duration": "1 s", "transition": "0 s"}, jump_up(1.5, 2.0)], mass=70)
    scene = parse_scene(text, "hop_held.toml")
    ivo = simulate(scene, still_air(scene))
    jo = ivo.partners[0]
    assert (jo.record["mode"] == Mode.FLIGHT).any()
    link = ivo.links[0]
    assert link["engaged"] == pytest.approx(0.5) and math.isnan(link["lost"])
    assert link["peak"] < 50.0


def test_a_body_that_rolls_onto_its_side_while_sliding_is_down():
    # The bundled grab with Sol beside Rae instead of in front (0.6 m across the track) and braced: his
    # hold pulls her sideways as she slides and she rolls over onto her side. That is a topple (she was
    # once drawn lying while her record said "stopped on the roof", on her feet).
    from physics.aftermath import phases
    text = (REPO / "scenes" / "grab_saves_slip.toml").read_text()
    for old, new in (('speed = "116 km/h"', 'speed = "114 km/h"'),
                     ('position = "4.6 m", from = "rear", offset = "0 m"',
                      'position = "3.9 m", from = "rear", offset = "-0.3 m"'),
                     ('facing = "rear"', 'facing = "front"'), ('posture = "crouch"', 'posture = "brace"')):
        assert old in text
        text = text.replace(old, new)
    rae = simulate(parse_scene(text, "grab_beside.toml"))
    roll = np.abs(rae.record["roll"])
    over = int(np.argmax(roll >= 1.4))
    assert over > 0 and rae.record["mode"][over - 5] == Mode.SLIDING
    assert rae.events[Event.TOPPLE]["time"] == pytest.approx(rae.times[over], abs=0.01)
    assert (rae.record["mode"][over + 1:] == Mode.DOWN).all()
    assert phases(rae)[-1]["state"] == "down on the roof"


@pytest.mark.parametrize("speed", [0, 60])
def test_a_steady_push_adds_f_over_w_to_the_pushers_grip_demand(speed):
    # Both braced, facing each other: a 50 N push holds without a step (a stronger one on these bodies
    # takes a recovery step, which ends the contact).
    push = {"do": "shove", "partner": "Fe", "force": "50 N", "shape": "steady", "duration": "2 s",
            "transition": "0 s", "posture": "brace"}
    alone = {"do": "brace", "duration": "2 s", "transition": "0 s"}
    settle = {"do": "brace", "duration": "3 s", "transition": "0 s"}
    runs = []
    for first in (push, alone):
        text = HEAD.format(speed=speed) + performer("Ed", 8, [settle, first], mass=90, lumped=True) + performer(
            "Fe", 7.4, [{"do": "brace", "duration": "5 s", "transition": "0 s"}], mass=70, lumped=True,
            facing="rear")
        scene = parse_scene(text, "steady_push.toml")
        runs.append(simulate(scene))
    pushing, alone_run = runs
    k = pushing.index_at(4.0)   # inside the steady part (ramps of 0.2 s)
    assert pushing.partners[0].record["touch_fx"][k] == pytest.approx(50.0)
    assert pushing.record["touch_fx"][k] == pytest.approx(-50.0)
    added = pushing.record["grip_demand"][k] - alone_run.record["grip_demand"][k]
    assert added == pytest.approx(50.0 / (90 * G), rel=1e-9)
    receiver = pushing.partners[0].record["grip_demand"][k] - alone_run.partners[0].record["grip_demand"][k]
    assert abs(receiver) == pytest.approx(50.0 / (70 * G), rel=1e-9)


def test_a_pulled_punch_reaches_no_one_and_a_contact_punch_gives_its_impulse():
    def run(extra):
        text = HEAD.format(speed=0) + performer("Gil", 8, [
            {"do": "stand", "duration": "1 s", "transition": "0 s"},
            dict({"do": "punch", "partner": "Hal", "duration": "0.5 s", "transition": "0 s"}, **extra),
            {"do": "stand", "duration": "1.5 s"}]) + performer("Hal", 7.4, [{"do": "stand", "duration": "3 s"}])
        return simulate(parse_scene(text, "punch.toml"))
    pulled = run({})
    assert not np.any(pulled.partners[0].record["touch_fx"]) and math.isnan(pulled.links[0]["engaged"])
    hit = run({"contact": True, "impulse": "6 N s"})
    assert hit.links[0]["impulse"] == pytest.approx(6.0, rel=0.05)
    assert hit.links[0]["peak"] == pytest.approx(6.0 * math.pi / (2 * 0.02), rel=0.05)


def test_a_hold_lets_go_at_its_breaking_force_and_the_event_names_it_on_both():
    text = HEAD.format(speed=0) + performer("Ivo", 8, [
        {"do": "grab", "partner": "Jo", "breaking_force": "100 N", "duration": "2 s", "transition": "0 s"},
        {"do": "stand", "duration": "1 s"}]) + performer("Jo", 7.4, [
            {"do": "stand", "duration": "0.5 s", "transition": "0 s"},
            {"do": "walk", "speed": "1.5 m/s", "toward": "front", "duration": "2.5 s"}])
    ivo = simulate(parse_scene(text, "hold.toml"))
    link = ivo.links[0]
    # Jo's start to walk (0.5-1 s) is a deliberate move the hold follows; walking off loads it.
    assert math.isfinite(link["lost"]) and 1.0 <= link["lost"] < 1.5
    assert link["peak"] > 100.0
    for tr in (ivo, ivo.partners[0]):
        assert float(tr.events[Event.HOLD_LOST]["time"]) == pytest.approx(float(link["lost"]))


@pytest.mark.parametrize("edit, path, words", [
    ('[[performers]]\nname = "Third"\n', "performers", "at most 2"),
    ('[[performers.actions]]\ndo = "shove"\npartner = "Nobody"\nduration = "1 s"\n', "performers[2].actions[2].partner",
     "not the other performer"),
    ('[[performers.actions]]\ndo = "grab"\npartner = "Ka"\nforce = "100 N"\nduration = "1 s"\n',
     "performers[2].actions[2].force", "only a shove, pull or throw"),
    ('[[performers.actions]]\ndo = "punch"\npartner = "Ka"\ncontact = true\nduration = "1 s"\n',
     "performers[2].actions[2].impulse", "missing"),
    ('[[performers.actions]]\ndo = "punch"\npartner = "Ka"\ncontact = true\nimpulse = "80 N s"\nduration = "1 s"\n',
     "performers[2].actions[2].impulse", "30"),
])
def test_bad_interactions_name_the_key(edit, path, words):
    base = HEAD.format(speed=0) + performer("Ka", 8, [{"do": "stand", "duration": "2 s"}]) + performer(
        "Lu", 7, [{"do": "stand", "duration": "1 s"}])
    text = base + edit
    with pytest.raises(SceneError) as err:
        parse_scene(text, "bad.toml")
    shown = err.value.render()
    assert path in shown and words in shown, shown


def test_an_interaction_needs_two_performers_and_names_are_unique():
    one = (HEAD.format(speed=0) + '[performer]\nstature = "1.8 m"\nmass = "80 kg"\n[start]\ncar = 1\n'
           'position = "5 m"\n[[actions]]\ndo = "shove"\npartner = "X"\nduration = "1 s"\n')
    with pytest.raises(SceneError) as err:
        parse_scene(one, "one.toml")
    assert "actions[1].do" in err.value.render() and "partner" in err.value.render()
    twins = HEAD.format(speed=0) + performer("Mo", 8, [{"do": "stand", "duration": "1 s"}]) + performer(
        "Mo", 7, [{"do": "stand", "duration": "1 s"}])
    with pytest.raises(SceneError) as err:
        parse_scene(twins, "twins.toml")
    assert "performers[2].name" in err.value.render()


def test_the_shorter_beat_is_held_to_the_end_of_the_longer():
    text = HEAD.format(speed=0) + performer("Ny", 8, [{"do": "prone", "duration": "4 s"}]) + performer(
        "Ol", 7, [{"do": "crawl", "speed": "0.3 m/s", "duration": "1 s"}])
    scene = parse_scene(text, "hold_end.toml")
    assert scene.cast[0].duration == scene.cast[1].duration == 4.0
    last = scene.cast[1].actions[-1]
    assert last.kind == "prone" and last.start == 1.0
