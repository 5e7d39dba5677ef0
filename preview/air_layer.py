"""The air over the roof as the views draw it (scene air.roof_profile = "on"): the air's speed relative
to the car at a few heights above the roof under the body, the layer's top and any low-speed zone.

Nothing here is physics: the layer's thickness, its speed-up and its low-speed zone are the recorded
ones (records' flow_delta, flow_gain, flow_zone) and the share kept at each height is the engine's own
profile (Trajectory.air_share). Speeds are drawn on the apparent wind's scale (WIND_PER_METRE), so the
legend's wind bar reads them too.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from physics.units import display

HEIGHTS = (0.1, 0.3, 0.6, 1.0, 1.5, 2.0)   # m above the roof: where the speeds are drawn
CLEAR_OF_WIND = 0.2                         # m: no height this close to the apparent wind arrow's


@dataclass(frozen=True)
class Profile:
    delta: float          # m: the layer's thickness over the roof under the body
    zone: float           # m: the height of a low-speed zone there (0: none)
    heights: np.ndarray   # m above the roof
    along: np.ndarray     # m/s: the air's velocity along the track relative to the car at each height (+ ahead)
    across: np.ndarray    # m/s: and across it (+ left of travel)


def shown(scene) -> bool:
    """Whether the views can draw the air over the roof for this scene: its profile is on."""
    return getattr(scene.air, "roof_flow", None) is not None


def heights(delta: float, skip: float | None = None) -> np.ndarray:
    """The heights drawn for a layer `delta` thick: up to a quarter above its top (at least 1 m, at most
    2 m, the height of a standing body's head and over), leaving out one too close to `skip` (m above
    the roof, the apparent wind arrow's height)."""
    cap = min(HEIGHTS[-1], max(1.0, 1.25 * delta))
    out = [h for h in HEIGHTS if h <= cap + 1e-9 and (skip is None or abs(h - skip) >= CLEAR_OF_WIND)]
    return np.array(out, dtype=float)


def profile_at(tr, i: int, skip: float | None = None) -> Profile | None:
    """The air over the roof under the body at step i; None when the profile is off or the body is not
    over a roof (the free stream then acts at every height)."""
    if not shown(tr.scene):
        return None
    r = tr.record[i]
    delta = float(r["flow_delta"])
    relative = float(r["wind_x"]) - float(r["speed"])
    if not (math.isfinite(delta) and math.isfinite(relative)):
        return None
    zs = heights(delta, skip)
    if not zs.size:
        return None
    share = tr.air_share(i, zs)
    zone = float(r["flow_zone"])
    across = float(r["wind_y"]) if math.isfinite(float(r["wind_y"])) else 0.0
    return Profile(delta, zone if math.isfinite(zone) else 0.0, zs, share * relative, share * across)


def layer_words(delta: float, units: str) -> str:
    """'air layer 4.8 m': the label at the layer's top."""
    return f"air layer {display(delta, 'length', units, '.1f')}"


def body_wind_words(tr, i: int, units: str) -> str | None:
    """The readout's 'wind at body height' at step i: the apparent wind at the centre of mass's height and
    the layer it is in; None when the profile is off or there is no such wind."""
    if not shown(tr.scene):
        return None
    r = tr.record[i]
    wind = float(r["body_wind"])
    if not math.isfinite(wind):
        return None
    words = display(wind, "wind", units, ".1f")
    free = math.hypot(float(r["app_x"]), float(r["app_y"]))
    if math.isfinite(free) and free > 0.1:
        words += f" ({100 * wind / free:.0f} % of free stream)"
    return words


def dashed(canvas, p0, p1, colour, dash: float = 6.0, gap: float = 4.0, width: int = 1) -> None:
    """A dashed line from p0 to p1 (pixels)."""
    length = math.hypot(p1[0] - p0[0], p1[1] - p0[1])
    if length < 1.0:
        return
    ux, uy = (p1[0] - p0[0]) / length, (p1[1] - p0[1]) / length
    s = 0.0
    while s < length:
        e = min(length, s + dash)
        canvas.line((p0[0] + ux * s, p0[1] + uy * s), (p0[0] + ux * e, p0[1] + uy * e), colour, width)
        s = e + gap


def legend_row(view, scene, end: bool = False) -> list[tuple]:
    """The legend's row for the air over the roof, for a scene with its profile on (none otherwise); faint,
    as the vector keys are, while the apparent wind is hidden (key 6 hides both)."""
    if scene is None or not shown(scene):
        return []
    from physics.roof_air import car_fields
    from preview.palette import FAINT, ROOF_AIR
    from preview.road import way
    words = (f"air over the roof by height: speed along the {way(scene)} (bars), dashed its top" if end else
             "air over the roof by height, on the wind's scale; dashed its top")
    if float(np.max(car_fields(scene.air.roof_flow, scene.cars)["zone_height"], initial=0.0)) > 0.0:
        words += ", shaded low-speed"
    return [("layer", (ROOF_AIR if "wind" in view.vectors else FAINT, words))]
