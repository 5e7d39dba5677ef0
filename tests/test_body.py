"""The segmented body against its anthropometric sources (physics/body.py)."""

import numpy as np
import pytest

from physics import body
from physics.beat import place
from physics.records import Contact
from physics.scene_load import ACTION_KINDS

STATURE = 1.80


def standing():
    return body.segment_endpoints(np.array([body.POSTURES["stand"]], float), STATURE)[0]


def test_mass_fractions_sum_to_one():
    # Dempster via Winter Table 4.1: the segment fractions cover the whole body.
    assert body.MASS_FRACTION.sum() == pytest.approx(1.0, abs=1e-9)


def test_standing_landmark_heights():
    # Drillis & Contini via Winter Fig. 4.1: hip .530 H, knee .285 H, shoulder .818 H, top 1.0 H.
    ends = standing()
    floor = ends[..., 1].min()
    height = lambda seg, end: (ends[seg, end, 1] - floor) / STATURE  # noqa: E731
    assert height(body.HEAD, 1) == pytest.approx(1.0, abs=1e-9)
    assert height(body.TRUNK, 0) == pytest.approx(0.530, abs=1e-9)
    assert height(body.THIGH_N, 1) == pytest.approx(0.285, abs=1e-9)
    assert height(body.TRUNK, 1) == pytest.approx(0.818, abs=1e-9)
    assert height(body.SHANK_N, 1) == pytest.approx(0.039, abs=1e-9)


def test_foot_length():
    ends = standing()
    assert np.ptp(ends[body.FOOT_N, :, 0]) == pytest.approx(0.152 * STATURE)


def test_standing_drag_coefficient_in_published_range():
    # Engineering drag tables: a standing person has Cd 1.0-1.3 on frontal area.
    constants = body.body_constants(STATURE)
    cd = body.drag_area(standing()[None], constants)[0] / body.frontal_area_standing(STATURE)
    assert 1.0 <= cd <= 1.3


def test_standing_frontal_area_plausible():
    # From memory: an adult's frontal area is about 0.5-0.7 m^2 standing.
    assert 0.5 <= body.frontal_area_standing(STATURE) <= 0.7


def test_postures_reduce_drag_in_order():
    constants = body.body_constants(STATURE)
    cda = {name: body.drag_area(body.segment_endpoints(np.array([a], float), STATURE), constants)[0]
           for name, a in body.POSTURES.items()}
    assert cda["prone"] < cda["duck"] < cda["crouch"] < cda["stand"]
    assert cda["prone"] < 0.12 * cda["stand"]


def test_every_action_posture_exists():
    for kind in ACTION_KINDS:
        if kind not in ("walk", "run", "jump"):
            assert kind in body.POSTURES


def test_placement_puts_feet_on_roof_and_support_under_them():
    angles = np.array([body.POSTURES["stand"], body.POSTURES["kneel"], body.POSTURES["prone"]], float)
    contact = np.array([Contact.FEET, Contact.KNEES, Contact.BODY])
    ends, com, inertia, support, rotates, ratio, hip = place(angles, np.ones(3), contact, STATURE)
    assert ends[..., 1].min(axis=(1, 2)) == pytest.approx(0.0)
    # Standing: the support runs from the heel (behind the ankle) to the toe.
    foot = 0.152 * STATURE
    assert support[0] == pytest.approx([-0.25 * foot, 0.75 * foot])
    # Kneeling gives a longer base than standing; the body's com is low when prone.
    assert np.ptp(support[1]) > np.ptp(support[0])
    assert com[2, 1] < 0.15
    assert np.all(inertia > 0)
