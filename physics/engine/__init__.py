"""The compiled engine, one module per physical idea.

- `jit`: the one wrapper around numba (cache folder, plain-Python fallback).
- `turbulence`: random numbers and the turbulent wind.
- `air_load`: cross-flow drag on a posture.
- `stance`: anticipatory lean, delayed balance control, margin of stability.
- `roof`: which car is under a point, the friction it gives.
- `sliding`: grip demand, slips and slides.
- `flight`: flight by Runge-Kutta, touchdown and the landing rule.
- `overhead`: structures and line exclusion zones.
- `outcome`: events and per-action margins as they are written.
- `beat_state`, `recording`, `on_roof`, `airborne`: the step's pieces.
- `partners`: the forces between two performers (pushes, holds, catches).
- `driver`: the step loop and its entry points, `run_variants` (one performer) and `run_pairs`
  (two).

Every record and code that crosses into or out of the kernel is named in
physics.records.
"""
