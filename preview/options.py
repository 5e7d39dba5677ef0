"""Command-line option values, checked where argparse reads them: a bad value
is a usage error (exit 2) that names the option and says what was expected."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

MAX_SAMPLES = 2_000_000
MAX_POINTS = 401           # a sweep's grid, before refinement
MAX_SEED = 2**63 - 1
SIZE_RANGE = ((640, 360), (7680, 4320))  # below 640x360 the caution and the panels do not fit
PLOT_SUFFIXES = (".png", ".pdf", ".svg")


def whole(low: int, high: int, what: str):
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number ({what}), got {text!r}") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"expected {what} from {low:,} to {high:,}, got {value:,}")
        return value
    return parse


def seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a time in seconds such as 2.5, got {text!r}") from None
    if not math.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"expected a time of 0 s or more, got {text!r}")
    return value


def frame_size(text: str) -> tuple[int, int]:
    try:
        width, height = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected WIDTHxHEIGHT such as 1280x720, got {text!r}") from None
    (w0, h0), (w1, h1) = SIZE_RANGE
    if not (w0 <= width <= w1 and h0 <= height <= h1):
        raise argparse.ArgumentTypeError(f"{text} is outside {w0}x{h0} to {w1}x{h1}")
    return width, height


def render_output(text: str) -> Path:
    path = Path(text)
    if path.suffix.lower() not in (".mp4", ".gif", ".csv", ".glb", ""):
        raise argparse.ArgumentTypeError(f"expected OUT.mp4, OUT.gif, a folder name (no suffix) for PNG frames, "
                                         f"OUT.csv or OUT.glb for the beat as data, got {text!r}")
    return path


def brief_output(text: str) -> Path:
    path = Path(text)
    if path.suffix.lower() != ".pdf":
        raise argparse.ArgumentTypeError(f"the brief is a PDF: give a name ending .pdf, got {text!r}")
    return path


def plot_output(text: str) -> Path:
    path = Path(text)
    if path.suffix.lower() not in PLOT_SUFFIXES:
        raise argparse.ArgumentTypeError(f"expected a name ending {', '.join(PLOT_SUFFIXES)}, got {text!r}")
    return path


def vary(text: str):
    from preview.analysis import parse_vary
    try:
        return parse_vary(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def length(text: str) -> float:
    """A ground position such as "120 m" or "400 ft" (metres without a unit), in metres."""
    from physics.units import QuantityError, parse_quantity
    try:
        value = parse_quantity(text if any(c.isalpha() for c in text) else f"{text} m", "length")
    except QuantityError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None
    if not math.isfinite(value) or abs(value) > 1e7:
        raise argparse.ArgumentTypeError(f"expected a ground position within 10,000 km, got {text!r}")
    return value
