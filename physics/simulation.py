"""Run a scene: build its input tables and per-variant parameters, call the kernel,
and read the results by name.

`simulate(scene)` returns a recorded Trajectory of one performer for the
preview and the report; `simulate_batch(scene, variants)` runs many variants at
once (sweeps, Monte Carlo, what-ifs) and returns only events and outcomes. Both
call the same compiled kernel (physics.engine.driver.run_variants); batches run
in chunks on a thread pool, since the kernel releases the GIL.

The kernel records physical state, loads and its own assessment; geometry (the
segment ends, the centre of mass on the roof, the support) and ratios are
derived here in numpy.
"""

from __future__ import annotations

import functools
import math
import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from physics import G, air, body, partners, roof_air, track
from physics.beat import Timeline, build_timeline
from physics.engine import driver, jit
from physics.records import (BODY, CAR, LINE, PARAMS, RECORD, STRUCTURE, TETHER, Inputs, empty_events,
                             empty_link_out, empty_outcomes, empty_tether_out)
from physics.scene import Scene


@dataclass(frozen=True)
class Variants:
    """Rows of per-variant parameters (records.PARAMS) and roof friction multipliers per car."""

    params: np.ndarray      # (B,) records.PARAMS
    roof_scale: np.ndarray  # (B, cars)

    def __len__(self) -> int:
        return self.params.size

    def row(self, b: int) -> "Variants":
        return Variants(self.params[b:b + 1].copy(), self.roof_scale[b:b + 1].copy())


@dataclass(frozen=True)
class BatchResult:
    events: np.ndarray    # (B, events) records.EVENT
    outcomes: np.ndarray  # (B, actions) records.OUTCOME
    variants: Variants
    steps: int
    tethers: np.ndarray = None   # (B, tethers) records.TETHER_OUT
    pair: "PairRun" = None       # two performers: each one's own events and outcomes


@dataclass(frozen=True)
class Trajectory:
    """One recorded run: every step's state, loads and assessment (records.RECORD), car frame, SI."""

    scene: Scene
    timeline: Timeline
    record: np.ndarray    # (T,) records.RECORD
    events: np.ndarray    # (events,) records.EVENT: the first of each kind
    outcomes: np.ndarray  # (actions,) records.OUTCOME
    variant: Variants     # the one variant that ran
    tethers: np.ndarray = None   # (tethers,) records.TETHER_OUT: each tether's peaks and absorber pay-out
    partners: tuple = ()         # two performers: the other one's Trajectory (on the first one's)
    links: np.ndarray = None     # two performers: (links,) records.LINK_OUT, what each interaction did
    _ends: dict = field(default_factory=dict, compare=False, repr=False)   # ends3 of single steps, by index

    def field(self, name: str) -> np.ndarray:
        return self.record[name]

    @property
    def params(self) -> np.void:
        return self.variant.params[0]

    @property
    def times(self) -> np.ndarray:
        return self.timeline.times

    def index_at(self, t: float) -> int:
        return int(np.clip(round(t / self.scene.step), 0, self.times.size - 1))

    @property
    def on_roof(self) -> np.ndarray:
        return np.isfinite(self.record["pivot_x"])

    @functools.cached_property
    def com_path(self) -> np.ndarray:
        """(T, 2) centre of mass, car frame (m): the leaned posture on the roof, the flight state in the air."""
        return self.com_path3[:, [0, 2]]

    @functools.cached_property
    def com_path3(self) -> np.ndarray:
        """(T, 3) centre of mass (x along, y across from the roofs' centreline, z up), car frame (m)."""
        rec, postures = self.record, self.timeline.postures
        c, s = np.cos(rec["lean"]), np.sin(rec["lean"])
        cx, cz = postures["com_x"][rec["row"]], postures["com_z"][rec["row"]]
        on_roof = self.on_roof
        up = -cx * s + cz * c
        roll = np.nan_to_num(rec["roll"])
        x = np.where(on_roof, rec["pivot_x"] + cx * c + cz * s, rec["flight_x"])
        y = np.where(on_roof, rec["pivot_y"] + up * np.sin(roll), rec["flight_y"])
        z = np.where(on_roof, rec["contact_z"] + up * np.cos(roll), rec["flight_z"])
        return np.stack([x, y, z], axis=-1)

    def ends(self, index=None) -> np.ndarray:
        """Segment endpoints as the side view shows them, car frame (m): (12, 2, 2) at one step index,
        or (T, 12, 2, 2) for all; a sideways lean shortens the figure as seen from the side."""
        return self.ends3(index)[..., [0, 2]]

    def ends3(self, index=None) -> np.ndarray:
        """Segment endpoints (x along, y across, z up), car frame (m): (12, 2, 3) or (T, 12, 2, 3).

        The figure is one plane along the track; across it the limbs stand out to
        the shoulders and hips and the feet to the support's half-width (near
        limbs toward the right-hand side, from which the side view looks), and the
        whole leaning body turns sideways by the roll about its contact line (in
        the air about its centre of mass).
        """
        if index is not None and np.ndim(index) == 0:
            key = int(index)
            if key not in self._ends:
                if len(self._ends) > 4096:
                    self._ends.clear()
                self._ends[key] = self._ends3(np.atleast_1d(key))[0]
                self._ends[key].flags.writeable = False
            return self._ends[key]
        return self._ends3(np.arange(self.times.size) if index is None else np.atleast_1d(index))

    def _ends3(self, idx) -> np.ndarray:
        rec = self.record[idx]
        posture = self.timeline.postures[rec["row"]]
        c, s = np.cos(rec["lean"])[:, None, None], np.sin(rec["lean"])[:, None, None]
        on_roof = np.isfinite(rec["pivot_x"])[:, None, None]
        pts = posture["ends"]
        # On the roof segments that lean turn about the pivot; in the air the
        # whole posture turns about its centre of mass.
        com0 = np.stack([posture["com_x"], posture["com_z"]], axis=-1)[:, None, None, :]
        rel = np.where(on_roof[..., None], pts, pts - com0)
        x = rel[..., 0] * c + rel[..., 1] * s
        z = -rel[..., 0] * s + rel[..., 1] * c
        stays = on_roof & (posture["rotates"][:, :, None] == 0)  # feet (and shanks) held on the roof
        x = np.where(stays, rel[..., 0], x)
        z = np.where(stays, rel[..., 1], z)
        y = self._across(posture)
        roll = np.nan_to_num(rec["roll"])[:, None, None]
        y, z = (np.where(stays, y, y * np.cos(roll) + z * np.sin(roll)),
                np.where(stays, z, -y * np.sin(roll) + z * np.cos(roll)))
        base_x = np.where(on_roof[:, 0, 0], rec["pivot_x"], rec["flight_x"])[:, None, None]
        base_y = np.where(on_roof[:, 0, 0], rec["pivot_y"], rec["flight_y"])[:, None, None]
        base_z = np.where(on_roof[:, 0, 0], rec["contact_z"], rec["flight_z"])[:, None, None]
        # On the roof the rigid lean can take a forward-reaching lower leg of a gait (or a posture just
        # after a recovery step) below the roof; such a point is shown on the roof (the knee bends).
        z = np.where(on_roof, np.maximum(z, 0.0), z)
        out = np.stack([x + base_x, y + base_y, z + base_z], axis=-1)
        # Feet and shanks held on a crowned roof stand on it where they are across it, not at the
        # height of the roof under the pivot line.
        for car in self.scene.cars:
            on_car = stays & ((rec["pivot_x"] >= car.rear_x) & (rec["pivot_x"] <= car.front_x))[:, None, None]
            out[..., 2] += np.where(on_car, car.roof_z(out[..., 1]) - base_z, 0.0)
        return out

    def _across(self, posture) -> np.ndarray:
        """(R, 12, 2) where each segment end stands across the body (m, + left), before the roll."""
        stature = self.scene.performer.stature
        shoulder, hip = body.SHOULDER_HALF * stature, body.HIP_HALF * stature
        foot = np.maximum(hip, posture["half_width"] - 0.5 * body.FOOT_WIDTH * stature)[:, None]
        y = np.zeros((len(posture), body.N_SEGMENTS, 2))
        for near, sign in ((True, -1.0), (False, 1.0)):
            arm = (body.UARM_N, body.FARM_N) if near else (body.UARM_F, body.FARM_F)
            thigh, shank, foot_seg = ((body.THIGH_N, body.SHANK_N, body.FOOT_N) if near
                                      else (body.THIGH_F, body.SHANK_F, body.FOOT_F))
            y[:, arm[0], :] = sign * shoulder
            y[:, arm[1], :] = sign * shoulder
            y[:, thigh, 0] = sign * hip
            y[:, thigh, 1] = sign * 0.5 * (hip + foot[:, 0])
            y[:, shank, 0] = sign * 0.5 * (hip + foot[:, 0])
            y[:, shank, 1] = sign * foot[:, 0]
            y[:, foot_seg, :] = sign * foot
        return y

    def overhead_gap(self, index: int) -> tuple[float, str | None]:
        """Overhead clearance at one step (m) and what it is measured to: the engine's definition
        (engine.overhead: the smallest gap of any body point to a soffit or to the edge of a line's
        exclusion zone above it) applied to the recorded pose; (inf, None) with nothing overhead."""
        pts = self.ends(index).reshape(-1, 2)
        if not np.isfinite(pts).all():
            return math.inf, None
        xg = pts[:, 0] + float(self.record["distance"][index])
        best, name = math.inf, None
        for s in self.scene.structures:
            over = (xg >= s.x_start) & (xg <= s.x_start + s.span)
            if over.any():
                gap = float(np.min(s.soffit - pts[over, 1]))
                if gap < best:
                    best, name = gap, s.name
        for line in self.scene.lines:
            over = (xg >= line.x_start) & (xg <= line.x_end)
            if over.any():
                gap = float(np.min(line.wire_height - pts[over, 1] - line.exclusion))
                if gap < best:
                    best, name = gap, "overhead line exclusion zone"
        return best, name

    def support(self) -> np.ndarray:
        """(T, 2) rear and front edge of the support incl. a recovery step, car frame (m); NaN off the roof."""
        return self.record["pivot_x"][:, None] + np.stack([self.record["support_lo"], self.record["support_hi"]], -1)

    def segment_forces(self, index: int) -> np.ndarray:
        """(12, 2) aerodynamic force on each segment (x, z), N, at one step: the kernel's cross-flow rule in numpy."""
        r = self.record[index]
        if not np.isfinite(r["app_x"]):
            return np.zeros((body.N_SEGMENTS, 2))
        p = self.params
        constants = body.body_constants(self.scene.performer.stature)
        posture = self.timeline.postures[r["row"]]
        if self.scene.performer.body_model == "lumped":
            return np.zeros((body.N_SEGMENTS, 2))
        half = 0.5 * p["density"] * p["drag_scale"]
        wx, wy = self.segment_winds(index, posture)
        return body.segment_air_forces(posture["axes"], float(r["lean"]), (wx, wy, r["app_z"]),
                                       half * constants.crossflow_area, half * constants.axial_area)

    def air_share(self, index: int, heights) -> np.ndarray:
        """The share of the air's velocity relative to the car kept at `heights` (m above the roof under the
        body) at one step: the engine's air over the roof (1 where it is off or uniform)."""
        r, flow = self.record[index], self.scene.air.roof_flow
        if flow is None or not np.isfinite(r["flow_delta"]):
            return np.ones_like(np.asarray(heights, dtype=float))
        return roof_air.share(heights, float(r["flow_delta"]), flow.power, float(r["flow_gain"]),
                              float(r["flow_zone"]), flow.low_speed_share)

    def segment_winds(self, index: int, posture=None) -> tuple[np.ndarray, np.ndarray]:
        """(12,) each segment's apparent wind along and across the track (m/s) at one step: the recorded
        apparent wind taken at each midpoint's height in the air over the roof."""
        r = self.record[index]
        posture = self.timeline.postures[r["row"]] if posture is None else posture
        c, s = np.cos(r["lean"]), np.sin(r["lean"])
        heights = r["flow_base"] - posture["axes"][:, 0] * s + posture["axes"][:, 1] * c
        f = self.air_share(index, heights) - 1.0
        return r["app_x"] + f * (r["wind_x"] - r["speed"]), r["app_y"] + f * r["wind_y"]

    @functools.cached_property
    def pseudo_force_path(self) -> np.ndarray:
        """(T,) the car frame's pseudo-force on the whole body, -m dV/dt (N)."""
        return -self.params["mass"] * self.timeline.steps["accel"] * self.params["speed_scale"]

    @property
    def weight(self) -> float:
        return float(self.params["mass"] * G)


def drag_calibration(scene: Scene) -> float:
    """Factor on the segment drag so the standing figure has the scene's drag area.

    1.0 when the scene gives none (the segment table's own coefficients) and for
    the lumped body, whose drag area is the scene's own.
    """
    if scene.performer.drag_area is None or scene.performer.body_model == "lumped":
        return 1.0
    return scene.performer.drag_area / body.standing_drag_area(scene.performer.stature)


def base_params(scene: Scene) -> np.ndarray:
    """The scene's own variant: a (1,) records.PARAMS array."""
    p = np.zeros(1, PARAMS)
    wind_x, wind_y = air.wind_vector(scene.air.wind_speed, scene.air.wind_from)
    turb = scene.air.turbulence
    values = {
        "speed_scale": 1.0, "wind_x": wind_x, "wind_y": wind_y, "density": scene.air.density,
        "mass": scene.performer.mass, "drag_scale": drag_calibration(scene),
        "reaction_time": scene.performer.reaction_time, "turbulence_sigma": turb.intensity if turb else 0.0,
        "turbulence_length": turb.length_scale if turb else 1.0, "turbulence_seed": turb.seed if turb else 0,
        "gust_scale": 1.0, "max_lean": scene.performer.max_lean, "recovery_step": scene.performer.recovery_step,
        "start_x": scene.start_x, "start_y": scene.start_y, "takeoff_scale": 1.0,
        "flexibility": scene.flexibility,
    }
    for name in PARAMS.names:
        p[name] = values[name]
    return p


def variants(scene: Scene, count: int = 1) -> Variants:
    """`count` copies of the scene's own variant, to be changed by name."""
    return Variants(np.repeat(base_params(scene), count), np.ones((count, len(scene.cars))))


@functools.lru_cache(maxsize=4)
def prepare(scene: Scene) -> tuple[Timeline, Inputs]:
    """The state-independent timeline and kernel inputs of a scene, built once.

    Sweeps, their root finding, Monte Carlo batches and the window's what-if keys
    re-run one scene many times with other per-variant parameters only; the
    scene is frozen and hashable, so they all share this work. The arrays are
    read by the kernel, never written.
    """
    return build_inputs(scene)


def build_inputs(scene: Scene) -> tuple[Timeline, Inputs]:
    """The timeline and kernel inputs of a scene, built afresh (for scenes made to be run once)."""
    timeline = build_timeline(scene)
    cars = _table(CAR, scene.cars, roof_air.car_fields(scene.air.roof_flow, scene.cars))
    structures = _table(STRUCTURE, scene.structures)
    lines = _table(LINE, scene.lines)
    constants = body.body_constants(scene.performer.stature)
    drag = np.zeros(1, BODY)
    drag["crossflow_area"] = constants.crossflow_area
    drag["axial_area"] = constants.axial_area
    drag["side_area"] = constants.side_area
    drag["lumped_side_ratio"] = body.side_ratio(scene.performer.stature)
    drag["lumped"] = scene.performer.body_model == "lumped"
    drag["lumped_drag_area"] = scene.performer.drag_area if scene.performer.body_model == "lumped" else 0.0
    drag["lying_row"] = timeline.lying_row
    inputs = Inputs(timeline.steps, timeline.postures, timeline.actions, cars, structures, lines, drag,
                    track.pieces(scene.track), roof_air.airflow_row(scene.air.roof_flow, scene.air),
                    tether_table(scene))
    for table in inputs:
        table.flags.writeable = False
    return timeline, inputs


def tether_table(scene: Scene) -> np.ndarray:
    """The rigging as the kernel reads it (records.TETHER), with the scene's limits on each tether."""
    table = np.zeros(len(scene.rigging), TETHER)
    for i, t in enumerate(scene.rigging):
        for name in ("anchor_x", "anchor_y", "anchor_z", "line_x0", "line_x1", "running", "length", "stiffness",
                     "damping_ratio", "deploy_force", "max_extension", "sag"):
            table[i][name] = getattr(t, name)
        table[i]["body_limit"] = scene.safety.arrest_force
        table[i]["anchor_limit"] = scene.safety.anchor_load
    return table


def _table(dtype: np.dtype, items, columns=None) -> np.ndarray:
    """An input table from scene items: each field filled from the item's attribute of that name, or
    from `columns` (a dict of whole columns) where it names the field."""
    columns = columns or {}
    table = np.zeros(len(items), dtype)
    for name in dtype.names:
        table[name] = columns[name] if name in columns else [getattr(item, name) for item in items]
    return table


def _threads() -> int:
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:
        return max(1, os.cpu_count() or 1)


def _python_views(args):
    """Structured arrays as recarrays, so the plain-Python engine reads fields by attribute as numba does."""
    def view(a):
        if isinstance(a, np.ndarray) and a.dtype.names:
            return a.view(np.recarray)
        if isinstance(a, Inputs):
            return Inputs(*(view(x) for x in a))
        return a
    return [view(a) for a in args]


def run_kernel(v: Variants, inputs: Inputs, events, outcomes, record, tethers, chunks: int = 1) -> None:
    """Call the one-performer kernel over all variants, in `chunks` on a thread pool."""
    params = np.ascontiguousarray(v.params)
    roof_scale = np.ascontiguousarray(v.roof_scale, dtype=float)
    width = _scratch_width(params, inputs)

    def args(first, last):
        return [params, roof_scale, inputs, first, last, events, outcomes, record, np.zeros((9, width)), tethers]
    _call(driver.run_variants, params.size, args, chunks)


def _scratch_width(params: np.ndarray, inputs: Inputs) -> int:
    step = float(inputs.steps["time"][1] - inputs.steps["time"][0])
    delays = int(np.max(np.round(params["reaction_time"] / step))) + 1
    return max(delays, inputs.body["crossflow_area"].shape[1])


def _call(entry, count: int, args, chunks: int) -> None:
    """Run a kernel entry over `count` rows, args(first, last) giving each call's arguments (with its own
    working memory): at once, or in `chunks` on a thread pool; in plain Python where numba cannot run."""
    if jit.will_compile(entry):
        jit.notice("preparing the engine (first run only, about ten seconds)")
    jit.explain_plain_python()
    if not jit.compiled():
        with np.errstate(over="ignore"):
            entry(*_python_views(args(0, count)))
        return
    if chunks <= 1 or count < 2:
        jit.even_unsaved(entry, *args(0, count))
        return
    bounds = np.linspace(0, count, min(chunks, count) + 1).astype(int)
    with ThreadPoolExecutor(max_workers=_threads()) as pool:
        jobs = [pool.submit(jit.even_unsaved, entry, *args(int(a), int(b)))
                for a, b in zip(bounds[:-1], bounds[1:]) if b > a]
        for job in jobs:
            job.result()


@dataclass(frozen=True)
class PairRun:
    """What a run of two performers gives: per performer (cast order) its events (B, kinds) and
    outcomes (B, its actions) and, recorded, its record; what each interaction did (B, links); the
    kernel's rows (pair_params) and each performer's timeline."""

    events: tuple
    outcomes: tuple
    records: tuple
    links: np.ndarray
    rows: "Variants" = None
    timelines: tuple = ()


def pair_params(scene: Scene, v: Variants) -> Variants:
    """The kernel's rows for two performers: each variant's row for the first performer and, after it,
    the same row with the second performer's own body, start and facing-free values."""
    second = base_params(scene.cast[1])[0]
    params = np.repeat(np.ascontiguousarray(v.params), 2)
    for name in PERFORMER_FIELDS:
        params[name][1::2] = second[name]
    return Variants(params, np.repeat(np.ascontiguousarray(v.roof_scale, dtype=float), 2, axis=0))


# The PARAMS fields that belong to one performer (the rest are the beat's: consist, air, effort).
PERFORMER_FIELDS = ("mass", "drag_scale", "reaction_time", "max_lean", "recovery_step", "start_x", "start_y")


def run_pair(scene: Scene, v: Variants, recorded: bool, chunks: int = 1) -> PairRun:
    """Run the two performers of `scene` for every variant of v, together (driver.run_pairs)."""
    ta, ia = prepare(scene.cast[0])
    tb, ib = prepare(scene.cast[1])
    rows = pair_params(scene, v)
    params, roof_scale = rows.params, rows.roof_scale
    count = len(v)
    events = empty_events(2 * count)
    outcomes = empty_outcomes(2 * count, max(len(c.actions) for c in scene.cast))
    tethers = empty_tether_out(2 * count, 0)
    links = partners.link_table(scene)
    link_out = empty_link_out(count, len(links))
    size = ta.size if recorded else 0
    record_a, record_b = np.zeros(size, RECORD), np.zeros(size, RECORD)
    width = max(_scratch_width(params, ia), _scratch_width(params, ib))

    def args(first, last):
        return [params, roof_scale, ia, ib, links, first, last, events, outcomes, record_a, record_b,
                np.zeros((9, width)), np.zeros((9, width)), tethers, link_out]
    _call(driver.run_pairs, count, args, chunks)
    counts = [len(c.actions) for c in scene.cast]
    return PairRun((events[0::2], events[1::2]), (outcomes[0::2, :counts[0]], outcomes[1::2, :counts[1]]),
                   (record_a, record_b), link_out, rows, (ta, tb))


def simulate(scene: Scene, variant: Variants | None = None) -> Trajectory:
    """Simulate one performer (the scene's own variant unless given) and record every step. With two
    performers: the first one's Trajectory, the second's in its `partners`."""
    timeline, inputs = prepare(scene.performers[0])
    v = variants(scene) if variant is None else variant.row(0)
    if scene.pair:
        run = run_pair(scene, v, recorded=True)
        other = Trajectory(scene.cast[1], run.timelines[1], run.records[1], run.events[1][0], run.outcomes[1][0],
                           Variants(run.rows.params[1:2], v.roof_scale), tethers=empty_tether_out(1, 0)[0],
                           links=run.links[0])
        return Trajectory(scene, timeline, run.records[0], run.events[0][0], run.outcomes[0][0], v,
                          tethers=empty_tether_out(1, 0)[0], partners=(other,), links=run.links[0])
    events, outcomes = empty_events(1), empty_outcomes(1, len(scene.actions))
    record = np.zeros(timeline.size, RECORD)
    tethers = empty_tether_out(1, len(scene.rigging))
    run_kernel(v, inputs, events, outcomes, record, tethers)
    return Trajectory(scene, timeline, record, events[0], outcomes[0], v, tethers=tethers[0])


def simulate_batch(scene: Scene, v: Variants, once: bool = False) -> BatchResult:
    """Simulate many variants of one beat; no per-step record. `once`: a scene made to be run
    once (a trial of a search), whose inputs are not kept for later runs."""
    if scene.pair:
        return pair_batch(scene, v)
    timeline, inputs = build_inputs(scene) if once else prepare(scene)
    events, outcomes = empty_events(len(v)), empty_outcomes(len(v), len(scene.actions))
    tethers = empty_tether_out(len(v), len(scene.rigging))
    run_kernel(v, inputs, events, outcomes, np.zeros(0, RECORD), tethers, chunks=4 * _threads())
    return BatchResult(events, outcomes, v, timeline.size, tethers)


def pair_batch(scene: Scene, v: Variants) -> BatchResult:
    """A batch of a two-performer beat, read as one beat (physics.verdict.beat_actions): each event the
    earlier of the two performers' and the actions of both, the first performer's then the second's,
    so a verdict is the worse of the two and a margin the smaller. `pair` keeps each one's own."""
    run = run_pair(scene, v, recorded=False, chunks=4 * _threads())
    events = run.events[0].copy()
    later = np.isnan(events["time"]) | (run.events[1]["time"] < events["time"])
    events[later] = run.events[1][later]
    outcomes = np.concatenate(run.outcomes, axis=1)
    return BatchResult(events, outcomes, v, run.timelines[0].size, empty_tether_out(len(v), 0), pair=run)
