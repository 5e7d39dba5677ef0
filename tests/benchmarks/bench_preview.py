"""Preview benchmarks (not part of the test run): python tests/benchmarks/bench_preview.py

Per-frame draw time at 1280x720 with every overlay (target <= 8 ms), export
frames per second for MP4 and GIF, and the latency from a speed key to the
redrawn picture (target <= 100 ms), all measured in one run.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("SDL_VIDEODRIVER", "dummy")
os.environ.setdefault("SDL_AUDIODRIVER", "dummy")
REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

import numpy as np  # noqa: E402
import pygame  # noqa: E402

from physics.scene_load import load_scene  # noqa: E402
from preview.canvas import PygameCanvas  # noqa: E402
from preview.export import write_frames  # noqa: E402
from preview.session import make_playback  # noqa: E402
from preview.frame import VECTOR_KEYS, ViewSettings, draw_frame  # noqa: E402
from preview.window import PlayerState, handle_key  # noqa: E402


def main():
    pygame.init()
    scene = load_scene(REPO / "scenes" / "footbridge_late_duck.toml")
    playback = make_playback(scene)
    surface = pygame.Surface((1280, 720))
    canvas = PygameCanvas(surface)
    view = ViewSettings(vectors=frozenset(VECTOR_KEYS), show_help=True)
    times = np.linspace(0, scene.duration, 240)
    for t in times[:10]:
        draw_frame(canvas, playback, t, view)
    for frame in ("car", "ground", "split", "end", "plan"):
        v = ViewSettings(frame=frame, vectors=frozenset(VECTOR_KEYS))
        playback = make_playback(scene)   # a fresh run: nothing remembered from the pass before
        t0 = time.perf_counter()
        for t in times:
            draw_frame(canvas, playback, t, v)
        per = (time.perf_counter() - t0) / len(times)
        print(f"draw 1280x720, {frame} frame, all overlays: {per * 1000:.2f} ms per frame "
              f"(target <= 8 ms, ratio {0.008 / per:.2f}); {1 / per:.0f} fps headless")
    with tempfile.TemporaryDirectory() as folder:
        export_times = np.arange(0, 5, 1 / 24)
        for name in ("clip.mp4", "clip.gif"):
            t0 = time.perf_counter()
            write_frames(playback, export_times, ViewSettings(frame="split"), (1280, 720), Path(folder) / name)
            rate = len(export_times) / (time.perf_counter() - t0)
            print(f"export {name[-3:].upper()} 1280x720 split: {rate:.1f} frames per second")
    state = PlayerState(playback, ViewSettings())
    latencies = []
    for key in ["up"] * 5 + ["down"] * 5:
        t0 = time.perf_counter()
        handle_key(state, key)
        draw_frame(canvas, state.playback, 5.0, state.view)
        latencies.append(time.perf_counter() - t0)
    print(f"speed key -> re-simulate -> redraw: median {np.median(latencies) * 1000:.1f} ms, "
          f"worst {max(latencies) * 1000:.1f} ms (target <= 100 ms)")


if __name__ == "__main__":
    main()
