"""The rehearsal ladder: rungs up to the planned speed, abort limits that agree with the envelope, and
the wind machine's air speed for a static rehearsal."""

from __future__ import annotations

import json
import math

import pytest

from physics.air import wind_vector
from preview.cli import main
from tests.conftest import REPO, SCENES


@pytest.mark.parametrize("path", SCENES, ids=lambda p: p.name)
def test_ladder_works_on_every_bundled_scene(path, capsys):
    from physics.scene_load import load_scene
    from physics.sweep import base_value
    assert main(["ladder", str(path), "--rungs", "4", "--json"]) == 0
    ladder = json.loads(capsys.readouterr().out)
    speeds = [r["speed_ms"] for r in ladder["rungs"]]
    top = base_value(load_scene(path), "speed")
    assert speeds[0] == pytest.approx(min(5 / 3.6, top)) and speeds[-1] == pytest.approx(top)
    assert all(b > a for a, b in zip(speeds, speeds[1:]))
    short = ladder["first_rung_short"]
    assert short is None or ladder["rungs"][short - 1]["verdict"] != "holds"
    assert all(r["verdict"] == "holds" for r in ladder["rungs"][:(short or len(speeds) + 1) - 1])
    profiled = load_scene(path).air.roof_flow is not None
    assert set(ladder["abort_limits"]) == {"speed", "wind_speed", "wind_from_deg"} | ({"uniform_air"} if profiled
                                                                                     else set())
    assert "not a safety certificate" in ladder["caution"]


def test_the_abort_limits_are_the_envelopes(capsys):
    # The same sweep over the same range: the ladder's top speed and wind limits are the envelope's.
    path = str(REPO / "scenes" / "heritage_excursion.toml")
    assert main(["ladder", path, "--json"]) == 0
    ladder = json.loads(capsys.readouterr().out)
    for name, vary in (("speed", "speed=5 km/h..100 km/h"), ("wind_speed", "wind_speed=0 m/s..40 m/s")):
        assert main(["envelope", path, "--vary", vary, "--points", "41", "--json"]) == 0
        envelope = json.loads(capsys.readouterr().out)
        assert ladder["abort_limits"][name]["range"] == pytest.approx(envelope["range"])
        assert ladder["abort_limits"][name]["limits"] == envelope["limits"]
    # And they are limits the physics bears out: just under the top speed limit it holds with the
    # factors; heritage_excursion's is a slip beyond it.
    assert ladder["abort_limits"]["speed"]["limits"][0]["failure_beyond"] in (None, "slip")


def test_the_wind_machine_gives_the_planned_apparent_wind(capsys):
    # Heritage excursion: 40 km/h into a 3 m/s wind from 20 degrees; the apparent wind is the wind
    # vector less the car's velocity (vector subtraction by hand below).
    assert main(["ladder", str(REPO / "scenes" / "heritage_excursion.toml"), "--json"]) == 0
    machine = json.loads(capsys.readouterr().out)["wind_machine"]
    wx, wy = wind_vector(3.0, math.radians(20))
    ax, ay = wx - 40 / 3.6, wy
    assert machine["air_speed_ms"] == pytest.approx(math.hypot(ax, ay), rel=1e-12)
    assert machine["from_deg"] == pytest.approx(math.degrees(math.atan2(-ay, -ax)), abs=1e-9)
    assert 0 < machine["from_deg"] < 10     # mostly from ahead, a little from the left
    assert "stationary vehicle" in machine["note"]


def test_ladder_text_names_the_first_short_rung_and_the_limits(capsys):
    assert main(["ladder", str(REPO / "scenes" / "curve_too_fast.toml"), "--rungs", "6"]) == 0
    text = capsys.readouterr().out
    assert "first rung short of the factors: rung" in text and "ABORT LIMITS" in text
    assert "TOP SPEED (swept" in text and "holds with the required factors up to" in text
    assert "CAUTION:" in text


def test_a_beat_whose_speed_changes_says_its_limits_scale_the_braking_too(capsys):
    # The sweep keeps the keyframe times, so braking scales with the top speed; a braking beat says so.
    assert main(["ladder", str(REPO / "scenes" / "tethered_brake_slip.toml"), "--json"]) == 0
    assert "braking" in json.loads(capsys.readouterr().out)["scaling_note"]
    assert main(["ladder", str(REPO / "scenes" / "rear_car_prone.toml"), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["scaling_note"] is None
