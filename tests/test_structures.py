"""Overhead structures and lines: strikes, clearance, the latest duck."""

import math

import pytest

from physics.records import Event
from physics.hazards import latest_duck_starts
from physics.scene_load import load_scene
from physics.simulation import simulate
from physics.verdict import summarise
from tests.conftest import REPO, make_scene

BRIDGE = '[[structures]]\nkind = "bridge"\nreached_at = "2 s"\nspan = "4 m"\nsoffit = "5.2 m"'
LINE = '[[lines]]\nstart = "0 m"\nend = "500 m"\nwire_height = "5.75 m"\nexclusion = "{exclusion}"'


def run(kind, extra=BRIDGE, transition="0 s"):
    scene = make_scene(speed="30 km/h", body="segmented", stature="1.80 m", extra=extra,
                       cars=['length = "20 m"\nroof_height = "4.0 m"'],
                       actions=[f'do = "{kind}"\nduration = "5 s"\ntransition = "{transition}"'])
    tr = simulate(scene)
    return scene, tr, summarise(scene, tr.events, tr.outcomes)


def test_standing_performer_strikes_a_low_bridge():
    # Common practice, no source: 1.80 m standing on a 4.0 m roof reaches
    # 5.8 m; a bridge soffit at 5.2 m above rail strikes.
    scene, tr, summary = run("stand")
    assert summary["first_failure"]["kind"] == "strike"
    assert summary["actions"][0]["clearance_min_m"] == pytest.approx(5.2 - 5.8, abs=0.05)
    # The strike happens when the bridge reaches the performer (10 m behind the front at 30 km/h).
    assert summary["first_failure"]["time_s"] == pytest.approx(2.0 + 10.0 / (30 / 3.6), abs=0.25)


def test_prone_performer_clears_the_same_bridge():
    scene, tr, summary = run("prone")
    assert summary["first_failure"] is None
    assert summary["actions"][0]["clearance_min_m"] > 0.9


def test_late_duck_strikes_and_the_latest_start_is_reported():
    early = load_scene(REPO / "scenes" / "footbridge_duck.toml")
    late = load_scene(REPO / "scenes" / "footbridge_late_duck.toml")
    assert math.isnan(simulate(early).events[Event.STRIKE]["time"])
    assert not math.isnan(simulate(late).events[Event.STRIKE]["time"])
    latest = latest_duck_starts(early)[0]["latest_start_s"]
    assert early.actions[1].start < latest < late.actions[1].start
    assert latest_duck_starts(late)[0]["latest_start_s"] == pytest.approx(latest, abs=1 / 24)


def test_overhead_line_exclusion_zone():
    # A 5.75 m contact wire (one national standard's minimum on running lines)
    # with a 2.75 m exclusion distance (25 kV clearance, from memory): a
    # performer standing on a 4.0 m roof is inside it; prone is too (5.75 - 2.75 = 3.0 m < 4.0 m).
    scene, tr, summary = run("stand", extra=LINE.format(exclusion="2.75 m"))
    assert summary["first_failure"]["kind"] == "line"
    scene, tr, summary = run("prone", extra=LINE.format(exclusion="0.5 m"))
    assert summary["first_failure"] is None
    assert summary["actions"][0]["clearance_min_m"] == pytest.approx(5.75 - 0.5 - 4.0, abs=0.15)


def test_line_needs_an_explicit_exclusion():
    from physics.scene_load import SceneError
    with pytest.raises(SceneError, match="exclusion"):
        make_scene(extra='[[lines]]\nstart = "0 m"\nend = "500 m"\nwire_height = "5.75 m"')
