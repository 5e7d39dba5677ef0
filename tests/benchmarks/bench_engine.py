"""Engine benchmarks (not part of the test run): python tests/benchmarks/bench_engine.py

Prints measured figures and their ratio to each target, all from one run:
- first `roofbeat check` after a fresh install, from an empty compile cache (target <= 10 s),
  and the first `risk` after it (target: compiles nothing new);
- warm `roofbeat check` on the default scene (target <= 0.8 s), with what a bare Python,
  numpy, numba and pint start cost on this machine beside it;
- a what-if re-simulation of a 20 s beat (target <= 16 ms) and a changed scene (target <= 50 ms);
- batch throughput per core (target >= 5 million performer-steps per second per core);
- the same lean dynamics per variant with scipy's solve_ivp (peer ratio, target >= 100x).
"""

from __future__ import annotations

import math
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from physics import G  # noqa: E402
from physics.scene_load import parse_scene  # noqa: E402
from physics.simulation import _threads, prepare, simulate, simulate_batch, variants  # noqa: E402
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


def verdict(label, value, target, unit, lower_is_better=True):
    ratio = target / value if lower_is_better else value / target
    met = "met" if ratio >= 1 else f"missed by {abs(value - target):.3g} {unit}"
    return f"{label}: {value:.3g} {unit} (target {'<=' if lower_is_better else '>='} {target:g} {unit}; " \
           f"ratio {ratio:.2f}, {met})"


def run(*args, env=None):
    full = dict(os.environ, **(env or {}))
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-m", "preview.cli", *args], cwd=REPO, capture_output=True, text=True,
                         env=full)
    if out.returncode != 0:
        raise SystemExit(f"roofbeat {' '.join(args)} failed: {out.stderr}")
    return time.perf_counter() - t0, out


def bench_first_run():
    with tempfile.TemporaryDirectory() as cache:
        env = {"ROOFBEAT_CACHE_DIR": cache}
        first, out = run("check", env=env)
        compiled = "preparing the engine" in out.stderr
        risk_t, risk = run("risk", str(REPO / "scenes" / "night_freight.toml"), "--samples", "200", env=env)
        print(verdict("first roofbeat check from an empty compile cache", first, 10.0, "s")
              + ("" if compiled else " [no compile happened: the measure is void]"))
        again = "preparing the engine" in risk.stderr
        print(f"first roofbeat risk after it: {risk_t:.2f} s, "
              f"{'COMPILED AGAIN (target: nothing new)' if again else 'compiled nothing new (target met)'}")


def bench_warm_check():
    run("check")
    warm = best_of(lambda: run("check"), repeats=5)
    floors = {}
    for label, code in (("python", "pass"), ("numpy", "import numpy"), ("pint", "import pint"),
                        ("numba loading one cached function", _NUMBA_FLOOR)):
        floors[label] = best_of(lambda: subprocess.run([sys.executable, "-c", code], check=True,
                                                       capture_output=True), repeats=3)
    print(verdict("warm roofbeat check, default scene", warm, 0.8, "s"))
    print("  start-up floors on this machine: " + ", ".join(f"{k} {v:.2f} s" for k, v in floors.items()))


_NUMBA_FLOOR = ("import numba, os, sys, tempfile\n"
                "folder = os.path.join(tempfile.gettempdir(), 'roofbeat-bench-floor')\n"
                "os.makedirs(folder, exist_ok=True)\n"
                "path = os.path.join(folder, 'floorfn.py')\n"
                "open(path, 'w').write('from numba import njit\\n@njit(cache=True)\\ndef f(x):\\n    return x + 1\\n')\n"
                "sys.path.insert(0, folder)\n"
                "import floorfn; floorfn.f(1)\n")


def bench_single():
    s = scene()
    simulate(s)

    def changed():
        prepare.cache_clear()  # a changed scene file: timeline and inputs built again
        simulate(s)
    t_changed = best_of(changed)
    t_what_if = best_of(lambda: simulate(s))  # a what-if key: same scene, other parameters
    print(verdict("what-if re-simulation of a 20 s beat, recorded", t_what_if * 1000, 16, "ms"))
    print(verdict("changed scene re-built and re-simulated", t_changed * 1000, 50, "ms"))


def bench_batch(n=20_000):
    s = scene()
    v = variants(s, n)
    v.params["speed_scale"] = np.linspace(0.5, 1.5, n)
    v.params["turbulence_seed"] = np.arange(n)
    simulate_batch(s, v.row(0))
    t = best_of(lambda: simulate_batch(s, v), repeats=2)
    steps = n * (int(round(s.duration / s.step)) + 1)
    cores = _threads()
    per_core = steps / t / cores
    print(verdict(f"batch {n} variants on {cores} cores, per core", per_core / 1e6, 5.0, "M performer-steps/s",
                  lower_is_better=False))
    return t / n


def bench_batch_roof_air(n=20_000):
    """The same batch with the air over the roof on, side by side with it off (this run): the profile's
    cost per step (a power per segment)."""
    rates = {}
    for name, extra in (("off", ""), ("on", 'roof_profile = "on"')):
        s = parse_scene(scene_text(speed="60 km/h", body="segmented", actions=TWENTY_SECONDS, wind="4 m/s",
                                   air_extra=extra, cars=['name = "wagon"\nlength = "20 m"\nroof_height = "4 m"\ngap = "1 m"'] * 3,
                                   start='car = 3\nposition = "10 m"'), "<bench>")
        v = variants(s, n)
        v.params["speed_scale"] = np.linspace(0.5, 1.5, n)
        simulate_batch(s, v.row(0))
        t = best_of(lambda: simulate_batch(s, v), repeats=2)
        rates[name] = n * (int(round(s.duration / s.step)) + 1) / t / _threads()
    print(f"batch with the air over the roof on: {rates['on'] / 1e6:.2f} M performer-steps/s per core, "
          f"off {rates['off'] / 1e6:.2f}: on/off = {rates['on'] / rates['off']:.2f}")


def _bench_performer(name, stature, mass, facing, position, action):
    """One [[performers]] block of the pair bench, doing `action` through the whole 20 s."""
    return (f'[[performers]]\nname = "{name}"\nstature = "{stature}"\nmass = "{mass}"\nfacing = "{facing}"\n'
            f'recovery_step = "0.5 m"\nstart = {{ car = 1, position = "{position}" }}\n'
            f'[[performers.actions]]\n{action}\nduration = "20 s"\ntransition = "0 s"\n')


def bench_batch_pair(n=10_000):
    """A two-performer beat (a steady push between them through the whole beat) beside the same beat with
    one performer, this run: performer-steps per second per core of each."""
    s1 = scene()
    text = scene_text(speed="60 km/h", body="segmented", actions=TWENTY_SECONDS, wind="4 m/s")
    head = text[:text.index("[performer]")]
    pair = head + _bench_performer("A", "1.8 m", "80 kg", "front", "10 m", 'do = "brace"') + _bench_performer(
        "B", "1.7 m", "70 kg", "rear", "10.6 m",
        'do = "shove"\npartner = "A"\nshape = "steady"\nforce = "40 N"\nposture = "brace"')
    s2 = parse_scene(pair, "<bench pair>")
    rates = {}
    for name, sc, per in (("one", s1, 1), ("two", s2, 2)):
        v = variants(sc, n)
        v.params["speed_scale"] = np.linspace(0.5, 1.5, n)
        simulate_batch(sc, v.row(0))
        t = best_of(lambda: simulate_batch(sc, v), repeats=2)
        rates[name] = per * n * (int(round(sc.duration / sc.step)) + 1) / t / _threads()
    print(f"batch of two performers: {rates['two'] / 1e6:.2f} M performer-steps/s per core, one performer "
          f"{rates['one'] / 1e6:.2f}: two/one = {rates['two'] / rates['one']:.2f}")


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
    print(verdict("solve_ivp peer (lean dynamics only) per variant over the engine's (full model, batch)",
                  per_variant / engine_seconds_per_variant, 100, "x", lower_is_better=False))


if __name__ == "__main__":
    bench_first_run()
    bench_warm_check()
    bench_single()
    per_variant = bench_batch()
    bench_batch_roof_air()
    bench_batch_pair()
    bench_peer(per_variant)
