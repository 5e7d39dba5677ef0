"""Flight accuracy benchmark (not part of the test run): python tests/benchmarks/bench_flight.py

The engine's RK4 flight step (its Python source, the code numba compiles)
against scipy's solve_ivp on the same segmented body, for many take-off
velocities, consist speeds and winds: the worst landing-point difference
(target within 1 cm). Speed against solve_ivp is measured by bench_engine.py
on the compiled kernel.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from physics import body  # noqa: E402
from physics.engine.air_load import Drag  # noqa: E402
from tests.test_flight import DT, fly, posture_record, segmented_rhs  # noqa: E402


def main(n=100):
    stature, mass, rho = 1.8, 78.0, 1.2
    ends = body.segment_endpoints(np.array([body.POSTURES["tuck"]], float), stature)
    c = body.body_constants(stature)
    drag = Drag(0.5 * rho * c.crossflow_area, 0.5 * rho * c.axial_area, False, 0.0)
    posture = posture_record(ends[0])
    rng = np.random.default_rng(1)
    cases = np.column_stack([rng.uniform(-5, 5, n), rng.uniform(1.5, 4.5, n), rng.uniform(0, 40, n),
                             rng.uniform(-10, 10, n)])
    worst = 0.0
    for vx, vz, V, wind in cases:
        ref = solve_ivp(segmented_rhs(ends[0], c, mass, rho, V, wind), (0, 3), [0, 0, vx, vz], method="DOP853",
                        rtol=1e-9, atol=1e-12, events=lambda t, y: y[1] if t > 0.05 else 1.0)
        x_ref = ref.y_events[0][0][0]
        out = fly(posture, drag, mass, vx, vz, (int(ref.t_events[0][0] / DT) + 3) * DT, V=V, wind=wind)
        z = out[:, 1]
        k = np.nonzero((z[:-1] > 0) & (z[1:] <= 0))[0][-1]
        x = np.interp(0.0, [z[k + 1], z[k]], [out[k + 1, 0], out[k, 0]])
        worst = max(worst, abs(x - x_ref))
    print(f"{n} flights at {1 / DT:.0f} Hz: worst landing-point difference from solve_ivp {worst * 1000:.2f} mm "
          f"(target < 10 mm; ratio {0.01 / worst:.0f}x)")


if __name__ == "__main__":
    main()
