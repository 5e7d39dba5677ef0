"""One picture of a beat: a pure function of (playback, time, view settings).

Draws through the Canvas interface only: the window, the exports and the brief
all call `draw_frame`. Nothing here recomputes physics; every number comes from
the recorded trajectory or is derived from it. The side views are drawn by
preview.world, the end view across the track by preview.end_view and the plan
from above by preview.plan_view. The panels (readout, frame banners, legend,
timeline, caution) take their places first; the labels that can move (failure
callout, structure names, drift figure, messages) are then placed where they
cover nothing (preview.layout), and the panels are drawn on top of the world.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from preview import end_view, panels, plan_view, world
from preview.camera import CAR, GROUND, camera_for
from preview.layout import Box, Layout
from preview.palette import PAPER
from preview.session import Playback

VECTOR_KEYS = ("weight", "aero", "segments", "reaction", "pseudo", "wind", "balance")
ACROSS = {"end": end_view, "plan": plan_view}   # the views across the track: camera() and draw() each


@dataclass(frozen=True)
class ViewSettings:
    frame: str = CAR                 # "car", "ground", "split" (side views), "end" or "plan"
    zoom: float = 1.5
    vectors: frozenset = field(default_factory=lambda: frozenset({"weight", "aero", "reaction", "pseudo", "wind",
                                                                   "balance"}))
    trail_seconds: float = 3.0
    legend: bool = True              # the key to the vectors, scale bars and timeline ticks
    readout: bool = True             # the numbers panel (the brief's key frames say them beside the frame)
    trackside: float | None = None   # ground frame: a camera fixed at this ground x (m) instead of following
    show_help: bool = False
    message: str = ""                # e.g. a scene error while the last good run keeps playing
    what_if: str = ""                # e.g. "speed +10 km/h"
    text_boost: int = 0              # px added to every text size (the brief's key frames, for print)
    follow: int = 0                  # two performers: which one (cast order) the readout and the cameras follow

    def toggled(self, key: str) -> "ViewSettings":
        return replace(self, vectors=self.vectors ^ {key})


def main_area(size: tuple[int, int], view: "ViewSettings | None" = None, units: str = "metric",
              scene=None) -> tuple[int, int]:
    """Width and height available to the views above the legend, the timeline and the caution line."""
    return size[0], size[1] - panels.bottom_height(size, view, units, scene)


def drawing_region(size, view: ViewSettings, units: str, scene=None) -> Box:
    """Where the end and plan views fit their drawing: beside the readout and under the banner."""
    width, height = main_area(size, view, units, scene)
    left = panels.readout_width(size, view) + 2 * panels.MARGIN if view.readout else panels.MARGIN
    top = panels.banner_height(size, view) + panels.MARGIN
    return Box(left, top, max(1.0, width - left - panels.MARGIN), max(1.0, height - top - panels.MARGIN))


def cameras(playback: Playback, t: float, view: ViewSettings, size) -> list:
    """One camera per view: the side views' (two for split), or the end or plan view's."""
    width, height = main_area(size, view, playback.scene.units, playback.scene)
    tr = world.cast_of(playback)[world.followed(playback, view)].trajectory
    if view.frame in ACROSS:
        # Framed for the whole beat over every performer (the first's run holds the other's in `partners`).
        region = drawing_region(size, view, playback.scene.units, playback.scene)
        return [ACROSS[view.frame].camera(playback.trajectory, t, (width, height), region, view.zoom, follow=tr)]
    if view.frame == "split":
        half = height // 2
        return [camera_for(tr, t, GROUND, (width, half), view.zoom, 0, view.trackside),
                camera_for(tr, t, CAR, (width, height - half), view.zoom, half)]
    return [camera_for(tr, t, view.frame, (width, height), view.zoom, 0, view.trackside)]


def draw_frame(canvas, playback: Playback, t: float, view: ViewSettings) -> None:
    """Draw the whole picture for time t."""
    canvas.fill(PAPER)
    canvas.text_boost = view.text_boost
    cams = cameras(playback, t, view, canvas.size)
    layout = Layout()
    plan = panels.plan(layout, canvas.size, playback, t, view, cams)
    for cam in cams:
        draw = ACROSS[cam.frame].draw if cam.frame in ACROSS else world.draw_view
        draw(canvas, playback, t, view, cam, layout, Box(0, cam.top, cam.width, cam.height))
    panels.draw(canvas, plan, playback, t, view)
