"""Flight benchmark (not part of the test run): python tests/benchmarks/bench_flight.py

The engine's RK4 flight step against scipy's solve_ivp on the same segmented
body, for many take-off velocities and headwinds, in one run: landing-point
agreement (target within 1 cm) and the ratio of speeds.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from physics import body, engine  # noqa: E402
from physics.simulation import segment_axes  # noqa: E402
from tests.test_flight import DT, segmented_rhs  # noqa: E402


def main(n=100):
    stature, mass, rho = 1.8, 78.0, 1.2
    ends = body.segment_endpoints(np.array([body.POSTURES["tuck"]], float), stature)
    axes = segment_axes(ends)
    c = body.body_constants(stature)
    rng = np.random.default_rng(1)
    cases = np.column_stack([rng.uniform(-5, 5, n), rng.uniform(1.5, 4.5, n), rng.uniform(0, 40, n),
                             rng.uniform(-10, 10, n)])
    engine.fly(axes, 0, 1.0, 0.0, 0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 0.0, 0.5 * rho * c.crossflow_area,
               0.5 * rho * c.axial_area, False, 0.0, mass, DT, 10)
    worst = 0.0
    t_engine = t_ivp = 0.0
    for vx, vz, V, wind in cases:
        t0 = time.perf_counter()
        ref = solve_ivp(segmented_rhs(ends[0], c, mass, rho, V, wind), (0, 3), [0, 0, vx, vz], method="DOP853",
                        rtol=1e-9, atol=1e-12, events=lambda t, y: y[1] if t > 0.05 else 1.0)
        t_ivp += time.perf_counter() - t0
        x_ref = ref.y_events[0][0][0]
        t0 = time.perf_counter()
        out = engine.fly(axes, 0, 1.0, 0.0, 0.0, 0.0, vx, vz, V, wind, 0.0, 0.5 * rho * c.crossflow_area,
                         0.5 * rho * c.axial_area, False, 0.0, mass, DT, int(ref.t_events[0][0] / DT) + 3)
        z = out[:, 1]
        k = np.nonzero((z[:-1] > 0) & (z[1:] <= 0))[0][-1]
        x = np.interp(0.0, [z[k + 1], z[k]], [out[k + 1, 0], out[k, 0]])
        t_engine += time.perf_counter() - t0
        worst = max(worst, abs(x - x_ref))
    print(f"{n} flights: worst landing-point difference {worst * 1000:.2f} mm (target < 10 mm); "
          f"engine {t_engine / n * 1e6:.0f} us per flight, solve_ivp {t_ivp / n * 1e6:.0f} us; "
          f"ratio {t_ivp / t_engine:.0f}x")


if __name__ == "__main__":
    main()
