"""The beat as a timeline: the prescribed posture, contact and gait at every step.

Everything here depends only on the scene's actions and the performer's
stature, never on the simulated state, so it is computed once with numpy and
shared by every variant of a batch. Rows 0..T-1 are the steps; after them,
two extra rows per action hold the fixed postures the engine switches to on
its own: the posture in the air and the posture after a landing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from physics import body
from physics.scene import Scene

ACTION_CODES = {"posture": 0, "gait": 1, "jump": 2}
# Stride length as a fraction of stature (from memory; only paces the animation
# and the rhythm of the gait friction demand).
STRIDE_FRACTION = {"walk": 0.83, "run": 1.4, "crawl": 0.35}
KNEECAP_REACH = 0.05  # m, support in front of the knee point when kneeling (from memory)


@dataclass(frozen=True)
class Timeline:
    times: np.ndarray        # (T,) s
    ends: np.ndarray         # (R, 12, 2, 2) endpoints relative to the pivot, car-frame x
    com: np.ndarray          # (R, 2) centre of mass relative to the pivot
    inertia: np.ndarray      # (R,) moment of inertia about the pivot per kg, m^2
    support: np.ndarray      # (R, 2) heel-side and toe-side x of the support, relative to the pivot
    contact: np.ndarray      # (R,) body.CONTACT_*
    rotates: np.ndarray      # (R, 12) whether a segment is drawn rotated by the lean
    drag_ratio: np.ndarray   # (R,) drag area in a headwind relative to standing (lumped body)
    pivot_shift: np.ndarray  # (R,) how far the pivot moves at this step when its definition changes, m
    reset: np.ndarray        # (T,) the pivot or facing changes at this step: balance restarts
    settling: np.ndarray     # (T,) inside a posture transition: balance is not assessed
    action: np.ndarray       # (T,) action index
    gait_speed: np.ndarray   # (T,) commanded speed relative to the roof, m/s, signed (+ front)
    gait_friction: np.ndarray  # (T,) peak gait horizontal force / weight
    gait_rate: np.ndarray    # (T,) steps per second
    act_code: np.ndarray     # (A,) ACTION_CODES
    act_takeoff: np.ndarray  # (A, 4) take-off x, vx, vz (relative to roof), landing car (or nan)
    act_rows: np.ndarray     # (A, 2) row index of the air posture and of the landed posture

    @property
    def steps(self) -> int:
        return self.times.size


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
            phase = 2 * np.pi * action.speed / stride * local
            target = body.gait_angles(action.kind, phase)
            if action.speed > 0:
                facing[inside] = action.toward
        elif action.kind == "jump":
            name = "run" if action.speed > 0 else "crouch"
            if action.speed > 0:
                stride = STRIDE_FRACTION["run"] * scene.performer.stature
                target = body.gait_angles("run", 2 * np.pi * action.speed / stride * local)
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


def _contact_for_steps(scene: Scene, times: np.ndarray) -> np.ndarray:
    contact = np.zeros(times.size, dtype=np.int64)
    kind_before = "stand"
    for action in scene.actions:
        inside = (times >= action.start - 1e-12) & (times < action.end - 1e-12)
        if action is scene.actions[-1]:
            inside |= times >= action.end - 1e-12
        kind = {"walk": "stand", "run": "stand", "jump": "stand"}.get(action.kind, action.kind)
        settled = times >= action.start + 0.5 * action.transition
        contact[inside & settled] = body.CONTACT_OF[kind]
        contact[inside & ~settled] = body.CONTACT_OF[kind_before]
        kind_before = kind
    return contact


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
    rotates[np.ix_(contact == body.CONTACT_FEET, list(body.FEET))] = False
    rotates[np.ix_(contact == body.CONTACT_KNEES, list(body.FEET + body.SHANKS))] = False
    rotates[contact == body.CONTACT_BODY] = False
    ratio = body.drag_area(ends, constants) / body.standing_drag_area(stature)
    foot = body.FOOT_LENGTH * stature
    lo = np.where(gait, -body.HEEL_TO_ANKLE * foot, lo)
    hi = np.where(gait, (1 - body.HEEL_TO_ANKLE) * foot, hi)
    knees = contact == body.CONTACT_KNEES
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
    return np.select([contact == body.CONTACT_FEET, contact == body.CONTACT_KNEES], [feet, knees], com[:, 0])


def _masked_mean(values, mask):
    mask = mask.copy()
    mask[~mask.any(axis=1)] = True
    return np.sum(values * mask, axis=1) / np.sum(mask, axis=1)


def build_timeline(scene: Scene) -> Timeline:
    n = int(round(scene.duration / scene.step)) + 1
    times = np.arange(n) * scene.step
    angles, facing = _angles_for_steps(scene, times)
    contact = _contact_for_steps(scene, times)
    extra_angles, extra_facing, extra_contact, act_rows = [], [], [], []
    for a, action in enumerate(scene.actions):
        air = action.air_posture if action.kind == "jump" else "upright"
        extra_angles += [body.POSTURES[air], body.POSTURES["crouch" if action.kind == "jump" else "stand"]]
        extra_facing += [action.toward if action.kind == "jump" else scene.performer.facing] * 2
        extra_contact += [body.CONTACT_FEET, body.CONTACT_FEET]
        act_rows.append((n + 2 * a, n + 2 * a + 1))
    all_angles = np.vstack([angles, np.array(extra_angles, float)])
    all_facing = np.concatenate([facing, np.array(extra_facing, float)])
    all_contact = np.concatenate([contact, np.array(extra_contact, dtype=np.int64)])
    gait = np.concatenate([_gait_rows(scene, times), np.zeros(len(extra_angles), dtype=bool)])
    ends, com, inertia, support, rotates, ratio, hip = place(all_angles, all_facing, all_contact,
                                                             scene.performer.stature, gait)
    reset = np.zeros(n, dtype=np.bool_)
    pivot_moves = (contact[1:] != contact[:-1]) | (gait[1:n] != gait[:n - 1])
    reset[1:] = pivot_moves | (facing[1:] != facing[:-1])
    # A turn on the spot keeps the feet where they are; only a change of pivot
    # (feet to knees, ankle to hip) keeps the hip where it is instead.
    pivot_shift = np.zeros(hip.shape)
    pivot_shift[1:n] = np.where(pivot_moves, hip[:n - 1] - hip[1:n], 0.0)
    action_idx, gait_speed, gait_friction, gait_rate = _gait(scene, times)
    codes, takeoff = _action_table(scene)
    settling = np.zeros(n, dtype=np.bool_)
    for a, action in enumerate(scene.actions):
        if a > 0 and action.transition > 0:
            settling |= (times >= action.start - 1e-12) & (times < action.start + action.transition + 0.25)
    return Timeline(times, ends, com, inertia, support, all_contact, rotates, ratio, pivot_shift, reset, settling,
                    action_idx,
                    gait_speed,
                    gait_friction, gait_rate, codes, takeoff, np.array(act_rows, dtype=np.int64))


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
    for a, action in enumerate(scene.actions):
        inside = times >= action.start - 1e-12
        idx[inside] = a
        speed[inside] = 0.0
        friction[inside] = 0.0
        if action.kind in ("walk", "run", "crawl", "jump") and action.speed > 0:
            kind = "run" if action.kind == "jump" else action.kind
            ramp = np.clip((times[inside] - action.start) / max(action.transition, 1e-9), 0, 1)
            speed[inside] = action.toward * action.speed * ramp
            friction[inside] = action.gait_friction
            rate[inside] = 2 * action.speed / (STRIDE_FRACTION[kind] * scene.performer.stature)
    return idx, speed, friction, rate


def _action_table(scene: Scene):
    codes = np.zeros(len(scene.actions), dtype=np.int64)
    takeoff = np.full((len(scene.actions), 4), np.nan)
    for a, action in enumerate(scene.actions):
        if action.kind == "jump" and action.takeoff_x is not None:
            codes[a] = ACTION_CODES["jump"]
            horizontal = action.speed + action.takeoff_speed * np.cos(action.takeoff_angle)
            takeoff[a] = (action.takeoff_x, action.toward * horizontal,
                          action.takeoff_speed * np.sin(action.takeoff_angle), action.landing_car)
        elif action.kind in ("walk", "run", "crawl"):
            codes[a] = ACTION_CODES["gait"]
    return codes, takeoff
