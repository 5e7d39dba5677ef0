"""Load and validate a scene file (TOML) into a frozen Scene of SI floats.

All problems are collected in one pass. Each names the file, the key path
(list positions 1-based, as a person counts), what was given, what was
expected and, where it can be found, the line.
"""

from __future__ import annotations

import math
import unicodedata
from dataclasses import replace
from pathlib import Path

from physics import G
from physics import air as air_model
from physics.consist import DEFAULT_JERK, distance_travelled
from physics.roof_air import LEAD_FRONTS, RoofFlow
from physics.rigging_table import DEFAULT_DAMPING, DEFAULT_SAG_FRACTION, LIMIT_DEFAULTS, MATERIALS
from physics import partners
from physics.scene import (CAR_KINDS, INTERACTION_KINDS, ROAD_KINDS, Action, Air, Car, Gust, Interaction, Keyframe,
                           Line, Performer, Safety, Scene, Structure, Tether, Turbulence)
from physics.scene_file import key_lines, parse_toml, read_text
from physics.scene_overrides import apply_overrides, origin_of
from physics.scene_problems import Problem, SceneError
from physics.speed_log import DEFAULT_MAX_GAP, DEFAULT_SMOOTHING, LogError, read_log, unit_factor
from physics.surfaces import SURFACES
from physics.track import DEFAULT_FLEXIBILITY, RIDE_BAND, RIDE_LEVELS, STANDARD_GAUGE, Ride, TrackSection
from physics.records import MAX_TETHERS
from physics.units import QuantityError, parse_quantity, parse_uncertain

# Roof across the car when the scene does not say (from memory): a rail car body is about 2.8 m
# wide at the roof's edges; a coach or box-car roof rises about 0.15 m from its edges to its
# centreline; a deck (a flat car, a trailer bed) is flat.
DEFAULT_WIDTH = 2.8
DEFAULT_CROWN = 0.15

__all__ = ["Problem", "SceneError", "load_scene", "parse_scene"]

ROOF_STATIC = "roof_static@"  # key of a car's roof friction spread in Scene.uncertain, then the car's index

ACTION_KINDS = ("stand", "brace", "crouch", "duck", "kneel", "prone", "crawl", "walk", "run", "jump")
INTERACTION_KEYS = ("partner", "force", "shape", "direction", "up", "reach", "breaking_force", "stiffness", "damping",
                    "impulse", "contact", "posture")
INTERACTION_POSTURES = partners.INTERACTION_POSTURES
MAX_PERFORMERS = 2
GAIT_KINDS = ("walk", "run", "crawl")
AIR_POSTURES = ("tuck", "spread", "upright")
STRUCTURE_KINDS = ("bridge", "footbridge", "gantry", "tunnel", "overbridge", "sign gantry")
ROAD_STRUCTURES = ("overbridge", "sign gantry")   # over a road; the others over a track

# Peak horizontal ground reaction / body weight in level gait at a reference
# speed, used as the friction demand of gait: (peak at the reference, reference
# speed m/s). Walking: required coefficient of friction about 0.17-0.22 at
# ordinary walking speed, about 1.4 m/s (Redfern et al. 2001, Ergonomics
# 44:1138; from memory). Running: about 0.3-0.4 at an easy run (from memory).
# Crawling on knees and forearms: taken as walking at an ordinary crawl of
# about 0.6 m/s (from memory). The horizontal forces of gait grow with its
# speed (the utilised friction rises with walking speed; from memory), so the
# default is scaled with the action's speed, linearly, up to 1.5 times the
# reference value: a 1 cm/s crawl asks almost nothing of the roof. A value
# given in the scene is used as given.
GAIT_FRICTION_AT = {"walk": (0.2, 1.4), "run": (0.4, 3.5), "crawl": (0.2, 0.6)}
GAIT_FRICTION_MAX_SCALE = 1.5


def gait_friction_default(kind: str, speed: float) -> float:
    """Peak gait push / body weight for a gait at `speed` (m/s) when the scene does not say."""
    peak, reference = GAIT_FRICTION_AT[kind]
    return peak * min(max(speed, 0.0) / reference, GAIT_FRICTION_MAX_SCALE)


MAX_TEXT = 120  # characters in a title, name or label

# The range a scene may give these values (SI), which is also the range a
# sweep may vary them over and a Monte Carlo draw may reach.
LIMITS = {
    "speed": (0.0, 150.0),             # consist speed, m/s
    "wind_speed": (0.0, 80.0),         # m/s
    "gust": (0.0, 80.0),               # a gust's peak, m/s
    "mass": (30.0, 200.0),             # kg
    "drag_area": (0.2, 2.0),           # standing Cd*A, m^2
    "roof_static": (0.0, 2.0),         # friction coefficient
    "standing_long_jump": (0.2, 4.0),  # m
    "reaction_time": (0.0, 0.25),      # s
}


def _short(value) -> str:
    """A value for a message: its repr, cut short."""
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _limits(name: str) -> dict:
    """minimum=, maximum= of LIMITS[name], for the reader's checks."""
    low, high = LIMITS[name]
    return {"minimum": low, "maximum": high}


def _article(word: str) -> str:
    return "an" if word[0] in "aeiou" else "a"


class _Reader:
    """Walks the raw TOML dict, converting values and collecting problems."""

    def __init__(self, lines: dict[str, int], origins: dict[str, str]):
        self.lines = lines
        self.origins = origins
        self.problems: list[Problem] = []
        self.uncertain: dict[str, float] = {}

    def _split_uncertain(self, data: dict, key: str, dimension: str, uncertain_as: str | None, full: str):
        """'0.7 m^2 +/- 15%' -> (the value's text for the normal checks, the spread); (None, 0) if unreadable."""
        value = data.get(key)
        if uncertain_as is None or not isinstance(value, str) or not ("+/-" in value or "±" in value):
            return data, 0.0
        try:
            parsed = parse_uncertain(value, dimension)
        except QuantityError as exc:
            self.fail(full, str(exc))
            return None, 0.0
        base = value.replace("±", "+/-").split("+/-")[0].strip()
        return {key: base if dimension != "dimensionless" else float(base)}, parsed.spread

    def _spread(self, full: str, value: float, spread: float, uncertain_as: str | None, minimum, maximum,
                positive: bool, text) -> None:
        """Keep a spread whose every draw obeys the value's own limits; refuse one that does not."""
        if not spread:
            return
        low, high = value - spread, value + spread
        if (positive and low <= 0) or (minimum is not None and low < minimum):
            floor = "zero" if positive or not minimum else f"{minimum:g} (SI)"
            self.fail(full, f"{text!r} reaches down to {low:g} (SI), below the smallest allowed {floor}; "
                            "give a smaller spread")
        elif maximum is not None and high > maximum:
            self.fail(full, f"{text!r} reaches up to {high:g} (SI), above the largest allowed {maximum:g}; "
                            "give a smaller spread")
        else:
            self.uncertain[uncertain_as] = spread

    def line_of(self, path: str) -> int | None:
        probe = path
        while probe:
            if probe in self.lines:
                return self.lines[probe]
            probe = probe.rsplit(".", 1)[0] if "." in probe else ""
        return None

    def fail(self, path: str, message: str, also: str | None = None) -> None:
        """A problem at `path`; `also`: another key the problem rests on, whose --set is blamed too."""
        origin = origin_of(path, self.origins) or (origin_of(also, self.origins) if also else None)
        self.problems.append(Problem(path, message, None if origin else self.line_of(path), origin))

    def table(self, data: dict, key: str, path: str, required: bool = True) -> dict:
        value = data.get(key)
        full = f"{path}.{key}" if path else key
        if value is None:
            if required:
                self.fail(full, "missing; expected a table")
            return {}
        if not isinstance(value, dict):
            self.fail(full, f"expected a table, got {value!r}")
            return {}
        return value

    def quantity(self, data: dict, key: str, path: str, dimension: str, default=None, required=True,
                 minimum: float | None = None, maximum: float | None = None, positive: bool = False,
                 uncertain_as: str | None = None):
        full = f"{path}.{key}" if path else key
        text = data.get(key)
        data, spread = self._split_uncertain(data, key, dimension, uncertain_as, full)
        if data is None:
            return default
        if key not in data:
            if required and default is None:
                self.fail(full, f"missing; expected {_article(dimension)} {dimension} with units")
            return default
        try:
            value = parse_quantity(data[key], dimension)
        except QuantityError as exc:
            self.fail(full, str(exc))
            return default
        if positive and value <= 0:
            self.fail(full, f"must be greater than zero, got {_short(data[key])}")
            return default
        if minimum is not None and value < minimum:
            self.fail(full, f"must be at least {minimum:g} (SI), got {_short(data[key])}")
            return default
        if maximum is not None and value > maximum:
            self.fail(full, f"must be at most {maximum:g} (SI), got {_short(data[key])}")
            return default
        self._spread(full, value, spread, uncertain_as, minimum, maximum, positive, text)
        return value

    def number(self, data, key, path, default=None, required=True, minimum=None, maximum=None, integer=False,
               uncertain_as: str | None = None):
        full = f"{path}.{key}" if path else key
        text = data.get(key)
        data, spread = self._split_uncertain(data, key, "dimensionless", uncertain_as, full)
        if data is None:
            return default
        if key not in data:
            if required and default is None:
                self.fail(full, "missing; expected a number")
            return default
        value = data[key]
        ok = isinstance(value, int) if integer else isinstance(value, (int, float))
        if isinstance(value, bool) or not ok or (not integer and not math.isfinite(value)):
            self.fail(full, f"expected {'a whole number' if integer else 'a plain number'}, got {_short(value)}")
            return default
        if (minimum is not None and value < minimum) or (maximum is not None and value > maximum):
            self.fail(full, f"expected a value from {minimum} to {maximum}, got {_short(value)}")
            return default
        self._spread(full, value, spread, uncertain_as, minimum, maximum, False, text)
        return value

    def choice(self, data, key, path, options, default=None):
        full = f"{path}.{key}" if path else key
        if key not in data:
            if default is None:
                self.fail(full, f"missing; expected one of {', '.join(options)}")
            return default
        value = data[key]
        if not isinstance(value, str) or value not in options:
            self.fail(full, f"expected one of {', '.join(repr(o) for o in options)}, got {_short(value)}")
            return default
        return value

    def text(self, data, key, path, default=None):
        """A name, title or label: plain text on one line, without control characters."""
        full = f"{path}.{key}" if path else key
        value = data.get(key, default)
        if value is None:
            self.fail(full, "missing; expected a quoted text")
            return ""
        if not isinstance(value, str):
            self.fail(full, f"expected a quoted text, got {_short(value)}")
            return ""
        if len(value) > MAX_TEXT:
            self.fail(full, f"longer than {MAX_TEXT} characters")
            return ""
        for position, char in enumerate(value, start=1):
            if unicodedata.category(char) in ("Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"):
                self.fail(full, f"contains a control or unprintable character (U+{ord(char):04X}) at position "
                                f"{position}; expected plain text on one line")
                return ""
        return value

    def unknown(self, data: dict, path: str, allowed: tuple[str, ...]) -> None:
        for key in data:
            if key not in allowed:
                full = f"{path}.{key}" if path else key
                self.fail(full, f"unknown key; expected one of {', '.join(allowed)}")

    def items(self, data: dict, key: str, path: str, required: bool = True) -> list[tuple[str, dict]]:
        full = f"{path}.{key}" if path else key
        value = data.get(key)
        if value is None:
            if required:
                self.fail(full, "missing; expected a list of tables")
            return []
        if not isinstance(value, list) or not value:
            self.fail(full, "expected a non-empty list of tables")
            return []
        out = []
        for i, item in enumerate(value, start=1):
            if not isinstance(item, dict):
                self.fail(f"{full}[{i}]", f"expected a table, got {item!r}")
            else:
                out.append((f"{full}[{i}]", item))
        return out


def load_scene(path: str | Path, overrides: list[str] | None = None) -> Scene:
    """Read, override (--set PATH=VALUE) and validate a scene file."""
    path = Path(path)
    return parse_scene(read_text(path), str(path), overrides)


def parse_scene(text: str, source: str, overrides: list[str] | None = None) -> Scene:
    raw = parse_toml(text, source)
    raw, origins, problems = apply_overrides(raw, overrides or [])
    reader = _Reader(key_lines(text), origins)
    reader.problems.extend(problems)
    scene = _build(raw, reader, source)
    if reader.problems:
        raise SceneError(source, reader.problems)
    return scene


def _build(raw: dict, r: _Reader, source: str) -> Scene | None:
    r.unknown(raw, "", ("title", "units", "frame_rate", "consist", "motion", "air", "performer", "start",
                        "actions", "safety", "simulation", "structures", "lines", "track", "ride", "rigging",
                        "performers"))
    title = r.text(raw, "title", "")
    units = r.choice(raw, "units", "", ("metric", "imperial"), default="metric")
    frame_rate = r.number(raw, "frame_rate", "", default=24, integer=True, minimum=1, maximum=120)
    cars = _cars(r.table(raw, "consist", ""), r)
    keyframes, jerk = _motion(r.table(raw, "motion", ""), r)
    air = _air(r.table(raw, "air", "", required=False), r)
    parts = _performers(raw, r, cars) if "performers" in raw else []
    if parts:
        unused, performer, (start_car, start_x, start_y), actions = parts[0]
    elif "performers" in raw:
        performer, start_car, start_x, start_y, actions = None, 0, 0.0, 0.0, []
    else:
        performer = _performer(r.table(raw, "performer", ""), r)
        start_car, start_x, start_y = _start(r.table(raw, "start", ""), r, cars)
        actions = _actions(raw, r, cars, performer)
    safety = _safety(r.table(raw, "safety", "", required=False), r)
    sim = r.table(raw, "simulation", "", required=False)
    r.unknown(sim, "simulation", ("rate",))
    rate = r.quantity(sim, "rate", "simulation", "frequency", default=240.0, minimum=60.0, maximum=2000.0)
    speed_log = None
    motion = raw.get("motion") if isinstance(raw.get("motion"), dict) else {}
    if "log" in motion and actions and rate:
        speed_log = _speed_log(r.table(motion, "log", "motion"), r, source, sum(a.duration for a in actions),
                               1.0 / rate)
        if speed_log is not None:
            keyframes = [Keyframe(0.0, speed_log.top_speed)]   # the top speed, for what scales the profile
    structures = _structures(raw, r, keyframes, jerk, speed_log)
    lines = _lines(raw, r)
    sections = _track(raw, r)
    ride = _ride(r.table(raw, "ride", "", required=False), r)
    rigging = _rigging(raw, r, cars)
    if rigging and len(parts) > 1:
        r.fail("rigging", "rigging is modelled for one performer; a scene with two performers cannot have "
                          "[[rigging]] yet")
    if rigging and performer and rate:
        _rigging_fits(r, rigging, performer.mass, start_x, start_y, rate)
    consist = raw.get("consist") if isinstance(raw.get("consist"), dict) else {}
    flexibility = r.number(consist, "flexibility", "consist", default=DEFAULT_FLEXIBILITY, minimum=0.0, maximum=1.0)
    if actions and rate:
        _beat_length(r, sum(a.duration for a in actions), rate, len(actions))
    if r.problems:
        return None
    scene = Scene(title, source, units, frame_rate, tuple(cars), tuple(keyframes), air, performer, start_x,
                  start_car, tuple(actions), safety, 1.0 / rate, tuple(structures), tuple(lines), jerk, start_y,
                  tuple(sections), ride, flexibility, speed_log, tuple(rigging), raw=raw,
                  uncertain=dict(r.uncertain))
    if not parts:
        return scene
    cast = tuple(replace(scene, performer=body, start_car=start[0], start_x=start[1], start_y=start[2],
                         actions=tuple(acts), name=name) for name, body, start, acts in parts)
    interactions = _interactions(raw, r, cast)
    if r.problems:
        return None
    return replace(cast[0], cast=cast, interactions=interactions)


def _performers(raw: dict, r: _Reader, cars: list[Car]) -> list[tuple]:
    """[[performers]]: each one's (name, Performer, start, actions); the shorter beat is held to the
    end of the longer in the posture it ends in. [] when a part cannot be read."""
    for key in ("performer", "start", "actions"):
        if key in raw:
            r.fail(key, "with [[performers]] each performer gives its body, start and actions inside its own "
                        "table (performers[N].start, [[performers.actions]]); leave out the top-level one")
    items = r.items(raw, "performers", "")
    if len(items) > MAX_PERFORMERS:
        r.fail("performers", f"{len(items)} performers; roofbeat models at most {MAX_PERFORMERS}")
        return []
    parts, names = [], set()
    for path, item in items:
        name = r.text(item, "name", path)
        if name in names:
            r.fail(f"{path}.name", f"{name!r} names another performer too; each needs its own name")
        names.add(name)
        known = len(r.uncertain)
        body = _performer({k: v for k, v in item.items() if k not in ("name", "start", "actions")}, r, path)
        if len(r.uncertain) > known:
            r.fail(path, "a spread (+/-) on a performer's value is read for one performer only; give plain "
                         "values with [[performers]]")
        start = _start(r.table(item, "start", path), r, cars, f"{path}.start")
        acts = _actions(item, r, cars, body, path, pair=len(items) > 1)
        if body is None or not acts:
            return []
        parts.append((name, body, start, acts))
    end = max(acts[-1].end for unused, unused, unused, acts in parts)
    for unused, body, unused, acts in parts:
        if acts[-1].end < end - 1e-9:
            last = acts[-1]
            kind = {"walk": "stand", "run": "stand", "jump": "stand", "crawl": "prone"}.get(last.kind, last.kind)
            acts.append(Action(kind, last.end, end - last.end, 0.0, label="hold to the end of the beat"))
    return parts


def _interactions(raw: dict, r: _Reader, cast: tuple) -> tuple:
    """Each interaction action of the cast as an Interaction with its partner found by name and its
    defaults (physics.partners) filled in."""
    names = [c.name for c in cast]
    out = []
    items = raw.get("performers", [])
    for actor, scene in enumerate(cast):
        listed = items[actor].get("actions", []) if actor < len(items) else []
        for index, action in enumerate(scene.actions):
            if not action.interaction:
                continue
            path = f"performers[{actor + 1}].actions[{index + 1}]"
            item = listed[index] if index < len(listed) else {}
            if action.partner not in names or action.partner == scene.name:
                others = [n for n in names if n != scene.name]
                r.fail(f"{path}.partner", f"{action.partner!r} is not the other performer; expected "
                                          f"{' or '.join(repr(n) for n in others)}")
                continue
            partner = names.index(action.partner)
            out.append(_interaction(item, path, r, action, index, actor, partner, scene.performer))
    return tuple(i for i in out if i is not None)


def _interaction(item: dict, path: str, r: _Reader, action: Action, index: int, actor: int, partner: int,
                 body) -> Interaction:
    kind = action.interaction
    pushes = kind in ("shove", "pull", "throw")
    for key in ("force", "shape", "direction", "up"):
        if key in item and not pushes:
            r.fail(f"{path}.{key}", f"a {kind} takes no {key} (only a shove, pull or throw)")
    for key in ("breaking_force", "stiffness", "damping"):
        if key in item and kind not in ("grab", "catch"):
            r.fail(f"{path}.{key}", f"a {kind} takes no {key} (only a grab or a catch)")
    for key in ("impulse", "contact"):
        if key in item and kind != "punch":
            r.fail(f"{path}.{key}", f"a {kind} takes no {key} (only a punch)")
    force = r.quantity(item, "force", path, "force", default=partners.DEFAULT_FORCE.get(kind, 0.0), minimum=0.0,
                       maximum=3000.0)
    shape = r.choice(item, "shape", path, ("pulse", "steady"), default="pulse")
    direction = r.choice(item, "direction", path, partners.DIRECTIONS, default="toward")
    up = r.quantity(item, "up", path, "angle", default=partners.THROW_ANGLE if kind == "throw" else 0.0,
                    minimum=-math.radians(60), maximum=math.radians(80))
    reach = r.quantity(item, "reach", path, "length", default=partners.default_reach(body.stature), minimum=0.2,
                       maximum=2.0)
    catch = kind == "catch"
    breaking = r.quantity(item, "breaking_force", path, "force",
                          default=partners.CATCH_BREAKING if catch else partners.HOLD_BREAKING, minimum=50.0,
                          maximum=5000.0)
    stiffness = r.quantity(item, "stiffness", path, "stiffness",
                           default=partners.CATCH_STIFFNESS if catch else partners.HOLD_STIFFNESS, minimum=100.0,
                           maximum=50000.0)
    damping = r.number(item, "damping", path, default=partners.CATCH_DAMPING if catch else partners.HOLD_DAMPING,
                       minimum=0.0, maximum=3.0)
    contact = kind != "punch" or bool(item.get("contact", False))
    if "contact" in item and not isinstance(item["contact"], bool):
        r.fail(f"{path}.contact", f"expected true or false, got {item['contact']!r}")
    impulse = 0.0
    start, end = action.start, action.end
    if kind == "punch":
        if contact:
            impulse = r.quantity(item, "impulse", path, "impulse", minimum=0.0, maximum=partners.PUNCH_IMPULSE_MAX)
            if impulse is None:
                return None
            force = partners.punch_force(impulse)
            # The fist lands half-way through the action and stays CONTACT_TIME.
            start = action.start + 0.5 * action.duration
            end = start + partners.CONTACT_TIME
        elif "impulse" in item:
            r.fail(f"{path}.impulse", "a pulled punch (contact = false, the default) reaches no one; give "
                                      "contact = true for a contact punch")
    if None in (force, shape, direction, up, reach, breaking, stiffness, damping):
        return None
    return Interaction(kind, actor, partner, index, start, end, force, shape == "steady", direction, up, reach,
                       breaking, stiffness, damping, impulse, contact)


MAX_ACTIONS = 200
MAX_STEPS = 150_000  # engine steps in a beat: 10 minutes at 240 Hz, under 500 MB however it is drawn


def _beat_length(r: _Reader, duration: float, rate: float, count: int) -> None:
    """A beat the engine can run in bounded time and memory: two steps at least, MAX_STEPS at most."""
    steps = duration * rate
    if count > MAX_ACTIONS:
        r.fail("actions", f"{count} actions; a beat has at most {MAX_ACTIONS}")
    if steps < 2:
        r.fail("actions", f"the beat lasts {duration:g} s, shorter than two engine steps ({2 / rate:.4g} s at "
                          f"{rate:g} Hz)")
    elif steps > MAX_STEPS:
        r.fail("actions", f"the beat lasts {duration:g} s: {steps:,.0f} engine steps at {rate:g} Hz, more than the "
                          f"{MAX_STEPS:,} roofbeat runs (10 minutes at 240 Hz); shorten the beat or lower "
                          "simulation.rate")


def _cars(consist: dict, r: _Reader) -> list[Car]:
    """The consist, front to rear. A car with a problem keeps its place (with NaN numbers) so that
    car numbers elsewhere in the scene are judged against the consist as written."""
    r.unknown(consist, "consist", ("roof", "cars", "width", "crown", "flexibility"))
    cars, front = [], 0.0
    items = r.items(consist, "cars", "consist")
    width_all = r.quantity(consist, "width", "consist", "length", None, False, minimum=1.0, maximum=4.0)
    crown_all = r.quantity(consist, "crown", "consist", "length", None, False, minimum=0.0, maximum=0.6)
    for n, (path, item) in enumerate(items):
        r.unknown(item, path, ("name", "length", "roof_height", "gap", "roof", "roof_static", "roof_kinetic",
                               "body_static", "body_kinetic", "width", "crown", "kind"))
        kind = r.choice(item, "kind", path, CAR_KINDS, default="rail car")
        length = r.quantity(item, "length", path, "length", positive=True, maximum=100.0)
        height = r.quantity(item, "roof_height", path, "length", positive=True, maximum=8.0)
        last = n == len(items) - 1
        gap = r.quantity(item, "gap", path, "length", default=0.0 if last else None, minimum=0.0, maximum=50.0)
        surface, friction = _roof(consist, item, path, n, r)
        name = r.text(item, "name", path, default=f"car {n + 1}")
        length, height, gap = (math.nan if v is None else v for v in (length, height, gap))
        width = r.quantity(item, "width", path, "length", None, False, minimum=1.0, maximum=4.0)
        width = width if width is not None else (width_all if width_all is not None else DEFAULT_WIDTH)
        crown = r.quantity(item, "crown", path, "length", None, False, minimum=0.0, maximum=0.6)
        flat = SURFACES[surface].flat if surface in SURFACES else False
        crown = crown if crown is not None else (crown_all if crown_all is not None else
                                                 (0.0 if flat else DEFAULT_CROWN))
        if crown > 0.25 * width:
            r.fail(f"{path}.crown", f"a crown of {crown:g} m on a {width:g} m wide roof is steeper than roofbeat "
                                    "models (at most a quarter of the width)")
        cars.append(Car(name, length, height, gap, surface, *friction, front, front - length, width, crown, kind))
        front -= length + gap
    _one_way_of_travel(items, cars, r)
    return cars


def _one_way_of_travel(items: list[tuple[str, dict]], cars: list[Car], r: _Reader) -> None:
    """A consist is all rail cars or all road vehicles: the first car sets which, a car of the other
    sort is blamed at its kind key."""
    if not cars or any(item.get("kind", "rail car") not in CAR_KINDS for _, item in items):
        return   # a kind roofbeat does not know is blamed on its own
    road = cars[0].road
    first_item = items[0][1]
    first = (f"car 1, {cars[0].name}, is {cars[0].kind!r}" if "kind" in first_item else
             f"car 1, {cars[0].name}, has no kind, so {cars[0].kind!r}")
    for (path, item), car in zip(items, cars):
        if car.road != road:
            given = f"{car.kind!r}" if "kind" in item else f"no kind, so {car.kind!r},"
            fix = (f"give this car one of {', '.join(repr(k) for k in ROAD_KINDS)}" if road else
                   "give every car a road kind, or this car none")
            r.fail(f"{path}.kind", f"{given} in a consist of {'road vehicles' if road else 'rail cars'} ({first}); "
                                   f"a consist is all rail cars or all road vehicles, not a mix: {fix}")


def _roof(consist: dict, item: dict, path: str, n: int, r: _Reader) -> tuple[str, tuple]:
    """(surface name, (sole static, sole kinetic, body static, body kinetic)) of a car's roof.

    A named surface gives all four; explicit numbers override it. A roof the car
    inherits from consist.roof is blamed there, once.
    """
    own = "roof" in item
    surface_name = item["roof"] if own else consist.get("roof")
    surface = SURFACES.get(surface_name) if isinstance(surface_name, str) else None
    explicit = {k: r.number(item, k, path, None, False, **_limits("roof_static"),
                            uncertain_as=f"{ROOF_STATIC}{n}" if k == "roof_static" else None)
                for k in ("roof_static", "roof_kinetic", "body_static", "body_kinetic")}
    nan = (math.nan,) * 4
    if surface is None and (surface_name is not None or explicit["roof_static"] is None):
        where = f"{path}.roof" if own or "roof" not in consist else "consist.roof"
        if not any(p.path == where for p in r.problems):
            r.fail(where, f"unknown roof surface {_short(surface_name)}; expected one of "
                          f"{', '.join(repr(s) for s in SURFACES)} or roof_static and roof_kinetic")
        return "explicit", nan
    sole_s = explicit["roof_static"] if explicit["roof_static"] is not None else surface.sole_static
    sole_k = explicit["roof_kinetic"] if explicit["roof_kinetic"] is not None else (
        surface.sole_kinetic if surface else sole_s)
    body_s = explicit["body_static"] if explicit["body_static"] is not None else (
        surface.body_static if surface else sole_s)
    body_k = explicit["body_kinetic"] if explicit["body_kinetic"] is not None else (
        surface.body_kinetic if surface else sole_k)
    if sole_k > sole_s or body_k > body_s:
        # Blamed on the car; a --set of one of its friction numbers is named too.
        also = next((f"{path}.{k}" for k in ("roof_static", "roof_kinetic", "body_static", "body_kinetic")
                     if origin_of(f"{path}.{k}", r.origins)), None)
        r.fail(path, "kinetic friction must not exceed static friction", also=also)
    return (surface.name if surface else "explicit"), (sole_s, sole_k, body_s, body_k)


def _motion(motion: dict, r: _Reader) -> tuple[list[Keyframe], float]:
    """The keyframes and the jerk (m/s^3) the consist's acceleration changes with (none for a log,
    which _speed_log reads once the beat's length is known)."""
    r.unknown(motion, "motion", ("speed", "keyframes", "jerk", "log"))
    jerk = r.quantity(motion, "jerk", "motion", "jerk", default=DEFAULT_JERK, positive=True, maximum=100.0)
    jerk = DEFAULT_JERK if jerk is None else jerk
    given = [k for k in ("speed", "keyframes", "log") if k in motion]
    if len(given) != 1:
        r.fail("motion", "give one of speed (constant), keyframes (a list of time and speed) or log (a measured "
                         "speed log)" + (f", not {' and '.join(given)}" if given else ""))
        return [], jerk
    if "log" in motion:
        return [], jerk
    if "speed" in motion:
        speed = r.quantity(motion, "speed", "motion", "speed", **_limits("speed"), uncertain_as="speed")
        return ([Keyframe(0.0, speed)] if speed is not None else []), jerk
    frames = []
    for path, item in r.items(motion, "keyframes", "motion"):
        r.unknown(item, path, ("time", "speed"))
        t = r.quantity(item, "time", path, "time", minimum=0.0)
        v = r.quantity(item, "speed", path, "speed", **_limits("speed"))
        if t is not None and v is not None:
            if frames and t <= frames[-1].time:
                r.fail(f"{path}.time", "keyframe times must increase")
            frames.append(Keyframe(t, v))
    return frames, jerk


def _air(data: dict, r: _Reader) -> Air:
    r.unknown(data, "air", ("altitude", "temperature", "density", "wind_speed", "wind_from", "gusts",
                            "turbulence", "roof_profile", "roof_flow"))
    altitude = r.quantity(data, "altitude", "air", "length", default=0.0, minimum=-400.0, maximum=5000.0)
    temperature = r.quantity(data, "temperature", "air", "temperature", required=False,
                             minimum=223.15, maximum=333.15)
    rho = r.quantity(data, "density", "air", "density", required=False, minimum=0.5, maximum=1.6)
    if rho is None:
        rho = air_model.density(altitude, temperature)
    wind_speed = r.quantity(data, "wind_speed", "air", "speed", 0.0, True, **_limits("wind_speed"),
                            uncertain_as="wind_speed")
    wind_from = r.quantity(data, "wind_from", "air", "angle", default=0.0)
    gusts = []
    for path, item in r.items(data, "gusts", "air", required=False):
        r.unknown(item, path, ("start", "duration", "peak", "from"))
        start = r.quantity(item, "start", path, "time", minimum=0.0)
        duration = r.quantity(item, "duration", path, "time", positive=True)
        peak = r.quantity(item, "peak", path, "speed", **_limits("gust"))
        direction = r.quantity(item, "from", path, "angle", default=wind_from)
        if None not in (start, duration, peak):
            gusts.append(Gust(start, duration, peak, direction))
    turbulence = None
    if "turbulence" in data:
        t = r.table(data, "turbulence", "air")
        r.unknown(t, "air.turbulence", ("intensity", "length_scale", "seed"))
        sigma = r.quantity(t, "intensity", "air.turbulence", "speed", minimum=0.0, maximum=20.0)
        scale = r.quantity(t, "length_scale", "air.turbulence", "length", positive=True)
        seed = r.number(t, "seed", "air.turbulence", default=0, integer=True, minimum=0, maximum=2**62)
        if None not in (sigma, scale):
            turbulence = Turbulence(sigma, scale, seed)
    return Air(rho, altitude, temperature, wind_speed, wind_from, tuple(gusts), turbulence, _roof_flow(data, r))


def _roof_flow(data: dict, r: _Reader):
    """`air.roof_profile` ("off" by default: uniform wind) and the coefficients under `[air.roof_flow]`."""
    profile = r.choice(data, "roof_profile", "air", ("off", "on"), default="off")
    p = "air.roof_flow"
    table = r.table(data, "roof_flow", "air", required=False)
    if profile != "on":
        return None   # its coefficients, if given, wait unused: `--set air.roof_profile=off` gives the bound
    r.unknown(table, p, ("lead_front", "train_ahead", "cars_ahead", "gap_thickness", "power", "speed_up",
                         "speed_up_length", "separation_length", "separation_height", "step_zone_length",
                         "step_zone_height", "low_speed_share"))
    d = RoofFlow()
    values = {
        "lead_front": r.choice(table, "lead_front", p, LEAD_FRONTS, default=d.lead_front),
        "train_ahead": r.quantity(table, "train_ahead", p, "length", default=d.train_ahead, minimum=0.0,
                                  maximum=5000.0),
        "cars_ahead": r.number(table, "cars_ahead", p, default=d.cars_ahead, integer=True, minimum=0, maximum=400),
        "gap_thickness": r.quantity(table, "gap_thickness", p, "length", default=d.gap_thickness, minimum=0.0,
                                    maximum=5.0),
        "power": r.number(table, "power", p, default=d.power, minimum=2.0, maximum=15.0),
        "speed_up": r.number(table, "speed_up", p, default=d.speed_up, minimum=1.0, maximum=2.0),
        "speed_up_length": r.quantity(table, "speed_up_length", p, "length", default=d.speed_up_length,
                                      minimum=0.0, maximum=50.0),
        "separation_length": r.quantity(table, "separation_length", p, "length", default=d.separation_length,
                                        minimum=0.0, maximum=50.0),
        "separation_height": r.quantity(table, "separation_height", p, "length", default=d.separation_height,
                                        minimum=0.0, maximum=5.0),
        "step_zone_length": r.number(table, "step_zone_length", p, default=d.step_zone_length, minimum=0.0,
                                     maximum=50.0),
        "step_zone_height": r.number(table, "step_zone_height", p, default=d.step_zone_height, minimum=0.0,
                                     maximum=5.0),
        "low_speed_share": r.number(table, "low_speed_share", p, default=d.low_speed_share, minimum=0.0,
                                    maximum=1.0),
    }
    if any(value is None for value in values.values()):
        return None
    return RoofFlow(**values)


def _performer(data: dict, r: _Reader, p: str = "performer") -> Performer:
    r.unknown(data, p, ("stature", "mass", "drag_area", "body", "facing", "reaction_time", "max_lean",
                        "recovery_step", "standing_long_jump"))
    stature = r.quantity(data, "stature", p, "length", minimum=1.2, maximum=2.3)
    mass = r.quantity(data, "mass", p, "mass", **_limits("mass"), uncertain_as="mass")
    drag_area = r.quantity(data, "drag_area", p, "area", None, False, **_limits("drag_area"),
                           uncertain_as="drag_area")
    model = r.choice(data, "body", p, ("segmented", "lumped"), default="segmented")
    if model == "lumped" and drag_area is None:
        r.fail(f"{p}.drag_area", "the lumped body needs its standing drag area, e.g. \"0.7 m^2\"")
    facing = r.choice(data, "facing", p, ("front", "rear"), default="front")
    reaction = r.quantity(data, "reaction_time", p, "time", 0.12, True, **_limits("reaction_time"),
                          uncertain_as="reaction_time")
    max_lean = r.quantity(data, "max_lean", p, "angle", default=math.radians(25), minimum=0.0,
                          maximum=math.radians(60))
    step = r.quantity(data, "recovery_step", p, "length", default=0.0, minimum=0.0, maximum=1.5)
    jump = r.quantity(data, "standing_long_jump", p, "length", None, False, **_limits("standing_long_jump"))
    if None in (stature, mass):
        return None
    return Performer(stature, mass, drag_area, model, 1 if facing == "front" else -1, reaction, max_lean,
                     step, jump)


def _start(data: dict, r: _Reader, cars: list[Car], path: str = "start") -> tuple[int, float, float]:
    r.unknown(data, path, ("car", "position", "from", "offset"))
    offset = r.quantity(data, "offset", path, "length", default=0.0)
    car = r.number(data, "car", path, integer=True, minimum=1, maximum=max(1, len(cars)))
    pos = r.quantity(data, "position", path, "length", minimum=0.0)
    end = r.choice(data, "from", path, ("front", "rear"), default="front")
    if car is None or pos is None or not cars:
        return 0, 0.0, 0.0
    c = cars[car - 1]
    if pos > c.length:
        r.fail(f"{path}.position", f"{pos:g} m is past the end of {c.name} ({c.length:g} m long)")
    offset = 0.0 if offset is None else offset
    if abs(offset) > 0.5 * c.width:
        r.fail(f"{path}.offset", f"{offset:g} m is past the side edge of {c.name}'s roof ({c.width:g} m wide: "
                               f"offsets within +/-{0.5 * c.width:g} m)")
    return car - 1, (c.front_x - pos) if end == "front" else (c.rear_x + pos), offset


def _actions(raw: dict, r: _Reader, cars: list[Car], performer: Performer | None, where: str = "",
             pair: bool = False) -> list[Action]:
    """The actions of one performer (`where`: "" for [[actions]], else the performer's key path); with two
    performers (`pair`) an action may be an interaction with the other (INTERACTION_KINDS), whose own
    keys _interactions reads from the same items."""
    actions, t = [], 0.0
    kinds = ACTION_KINDS + (INTERACTION_KINDS if pair else ())
    for path, item in r.items(raw, "actions", where):
        interacting = item.get("do") in INTERACTION_KINDS
        r.unknown(item, path, ("do", "duration", "transition", "speed", "toward", "gait_friction", "label",
                               "takeoff_car", "takeoff_position", "takeoff_from", "takeoff_speed",
                               "takeoff_angle", "air_posture", "landing_car", "run_up_speed", "angle")
                  + (INTERACTION_KEYS if interacting else ()))
        if interacting and not pair:
            r.fail(f"{path}.do", f"{item['do']!r} needs a partner: give two performers under [[performers]], "
                                 "each with a name")
            continue
        kind = r.choice(item, "do", path, kinds)
        duration = r.quantity(item, "duration", path, "time", positive=True, maximum=600.0)
        transition = r.quantity(item, "transition", path, "time", default=0.5, minimum=0.0, maximum=10.0)
        if kind is None or duration is None:
            continue
        if kind in INTERACTION_KINDS:
            posture = r.choice(item, "posture", path, INTERACTION_POSTURES, default="stand")
            partner = r.text(item, "partner", path)
            label = r.text(item, "label", path, default=f"{kind} {partner}")
            actions.append(Action(posture or "stand", t, duration, min(transition or 0.0, duration), label=str(label),
                                  interaction=kind, partner=partner))
            t += duration
            continue
        if transition > duration:
            r.fail(f"{path}.transition", f"{transition:g} s is longer than the action's duration "
                                         f"({duration:g} s)", also=f"{path}.duration")
        toward = 1 if r.choice(item, "toward", path, ("front", "rear"), default="front") == "front" else -1
        speed, gait_friction, angle = 0.0, 0.0, 0.0
        if "angle" in item and kind not in GAIT_KINDS:
            r.fail(f"{path}.angle", f"only a walk, run or crawl takes an angle across the roof, not {kind!r}")
        if kind in GAIT_KINDS:
            angle = r.quantity(item, "angle", path, "angle", default=0.0, minimum=-math.radians(80),
                               maximum=math.radians(80))
            speed = r.quantity(item, "speed", path, "speed", minimum=0.0, maximum=12.0)
            gait_friction = r.number(item, "gait_friction", path,
                                     default=gait_friction_default(kind, speed or 0.0), minimum=0.0, maximum=1.5)
        label = r.text(item, "label", path, default=kind)
        extra = _jump(item, path, r, cars, performer) if kind == "jump" else {}
        if kind == "jump":
            # A run-up is a run: it asks the roof for a runner's grip.
            speed = extra.pop("speed", 0.0)
            gait_friction = r.number(item, "gait_friction", path, default=gait_friction_default("run", speed),
                                     minimum=0.0, maximum=1.5)
        actions.append(Action(kind, t, duration, transition, speed or 0.0, toward, gait_friction or 0.0,
                              label=str(label), angle=angle or 0.0, **extra))
        t += duration
    return actions


def _jump(item: dict, path: str, r: _Reader, cars: list[Car], performer: Performer | None) -> dict:
    """Jump fields: take-off point, take-off velocity (relative to the roof), posture, landing car.

    Without a take-off speed the performer's standing long jump sets it: the
    speed that carries that distance on still, level ground at the take-off
    angle without drag, v = sqrt(g D / sin(2 angle)) (projectile range).
    """
    car = r.number(item, "takeoff_car", path, integer=True, minimum=1, maximum=max(1, len(cars)))
    pos = r.quantity(item, "takeoff_position", path, "length", minimum=0.0)
    end = r.choice(item, "takeoff_from", path, ("front", "rear"), default="rear")
    angle = r.quantity(item, "takeoff_angle", path, "angle", minimum=math.radians(5), maximum=math.radians(90))
    jump = performer.standing_long_jump if performer else None
    if "takeoff_speed" in item:
        speed = r.quantity(item, "takeoff_speed", path, "speed", minimum=0.0, maximum=12.0)
    elif jump is None:
        r.fail(f"{path}.takeoff_speed", "missing; give takeoff_speed or the performer's standing_long_jump")
        speed = None
    else:
        if angle is not None and math.sin(2 * angle) < 0.05:
            r.fail(f"{path}.takeoff_angle", "a long-jump effort sets no speed for a jump this steep; "
                   "give takeoff_speed")
            speed = None
        else:
            speed = math.sqrt(G * jump / math.sin(2 * angle)) if angle is not None else None
    run_up = r.quantity(item, "run_up_speed", path, "speed", default=0.0, minimum=0.0, maximum=10.0)
    posture = r.choice(item, "air_posture", path, AIR_POSTURES, default="tuck")
    landing = r.number(item, "landing_car", path, integer=True, minimum=1, maximum=max(1, len(cars)))
    if None in (car, pos, speed, angle, landing) or len(cars) < max(car, landing):
        return {}
    c = cars[car - 1]
    if pos > c.length:
        r.fail(f"{path}.takeoff_position", f"{pos:g} m is past the end of {c.name} ({c.length:g} m long)")
        return {}
    toward = 1 if item.get("toward", "front") == "front" else -1
    # Cars are listed front to rear: a jump toward the front lands on the same car or one listed before it.
    if (landing - car) * toward > 0:
        where = "behind" if landing > car else "ahead of"
        r.fail(f"{path}.landing_car", f"car {landing} ({cars[landing - 1].name}) lies {where} the take-off car "
                                      f"{car} ({c.name}), but the jump goes toward the "
                                      f"{'front' if toward > 0 else 'rear'}")
        return {}
    x = (c.front_x - pos) if end == "front" else (c.rear_x + pos)
    return {"takeoff_x": x, "takeoff_speed": speed, "takeoff_angle": angle, "air_posture": posture,
            "landing_car": landing - 1, "speed": run_up}


def _safety(data: dict, r: _Reader) -> Safety:
    p = "safety"
    r.unknown(data, p, ("grip_ratio", "balance_margin", "lift_ratio", "landing_margin", "clearance", "edge_margin",
                        "arrest_force", "anchor_load", "free_fall", "deceleration_distance"))
    return Safety(
        r.number(data, "grip_ratio", p, default=1.3, minimum=1.0, maximum=5.0),
        r.quantity(data, "balance_margin", p, "length", default=0.03, minimum=0.0, maximum=0.5),
        r.number(data, "lift_ratio", p, default=0.5, minimum=0.0, maximum=1.0),
        r.quantity(data, "landing_margin", p, "length", default=0.5, minimum=0.0, maximum=5.0),
        r.quantity(data, "clearance", p, "length", default=0.5, minimum=0.0, maximum=5.0),
        r.quantity(data, "edge_margin", p, "length", default=0.5, minimum=0.0, maximum=2.0),
        r.quantity(data, "arrest_force", p, "force", default=LIMIT_DEFAULTS["arrest_force"], positive=True,
                   maximum=50_000.0),
        r.quantity(data, "anchor_load", p, "force", default=LIMIT_DEFAULTS["anchor_load"], positive=True,
                   maximum=200_000.0),
        r.quantity(data, "free_fall", p, "length", default=LIMIT_DEFAULTS["free_fall"], minimum=0.0, maximum=10.0),
        r.quantity(data, "deceleration_distance", p, "length", default=LIMIT_DEFAULTS["deceleration_distance"],
                   minimum=0.0, maximum=10.0),
    )


def _speed_log(data: dict, r: _Reader, source: str, duration: float, step: float):
    """The measured speed log named in [motion.log], read and smoothed; None (with problems) if unusable."""
    p = "motion.log"
    r.unknown(data, p, ("file", "time", "time_unit", "speed", "speed_unit", "max_gap", "smoothing"))
    file = r.text(data, "file", p)
    columns = {k: r.text(data, k, p) for k in ("time", "time_unit", "speed", "speed_unit")}
    max_gap = r.quantity(data, "max_gap", p, "time", default=DEFAULT_MAX_GAP, positive=True, maximum=60.0)
    smoothing = r.quantity(data, "smoothing", p, "time", default=DEFAULT_SMOOTHING, positive=True, maximum=30.0)
    if None in (file, max_gap, smoothing, *columns.values()):
        return None
    for key, dimension in (("time_unit", "time"), ("speed_unit", "speed")):
        try:
            unit_factor(columns[key], dimension)
        except LogError as exc:
            r.fail(f"{p}.{key}", str(exc))
            return None
    path = Path(file) if Path(file).is_absolute() else Path(source).resolve().parent / file
    try:
        return read_log(path, columns["time"], columns["time_unit"], columns["speed"], columns["speed_unit"],
                        max_gap, smoothing, duration, step)
    except LogError as exc:
        r.fail(f"{p}.file", (f"{file} line {exc.line}: " if exc.line else f"{file}: ") + str(exc))
        return None


def _structures(raw: dict, r: _Reader, keyframes: list[Keyframe], jerk: float, speed_log=None) -> list[Structure]:
    out = []
    for path, item in r.items(raw, "structures", "", required=False):
        r.unknown(item, path, ("kind", "name", "at", "reached_at", "span", "soffit"))
        kind = r.choice(item, "kind", path, STRUCTURE_KINDS)
        if ("at" in item) == ("reached_at" in item):
            r.fail(path, "give either at (distance along the track) or reached_at (time the lead car reaches it)")
            continue
        if "at" in item:
            x = r.quantity(item, "at", path, "length", minimum=0.0)
        else:
            t = r.quantity(item, "reached_at", path, "time", minimum=0.0)
            if speed_log is not None and t is not None:
                x = float(speed_log.at([min(t, speed_log.time[-1])])[2][0])
            else:
                x = None if t is None or not keyframes else _distance_at(keyframes, t, jerk)
            if x is not None and x <= 0.0:
                r.fail(f"{path}.reached_at", f"the consist has not moved by {t:g} s, so it reaches nothing then; "
                                             "give at (the distance along the track) instead")
                x = None
        span = r.quantity(item, "span", path, "length", positive=True, maximum=2000.0)
        soffit = r.quantity(item, "soffit", path, "length", positive=True, maximum=20.0)
        if None not in (kind, x, span, soffit):
            out.append(Structure(kind, r.text(item, "name", path, default=kind), x, span, soffit))
    return out


def _distance_at(keyframes: list[Keyframe], t: float, jerk: float) -> float:
    return float(distance_travelled(keyframes, t, jerk))


def _track(raw: dict, r: _Reader) -> list[TrackSection]:
    """The track's sections in order: a straight has only a length; a curve a radius, a cant and a turn."""
    out = []
    for path, item in r.items(raw, "track", "", required=False):
        r.unknown(item, path, ("length", "radius", "cant", "turn", "transition", "gauge"))
        length = r.quantity(item, "length", path, "length", positive=True, maximum=100_000.0)
        gauge = r.quantity(item, "gauge", path, "length", default=STANDARD_GAUGE, minimum=0.6, maximum=1.8)
        curve = any(k in item for k in ("radius", "cant", "turn", "transition"))
        if not curve:
            if length is not None:
                out.append(TrackSection(length, math.inf, 0.0, 0, 0.0, gauge))
            continue
        radius = r.quantity(item, "radius", path, "length", minimum=50.0, maximum=100_000.0)
        cant = r.quantity(item, "cant", path, "length", default=0.0, minimum=0.0, maximum=0.2)
        turn = r.choice(item, "turn", path, ("left", "right"))
        transition = r.quantity(item, "transition", path, "length", default=0.0, minimum=0.0, maximum=2000.0)
        if None in (length, radius, cant, turn, transition, gauge):
            continue
        if 2 * transition > length:
            r.fail(f"{path}.transition", f"{transition:g} m at each end is more than half the curve's "
                                         f"{length:g} m", also=f"{path}.length")
        out.append(TrackSection(length, radius, cant, 1 if turn == "left" else -1, transition, gauge))
    return out


def _ride(data: dict, r: _Reader):
    """The car body's ride vibration: a named level or explicit RMS values and a band; None without one."""
    if not data:
        return None
    p = "ride"
    r.unknown(data, p, ("level", "lateral_rms", "vertical_rms", "band_low", "band_high", "seed"))
    named = "level" in data
    explicit = "lateral_rms" in data or "vertical_rms" in data
    if named == explicit:
        r.fail(p, "give either level (smooth, typical, rough) or lateral_rms and vertical_rms"
                  + (", not both" if named else ""))
        return None
    level = r.choice(data, "level", p, tuple(RIDE_LEVELS)) if named else None
    if named and level is None:
        return None
    if level is not None:
        lateral, vertical = RIDE_LEVELS[level]
    else:
        lateral = r.quantity(data, "lateral_rms", p, "acceleration", minimum=0.0, maximum=5.0)
        vertical = r.quantity(data, "vertical_rms", p, "acceleration", minimum=0.0, maximum=5.0)
    low = r.quantity(data, "band_low", p, "frequency", default=RIDE_BAND[0], minimum=0.05, maximum=50.0)
    high = r.quantity(data, "band_high", p, "frequency", default=RIDE_BAND[1], minimum=0.1, maximum=100.0)
    seed = r.number(data, "seed", p, default=0, integer=True, minimum=0, maximum=2**62)
    if None in (lateral, vertical, low, high, seed):
        return None
    if high <= low:
        r.fail(f"{p}.band_high", f"{high:g} Hz is not above band_low ({low:g} Hz)", also=f"{p}.band_low")
        return None
    return Ride(lateral, vertical, (low, high), int(seed), level or "explicit")


def _lines(raw: dict, r: _Reader) -> list[Line]:
    out = []
    for path, item in r.items(raw, "lines", "", required=False):
        r.unknown(item, path, ("start", "end", "wire_height", "exclusion"))
        start = r.quantity(item, "start", path, "length")
        end = r.quantity(item, "end", path, "length")
        height = r.quantity(item, "wire_height", path, "length", positive=True, maximum=12.0)
        # No default exclusion: a number that pretends to be safe is worse than none.
        exclusion = r.quantity(item, "exclusion", path, "length", positive=True, maximum=10.0)
        if None not in (start, end, height, exclusion):
            if end <= start:
                r.fail(f"{path}.end", "must be beyond start")
            out.append(Line(start, end, height, exclusion))
    return out



# The most a tether's natural frequency times the engine step may be: a stiffer tether is resolved too
# coarsely by the fixed step (its peak force off by more than about a per cent), so it is refused.
TETHER_STEP_LIMIT = 0.25


def _rigging_fits(r: _Reader, rigging: list[Tether], mass: float, start_x: float, start_y: float,
                  rate: float) -> None:
    """Each tether must reach the performer where they start (not stretched before the beat begins), and be
    soft enough for the engine step to follow its stretch."""
    for n, t in enumerate(rigging, start=1):
        path = f"rigging[{n}]"
        ring = min(max(start_x, t.line_x0), t.line_x1)
        flat = math.hypot(start_x - ring, start_y - t.anchor_y)
        if flat > t.length + t.max_extension:
            r.fail(f"{path}.length", f"{t.length:g} m does not reach the performer's start, {flat:.2f} m from its "
                                     "anchor along the roof: the tether would be stretched before the beat begins",
                   also="start.position")
        omega_dt = math.sqrt(t.stiffness / mass) / rate
        if omega_dt > TETHER_STEP_LIMIT:
            need = math.sqrt(t.stiffness / mass) / TETHER_STEP_LIMIT
            r.fail(f"{path}.stiffness" if not t.material else f"{path}.length",
                   f"a tether of {t.stiffness / 1000:g} kN/m on a {mass:g} kg performer is too stiff for the engine "
                   f"step at {rate:g} Hz; give [simulation] rate = \"{math.ceil(need / 10) * 10:g} Hz\" or more "
                   f"(at most 2000 Hz), or a softer tether")


RIGGING_KEYS = ("name", "car", "from", "position", "line", "offset", "height", "length", "stiffness", "material",
                "damping", "absorber", "sag")


def _rigging(raw: dict, r: _Reader, cars: list[Car]) -> list[Tether]:
    """[[rigging]]: tethers from a point anchor (car, position from an end, offset, height) or a running
    line (line = { from, to } along the same roof) to the harness, with their length and stiffness (or a
    material from physics.rigging_table.MATERIALS), damping and an optional energy absorber."""
    out = []
    for n, (path, item) in enumerate(r.items(raw, "rigging", "", required=False), start=1):
        r.unknown(item, path, RIGGING_KEYS)
        if n > MAX_TETHERS:
            r.fail(path, f"a tether more than the {MAX_TETHERS} roofbeat models; give at most {MAX_TETHERS}")
            break
        name = r.text(item, "name", path, default=f"tether {n}")
        car = r.number(item, "car", path, integer=True, minimum=1, maximum=max(1, len(cars)))
        end = r.choice(item, "from", path, ("front", "rear"), default="front")
        running = "line" in item
        if running == ("position" in item):
            r.fail(path, "give either position (a point anchor) or line = { from = ..., to = ... } (a running "
                         "line)" + (", not both" if running else ""))
            continue
        if running:
            line = r.table(item, "line", path)
            r.unknown(line, f"{path}.line", ("from", "to"))
            a = r.quantity(line, "from", f"{path}.line", "length", minimum=0.0)
            b = r.quantity(line, "to", f"{path}.line", "length", minimum=0.0)
            if a is not None and b is not None and b <= a:
                r.fail(f"{path}.line.to", f"{b:g} m is not beyond line.from ({a:g} m); a running line runs "
                                          "from one place along the roof to a farther one", also=f"{path}.line.from")
                a = b = None
            positions = (a, b)
        else:
            pos = r.quantity(item, "position", path, "length", minimum=0.0)
            positions = (pos, pos)
        offset = r.quantity(item, "offset", path, "length", default=0.0)
        height = r.quantity(item, "height", path, "length", default=0.0, minimum=0.0, maximum=3.0)
        length = r.quantity(item, "length", path, "length", positive=True, maximum=30.0)
        given_k = "stiffness" in item
        if given_k == ("material" in item):
            r.fail(path, "give either stiffness (force per length, e.g. \"20 kN/m\") or material (one of "
                         f"{', '.join(repr(m) for m in MATERIALS)}), " + ("not both" if given_k else "one of them"))
            continue
        stiffness = r.quantity(item, "stiffness", path, "stiffness", positive=True, maximum=1e7) if given_k else None
        material = r.choice(item, "material", path, tuple(MATERIALS)) if not given_k else ""
        damping = r.number(item, "damping", path, default=DEFAULT_DAMPING, minimum=0.0, maximum=2.0)
        deploy, extension = math.inf, 0.0
        if "absorber" in item:
            ab = r.table(item, "absorber", path)
            r.unknown(ab, f"{path}.absorber", ("deploy_force", "max_extension"))
            deploy = r.quantity(ab, "deploy_force", f"{path}.absorber", "force", positive=True, maximum=50_000.0)
            extension = r.quantity(ab, "max_extension", f"{path}.absorber", "length", positive=True, maximum=5.0)
        sag = None
        if "sag" in item and not running:
            r.fail(f"{path}.sag", "only a running line has a sag; a point anchor takes none")
        if None in (car, *positions, offset, height, length, damping, deploy, extension) or (
                material is None) or (given_k and stiffness is None) or not cars:
            continue
        c = cars[car - 1]
        bad = False
        for key, pos in (((f"{path}.line.from", positions[0]), (f"{path}.line.to", positions[1])) if running
                         else ((f"{path}.position", positions[0]),)):
            if pos > c.length:
                r.fail(key, f"{pos:g} m is past the end of {c.name} ({c.length:g} m long)")
                bad = True
        if abs(offset) > 0.5 * c.width:
            r.fail(f"{path}.offset", f"{offset:g} m is past the side edge of {c.name}'s roof ({c.width:g} m wide: "
                                     f"offsets within +/-{0.5 * c.width:g} m)")
            bad = True
        if running:
            span = positions[1] - positions[0]
            sag = r.quantity(item, "sag", path, "length", default=DEFAULT_SAG_FRACTION * span, positive=True,
                             maximum=0.5 * span)
            if sag is None:
                continue
        if bad:
            continue
        xs = sorted((c.front_x - p) if end == "front" else (c.rear_x + p) for p in positions)
        k = stiffness if given_k else MATERIALS[material] / length
        out.append(Tether(name, car - 1, xs[0], offset, c.roof_z(offset) + height, height, running, xs[0], xs[1],
                          length, k, material, damping, deploy, extension, sag or 0.0))
    return out
