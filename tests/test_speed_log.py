"""A measured speed log as the consist's speed: read strictly, resampled, smoothed, and refused with the
file's line number when it cannot be used."""

from __future__ import annotations

import numpy as np
import pytest

from physics.scene_load import load_scene
from physics.scene_problems import SceneError
from physics.simulation import simulate
from tests.conftest import REPO

BEAT = '[[actions]]\ndo = "kneel"\nduration = "6 s"\ntransition = "0 s"\n'


def logged_scene(tmp_path, rows, header="time,v", time_unit="s", speed_unit="m/s", extra="", structures=""):
    (tmp_path / "run.csv").write_text("# invented test log\n" + header + "\n" + "\n".join(rows) + "\n")
    text = f'''
title = "logged test"
[consist]
roof = "painted steel dry"
[[consist.cars]]
length = "20 m"
roof_height = "4.0 m"
[motion.log]
file = "run.csv"
time = "time"
time_unit = "{time_unit}"
speed = "v"
speed_unit = "{speed_unit}"
{extra}
[performer]
stature = "1.78 m"
mass = "76 kg"
[start]
car = 1
position = "5 m"
{BEAT}
{structures}
'''
    (tmp_path / "scene.toml").write_text(text)
    return load_scene(tmp_path / "scene.toml")


def test_a_clean_log_gives_its_own_speed_acceleration_and_distance(tmp_path):
    # A steady 0.5 m/s^2 from 10 m/s sampled at 10 Hz: a quadratic Savitzky-Golay filter passes a
    # straight line unchanged, so speed and acceleration come back exactly and distance is
    # 10 t + 0.25 t^2 (kinematics), to the trapezoid rule's error on a line (none).
    t = np.arange(0, 8.01, 0.1)
    scene = logged_scene(tmp_path, [f"{ti:.1f},{10 + 0.5 * ti:.6f}" for ti in t])
    tr = simulate(scene)
    times = tr.times
    np.testing.assert_allclose(tr.record["speed"], 10 + 0.5 * times, atol=1e-5)
    np.testing.assert_allclose(tr.timeline.steps["accel"], 0.5, atol=1e-5)
    np.testing.assert_allclose(tr.record["distance"], 10 * times + 0.25 * times ** 2, atol=1e-4)


def test_noise_is_smoothed_before_the_acceleration_is_taken(tmp_path):
    # 10 Hz samples of a steady 15 m/s with 0.3 m/s of noise: raw differences give accelerations of
    # about 4 m/s^2 RMS; a quadratic fit's slope over 1 s (10 samples) has an RMS near
    # 0.3 sqrt(12 / (10 (10^2 - 1))) / 0.1 = 0.33 m/s^2 (least squares), away from the first window.
    rng = np.random.default_rng(1)
    t = np.arange(0, 8.01, 0.1)
    rows = [f"{ti:.1f},{15 + rng.normal(0, 0.3):.4f}" for ti in t]
    raw = np.diff([float(r.split(",")[1]) for r in rows]) / 0.1
    scene = logged_scene(tmp_path, rows, extra='smoothing = "1 s"')
    inner = scene.speed_log.accel[int(1.0 / scene.step):]
    assert np.sqrt(np.mean(raw ** 2)) > 3.0
    assert np.sqrt(np.mean(inner ** 2)) < 0.5
    assert scene.speed_log.speed.mean() == pytest.approx(15.0, abs=0.1)


@pytest.mark.parametrize("rows, words", [
    (["0,10", "0.1,10", "0.2,ten", "0.3,10"], "line 5: column 'v': 'ten' is not a number"),
    (["0,10", "0.1,10", "0.1,10"], "line 5: time 0.1 s does not increase"),
    (["0,10", "0.1,10", "2.5,10"], "line 5: a gap of 2.4 s since line 4"),
    (["0,10", "0.5,10", "1.0,10"], "line 5: the log covers 1 s from its first sample; the beat lasts 6 s"),
    (["0,10", "0.5,-1"], "line 4: speed -1 m/s is negative"),
])
def test_bad_logs_are_refused_with_their_line(tmp_path, rows, words):
    with pytest.raises(SceneError) as err:
        logged_scene(tmp_path, rows)
    message = str(err.value)
    assert "motion.log.file" in message and "run.csv" in message and words in message


def test_a_missing_column_or_unit_is_named(tmp_path):
    with pytest.raises(SceneError) as err:
        logged_scene(tmp_path, ["0,10"], header="t,v")
    assert "line 2: no column 'time' in the header; it has 't', 'v'" in str(err.value)
    with pytest.raises(SceneError) as err:
        logged_scene(tmp_path, ["0,10"], speed_unit="kg")
    assert "motion.log.speed_unit" in str(err.value)


def test_structures_are_reached_on_the_logged_distance(tmp_path):
    t = np.arange(0, 8.01, 0.1)
    bridge = ('[[structures]]\nkind = "footbridge"\nreached_at = "4 s"\nspan = "4 m"\nsoffit = "9 m"\n')
    scene = logged_scene(tmp_path, [f"{ti:.1f},{10 + 0.5 * ti:.6f}" for ti in t], structures=bridge)
    assert scene.structures[0].x_start == pytest.approx(10 * 4 + 0.25 * 16, abs=1e-4)


def test_the_bundled_logged_scene(capsys):
    # The demo log (invented, 10 Hz, km/h) is read from the scene's own folder; the run follows it.
    scene = load_scene(REPO / "scenes" / "logged_rehearsal.toml")
    log = scene.speed_log
    tr = simulate(scene)
    raw_at_10 = np.interp(10.0, log.raw_time, log.raw_speed)
    assert tr.record["speed"][tr.index_at(10.0)] == pytest.approx(raw_at_10, abs=0.5)
    assert 50 / 3.6 < log.top_speed < 54 / 3.6
    from preview.cli import main
    assert main(["check", str(REPO / "scenes" / "logged_rehearsal.toml")]) == 0
    assert "verdict:" in capsys.readouterr().out


def test_check_plots_the_raw_and_smoothed_log(tmp_path, capsys):
    from PIL import Image

    from preview.cli import main
    out = tmp_path / "log.png"
    assert main(["check", str(REPO / "scenes" / "logged_rehearsal.toml"), "--log-plot", str(out)]) == 0
    with Image.open(out) as image:
        assert image.size[0] > 800 and image.size[1] > 400
    # A scene without a log: a clear usage error, and nothing written.
    other = tmp_path / "none.png"
    assert main(["check", str(REPO / "scenes" / "heritage_excursion.toml"), "--log-plot", str(other)]) == 2
    assert "does not come from a log" in capsys.readouterr().err and not other.exists()


def test_the_brief_says_the_speed_is_a_measured_log(tmp_path):
    from pypdf import PdfReader

    from preview.cli import main
    out = tmp_path / "log.pdf"
    assert main(["brief", str(REPO / "scenes" / "logged_rehearsal.toml"), "-o", str(out)]) == 0
    first = " ".join(PdfReader(out).pages[0].extract_text().split())
    assert "measured log rehearsal_run3_demo.csv" in first and "constant" not in first
