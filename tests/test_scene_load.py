"""Scene loading: strict values, clear problems with key paths and lines, overrides."""

import pytest

from physics.scene_load import SceneError, load_scene, parse_scene
from tests.conftest import SCENES, scene_text


def problems_of(text, overrides=None):
    with pytest.raises(SceneError) as info:
        parse_scene(text, "bad.toml", overrides)
    return info.value


def test_bundled_scenes_load():
    assert len(SCENES) >= 3
    for path in SCENES:
        scene = load_scene(path)
        assert scene.duration > 0 and scene.cars


def test_all_problems_in_one_pass_with_paths_and_lines():
    text = scene_text(speed="90", mass="75", stature="1,8 m")
    err = problems_of(text)
    paths = {p.path for p in err.problems}
    assert {"motion.speed", "performer.mass", "performer.stature"} <= paths
    rendered = err.render()
    assert "bad.toml:" in rendered
    line_of = {p.path: p.line for p in err.problems}
    lines = text.splitlines()
    assert lines[line_of["motion.speed"] - 1].startswith("speed")
    assert lines[line_of["performer.mass"] - 1].startswith("mass")


def test_list_positions_are_one_based():
    text = scene_text(actions=['do = "stand"\nduration = "2 s"', 'do = "walk"\nduration = "2 s"\nspeed = "fast"'])
    err = problems_of(text)
    assert [p.path for p in err.problems] == ["actions[2].speed"]
    assert "speed with units" in err.problems[0].message
    assert text.splitlines()[err.problems[0].line - 1] == 'speed = "fast"'


def test_unknown_keys_and_surfaces_are_named():
    err = problems_of(scene_text(roof="marble", extra='[safety]\ngrip = 2'))
    messages = {p.path: p.message for p in err.problems}
    assert "unknown roof surface 'marble'" in messages["consist.roof"]  # blamed where it is written
    assert "unknown key" in messages["safety.grip"]


def test_lumped_body_needs_a_drag_area():
    err = problems_of(scene_text(body="lumped", drag_area=None))
    assert err.problems[0].path == "performer.drag_area"


def test_toml_syntax_error_has_line():
    err = problems_of('title = "x"\n[motion\nspeed = "1 m/s"')
    assert err.problems[0].line == 2


def test_overrides_apply_with_validation():
    scene = parse_scene(scene_text(), "t.toml", ["motion.speed=110 km/h", 'actions[1].duration="3 s"'])
    assert scene.keyframes[0].speed == pytest.approx(110 / 3.6)
    assert scene.actions[0].duration == pytest.approx(3.0)
    err = problems_of(scene_text(), ["motion.speed=110", "actions[4].duration=1 s", "nonsense"])
    by_origin = {p.origin: p for p in err.problems}
    # Every problem is blamed on the --set argument that gave the value, not on a line of the file.
    assert by_origin["motion.speed=110"].path == "motion.speed" and by_origin["motion.speed=110"].line is None
    assert by_origin["actions[4].duration=1 s"].path == "actions[4].duration"
    assert "nonsense" in by_origin
    text = err.render()
    assert "--set motion.speed=110: motion.speed: expected a speed with units" in text
    assert "t.toml:" not in text.replace("t.toml: 3 problem(s)", "")


def test_explicit_friction_overrides_surface():
    cars = ['length = "10 m"\nroof_height = "3 m"\nroof_static = 0.9\nroof_kinetic = 0.7']
    scene = parse_scene(scene_text(cars=cars), "t.toml")
    assert (scene.cars[0].sole_static, scene.cars[0].sole_kinetic) == (0.9, 0.7)
    bad = ['length = "10 m"\nroof_height = "3 m"\nroof_static = 0.5\nroof_kinetic = 0.7']
    assert "kinetic friction must not exceed" in problems_of(scene_text(cars=bad)).render()


def test_temperature_sets_density():
    text = scene_text().replace('altitude = "0 m"', 'altitude = "0 m"\ntemperature = "30 C"')
    assert parse_scene(text, "t.toml").air.density == pytest.approx(1.1644, abs=1e-4)


def test_missing_file_is_a_scene_error(tmp_path):
    with pytest.raises(SceneError, match="cannot read"):
        load_scene(tmp_path / "nope.toml")
