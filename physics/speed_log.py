"""A measured speed log (a GPS or inertial logger's CSV) as the consist's speed profile.

The scene names the log's time and speed columns and their units. The log is
read strictly: a cell that is not a number, time that does not increase, a gap
longer than the stated limit, or a log shorter than the beat is an error that
names the file's line; nothing is extrapolated. The beat's t = 0 is the log's
first sample. The log is resampled to the engine step by straight lines between
samples and smoothed with a Savitzky-Golay filter (scipy.signal.savgol_filter,
quadratic, over a stated window, on the whole log so that only its first window
is an edge) before its acceleration is taken (the filter's own first
derivative); distance is the smoothed speed integrated by the trapezoid rule.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.integrate import cumulative_trapezoid
from scipy.signal import savgol_filter

from physics.units import QuantityError, parse_quantity

MAX_LOG_BYTES = 20_000_000
DEFAULT_MAX_GAP = 1.0        # s between samples before a log is refused (a logger at 1 Hz or faster)
DEFAULT_SMOOTHING = 1.0      # s, the Savitzky-Golay window
POLY_ORDER = 2    # quadratic: steadier than cubic at the log's first window, where it must extrapolate its fit


class LogError(ValueError):
    """A log that cannot be used: the message names the line (1-based) where known."""

    def __init__(self, message: str, line: int | None = None):
        super().__init__(message)
        self.line = line


@dataclass(frozen=True, eq=False)
class SpeedLog:
    """A log as the engine uses it: raw samples (time from the first, s; speed, m/s) and the smoothed
    speed, acceleration and distance on the engine's step grid."""

    file: str
    raw_time: np.ndarray
    raw_speed: np.ndarray
    time: np.ndarray
    speed: np.ndarray
    accel: np.ndarray
    distance: np.ndarray
    window: float

    @property
    def top_speed(self) -> float:
        return float(np.max(self.speed))

    def at(self, times) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(speed, acceleration, distance) at `times` (s) within the beat, by straight lines between
        grid points."""
        t = np.asarray(times, dtype=float)
        return (np.interp(t, self.time, self.speed), np.interp(t, self.time, self.accel),
                np.interp(t, self.time, self.distance))


def unit_factor(unit: str, dimension: str) -> float:
    """SI value of one `unit` (e.g. "km/h", "s"); raises LogError for a unit of the wrong kind."""
    try:
        return parse_quantity(f"1 {unit}", dimension)
    except QuantityError as exc:
        raise LogError(f"unit {unit!r}: {exc}") from None


def read_log(path: Path, time_column: str, time_unit: str, speed_column: str, speed_unit: str,
             max_gap: float, smoothing: float, duration: float, step: float) -> SpeedLog:
    """Read, check, resample and smooth a log for a beat of `duration` at engine step `step` (s)."""
    time_scale = unit_factor(time_unit, "time")
    speed_scale = unit_factor(speed_unit, "speed")
    try:
        size = path.stat().st_size
        if size > MAX_LOG_BYTES:
            raise LogError(f"{size:,} bytes; a log may have at most {MAX_LOG_BYTES:,}")
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise LogError(f"cannot read it: {exc.strerror or exc}") from None
    except UnicodeDecodeError:
        raise LogError("not UTF-8 text") from None
    times, speeds, lines = _columns(text, time_column, speed_column)
    times = (np.array(times) - times[0]) * time_scale
    speeds = np.array(speeds) * speed_scale
    for i in range(1, times.size):
        if not times[i] > times[i - 1]:
            raise LogError(f"time {times[i]:g} s does not increase from the line before", lines[i])
        if times[i] - times[i - 1] > max_gap:
            raise LogError(f"a gap of {times[i] - times[i - 1]:g} s since line {lines[i - 1]}, longer than "
                           f"max_gap ({max_gap:g} s)", lines[i])
    if np.any(speeds < 0):
        i = int(np.flatnonzero(speeds < 0)[0])
        raise LogError(f"speed {speeds[i]:g} m/s is negative", lines[i])
    if times.size < 2 or times[-1] < duration - 1e-9:
        end = times[-1] if times.size else 0.0
        raise LogError(f"the log covers {end:g} s from its first sample; the beat lasts {duration:g} s "
                       "(nothing is extrapolated)", lines[-1] if lines else None)
    grid = np.arange(int(times[-1] / step + 1e-9) + 1) * step
    resampled = np.interp(grid, times, speeds)
    window = max(2 * int(round(smoothing / step / 2)) + 1, POLY_ORDER + 3)   # odd, at least 5 points
    window = min(window, grid.size if grid.size % 2 else grid.size - 1)
    if window <= POLY_ORDER:
        raise LogError(f"the log is too short to smooth over {smoothing:g} s")
    speed = np.maximum(savgol_filter(resampled, window, POLY_ORDER, mode="interp"), 0.0)
    accel = savgol_filter(resampled, window, POLY_ORDER, deriv=1, delta=step, mode="interp")
    distance = cumulative_trapezoid(speed, grid, initial=0.0)
    return SpeedLog(str(path), times, speeds, grid, speed, accel, distance, window * step)


def _columns(text: str, time_column: str, speed_column: str) -> tuple[list, list, list]:
    """The two named columns as floats, with each row's line number; comment lines start with #."""
    rows = [(n, line) for n, line in enumerate(text.splitlines(), start=1)
            if line.strip() and not line.lstrip().startswith("#")]
    if not rows:
        raise LogError("no header line and no data")
    header_line, header = rows[0]
    names = [c.strip() for c in next(csv.reader([header]))]
    for wanted in (time_column, speed_column):
        if wanted not in names:
            raise LogError(f"no column {wanted!r} in the header; it has {', '.join(repr(c) for c in names)}",
                           header_line)
    ti, si = names.index(time_column), names.index(speed_column)
    times, speeds, lines = [], [], []
    for n, line in rows[1:]:
        cells = next(csv.reader([line]))
        if len(cells) <= max(ti, si):
            raise LogError(f"{len(cells)} cells; the header has {len(names)}", n)
        values = []
        for index, name in ((ti, time_column), (si, speed_column)):
            cell = cells[index].strip()
            try:
                value = float(cell)
            except ValueError:
                raise LogError(f"column {name!r}: {cell!r} is not a number", n) from None
            if not math.isfinite(value):
                raise LogError(f"column {name!r}: {cell!r} is not a finite number", n)
            values.append(value)
        times.append(values[0])
        speeds.append(values[1])
        lines.append(n)
    if not times:
        raise LogError("a header but no data", header_line)
    return times, speeds, lines
