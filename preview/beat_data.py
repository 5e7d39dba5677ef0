"""The beat as data for other tools: a CSV table and a glTF 2.0 binary (.glb).

CSV: one row per video frame: time and timecode, what the body is doing, every
joint in the car frame and the ground frame, the centre of mass and the main
forces, in the scene's display units (each column names its unit). The first
line is a comment (`#`) with the caution; read it with a reader that skips
comment lines.

glTF 2.0 (the Khronos open standard, binary container): metres, Y up, X along
the track toward the front of the consist, Z to the consist's right. The
consist is a node that moves along the track on the scene's timecode, its cars
simple boxes; structures and overhead lines are boxes fixed in the ground; the
figure's joints (small cubes) and segments (boxes from joint to joint) are
animated in the car frame as children of the consist, so they sit right in the
ground frame too. The model is planar: near limbs are set 0.1 m to one side of
the centreline and far limbs 0.1 m to the other, for the eye only. Lateral
widths of the boxes (CAR_WIDTH, DECK_WIDTH) are drawing values, not physics.

Two performers: the CSV has the shared columns (time, timecode, the consist's travel and speed) once,
then each performer's columns in cast order, each prefixed with its name (`dana_mode`, `dana_com_x_car_m`,
...), with the force from the other performer (`dana_touch_force_x_N`, ..., car axes) and where it acts
(`dana_touch_x_car_m`, ...), empty while none acts. The glTF has a figure node for each, named
`performer: <name>`, the second in its own tone; a one-performer beat's files are as before.
"""

from __future__ import annotations

import csv
import json
import math
import re
import struct
from pathlib import Path

import numpy as np

from physics import body
from physics.records import Mode
from physics.units import to_display
from preview.caution import CAUTION
from preview.palette import PARTNER
from preview.timecode import timecode

# Named joints: (name, segment, end 0 = proximal / 1 = distal).
JOINTS = (
    ("head_top", body.HEAD, 1), ("shoulders", body.TRUNK, 1), ("hips", body.TRUNK, 0),
    ("elbow_near", body.UARM_N, 1), ("hand_near", body.FARM_N, 1),
    ("elbow_far", body.UARM_F, 1), ("hand_far", body.FARM_F, 1),
    ("knee_near", body.THIGH_N, 1), ("ankle_near", body.SHANK_N, 1),
    ("heel_near", body.FOOT_N, 0), ("toe_near", body.FOOT_N, 1),
    ("knee_far", body.THIGH_F, 1), ("ankle_far", body.SHANK_F, 1),
    ("heel_far", body.FOOT_F, 0), ("toe_far", body.FOOT_F, 1),
)
MODE_WORDS = {Mode.PLANTED: "planted", Mode.SLIDING: "sliding", Mode.FLIGHT: "in the air", Mode.DOWN: "down",
              Mode.GONE: "off the consist"}
CAR_WIDTH = 2.8    # m, drawing value (a typical coach or wagon body, from memory)
DECK_WIDTH = 8.0   # m, drawing value for a bridge deck across the track
LIMB_SIDE = 0.1    # m either side of the centreline, for the eye only
FAR = (body.UARM_F, body.FARM_F, body.THIGH_F, body.SHANK_F, body.FOOT_F)
NEAR = (body.UARM_N, body.FARM_N, body.THIGH_N, body.SHANK_N, body.FOOT_N)


def performers(playback) -> list:
    """Each performer's recorded run, in cast order (one for a one-performer beat)."""
    return [playback.trajectory] + list(playback.trajectory.partners)


def slug(name: str) -> str:
    """A performer's name as a column prefix: lower case, runs of anything but letters and digits as '_'."""
    return re.sub(r"[^0-9a-z]+", "_", name.lower()).strip("_") or "performer"


def sample(playback, times: np.ndarray, tr=None) -> dict:
    """The recorded run at the given times (nearest recorded step), car frame, SI (`tr`: the performer's,
    the first by default)."""
    tr = playback.trajectory if tr is None else tr
    idx = np.array([tr.index_at(t) for t in times])
    ends = tr.ends(idx)                                  # (N, 12, 2, 2)
    com = tr.com_path[idx]
    rec = tr.record[idx]
    return {"index": idx, "ends": ends, "com": com, "rec": rec, "distance": rec["distance"],
            "pseudo": tr.pseudo_force_path[idx]}


# ----------------------------------------------------------------------- CSV

def csv_columns(units: str, names=None) -> tuple[list[str], dict]:
    """The CSV's header and its units; `names`: two performers' names, each one's columns prefixed with
    its slug and followed by the force from the other one."""
    length = to_display(1.0, "length", units)[1]
    force = to_display(1.0, "force", units)[1]
    speed = to_display(1.0, "wind", units)[1].replace("/", "")
    shared = ["time_s", "timecode", f"consist_travel_{length}", f"consist_speed_{speed}"]
    body_cols = []
    for joint, _, _ in JOINTS + (("com", None, None),):
        body_cols += [f"{joint}_x_car_{length}", f"{joint}_x_ground_{length}", f"{joint}_z_{length}"]
    body_cols += [f"weight_{force}", f"air_load_x_{force}", f"air_load_z_{force}", f"roof_normal_{force}",
                  f"roof_friction_{force}", f"pseudo_force_{force}", f"apparent_wind_x_{speed}"]
    units_of = {"length": length, "force": force, "speed": speed}
    if not names:
        return shared[:2] + ["mode", "action"] + shared[2:] + body_cols, units_of
    touch = [f"touch_force_{a}_{force}" for a in "xyz"] + [f"touch_{a}_car_{length}" for a in "xyz"]
    out = list(shared)
    for name in names:
        out += [f"{slug(name)}_{c}" for c in ["mode", "action"] + body_cols + touch]
    return out, units_of


def write_csv(playback, times: np.ndarray, path: Path) -> None:
    scene = playback.scene
    units = scene.units
    runs = performers(playback)
    pair = len(runs) > 1
    samples = [sample(playback, times, tr) for tr in runs]
    names, _ = csv_columns(units, [tr.scene.name for tr in runs] if pair else None)
    L = lambda v: to_display(v, "length", units)[0]  # noqa: E731
    F = lambda v: to_display(v, "force", units)[0]  # noqa: E731
    V = lambda v: to_display(v, "wind", units)[0]  # noqa: E731

    def body_row(tr, d, n) -> list:
        r = d["rec"][n]
        s = float(d["distance"][n])
        on_roof = int(r["mode"]) in (Mode.PLANTED, Mode.SLIDING, Mode.DOWN)
        action = tr.scene.actions[int(tr.timeline.steps["action"][d["index"][n]])].label
        row = [MODE_WORDS[Mode(int(r["mode"]))], action]
        points = [d["ends"][n, seg, end] for _, seg, end in JOINTS] + [d["com"][n]]
        for x, z in points:
            row += [_num(L(x)), _num(L(x + s)), _num(L(z))]
        row += [_num(F(tr.weight)), _num(F(float(r["aero_x"]))), _num(F(float(r["aero_z"]))),
                _num(F(float(r["normal"])) if on_roof else 0.0), _num(F(float(r["need_x"])) if on_roof else 0.0),
                _num(F(float(d["pseudo"][n]))), _num(V(float(r["app_x"])))]
        if pair:   # the other performer's force on this body, and where it acts (empty while none does)
            acts = math.isfinite(float(r["touch_x"]))
            row += [_num(F(float(r[f"touch_f{a}"]))) if acts else "" for a in "xyz"]
            row += [_num(L(float(r[f"touch_{a}"]))) for a in "xyz"]
        return row

    with open(path, "w", newline="", encoding="utf-8") as f:
        who = f" ({' and '.join(tr.scene.name for tr in runs)})" if pair else ""
        f.write(f"# roofbeat beat data: {scene.title}{who}; {len(times)} rows at the video frame rate; "
                f"CAUTION: {CAUTION}\n")
        w = csv.writer(f)
        w.writerow(names)
        first = samples[0]
        for n, t in enumerate(times):
            s = float(first["distance"][n])
            shared = [_num(L(s)), _num(V(float(first["rec"][n]["speed"])))]
            parts = [body_row(tr, d, n) for tr, d in zip(runs, samples)]
            if pair:
                row = [f"{t:.4f}", timecode(t, scene.frame_rate)] + shared + [v for p in parts for v in p]
            else:
                row = [f"{t:.4f}", timecode(t, scene.frame_rate)] + parts[0][:2] + shared + parts[0][2:]
            w.writerow(row)


def _num(v: float) -> str:
    return f"{v:.4f}" if math.isfinite(v) else ""


# ---------------------------------------------------------------------- glTF

class _Builder:
    """Just enough of glTF 2.0 to write boxes, nodes and animations into one binary buffer."""

    def __init__(self):
        self.doc = {"asset": {"version": "2.0"}, "scenes": [{"nodes": []}], "scene": 0, "nodes": [],
                    "meshes": [], "materials": [], "accessors": [], "bufferViews": [], "buffers": [],
                    "animations": []}
        self.blob = bytearray()

    def view(self, data: bytes, target: int | None = None) -> int:
        while len(self.blob) % 4:
            self.blob.append(0)
        entry = {"buffer": 0, "byteOffset": len(self.blob), "byteLength": len(data)}
        if target:
            entry["target"] = target
        self.blob.extend(data)
        self.doc["bufferViews"].append(entry)
        return len(self.doc["bufferViews"]) - 1

    def accessor(self, array: np.ndarray, kind: str, target: int | None = None, bounds: bool = False) -> int:
        comp = 5125 if array.dtype == np.uint32 else 5126
        entry = {"bufferView": self.view(array.tobytes(), target), "componentType": comp,
                 "count": int(array.shape[0]), "type": kind}
        if bounds:
            flat = array.reshape(array.shape[0], -1)
            entry["min"] = [float(v) for v in flat.min(axis=0)]
            entry["max"] = [float(v) for v in flat.max(axis=0)]
        self.doc["accessors"].append(entry)
        return len(self.doc["accessors"]) - 1

    def material(self, name: str, rgb) -> int:
        self.doc["materials"].append({"name": name, "pbrMetallicRoughness": {
            "baseColorFactor": [c / 255.0 for c in rgb] + [1.0], "metallicFactor": 0.0, "roughnessFactor": 0.9}})
        return len(self.doc["materials"]) - 1

    def box_mesh(self, name: str, lo, hi, material: int) -> int:
        (x0, y0, z0), (x1, y1, z1) = lo, hi
        corners = np.array([[x, y, z] for x in (x0, x1) for y in (y0, y1) for z in (z0, z1)], np.float32)
        faces = [(0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3)]
        idx = np.array([i for a, b, c, d in faces for i in (a, b, c, a, c, d)], np.uint32)
        pos = self.accessor(corners, "VEC3", 34962, bounds=True)
        ind = self.accessor(idx, "SCALAR", 34963)
        self.doc["meshes"].append({"name": name, "primitives": [{"attributes": {"POSITION": pos}, "indices": ind,
                                                                 "material": material}]})
        return len(self.doc["meshes"]) - 1

    def node(self, name: str, mesh: int | None = None, translation=None, parent: int | None = None) -> int:
        entry = {"name": name}
        if mesh is not None:
            entry["mesh"] = mesh
        if translation is not None:
            entry["translation"] = [float(v) for v in translation]
        self.doc["nodes"].append(entry)
        n = len(self.doc["nodes"]) - 1
        if parent is None:
            self.doc["scenes"][0]["nodes"].append(n)
        else:
            self.doc["nodes"][parent].setdefault("children", []).append(n)
        return n

    def glb(self) -> bytes:
        while len(self.blob) % 4:
            self.blob.append(0)
        self.doc["buffers"] = [{"byteLength": len(self.blob)}]
        text = json.dumps(self.doc, separators=(",", ":")).encode()
        text += b" " * (-len(text) % 4)
        total = 12 + 8 + len(text) + 8 + len(self.blob)
        return (struct.pack("<III", 0x46546C67, 2, total) + struct.pack("<II", len(text), 0x4E4F534A) + text
                + struct.pack("<II", len(self.blob), 0x004E4942) + bytes(self.blob))


def _held(values: np.ndarray) -> np.ndarray:
    """NaN samples (no body position) hold the last finite one (the first finite one at the start)."""
    out = values.copy()
    bad = ~np.isfinite(out).all(axis=-1)
    if bad.all():
        return np.zeros_like(out)
    good = np.flatnonzero(~bad)
    fill = np.searchsorted(good, np.arange(len(out)), side="right") - 1
    fill = np.where(fill < 0, 0, fill)
    return out[good[fill]]


def write_glb(playback, times: np.ndarray, path: Path) -> None:
    from preview import __version__
    from preview.palette import CAR_BODY, FAILURE, INK, STRUCTURE, TRAIL
    scene = playback.scene
    d = sample(playback, times)
    g = _Builder()
    g.doc["asset"].update({"generator": f"roofbeat {__version__}", "copyright": "",
                           "extras": {"title": scene.title, "caution": CAUTION,
                                      "frame_rate": scene.frame_rate, "duration_s": float(times[-1])}})
    car_m, deck_m, line_m = g.material("car", CAR_BODY), g.material("structure", STRUCTURE), g.material("line", FAILURE)
    body_m, joint_m = g.material("performer", INK), g.material("joint", TRAIL)
    runs = performers(playback)
    t = np.asarray(times, np.float32)
    t_acc = g.accessor(t, "SCALAR", bounds=True)
    channels, samplers = [], []

    def animate(node: int, path_name: str, values: np.ndarray, kind: str) -> None:
        samplers.append({"input": t_acc, "output": g.accessor(values.astype(np.float32), kind),
                         "interpolation": "LINEAR"})
        channels.append({"sampler": len(samplers) - 1, "target": {"node": node, "path": path_name}})

    # Ground: structures and lines, fixed.
    for s in scene.structures:
        mesh = g.box_mesh(s.name, (s.x_start, s.soffit, -DECK_WIDTH / 2), (s.x_start + s.span, s.soffit + 1.2,
                                                                            DECK_WIDTH / 2), deck_m)
        g.node(f"structure: {s.name}", mesh)
    for k, line in enumerate(scene.lines):
        mesh = g.box_mesh(f"line {k + 1}", (line.x_start, line.wire_height - 0.02, -0.02),
                          (line.x_end, line.wire_height + 0.02, 0.02), line_m)
        g.node(f"overhead line {k + 1}", mesh)
    # The consist moves along the track; the cars and the figure ride in it (car frame).
    consist = g.node("consist", translation=(0.0, 0.0, 0.0))
    animate(consist, "translation", np.stack([d["distance"], np.zeros(len(t)), np.zeros(len(t))], -1), "VEC3")
    for car in scene.cars:
        mesh = g.box_mesh(car.name, (car.rear_x, car.body_bottom, -CAR_WIDTH / 2),
                          (car.front_x, car.roof_height, CAR_WIDTH / 2), car_m)
        g.node(f"car: {car.name}", mesh, parent=consist)
    if len(runs) > 1:   # two performers: a figure node each, the second's segments in its own tone
        cube = bone = None
        for k, tr in enumerate(runs):
            figure = g.node(f"performer: {tr.scene.name}", parent=consist)
            if k == 1:
                bone = g.box_mesh("segment", (-0.025, 0.0, -0.025), (0.025, 1.0, 0.025),
                                  g.material("second performer", PARTNER))
            cube, _ = _figure(g, animate, figure, sample(playback, times, tr), len(t), body_m, joint_m,
                              f"{tr.scene.name} ", cube, bone)
    else:
        _figure(g, animate, g.node("performer", parent=consist), d, len(t), body_m, joint_m, "")
    g.doc["animations"].append({"name": "beat", "channels": channels, "samplers": samplers})
    Path(path).write_bytes(g.glb())


def _figure(g, animate, figure: int, d: dict, count: int, body_m: int, joint_m: int, prefix: str, cube=None,
            bone=None) -> tuple[int, int]:
    """One performer's joints (cubes) and segments (boxes from joint to joint) under its figure node,
    animated from the sampled run `d`; `prefix` goes before each node's name. The joint and segment meshes
    are made here unless given (as the one-performer file always made them); returned for the next."""
    if cube is None:
        cube = g.box_mesh("joint", (-0.03, -0.03, -0.03), (0.03, 0.03, 0.03), joint_m)
    side = {s: (LIMB_SIDE if s in NEAR else -LIMB_SIDE if s in FAR else 0.0) for s in range(body.N_SEGMENTS)}
    for name, seg, end in JOINTS:
        node = g.node(f"{prefix}{name}", cube, parent=figure)
        xz = _held(d["ends"][:, seg, end])
        animate(node, "translation", np.stack([xz[:, 0], xz[:, 1], np.full(count, side[seg])], -1), "VEC3")
    if bone is None:
        bone = g.box_mesh("segment", (-0.025, 0.0, -0.025), (0.025, 1.0, 0.025), body_m)
    for seg, name in enumerate(body.SEGMENTS):
        node = g.node(f"{prefix}segment: {name}", bone, parent=figure)
        a, b = _held(d["ends"][:, seg, 0]), _held(d["ends"][:, seg, 1])
        dx, dz = b[:, 0] - a[:, 0], b[:, 1] - a[:, 1]
        length = np.maximum(np.hypot(dx, dz), 1e-4)
        theta = np.arctan2(-dx, dz)   # turns +Y onto the segment's direction about Z
        animate(node, "translation", np.stack([a[:, 0], a[:, 1], np.full(count, side[seg])], -1), "VEC3")
        animate(node, "rotation", np.stack([np.zeros(count), np.zeros(count), np.sin(theta / 2),
                                            np.cos(theta / 2)], -1), "VEC4")
        animate(node, "scale", np.stack([np.ones(count), length, np.ones(count)], -1), "VEC3")
    return cube, bone


def beat_times(scene, fps: float, t_from: float | None, t_to: float | None) -> np.ndarray:
    """Video frame times over the part asked for, ending exactly at its end (the beat's duration by default)."""
    from preview.export import frame_times
    times = frame_times(scene.duration, fps, t_from, t_to)
    stop = min(scene.duration, t_to if t_to is not None else scene.duration)
    if stop - times[-1] > 1e-9:
        times = np.append(times, stop)
    return times
