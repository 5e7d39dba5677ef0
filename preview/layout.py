"""Keeping the picture's labels apart and inside their boxes.

A frame is drawn panels first: each panel reserves its rectangle. Labels that
can move (a failure callout, a structure's name, a drift figure, a message)
then take the first of their candidate places that is free and inside their
view, or the least covered one. Text is fitted to the width it is given,
cut with an ellipsis rather than run out of its box.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from preview.canvas import measure


@dataclass(frozen=True)
class Box:
    x: float
    y: float
    w: float
    h: float

    @property
    def right(self) -> float:
        return self.x + self.w

    @property
    def bottom(self) -> float:
        return self.y + self.h

    def overlap(self, other: "Box") -> float:
        """Area shared with another box (0 when apart)."""
        w = min(self.right, other.right) - max(self.x, other.x)
        h = min(self.bottom, other.bottom) - max(self.y, other.y)
        return max(0.0, w) * max(0.0, h)

    def inside(self, other: "Box") -> bool:
        return (self.x >= other.x - 0.5 and self.y >= other.y - 0.5 and self.right <= other.right + 0.5
                and self.bottom <= other.bottom + 0.5)

    def clamped(self, area: "Box") -> "Box":
        """This box moved (not resized) as little as it takes to lie inside `area`, where it fits."""
        x = min(max(self.x, area.x), max(area.x, area.right - self.w))
        y = min(max(self.y, area.y), max(area.y, area.bottom - self.h))
        return Box(x, y, self.w, self.h)


@dataclass
class Layout:
    """The boxes taken so far in one frame."""

    taken: list = field(default_factory=list)

    def reserve(self, box: Box) -> Box:
        self.taken.append(box)
        return box

    def place(self, w: float, h: float, candidates, area: Box, optional: bool = False) -> Box | None:
        """The first free candidate top-left (x, y) for a w x h box inside `area`, else the free place nearest
        the first, else the least covered; reserved. `optional`: None instead of a covered place (a label
        the picture can do without)."""
        candidates = list(candidates)
        box = self.free_place(w, h, candidates, area)
        if box is None:
            if optional:
                return None
            boxes = [Box(x, y, w, h).clamped(area) for x, y in candidates] or [Box(area.x, area.y, w, h)]
            box = min(boxes, key=lambda b: sum(b.overlap(t) for t in self.taken))   # the least covered
        return self.reserve(box)

    def free_place(self, w: float, h: float, candidates, area: Box) -> Box | None:
        """Where `place` puts a w x h box when it finds a free place: the first free candidate, else the free
        place nearest the first one; None when there is none. Nothing is reserved."""
        candidates = list(candidates)
        for x, y in candidates:
            box = Box(x, y, w, h).clamped(area)
            if self.free(box):
                return box
        x0, y0 = candidates[0] if candidates else (area.x, area.y)
        return self.nearest_free(w, h, area, x0, y0)

    def nearest_free(self, w: float, h: float, area: Box, x0: float, y0: float, step: float = 12.0):
        """The free w x h box nearest (x0, y0) on a grid of `step` px over `area`, or None: every grid
        place tested against every taken box at once (numpy), as a frame has thousands of places."""
        ny, nx = int(max(0.0, area.h - h) // step) + 1, int(max(0.0, area.w - w) // step) + 1
        ys, xs = np.meshgrid(area.y + step * np.arange(ny), area.x + step * np.arange(nx), indexing="ij")
        xs, ys = xs.ravel(), ys.ravel()
        free = np.ones(xs.shape, bool)
        for t in self.taken:
            across = np.minimum(xs + w, t.right) - np.maximum(xs, t.x)
            down = np.minimum(ys + h, t.bottom) - np.maximum(ys, t.y)
            free &= ~((across > 0) & (down > 0))
        if not free.any():
            return None
        k = np.flatnonzero(free)
        best = k[np.argmin((xs[k] - x0) ** 2 + (ys[k] - y0) ** 2)]
        return Box(float(xs[best]), float(ys[best]), w, h)

    def free(self, box: Box) -> bool:
        return all(box.overlap(t) == 0 for t in self.taken)


def fit(text: str, size: int, width: float, bold: bool = False, mono: bool = False) -> str:
    """The text, cut with an ellipsis so that it is at most `width` pixels wide."""
    if measure(text, size, bold, mono)[0] <= width:
        return text
    lo, hi = 0, len(text)
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if measure(text[:mid].rstrip() + "…", size, bold, mono)[0] <= width:
            lo = mid
        else:
            hi = mid - 1
    return text[:lo].rstrip() + "…" if lo else ""


def wrap(text: str, size: int, width: float, bold: bool = False, mono: bool = False) -> list[str]:
    """The text broken into lines at most `width` pixels wide (a word too long for a line is cut)."""
    lines: list[str] = []
    for paragraph in text.splitlines() or [""]:
        line = ""
        for word in paragraph.split(" "):
            attempt = f"{line} {word}" if line else word
            if measure(attempt, size, bold, mono)[0] <= width:
                line = attempt
            else:
                if line:
                    lines.append(line)
                line = fit(word, size, width, bold, mono)
        lines.append(line)
    return lines
