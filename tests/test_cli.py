"""The roofbeat command line, run as a real process on real files."""

import json
import os
import subprocess
import sys

import pytest

from tests.conftest import REPO, SCENES, scene_text

REQUIRED_ACTION_KEYS = {"name", "start_s", "end_s", "verdict", "grip_ratio_min", "balance_margin_min_m",
                        "lift_ratio_min", "lean_max_deg", "apparent_wind_max_ms", "beaufort_max", "drag_max_n",
                        "landing_margin_min_m", "clearance_min_m"}


def roofbeat(*args, cwd=REPO):
    env = dict(os.environ, SDL_VIDEODRIVER="dummy")
    return subprocess.run([sys.executable, "-m", "preview.cli", *args], capture_output=True, text=True, cwd=cwd,
                          env=env, timeout=300)


@pytest.mark.parametrize("path", SCENES, ids=lambda p: p.name)
def test_check_json_on_every_bundled_scene(path):
    out = roofbeat("check", str(path), "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["verdict"] in ("holds", "marginal", "fails")
    assert set(data) >= {"verdict", "first_failure", "events", "actions", "caution"}
    for action in data["actions"]:
        assert set(action) >= REQUIRED_ACTION_KEYS
    if data["first_failure"]:
        assert set(data["first_failure"]) >= {"kind", "time_s", "car", "x_car_m", "x_ground_m", "detail"}
        assert data["verdict"] == "fails"


@pytest.mark.parametrize("path", SCENES, ids=lambda p: p.name)
def test_check_table_on_every_bundled_scene(path):
    out = roofbeat("check", str(path))
    assert out.returncode == 0, out.stderr
    assert "verdict:" in out.stdout
    assert "not a safety certificate" in out.stdout


def test_default_scene_runs_without_arguments():
    out = roofbeat("check")
    assert out.returncode == 0
    assert "Heritage excursion" in out.stdout


def test_set_changes_the_result():
    slow = json.loads(roofbeat("check", "--json", "--set", "motion.speed=20 km/h").stdout)
    fast = json.loads(roofbeat("check", "--json", "--set", "motion.speed=160 km/h").stdout)
    assert fast["actions"][0]["apparent_wind_max_ms"] > slow["actions"][0]["apparent_wind_max_ms"]
    assert fast["verdict"] == "fails"


def test_bad_scene_gives_clear_message_and_exit_code(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(scene_text(speed="90", mass="seventy kg"))
    out = roofbeat("check", str(bad))
    assert out.returncode == 3
    assert "Traceback" not in out.stderr
    assert str(bad) in out.stderr
    assert "motion.speed" in out.stderr and "performer.mass" in out.stderr
    assert out.stdout == ""


def test_bad_override_and_usage_errors_differ(tmp_path):
    out = roofbeat("check", "--set", "motion.speed=fast")
    assert out.returncode == 3 and "motion.speed" in out.stderr and "Traceback" not in out.stderr
    usage = roofbeat("check", "--no-such-option")
    assert usage.returncode == 2


def test_missing_scene_file():
    out = roofbeat("check", "does/not/exist.toml")
    assert out.returncode == 3
    assert "cannot read the file" in out.stderr and "Traceback" not in out.stderr


def test_an_internal_error_is_one_line_and_its_own_exit_code(monkeypatch, capsys):
    # A defect of ours is not "an output cannot be written" (4): it exits 5, in one line, no traceback.
    from preview import cli

    def broken(args):
        raise TypeError("a planted defect")
    monkeypatch.setitem(cli.COMMANDS, "check", broken)
    assert cli.main(["check"]) == 5
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "internal error (TypeError: a planted defect)" in err
    assert "Traceback" not in err
