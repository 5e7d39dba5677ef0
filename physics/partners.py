"""Two performers on one roof: what their interactions default to, the kernel's link table, and what
each interaction did (the engine's side is physics.engine.partners).

Defaults and where they come from. None of these is a rehearsal figure: a scene should state the
force the performers actually use.

- A shove's peak force, 450 N: a standing man's two-handed horizontal push with good footing is of the
  order of 400-600 N at shoulder height (static push-strength studies, e.g. Chaffin, Andres & Garg
  1983, Human Factors 25:541; from memory, not re-read). A pull, 400 N, the same family of data (from
  memory). A throw, 600 N tilted 30 degrees up: roofbeat's own default.
- A contact punch gives the impulse the scene states over CONTACT_TIME as a half-sine pulse. For scale:
  Olympic boxers' straight punches measured about 3.4 kN peak with the fist at about 9 m/s and an
  effective mass of about 2.9 kg (Walilko, Viano & Bir 2005, Br. J. Sports Med. 39:710; from memory),
  that is about 26 N s; a scene's impulse above PUNCH_IMPULSE_MAX is refused as no stage punch. A
  pulled punch (the default) puts no force on the partner.
- A hold's breaking force, 600 N: a hand hold on an arm or clothing holds by the friction of the grip,
  so it is of the order of one hand's grip strength (dynamometer norms about 450-530 N for men of 20-39
  and 270-310 N for women, Mathiowetz et al. 1985, Arch. Phys. Med. Rehabil. 66:69; from memory), not
  of the arm's pull: roofbeat's own default, to be replaced by the pair's rehearsed figure.
- Reach: an arm from the shoulder to the fingertips is about 0.44 of stature (upper arm 0.186, forearm
  0.146, hand 0.108; Drillis & Contini segment proportions as tabled by Winter, from memory), plus
  0.15 m for the partner's half depth at the chest (from memory).
- A hold's stiffness 5 kN/m and damping ratio 0.5: roofbeat's own (an arm held straight gives a little).
- A catch is taken on bent arms round the body, not in one grip: 1.5 kN/m, damping ratio 0.5 and a
  breaking force of 1200 N, roofbeat's own. The arms draw the flyer in at CATCH_DRAW and take up the
  slack of a flyer who comes nearer faster without pushing back, down to CATCH_CLOSE from the catcher's
  shoulders to the flyer's centre of mass (the flyer held against the chest); a flyer who drops or
  lags is pulled in by the spring-damper, and the catcher takes the reaction. Both roofbeat's own. A
  flyer of reduced mass mu still moving at relative speed v when gathered meets at first the damper's
  c v = 2 zeta sqrt(k mu) v (about 700 N for 37 kg at 3 m/s) and is stopped over about v sqrt(mu / k),
  half a metre of give: about what a rehearsed catch gives (from memory).
"""

from __future__ import annotations

import math

import numpy as np

from physics.records import LINK, LinkCode

SHOVE_FORCE = 450.0
PULL_FORCE = 400.0
THROW_FORCE = 600.0
THROW_ANGLE = math.radians(30.0)
CONTACT_TIME = 0.02          # s a contact punch's fist stays on the target (from memory: about 10-20 ms)
PUNCH_IMPULSE_MAX = 30.0     # N s, above an Olympic boxer's straight punch (see above)
HOLD_BREAKING = 600.0
ARM_FRACTION = 0.44
CHEST_HALF_DEPTH = 0.15
HOLD_STIFFNESS = 5000.0
HOLD_DAMPING = 0.5
CATCH_STIFFNESS = 1500.0
CATCH_DAMPING = 0.5
CATCH_BREAKING = 1200.0
CATCH_CLOSE = 0.4            # m, catcher's shoulders to a gathered flyer's centre of mass (roofbeat's own)
CATCH_DRAW = 1.0             # m/s the arms draw a caught flyer in (roofbeat's own)
STEADY_RAMP = 0.2            # s a steady push takes to build up and to ease off (roofbeat's own)
DEFAULT_FORCE = {"shove": SHOVE_FORCE, "pull": PULL_FORCE, "throw": THROW_FORCE}
DIRECTIONS = ("toward", "front", "rear", "left", "right")
FIXED = {"front": (1.0, 0.0), "rear": (-1.0, 0.0), "left": (0.0, 1.0), "right": (0.0, -1.0)}
INTERACTION_POSTURES = ("stand", "brace", "crouch", "kneel", "prone")


def default_reach(stature: float) -> float:
    return ARM_FRACTION * stature + CHEST_HALF_DEPTH


def punch_force(impulse: float) -> float:
    """Peak force (N) of a half-sine pulse of `impulse` (N s) over CONTACT_TIME: J pi / (2 T)."""
    return impulse * math.pi / (2.0 * CONTACT_TIME)


def link_table(scene) -> np.ndarray:
    """The scene's interactions as the kernel reads them (records.LINK)."""
    table = np.zeros(len(scene.interactions), LINK)
    for row, it in zip(table, scene.interactions):
        code = {"push": LinkCode.PUSH, "hold": LinkCode.HOLD, "catch": LinkCode.CATCH}[it.link_code]
        row["code"] = int(code)
        row["actor"] = it.actor
        row["start"], row["end"] = it.start, it.end
        row["force"] = it.force if it.contact else 0.0
        row["steady"] = it.steady
        row["ramp"] = STEADY_RAMP
        row["toward"] = (-1 if it.kind == "pull" else 1) if it.direction == "toward" else 0
        row["dir_x"], row["dir_y"] = FIXED.get(it.direction, (0.0, 0.0))
        row["up"] = it.up
        row["reach"] = it.reach
        row["breaking"] = it.breaking
        row["stiffness"] = it.stiffness
        row["damping"] = it.damping
        row["close"] = CATCH_CLOSE
        row["draw"] = CATCH_DRAW
        row["facing"] = scene.cast[it.actor].performer.facing
    return table


def interaction_summary(scene, link_out: np.ndarray) -> list[dict]:
    """What each interaction did (JSON-ready): who did what to whom, whether the hands reached, the
    peak force between them and the impulse given, and whether a hold let go."""
    out = []
    names = [p.name for p in scene.cast]
    for it, o in zip(scene.interactions, link_out):
        engaged = float(o["engaged"])
        row = {"kind": it.kind, "actor": names[it.actor], "partner": names[it.partner], "start_s": it.start,
               "end_s": it.end, "reached": math.isfinite(engaged),
               "contact_s": engaged if math.isfinite(engaged) else None,
               "peak_force_n": float(o["peak"]), "impulse_ns": float(o["impulse"]),
               "let_go_s": float(o["lost"]) if math.isfinite(float(o["lost"])) else None,
               "breaking_force_n": it.breaking if it.link_code != "push" else None,
               "pulled_short": it.kind == "punch" and not it.contact}
        out.append(row)
    return out

