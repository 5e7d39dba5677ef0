"""Shared helpers: small scenes written as real TOML text and loaded by the real loader."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("SDL_VIDEODRIVER", "dummy")
os.environ.setdefault("SDL_AUDIODRIVER", "dummy")

from hypothesis import settings  # noqa: E402

from physics.scene_load import parse_scene  # noqa: E402

# CI is reproducible: the same examples on every run (a failure found once is found again).
settings.register_profile("roofbeat", derandomize=True)
settings.load_profile("roofbeat")

REPO = Path(__file__).resolve().parent.parent
SCENES = sorted((REPO / "scenes").glob("*.toml"))


def scene_text(speed="80 km/h", body="lumped", drag_area='"0.7 m^2"', mass="75 kg", stature="1.78 m",
               actions=None, roof="painted steel dry", wind="0 m/s", wind_from="0 deg", extra="",
               motion=None, cars=None, start='car = 1\nposition = "10 m"', performer_extra="", air_extra="") -> str:
    actions = actions or ['do = "stand"\nduration = "4 s"\ntransition = "0 s"']
    motion = motion or f'speed = "{speed}"'
    cars = cars or ['name = "car 1"\nlength = "20 m"\nroof_height = "4.0 m"']
    car_text = "\n".join(f"[[consist.cars]]\n{c}\n" for c in cars)
    action_text = "\n".join(f"[[actions]]\n{a}\n" for a in actions)
    drag = f"drag_area = {drag_area}\n" if drag_area else ""
    return f"""title = "test scene"
[consist]
roof = "{roof}"
{car_text}
[motion]
{motion}

[air]
altitude = "0 m"
wind_speed = "{wind}"
wind_from = "{wind_from}"
{air_extra}

[performer]
stature = "{stature}"
mass = "{mass}"
{drag}body = "{body}"
{performer_extra}

[start]
{start}

{action_text}
{extra}
"""


def make_scene(**kwargs):
    return parse_scene(scene_text(**kwargs), "<test>")


@pytest.fixture
def scene_factory():
    return make_scene
