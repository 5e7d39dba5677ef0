"""Odd, broken and oversized input: a clear message naming the file (or the --set
argument or option) and the key, a non-zero exit, never a traceback or a hang.

The fuzz tests at the end mutate the bundled scenes, --set values and option
values with hypothesis and hold every run to exit 0, 2, 3 or 4 with no
internal error.
"""

import math
import os
import re
import tomllib

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from physics.scene_load import SceneError, parse_scene
from physics.units import QuantityError, parse_quantity
from preview.cli import main
from tests.conftest import REPO, SCENES, scene_text

DEFAULT = REPO / "scenes" / "heritage_excursion.toml"


def problems(text, overrides=None):
    with pytest.raises(SceneError) as err:
        parse_scene(text, "odd.toml", overrides)
    return err.value


def check(*args, capsys):
    code = main(["check", *args])
    err = capsys.readouterr().err
    assert "Traceback" not in err and "internal error" not in err, err
    return code, err


# --------------------------------------------------------------- scene files

def test_a_file_that_is_not_utf8_says_which_byte(tmp_path, capsys):
    path = tmp_path / "latin1.toml"
    path.write_bytes(scene_text().replace("test scene", "caf\u00e9 scene").encode("latin-1"))
    code, err = check(str(path), capsys=capsys)
    assert code == 3 and "not UTF-8 text: the byte 0xe9 at line 1, column 13" in err and f"{path}:1" in err


def test_deep_nesting_is_refused_before_the_parser_recurses(tmp_path, capsys):
    path = tmp_path / "deep.toml"
    path.write_text(scene_text() + "\nodd = " + "[" * 5000 + "]" * 5000 + "\n")
    code, err = check(str(path), capsys=capsys)
    assert code == 3 and "nested 5000 deep" in err


def test_a_huge_file_is_read_with_a_cap(tmp_path, capsys):
    path = tmp_path / "huge.toml"
    path.write_text(scene_text() + "\n# " + "x" * 2_000_000 + "\n")
    code, err = check(str(path), capsys=capsys)
    assert code == 3 and "larger than 1 MB" in err


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/null"])
def test_a_device_is_not_a_scene_file(device, capsys):
    code, err = check(device, capsys=capsys)
    assert code == 3 and "not a regular file" in err


def test_a_folder_is_not_a_scene_file(tmp_path, capsys):
    code, err = check(str(tmp_path), capsys=capsys)
    assert code == 3 and "is a folder" in err


def test_a_beat_shorter_than_two_engine_steps_is_refused():
    err = problems(scene_text(actions=['do = "stand"\nduration = "1 ms"\ntransition = "0 s"']))
    assert "shorter than two engine steps" in err.render()


def test_a_beat_longer_than_the_engine_runs_is_refused_at_once():
    actions = ['do = "stand"\nduration = "600 s"\ntransition = "0 s"'] * 100
    err = problems(scene_text(actions=actions))
    assert "more than the 150,000 roofbeat runs" in err.render()


# --------------------------------------------------------------- units

@pytest.mark.parametrize("text", ["16 m-", "16 m/", "16 m^-0", "16 m**", "16 m/s/", "16 m^", "16 " + "m" * 70,
                                  "16" + " " * 150_000 + "x", "1e400 m"])
def test_unit_text_pint_cannot_read_is_a_clear_error(text):
    with pytest.raises(QuantityError):
        parse_quantity(text, "length")


def test_an_angle_needs_an_angle_unit():
    with pytest.raises(QuantityError, match="not an angle unit"):
        parse_quantity("20 percent", "angle")
    assert parse_quantity("20 deg", "angle") == pytest.approx(math.radians(20))
    jump = ('do = "jump"\ntakeoff_car = 1\ntakeoff_position = "2 m"\ntakeoff_speed = "3 m/s"\n'
            'takeoff_angle = "20 percent"\nlanding_car = 1\nduration = "2 s"')
    assert "actions[1].takeoff_angle" in problems(scene_text(actions=[jump])).render()


@settings(max_examples=150, deadline=None)
@given(st.text(max_size=40))
def test_any_text_parses_or_is_a_quantity_error(text):
    for dimension in ("length", "speed", "angle", "temperature", "area"):
        try:
            value = parse_quantity(text, dimension)
        except QuantityError:
            continue
        assert math.isfinite(value)


# --------------------------------------------------------------- scene values

def test_names_and_titles_are_plain_text():
    err = problems(scene_text().replace('title = "test scene"', 'title = "scene\\u0000 one"'))
    assert "title: contains a control or unprintable character (U+0000)" in err.render()
    err = problems(scene_text(cars=['name = { first = "A" }\nlength = "20 m"\nroof_height = "4 m"']))
    assert "consist.cars[1].name: expected a quoted text" in err.render()


def test_a_spread_that_reaches_past_the_limits_is_refused():
    # Every Monte Carlo draw must be a value a scene could give (mass 30-200 kg).
    err = problems(scene_text(mass="75 kg +/- 80 kg"))
    assert "performer.mass" in err.render() and "below the smallest allowed 30" in err.render()
    err = problems(scene_text(cars=['length = "20 m"\nroof_height = "4 m"\nroof_static = "0.6 +/- 0.7"\n'
                                    'roof_kinetic = 0.4']))
    assert "roof_static" in err.render() and "reaches down to" in err.render()
    assert problems(scene_text(mass="75 kg +/- 1e400 kg")).problems


def test_a_jump_from_off_its_car_or_toward_the_wrong_car_is_refused():
    cars = ['name = "A"\nlength = "15 m"\nroof_height = "4 m"\ngap = "1 m"',
            'name = "B"\nlength = "15 m"\nroof_height = "4 m"']

    def jump(**fields):
        base = {"takeoff_car": "1", "takeoff_position": '"1 m"', "takeoff_speed": '"3 m/s"', "takeoff_angle":
                '"30 deg"', "landing_car": "2", "toward": '"rear"', "duration": '"2 s"'}
        base.update(fields)
        return 'do = "jump"\n' + "\n".join(f"{k} = {v}" for k, v in base.items())
    assert "past the end of A" in problems(scene_text(cars=cars, actions=[jump(takeoff_position='"500 m"')])).render()
    err = problems(scene_text(cars=cars, actions=[jump(toward='"front"')]))
    assert "actions[1].landing_car: car 2 (B) lies behind the take-off car 1 (A), but the jump goes toward the " \
           "front" in err.render()
    parse_scene(scene_text(cars=cars, actions=[jump()]), "ok.toml")


def test_a_structure_reached_by_a_consist_that_never_moves_is_refused():
    bridge = '[[structures]]\nkind = "bridge"\nreached_at = "2 s"\nspan = "4 m"\nsoffit = "5.2 m"'
    err = problems(scene_text(speed="0 km/h", extra=bridge))
    assert "structures[1].reached_at: the consist has not moved by 2 s" in err.render()


# --------------------------------------------------------------- --set

@pytest.mark.parametrize("argument", ["motion speed=10 km/h", "motion/speed=10 km/h", "motion.speed junk=1",
                                      "actions[1]x.duration=1 s", "=3", "actions[0].duration=2 s"])
def test_a_set_path_that_is_not_a_key_path_is_refused(argument):
    err = problems(scene_text(), [argument])
    assert any(p.origin == argument for p in err.problems), err.render()


def test_set_into_an_item_an_earlier_set_made_a_scalar():
    err = problems(scene_text(), ["actions[1]=3", 'actions[1].duration="2 s"'])
    assert "actions[1] is not a table (it holds 3)" in err.render()


def test_a_bad_set_value_is_blamed_on_the_set_argument(capsys):
    code, err = check(str(DEFAULT), "--set", "performer.mass=heavy", capsys=capsys)
    assert code == 3 and "--set performer.mass=heavy: performer.mass: expected a mass" in err
    assert "heritage_excursion.toml:" not in err.split("problem(s)")[1]


# --------------------------------------------------------------- options

@pytest.mark.parametrize("args", [
    ["render", "-o", "x.gif", "--fps", "0"], ["render", "-o", "x.gif", "--to", "nan"],
    ["render", "-o", "x.gif", "--from", "-1"], ["render", "-o", "x.gif", "--size", "big"],
    ["render", "-o", "x.bmp"], ["brief", "-o", "x.txt"], ["risk", "--seed", "-1"], ["risk", "--samples", "0"],
    ["envelope", "--vary", "speed=10..60 km/h", "--points", "100000"], ["envelope", "--vary", "mass=-10..80 kg"],
    ["envelope", "--vary", "speed=10..inf km/h"], ["envelope", "--vary", "speed=60..10 km/h"],
])
def test_a_bad_option_value_is_a_usage_error(args, capsys):
    code = main(args)
    err = capsys.readouterr().err
    assert code == 2, err
    option = next(a for a in args if a.startswith("-") and a not in ("-o",)) if len(args) > 3 else args[1]
    assert option in err or args[-1] in err
    assert "Traceback" not in err and "internal error" not in err


# --------------------------------------------------------------- the window's watcher

@pytest.mark.parametrize("content", [b"\xff\xfe not utf-8", b"title = " + b"[" * 3000, b"x" * 1_100_000,
                                     b'title = "a"\n[motion]\nspeed = "16 m-"'])
def test_the_watcher_survives_every_broken_save(tmp_path, content):
    from physics.scene_load import load_scene
    from preview.frame import ViewSettings
    from preview.session import make_playback
    from preview.window import PlayerState, SceneWatcher
    path = tmp_path / "watched.toml"
    path.write_text(scene_text())
    state = PlayerState(make_playback(load_scene(path)), ViewSettings())
    watcher = SceneWatcher(path, [])
    path.write_bytes(content)
    os.utime(path, ns=(watcher.mtime + 10**9, watcher.mtime + 10**9))
    watcher.poll(state)
    assert state.view.message.startswith("scene not re-loaded, still playing the last good one")
    assert "internal error" not in state.view.message


# --------------------------------------------------------------- fuzz

def _leaves(node, path=""):
    """Key paths (--set syntax) of every value in a raw scene."""
    if isinstance(node, dict):
        for key, value in node.items():
            yield from _leaves(value, f"{path}.{key}" if path else key)
    elif isinstance(node, list) and node and isinstance(node[0], dict):
        for i, item in enumerate(node, start=1):
            yield from _leaves(item, f"{path}[{i}]")
    else:
        yield path


SCENE_LEAVES = [(path, leaf) for path in SCENES for leaf in _leaves(tomllib.loads(path.read_text()))]
VALUES = st.one_of(
    st.text(max_size=12), st.integers(-10**20, 10**20).map(str), st.floats(allow_nan=True).map(repr),
    st.sampled_from(['"16 m-"', '"20 percent"', '"1e400 m"', '"75 kg +/- 90 kg"', '"  3 m  "', '"-5 km/h"', "[1, 2]",
                     "{ a = 1 }", '"0 s"', '"1 ms"', '"600 s"', "true", '"ice"', '"\u0000"', "nan", "inf"]),
)
_FAST = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                       HealthCheck.function_scoped_fixture])


def _clean_exit(code, err, *names):
    assert code in (0, 2, 3, 4), (code, err)
    assert "Traceback" not in err and "internal error" not in err, err
    if code in (2, 3, 4):
        assert any(name in err for name in names), (names, err)


@_FAST
@given(leaf=st.sampled_from(SCENE_LEAVES), value=VALUES)
def test_fuzz_set_values_on_the_bundled_scenes(leaf, value, capsys):
    path, key = leaf
    code = main(["check", str(path), "--set", f"{key}={value}"])
    _clean_exit(code, capsys.readouterr().err, key, f"--set {key}")


@_FAST
@given(scene=st.sampled_from(SCENES), cut=st.integers(0, 4000), junk=st.text(max_size=8))
def test_fuzz_edited_scene_files(scene, cut, junk, tmp_path_factory, capsys):
    text = scene.read_text()
    cut = min(cut, len(text))
    path = tmp_path_factory.mktemp("fuzz") / scene.name
    path.write_text(text[:cut] + junk + text[cut:], encoding="utf-8", errors="surrogatepass")
    code = main(["check", str(path)])
    _clean_exit(code, capsys.readouterr().err, str(path))


OPTIONS = {
    "render": ["--fps", "--from", "--to", "--size", "--frame"],
    "envelope": ["--points", "--vary"],
    "risk": ["--samples", "--seed"],
}


@_FAST
@given(command=st.sampled_from(sorted(OPTIONS)), data=st.data())
def test_fuzz_option_values(command, data, capsys):
    option = data.draw(st.sampled_from(OPTIONS[command]))
    value = data.draw(st.one_of(st.text(max_size=10), st.integers(-10**6, 10**6).map(str),
                                st.sampled_from(["nan", "inf", "-1", "0", "1e9", "x"])))
    if option in ("--samples", "--points") and re.fullmatch(r"\s*\+?[0-9]+\s*", value) and 3 <= int(value) <= 10**7:
        value = "3"  # a valid count runs the whole command: keep it small, the invalid ones are the point
    args = [command, str(DEFAULT), option, value]
    if command == "render":
        args += ["-o", os.devnull + "-folder-that-does-not-exist/clip.gif"]
    if command == "envelope" and option != "--vary":
        args += ["--vary", "speed=10..12 km/h"]
    if command == "risk" and option != "--samples":
        args += ["--samples", "2"]
    if command == "envelope" and option == "--points":
        args[-1:] = [value, "--vary", "speed=10..12 km/h"]
    code = main(args)
    err = capsys.readouterr().err
    _clean_exit(code, err, option, "-o", "does not exist")
    assert not re.search(r"\bTraceback\b", err)
