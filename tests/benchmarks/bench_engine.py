"""Engine benchmarks (not part of the test run): python tests/benchmarks/bench_engine.py

Prints measured figures and ratios against the DESIGN targets, all from one run:
- re-simulating a 20 s beat for one performer (target <= 100 ms);
- a batch of 10,000 variants (target >= 10 million performer-steps per second);
- the same lean dynamics per variant with scipy's solve_ivp (peer ratio);
- `roofbeat --help` and `roofbeat check` start-up (targets 0.3 s and 1.5 s).
"""

from __future__ import annotations

import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from physics import G, engine  # noqa: E402
from physics.scene_load import parse_scene  # noqa: E402
from physics.simulation import base_params, prepare, simulate, simulate_batch  # noqa: E402
from tests.conftest import scene_text  # noqa: E402

TWENTY_SECONDS = ['do = "stand"\nduration = "8 s"\ntransition = "0 s"',
                  'do = "walk"\nspeed = "1.2 m/s"\ntoward = "rear"\nduration = "6 s"\ntransition = "0.5 s"',
                  'do = "crouch"\nduration = "6 s"\ntransition = "1 s"']


def best_of(fn, repeats=5):
    best = math.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def scene(body="segmented"):
    text = scene_text(speed="60 km/h", body=body, actions=TWENTY_SECONDS, wind="4 m/s").replace(
        'wind_from = "0 deg"', 'wind_from = "0 deg"\n[air.turbulence]\nintensity = "1 m/s"\nlength_scale = "40 m"\nseed = 2')
    return parse_scene(text, "bench")


def bench_single():
    s = scene()
    simulate(s)

    def cold():
        prepare.cache_clear()  # a changed scene file: timeline and inputs built again
        simulate(s)
    t_cold = best_of(cold)
    t_warm = best_of(lambda: simulate(s))  # a what-if key: same scene, other parameters
    print(f"single 20 s beat, recorded: changed scene {t_cold * 1000:.1f} ms, what-if on the same scene "
          f"{t_warm * 1000:.1f} ms (target <= 100 ms, ratio {0.1 / t_cold:.1f}x headroom on the first)")


def bench_batch(n=10_000):
    s = scene()
    p = np.tile(base_params(s), (n, 1))
    p[:, engine.V_["speed_scale"]] = np.linspace(0.5, 1.5, n)
    p[:, engine.V_["turbulence_seed"]] = np.arange(n)
    simulate_batch(s, p[:4])
    t = best_of(lambda: simulate_batch(s, p), repeats=2)
    steps = n * (int(round(s.duration / s.step)) + 1)
    rate = steps / t
    print(f"batch {n} variants x {steps // n} steps: {t:.2f} s, {rate / 1e6:.1f} M performer-steps/s "
          f"(target >= 10 M/s, ratio {rate / 10e6:.2f})")
    return t / n


def lean_rhs(mass, height, inertia, drag, lo, hi, kp, kd, theta_ref):
    weight = mass * G

    def rhs(t, y):
        th, om = y
        cx, cz = height * math.sin(th), height * math.cos(th)
        cop = min(max(kp * (th - theta_ref) + kd * om, lo), hi)
        torque = weight * cx - drag * cz - cop * weight
        return [om, torque / inertia]
    return rhs


def bench_peer(engine_seconds_per_variant, n=200):
    """The same lumped lean dynamics (no delay: solve_ivp has no delay states)
    written straightforwardly, one solve_ivp call per variant."""
    mass, height = 75.0, 1.0
    inertia = mass * height**2 * 1.1
    drags = np.linspace(50, 250, n)
    t0 = time.perf_counter()
    for d in drags:
        ref = math.atan2(d, mass * G)
        solve_ivp(lean_rhs(mass, height, inertia, d, -0.07, 0.2, 1.6, 0.45, ref), (0.0, 20.0), [0.0, 0.0],
                  rtol=1e-6, atol=1e-9, max_step=1 / 240)
    per_variant = (time.perf_counter() - t0) / n
    print(f"solve_ivp peer, lean dynamics only: {per_variant * 1000:.1f} ms per variant; engine (full model, batch): "
          f"{engine_seconds_per_variant * 1000:.3f} ms per variant; ratio {per_variant / engine_seconds_per_variant:.0f}x "
          f"(target >= 100x)")


def bench_startup():
    def run(*args):
        return best_of(lambda: subprocess.run([sys.executable, "-m", "preview.cli", *args], cwd=REPO,
                                              capture_output=True, check=True), repeats=3)
    help_t = run("--help")
    check_t = run("check")
    print(f"roofbeat --help: {help_t:.2f} s (target <= 0.3 s); roofbeat check (default scene): {check_t:.2f} s "
          f"(target <= 1.5 s)")


if __name__ == "__main__":
    bench_single()
    per_variant = bench_batch()
    bench_peer(per_variant)
    bench_startup()
