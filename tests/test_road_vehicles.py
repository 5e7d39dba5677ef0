"""Road vehicles: a car's `kind` key, the all-rail-or-all-road rule, the pictures of a road
consist (a road, not a track; each vehicle's own outline) and physics left as it was."""

from __future__ import annotations

import re

import pytest

from physics.scene_load import SceneError, load_scene, parse_scene
from physics.simulation import simulate
from physics.verdict import summarise
from preview.canvas import RecordingCanvas
from preview.caution import CAUTION_SHORT
from preview.frame import ViewSettings, draw_frame
from preview.palette import ASPHALT, LANE_MARK
from preview.session import make_playback
from tests.conftest import REPO, scene_text

AIRFIELD = REPO / "scenes" / "airfield_flatbed.toml"

TRACTOR = 'name = "tractor"\nkind = "tractor unit"\nlength = "2.4 m"\nroof_height = "2.9 m"\ngap = "0.9 m"'
FLATBED = 'name = "flatbed"\nkind = "flatbed trailer"\nlength = "12 m"\nroof_height = "1.5 m"'
RIGID = 'name = "box truck"\nkind = "rigid box truck"\nlength = "7 m"\nroof_height = "3.6 m"\ngap = "1.2 m"'
BOX = 'name = "box"\nkind = "box trailer"\nlength = "8 m"\nroof_height = "3.8 m"'
RAIL = 'name = "wagon"\nlength = "14 m"\nroof_height = "3.9 m"'

ROAD_STRUCTURES = """
[[structures]]
kind = "overbridge"
name = "overbridge"
at = "12 m"
span = "12 m"
soffit = "5.1 m"

[[structures]]
kind = "sign gantry"
name = "sign gantry"
at = "30 m"
span = "1 m"
soffit = "5.5 m"
"""


def problems(text: str) -> list[str]:
    with pytest.raises(SceneError) as err:
        parse_scene(text, "road.toml")
    return [f"{p.path}: {p.message}" for p in err.value.problems]


def drawn(pb, t: float, frame: str) -> RecordingCanvas:
    canvas = RecordingCanvas(size=(1280, 720))
    draw_frame(canvas, pb, t, ViewSettings(frame=frame))
    return canvas


@pytest.fixture(scope="module")
def airfield():
    return make_playback(load_scene(AIRFIELD))


@pytest.fixture(scope="module")
def heritage():
    return make_playback(load_scene(REPO / "scenes" / "heritage_excursion.toml"))


# ------------------------------------------------------------------ the scene keys

def test_kind_defaults_to_rail_car_and_road_kinds_load():
    rail = parse_scene(scene_text(), "rail.toml")
    assert [c.kind for c in rail.cars] == ["rail car"] and not rail.road
    road = parse_scene(scene_text(cars=[TRACTOR, FLATBED], start='car = 2\nposition = "3 m"'), "road.toml")
    assert [c.kind for c in road.cars] == ["tractor unit", "flatbed trailer"] and road.road
    both = parse_scene(scene_text(cars=[RIGID, BOX], start='car = 2\nposition = "3 m"'), "road.toml")
    assert [c.kind for c in both.cars] == ["rigid box truck", "box trailer"] and both.road


def test_an_unknown_kind_names_its_key_and_the_allowed_values():
    found = problems(scene_text(cars=[TRACTOR.replace("tractor unit", "lorry"), FLATBED],
                                start='car = 2\nposition = "3 m"'))
    assert len(found) == 1, found   # blamed once: not again as a mix
    assert found[0].startswith("consist.cars[1].kind: ")
    for allowed in ("'rail car'", "'tractor unit'", "'box trailer'", "'flatbed trailer'", "'rigid box truck'"):
        assert allowed in found[0]
    assert "'lorry'" in found[0]
    wrong_type = problems(scene_text(cars=['name = "a"\nlength = "10 m"\nroof_height = "4 m"\nkind = 3']))
    assert wrong_type[0].startswith("consist.cars[1].kind: expected one of")


def test_a_road_vehicle_in_a_rail_consist_is_a_mix_blamed_at_its_kind():
    found = problems(scene_text(cars=[RAIL + '\ngap = "1 m"', FLATBED]))
    assert len(found) == 1, found
    assert found[0].startswith("consist.cars[2].kind: 'flatbed trailer' in a consist of rail cars")
    assert "all rail cars or all road vehicles, not a mix" in found[0]
    assert "has no kind, so 'rail car'" in found[0]   # why car 1 counts as a rail car


def test_a_car_without_a_kind_in_a_road_consist_is_a_mix_too():
    found = problems(scene_text(cars=[TRACTOR, 'name = "flatbed"\nlength = "12 m"\nroof_height = "1.5 m"'],
                                start='car = 2\nposition = "3 m"'))
    assert len(found) == 1, found
    assert found[0].startswith("consist.cars[2].kind: no kind, so 'rail car', in a consist of road vehicles")
    assert "car 1, tractor, is 'tractor unit'" in found[0]
    assert "'flatbed trailer'" in found[0]   # what to give it


def test_road_structure_kinds_load():
    scene = parse_scene(scene_text(cars=[TRACTOR, FLATBED], start='car = 2\nposition = "3 m"',
                                   extra=ROAD_STRUCTURES), "road.toml")
    assert [s.kind for s in scene.structures] == ["overbridge", "sign gantry"]


# ------------------------------------------------------------------ physics unchanged

def _airfield_without_kinds() -> str:
    text = AIRFIELD.read_text()
    stripped = re.sub(r'^kind = "[a-z ]+"\n', "", text, flags=re.M)
    assert not re.search(r"^kind =", stripped, flags=re.M) and len(re.findall(r"^kind =", text, flags=re.M)) == 2
    return stripped


def _summary(scene) -> dict:
    tr = simulate(scene)
    return summarise(scene, tr.events, tr.outcomes)


def test_airfield_verdicts_are_the_same_with_and_without_the_road_kinds():
    with_kinds = load_scene(AIRFIELD)
    assert with_kinds.road and [c.kind for c in with_kinds.cars] == ["tractor unit", "flatbed trailer"]
    # Without kinds the two cars are rail cars: the same physics, drawn as rail.
    without = parse_scene(_airfield_without_kinds(), "airfield_rail.toml")
    assert not without.road
    assert _summary(with_kinds) == _summary(without)


def test_airfield_verdicts_are_those_of_the_single_flatbed_it_was():
    """Before the tractor was added the scene was one 12 m flatbed, the performer on car 1."""
    text = AIRFIELD.read_text()
    one = re.sub(r'\[\[consist\.cars\]\]\nname = "tractor"\n(?:.+\n)+?\n', "", text)
    one = re.sub(r'^kind = "[a-z ]+"\n', "", one, flags=re.M).replace("car = 2\n", "car = 1\n")
    old = parse_scene(one, "airfield_single.toml")
    assert [c.name for c in old.cars] == ["flatbed"]
    a, b = _summary(load_scene(AIRFIELD)), _summary(old)
    assert a["verdict"] == b["verdict"]
    assert a["actions"] == b["actions"]   # every verdict and margin; only car-frame positions moved
    assert [e["kind"] for e in a["events"]] == [e["kind"] for e in b["events"]]


# ------------------------------------------------------------------ pictures

@pytest.mark.parametrize("frame", ["car", "ground"])
def test_a_road_scene_draws_a_road_not_sleepers_rails_or_posts(airfield, heritage, frame):
    road = drawn(airfield, 12.0, frame)
    assert not road.tagged("scenery"), "rail, sleepers or lineside posts drawn under a road consist"
    asphalt = [c for c in road.tagged("road") if c[0] == "rect" and c[2] == ASPHALT]
    marks = [c for c in road.tagged("road") if c[0] == "line" and c[2] == LANE_MARK]
    assert asphalt and len(marks) >= 2
    rail = drawn(heritage, 2.0, frame)
    assert rail.tagged("scenery") and not rail.tagged("road")
    for canvas in (road, rail):
        assert " ".join(s for tag, s, _ in canvas.text_boxes() if tag == "caution") == CAUTION_SHORT


def test_end_and_plan_views_of_a_road_scene_draw_the_road(airfield, heritage):
    for frame in ("end", "plan"):
        road, rail = drawn(airfield, 12.0, frame), drawn(heritage, 2.0, frame)
        assert not road.tagged("scenery") and road.tagged("road")
        assert rail.tagged("scenery") and not rail.tagged("road")
        assert " ".join(s for tag, s, _ in road.text_boxes() if tag == "caution") == CAUTION_SHORT


def test_the_tractor_has_a_cab_and_the_trailer_road_tyres(airfield, heritage):
    from preview.road import TYRE
    canvas = drawn(airfield, 12.0, "ground")
    from preview.frame import cameras
    cam = cameras(airfield, 12.0, ViewSettings(frame="ground"), (1280, 720))[0]
    polygons = [c for c in canvas.tagged("consist") if c[0] == "polygon"]
    assert polygons, "no cab drawn"
    tyres = [c for c in canvas.tagged("consist") if c[0] == "circle"]
    big = [c for c in tyres if c[1][1] == pytest.approx(TYRE / 2 * cam.scale)]
    assert len(big) >= 3   # the trailer's axle group at least
    # A rail car: a body and bogie wheels, no cab.
    rail = drawn(heritage, 2.0, "ground")
    assert not [c for c in rail.tagged("consist") if c[0] == "polygon"]


def test_every_road_kind_draws_and_the_road_structures_stand_over_it():
    scene = parse_scene(scene_text(cars=[RIGID, BOX], start='car = 2\nposition = "3 m"', speed="30 km/h",
                                   extra=ROAD_STRUCTURES), "road.toml")
    pb = make_playback(scene)
    for frame in ("car", "ground", "end", "plan"):
        canvas = drawn(pb, 1.0, frame)
        assert canvas.tagged("road") and not canvas.tagged("scenery")
        assert canvas.tagged("consist")
