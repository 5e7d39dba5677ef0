"""The small drawing interface every picture goes through.

`PygameCanvas` draws on a pygame Surface (window, exports); `FigureCanvas`
draws vectors into a matplotlib axes (the brief's key frames, at print
resolution); `RecordingCanvas` records the calls and every text's box, so the
drawing logic and the label layout are tested without pixels. Coordinates are
screen pixels, y down; colours are RGB tuples. Text is measured with the
bundled DejaVu fonts in every canvas, so a layout is the same wherever it is
drawn.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

FONT_DIR = Path(__file__).resolve().parent / "fonts"
_FONTS: dict = {}


def font_file(bold: bool, mono: bool) -> Path:
    return FONT_DIR / ("DejaVuSansMono.ttf" if mono else ("DejaVuSans-Bold.ttf" if bold else "DejaVuSans.ttf"))


def _font(size: int, bold: bool, mono: bool):
    key = (int(size), bold, mono)
    found = _FONTS.get(key)
    if found is not None:
        return found
    import os
    os.environ.setdefault("PYGAME_HIDE_SUPPORT_PROMPT", "1")
    import pygame
    if not pygame.font.get_init():
        pygame.font.init()
    _FONTS[key] = pygame.font.Font(str(font_file(bold, mono)), int(size))
    return _FONTS[key]


_MEASURED: dict = {}


def measure(string: str, size: int, bold: bool = False, mono: bool = False) -> tuple[int, int]:
    """Width and height in pixels of a line of text in the bundled fonts (remembered: a frame measures
    the same labels every time)."""
    key = (string, int(size), bold, mono)
    found = _MEASURED.get(key)
    if found is None:
        if len(_MEASURED) > 20_000:
            _MEASURED.clear()
        found = _MEASURED[key] = _font(size, bold, mono).size(string)
    return found


def anchored(pos, w: float, h: float, anchor: str) -> tuple[float, float, float, float]:
    """The (x, y, w, h) box of a text of size w x h placed at pos by its anchor."""
    x, y = pos
    if anchor in ("topright", "midright", "bottomright"):
        x -= w
    elif anchor in ("midtop", "center", "midbottom"):
        x -= w / 2
    if anchor in ("bottomleft", "midbottom", "bottomright"):
        y -= h
    elif anchor in ("midleft", "center", "midright"):
        y -= h / 2
    return (x, y, w, h)


class Canvas:
    """What frame drawing needs: lines, arrows, circles, polygons, rectangles and text."""

    size: tuple[int, int]
    tag: str = ""

    def fill(self, color) -> None: ...
    def line(self, p0, p1, color, width: int = 1) -> None: ...
    def polyline(self, points, color, width: int = 1) -> None: ...
    def circle(self, center, radius: float, color, width: int = 0) -> None: ...
    def polygon(self, points, color, width: int = 0) -> None: ...
    def rect(self, x: float, y: float, w: float, h: float, color, width: int = 0, alpha: int = 255) -> None: ...
    def text(self, pos, string: str, color, size: int = 14, anchor: str = "topleft", bold: bool = False,
             mono: bool = False) -> tuple[int, int]: ...

    def arrow(self, p0, p1, color, width: int = 2, head: float = 9.0) -> None:
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
    """Records every call as (kind, args, colour, tag); a text's args are (position, string, box), a
    rectangle's (x, y, w, h, outline width; 0 filled)."""

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
        self.calls.append(("rect", (x, y, w, h, width), color, self.tag))

    def text(self, pos, string, color, size=14, anchor="topleft", bold=False, mono=False):
        w, h = measure(string, size, bold, mono)
        self.calls.append(("text", (tuple(pos), string, anchored(pos, w, h, anchor)), color, self.tag))
        return (w, h)

    def tagged(self, tag: str) -> list:
        return [c for c in self.calls if c[3] == tag]

    def texts(self) -> list[str]:
        return [c[1][1] for c in self.calls if c[0] == "text"]

    def text_boxes(self) -> list[tuple[str, str, tuple]]:
        """(tag, string, (x, y, w, h)) of every text drawn."""
        return [(c[3], c[1][1], c[1][2]) for c in self.calls if c[0] == "text"]


class PygameCanvas(Canvas):
    """Draws on a pygame Surface with anti-aliased lines and the bundled DejaVu fonts."""

    def __init__(self, surface):
        import pygame
        self.pg = pygame
        self.surface = surface
        self.size = surface.get_size()
        self.tag = ""

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
        image = _font(size, bold, mono).render(string, True, color)
        rect = image.get_rect(**{anchor: (int(pos[0]), int(pos[1]))})
        self.surface.blit(image, rect)
        return image.get_size()


class FigureCanvas(Canvas):
    """Draws vectors into a matplotlib axes that spans `size` pixels (y down): text stays text,
    lines stay lines, so a key frame prints sharp at any resolution."""

    def __init__(self, ax, size: tuple[int, int]):
        from matplotlib import font_manager
        self.ax = ax
        self.size = size
        self.tag = ""
        self._z = 0
        ax.set_xlim(0, size[0])
        ax.set_ylim(size[1], 0)
        ax.set_axis_off()
        self._fonts = {(b, m): font_manager.FontProperties(fname=str(font_file(b, m)))
                       for b in (False, True) for m in (False, True)}
        figure_width_in = ax.get_position().width * ax.figure.get_figwidth()
        self._points_per_pixel = figure_width_in * 72.0 / size[0]

    def _c(self, color):
        return tuple(c / 255.0 for c in color)

    def _next(self) -> int:
        self._z += 1
        return self._z

    def _lw(self, width) -> float:
        return max(0.3, width * self._points_per_pixel)

    def fill(self, color):
        self.rect(0, 0, *self.size, color)

    def line(self, p0, p1, color, width=1):
        self.ax.plot([p0[0], p1[0]], [p0[1], p1[1]], color=self._c(color), lw=self._lw(width),
                     solid_capstyle="round", zorder=self._next())

    def polyline(self, points, color, width=1):
        if len(points) >= 2:
            xs, ys = zip(*points)
            self.ax.plot(xs, ys, color=self._c(color), lw=self._lw(width), zorder=self._next())

    def circle(self, center, radius, color, width=0):
        from matplotlib.patches import Circle
        self.ax.add_patch(Circle(center, radius, fill=width == 0, color=self._c(color), lw=self._lw(width),
                                 zorder=self._next()))

    def polygon(self, points, color, width=0):
        from matplotlib.patches import Polygon
        if len(points) >= 3:
            self.ax.add_patch(Polygon(points, closed=True, fill=width == 0, color=self._c(color),
                                      lw=self._lw(max(width, 1)), zorder=self._next()))

    def rect(self, x, y, w, h, color, width=0, alpha=255):
        from matplotlib.patches import Rectangle
        self.ax.add_patch(Rectangle((x, y), w, h, fill=width == 0, facecolor=self._c(color) if width == 0 else "none",
                                    edgecolor=self._c(color), lw=self._lw(width) if width else 0,
                                    alpha=alpha / 255.0, zorder=self._next()))

    def text(self, pos, string, color, size=14, anchor="topleft", bold=False, mono=False):
        w, h = measure(string, size, bold, mono)
        x, y, _, _ = anchored(pos, w, h, anchor)
        self.ax.text(x, y, string, color=self._c(color), fontproperties=self._fonts[(bold, mono)],
                     fontsize=size * self._points_per_pixel, va="top", ha="left", zorder=self._next(), clip_on=True)
        return (w, h)
