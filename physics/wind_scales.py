"""Named wind scales used in reports.

- Beaufort force bands in m/s: WMO Beaufort scale (secondary copy).
- Saffir-Simpson categories in mph: US National Hurricane Center (secondary copy).
- Pedestrian wind safety: Lawson 1990 (Univ. of Bristol report TVL 9025):
  15 m/s hazard to frail people and cyclists, 20 m/s can unbalance able-bodied
  people; Penwarden 1973 (Building Science 8:259-267): above 20 m/s can be dangerous.
"""

from __future__ import annotations

import bisect

MPH = 0.44704  # m/s per mph, exact

# Lower bound (m/s) of Beaufort forces 1..12. WMO bands are quoted to 0.1 m/s
# (force 1 is 0.3-1.5, force 2 1.6-3.3, ...); the gap between quoted bands is
# split at the half-way point so every speed maps to exactly one force.
BEAUFORT_LOWER = [0.25, 1.55, 3.35, 5.45, 7.95, 10.75, 13.85, 17.15, 20.75, 24.45, 28.45, 32.65]
BEAUFORT_NAMES = ["calm", "light air", "light breeze", "gentle breeze", "moderate breeze",
                  "fresh breeze", "strong breeze", "near gale", "gale", "strong gale",
                  "storm", "violent storm", "hurricane force"]

# Lower bound (mph) of Saffir-Simpson categories 1..5; bands are whole mph
# (cat 1 74-95, cat 2 96-110, ...), split half-way between.
SAFFIR_SIMPSON_LOWER_MPH = [73.5, 95.5, 110.5, 129.5, 156.5]

# (speed in m/s, what it means, sources)
PEDESTRIAN_THRESHOLDS = [
    (15.0, "hazard to frail people and cyclists", "Lawson 1990"),
    (20.0, "can unbalance able-bodied people, dangerous", "Lawson 1990; Penwarden 1973"),
]


def beaufort(speed: float) -> int:
    """Beaufort force (0-12) of a wind speed in m/s."""
    return bisect.bisect_right(BEAUFORT_LOWER, abs(speed))


def saffir_simpson(speed: float) -> int | None:
    """Saffir-Simpson category (1-5) of a wind speed in m/s, None below hurricane force."""
    category = bisect.bisect_right(SAFFIR_SIMPSON_LOWER_MPH, abs(speed) / MPH)
    return category or None


def pedestrian_threshold(speed: float) -> tuple[float, str, str] | None:
    """The highest pedestrian wind-safety threshold the speed (m/s) reaches, (limit m/s, words, sources), or None."""
    crossed = [t for t in PEDESTRIAN_THRESHOLDS if abs(speed) >= t[0]]
    return crossed[-1] if crossed else None
