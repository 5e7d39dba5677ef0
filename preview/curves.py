"""The track under the beat as the views show it: where the curves are, when the
performer's car meets them, the cant and the car body's roll in words, the
lateral acceleration felt on the roof, and the track's centreline from above.

The engine reads the track where the performer started on the consist: its
track position at time t is the start's car-frame x plus the consist's travel
(records' `distance`), which is what every time and place here uses, so that
the words agree with the recorded cant, roll and acceleration. Nothing here is
physics: the curves come from the scene's [[track]] sections (physics.track),
the numbers of the moment from the recorded trajectory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from physics import track as track_model
from physics.units import display
from preview.road import way

LEVEL = math.radians(0.05)   # rad: a tilt smaller than this is called level


@dataclass(frozen=True)
class Curve:
    """One curved section of the track: from start to end (m along the track, transitions included)."""

    index: int          # the section's place in scene.track
    start: float        # m along the track
    end: float          # m
    radius: float       # m
    cant: float         # m
    turn: int           # +1 left, -1 right
    transition: float   # m at each end (as used: at most half the section)
    rail_base: float    # m


def curves(scene) -> list[Curve]:
    """The scene's curves in order along the track."""
    out, s = [], 0.0
    for k, sec in enumerate(getattr(scene, "track", ()) or ()):
        if sec.turn and math.isfinite(sec.radius):
            out.append(Curve(k, s, s + sec.length, sec.radius, sec.cant, sec.turn,
                             min(sec.transition, 0.5 * sec.length), sec.rail_base))
        s += sec.length
    return out


def has_curve(scene) -> bool:
    return bool(curves(scene))


def shows_track(scene) -> bool:
    """Whether the views say what the track does: the scene has a curve or a ride."""
    return has_curve(scene) or getattr(scene, "ride", None) is not None


def mark_position(tr, i: int) -> float:
    """Where the performer's mark (their start on the consist) is along the track at step i, m."""
    return float(tr.scene.start_x) + float(tr.field("distance")[i])


def crossing_time(tr, s: float) -> float | None:
    """When the performer's mark first reaches s along the track (s, interpolated between steps); None if
    it never does in the run; 0 if it is there or past it at the start."""
    along = float(tr.scene.start_x) + np.asarray(tr.field("distance"), dtype=float)
    if along[0] >= s:
        return 0.0
    past = np.flatnonzero(along >= s)
    if not past.size:
        return None
    k = int(past[0])
    a0, a1 = along[k - 1], along[k]
    u = (s - a0) / (a1 - a0) if a1 > a0 else 1.0
    return float(tr.times[k - 1] + u * (tr.times[k] - tr.times[k - 1]))


def curve_times(tr) -> list[tuple[Curve, float | None, float | None]]:
    """(curve, time the mark enters it, time it leaves it) for each curve the mark is on during the run;
    a time is None when that end is not met in the run (already on the curve at t = 0, or still on it at
    the end)."""
    out = []
    along0 = mark_position(tr, 0)
    for c in curves(tr.scene):
        t0, t1 = crossing_time(tr, c.start), crossing_time(tr, c.end)
        if t0 is None or (t1 is not None and along0 >= c.end):
            continue      # never reached, or already behind at the start
        out.append((c, t0 if along0 < c.start else None, t1))
    return out


def curve_at(scene, s: float) -> Curve | None:
    for c in curves(scene):
        if c.start <= s <= c.end:
            return c
    return None


def tilt(tr, i: int) -> tuple[float, float]:
    """(cant tilt, body roll) at step i, rad (+ the roof low on the left); 0 where not recorded."""
    r = tr.record[i]
    return _finite(r["cant_tilt"]), _finite(r["body_roll"])


def _finite(value) -> float:
    value = float(value)
    return value if math.isfinite(value) else 0.0


def side(sign: float) -> str:
    return "left" if sign > 0 else "right"


def cant_length(metres: float, units: str) -> str:
    """A cant in the trade's unit: millimetres or inches."""
    if units == "imperial":
        return f"{metres / 0.0254:.1f} in"
    return f"{metres * 1000:.0f} mm"


def lateral_words(accel_y: float, units: str) -> str:
    """The lateral acceleration felt on the roof and which way it pushes the performer ('+ left' in the
    record is a push toward the right)."""
    if not math.isfinite(accel_y):
        return "n/a"
    value = display(abs(accel_y), "acceleration", units, ".2f")
    if abs(accel_y) < 0.005:
        return value
    return f"{value} toward the {side(-accel_y)}"


def place_words(tr, i: int) -> str:
    """Where the performer's car is on the track at step i, in a few words."""
    scene = tr.scene
    s = mark_position(tr, i)
    c = curve_at(scene, s)
    ride = getattr(scene, "ride", None)
    rides = f"; {ride.level} ride" if ride is not None and ride.level != "explicit" else ("; ride vibration"
                                                                                           if ride else "")
    if c is None:
        # A curve the consist reaches before the beat ends (or just after) is said with its distance.
        reach = float(tr.field("distance")[-1]) - float(tr.field("distance")[i]) + 50.0
        ahead = [k for k in curves(scene) if s < k.start <= s + reach]
        if ahead:
            k = ahead[0]
            return (f"straight {way(scene)}, a curve to the {side(k.turn)} "
                    f"{display(k.start - s, 'length', scene.units, '.0f')} ahead{rides}")
        return f"straight {way(scene)}" + rides
    radius = display(c.radius, "length", scene.units, ".0f")
    into = s - c.start
    if c.transition > 0 and (into < c.transition or c.end - s < c.transition):
        going = "into" if into < c.transition else "out of"
        return f"transition {going} a curve to the {side(c.turn)}, radius {radius}{rides}"
    return f"curve to the {side(c.turn)}, radius {radius}{rides}"


def tilt_words(tr, i: int) -> str:
    """'cant 50 mm (1.9°), body roll 3.9° outward: roof 2.0° low on the right' at step i."""
    scene = tr.scene
    cant, roll = tilt(tr, i)
    s = mark_position(tr, i)
    c = curve_at(scene, s)
    base = c.rail_base if c is not None else track_model.STANDARD_GAUGE + track_model.RAIL_HEAD
    parts = [f"cant {cant_length(base * math.sin(abs(cant)), scene.units)} ({math.degrees(abs(cant)):.1f}°)"]
    if abs(roll) >= LEVEL:
        curvature = _finite(tr.record["curvature"][i])
        way = (("outward" if roll * curvature < 0 else "inward") if curvature else f"toward the {side(roll)}")
        parts.append(f"body roll {math.degrees(abs(roll)):.1f}° {way}")
    else:
        parts.append("no body roll")
    total = cant + roll
    roof = f"roof {math.degrees(abs(total)):.1f}° low on the {side(total)}" if abs(total) >= LEVEL else "roof level"
    return f"{', '.join(parts)}: {roof}"


def curve_words(tr, i: int) -> list[str]:
    """The curve the performer's mark is on at step i (else the next one ahead, else the last passed):
    its side, radius, cant, where it runs along the track and where the mark is against it."""
    scene, units = tr.scene, tr.scene.units
    all_curves = curves(scene)
    if not all_curves:
        return []
    s = mark_position(tr, i)
    here = curve_at(scene, s)
    ahead = [c for c in all_curves if c.start > s]
    c = here or (ahead[0] if ahead else all_curves[-1])
    length = lambda v: display(v, "length", units, ".0f")  # noqa: E731
    what = f"curve to the {side(c.turn)}, radius {length(c.radius)}, cant {cant_length(c.cant, units)}"
    where = (f"from {length(c.start)} to {length(c.end)} along the {way(scene)}"
             + (f" ({length(c.transition)} transitions)" if c.transition > 0 else ""))
    if c is here:
        now = f"the performer's mark is {length(s - c.start)} into it"
    elif c.start > s:
        now = f"it starts {length(c.start - s)} ahead of the performer's mark"
    else:
        now = f"the performer's mark left it {length(s - c.end)} back"
    return [what, where, now]


def centreline(scene, s0: float, s1: float, step: float = 1.0) -> np.ndarray:
    """(N, 3) the track's centreline from above between s0 and s1 (m along the track): s, then x ahead and
    y to the left (m) of where it is at s0, heading along x there; straight before the first section and
    past the last."""
    table = track_model.pieces(scene.track) if getattr(scene, "track", ()) else None
    s = np.linspace(s0, s1, max(2, int(math.ceil((s1 - s0) / step)) + 1))
    k = np.array([_curvature(table, v) for v in s])
    ds = np.diff(s)
    heading = np.concatenate([[0.0], np.cumsum(0.5 * (k[1:] + k[:-1]) * ds)])
    mid = 0.5 * (heading[1:] + heading[:-1])
    x = np.concatenate([[0.0], np.cumsum(np.cos(mid) * ds)])
    y = np.concatenate([[0.0], np.cumsum(np.sin(mid) * ds)])
    return np.stack([s, x, y], axis=-1)


def _curvature(table, s: float) -> float:
    if table is None or not len(table) or s <= table[0]["s0"] or s > table[-1]["s1"]:
        return 0.0
    for p in table:
        if s <= p["s1"]:
            length = p["s1"] - p["s0"]
            u = (s - p["s0"]) / length if length > 0 else 0.0
            return float(p["k0"] + (p["k1"] - p["k0"]) * u)
    return 0.0
