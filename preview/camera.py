"""Where the camera is, as a pure function of the trajectory and the time.

Car frame: the camera rides with the consist and follows the performer's
car-frame position smoothed over a second, so standing still means a still
picture and the scenery streams past. Ground frame: the camera is at rest in
the ground and only re-frames (an eased pan) when the performer nears the edge
of the picture; between pans the scenery is at rest and the consist moves. Or
it stands fixed beside the track (trackside) and the consist passes through.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

GROUND, CAR = "ground", "car"
HORIZON_FRACTION = 0.6  # screen height fraction where a point 1 m above the highest roof sits
REFRAME_AT = 0.78      # the ground camera pans when the performer passes this fraction of a stride


@dataclass(frozen=True)
class Camera:
    """World (x along track, z up; metres) <-> screen (pixels) for one frame of reference."""

    frame: str
    center_x: float        # world x at the screen centre, in this frame's coordinates
    scale: float           # pixels per metre
    width: int
    height: int
    top: int = 0            # screen y of this view's top (split views stack two cameras)
    distance: float = 0.0  # s(t), how far the consist has moved, m
    z_center: float = 5.0  # world height drawn at HORIZON_FRACTION of the view, m

    @property
    def offset(self) -> float:
        """car-frame x + offset = this frame's x: s(t) in the ground frame, 0 in the car frame."""
        return self.distance if self.frame == GROUND else 0.0

    def to_screen(self, x_car: float, z: float) -> tuple[float, float]:
        """Car-frame point -> pixels."""
        x = x_car + self.offset
        return (self.width / 2 + (x - self.center_x) * self.scale,
                self.top + self.height * HORIZON_FRACTION - (z - self.z_center) * self.scale)

    def ground_to_screen(self, x_ground: float, z: float) -> tuple[float, float]:
        """Ground-frame point -> pixels."""
        return self.to_screen(x_ground - self.distance, z)

    def to_world(self, px: float, py: float) -> tuple[float, float]:
        """Pixels -> car-frame point."""
        x = (px - self.width / 2) / self.scale + self.center_x - self.offset
        z = (self.top + self.height * HORIZON_FRACTION - py) / self.scale + self.z_center
        return x, z


def _smooth_car_x(trajectory, index: int, window: float = 1.0) -> float:
    # Follow the contact point (still while the feet are planted), the centre of
    # mass only when there is no contact (flight).
    x = trajectory.field("pivot_x")
    x = np.where(np.isnan(x), trajectory.com_path[:, 0], x)
    half = max(1, int(window / trajectory.scene.step / 2))
    lo, hi = max(0, index - half), min(x.size, index + half + 1)
    chunk = x[lo:hi]
    chunk = chunk[np.isfinite(chunk)]
    return float(chunk.mean()) if chunk.size else float(trajectory.scene.start_x)


def _eased_ground_x(performer_ground_x: float, stride: float, origin: float) -> float:
    """A camera x that is constant within each stride and eases to the next near its end."""
    u = (performer_ground_x - origin) / stride
    k = math.floor(u)
    frac = u - k
    blend = 0.0 if frac < REFRAME_AT else (frac - REFRAME_AT) / (1 - REFRAME_AT)
    blend = blend * blend * (3 - 2 * blend)
    # The performer enters a stride at 45 % of the width and leaves it at 84 %: clear of the readout.
    return origin + (k + blend) * stride + stride * 0.1


def camera_for(trajectory, t: float, frame: str, size: tuple[int, int], zoom: float = 1.0, top: int = 0,
               trackside: float | None = None) -> Camera:
    """The camera of a view at time t (pure: same inputs, same camera).

    trackside: in the ground frame, a camera fixed beside the track at this
    ground x (m): the consist passes through the picture.
    """
    width, height = size
    scale = 48.0 * zoom * min(width / 1280, height / 720 * 1.2)
    i = trajectory.index_at(t)
    s = float(trajectory.field("distance")[i])
    car_x = _smooth_car_x(trajectory, i)
    roof = max(car.roof_height for car in trajectory.scene.cars)
    # The rail near the bottom of the view when the performer's head still fits
    # below the panels; otherwise the rail drops out of the picture.
    span = height / scale
    z_center = max(0.32 * span, roof + 2.3 - 0.42 * span)
    if frame == CAR:
        return Camera(CAR, car_x, scale, width, height, top, s, z_center)
    if trackside is not None:
        return Camera(GROUND, trackside, scale, width, height, top, s, z_center)
    stride = 0.5 * width / scale
    center = _eased_ground_x(car_x + s, stride, trajectory.scene.start_x)
    return Camera(GROUND, center, scale, width, height, top, s, z_center)
