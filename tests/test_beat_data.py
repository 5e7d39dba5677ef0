"""The beat as data: `render -o beat.csv` and `render -o beat.glb`, read back by independent readers
(Python's csv module; pygltflib, a general-purpose glTF 2.0 library from the registry)."""

from __future__ import annotations

import csv

import numpy as np
import pytest

from physics import body
from physics.scene_load import load_scene
from preview.cli import main
from tests.conftest import REPO

SCENE = REPO / "scenes" / "gap_crossing_rearward.toml"


@pytest.fixture(scope="module")
def trajectory():
    from physics.simulation import simulate
    return simulate(load_scene(SCENE))


def read_csv(path):
    with open(path, newline="", encoding="utf-8") as f:
        lines = [line for line in f if not line.startswith("#")]
    return list(csv.DictReader(lines))


def test_csv_has_every_joint_in_both_frames_per_video_frame(tmp_path, trajectory):
    out = tmp_path / "beat.csv"
    assert main(["render", str(SCENE), "-o", str(out)]) == 0
    first_line = out.read_text(encoding="utf-8").splitlines()[0]
    assert first_line.startswith("# roofbeat beat data") and "not a safety certificate" in first_line
    rows = read_csv(out)
    scene = trajectory.scene
    assert len(rows) == int(scene.duration * scene.frame_rate) + 1
    assert float(rows[-1]["time_s"]) == pytest.approx(scene.duration)
    modes = {r["mode"] for r in rows}
    assert {"planted", "in the air"} <= modes
    k = next(i for i, r in enumerate(rows) if r["mode"] == "in the air")
    t = float(rows[k]["time_s"])
    i = trajectory.index_at(t)
    ends = trajectory.ends(i)
    s = trajectory.field("distance")[i]
    hips, toe = ends[body.TRUNK, 0], ends[body.FOOT_F, 1]
    assert float(rows[k]["hips_x_car_m"]) == pytest.approx(hips[0], abs=1e-3)
    assert float(rows[k]["hips_x_ground_m"]) == pytest.approx(hips[0] + s, abs=1e-3)
    assert float(rows[k]["toe_far_z_m"]) == pytest.approx(toe[1], abs=1e-3)
    assert float(rows[k]["weight_N"]) == pytest.approx(trajectory.weight, abs=1e-3)
    assert rows[k]["roof_normal_N"] == "0.0000"   # in the air the roof pushes on nothing


def test_csv_in_imperial_names_and_converts_its_units(tmp_path, trajectory):
    out = tmp_path / "beat.csv"
    assert main(["render", str(SCENE), "-o", str(out), "--units", "imperial", "--from", "2", "--to", "3"]) == 0
    rows = read_csv(out)
    assert "hips_x_car_ft" in rows[0] and "weight_lbf" in rows[0] and "consist_speed_mph" in rows[0]
    i = trajectory.index_at(float(rows[0]["time_s"]))
    assert float(rows[0]["hips_z_ft"]) == pytest.approx(trajectory.ends(i)[body.TRUNK, 0, 1] / 0.3048, abs=1e-3)
    assert float(rows[0]["weight_lbf"]) == pytest.approx(trajectory.weight / 4.4482216152605, abs=1e-3)


def test_gltf_loads_in_a_general_purpose_reader_and_runs_the_beats_duration(tmp_path, trajectory):
    import pygltflib
    out = tmp_path / "beat.glb"
    assert main(["render", str(SCENE), "-o", str(out)]) == 0
    gltf = pygltflib.GLTF2().load(str(out))
    assert gltf.asset.version == "2.0"
    names = [n.name for n in gltf.nodes]
    scene = trajectory.scene
    for car in scene.cars:
        assert f"car: {car.name}" in names
    for joint in ("head_top", "hips", "toe_near", "toe_far"):
        assert joint in names
    assert "not a safety certificate" in gltf.asset.extras["caution"]
    blob = gltf.binary_blob()

    def values(accessor_index):
        acc = gltf.accessors[accessor_index]
        view = gltf.bufferViews[acc.bufferView]
        width = {"SCALAR": 1, "VEC3": 3, "VEC4": 4}[acc.type]
        data = np.frombuffer(blob, dtype=np.float32, count=acc.count * width,
                             offset=view.byteOffset + (acc.byteOffset or 0))
        return data.reshape(acc.count, width) if width > 1 else data

    anim = gltf.animations[0]
    times = values(anim.samplers[0].input)
    assert times[0] == 0 and times[-1] == pytest.approx(scene.duration)   # the beat's duration
    assert gltf.accessors[anim.samplers[0].input].max == [pytest.approx(scene.duration)]
    by_node = {(c.target.node, c.target.path): c.sampler for c in anim.channels}
    consist = names.index("consist")
    travel = values(anim.samplers[by_node[(consist, "translation")]].output)
    end = trajectory.index_at(scene.duration)
    assert travel[-1, 0] == pytest.approx(trajectory.field("distance")[end], rel=1e-5)
    hips = names.index("hips")
    path = values(anim.samplers[by_node[(hips, "translation")]].output)
    k = len(times) // 2
    expect = trajectory.ends(trajectory.index_at(float(times[k])))[body.TRUNK, 0]
    assert path[k, :2] == pytest.approx(expect, abs=1e-4)   # x along the track, y up (glTF is Y-up)
    assert hips in gltf.nodes[names.index("performer")].children
    assert names.index("performer") in gltf.nodes[consist].children   # the figure rides in the consist


def test_a_data_export_that_cannot_be_written_leaves_nothing(tmp_path):
    (tmp_path / "beat.glb").mkdir()
    assert main(["render", str(SCENE), "-o", str(tmp_path / "beat.glb")]) == 4
    assert [p.name for p in tmp_path.iterdir()] == ["beat.glb"]
