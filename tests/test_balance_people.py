"""Balance measured against people: standing volunteers on a braking sled, and the
braking of a consist to a stop, which people ride out without a step.

Source: Krašna S, Keller A, Linder A, et al. Human response to longitudinal
perturbations of standing passengers on public transport during regular
operation. Front. Bioeng. Biotechnol. 2021; 9:680883 (abstract): of two braking
pulses, 1.0 and 2.5 m/s^2, only the lower allowed balance recovery without
compensatory stepping; the study's acceleration pulses had jerks of 5.6 and
11.3 m/s^3. The braking pulses' own jerk and length are not in the abstract:
here the lower jerk, 5.6 m/s^3, and plateaus of 0.5 and 1 s (assumed).
"""

from __future__ import annotations

import pytest

from physics.scene_load import parse_scene
from physics.simulation import simulate
from physics.verdict import summarise
from tests.conftest import scene_text


def sled(decel: float, plateau: float, step: str, jerk: str = "5.6 m/s^3"):
    """A standing performer (facing the way of travel) on a platform that brakes at `decel` for `plateau` s."""
    v0 = decel * plateau + 0.5   # slow enough that the apparent wind is a breeze, as indoors
    motion = (f'keyframes = [{{ time = "0 s", speed = "{v0} m/s" }}, {{ time = "1 s", speed = "{v0} m/s" }}, '
              f'{{ time = "{1 + plateau} s", speed = "{v0 - decel * plateau} m/s" }}]\njerk = "{jerk}"')
    text = scene_text(motion=motion, body="segmented", wind="0 m/s",
                      actions=[f'do = "stand"\nduration = "{plateau + 4:.2f} s"\ntransition = "0 s"'],
                      performer_extra=f'facing = "front"\nrecovery_step = "{step}"')
    scene = parse_scene(text, "sled.toml")
    tr = simulate(scene)
    summary = summarise(scene, tr.events, tr.outcomes)
    return summary, {e["kind"] for e in summary["events"]}


@pytest.mark.parametrize("plateau", [0.5, 1.0])
def test_a_1_m_s2_braking_pulse_is_recovered_without_a_step(plateau):
    summary, kinds = sled(1.0, plateau, "0.5 m")
    assert "recovery step" not in kinds and "topple" not in kinds
    assert summary["actions"][0]["balance_margin_min_m"] > 0
    summary, kinds = sled(1.0, plateau, "0 m")   # and so also by a performer who may not step
    assert summary["verdict"] != "fails"


@pytest.mark.parametrize("plateau", [0.5, 1.0])
def test_a_2_5_m_s2_braking_pulse_takes_a_step(plateau):
    summary, kinds = sled(2.5, plateau, "0.5 m")
    assert "recovery step" in kinds and "topple" not in kinds
    assert summary["actions"][0]["recovery_steps"] >= 1
    assert summary["verdict"] == "marginal"          # the margin went below zero before the step
    summary, kinds = sled(2.5, plateau, "0 m")         # not allowed to step: down
    assert summary["first_failure"]["kind"] == "topple"


def test_braking_to_a_stop_and_a_firm_onset_are_ridden_out_standing():
    # A standing performer, grip to spare, at the default jerk: a consist braking at 0.5 m/s^2 to a
    # stop, and the onset of a 1 m/s^2 braking (judged while it lasts): people ride these out (see
    # the sled study above).
    summary, kinds = sled(0.5, 20.0, "0 m", jerk="2 m/s^3")
    assert summary["verdict"] != "fails", summary["first_failure"]
    summary, kinds = sled(1.0, 8.0, "0 m", jerk="2 m/s^3")
    first = summary["first_failure"]
    assert first is None or first["time_s"] > 1.0 + 8.0   # nothing while the braking holds


def test_multiple_recovery_steps_under_a_long_hard_pulse():
    # A 2.5 m/s^2 braking held for 3 s: each step puts the support back under the body, as many as it takes.
    summary, kinds = sled(2.5, 3.0, "0.5 m")
    assert summary["actions"][0]["recovery_steps"] >= 2 and "topple" not in kinds
