"""Envelope and risk benchmarks (not part of the test run):
python tests/benchmarks/bench_analysis.py

A 10,000-sample risk run of a 20 s beat and a 200-point envelope, each with its
wall time and performer-steps per second, measured in one run.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from physics.risk import run_risk  # noqa: E402
from physics.scene_load import parse_scene  # noqa: E402
from physics.sweep import sweep_1d  # noqa: E402
from tests.benchmarks.bench_engine import TWENTY_SECONDS  # noqa: E402
from tests.conftest import scene_text  # noqa: E402


def main():
    text = scene_text(speed="60 km/h", body="segmented", actions=TWENTY_SECONDS, wind="4 m/s",
                      mass="75 kg +/- 8 kg", drag_area='"0.7 m^2 +/- 15%"')
    scene = parse_scene(text, "bench")
    steps = int(round(scene.duration / scene.step)) + 1
    run_risk(scene, 10, seed=0)
    t0 = time.perf_counter()
    run_risk(scene, 10_000, seed=1)
    t = time.perf_counter() - t0
    print(f"risk: 10,000 samples x {steps} steps in {t:.2f} s, {10_000 * steps / t / 1e6:.1f} M performer-steps/s")
    t0 = time.perf_counter()
    sweep = sweep_1d(scene, "speed", 5.0, 45.0, points=200)
    t = time.perf_counter() - t0
    print(f"envelope: 200 points + {len(sweep.thresholds)} refined thresholds in {t:.2f} s "
          f"(grid alone {200 * steps / 1e6:.2f} M performer-steps)")


if __name__ == "__main__":
    main()
