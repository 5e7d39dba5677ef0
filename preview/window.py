"""`roofbeat play`: the preview window.

Plays the recorded trajectory in real time; every control changes only the
view settings or the playback clock, except the what-if keys, which
re-simulate with a changed speed or wind. The scene file is watched and
re-loaded when saved; a broken save shows its problems in the window while the
last good simulation keeps playing.
"""

from __future__ import annotations

import os
import sys
import time
from dataclasses import dataclass, replace
from pathlib import Path

from preview.frame import ViewSettings, draw_frame
from preview.panels import FOLLOW_KEY, timeline_rect
from preview.road import beside
from preview.session import Playback, make_playback

RATES = (0.1, 0.25, 0.5, 1.0, 1.5, 2.0)
FRAMES = ("car", "ground", "split", "end", "plan")   # the F key's views, in order
# What-if steps per key press, in the display units: (speed, wind) in m/s.
STEPS = {"metric": (5 / 3.6, 1.0), "imperial": (5 * 0.44704, 2 * 0.44704)}  # 5 km/h, 1 m/s; 5 mph, 2 mph


@dataclass
class PlayerState:
    playback: Playback
    view: ViewSettings
    t: float = 0.0
    playing: bool = True
    rate_index: int = 3
    speed_delta: float = 0.0
    wind_delta: float = 0.0
    running: bool = True
    scrubbing: bool = False
    screenshots: int = 0
    units: str | None = None     # the U key's choice, kept across re-loads


def what_if_variant(scene, speed_delta: float, wind_delta: float):
    """The scene's variant with the consist speed and ambient wind shifted."""
    from physics.air import wind_vector
    from physics.simulation import variants
    v = variants(scene)
    top = max(k.speed for k in scene.keyframes)
    if top > 0:
        v.params["speed_scale"] = max(0.0, (top + speed_delta) / top)
    dx, dy = wind_vector(1.0, scene.air.wind_from)
    new = max(0.0, scene.air.wind_speed + wind_delta)
    v.params["wind_x"] += (new - scene.air.wind_speed) * dx
    v.params["wind_y"] += (new - scene.air.wind_speed) * dy
    return v


def what_if_label(state: PlayerState, system: str) -> str:
    from physics.units import to_display
    parts = []
    if state.speed_delta:
        v, unit = to_display(state.speed_delta, "speed", system)
        parts.append(f"speed {v:+.0f} {unit}")
    if state.wind_delta:
        v, unit = to_display(state.wind_delta, "wind", system)
        parts.append(f"wind {v:+.1f} {unit}")
    return ", ".join(parts)


def resimulate(state: PlayerState) -> None:
    scene = state.playback.scene
    changed = bool(state.speed_delta or state.wind_delta)
    state.playback = make_playback(scene, what_if_variant(scene, state.speed_delta, state.wind_delta)
                                   if changed else None)
    state.view = replace(state.view, what_if=what_if_label(state, scene.units) + (
        f" -> verdict {state.playback.summary['verdict']}" if (state.speed_delta or state.wind_delta) else ""))


def handle_key(state: PlayerState, key: str, screenshot_dir: Path | None = None, surface=None) -> None:
    """Apply one key press (pygame key name) to the player state."""
    scene = state.playback.scene
    frame_step = 1.0 / scene.frame_rate
    if state.view.message.startswith("screenshot saved"):
        state.view = replace(state.view, message="")
    v = state.view
    toggles = {"1": "weight", "2": "aero", "3": "segments", "4": "reaction", "5": "pseudo", "6": "wind",
               "7": "balance"}
    if key == "space":
        state.playing = not state.playing
    elif key == "right":
        state.playing, state.t = False, min(scene.duration, state.t + frame_step)
    elif key == "left":
        state.playing, state.t = False, max(0.0, state.t - frame_step)
    elif key == "]":
        state.rate_index = min(len(RATES) - 1, state.rate_index + 1)
    elif key == "[":
        state.rate_index = max(0, state.rate_index - 1)
    elif key == "f":
        state.view = replace(v, frame=FRAMES[(FRAMES.index(v.frame) + 1) % len(FRAMES)])
    elif key in toggles:
        state.view = v.toggled(toggles[key])
    elif key in ("=", "+", "[+]"):
        state.view = replace(v, zoom=min(4.0, v.zoom * 1.25))
    elif key in ("-", "[-]"):
        state.view = replace(v, zoom=max(0.3, v.zoom / 1.25))
    elif key == "home":
        state.t, state.playing = 0.0, True
    elif key == "h":
        state.view = replace(v, show_help=not v.show_help)
    elif key == FOLLOW_KEY:
        state.view = follow_next(state)
    elif key in ("up", "down"):
        step = STEPS[scene.units][0]
        state.speed_delta += step if key == "up" else -step
        resimulate(state)
    elif key in ("w", "s"):
        step = STEPS[scene.units][1]
        state.wind_delta += step if key == "w" else -step
        resimulate(state)
    elif key == "l":
        state.view = replace(v, legend=not v.legend)
    elif key == "c":
        state.view = trackside_toggled(state)
    elif key == "u":
        switch_units(state)
    elif key == "0":
        state.speed_delta = state.wind_delta = 0.0
        resimulate(state)
    elif key == "p" and surface is not None:
        save_screenshot(state, surface, screenshot_dir or Path.cwd())
    elif key == "escape":
        state.running = False


def follow_next(state: PlayerState) -> ViewSettings:
    """Two performers: the readout and the cameras follow the next one (cast order, round); one: as it was."""
    scene, v = state.playback.scene, state.view
    if not scene.pair:
        return v
    return replace(v, follow=(v.follow + 1) % len(scene.cast))


def trackside_toggled(state: PlayerState) -> ViewSettings:
    """A trackside camera fixed where the performer is now (ground frame), or back to following."""
    v = state.view
    if v.trackside is not None:
        return replace(v, trackside=None)
    from preview.world import cast_of, followed
    tr = cast_of(state.playback)[followed(state.playback, v)].trajectory
    i = tr.index_at(state.t)
    x = float(tr.com_path[i, 0] + tr.field("distance")[i])
    if x != x:  # no body position (NaN): nothing to stand beside
        return replace(v, message=f"{beside(tr.scene)} camera: no performer position at this time")
    return replace(v, trackside=x, frame=v.frame if v.frame in ("ground", "split") else "ground")


def switch_units(state: PlayerState) -> None:
    """Metric <-> imperial on every number shown; the physics is unchanged."""
    scene = state.playback.scene
    state.units = "imperial" if scene.units == "metric" else "metric"
    state.playback = make_playback(scene.shared(units=state.units),
                                   what_if_variant(scene, state.speed_delta, state.wind_delta)
                                   if (state.speed_delta or state.wind_delta) else None)
    if state.speed_delta or state.wind_delta:
        state.view = replace(state.view, what_if=what_if_label(state, state.units) +
                             f" -> verdict {state.playback.summary['verdict']}")


def save_screenshot(state: PlayerState, surface, folder: Path) -> Path:
    import numpy as np
    import pygame

    from preview.export import save_png
    from preview.session import OutputError
    state.screenshots += 1
    name = f"roofbeat-{Path(state.playback.scene.source).stem}-{state.t:07.3f}s.png"
    path = Path(folder) / name
    try:
        save_png(np.ascontiguousarray(pygame.surfarray.array3d(surface).transpose(1, 0, 2)), path)
    except (OutputError, OSError) as exc:
        state.view = replace(state.view, message=f"screenshot not saved: {exc}")
        return None
    state.view = replace(state.view, message=f"screenshot saved: {path}")
    return path


def scrub_to(state: PlayerState, x: float, size) -> None:
    left, _, width, _ = timeline_rect(size, scene=state.playback.scene)
    fraction = min(1.0, max(0.0, (x - left) / width))
    state.t = fraction * state.playback.scene.duration


def on_timeline(pos, size, scene=None) -> bool:
    x, y, w, h = timeline_rect(size, scene=scene)
    return x <= pos[0] <= x + w and y - 8 <= pos[1] <= y + h + 8


class SceneWatcher:
    """Re-loads the scene file when it is saved; keeps the last good one on errors."""

    def __init__(self, path: Path, overrides: list[str]):
        self.path, self.overrides = path, overrides
        self.mtime = self._mtime()

    def _mtime(self) -> float:
        try:
            return self.path.stat().st_mtime_ns
        except OSError:
            return -1

    def poll(self, state: PlayerState) -> None:
        mtime = self._mtime()
        if mtime == self.mtime:
            return
        self.mtime = mtime
        from physics.scene_load import SceneError, load_scene
        try:
            scene = load_scene(self.path, self.overrides)
            if state.units:
                scene = scene.shared(units=state.units)
            changed = bool(state.speed_delta or state.wind_delta)
            playback = make_playback(scene, what_if_variant(scene, state.speed_delta, state.wind_delta)
                                     if changed else None)
        except SceneError as exc:
            state.view = replace(state.view, message="scene not re-loaded, still playing the last good one:\n"
                                 + exc.render())
            return
        except Exception as exc:  # a defect of ours: the window keeps the last good run and says so
            state.view = replace(state.view, message="scene not re-loaded (internal error, please report it: "
                                 f"{type(exc).__name__}: {exc}); still playing the last good one")
            return
        state.playback = playback
        state.t = min(state.t, scene.duration)
        state.view = replace(state.view, message="")


def run_window(scene, scene_path: Path | None, overrides: list[str], size=(1280, 720), max_frames: int | None = None,
               scripted_keys: dict | None = None, screenshot_dir: Path | None = None) -> PlayerState:
    """The event loop. `max_frames` and `scripted_keys` ({frame: [key, ...]}) let tests and
    screenshots drive the real window without a person at the keyboard."""
    import pygame

    from preview.canvas import PygameCanvas
    pygame.display.init()
    pygame.font.init()
    screen = pygame.display.set_mode(size, pygame.RESIZABLE)
    pygame.display.set_caption(f"roofbeat - {scene.title}")
    state = PlayerState(make_playback(scene), ViewSettings())
    watcher = SceneWatcher(scene_path, overrides) if scene_path else None
    clock = pygame.time.Clock()
    frame, last_poll = 0, time.monotonic()
    while state.running:
        for event in pygame.event.get():
            _handle_event(state, event, screen, screenshot_dir)
        for key in (scripted_keys or {}).get(frame, []):
            handle_key(state, key, surface=screen, screenshot_dir=screenshot_dir)
        if watcher and time.monotonic() - last_poll > 0.5:
            watcher.poll(state)
            last_poll = time.monotonic()
        elapsed = clock.tick(60) / 1000.0
        if state.playing and not state.scrubbing:
            state.t += elapsed * RATES[state.rate_index] if max_frames is None else RATES[state.rate_index] / 30
            if state.t > state.playback.scene.duration:
                state.t, state.playing = state.playback.scene.duration, False
        screen = pygame.display.get_surface()
        draw_frame(PygameCanvas(screen), state.playback, state.t,
                   replace(state.view, what_if=f"{state.view.what_if}  rate {RATES[state.rate_index]:g}x"
                           if RATES[state.rate_index] != 1.0 else state.view.what_if))
        pygame.display.flip()
        frame += 1
        if max_frames is not None and frame >= max_frames:
            break
    pygame.display.quit()
    return state


def _handle_event(state, event, screen, screenshot_dir) -> None:
    import pygame
    if event.type == pygame.QUIT:
        state.running = False
    elif event.type == pygame.KEYDOWN:
        handle_key(state, pygame.key.name(event.key), screenshot_dir, screen)
    elif (event.type == pygame.MOUSEBUTTONDOWN and event.button == 1
          and on_timeline(event.pos, screen.get_size(), state.playback.scene)):
        state.scrubbing = True
        scrub_to(state, event.pos[0], screen.get_size())
    elif event.type == pygame.MOUSEMOTION and state.scrubbing:
        scrub_to(state, event.pos[0], screen.get_size())
    elif event.type == pygame.MOUSEBUTTONUP and event.button == 1:
        state.scrubbing = False


def display_available() -> bool:
    if os.environ.get("SDL_VIDEODRIVER") in ("dummy", "offscreen"):
        return True
    if sys.platform.startswith("linux") and not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        return False
    return True


def play(scene, args) -> int:
    """`roofbeat play`: open the window, or write a short clip when there is no display."""
    os.environ.setdefault("PYGAME_HIDE_SUPPORT_PROMPT", "1")
    from preview.session import scene_path
    path = scene_path(args.scene)
    if not display_available():
        return _clip_instead(scene, args)
    import pygame
    try:
        run_window(scene, path, args.overrides)
    except pygame.error as exc:
        print(f"roofbeat: the window could not open ({exc})", file=sys.stderr)
        return _clip_instead(scene, args)
    return 0


def _clip_instead(scene, args) -> int:
    from argparse import Namespace

    from preview.export import render
    out = Path.cwd() / f"roofbeat-{Path(scene.source).stem}.gif"
    print(f"roofbeat: no display available; writing a short clip instead: {out}", file=sys.stderr)
    return render(scene, Namespace(output=out, frame="split", t_from=None, t_to=min(scene.duration, 8.0),
                                   fps=12, size=(960, 540)))
