"""Headless exports: MP4 (H.264), GIF, a folder of PNG frames, and single PNGs.

The same `draw_frame` as the window, on an off-screen pygame Surface. Every
output goes through preview.outputs: written under a temporary name, checked,
and moved into place only when whole; roofbeat replaces only its own outputs.
"""

from __future__ import annotations

import math
import os
import sys
import tempfile
from pathlib import Path

import numpy as np

from preview.frame import ViewSettings, draw_frame
from preview.outputs import OutputSet, check_target, stop_if_terminated
from preview.session import OutputError, Playback, UsageError, make_playback

MAX_FRAMES = 36_000  # 25 minutes at 24 fps: an export is a clip, not a feature


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


def save_png(pixels: np.ndarray, path: Path) -> Path:
    """One PNG, written under a temporary name and moved into place."""
    from PIL import Image
    with OutputSet() as outs:
        tmp = outs.file(Path(path))
        Image.fromarray(pixels).save(tmp, format="PNG")
    return Path(path)


class Progress:
    """A one-line progress bar on stderr for long exports."""

    def __init__(self, total: int, label: str):
        self.total, self.label = max(total, 1), label
        self.live = sys.stderr.isatty()

    def update(self, done: int) -> None:
        stop_if_terminated()
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
    """Write frames to OUT (.mp4, .gif, or a folder of PNG frames); returns the final path.

    Nothing appears under OUT unless the whole export was written and checked.
    """
    out = Path(out)
    suffix = out.suffix.lower()
    progress = Progress(len(times), f"rendering {out.name}")
    frames = (frame_pixels(playback, t, view, size) for t in times)
    _pygame()   # imported before any temporary file exists: a SIGTERM then lands in our own code
    with OutputSet() as outs:
        if suffix == ".mp4":
            _write_mp4(frames, _fps_of(times), size, len(times), outs.file(out), progress)
        elif suffix == ".gif":
            _write_gif(frames, _fps_of(times), outs.file(out), progress)
        else:
            _write_png_folder(frames, outs.folder(out), progress)
    progress.close()
    return out


def _fps_of(times) -> float:
    return 1.0 / (times[1] - times[0]) if len(times) > 1 else 24.0


def _write_mp4(frames, fps: float, size, count: int, tmp: Path, progress) -> None:
    """H.264 through the ffmpeg that imageio-ffmpeg ships; its exit status and a read-back are checked."""
    import subprocess

    import imageio_ffmpeg
    width, height = size
    cmd = [imageio_ffmpeg.get_ffmpeg_exe(), "-y", "-loglevel", "error", "-f", "rawvideo", "-pix_fmt", "rgb24",
           "-s", f"{width}x{height}", "-r", f"{fps:.6g}", "-i", "-", "-an", "-c:v", "libx264", "-pix_fmt", "yuv420p",
           "-crf", "20", "-f", "mp4", str(tmp)]
    with tempfile.TemporaryFile() as errors:
        proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.DEVNULL, stderr=errors)
        try:
            for n, pixels in enumerate(frames, start=1):
                proc.stdin.write(pixels.tobytes())
                progress.update(n)
            proc.stdin.close()
        except BrokenPipeError:
            pass  # the encoder stopped: its status and message say why
        except BaseException:
            proc.kill()
            proc.wait()
            raise
        if proc.wait() != 0:
            errors.seek(0)
            said = errors.read().decode(errors="replace").strip().splitlines()
            raise OutputError(f"{tmp.name}: the video encoder failed ({said[-1] if said else f'status {proc.returncode}'})")
    written, _ = imageio_ffmpeg.count_frames_and_secs(str(tmp))
    if written != count:
        raise OutputError(f"the video holds {written} of its {count} frames on reading it back; nothing was written")


def _write_gif(frames, fps: float, tmp: Path, progress) -> None:
    """GIF frames streamed to the file as they are drawn: one fixed palette, delays in hundredths of a second."""
    from PIL import GifImagePlugin, Image
    delay_ms = int(round(100.0 / fps)) * 10
    palette = gif_palette()
    with open(tmp, "wb") as f:
        for n, pixels in enumerate(frames, start=1):
            image = Image.fromarray(pixels).quantize(palette=palette, dither=Image.Dither.NONE)
            if n == 1:
                header, _ = GifImagePlugin.getheader(image, None, {"loop": 0, "duration": delay_ms})
                f.writelines(header)
            f.writelines(GifImagePlugin.getdata(image, duration=delay_ms, disposal=1))
            progress.update(n)
        f.write(b";")  # the GIF trailer


def gif_palette():
    """One fixed palette for every GIF: the preview's own colours exactly, a grey
    ramp for anti-aliased edges, and a 6x6x6 colour cube for everything else."""
    from PIL import Image

    from preview import palette
    named = [v for v in vars(palette).values() if isinstance(v, tuple) and len(v) == 3
             and all(isinstance(c, int) for c in v)]
    greys = [(g, g, g) for g in range(0, 256, 15)]
    cube = [(r, g, b) for r in range(0, 256, 51) for g in range(0, 256, 51) for b in range(0, 256, 51)]
    colours = list(dict.fromkeys(named + greys + cube))[:256]
    colours += [(0, 0, 0)] * (256 - len(colours))
    image = Image.new("P", (1, 1))
    image.putpalette([c for rgb in colours for c in rgb])
    return image


def _write_png_folder(frames, tmp: Path, progress) -> None:
    from PIL import Image
    for n, pixels in enumerate(frames, start=1):
        Image.fromarray(pixels).save(tmp / f"frame_{n:05d}.png")
        progress.update(n)


def render(scene, args) -> int:
    """`roofbeat render`: export the preview headless."""
    size = tuple(args.size)
    fps = args.fps or scene.frame_rate
    try:
        times = frame_times(scene.duration, fps, args.t_from, args.t_to)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    if len(times) > MAX_FRAMES:
        raise UsageError(f"{len(times):,} frames is more than one export writes ({MAX_FRAMES:,}): "
                         "export a part with --from and --to, or fewer --fps")
    out = Path(args.output)
    check_target(out, folder=out.suffix == "")
    if out.suffix.lower() in (".csv", ".glb"):
        return _render_data(scene, args, out, fps)
    if out.suffix.lower() == ".mp4" and even16(size) != size:
        size = even16(size)
        print(f"roofbeat: MP4 size rounded up to {size[0]}x{size[1]} (multiples of 16)", file=sys.stderr)
    trackside = getattr(args, "trackside", None)
    if trackside is not None and args.frame in ("end", "plan"):
        raise UsageError(f"--trackside places a ground-frame camera beside the track; it does not apply to "
                         f"--frame {args.frame} (use --frame ground or split)")
    playback = make_playback(scene)
    frame = "ground" if trackside is not None and args.frame == "car" else args.frame
    view = ViewSettings(frame=frame, trackside=trackside, legend=getattr(args, "legend", True))
    try:
        write_frames(playback, times, view, size, out)
    except OSError as exc:
        raise OutputError(f"{out}: could not write: {exc.strerror or exc}") from None
    what = f"{frame} view" if frame in ("end", "plan") else f"{frame} frame"
    print(f"wrote {out} ({len(times)} frames at {fps} fps, {size[0]}x{size[1]}, {what}); "
          f"verdict {playback.summary['verdict']}")
    return 0


def _render_data(scene, args, out: Path, fps: float) -> int:
    """The beat as data: a CSV table or a glTF 2.0 binary, sampled at the video frame rate."""
    from preview.beat_data import beat_times, write_csv, write_glb
    try:
        times = beat_times(scene, fps, args.t_from, args.t_to)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    if len(times) > MAX_FRAMES:
        raise UsageError(f"{len(times):,} frames is more than one export writes ({MAX_FRAMES:,}): "
                         "export a part with --from and --to, or fewer --fps")
    playback = make_playback(scene)
    writer = write_csv if out.suffix.lower() == ".csv" else write_glb
    try:
        with OutputSet() as outs:
            writer(playback, times, outs.file(out))
    except OSError as exc:
        raise OutputError(f"{out}: could not write: {exc.strerror or exc}") from None
    print(f"wrote {out} ({len(times)} frames at {fps} fps, {times[0]:.2f}-{times[-1]:.2f} s); "
          f"verdict {playback.summary['verdict']}")
    return 0
