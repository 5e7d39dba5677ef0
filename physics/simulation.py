"""Run a scene: build the shared timeline and per-variant parameters, call the kernel.

`simulate(scene)` returns a recorded Trajectory of one performer for the preview
and the report; `simulate_batch(scene, overrides)` runs many variants at once
(sweeps, Monte Carlo) and returns only events and margins.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from physics import air, body, consist, engine
from physics.beat import Timeline, build_timeline
from physics.scene import Scene


@dataclass(frozen=True)
class Trajectory:
    """Everything the preview draws, sampled at every engine step (car frame, SI)."""

    scene: Scene
    timeline: Timeline
    record: np.ndarray      # (T, len(engine.REC_FIELDS))
    ends: np.ndarray        # (T, 12, 2, 2) segment endpoints, car frame
    seg_force: np.ndarray   # (T, 12, 2) aerodynamic force per segment (x, z), N
    events: np.ndarray      # (8, 6) first event of each kind, NaN when none
    margins: np.ndarray     # (A, len(engine.MARGIN_KEYS)) per-action margins
    params: np.ndarray      # (len(engine.VARIANT_FIELDS),)

    def field(self, name: str) -> np.ndarray:
        return self.record[:, engine.R[name]]

    @property
    def times(self) -> np.ndarray:
        return self.timeline.times

    def index_at(self, t: float) -> int:
        return int(np.clip(round(t / self.scene.step), 0, self.times.size - 1))


@dataclass(frozen=True)
class BatchResult:
    events: np.ndarray   # (B, 8, 6)
    margins: np.ndarray  # (B, A, len(engine.MARGIN_KEYS))
    params: np.ndarray   # (B, len(engine.VARIANT_FIELDS))
    steps: int


def base_params(scene: Scene) -> np.ndarray:
    """The scene's own variant: one row of engine.VARIANT_FIELDS."""
    p = np.zeros(len(engine.VARIANT_FIELDS))
    wind_x, wind_y = air.wind_vector(scene.air.wind_speed, scene.air.wind_from)
    turb = scene.air.turbulence
    values = {
        "speed_scale": 1.0, "wind_x": wind_x, "wind_y": wind_y, "density": scene.air.density,
        "mass": scene.performer.mass, "drag_scale": drag_calibration(scene), "friction_scale": 1.0,
        "reaction_time": scene.performer.reaction_time, "turbulence_sigma": turb.intensity if turb else 0.0,
        "turbulence_seed": float(turb.seed) if turb else 0.0, "gust_scale": 1.0,
        "max_lean": scene.performer.max_lean, "recovery_step": scene.performer.recovery_step,
        "start_x": scene.start_x, "turbulence_length": turb.length_scale if turb else 1.0, "takeoff_scale": 1.0,
    }
    for name, value in values.items():
        p[engine.V_[name]] = value
    return p


def drag_calibration(scene: Scene) -> float:
    """Factor on the segment drag so the standing figure has the scene's drag area.

    1.0 when the scene gives none (the segment table's own coefficients).
    """
    if scene.performer.drag_area is None or scene.performer.body_model == "lumped":
        return 1.0
    return scene.performer.drag_area / body.standing_drag_area(scene.performer.stature)


def segment_axes(ends: np.ndarray) -> np.ndarray:
    """(R, 12, 4): midpoint x, z and unit axis x, z of every segment of every row."""
    mid = 0.5 * (ends[:, :, 0, :] + ends[:, :, 1, :])
    axis = ends[:, :, 1, :] - ends[:, :, 0, :]
    norm = np.linalg.norm(axis, axis=-1, keepdims=True)
    unit = np.where(norm > 1e-9, axis / np.maximum(norm, 1e-9), 0.0)
    return np.ascontiguousarray(np.concatenate([mid, unit], axis=-1))


@functools.lru_cache(maxsize=16)
def prepare(scene: Scene) -> tuple[Timeline, tuple]:
    """The state-independent timeline and kernel inputs of a scene, built once.

    Sweeps, their root finding, Monte Carlo batches and the window's what-if keys
    re-run one scene many times with other per-variant parameters only; the
    scene is frozen and hashable, so they all share this work. The arrays are
    read by the kernel, never written.
    """
    timeline = build_timeline(scene)
    return timeline, _kernel_inputs(scene, timeline)


def _kernel_inputs(scene: Scene, timeline: Timeline):
    times = timeline.times
    speed = consist.speed_at(scene.keyframes, times)
    accel = consist.acceleration_at(scene.keyframes, times)
    dist = consist.distance_travelled(scene.keyframes, times)
    gust_x, gust_y = air.gust_profile(times, scene.air.gusts)
    cars = np.array([[c.front_x, c.rear_x, c.roof_height, c.sole_static, c.sole_kinetic, c.body_static,
                      c.body_kinetic] for c in scene.cars], dtype=float)
    constants = body.body_constants(scene.performer.stature)
    structures = np.array([[s.x_start, s.span, s.soffit] for s in scene.structures], dtype=float).reshape(-1, 3)
    lines = np.array([[ln.x_start, ln.x_end, ln.wire_height, ln.exclusion] for ln in scene.lines],
                     dtype=float).reshape(-1, 4)
    act_start = np.array([a.start for a in scene.actions], dtype=float)
    lumped = scene.performer.body_model == "lumped"
    lumped_cda = scene.performer.drag_area if lumped else 0.0
    return (times, speed, accel, dist, gust_x, gust_y, timeline.ends, segment_axes(timeline.ends), timeline.com,
            timeline.inertia, timeline.support, timeline.contact, timeline.rotates, timeline.drag_ratio, timeline.pivot_shift,
            timeline.reset, timeline.settling, timeline.action, timeline.gait_speed, timeline.gait_friction,
            timeline.gait_rate, timeline.act_code, act_start,
            timeline.act_takeoff, timeline.act_rows, cars, constants.crossflow_area, constants.axial_area, lumped,
            float(lumped_cda), structures, lines)


def _outputs(batch: int, n_actions: int):
    events = np.full((batch, len(engine.EVENT_KINDS), engine.EVENT_FIELDS), np.nan)
    margins = np.zeros((batch, n_actions, len(engine.MARGIN_KEYS)))
    for key in (engine.M_GRIP, engine.M_BAL, engine.M_LIFT, engine.M_LAND, engine.M_CLEAR):
        margins[:, :, key] = np.inf
    return events, margins


def simulate(scene: Scene, params: np.ndarray | None = None) -> Trajectory:
    """Simulate one performer and record every step."""
    timeline, inputs = prepare(scene)
    p = (base_params(scene) if params is None else np.asarray(params, float))[None, :]
    events, margins = _outputs(1, len(scene.actions))
    n = timeline.steps
    rec = np.full((n, len(engine.REC_FIELDS)), np.nan)
    rec_ends = np.zeros((n, body.N_SEGMENTS, 2, 2))
    rec_force = np.zeros((n, body.N_SEGMENTS, 2))
    engine.run_serial(p, inputs, events, margins, True, rec, rec_ends, rec_force)
    return Trajectory(scene, timeline, rec, rec_ends, rec_force, events[0], margins[0], p[0])


def simulate_batch(scene: Scene, params: np.ndarray) -> BatchResult:
    """Simulate many variants (rows of params) of one beat; no per-step record."""
    timeline, inputs = prepare(scene)
    params = np.ascontiguousarray(params, dtype=float)
    events, margins = _outputs(params.shape[0], len(scene.actions))
    empty = np.zeros((1, len(engine.REC_FIELDS)))
    engine.run_batch(params, inputs, events, margins, False, empty,
                     np.zeros((1, body.N_SEGMENTS, 2, 2)), np.zeros((1, body.N_SEGMENTS, 2)))
    return BatchResult(events, margins, params, timeline.steps)
