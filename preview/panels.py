"""The picture's panels: the readout, the frame banners, the legend, the
timeline, the caution line, the help and the messages.

`plan` works out every panel's text and box for one frame and reserves the
boxes in the frame's Layout (so the world's labels keep clear of them);
`draw` then draws them over the world. Panels are opaque: what lies under one
is hidden, never shown through a label. Every number is in the scene's
display units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from physics.aftermath import state_at
from physics.records import EVENT_WORDS, Event, Mode
from physics.units import display, to_display
from physics.verdict import verdict_so_far
from physics.wind_scales import beaufort
from preview.camera import GROUND
from preview.canvas import measure
from preview.caution import CAUTION_SHORT
from preview.layout import Box, Layout, fit, wrap
from preview.report import floor_to
from preview import air_layer, curves
from preview.palette import (AERO, CURVE, FACT, FAILURE, FAINT, FIGURE_TONES, HOLDS, INK, LANDING_ZONE, MARGINAL,
                             PANEL, PSEUDO, REACTION, SEGMENT_AERO, SOFT_INK, STRUCTURE, TOUCH, TRAIL, WEIGHT, WIND)
from preview.report import marginal_words, phase_words
from preview.road import beside, way
from preview.timecode import timecode

MARGIN = 10
TIMELINE_H = 26
LANE_H = 19         # two performers: the timeline has a lane of this height for each
TICK_H = 8          # room above the timeline for the structure and duck-by marks
CAUTION_SIZE = 11

# The vector keys 1-7 in order, with their colours and words.
VECTOR_LEGEND = (
    ("1", "weight", WEIGHT, "weight (at the centre of mass)"),
    ("2", "aero", AERO, "air load on the body"),
    ("3", "segments", SEGMENT_AERO, "air load per segment"),
    ("4", "reaction", REACTION, "roof reaction and friction"),
    ("5", "pseudo", PSEUDO, "pseudo-force (car frame)"),
    ("6", "wind", WIND, "apparent wind"),
    ("7", "balance", HOLDS, "support (bar), balance point (▲)"),
)

HELP = (
    ("space", "play / pause"), ("left / right", "one frame back / forward"),
    ("[ and ]", "playback rate 0.1x - 2x"), ("F", "view: car frame / ground frame / split / end / plan"),
    ("C", "ground frame: trackside camera here / follow"),
    ("1 - 7", "weight, air load, per segment, roof reaction, pseudo-force, wind, balance"),
    ("L", "legend"), ("U", "units: metric / imperial"), ("+ / -", "zoom"),
    ("up / down", "what-if: vehicle speed +/- one step"), ("W / S", "what-if: ambient wind +/- one step"),
    ("0", "clear what-if"), ("Home", "restart"), ("P", "screenshot to PNG"), ("H", "this help"),
    ("Esc", "quit"), ("mouse", "click or drag the timeline to scrub"),
)
FOLLOW_KEY = "tab"   # two performers: the readout (and the cameras) follow the other one
FOLLOW_HELP = ("Tab", "two performers: the readout and the cameras follow the other one")
VERDICT_ORDER = ("holds", "marginal", "fails")


def text_size(size, boost: int = 0) -> int:
    """Body text size for a canvas: one step smaller below 1100 px wide; `boost` for print."""
    return (12 if size[0] >= 1100 else 11) + boost


def caution_lines(size, boost: int = 0) -> list[str]:
    return wrap(CAUTION_SHORT, CAUTION_SIZE + boost, size[0] - 2 * MARGIN)


def caution_height(size, boost: int = 0) -> int:
    return 8 + (14 + boost) * len(caution_lines(size, boost))


def bottom_height(size, view=None, units: str = "metric", scene=None) -> int:
    """Height under the views: the legend strip (when shown), the timeline with its marks and the caution
    (`scene`: its curves add a row to the legend)."""
    base = TICK_H + timeline_height(scene) + 6 + caution_height(size, _boost(view))
    return base + (legend_strip(size, view, units, scene) if legend_shown(size, view, units, scene) else 0)


def _boost(view) -> int:
    return getattr(view, "text_boost", 0) if view is not None else 0


_STRIPS: dict = {}   # legend_strip by (size, view, units, scene): a frame asks for it several times


def legend_strip(size, view, units: str, scene=None) -> int:
    try:
        key = (tuple(size), view, units, id(scene))
        hash(key)
    except TypeError:
        key = None
    found = _STRIPS.get(key) if key is not None else None
    if found is not None and found[0] is scene:
        return found[1]
    value = legend_layout(size, legend_rows(view, units, None, scene), text_size(size, _boost(view)) - 1)[2] + 4
    if key is not None:
        if len(_STRIPS) > 64:
            _STRIPS.clear()
        _STRIPS[key] = (scene, value)
    return value


def legend_shown(size, view, units: str, scene=None) -> bool:
    """The legend when asked for and the views keep at least 45 % of the height."""
    if view is None or not view.legend:
        return False
    base = TICK_H + timeline_height(scene) + 6 + caution_height(size, _boost(view))
    return size[1] - base - legend_strip(size, view, units, scene) >= 0.45 * size[1]


def lanes(scene=None) -> int:
    """The timeline's lanes: one per performer."""
    return len(scene.cast) if scene is not None and getattr(scene, "pair", False) else 1


def timeline_height(scene=None) -> int:
    """The timeline bar's height: one lane, or a lane per performer with a 2 px seam between them."""
    n = lanes(scene)
    return TIMELINE_H if n == 1 else n * LANE_H + (n - 1) * 2


def timeline_rect(size, boost: int = 0, scene=None) -> tuple[int, int, int, int]:
    width, height = size
    h = timeline_height(scene)
    return MARGIN, height - caution_height(size, boost) - h - 4, width - 2 * MARGIN, h


@dataclass
class Panels:
    """One frame's panels: text rows and the boxes they were given."""

    size: tuple
    readout: Box
    rows: list                    # (name, value, colour) of the readout
    title: str
    verdict: tuple                # (words, colour) of the verdict bar
    why: list                     # lines under the verdict bar
    banners: list                 # (Box, text)
    legend: Box | None
    legend_rows: list
    legend_per_column: int
    legend_columns: list          # column widths
    ts: int = 12                  # body text size
    name_w: float = 128           # width of the readout's name column
    boost: int = 0
    message: Box | None = None
    message_lines: list = field(default_factory=list)
    help: Box | None = None
    help_rows: tuple = HELP


# ------------------------------------------------------------------- readout

def readout_rows(playback, t: float, view) -> tuple[list, tuple, list]:
    """The readout's rows, the verdict bar and the lines saying why, at time t. With two performers it
    follows one (the view's `follow`, named in its own row); the verdict is the worse of the two."""
    from preview.world import cast_of, followed
    cast = cast_of(playback)
    one = cast[followed(playback, view)]
    tr = one.trajectory
    scene = tr.scene
    units = scene.units
    i = tr.index_at(t)
    f = lambda name: float(tr.record[name][i])  # noqa: E731
    rows = [("timecode", f"{timecode(t, scene.frame_rate)}   {t:6.2f} s", INK)]
    if len(cast) > 1:
        rows.append(("following", f"{one.name} ({cast.index(one) + 1} of {len(cast)}; Tab: the other)",
                     FIGURE_TONES[one.tone][0]))
    after = state_at(tr, i)
    if after is None:
        rows.append(("action", scene.actions[int(tr.timeline.steps["action"][i])].label, INK))
    else:
        first = one.failure or playback.summary["first_failure"]
        rows.append(("action", f"plan stopped at the {first['kind']}", FAILURE))
    rows.append(("vehicle speed", display(f("speed"), "speed", units, ".1f"), INK))
    app = math.hypot(f("app_x"), f("app_y"))
    if math.isfinite(app):
        rows.append(("apparent wind", f"{display(app, 'wind', units, '.1f')}, Beaufort {beaufort(app)}", INK))
    body = air_layer.body_wind_words(tr, i, units)
    if body is not None:   # the air over the roof on: the wind the body meets at its centre of mass's height
        rows.append(("wind at body height", body, INK))
    if curves.shows_track(scene):   # the car body's lateral acceleration in the roof's plane: + left pushes right
        rows.append(("lateral on roof", curves.lateral_words(f("accel_y"), units), INK))
    if after is not None:
        rows.append(("state", state_words(after, units), FAILURE))
    else:
        mode = int(f("mode"))
        if mode == Mode.FLIGHT:
            rows.append(("in the air", "no roof contact", INK))
        else:
            demand, avail = f("grip_demand"), f("grip_available")
            # Margins rounded down, never up.
            grip = (f"{floor_to(avail / demand):.2f} (needs {demand:.2f}, roof {avail:.2f})" if demand > 1e-6
                    else "no horizontal load")
            rows.append(("grip ratio", grip if math.isfinite(demand) else "n/a", INK))
            # The smaller of the margins along and across the track, as the verdict weighs them.
            along, across = f("balance_margin"), f("frontal_margin")
            mos = min((v for v in (along, across) if math.isfinite(v)), default=math.nan)
            which = " (across)" if math.isfinite(across) and across < along else ""
            rows.append(("balance margin", display(floor_to(mos, 2), "length", units, "+.2f") + which
                         if math.isfinite(mos) else "n/a", INK))
            lean = f("lean")
            rows.append((f"lean along {way(scene)}", f"{math.degrees(lean):+.1f}°" if math.isfinite(lean) else "n/a",
                         INK))
        gap, over = tr.overhead_gap(i)
        if over is not None:
            colour = FAILURE if gap < 0 else (MARGINAL if gap < scene.safety.clearance else INK)
            rows.append(("overhead clearance", f"{display(gap, 'length', units, '+.2f')} to {over}", colour))
    name, because = running_verdict(playback, t)
    colour = {"holds": HOLDS, "marginal": MARGINAL, "fails": FAILURE}[name]
    why = []
    if name == "marginal":
        why = [f"{b['action']}: {marginal_words([b], units)}" for b in because]
    elif name == "fails":
        first = playback.summary["first_failure"]
        why = [f"{whose(first)}{first['kind']} at {first['time_s']:.2f} s: {first['detail']}"]
    whole = playback.summary["verdict"]
    first = playback.summary["first_failure"]
    if name != "fails" and whole != "holds":
        # A still must not look safer than the beat: say how the whole beat ends.
        ends = f" ({whose(first)}{first['kind']} at {first['time_s']:.2f} s)" if first else ""
        why.insert(0, f"whole beat: {whole.upper()}{ends}")
    bound = playback.summary.get("uniform_air")
    if bound and bound["verdict"] != whole:
        # With the air over the roof on, the verdict rests on its soft coefficients: say the bound beside it.
        why.insert(1 if why and why[0].startswith("whole beat") else 0,
                   f"free-stream bound: {bound['verdict'].upper()} (air over the roof off)")
    if view.what_if:
        why.append(f"what-if: {view.what_if}")
    return rows, (f"verdict so far: {name.upper()}", colour), why


def running_verdict(playback, t: float) -> tuple[str, list[dict]]:
    """physics.verdict.verdict_so_far at time t (the action under way judged on its record so far); with two
    performers the worse of the two, each judged with its own scene (Scene.cast) and its own run, the
    shortfalls' actions named with the performer's name."""
    tr = playback.trajectory
    scene = tr.scene
    if not scene.pair:
        return verdict_so_far(scene, tr.events, tr.outcomes, t, tr.record, tr.times)
    worst, because = "holds", []
    for part, run in zip(scene.cast, (tr,) + tuple(tr.partners)):
        name, why = verdict_so_far(part, run.events, run.outcomes, t, run.record, run.times)
        worst = max(worst, name, key=VERDICT_ORDER.index)
        because += [dict(b, action=f"{part.name}, {b['action']}") for b in why]
    return worst, because


def whose(failure: dict | None) -> str:
    """'Eli: ' for a failure of one of two performers, '' for a one-performer beat's."""
    return f"{failure['performer']}: " if failure and failure.get("performer") else ""


def state_words(phase: dict, units: str) -> str:
    """The body's state after the failure: 'sliding, 1.20 m so far', 'down on the roof', ..."""
    if phase["state"] == "sliding":
        return f"sliding, {display(phase.get('so_far_m', 0.0), 'length', units)} so far"
    if "ground_x_m" in phase:
        return "off the consist, on the ground"
    return phase_words(phase, units)


# -------------------------------------------------------------------- legend

BAR_SLOT = 60   # px: a scale bar is at most this long (nice_step rounds down)


def nice_step(value: float) -> float:
    """The largest 1, 2 or 5 x 10^k not above value (value > 0)."""
    k = math.floor(math.log10(value))
    for m in (5, 2, 1):
        if m * 10 ** k <= value:
            return m * 10 ** k
    return 10 ** k


def scale_bar(per_metre_si: float, dimension: str, units: str, px_per_m: float, want_px: float = BAR_SLOT):
    """A round value in display units and its length in pixels, at most want_px long."""
    per_unit, unit = to_display(1.0, dimension, units)   # display units per SI unit
    px_per_unit = (1.0 / per_unit) / per_metre_si * px_per_m
    value = nice_step(want_px / px_per_unit)
    return value, unit, value * px_per_unit


def legend_rows(view, units: str, px_per_m: float | None, scene=None) -> list[tuple]:
    """(kind, payload) rows: a vector key, the trail, a scale bar or a timeline mark.
    px_per_m None: the bars at their longest (for sizing the strip); `scene`: a scene with curves
    has their timeline mark. The end and plan views have legends of their own (preview.end_view,
    preview.plan_view)."""
    from preview.world import FORCE_PER_METRE, SEGMENT_FORCE_PER_METRE, WIND_PER_METRE
    if getattr(view, "frame", None) == "end":
        from preview.end_view import legend_rows as end_rows
        return end_rows(view, units, px_per_m, scene)
    if getattr(view, "frame", None) == "plan":
        from preview.plan_view import legend_rows as plan_rows
        return plan_rows(view, units, px_per_m, scene)
    rows = []
    for key, name, colour, words in VECTOR_LEGEND:
        rows.append(("vector", (key, colour if name in view.vectors else FAINT, words)))
    rows += pair_legend_rows(scene)
    rows.append(("trail", (TRAIL, f"centre of mass path, last {view.trail_seconds:g} s")))
    rows.append(bar_row(FORCE_PER_METRE, "force", INK, "(every force)", units, px_per_m))
    if "segments" in view.vectors:
        rows.append(bar_row(SEGMENT_FORCE_PER_METRE, "force", SEGMENT_AERO, "(per-segment loads only)", units,
                            px_per_m))
    rows.append(bar_row(WIND_PER_METRE, "wind", WIND, "(apparent wind)", units, px_per_m))
    rows.append(("zone", (LANDING_ZONE, "landing zone (a jump's landing roof)")))
    rows += air_layer.legend_row(view, scene)
    return rows + rigging_legend_rows(scene) + timeline_legend_rows(scene)


def pair_legend_rows(scene=None) -> list[tuple]:
    """With two performers: what the colour of the force between them means (drawn on each body at its
    touch point while it acts, equal and opposite, on the force scale)."""
    if scene is None or not getattr(scene, "pair", False):
        return []
    return [("force", (TOUCH, "push or pull between performers (on each, at its touch point)"))]


def rigging_legend_rows(scene=None) -> list[tuple]:
    """With rigging: what a tether's colour says (its tension against the arrest-force limit on the body,
    as preview.world.tether_colour draws it)."""
    if scene is None or not getattr(scene, "rigging", ()):
        return []
    return [("zone", (HOLDS, "tether: under half its limit (the body's arrest force)")),
            ("zone", (MARGINAL, "tether: from half its limit to the limit")),
            ("zone", (FAILURE, "tether: over its limit; a running line: its end anchors' load"))]


def bar_row(per_metre: float, dimension: str, colour, what: str, units: str, px_per_m: float | None) -> tuple:
    """A legend row with a scale bar: a round value drawn at `per_metre` (SI per metre of picture)."""
    value, unit, px = scale_bar(per_metre, dimension, units, px_per_m or 100.0)
    return ("bar", (colour, BAR_SLOT if px_per_m is None else px, f"{value:g} {unit} {what}"))


def timeline_legend_rows(scene=None) -> list[tuple]:
    """The legend's rows for the timeline's marks (every view has the timeline); a scene with curves
    adds theirs."""
    rows = [("tick", (FAILURE, "timeline: failure")),
            ("tick", (FACT, "timeline: take-off, touchdown, recovery step")),
            ("mark", (STRUCTURE, "timeline: reaches a structure")),
            ("flag", (MARGINAL, "timeline: latest duck start that clears"))]
    if scene is not None and curves.has_curve(scene):
        rows.append(("span", (CURVE, "timeline: on a curve, its start and end")))
    return rows


def legend_row_width(row, size: int) -> float:
    kind, payload = row
    if kind == "bar":
        return BAR_SLOT + 8 + measure(payload[2], size)[0]
    return 30 + measure(payload[-1], size)[0]


def legend_layout(size, rows: list, ts: int | None = None) -> tuple[int, list, int]:
    """Rows per column, column widths and strip height: the fewest rows that fit the width."""
    ts = ts or text_size(size) - 1
    widths = [legend_row_width(r, ts) + 18 for r in rows]
    room = size[0] - 2 * MARGIN - 8
    for per_column in range(2, len(rows) + 1):
        columns = [max(widths[k:k + per_column]) for k in range(0, len(rows), per_column)]
        if sum(columns) <= room:
            break
    return per_column, columns, 8 + per_column * legend_row_height(ts)


def legend_row_height(ts: int) -> int:
    return ts + 5


# ---------------------------------------------------------------------- plan

def line_height(ts: int) -> int:
    return ts + 6


def plan(layout: Layout, size, playback, t: float, view, cams) -> Panels:
    """Every panel's content and box for one frame; the boxes are reserved in `layout`."""
    width, height = size
    ts = text_size(size, _boost(view))
    lh = line_height(ts)
    units = playback.scene.units
    bottom = bottom_height(size, view, units, playback.scene)
    layout.reserve(Box(0, height - bottom, width, bottom))
    # Readout, top-left of the first view.
    rows, verdict, why = readout_rows(playback, t, view)
    rw = readout_width(size, view)
    name_w = max(measure(n, ts)[0] for n, _, _ in rows) + 14
    rows = [(n, fit(v, ts, rw - 20 - name_w, mono=True), c) for n, v, c in rows]
    why_lines = [line for w in why for line in wrap(w, ts, rw - 20, bold=w.startswith("whole beat"))][:5]
    title = fit(playback.scene.title, ts + 1, rw - 20, bold=True)
    bar_h = ts + 14
    rh = (lh + 10) + lh * len(rows) + bar_h + 6 + (lh * len(why_lines) + 4 if why_lines else 0)
    readout = (layout.reserve(Box(MARGIN, cams[0].top + MARGIN, rw, rh)) if view.readout
               else Box(0, cams[0].top, 0, 0))
    # A banner at the top-right of each view, beside the readout.
    banners = []
    for cam in cams:
        text = banner_text(cam, view, units, playback.scene)
        left = readout.right + MARGIN if cam is cams[0] else MARGIN
        text = fit(text, ts + 1, width - MARGIN - left - 16, bold=True)
        w, h = measure(text, ts + 1, True)
        banners.append((layout.reserve(Box(width - MARGIN - w - 16, cam.top + MARGIN, w + 16, h + 8)), text))
    # The legend strip above the timeline's marks, across the whole width.
    legend, lrows, per_column, columns = None, [], 1, []
    if legend_shown(size, view, units, playback.scene):
        lrows = legend_rows(view, units, cams[0].scale, playback.scene)
        per_column, columns, strip = legend_layout(size, lrows, ts - 1)
        legend = layout.reserve(Box(MARGIN, height - bottom, width - 2 * MARGIN, strip))
    panels = Panels(size, readout, rows, title, verdict, why_lines, banners, legend, lrows, per_column, columns,
                    ts=ts, name_w=name_w, boost=_boost(view))
    if view.message:
        mw = min(560 + 40 * _boost(view), width - 2 * MARGIN)
        lines = [line for part in view.message.splitlines() for line in wrap(part, ts, mw - 16)][:8]
        mh = 10 + lh * len(lines)
        area = Box(0, 0, width, height - bottom)
        panels.message = layout.place(mw, mh, [(readout.right + MARGIN, MARGIN), ((width - mw) / 2, MARGIN),
                                               (readout.right + MARGIN, area.bottom - mh - MARGIN),
                                               (MARGIN, readout.bottom + MARGIN)], area)
        panels.message_lines = lines
    if view.show_help:
        keys = help_rows(playback.scene)
        kw = max(measure(k, ts + 1, mono=True)[0] for k, _ in keys) + 24
        hw = min(width - 2 * MARGIN, kw + max(measure(w, ts + 1)[0] for _, w in keys) + 32)
        hh = min(height - 2 * MARGIN, 44 + line_height(ts + 1) * len(keys))
        panels.help = Box((width - hw) / 2, max(MARGIN, (height - hh) / 2), hw, hh)
        panels.help_rows = keys
    return panels


def readout_width(size, view) -> int:
    """Width of the readout panel (top-left of the first view)."""
    return min(400 + 12 * _boost(view), int(0.42 * size[0]))


def banner_height(size, view) -> int:
    """Height of a view's banner with its margin above."""
    return measure("FRAME", text_size(size, _boost(view)) + 1, True)[1] + 8 + MARGIN


def banner_text(cam, view, units: str, scene=None) -> str:
    if cam.frame == "end":
        return "END VIEW looking forward (travel into the picture): left of travel on the left"
    if cam.frame == "plan":
        return "PLAN VIEW from above, car frame: left of travel at the top; travel →"
    if cam.frame != GROUND:
        return "CAR FRAME: consist at rest, scenery streams past; travel →"
    if view.trackside is not None:
        return (f"GROUND FRAME: {beside(scene)} camera at {display(view.trackside, 'length', units, '.0f')}, "
                "consist passes; travel →")
    return "GROUND FRAME: the ground and scenery at rest; travel →"


# ---------------------------------------------------------------------- draw

def draw(canvas, panels: Panels, playback, t: float, view) -> None:
    ts = panels.ts
    if panels.readout.w > 0:
        draw_readout(canvas, panels, ts)
    canvas.tag = "banner"
    for box, text in panels.banners:
        canvas.rect(box.x, box.y, box.w, box.h, PANEL)
        canvas.text((box.x + 8, box.y + 4), text, INK, ts + 1, bold=True)
    if panels.legend is not None:
        draw_legend(canvas, panels, ts - 1)
    draw_timeline(canvas, playback, t, ts - 1, panels.boost)
    draw_caution(canvas, panels.size, panels.boost)
    if panels.message is not None:
        canvas.tag = "message"
        b = panels.message
        canvas.rect(b.x, b.y, b.w, b.h, PANEL)
        canvas.rect(b.x, b.y, b.w, b.h, FAILURE, width=2)
        for k, line in enumerate(panels.message_lines):
            canvas.text((b.x + 8, b.y + 5 + line_height(ts) * k), line, FAILURE, ts)
    if panels.help is not None:
        draw_help(canvas, panels.help, ts + 1, panels.help_rows)


def draw_readout(canvas, panels: Panels, ts: int) -> None:
    canvas.tag = "readout"
    b = panels.readout
    lh = line_height(ts)
    canvas.rect(b.x, b.y, b.w, b.h, PANEL)
    canvas.text((b.x + 10, b.y + 6), panels.title, INK, ts + 1, bold=True)
    y = b.y + lh + 10
    for name, value, colour in panels.rows:
        canvas.text((b.x + 10, y), name, SOFT_INK, ts)
        canvas.text((b.x + 10 + panels.name_w, y), value, colour, ts, mono=True)
        y += lh
    words, colour = panels.verdict
    bar_h = ts + 14
    canvas.rect(b.x, y + 2, b.w, bar_h, colour)
    canvas.text((b.x + 10, y + 2 + (bar_h - measure(words, ts + 2, True)[1]) / 2),
                fit(words, ts + 2, b.w - 20, bold=True), PANEL, ts + 2, bold=True)
    y += bar_h + 8
    for line in panels.why:
        tone = colour
        if line.startswith("what-if"):
            tone = PSEUDO
        elif line.startswith("whole beat") or line.startswith("free-stream bound"):
            tone = FAILURE if "FAILS" in line else (HOLDS if "HOLDS" in line else MARGINAL)
        canvas.text((b.x + 10, y), line, tone, ts, bold=line.startswith("whole beat"))
        y += lh


def draw_legend(canvas, panels: Panels, ts: int) -> None:
    canvas.tag = "legend"
    b = panels.legend
    canvas.rect(b.x, b.y, b.w, b.h, PANEL)
    per = panels.legend_per_column
    row_h = legend_row_height(ts)
    lefts = [b.x + 8 + sum(panels.legend_columns[:c]) for c in range(len(panels.legend_columns))]
    for n, (kind, payload) in enumerate(panels.legend_rows):
        x = lefts[n // per]
        y = b.y + 4 + (n % per) * row_h
        mid = y + row_h / 2
        words = payload[-1]
        if kind == "vector":
            key, colour, words = payload
            canvas.arrow((x, mid), (x + 22, mid), colour, 3, head=7)
            words = f"{key} {words}"
        elif kind == "force":       # two performers: arrows meeting at a touch point, equal and opposite
            canvas.arrow((x, mid), (x + 11, mid), payload[0], 3, head=6)
            canvas.arrow((x + 22, mid), (x + 11, mid), payload[0], 3, head=6)
        elif kind == "trail":
            canvas.line((x, mid), (x + 22, mid), payload[0], 2)
        elif kind == "bar":
            colour, px, words = payload
            canvas.line((x, mid), (x + px, mid), colour, 3)
            canvas.line((x, mid - 5), (x, mid + 5), colour, 2)
            canvas.line((x + px, mid - 5), (x + px, mid + 5), colour, 2)
            canvas.text((x + BAR_SLOT + 8, y), words, INK, ts)
            continue
        elif kind == "tick":
            canvas.line((x + 11, mid - 7), (x + 11, mid + 7), payload[0], 3)
        elif kind == "mark":
            canvas.rect(x + 6, mid - 4, 10, 8, payload[0])
        elif kind == "zone":
            canvas.rect(x, mid - 2, 22, 5, payload[0])
        elif kind == "flag":
            canvas.polygon([(x + 5, mid - 5), (x + 17, mid - 5), (x + 11, mid + 5)], payload[0])
        elif kind == "dots":
            for k in range(4):
                canvas.circle((x + 2 + 6 * k, mid), 2, payload[0])
        elif kind == "ring":
            canvas.circle((x + 11, mid), 6, payload[0], 2)
        elif kind == "layer":       # the air over the roof: its top dashed over two arrows of its speeds
            for k in range(3):
                canvas.line((x + 8 * k, mid - 6), (x + 8 * k + 5, mid - 6), payload[0], 1)
            canvas.arrow((x + 14, mid - 1), (x, mid - 1), payload[0], 2, head=5)
            canvas.arrow((x + 22, mid + 5), (x, mid + 5), payload[0], 2, head=5)
        elif kind == "span":
            canvas.line((x + 2, mid), (x + 20, mid), payload[0], 3)
            for end in (x + 2, x + 20):
                canvas.line((end, mid - 6), (end, mid + 2), payload[0], 2)
        canvas.text((x + 30, y), words, SOFT_INK if kind == "vector" and payload[1] == FAINT else INK, ts)


def draw_timeline(canvas, playback, t: float, ts: int, boost: int = 0) -> None:
    """Action blocks, event ticks, structure and duck-by marks and the playhead; click or drag to scrub.
    With two performers each one's actions and events on its own lane, named at its left end."""
    canvas.tag = "timeline"
    scene = playback.scene
    x, y, w, h = timeline_rect(canvas.size, boost, scene)
    duration = scene.duration
    at = lambda s: x + w * min(max(s, 0.0), duration) / duration  # noqa: E731
    canvas.rect(x, y, w, h, PANEL)
    if lanes(scene) == 1:
        draw_lane(canvas, at, y, h, ts, playback.summary["actions"], playback.summary["events"])
    else:
        for k, one in enumerate(playback.summary.get("performers", [])):
            top = y + k * (LANE_H + 2)
            tone = FIGURE_TONES[min(k, 1)][0]
            name = fit(one["name"], ts, w / 4, bold=True)
            nw = measure(name, ts, True)[0] + 10
            draw_lane(canvas, at, top, LANE_H, ts, one["actions"], one["events"], skip=x + nw)
            canvas.rect(x, top, nw, LANE_H, PANEL)
            canvas.rect(x, top, 3, LANE_H, tone)
            canvas.text((x + 6, top + (LANE_H - measure(name, ts, True)[1]) / 2), name, tone, ts, bold=True)
    for arrival in playback.summary.get("arrivals", []):
        px = at(arrival["time_s"])
        canvas.rect(px - 4, y - TICK_H, 8, TICK_H - 1, STRUCTURE)
        if "lane" in arrival:   # two performers: also on the lane of the one who arrives then
            top = y + arrival["lane"] * (LANE_H + 2)
            canvas.line((px, top), (px, top + LANE_H), STRUCTURE, 2)
    for duck in playback.summary.get("ducks", []):
        if duck.get("latest_start_s") is not None:
            px = at(duck["latest_start_s"])
            canvas.polygon([(px - 5, y - TICK_H), (px + 5, y - TICK_H), (px, y - 1)], MARGINAL)
    draw_curve_marks(canvas, playback, at, y)
    px = at(t)
    canvas.line((px, y - TICK_H), (px, y + h + 2), INK, 3)


def draw_lane(canvas, at, y: float, h: float, ts: int, actions, events, skip: float = 0.0) -> None:
    """One performer's action blocks (labelled where the label fits, right of `skip`) and event ticks."""
    for k, a in enumerate(actions):
        x0, x1 = at(a["start_s"]), at(a["end_s"])
        canvas.rect(x0, y, x1 - x0, h, (214, 219, 224) if k % 2 == 0 else (200, 207, 214))
        left = max(x0, skip)
        label = fit(a["name"], ts, x1 - left - 8)
        if label:
            canvas.text((left + 4, y + (h - measure(label, ts)[1]) / 2), label, INK, ts)
    facts = (EVENT_WORDS[Event.TAKEOFF], EVENT_WORDS[Event.TOUCHDOWN], EVENT_WORDS[Event.RECOVERY_STEP])
    for e in events:
        px = at(e["time_s"])
        if e["failure"]:
            canvas.line((px, y - 3), (px, y + h), FAILURE, 3)
        elif e["kind"] in facts:
            canvas.line((px, y), (px, y + h), FACT, 2)


def curve_marks(playback) -> list[tuple[float, float, bool, bool]]:
    """(from, to, starts, ends) in seconds for each curve the performer's mark is on during the beat:
    `starts`/`ends` whether the curve's start/end is met in the beat (else it runs on past the timeline)."""
    duration = playback.scene.duration
    out = []
    for _, t0, t1 in curves.curve_times(playback.trajectory):
        a = 0.0 if t0 is None else t0
        if a > duration:
            continue
        b = duration if t1 is None or t1 > duration else t1
        out.append((a, b, t0 is not None, t1 is not None and t1 <= duration))
    return out


def draw_curve_marks(canvas, playback, at, y: float) -> None:
    """Along the timeline's top, a line while the performer's mark is on a curve, with a tick where it
    enters the curve and where it leaves it."""
    for a, b, starts, ends in curve_marks(playback):
        x0, x1 = at(a), at(b)
        canvas.line((x0, y - 2), (x1, y - 2), CURVE, 3)
        for edge, here in ((x0, starts), (x1, ends)):
            if here:
                canvas.line((edge, y - TICK_H), (edge, y + 2), CURVE, 2)


def draw_caution(canvas, size, boost: int = 0) -> None:
    canvas.tag = "caution"
    width, height = size
    ch = caution_height(size, boost)
    canvas.rect(0, height - ch, width, ch, INK)
    for k, line in enumerate(caution_lines(size, boost)):
        canvas.text((MARGIN, height - ch + 4 + (14 + boost) * k), line, PANEL, CAUTION_SIZE + boost)


def help_rows(scene=None) -> tuple:
    """The help's keys and words, in the scene's words (a road consist's camera stands at the roadside)."""
    rows = HELP if scene is None or way(scene) == "track" else tuple(
        (key, words.replace("trackside", beside(scene))) for key, words in HELP)
    if scene is not None and getattr(scene, "pair", False):
        rows = rows[:4] + (FOLLOW_HELP,) + rows[4:]
    return rows


def draw_help(canvas, b: Box, ts: int, rows: tuple = HELP) -> None:
    canvas.tag = "help"
    canvas.rect(b.x, b.y, b.w, b.h, PANEL)
    canvas.rect(b.x, b.y, b.w, b.h, INK, width=2)
    canvas.text((b.x + 16, b.y + 10), "Controls", INK, ts + 1, bold=True)
    kw = max(measure(k, ts, mono=True)[0] for k, _ in rows) + 24
    for k, (key, what) in enumerate(rows):
        y = b.y + 38 + line_height(ts) * k
        if y + line_height(ts) > b.bottom:
            break
        canvas.text((b.x + 16, y), key, INK, ts, mono=True)
        canvas.text((b.x + 16 + kw, y), fit(what, ts, b.w - kw - 32), INK, ts)
