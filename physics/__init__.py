"""roofbeat physics: pure, deterministic simulation of a performer on a moving roof.

Inside this package every number is SI (metres, seconds, kilograms, newtons,
radians) unless a name says otherwise. Nothing here imports pygame,
matplotlib or the preview package.
"""

G = 9.80665  # standard gravity, m/s^2 (CGPM 1901 conventional value)
