"""Two performers in the reports: check (text and JSON), envelope, risk, ladder and the brief on the bundled
pair scene, each checked against the performers' own runs summarised one by one."""

import json
import math

import numpy as np
import pytest

from physics.hazards import latest_duck_starts
from physics.scene_load import load_scene, parse_scene
from physics.simulation import simulate, variants
from physics.sweep import apply, sweep_1d
from physics.verdict import NAMES, summarise
from preview.caution import CAUTION
from preview.cli import main
from tests.conftest import REPO

PAIR = REPO / "scenes" / "roof_fight_shove.toml"
FAST = 'motion.speed="110 km/h"'   # Eli slips and goes off the end; Dana stays up


def own_summaries(scene, variant=None):
    """Each performer's own summary, from its own trajectory and its own cast scene."""
    tr = simulate(scene, variant)
    return [summarise(part, one.events, one.outcomes) for part, one in zip(scene.cast, (tr,) + tr.partners)]


def worse(verdicts):
    return NAMES[max(NAMES.index(v) for v in verdicts)]


def run_cli(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    return code, out, err


@pytest.mark.parametrize("overrides", [[], [FAST]])
def test_check_text_names_each_performer_and_the_worse_verdict(capsys, overrides):
    scene = load_scene(PAIR, overrides)
    own = own_summaries(scene)
    beat = worse(s["verdict"] for s in own)
    args = ["check", PAIR] + [x for o in overrides for x in ("--set", o)]
    code, out, _ = run_cli(capsys, *args)
    assert code == 0
    for part, s in zip(scene.cast, own):
        assert f"{part.name.upper()}: {s['verdict'].upper()}" in out
        for a in part.actions:
            assert a.label[:15] in out
    assert f"verdict: {beat.upper()} (the worse of Dana's {own[0]['verdict'].upper()} and Eli's " \
           f"{own[1]['verdict'].upper()})" in out
    assert "interactions (who did what to whom):" in out
    shove = next(line for line in out.splitlines() if line.strip().startswith("Dana") and "shove" in line)
    assert "Eli" in shove and "140 N" in shove and "N s" in shove
    assert "CAUTION: " + CAUTION in out
    failures = [(s["first_failure"]["time_s"], part.name, s["first_failure"]["kind"])
                for part, s in zip(scene.cast, own) if s["first_failure"]]
    if failures:
        t, who, kind = min(failures)
        assert f"first failure: {who}, {kind} at" in out
        assert f"{who}'s first failure: {kind} at" in out
    else:
        assert "first failure:" not in out.replace("'s first failure: none", "")


def test_check_json_performers_match_each_ones_own_summary(capsys):
    scene = load_scene(PAIR, [FAST])
    own = own_summaries(scene)
    code, out, _ = run_cli(capsys, "check", PAIR, "--json", "--set", FAST)
    assert code == 0
    data = json.loads(out)
    for key in ("scene", "file", "units", "verdict", "first_failure", "events", "actions", "required_factors",
                "air_over_roof", "aftermath", "arrivals", "ducks", "apparent_wind_whole_beat_ms", "uniform_air",
                "caution"):
        assert key in data
    assert data["verdict"] == worse(s["verdict"] for s in own) == "fails"
    assert [p["name"] for p in data["performers"]] == ["Dana", "Eli"]
    for entry, s in zip(data["performers"], own):
        assert entry["verdict"] == s["verdict"]
        assert (entry["first_failure"] or {}).get("kind") == (s["first_failure"] or {}).get("kind")
        assert [a["verdict"] for a in entry["actions"]] == [a["verdict"] for a in s["actions"]]
        assert [a["grip_ratio_min"] for a in entry["actions"]] == [a["grip_ratio_min"] for a in s["actions"]]
    assert data["first_failure"]["performer"] == "Eli"
    assert data["first_failure"]["time_s"] == min(s["first_failure"]["time_s"] for s in own if s["first_failure"])
    # Eli went off the end: the beat's aftermath is Eli's, and ends off the consist.
    assert data["aftermath"] == data["performers"][1]["aftermath"]
    assert data["aftermath"][-1]["state"].startswith("on the ground")
    assert data["performers"][0]["aftermath"] == []
    (shove,) = data["interactions"]
    assert (shove["kind"], shove["actor"], shove["partner"], shove["reached"]) == ("shove", "Dana", "Eli", True)
    assert shove["peak_force_n"] == pytest.approx(140.0, rel=1e-6)
    assert shove["impulse_ns"] > 0


def test_one_performer_json_and_text_have_no_pair_parts(capsys):
    code, out, _ = run_cli(capsys, "check", "heritage_excursion", "--json")
    data = json.loads(out)
    assert code == 0 and "performers" not in data and "interactions" not in data
    code, out, _ = run_cli(capsys, "check", "heritage_excursion")
    assert "two performers" not in out and "interactions" not in out and "(the worse of" not in out


def test_envelope_margin_is_the_smaller_of_the_two_runs(capsys):
    scene = load_scene(PAIR)
    values = np.linspace(60.0, 115.0, 3) / 3.6
    code, out, _ = run_cli(capsys, "envelope", PAIR, "--vary", "speed=60..115 km/h", "--points", "3", "--json")
    assert code == 0
    data = json.loads(out)
    assert data["margins_are"] == "worse of Dana and Eli"
    assert [r["value"] for r in data["rows"]] == pytest.approx(values)
    for value, row in zip(values, data["rows"]):
        v = variants(scene)
        apply(scene, v, "speed", np.array([value]))
        tr = simulate(scene, v)
        runs = (tr,) + tr.partners
        grip = min(float(np.min(one.outcomes["grip_ratio_min"])) for one in runs)
        lift = min(float(np.min(one.outcomes["lift_ratio_min"])) for one in runs)
        assert row["grip_ratio_min"] == pytest.approx(grip, rel=1e-9)
        assert row["lift_ratio_min"] == pytest.approx(lift, rel=1e-9)
        own = own_summaries(scene, v)
        assert row["verdict"] == worse(s["verdict"] for s in own)
        assert row["performers"] == {p.name: s["verdict"] for p, s in zip(scene.cast, own)}
        failures = [(s["first_failure"]["time_s"], p.name, s["first_failure"]["kind"])
                    for p, s in zip(scene.cast, own) if s["first_failure"]]
        assert row["first_failure"] == (f"{min(failures)[2]} ({min(failures)[1]})" if failures else None)
    assert data["rows"][-1]["first_failure"] == "slip (Eli)"


def test_envelope_text_says_worse_of_and_names_who_fails(capsys):
    code, out, _ = run_cli(capsys, "envelope", PAIR, "--vary", "speed=60..115 km/h", "--points", "5")
    assert code == 0
    assert "every verdict and margin is the worse of Dana and Eli" in out
    assert "slip (Eli)" in out and "CAUTION: " + CAUTION in out


@pytest.mark.parametrize("vary", ["mass=60..90 kg", "drag_area=0.5..0.9 m^2"])
def test_envelope_refuses_one_performers_value_on_a_pair(capsys, vary):
    code, out, err = run_cli(capsys, "envelope", PAIR, "--vary", vary)
    name = vary.split("=")[0]
    assert code == 2 and out == ""
    assert f"--vary {name} is one performer's own value" in err and "Dana, Eli" in err


def test_sweep_threshold_is_where_the_worse_performer_changes():
    scene = load_scene(PAIR)
    sweep = sweep_1d(scene, "speed", 60 / 3.6, 115 / 3.6, points=12)
    (t,) = [t for t in sweep.thresholds if t.kind == "holds at all"]
    assert t.failure_beyond == "slip (Eli)"
    for kmh, expected in ((t.value * 3.6 - 0.5, t.below), (t.value * 3.6 + 0.5, t.above)):
        own = own_summaries(load_scene(PAIR, [f'motion.speed="{kmh} km/h"']))
        assert worse(s["verdict"] for s in own) == expected


def test_ladder_on_a_pair(capsys):
    code, out, _ = run_cli(capsys, "ladder", PAIR, "--set", FAST, "--rungs", "3", "--json")
    assert code == 0
    data = json.loads(out)
    assert data["performers"] == ["Dana", "Eli"] and data["margins_are"] == "worse of Dana and Eli"
    top = data["rungs"][-1]
    own = own_summaries(load_scene(PAIR, [FAST]))
    assert top["verdict"] == worse(s["verdict"] for s in own) == "fails"
    assert top["performers"] == {"Dana": own[0]["verdict"], "Eli": own[1]["verdict"]}
    assert top["first_failure"] == "slip (Eli)"
    grips = [a["grip_ratio_min"] for s in own for a in s["actions"] if a["grip_ratio_min"] is not None]
    assert top["margins"]["grip ratio"] == pytest.approx(min(grips), rel=1e-9)
    code, out, _ = run_cli(capsys, "ladder", PAIR, "--set", FAST, "--rungs", "3")
    assert code == 0
    assert "the worse of Dana and Eli" in out and "CAUTION: " + CAUTION in out


def test_risk_on_a_pair_counts_either_performer(capsys):
    code, out, _ = run_cli(capsys, "risk", PAIR, "--set", 'motion.speed="100 km/h +/- 10 km/h"', "--samples", "40",
                           "--json")
    assert code == 0
    data = json.loads(out)
    fails = data["failure_probability"]["count"]
    per = data["by_performer"]
    assert set(per) == {"Dana", "Eli"}
    assert max(p["failure_probability"]["count"] for p in per.values()) <= fails
    assert sum(p["fails_first"]["count"] for p in per.values()) == fails
    assert data["margins_are"] == "worse of Dana and Eli"
    code, out, _ = run_cli(capsys, "risk", PAIR, "--set", 'motion.speed="100 km/h +/- 10 km/h"', "--samples", "40")
    assert "a run fails when either performer fails" in out and "Eli fails in" in out


def page_texts(pdf):
    import pypdfium2
    doc = pypdfium2.PdfDocument(str(pdf))
    return [doc[i].get_textpage().get_text_range() for i in range(len(doc))]


def test_brief_on_a_pair(tmp_path, capsys):
    out = tmp_path / "fight.pdf"
    code, printed, _ = run_cli(capsys, "brief", PAIR, "-o", out, "--set", FAST)
    assert code == 0 and "verdict fails" in printed
    data = json.loads(out.with_suffix(".json").read_text())
    own = own_summaries(load_scene(PAIR, [FAST]))
    assert [p["verdict"] for p in data["performers"]] == [s["verdict"] for s in own]
    assert data["interactions"][0]["actor"] == "Dana"
    pages = page_texts(out)
    assert len(pages) == data["pages"]
    one = " ".join(pages[0].split())
    assert "TWO PERFORMERS: THE BEAT IS THE WORSE OF DANA'S MARGINAL AND ELI'S FAILS" in one
    assert "Dana: MARGINAL. First failure: none." in one
    assert "Eli: FAILS. First failure: slip at" in one
    assert "Dana's actions (MARGINAL)" in one and "Eli's actions (FAILS)" in one
    assert "First failure (Eli): slip" in one
    assert "INTERACTIONS: WHO DID WHAT TO WHOM" in one and "140 N" in one
    assert " ".join(CAUTION.split()) in one
    whole = " ".join(" ".join(pages).split())
    assert "stunt coordinator" in whole and "operator's representative" in whole   # the sign-off lines
    assert "worse of Dana and Eli" in whole


def test_one_performer_brief_has_no_pair_parts(tmp_path, capsys):
    out = tmp_path / "one.pdf"
    code, _, _ = run_cli(capsys, "brief", "heritage_excursion", "-o", out)
    assert code == 0
    data = json.loads(out.with_suffix(".json").read_text())
    assert "performers" not in data and "closing_page" not in data
    assert "TWO PERFORMERS" not in page_texts(out)[0]


DUCK_PAIR = PAIR.read_text().replace('''[[performers.actions]]
do = "stand"
label = "take the shove"
duration = "6 s"
transition = "0 s"''', '''[[performers.actions]]
do = "stand"
label = "wait"
duration = "2 s"
transition = "0 s"

[[performers.actions]]
do = "duck"
label = "duck the bridge"
duration = "4 s"
transition = "0.6 s"''') + '''
[[structures]]
kind = "footbridge"
name = "low bridge"
reached_at = "1 s"
span = "3 m"
soffit = "5.6 m"
'''


def test_a_pair_duck_is_searched_in_its_own_performers_actions():
    assert "duck the bridge" in DUCK_PAIR
    scene = parse_scene(DUCK_PAIR, "duck_pair.toml")
    ducks = latest_duck_starts(scene)
    (duck,) = ducks
    assert duck["performer"] == "Eli" and duck["action"] == 2
    latest = duck["latest_start_s"]
    assert latest is not None and math.isfinite(latest)
    # Just before the latest start Eli clears; a frame after it Eli is struck (Eli's own events).
    from physics.hazards import _in_pair, _strikes
    assert not _strikes(_in_pair(scene, 1, 1, latest - 0.05), 1)
    assert _strikes(_in_pair(scene, 1, 1, min(latest + 0.2, 5.9)), 1)


def test_grab_check_reads_a_slip_as_a_slip_and_gives_each_margin_its_unit(capsys):
    # Rae's slip: the grip she needed passes the roof's by less than 0.0005, which three decimals showed
    # as a tie ("needed 0.600, roof gives 0.600"); the hold did not break and says only that: 'held' and
    # 'kept hold' read as if the partner were safe (a catch "kept hold" of a flyer who fell into the gap).
    from physics.verdict import apart
    assert apart(0.6004, 0.6) == ("0.6004", "0.6000") and apart(0.61, 0.6) == ("0.610", "0.600")
    assert main(["check", str(REPO / "scenes" / "grab_saves_slip.toml")]) == 0   # exit 0: it ran
    out = capsys.readouterr().out
    slip = next(line for line in out.splitlines() if line.startswith("Rae's first failure: slip"))
    need, have = slip.split("grip needed ")[1].split(", roof gives ")
    assert float(need) > float(have)
    assert "side edge 0.89 m; balance across the track 0.20 m" in out
    assert "rise into the …" in out and "rise into the w " not in out
    assert "unbroken (breaks at 900 N)" in out


def test_key_frames_follow_the_performer_nearer_failing_and_name_them():
    # Both MARGINAL in the fight: the key frames follow Eli, whose grip ratio is the lower (he takes the
    # shove), and each caption says whose moment it is.
    from preview.brief import focus, key_times
    from preview.session import make_playback
    pb = make_playback(load_scene(PAIR))
    assert [p["verdict"] for p in pb.summary["performers"]] == ["marginal", "marginal"]
    grips = [min(a["grip_ratio_min"] for a in p["actions"]) for p in pb.summary["performers"]]
    assert grips[1] < grips[0] and focus(pb) == 1
    assert all(label.startswith("Eli: ") for label, _ in key_times(pb))


def test_envelope_plot_says_where_a_margin_runs_below_its_floor():
    # The fight's balance margin is far below zero at every speed (both take a recovery step): drawn
    # along the floor, and its legend entry says so instead of showing a flat line at -0.5 as a value.
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from preview.analysis import envelope_summary
    from preview.plots import FLOOR, draw_envelope
    scene = load_scene(PAIR)
    sweep = sweep_1d(scene, "speed", 20 / 3.6, 60 / 3.6, points=3)
    fig, ax = plt.subplots()
    draw_envelope(ax, scene, sweep, envelope_summary(scene, sweep))
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    balance = next(label for label in labels if label.startswith("balance margin"))
    assert f"below {FLOOR:g} drawn at {FLOOR:g}" in balance
    assert not any("below" in label for label in labels if label.startswith(("grip", "lift")))
    assert ax.get_ylim()[0] < FLOOR - 0.2   # room under the floor line for the Beaufort labels
    plt.close(fig)
