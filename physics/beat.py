"""The beat as a timeline: the prescribed posture, contact and gait at every step.

Everything here depends only on the scene's actions, the consist's speed
profile, the gusts and the performer's stature, never on the simulated state,
so it is computed once with numpy and shared by every variant of a batch. It
becomes the engine's input tables (physics.records STEP, POSTURE, ACTION):
one STEP row per engine step, one POSTURE row per distinct posture (a step's
posture, and for every action the posture held in the air and the one after a
landing, which the engine switches to on its own).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from physics import air, body, consist, track
from physics.records import ACTION, POSTURE, STEP, ActionCode, Contact
from physics.scene import Scene

# Stride length as a fraction of stature (from memory; only paces the animation
# and the rhythm of the gait friction demand).
STRIDE_FRACTION = {"walk": 0.83, "run": 1.4, "crawl": 0.35}
KNEECAP_REACH = 0.05  # m, support in front of the knee point when kneeling (from memory)
GAIT_PHASES = 512     # distinct postures per gait cycle


@dataclass(frozen=True)
class Timeline:
    steps: np.ndarray     # (T,) records.STEP
    postures: np.ndarray  # (R,) records.POSTURE
    actions: np.ndarray   # (A,) records.ACTION
    lying_row: int        # the posture of a body lying on the ground after a fall

    @property
    def times(self) -> np.ndarray:
        return self.steps["time"]

    @property
    def size(self) -> int:
        return self.steps.size


def _angles_for_steps(scene: Scene, times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Target joint angles and facing sign at each step, with posture transitions."""
    angles = np.zeros((times.size, body.N_SEGMENTS))
    facing = np.full(times.size, float(scene.performer.facing))
    previous = np.array(body.POSTURES["stand"], dtype=float)
    for action in scene.actions:
        inside = (times >= action.start - 1e-12) & (times < action.end - 1e-12)
        if action is scene.actions[-1]:
            inside |= times >= action.end - 1e-12
        local = times[inside] - action.start
        if action.kind in ("walk", "run", "crawl"):
            stride = STRIDE_FRACTION[action.kind] * scene.performer.stature
            target = body.gait_angles(action.kind, _gait_phase(action.speed / stride * local))
            if action.speed > 0:
                facing[inside] = action.toward
        elif action.kind == "jump":
            name = "run" if action.speed > 0 else "crouch"
            if action.speed > 0:
                stride = STRIDE_FRACTION["run"] * scene.performer.stature
                target = body.gait_angles("run", _gait_phase(action.speed / stride * local))
            else:
                target = np.tile(np.array(body.POSTURES[name], float), (local.size, 1))
            facing[inside] = action.toward
        else:
            target = np.tile(np.array(body.POSTURES[action.kind], float), (local.size, 1))
        if action.transition > 0 and local.size:
            w = np.clip(local / action.transition, 0.0, 1.0)[:, None]
            target = previous * (1 - w) + target * w
        angles[inside] = target
        if local.size:
            previous = target[-1]
    return angles, facing


def _gait_phase(cycles: np.ndarray) -> np.ndarray:
    """Gait phase (rad) on a grid of GAIT_PHASES per cycle, so a long walk has a few hundred
    distinct postures rather than one per step (at most 0.2 deg from the exact animation)."""
    return 2 * np.pi * np.round(cycles * GAIT_PHASES) / GAIT_PHASES


def _contact_for_steps(scene: Scene, times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """How the body touches the roof at each step, and half the support's width across the roof (m)."""
    contact = np.zeros(times.size, dtype=np.int64)
    half = np.zeros(times.size)
    kind_before, width_before = "stand", "stand"
    for action in scene.actions:
        inside = (times >= action.start - 1e-12) & (times < action.end - 1e-12)
        if action is scene.actions[-1]:
            inside |= times >= action.end - 1e-12
        kind = {"walk": "stand", "run": "stand", "jump": "stand"}.get(action.kind, action.kind)
        width = action.kind if action.kind in body.HALF_WIDTH_FRACTION else "run" if action.speed > 0 else kind
        settled = times >= action.start + 0.5 * action.transition
        contact[inside & settled] = body.CONTACT_OF[kind]
        contact[inside & ~settled] = body.CONTACT_OF[kind_before]
        half[inside & settled] = body.HALF_WIDTH_FRACTION[width]
        half[inside & ~settled] = body.HALF_WIDTH_FRACTION[width_before]
        kind_before, width_before = kind, width
    return contact, half * scene.performer.stature


def place(angles: np.ndarray, facing: np.ndarray, contact: np.ndarray, stature: float, gait=None):
    """Posture rows -> endpoints relative to the pivot, com, inertia, support, rotation flags.

    In gait rows (walk, run) the pivot is the point under the hip and the
    support one foot's length around it: the stance foot changes every step,
    and a pivot that jumped with it would shake the balance model.
    """
    gait = np.zeros(len(angles), dtype=bool) if gait is None else gait
    ends = body.segment_endpoints(angles, stature)
    ends[..., 0] *= facing[:, None, None]
    ends[..., 1] -= ends[..., 1].min(axis=(1, 2))[:, None, None]
    constants = body.body_constants(stature)
    seg_com = ends[:, :, 0, :] + constants.com_fraction[None, :, None] * (ends[:, :, 1, :] - ends[:, :, 0, :])
    com = np.einsum("s,rsk->rk", constants.mass_fraction, seg_com)
    touching = ends[..., 1] < body.CONTACT_TOLERANCE  # (R, 12, 2)
    pivot = np.where(gait, 0.0, _pivot_x(ends, touching, contact, com))
    ends[..., 0] -= pivot[:, None, None]
    com[:, 0] -= pivot
    seg_com[..., 0] -= pivot[:, None]
    xs = np.where(touching, ends[..., 0], np.nan).reshape(len(ends), -1)
    lo = np.minimum(np.nanmin(np.where(np.isnan(xs).all(1)[:, None], 0.0, xs), axis=1), -0.01)
    hi = np.maximum(np.nanmax(np.where(np.isnan(xs).all(1)[:, None], 0.0, xs), axis=1), 0.01)
    inertia = np.sum(constants.mass_fraction * (np.sum(seg_com**2, axis=-1) + constants.length**2 / 12), axis=1)
    rotates = np.ones((len(ends), body.N_SEGMENTS), dtype=bool)
    rotates[np.ix_(contact == Contact.FEET, list(body.FEET))] = False
    rotates[np.ix_(contact == Contact.KNEES, list(body.FEET + body.SHANKS))] = False
    rotates[contact == Contact.BODY] = False
    ratio = body.drag_area(ends, constants) / body.standing_drag_area(stature)
    foot = body.FOOT_LENGTH * stature
    lo = np.where(gait, -body.HEEL_TO_ANKLE * foot, lo)
    hi = np.where(gait, (1 - body.HEEL_TO_ANKLE) * foot, hi)
    knees = contact == Contact.KNEES
    knee_x = ends[:, [body.THIGH_N, body.THIGH_F], 1, 0]
    # The kneecaps bear on the roof too: the support reaches just past them.
    hi = np.where(knees, np.maximum(hi, knee_x.max(axis=1) + KNEECAP_REACH), hi)
    lo = np.where(knees, np.minimum(lo, knee_x.min(axis=1) - KNEECAP_REACH), lo)
    return ends, com, inertia, np.stack([lo, hi], axis=1), rotates, ratio, -pivot


def _pivot_x(ends, touching, contact, com) -> np.ndarray:
    """Feet: mean x of the grounded ankles; knees: of the grounded knees; body: the com."""
    ankle = ends[:, [body.SHANK_N, body.SHANK_F], 1, 0]
    foot_down = touching[:, list(body.FEET), :].any(axis=2)
    knee = ends[:, [body.THIGH_N, body.THIGH_F], 1, 0]
    knee_down = ends[:, [body.THIGH_N, body.THIGH_F], 1, 1] < body.CONTACT_TOLERANCE + 0.08
    feet = _masked_mean(ankle, foot_down)
    knees = _masked_mean(knee, knee_down)
    return np.select([contact == Contact.FEET, contact == Contact.KNEES], [feet, knees], com[:, 0])


def _masked_mean(values, mask):
    mask = mask.copy()
    mask[~mask.any(axis=1)] = True
    return np.sum(values * mask, axis=1) / np.sum(mask, axis=1)


def build_timeline(scene: Scene) -> Timeline:
    n = max(2, int(round(scene.duration / scene.step)) + 1)  # the engine's step is the first two times apart
    times = np.arange(n) * scene.step
    angles, facing = _angles_for_steps(scene, times)
    contact, half = _contact_for_steps(scene, times)
    gait = _gait_rows(scene, times)
    extra_angles, extra_facing, extra_half = [], [], []
    for action in scene.actions:
        in_air = action.air_posture if action.kind == "jump" else "upright"
        landed = "crouch" if action.kind == "jump" else "stand"
        extra_angles += [body.POSTURES[in_air], body.POSTURES[landed]]
        extra_facing += [action.toward if action.kind == "jump" else scene.performer.facing] * 2
        extra_half += [body.HALF_WIDTH_FRACTION["stand"], body.HALF_WIDTH_FRACTION[landed]]
    # Last, the body lying flat on the ground after a fall from the consist.
    extra_angles.append(body.POSTURES["prone"])
    extra_facing.append(scene.performer.facing)
    extra_half.append(body.HALF_WIDTH_FRACTION["prone"])
    extra_contact = np.full(len(extra_angles), Contact.FEET, dtype=np.int64)
    extra_contact[-1] = Contact.BODY
    all_angles = np.vstack([angles, np.array(extra_angles, float)])
    all_facing = np.concatenate([facing, np.array(extra_facing, float)])
    all_contact = np.concatenate([contact, extra_contact])
    all_gait = np.concatenate([gait, np.zeros(len(extra_angles), dtype=bool)])
    all_half = np.concatenate([half, np.array(extra_half) * scene.performer.stature])
    # One posture row per distinct posture: a long stand is one row, not thousands.
    key = np.column_stack([all_angles, all_facing, all_contact, all_gait, all_half])
    unique, row_of = _distinct_rows(key)
    n_seg = body.N_SEGMENTS
    postures, hip = _postures(unique[:, :n_seg], unique[:, n_seg], unique[:, n_seg + 1].astype(np.int64),
                              unique[:, n_seg + 2] > 0.5, scene.performer.stature, unique[:, n_seg + 3])
    steps = _steps(scene, times, row_of[:n], hip[row_of[:n]], contact, gait, facing)
    return Timeline(steps, postures, _action_table(scene, row_of[n:-1]), int(row_of[-1]))


def _distinct_rows(key: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(distinct rows of key in order of first appearance, index of each row's distinct row).

    Runs of equal rows (a long stand) are folded first; what is left is matched
    by the rows' bytes, which is much faster than sorting rows of floats.
    """
    changed = np.ones(len(key), dtype=bool)
    changed[1:] = np.any(key[1:] != key[:-1], axis=1)
    starts = np.flatnonzero(changed)
    index: dict[bytes, int] = {}
    of_run = np.fromiter((index.setdefault(row.tobytes(), len(index)) for row in key[starts]), dtype=np.int64,
                         count=starts.size)
    first = np.zeros(len(index), dtype=np.int64)
    first[of_run[::-1]] = starts[::-1]   # the first run of each distinct row
    return key[first], of_run[np.cumsum(changed) - 1]


def _postures(angles, facing, contact, gait, stature, half_width) -> tuple[np.ndarray, np.ndarray]:
    ends, com, inertia, support, rotates, ratio, hip = place(angles, facing, contact, stature, gait)
    out = np.zeros(len(angles), POSTURE)
    out["ends"] = ends
    out["axes"] = segment_axes(ends)
    out["rotates"] = rotates
    out["com_x"], out["com_z"] = com[:, 0], com[:, 1]
    out["inertia"] = inertia
    out["support_lo"], out["support_hi"] = support[:, 0], support[:, 1]
    out["contact"] = contact
    out["drag_ratio"] = ratio
    out["half_width"] = half_width
    return out, hip


def segment_axes(ends: np.ndarray) -> np.ndarray:
    """(R, 12, 4): midpoint x, z and unit axis x, z of every segment of every row."""
    mid = 0.5 * (ends[:, :, 0, :] + ends[:, :, 1, :])
    axis = ends[:, :, 1, :] - ends[:, :, 0, :]
    norm = np.linalg.norm(axis, axis=-1, keepdims=True)
    unit = np.where(norm > 1e-9, axis / np.maximum(norm, 1e-9), 0.0)
    return np.concatenate([mid, unit], axis=-1)


def _steps(scene, times, rows, hip, contact, gait, facing) -> np.ndarray:
    n = times.size
    steps = np.zeros(n, STEP)
    steps["time"] = times
    if scene.speed_log is not None:
        steps["speed"], steps["accel"], steps["distance"] = scene.speed_log.at(times)
    else:
        steps["speed"] = consist.speed_at(scene.keyframes, times, scene.jerk)
        steps["accel"] = consist.acceleration_at(scene.keyframes, times, scene.jerk)
        steps["distance"] = consist.distance_travelled(scene.keyframes, times, scene.jerk)
    steps["gust_x"], steps["gust_y"] = air.gust_profile(times, scene.air.gusts)
    steps["ride_y"], steps["ride_z"] = track.ride_profile(times, scene.ride)
    steps["row"] = rows
    pivot_moves = (contact[1:] != contact[:-1]) | (gait[1:] != gait[:-1])
    steps["reset"][1:] = pivot_moves | (facing[1:] != facing[:-1])
    # A turn on the spot keeps the feet where they are; only a change of pivot
    # (feet to knees, ankle to hip) keeps the hip where it is instead.
    steps["pivot_shift"][1:] = np.where(pivot_moves, hip[:-1] - hip[1:], 0.0)
    settling = np.zeros(n, dtype=bool)
    for a, action in enumerate(scene.actions):
        if a > 0 and action.transition > 0:
            settling |= (times >= action.start - 1e-12) & (times < action.start + action.transition + 0.25)
    steps["settling"] = settling
    (steps["action"], steps["gait_speed"], steps["gait_friction"], steps["gait_rate"],
     steps["gait_speed_y"]) = _gait(scene, times)
    return steps


def _gait_rows(scene: Scene, times: np.ndarray) -> np.ndarray:
    """Steps that belong to a walk or run (or a jump's run-up) on the feet."""
    rows = np.zeros(times.size, dtype=bool)
    for action in scene.actions:
        if action.kind in ("walk", "run") or (action.kind == "jump" and action.speed > 0):
            rows |= (times >= action.start - 1e-12) & (times < action.end - 1e-12)
    return rows


def _gait(scene: Scene, times: np.ndarray):
    idx = np.zeros(times.size, dtype=np.int64)
    speed = np.zeros(times.size)
    friction = np.zeros(times.size)
    rate = np.zeros(times.size)
    across = np.zeros(times.size)
    for a, action in enumerate(scene.actions):
        inside = times >= action.start - 1e-12
        idx[inside] = a
        speed[inside] = 0.0
        friction[inside] = 0.0
        across[inside] = 0.0
        if action.kind in ("walk", "run", "crawl", "jump") and action.speed > 0:
            kind = "run" if action.kind == "jump" else action.kind
            ramp = np.clip((times[inside] - action.start) / max(action.transition, 1e-9), 0, 1)
            speed[inside] = action.toward * action.speed * ramp * np.cos(action.angle)
            across[inside] = action.speed * ramp * np.sin(action.angle)
            friction[inside] = action.gait_friction * ramp   # the push grows with the gait's speed
            rate[inside] = 2 * action.speed / (STRIDE_FRACTION[kind] * scene.performer.stature)
    return idx, speed, friction, rate, across


def _action_table(scene: Scene, extra_rows: np.ndarray) -> np.ndarray:
    """extra_rows: for each action, the posture rows held in the air and after a landing."""
    table = np.zeros(len(scene.actions), ACTION)
    table["landing_car"] = -1
    table["takeoff_x"] = np.nan
    for a, action in enumerate(scene.actions):
        row = table[a:a + 1]
        row["air_row"], row["landed_row"] = extra_rows[2 * a], extra_rows[2 * a + 1]
        row["start"] = action.start
        if action.kind == "jump" and action.takeoff_x is not None:
            horizontal = action.speed + action.takeoff_speed * np.cos(action.takeoff_angle)
            row["code"] = ActionCode.JUMP
            row["takeoff_x"] = action.takeoff_x
            row["takeoff_vx"] = action.toward * horizontal
            row["takeoff_vz"] = action.takeoff_speed * np.sin(action.takeoff_angle)
            row["landing_car"] = action.landing_car
        elif action.kind in ("walk", "run", "crawl"):
            row["code"] = ActionCode.GAIT
    return table
