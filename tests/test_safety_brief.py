"""Envelope, risk and brief: thresholds against direct runs and closed forms,
Monte Carlo against the deterministic run, intervals against scipy, the PDF."""

import json
import math
import re

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.stats import binomtest

from physics import G
from physics.risk import run_risk, summarise_risk, wilson_interval
from physics.scene_load import load_scene
from physics.simulation import simulate
from physics.sweep import sweep_1d
from physics.verdict import summarise
from preview.cli import main
from tests.conftest import REPO, SCENES, make_scene


def verdict_at(path, kmh):
    scene = load_scene(path, [f"motion.speed={kmh} km/h"])
    tr = simulate(scene)
    return summarise(scene, tr.events, tr.outcomes)["verdict"]


def test_envelope_thresholds_agree_with_direct_checks():
    path = REPO / "scenes" / "heritage_excursion.toml"
    sweep = sweep_1d(load_scene(path), "speed", 10 / 3.6, 160 / 3.6, points=31)
    assert sweep.thresholds
    for t in sweep.thresholds:
        kmh, tol = t.value * 3.6, t.tolerance * 3.6
        assert verdict_at(path, kmh - 2 * tol) == t.below
        assert verdict_at(path, kmh + 2 * tol) == t.above


def test_lumped_grip_threshold_matches_closed_form():
    # Flat roof, still air, no gait, lumped body: slip starts where
    # mu m g = 1/2 rho CdA v^2, v = sqrt(2 mu m g / (rho CdA)); to 0.5 %.
    cars = ['length = "20 m"\nroof_height = "4 m"\nroof_static = 0.3\nroof_kinetic = 0.2']
    scene = make_scene(body="lumped", cars=cars, speed="50 km/h", performer_extra='max_lean = "60 deg"')
    sweep = sweep_1d(scene, "speed", 10.0, 35.0, points=26, tolerance=0.005)
    slip = [t for t in sweep.thresholds if t.kind == "holds at all"]
    assert len(slip) == 1 and slip[0].failure_beyond == "slip"
    closed = math.sqrt(2 * 0.3 * 75 * G / (1.225 * 0.7))
    assert slip[0].value == pytest.approx(closed, rel=0.005)


def test_monte_carlo_without_uncertainty_reproduces_the_deterministic_verdict():
    for path in (REPO / "scenes" / "heritage_excursion.toml", REPO / "scenes" / "gap_crossing_frontward.toml"):
        scene = load_scene(path)
        assert not scene.uncertain
        tr = simulate(scene)
        expected = {"holds": 0, "marginal": 1, "fails": 2}[summarise(scene, tr.events, tr.outcomes)["verdict"]]
        result = run_risk(scene, samples=40, seed=1)
        assert np.all(result.codes == expected)


def test_monte_carlo_is_reproducible_and_finds_the_driver():
    scene = load_scene(REPO / "scenes" / "night_freight.toml")
    a = summarise_risk(scene, run_risk(scene, 300, seed=9))
    b = summarise_risk(scene, run_risk(scene, 300, seed=9))
    assert a == b
    assert a["drivers"][0]["input"] == "roof friction, box wagon"
    assert a["drivers"][0]["rank_correlation_with_failure"] < -0.3
    c = summarise_risk(scene, run_risk(scene, 300, seed=10))
    assert c != a


@pytest.mark.parametrize("k, n", [(0, 10), (3, 10), (50, 100), (997, 1000), (1, 10000), (10000, 10000)])
def test_wilson_interval_against_scipy(k, n):
    # scipy.stats.binomtest(...).proportion_ci(method="wilson") is the reference.
    ref = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
    assert wilson_interval(k, n) == pytest.approx((ref.low, ref.high), abs=1e-12)


def test_brief_says_verdict_why_required_factors_duck_start_checklist_and_who_signs(tmp_path, capsys):
    import hashlib

    from pypdf import PdfReader

    from preview import __version__
    out = tmp_path / "brief.pdf"
    scene_file = REPO / "scenes" / "footbridge_late_duck.toml"
    assert main(["brief", str(scene_file), "-o", str(out)]) == 0
    reader = PdfReader(out)
    assert len(reader.pages) in (3, 4)
    first = " ".join(reader.pages[0].extract_text().split())
    assert "VERDICT: FAILS" in first and "not a safety certificate" in first
    for role in ("stunt coordinator", "safety officer", "1st AD", "operator's representative"):
        assert role in first
    assert "≥ 1.30" in first and "≥ 0.30" in first          # the factors the scene requires, beside the margins
    content = json.loads(out.with_suffix(".json").read_text())
    duck = content["ducks"][0]
    assert (f"latest start of 'duck' that clears is {duck['latest_start_s']:.2f} s (planned "
            f"{duck['planned_start_s']:.2f} s: {-duck['spare_s']:.2f} s too late)") in first
    assert "abort signal" in first and "rescue plan" in first and "lower speed" in first
    assert "isolated" in first and "operator's representative is present" in first
    digest = hashlib.sha256(scene_file.read_bytes()).hexdigest()
    for page in reader.pages:   # every page can be matched to the scene file and the version
        words = " ".join(page.extract_text().split())
        assert digest in words and f"roofbeat {__version__}" in words
    # The key frames are vectors: their own words are text in the PDF, not pixels.
    second = " ".join(reader.pages[1].extract_text().split())
    assert "CAR FRAME" in second and "STRIKE 6.22 s" in second and "Planning aid on simplified physics" in second
    content = json.loads(out.with_suffix(".json").read_text())
    assert content["verdict"] == "fails" and content["first_failure"]["kind"] == "strike"
    assert content["scene_sha256"] == digest and 5.0 < content["ducks"][0]["latest_start_s"] < 6.0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["brief.json", "brief.pdf"]


def test_a_marginal_brief_says_which_factor(tmp_path):
    from pypdf import PdfReader
    out = tmp_path / "m.pdf"
    assert main(["brief", str(REPO / "scenes" / "airfield_flatbed.toml"), "-o", str(out)]) == 0
    first = " ".join(PdfReader(out).pages[0].extract_text().split())
    walk = next(a for a in json.loads(out.with_suffix(".json").read_text())["actions"] if a["name"] == "walk")
    assert f"why marginal: grip ratio {walk['grip_ratio_min']:.2f}, required 1.30" in first
    assert f"{walk['recovery_steps']} recovery steps taken" in first


def test_brief_pages_render_with_the_header_band_and_key_frames(tmp_path):
    # Rendered by PDFium (pypdfium2, from the registry), not a system tool: Letter pages, the dark
    # header band at the top, page 1 mostly paper, page 2 two drawn key frames.
    import pypdfium2
    out = tmp_path / "b.pdf"
    assert main(["brief", "-o", str(out), "--paper", "letter", "--units", "imperial"]) == 0
    pdf = pypdfium2.PdfDocument(str(out))
    assert len(pdf) >= 2
    for page in pdf:
        assert page.get_size() == pytest.approx((8.5 * 72, 11 * 72), abs=1)
    one = np.asarray(pdf[0].render(scale=50 / 72).to_pil().convert("L"))
    assert one[:int(0.05 * one.shape[0])].mean() < 100
    assert one[int(0.3 * one.shape[0]):].mean() > 180
    two = np.asarray(pdf[1].render(scale=50 / 72).to_pil().convert("RGB")).astype(int)
    frames = two[int(0.1 * two.shape[0]):int(0.85 * two.shape[0])]
    sky = np.all(np.abs(frames - np.array([226, 230, 233])) < 6, axis=-1)
    assert sky.mean() > 0.15      # the drawn views, not an empty page
    text = " ".join(pdf[1].get_textpage().get_text_range().split())
    assert "lbf (every force)" in text and "mph (apparent wind)" in text


@pytest.mark.parametrize("path", SCENES, ids=lambda p: p.name)
def test_envelope_and_risk_commands_on_every_bundled_scene(path, capsys, tmp_path):
    assert main(["envelope", str(path), "--vary", "speed=5..120 km/h", "--points", "9", "--json",
                 "--plot", str(tmp_path / "env.png")]) == 0
    data = json.loads(capsys.readouterr().out)
    assert len(data["rows"]) == 9 and "thresholds" in data
    assert (tmp_path / "env.png").stat().st_size > 10_000
    assert main(["risk", str(path), "--samples", "20", "--json"]) == 0
    risk = json.loads(capsys.readouterr().out)
    assert risk["samples"] == 20 and risk["interval"].startswith("Wilson")


def test_two_parameter_map(capsys, tmp_path):
    plot = tmp_path / "map.png"
    assert main(["envelope", "--vary", "speed=10..120 km/h", "--vary", "wind_speed=0..15 m/s", "--points", "8",
                 "--plot", str(plot)]) == 0
    text = capsys.readouterr().out
    assert "rows: wind_speed; columns: speed" in text
    assert plot.stat().st_size > 10_000


def test_bad_vary_is_a_clear_error(capsys):
    # A bad option value is a usage error (exit 2) that names the option.
    assert main(["envelope", "--vary", "speed=fast..faster"]) == 2
    assert "--vary" in capsys.readouterr().err
    assert main(["envelope", "--vary", "colour=1..2"]) == 2
    assert main(["envelope", "--vary", "mass=-10..80 kg"]) == 2
    assert "30..200" in capsys.readouterr().err
    assert main(["envelope", "--vary", "speed=10..inf km/h"]) == 2


def test_risk_on_a_lumped_body_with_an_uncertain_drag_area(tmp_path, capsys):
    # The lumped body's drag area goes one road into the engine, like the
    # segmented body's: its spread is sampled and ranked.
    from tests.conftest import scene_text
    path = tmp_path / "lumped.toml"
    # Near the slip speed of the closed form (about 118 km/h at 0.7 m^2 on mu 0.6).
    path.write_text(scene_text(speed="118 km/h", body="lumped", drag_area='"0.7 m^2 +/- 15%"',
                               performer_extra='max_lean = "60 deg"'))
    assert main(["risk", str(path), "--samples", "200", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["uncertain_inputs"]["drag area"]["low"] == pytest.approx(0.7 * 0.85, rel=0.02)
    assert [d["input"] for d in out["drivers"]] == ["drag area"]
    assert 0 < out["failure_probability"]["count"] < 200


def test_a_roof_friction_spread_on_any_car_is_sampled():
    # A spread written on the landing car (not the start car) is sampled on
    # that car's roof only.
    from physics.risk import sample_variants
    cars = ['name = "A"\nlength = "18 m"\nroof_height = "3.9 m"\ngap = "1 m"',
            'name = "B"\nlength = "18 m"\nroof_height = "3.9 m"\nroof_static = "0.6 +/- 0.2"\nroof_kinetic = 0.4']
    scene = make_scene(cars=cars)
    v, inputs = sample_variants(scene, 500, seed=4)
    assert list(inputs) == ["roof friction, B"]
    assert np.all(v.roof_scale[:, 0] == 1.0)
    friction = 0.6 * v.roof_scale[:, 1]
    assert friction.min() == pytest.approx(0.4, abs=0.01) and friction.max() == pytest.approx(0.8, abs=0.01)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(speed=st.floats(20, 120), wind=st.floats(0, 15), friction=st.floats(0.3, 0.9),
       body=st.sampled_from(["segmented", "lumped"]), kind=st.sampled_from(["stand", "crouch", "walk"]))
def test_holding_with_the_factors_never_goes_further_than_holding_at_all(speed, wind, friction, body, kind):
    from physics.sweep import limits
    cars = [f'length = "20 m"\nroof_height = "4 m"\nroof_static = {friction}\nroof_kinetic = {0.7 * friction}']
    action = f'do = "{kind}"\nduration = "3 s"\ntransition = "0 s"' + ('\nspeed = "1 m/s"' if kind == "walk" else "")
    scene = make_scene(speed=f"{speed} km/h", wind=f"{wind} m/s", body=body, cars=cars, actions=[action])
    with_factors, at_all = limits(sweep_1d(scene, "speed", 2.0, 50.0, points=9))
    if at_all.value is None:
        assert with_factors.value is None
    elif with_factors.value is not None:
        assert with_factors.value <= at_all.value
        assert not (with_factors.bound and not at_all.bound)


def test_risk_prints_a_table_in_the_scenes_display_units(capsys):
    # Night freight is an imperial scene: masses in lb, areas in ft^2, lengths in ft; no raw dicts or SI keys.
    assert main(["risk", str(REPO / "scenes" / "night_freight.toml"), "--samples", "60"]) == 0
    out = capsys.readouterr().out
    assert "{" not in out and "_min" not in out and "(SI)" not in out
    assert re.search(r"mass\s+\d+\.\d+ lb", out) and "ft²" in out
    assert re.search(r"balance margin, lowest\s+\d+\.\d+ ft", out)
    assert main(["risk", str(REPO / "scenes" / "night_freight.toml"), "--samples", "60", "--units", "metric"]) == 0
    assert re.search(r"mass\s+\d+\.\d+ kg", capsys.readouterr().out)


def test_limit_words_never_offer_a_failing_speed_to_plan_on():
    from preview.analysis import limit_words
    span = [10.0, 60.0]
    none = {"level": "holds with the required factors", "value": None, "bound": False, "all_below": False,
            "failure_beyond": None}
    at_all = {"level": "holds at all", "value": 17.3, "bound": False, "all_below": True, "failure_beyond": "fall"}
    assert limit_words("speed", none, span, "metric") == "no value from 36.00 km/h to 216.00 km/h holds with the " \
                                                           "required factors"
    words = limit_words("speed", at_all, span, "metric", [none, at_all])
    assert words.startswith("does not fail up to 62.28 km/h") and "not a value to plan on" in words
    factored = dict(none, value=12.0)
    words = limit_words("speed", at_all, span, "metric", [factored, at_all])
    assert "above 43.20 km/h it holds only below the required factors (marginal): plan to 43.20 km/h" in words


def test_a_failure_across_the_track_is_briefed_in_the_end_view(tmp_path):
    # The crosswind scene fails by a slip toward the right edge that ends over it: the key frames are
    # drawn across the track, the second as the body goes over; the table gives the side-edge margin.
    from pypdf import PdfReader
    out = tmp_path / "edge.pdf"
    assert main(["brief", str(REPO / "scenes" / "crosswind_edge.toml"), "-o", str(out)]) == 0
    reader = PdfReader(out)
    first = " ".join(reader.pages[0].extract_text().split())
    second = " ".join(reader.pages[1].extract_text().split())
    assert "END VIEW" in second and "end view, across the track" in second
    assert "then off the right side at" in second and "CAR FRAME" not in second
    assert "edge (m)" in first and "≥ 0.50" in first and "sideways toward the right edge" in first
    assert "sideways balance" not in first    # no longer listed as not modelled


def test_a_beat_held_against_a_side_wind_is_briefed_across_the_track(tmp_path):
    # The braced crosswind scene holds; its tightest margin is the grip against a mostly sideways load,
    # so its key frames are end views too; the gust is said as an addition to the mean wind.
    from pypdf import PdfReader
    out = tmp_path / "braced.pdf"
    assert main(["brief", str(REPO / "scenes" / "crosswind_braced.toml"), "-o", str(out)]) == 0
    reader = PdfReader(out)
    first = " ".join(reader.pages[0].extract_text().split())
    second = " ".join(reader.pages[1].extract_text().split())
    assert "END VIEW" in second
    assert "(from the left); a gust adding 14.0 m/s from 80° at 5 s for 3 s" in first
    # It holds in storm-force apparent wind: said plainly beside the green verdict.
    assert "WARNING: the apparent wind reaches Beaufort 11 (violent storm)" in first
    assert "a verdict here is a calculation, not evidence" in first


def test_check_never_rounds_a_margin_up_and_says_where_the_wind_count_stops(capsys):
    # The edge scene slips with 0.998 of the grip it needs: shown as 0.99, not 1.00; its highest
    # apparent wind is said to stop at the failure, with the whole run's beside it; where the body
    # came down is given across the track too.
    assert main(["check", str(REPO / "scenes" / "crosswind_edge.toml")]) == 0
    text = capsys.readouterr().out
    row = next(line for line in text.splitlines() if line.startswith("look down"))
    assert row.split()[4] == "0.99"    # look, down, start-end, verdict, grip
    assert "apparent wind, highest before the first failure (5.74 s)" in text
    assert "over the whole beat as simulated" in text
    assert "before the failure, already below the required: grip ratio 0.99, required 1.30; side-edge" in text
    assert re.search(r"\d\.\d m right of the track's centreline", text)


def test_the_brief_ends_with_the_ladder_and_its_abort_limits(tmp_path, capsys):
    # The last page: the abort limits in large type, the same numbers as `roofbeat ladder` (one sweep
    # behind both), the rungs, the wind machine, and a plain line that this scene has no rigging.
    from pypdf import PdfReader
    path = str(REPO / "scenes" / "curve_too_fast.toml")
    out = tmp_path / "curve.pdf"
    assert main(["brief", path, "-o", str(out)]) == 0
    last = " ".join(PdfReader(out).pages[-1].extract_text().split())
    content = json.loads(out.with_suffix(".json").read_text())
    capsys.readouterr()
    assert main(["ladder", path, "--json"]) == 0
    ladder = json.loads(capsys.readouterr().out)
    assert content["ladder"]["abort_limits"] == ladder["abort_limits"]
    top = ladder["abort_limits"]["speed"]["limits"][0]["value"]
    assert f"TOP SPEED: {top * 3.6:.2f} km/h" in last
    assert "First rung short of the factors: rung 5" in last and "wind machine" in last
    assert "Rigging: this scene has no [[rigging]]" in last
    # The envelope line on page one gives the same top speed.
    first = " ".join(PdfReader(out).pages[0].extract_text().split())
    assert f"holds with the required factors up to {top * 3.6:.2f} km/h" in first


def test_storm_warning_only_at_storm_force(capsys):
    # Beaufort 10 (24.5 m/s) and up gets the warning; the default scene's near gale does not.
    assert main(["check", str(REPO / "scenes" / "heritage_excursion.toml")]) == 0
    assert "WARNING: the apparent wind" not in capsys.readouterr().out
    assert main(["check", str(REPO / "scenes" / "crosswind_braced.toml")]) == 0
    assert "WARNING: the apparent wind reaches Beaufort 11" in capsys.readouterr().out


def test_the_brief_gives_the_whole_title_once(tmp_path):
    # The header band shortens a long title to fit beside the verdict; page one gives it whole.
    from pypdf import PdfReader
    from physics.scene_load import load_scene
    path = REPO / "scenes" / "crosswind_braced.toml"
    out = tmp_path / "b.pdf"
    assert main(["brief", str(path), "-o", str(out)]) == 0
    first = " ".join(PdfReader(out).pages[0].extract_text().split())
    assert load_scene(path).title in first


def test_the_brief_gives_the_rigging_table(tmp_path):
    # A scene with rigging: the ladder page's table gives each tether against its limits, the sources
    # named, and an anchor over its limit said so; the same numbers as `roofbeat check --json`.
    from pypdf import PdfReader
    path = REPO / "scenes" / "tethered_edge_fall_overload.toml"
    out = tmp_path / "rig.pdf"
    assert main(["brief", str(path), "-o", str(out)]) == 0
    last = " ".join(PdfReader(out).pages[-1].extract_text().split())
    content = json.loads(out.with_suffix(".json").read_text())
    row = content["rigging"][0]
    assert "lanyard on line (running line)" in last and "peak anchor load" in last and "OVER" in last
    assert "1926.502(d)(15)" in last and "not modelled" not in last
    assert f"{row['peak_anchor_load_n']:.0f} N" in last
