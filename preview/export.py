"""Headless exports: MP4 (H.264), GIF, a folder of PNG frames, and single PNGs.

The same `draw_frame` as the window, on an off-screen pygame Surface. Every
output is written under a temporary name and renamed at the end, so an
interrupted export never leaves a broken file under the requested name.
"""

from __future__ import annotations

import math
import os
import shutil
import sys
import tempfile
from dataclasses import replace
from pathlib import Path

import numpy as np

from preview.frame import ViewSettings, draw_frame
from preview.session import OutputError, Playback, make_playback


def _pygame():
    os.environ.setdefault("SDL_VIDEODRIVER", "dummy")
    os.environ.setdefault("PYGAME_HIDE_SUPPORT_PROMPT", "1")
    import pygame
    if not pygame.font.get_init():
        pygame.font.init()
    return pygame


def frame_pixels(playback: Playback, t: float, view: ViewSettings, size: tuple[int, int]) -> np.ndarray:
    """One drawn frame as an (height, width, 3) uint8 array."""
    pygame = _pygame()
    from preview.canvas import PygameCanvas
    surface = pygame.Surface(size)
    draw_frame(PygameCanvas(surface), playback, t, view)
    return np.ascontiguousarray(pygame.surfarray.array3d(surface).transpose(1, 0, 2))


def save_png(pixels: np.ndarray, path: Path) -> None:
    from PIL import Image
    path = Path(path)
    tmp = path.with_name(f".{path.name}.part")
    Image.fromarray(pixels).save(tmp, format="PNG")
    os.replace(tmp, path)


class Progress:
    """A one-line progress bar on stderr for long exports."""

    def __init__(self, total: int, label: str):
        self.total, self.label = max(total, 1), label
        self.live = sys.stderr.isatty()

    def update(self, done: int) -> None:
        if self.live:
            filled = int(30 * done / self.total)
            sys.stderr.write(f"\r{self.label} [{'#' * filled}{'.' * (30 - filled)}] {done}/{self.total}")
            sys.stderr.flush()

    def close(self) -> None:
        if self.live:
            sys.stderr.write("\n")


def frame_times(duration: float, fps: int, t_from: float | None, t_to: float | None) -> np.ndarray:
    start = max(0.0, t_from or 0.0)
    stop = min(duration, t_to if t_to is not None else duration)
    if stop <= start:
        raise ValueError(f"--from {start:g} s must be before --to {stop:g} s (the beat lasts {duration:g} s)")
    return start + np.arange(int(math.floor((stop - start) * fps + 1e-9)) + 1) / fps


def even16(size: tuple[int, int]) -> tuple[int, int]:
    """H.264 encoders want sizes in multiples of 16: round up."""
    return (int(math.ceil(size[0] / 16) * 16), int(math.ceil(size[1] / 16) * 16))


def write_frames(playback, times, view, size, out: Path) -> Path:
    """Write frames to OUT (.mp4, .gif, or a folder); returns the final path."""
    out = Path(out)
    suffix = out.suffix.lower()
    progress = Progress(len(times), f"rendering {out.name}")
    frames = (frame_pixels(playback, t, view, size) for t in times)
    if suffix == ".mp4":
        _write_mp4(frames, times, size, out, progress)
    elif suffix == ".gif":
        _write_gif(frames, times, out, progress)
    else:
        _write_png_folder(frames, out, progress)
    progress.close()
    return out


def _fps_of(times) -> float:
    return 1.0 / (times[1] - times[0]) if len(times) > 1 else 24.0


def _write_mp4(frames, times, size, out: Path, progress) -> None:
    import imageio_ffmpeg
    tmp = out.with_name(f".{out.name}.part.mp4")
    writer = imageio_ffmpeg.write_frames(str(tmp), size, fps=_fps_of(times), codec="libx264",
                                         pix_fmt_out="yuv420p", macro_block_size=16, quality=7)
    writer.send(None)
    try:
        for n, pixels in enumerate(frames, start=1):
            writer.send(pixels)
            progress.update(n)
        writer.close()
    except BaseException:
        writer.close()
        tmp.unlink(missing_ok=True)
        raise
    os.replace(tmp, out)


def _write_gif(frames, times, out: Path, progress) -> None:
    from PIL import Image
    # GIF stores delays in hundredths of a second: round the frame delay to that.
    delay_ms = int(round(100.0 / _fps_of(times))) * 10
    palette = gif_palette()
    images = []
    for n, pixels in enumerate(frames, start=1):
        images.append(Image.fromarray(pixels).quantize(palette=palette, dither=Image.Dither.NONE))
        progress.update(n)
    tmp = out.with_name(f".{out.name}.part")
    try:
        images[0].save(tmp, format="GIF", save_all=True, append_images=images[1:], duration=delay_ms, loop=0,
                       disposal=1, optimize=False)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    os.replace(tmp, out)


def gif_palette():
    """One fixed palette for every GIF: the preview's own colours exactly, a grey
    ramp for anti-aliased edges, and a 6x6x6 colour cube for everything else."""
    from PIL import Image

    from preview import frame
    named = [v for v in vars(frame).values() if isinstance(v, tuple) and len(v) == 3
             and all(isinstance(c, int) for c in v)]
    greys = [(g, g, g) for g in range(0, 256, 15)]
    cube = [(r, g, b) for r in range(0, 256, 51) for g in range(0, 256, 51) for b in range(0, 256, 51)]
    colours = list(dict.fromkeys(named + greys + cube))[:256]
    colours += [(0, 0, 0)] * (256 - len(colours))
    image = Image.new("P", (1, 1))
    image.putpalette([c for rgb in colours for c in rgb])
    return image


def _write_png_folder(frames, out: Path, progress) -> None:
    from PIL import Image
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.", dir=out.parent))
    try:
        for n, pixels in enumerate(frames, start=1):
            Image.fromarray(pixels).save(tmp / f"frame_{n:05d}.png")
            progress.update(n)
        if out.exists():
            shutil.rmtree(out) if out.is_dir() else out.unlink()
        os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def parse_size(text: str) -> tuple[int, int]:
    try:
        w, h = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise ValueError(f"--size expects WIDTHxHEIGHT such as 1280x720, got {text!r}") from None
    if not (160 <= w <= 7680 and 120 <= h <= 4320):
        raise ValueError(f"--size {text} is outside 160x120 to 7680x4320")
    return w, h


def render(scene, args) -> int:
    """`roofbeat render`: export the preview headless."""
    try:
        size = parse_size(args.size)
        fps = args.fps or scene.frame_rate
        if not 1 <= fps <= 120:
            raise ValueError(f"--fps must be 1 to 120, got {fps}")
        times = frame_times(scene.duration, fps, args.t_from, args.t_to)
    except ValueError as exc:
        raise OutputError(str(exc)) from None
    out = Path(args.output)
    if out.suffix.lower() == ".mp4" and even16(size) != size:
        size = even16(size)
        print(f"roofbeat: MP4 size rounded up to {size[0]}x{size[1]} (multiples of 16)", file=sys.stderr)
    if out.suffix.lower() not in (".mp4", ".gif", "") :
        raise OutputError(f"{out}: expected OUT.mp4, OUT.gif or a folder name for PNG frames")
    if not out.parent.exists():
        raise OutputError(f"{out}: the folder {out.parent} does not exist")
    playback = make_playback(scene)
    view = replace(ViewSettings(frame=args.frame), caption=True)
    try:
        write_frames(playback, times, view, size, out)
    except OSError as exc:
        raise OutputError(f"{out}: could not write: {exc.strerror or exc}") from None
    print(f"wrote {out} ({len(times)} frames at {fps} fps, {size[0]}x{size[1]}, {args.frame} frame); "
          f"verdict {playback.summary['verdict']}")
    return 0
