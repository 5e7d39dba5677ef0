"""The small drawing interface every picture goes through.

`PygameCanvas` draws on a pygame Surface (window, exports, brief frames);
`RecordingCanvas` only records the calls, so the drawing logic is tested
without pixels. Coordinates are screen pixels; colours are RGB tuples.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

FONT_DIR = Path(__file__).resolve().parent / "fonts"


class Canvas:
    """What frame drawing needs: lines, arrows, circles, polygons, rectangles and text."""

    size: tuple[int, int]

    def fill(self, color) -> None: ...
    def line(self, p0, p1, color, width: int = 1) -> None: ...
    def polyline(self, points, color, width: int = 1) -> None: ...
    def circle(self, center, radius: float, color, width: int = 0) -> None: ...
    def polygon(self, points, color, width: int = 0) -> None: ...
    def rect(self, x: float, y: float, w: float, h: float, color, width: int = 0, alpha: int = 255) -> None: ...
    def text(self, pos, string: str, color, size: int = 14, anchor: str = "topleft", bold: bool = False,
             mono: bool = False) -> tuple[int, int]: ...

    def arrow(self, p0, p1, color, width: int = 2, head: float = 9.0, tag: str = "") -> None:
        """A line with a filled head at p1; nothing for a zero-length arrow."""
        dx, dy = p1[0] - p0[0], p1[1] - p0[1]
        length = math.hypot(dx, dy)
        if length < 1.0:
            return
        ux, uy = dx / length, dy / length
        h = min(head, 0.6 * length)
        base = (p1[0] - ux * h, p1[1] - uy * h)
        self.line(p0, base, color, width)
        left = (base[0] - uy * h * 0.5, base[1] + ux * h * 0.5)
        right = (base[0] + uy * h * 0.5, base[1] - ux * h * 0.5)
        self.polygon([p1, left, right], color)


@dataclass
class RecordingCanvas(Canvas):
    """Records every call as (kind, args) for tests of the drawing logic."""

    size: tuple[int, int] = (1280, 720)
    calls: list = field(default_factory=list)
    tag: str = ""

    def fill(self, color):
        self.calls.append(("fill", None, color, self.tag))

    def line(self, p0, p1, color, width=1):
        self.calls.append(("line", (tuple(p0), tuple(p1)), color, self.tag))

    def polyline(self, points, color, width=1):
        self.calls.append(("polyline", [tuple(p) for p in points], color, self.tag))

    def circle(self, center, radius, color, width=0):
        self.calls.append(("circle", (tuple(center), radius), color, self.tag))

    def polygon(self, points, color, width=0):
        self.calls.append(("polygon", [tuple(p) for p in points], color, self.tag))

    def rect(self, x, y, w, h, color, width=0, alpha=255):
        self.calls.append(("rect", (x, y, w, h), color, self.tag))

    def text(self, pos, string, color, size=14, anchor="topleft", bold=False, mono=False):
        self.calls.append(("text", (tuple(pos), string), color, self.tag))
        return (int(len(string) * size * 0.6), size)

    def tagged(self, tag: str) -> list:
        return [c for c in self.calls if c[3] == tag]

    def texts(self) -> list[str]:
        return [c[1][1] for c in self.calls if c[0] == "text"]


class PygameCanvas(Canvas):
    """Draws on a pygame Surface with anti-aliased lines and the bundled DejaVu fonts."""

    _fonts: dict = {}

    def __init__(self, surface):
        import pygame
        self.pg = pygame
        self.surface = surface
        self.size = surface.get_size()
        self.tag = ""
        if not pygame.font.get_init():
            pygame.font.init()

    def _font(self, size: int, bold: bool, mono: bool):
        key = (size, bold, mono)
        if key not in self._fonts:
            name = "DejaVuSansMono.ttf" if mono else ("DejaVuSans-Bold.ttf" if bold else "DejaVuSans.ttf")
            self._fonts[key] = self.pg.font.Font(str(FONT_DIR / name), size)
        return self._fonts[key]

    def fill(self, color):
        self.surface.fill(color)

    def line(self, p0, p1, color, width=1):
        if width <= 1:
            self.pg.draw.aaline(self.surface, color, p0, p1)
        else:
            self.pg.draw.line(self.surface, color, p0, p1, width)

    def polyline(self, points, color, width=1):
        if len(points) >= 2:
            if width <= 1:
                self.pg.draw.aalines(self.surface, color, False, points)
            else:
                self.pg.draw.lines(self.surface, color, False, points, width)

    def circle(self, center, radius, color, width=0):
        self.pg.draw.circle(self.surface, color, center, max(1, int(round(radius))), width)

    def polygon(self, points, color, width=0):
        if len(points) >= 3:
            self.pg.draw.polygon(self.surface, color, points, width)

    def rect(self, x, y, w, h, color, width=0, alpha=255):
        if alpha >= 255:
            self.pg.draw.rect(self.surface, color, self.pg.Rect(int(x), int(y), int(w), int(h)), width)
        else:
            layer = self.pg.Surface((max(1, int(w)), max(1, int(h))), self.pg.SRCALPHA)
            layer.fill((*color, alpha))
            self.surface.blit(layer, (int(x), int(y)))

    def text(self, pos, string, color, size=14, anchor="topleft", bold=False, mono=False):
        image = self._font(size, bold, mono).render(string, True, color)
        rect = image.get_rect(**{anchor: (int(pos[0]), int(pos[1]))})
        self.surface.blit(image, rect)
        return image.get_size()
