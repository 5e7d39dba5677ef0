"""`roofbeat brief`: the safety meeting's papers (PDF, two or three pages) and the same content as JSON.

Layout of our own. Page 1 is the decision page: the verdict, the scene's key
numbers, every action's margins beside the factors the scene requires and why
an action is marginal, what happened at the first failure and after it, the
speed envelope's headline, the latest duck starts, a crew checklist, the
caution and sign-off lines for the stunt coordinator, the safety officer, the
1st AD and the operator's representative, and the speed envelope's plot
where it fits (else on a third page). Page 2 shows two key frames drawn
as vectors through the preview's own drawing function (text stays text: they
print sharp on A4 and Letter). Every page names
roofbeat's version and the scene file's SHA-256, so a brief can be matched to
the scene it was made from. Black-and-white friendly: verdicts are words.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import math
import zlib
from pathlib import Path

import numpy as np

from physics.records import Mode
from physics.units import display, to_display
from preview.caution import CAUTION
from preview.outputs import OutputSet, check_target
from preview.report import (apparent_wind_line, floor_to, marginal_words, phase_words, required_words, storm_words,
                            uniform_air_words, wind_words)
from preview.session import OutputError
from preview.timecode import timecode

PAPER = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}
MARGIN_IN = 0.5
KEY_FRAME_SIZE = (960, 540)   # logical pixels of a key frame (the smallest window the layout is tested at)
KEY_FRAME_BOOST = 2           # px added to the frame's text sizes for print
SIGN_OFF = ["stunt coordinator", "safety officer", "1st AD", "operator's representative"]
CHECKLIST = [
    "The operator's representative is present, briefed and has agreed the beat and its speeds.",
    "Overhead lines are isolated and earthed by the operator, or the exclusion zone is marked and kept.",
    "The abort signal is agreed and known to performer, driver or operator's crew, camera and safety.",
    "A rescue plan is in place: access to the roof, first aid, who calls whom, where the vehicle stops.",
    "The beat has been rehearsed at a lower speed, on a stationary vehicle first.",
    "The roof surface, the weather and the wind on the day were checked against the scene's values.",
]
INK, SOFT, RULE = "#2b3138", "#5f656c", "#c9c6bf"
FAIL_INK = "#d1495b"   # palette.FAILURE
NOT_MODELLED = ("Not modelled: limbs posed sideways (the figure is one plane); the ground beside the track (taken "
                "level at rail height); a tether's pull on the balance, and a tether running over a roof edge; "
                "injury. See physics/README.md, \"Not modelled\" and \"Rigging\".")
KEY_LINES = 3     # lines a key number may take on page one
BODY = 8.0        # pt, the pages' body text
ROW = 0.17        # in, a table row


def scene_digest(path: str) -> str:
    """SHA-256 of the scene file as read (hex); empty when there is no file."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return ""


def scene_has_spreads(scene) -> bool:
    """Whether the scene states an uncertainty on any value (used at its central value here)."""
    return bool(scene.uncertain)


def key_numbers(scene) -> list[tuple[str, str]]:
    system = scene.units
    length = lambda v: display(v, "length", system)  # noqa: E731
    speed = lambda v: display(v, "speed", system, ".0f")  # noqa: E731
    runs = []   # consecutive cars alike in all but their names, told once
    for c in scene.cars:
        alike = (c.kind, c.length, c.roof_height, c.width, c.crown, c.surface, c.sole_static)
        if runs and runs[-1][0] == alike:
            runs[-1][1].append(c)
        else:
            runs.append((alike, [c]))
    cars = "; ".join(f"{run[0].name}{' to ' + run[-1].name + f' ({len(run)} alike)' if len(run) > 1 else ''}"
                     f"{' (' + c.kind + ')' if c.road else ''} {length(c.length)}, "
                     f"{'deck' if c.road else 'roof'} {length(c.roof_height)} high, {length(c.width)} wide"
                     f"{', crown ' + length(c.crown) if c.crown else ', flat'}, {c.surface} "
                     f"(static {c.sole_static:.2f} shoes, {c.body_static:.2f} body and knees)"
                     for _, run in runs for c in run[:1])
    if scene.speed_log is not None:
        log = scene.speed_log
        profile = (f"measured log {Path(log.file).name}: {speed(float(log.speed[0]))} at the start, top "
                   f"{speed(log.top_speed)}, smoothed over {log.window:.1f} s")
    elif len(scene.keyframes) == 1:
        profile = f"constant {speed(scene.keyframes[0].speed)}"
    else:
        profile = ", ".join(f"{speed(k.speed)} at {k.time:g} s" for k in scene.keyframes)
    wind = display(scene.air.wind_speed, "wind", system, ".1f")
    wind += f" from {math.degrees(scene.air.wind_from):.0f}° ({direction_words(scene.air.wind_from)})"
    for g in scene.air.gusts:
        wind += (f"; a gust adding {display(g.peak, 'wind', system, '.1f')} from "
                 f"{math.degrees(g.from_direction):.0f}° at {g.start:g} s for {g.duration:g} s")
    if scene.air.turbulence:
        wind += "; turbulence"
    flow = scene.air.roof_flow
    if flow is not None:
        wind += (f"; air over the roof on ({flow.lead_front} lead front, 1/{flow.power:g} power-law layer, "
                 f"{length(flow.gap_thickness)} added at each gap)")
    people = [(part.name if scene.pair else "performer", performer_words(part, system, scene.pair))
              for part in scene.performers]
    return [("scene", scene.title), ("consist", cars), ("speed", profile), ("wind", wind),
            ("air density", f"{scene.air.density:.3f} kg/m³"), *people,
            ("required", required_words(_required(scene), system))]


def performer_words(part, system: str, pair: bool = False) -> str:
    """One performer's body in words; with two performers where it starts and which way it faces too."""
    length = lambda v: display(v, "length", system)  # noqa: E731
    p = part.performer
    performer = f"{length(p.stature)}, {display(p.mass, 'mass', system, '.0f')}, {p.body_model} body"
    if pair:
        car = part.cars[part.start_car]
        performer += (f", starts on {car.name} {length(part.start_x - car.rear_x)} from its rear end, facing the "
                      f"{'front' if p.facing > 0 else 'rear'}")
    if part.start_y:
        performer += (f", starts {length(abs(part.start_y))} {'left' if part.start_y > 0 else 'right'} of the "
                      "roof's centreline")
    if p.drag_area:
        area, unit = to_display(p.drag_area, "area", system)
        performer += f", standing drag area {area:.2f} {unit}"
    return performer


def direction_words(angle: float) -> str:
    """Where a wind blowing from `angle` (rad, 0 ahead, + toward the left) comes from, in words."""
    deg = math.degrees(angle) % 360
    names = ((0, "from ahead"), (45, "from ahead and the left"), (90, "from the left"),
             (135, "from behind and the left"), (180, "from behind"), (225, "from behind and the right"),
             (270, "from the right"), (315, "from ahead and the right"), (360, "from ahead"))
    return min(names, key=lambda n: abs(n[0] - deg))[1]


def _required(scene) -> dict:
    from physics.verdict import required_factors
    return required_factors(scene.safety)


def brief_content(scene, playback, sweep_summary) -> dict:
    from preview import __version__
    s = playback.summary
    peak = max((a["apparent_wind_max_ms"] for a in s["actions"]), default=0.0)
    return {
        "title": scene.title, "scene_file": scene.source, "scene_sha256": scene_digest(scene.source),
        "roofbeat_version": __version__, "date": dt.date.today().isoformat(), "units": scene.units,
        "verdict": s["verdict"], "key_numbers": dict(key_numbers(scene)), "actions": s["actions"],
        "required_factors": s["required_factors"], "first_failure": s["first_failure"], "events": s["events"],
        "aftermath": s["aftermath"], "ducks": s["ducks"], "air_over_roof": s.get("air_over_roof", "off"),
        "uniform_air": s.get("uniform_air"),
        "apparent_wind": wind_words(peak, scene.units), "apparent_wind_max_ms": peak,
        "apparent_wind_whole_beat_ms": s.get("apparent_wind_whole_beat_ms", peak),
        "envelope": sweep_summary, "checklist": CHECKLIST, "caution": CAUTION, "sign_off": SIGN_OFF,
        "rigging": s.get("rigging", []),
        **({"performers": [{k: p.get(k) for k in ("name", "verdict", "first_failure", "actions", "aftermath")}
                           for p in s["performers"]],
            "interactions": s.get("interactions", [])} if s.get("performers") else {}),
    }


def _limit_value(value: float, unit: str, system: str) -> str:
    """A rigging figure (N or m) in the scene's units: forces to the newton, lengths to the centimetre."""
    return display(value, "force", system, ".0f") if unit == "N" else display(value, "length", system, ".2f")


def focus(playback) -> int:
    """Which performer (cast order) the key frames follow: the one whose failure comes first, else the one
    with the worse verdict, on a tie the one with the lower grip ratio (the first on a tie of both); 0 for
    one performer."""
    per = playback.summary.get("performers")
    if not per:
        return 0
    first = playback.summary["first_failure"]
    if first:
        return [p["name"] for p in per].index(first["performer"])
    order = ("holds", "marginal", "fails")

    def lowest_grip(k):
        ratios = [a["grip_ratio_min"] for a in per[k]["actions"] if a.get("grip_ratio_min") is not None]
        return min(ratios, default=math.inf)
    return max(range(len(per)), key=lambda k: (order.index(per[k]["verdict"]), -lowest_grip(k), -k))


def focus_trajectory(playback):
    return ((playback.trajectory,) + tuple(playback.trajectory.partners))[focus(playback)]


def key_times(playback) -> list[tuple[str, float]]:
    """Two moments worth a picture: before and after the failure; in the air and landed; the
    tightest overhead clearance and the hardest moment; or the hardest moment and the end. With two
    performers, of the one `focus` picks, named in each caption."""
    times = _key_times(playback)
    if not playback.summary.get("performers"):
        return times
    name = focus_trajectory(playback).scene.name
    return [(f"{name}: {label}", t) for label, t in times]


def _key_times(playback) -> list[tuple[str, float]]:
    tr = focus_trajectory(playback)
    duration = playback.scene.duration
    first = playback.summary["first_failure"]
    flying = np.nonzero(tr.field("mode") == Mode.FLIGHT)[0]
    demand = tr.field("grip_demand")
    critical = ("highest grip demand", float(tr.times[int(np.nanargmax(np.where(np.isfinite(demand), demand, -1)))]))
    if first:
        before = ("just before the failure", max(0.0, first["time_s"] - 0.5))
        over = next((e for e in playback.summary["events"] if e["kind"] == "off the side"
                     and e.get("performer") == first.get("performer")), None)
        if over is not None and over is not first:
            # A slip or topple that ends over the side edge: show it going over.
            return [before, (f"{first['kind']} at {first['time_s']:.2f} s, then off the {over['side']} side at "
                             f"{over['time_s']:.2f} s", min(duration, over["time_s"] + 0.25))]
        return [before, (f"{first['kind']} at {first['time_s']:.2f} s, and after",
                         min(duration, first["time_s"] + 0.4))]
    if flying.size:
        return [("in the air", float(tr.times[flying[len(flying) // 2]])),
                ("landed", float(tr.times[min(flying[-1] + 12, tr.times.size - 1)]))]
    if playback.scene.structures:
        gaps = np.array([tr.overhead_gap(i)[0] for i in range(0, tr.times.size, 4)])
        if np.isfinite(gaps).any():
            return [("tightest overhead clearance", float(tr.times[4 * int(np.argmin(gaps))])), critical]
    return [critical, ("end of the beat", duration)]


def deciding_view(playback) -> str:
    """The view that shows what decides the verdict: across the track (the end view) when the first
    failure is sideways or over a side edge, or the beat is marginal on its side-edge margin or on its
    balance across the track; else the side view, split for a beat with a jump."""
    summary = playback.summary
    first = summary["first_failure"]
    if first:
        across = first.get("side") is not None
    else:
        across = _tightest_is_across(playback.scene, summary, _grip_mostly_across(focus_trajectory(playback)))
    if across:
        return "end"
    jumps = any(a.kind == "jump" for part in playback.scene.performers for a in part.actions)
    return "split" if jumps else "car"


def _grip_mostly_across(tr) -> bool:
    """Whether the friction the roof must give is mostly across the track where it is highest."""
    demand = tr.field("grip_demand")
    if not np.isfinite(demand).any():
        return False
    k = int(np.nanargmax(demand))
    return abs(float(tr.field("need_y")[k])) > abs(float(tr.field("need_x")[k]))


def _tightest_is_across(scene, summary, grip_across: bool) -> bool:
    """Whether the beat's tightest margin, against what the scene requires, is across the track: the
    side-edge margin, a balance margin set by the balance across the track, or a grip ratio whose
    demand is mostly across the track."""
    best, across = math.inf, False
    required = scene.safety
    for row in summary["actions"]:
        if not row["assessed"]:
            continue
        candidates = [(row["grip_ratio_min"], required.grip_ratio, grip_across),
                      (row["edge_margin_min_m"], required.edge_margin, True)]
        if row["balance_margin_min_m"] is not None:
            frontal = row["frontal_balance_margin_min_m"]
            candidates.append((row["balance_margin_min_m"], required.balance_margin,
                               frontal is not None and frontal <= row["balance_margin_min_m"] + 1e-12))
        for value, factor, is_across in candidates:
            if value is None or factor <= 0:
                continue
            if value / factor < best:
                best, across = value / factor, is_across
    return across


def frame_facts(playback, t: float) -> str:
    """What the readout would say at t, in one line beside a key frame."""
    from physics.aftermath import state_at
    from preview.panels import state_words
    tr = focus_trajectory(playback)
    units = playback.scene.units
    i = tr.index_at(t)
    f = lambda name: float(tr.record[name][i])  # noqa: E731
    parts = [f"speed {display(f('speed'), 'speed', units, '.0f')}"]
    wind = math.hypot(f("app_x"), f("app_y"))
    if math.isfinite(wind):
        parts.append(f"apparent wind {display(wind, 'wind', units, '.1f')}")
    after = state_at(tr, i)
    if after is not None:
        parts.append(f"the body: {state_words(after, units)}")
    elif int(f("mode")) == Mode.FLIGHT:
        parts.append("in the air")
    else:
        demand = f("grip_demand")
        if demand > 1e-6 and math.isfinite(demand):
            parts.append(f"grip ratio {f('grip_available') / demand:.2f}")
        if math.isfinite(f("balance_margin")):
            parts.append(f"balance margin {display(f('balance_margin'), 'length', units, '+.3f')}")
        if math.isfinite(f("frontal_margin")):
            parts.append(f"across the track {display(f('frontal_margin'), 'length', units, '+.3f')}")
        if math.isfinite(f("edge_margin")):
            parts.append(f"side edge {display(f('edge_margin'), 'length', units, '+.2f')}")
    gap, over = tr.overhead_gap(i)
    if over is not None:
        parts.append(f"overhead clearance {display(gap, 'length', units, '+.2f')}")
    who = f"{tr.scene.name}: " if playback.scene.pair else ""
    return who + ", ".join(parts)


# --------------------------------------------------------------------- pages

def fitted_lines(words: str, size_pt: float, width_in: float, bold: bool = False) -> list[str]:
    """Lines of at most width_in inches at size_pt, measured with DejaVu Sans (measured at 4x for precision)."""
    from preview.layout import wrap
    return wrap(words, int(round(size_pt * 4)), width_in * 72 * 4, bold=bold) or [""]


def fitted(words: str, size_pt: float, width_in: float, bold: bool = False) -> str:
    from preview.layout import fit
    return fit(words, int(round(size_pt * 4)), width_in * 72 * 4, bold=bold)


class Page:
    """A page with a text cursor that runs down from the top (inches)."""

    def __init__(self, plt, paper: str, content: dict):
        self.w, self.h = PAPER[paper]
        self.fig = plt.figure(figsize=(self.w, self.h))
        self.y = self.h - MARGIN_IN
        self.content = content

    def fx(self, x_in: float) -> float:
        return x_in / self.w

    def fy(self, y_in: float) -> float:
        return y_in / self.h

    def text(self, x_in, words, size=BODY, weight="normal", color=INK, **kw):
        self.fig.text(self.fx(x_in), self.fy(self.y), words, fontsize=size, weight=weight, color=color, va="top",
                      **kw)

    def para(self, words: str, size=BODY, weight="normal", x_in: float = MARGIN_IN, color=INK,
             gap: float = 0.03) -> None:
        """Text wrapped to the page's right margin, measured in the bundled font (the one the PDF embeds)."""
        lines = fitted_lines(words, size, self.w - MARGIN_IN - x_in, weight == "bold")
        self.text(x_in, "\n".join(lines), size, weight, color, linespacing=1.25)
        self.y -= len(lines) * size * 1.25 / 72 + gap

    def rule(self) -> None:
        from matplotlib.lines import Line2D
        self.y -= 0.04
        self.fig.lines.append(Line2D([self.fx(MARGIN_IN), self.fx(self.w - MARGIN_IN)], [self.fy(self.y)] * 2,
                                     transform=self.fig.transFigure, color=RULE, lw=0.6))
        self.y -= 0.06

    def heading(self, words: str) -> None:
        self.text(MARGIN_IN, words.upper(), 8, "bold")
        self.y -= 0.17

    def footer(self, number: int, pages: int) -> None:
        c = self.content
        digest = c["scene_sha256"] or "no file"
        self.fig.text(self.fx(MARGIN_IN), self.fy(0.3), f"roofbeat {c['roofbeat_version']}  |  scene "
                      f"{Path(c['scene_file']).name}  sha256 {digest}", fontsize=6, color=SOFT)
        self.fig.text(self.fx(self.w - MARGIN_IN), self.fy(0.3), f"page {number} of {pages}", fontsize=6,
                      color=SOFT, ha="right")


def _header(page: Page, scene, content, subtitle: str) -> None:
    from matplotlib.patches import Rectangle
    band = 0.75
    page.fig.patches.append(Rectangle((0, page.fy(page.h - band)), 1, page.fy(band), transform=page.fig.transFigure,
                                      color=INK, zorder=0))
    page.fig.text(page.fx(MARGIN_IN), page.fy(page.h - 0.22), f"roofbeat  |  {subtitle}", color="white",
                  fontsize=8.5, va="center")
    title = fitted(scene.title, 12, page.w - 2 * MARGIN_IN - 2.9, bold=True)   # clear of the verdict
    page.fig.text(page.fx(MARGIN_IN), page.fy(page.h - 0.5), title, color="white", fontsize=12, weight="bold",
                  va="center")
    page.fig.text(page.fx(page.w - MARGIN_IN), page.fy(page.h - 0.22),
                  f"{content['date']}  |  units: {scene.units}", color="#dddddd", fontsize=7.5, ha="right",
                  va="center")
    page.fig.text(page.fx(page.w - MARGIN_IN), page.fy(page.h - 0.5), f"VERDICT: {content['verdict'].upper()}",
                  color="white", fontsize=14, weight="bold", ha="right", va="center")
    page.y = page.h - band - 0.2


def _page_one(page: Page, scene, content, sweep, sweep_summary):
    """The decision page; returns the sweep when its plot did not fit here (it then gets a page)."""
    _header(page, scene, content, "safety meeting brief")
    for name, value in key_numbers(scene):
        page.text(MARGIN_IN, name, BODY, "bold")
        lines = fitted_lines(value, BODY, page.w - 2 * MARGIN_IN - 1.0)
        if len(lines) > KEY_LINES:
            lines = lines[:KEY_LINES - 1] + fitted_lines(" ".join(lines[KEY_LINES - 1:]) + " (the whole in the "
                                                         "brief's JSON and the scene file)", BODY,
                                                         page.w - 2 * MARGIN_IN - 1.0)[:1]
            lines[-1] = lines[-1].rstrip(" ,;") + " ..."
        page.text(MARGIN_IN + 1.0, "\n".join(lines), BODY, linespacing=1.25)
        page.y -= ROW * len(lines) + 0.01
    page.rule()
    if content.get("performers"):
        _pair_block(page, scene, content)
        page.rule()
    _actions_table(page, scene, content)
    page.rule()
    _what_happens(page, scene, content)
    page.rule()
    if sweep is not None:
        room = page.y - MARGIN_IN - 0.4 - CLOSING_IN
        if room >= MIN_PLOT_IN:
            _envelope(page, scene, sweep, sweep_summary, min(room, 2.8))
            sweep = None
            page.rule()
    if page.y - CLOSING_DRAWN_IN < FOOTER_CLEAR_IN:
        # No room left for the checklist and the sign-off (two performers fill the page): the caution stays
        # here, they go on a page of their own right after this one.
        page.heading("caution")
        page.para(CAUTION)
        page.para("The crew checklist and the sign-off lines are on the next page.", BODY, "bold")
        content["closing_page"] = 2
        return sweep
    _closing(page, content)
    return sweep



def _what_happens(page: Page, scene, content) -> None:
    """Page one's account of the beat: the first failure and what followed, the wind, the top speeds,
    ducks, other failures, rigging over its limits, the facts of the beat and what is not modelled."""
    system = scene.units
    page.heading("what happens")
    first = content["first_failure"]
    if first:
        who = f" ({first['performer']})" if first.get("performer") else ""
        page.para(f"First failure{who}: {failure_sentence(first, scene)}.", BODY + 0.5, "bold")
        after = "; then ".join(phase_words(p, system) for p in content["aftermath"])
        if after:
            body = f"{first['performer']}'s body" if first.get("performer") else "the body"
            page.para(f"After it (the plan stops; {body} goes where the physics takes it): {after}.")
        for other in content.get("performers") or []:
            if other["name"] != first.get("performer") and other.get("aftermath"):
                then = "; then ".join(phase_words(p, system) for p in other["aftermath"])
                page.para(f"After {other['name']}'s own first failure ({other['first_failure']['kind']} at "
                          f"{other['first_failure']['time_s']:.2f} s): {then}.")
    else:
        page.para("No failure in the simulated beat.", BODY + 0.5, "bold")
    wind_line = apparent_wind_line(content, system)
    page.para(wind_line[0].upper() + wind_line[1:] + ".")
    bound = uniform_air_words(content)
    if bound:
        page.para(bound[0].upper() + bound[1:] + ".", BODY, "bold")
    storm = storm_words(content)
    if storm:
        page.para(storm, BODY, "bold", color=FAIL_INK)
    env = content["envelope"]
    if env:
        from preview.analysis import limit_words, uniform_air_limit
        ladder = content.get("ladder")
        bound = ladder and uniform_air_limit(ladder["abort_limits"], "speed", system)
        if bound:   # the air over the roof is on: the free stream's limit first, the profile's after it
            page.para("Top speed " + bound + ".", BODY + 0.5, "bold")
        from physics.ladder import scaling_note
        note = scaling_note(scene)
        if note:
            page.para(note[0].upper() + note[1:] + ".", BODY, "bold")
        for limit in env["limits"]:
            worse = f" ({env['margins_are']})" if env.get("margins_are") else ""
            page.para(("Top speed with the air over the roof on" if bound else "Top speed") + worse + ": "
                      + limit_words("speed", limit, env["range"], system, env["limits"]) + ".",
                      BODY + 0.5, "bold" if limit is env["limits"][0] and not bound else "normal")
        if any(a.kind in ("duck", "prone") for a in scene.actions) and scene.structures:
            page.para("A duck timed on the clock meets a structure later at a lower speed: the speeds above "
                      "assume the duck is cued by time; cue it by the structure's approach on the day.")
    for duck in content["ducks"]:
        if duck["latest_start_s"] is None:
            words = f"no start of '{duck['name']}' clears the structure"
        else:
            words = f"the latest start of '{duck['name']}' that clears is {duck['latest_start_s']:.2f} s"
            if "planned_start_s" in duck:
                spare = duck["spare_s"]
                words += (f" (planned {duck['planned_start_s']:.2f} s: " +
                          (f"{spare:.2f} s to spare)" if spare >= 0 else f"{-spare:.2f} s too late)"))
        page.para(f"Duck: {words}.", BODY + 0.5, "bold")
    others = [e for e in content["events"] if e["failure"] and e != content["first_failure"]]
    if others:
        page.para("Also failed: " + "; ".join(f"{_who(e)}{e['kind']} at {e['time_s']:.2f} s ({e['detail']})"
                                              for e in others) + ".", BODY, "bold", color=FAIL_INK)
    overs = [f"{t['name']}: {lim['what']} {_limit_value(lim['value'], lim['unit'], system)} over its limit "
             f"{_limit_value(lim['limit'], lim['unit'], system)}"
             for t in content.get("rigging") or [] for lim in t["limits"] if not lim["within"]]
    if overs:
        page.para("Rigging over its limits (the rigging page gives the sources): " + "; ".join(overs) + ".", BODY,
                  "bold", color=FAIL_INK)
    facts = [e for e in content["events"] if not e["failure"]]
    if facts:
        page.para("Facts of the beat: " + "; ".join(f"{_who(e)}{e['kind']} at {e['time_s']:.2f} s"
                                                   + (f" ({e['detail']})" if e["kind"] == "recovery step" else "")
                                                   for e in facts) + ".")
    off = "" if scene.air.roof_flow is not None else ("the air over the roof (off in this scene: the free stream "
                                                      "at every height, the bound); ")
    page.para(NOT_MODELLED.replace("Not modelled: ", "Not modelled: " + off), color=SOFT)
    if scene_has_spreads(scene):
        page.para("This scene states uncertainties (+/-): the verdict above is the central run; "
                  "`roofbeat risk` gives the share of runs that fail.", color=SOFT)

def _who(row: dict) -> str:
    """'Eli: ' before an event of one of two performers; '' for one performer."""
    return f"{row['performer']}: " if row.get("performer") else ""


def failure_sentence(first: dict, scene) -> str:
    where = f"on {first['car_name']}" if first["car_name"] else "off the roof"
    start = " (at the very start: the beat cannot begin as written)" if first["time_s"] < 1e-6 else ""
    return (f"{first['kind']} at {timecode(first['time_s'], scene.frame_rate)} ({first['time_s']:.2f} s){start} "
            f"{where}: {first['detail']}")


def _pair_block(page: Page, scene, content) -> None:
    """Two performers: each one's verdict and first failure, and what each interaction did."""
    from preview.report import interaction_rows, pair_verdicts
    per = content["performers"]
    page.heading(f"two performers: the beat is the worse of {pair_verdicts(per)}")
    for p in per:
        first = p["first_failure"]
        page.para(f"{p['name']}: {p['verdict'].upper()}. First failure: "
                  + (failure_sentence(first, scene) if first else "none") + ".", BODY + 0.5, "bold")
    page.y -= 0.04
    page.heading("interactions: who did what to whom")
    rows = interaction_rows(content.get("interactions", []), scene.units)
    if not rows:
        page.para("None: the two performers do not act on each other in this scene.")
        return
    heads = [("who", 0.0), ("did", 0.9), ("to whom", 1.45), ("time (s)", 2.35), ("reached", 3.0),
             ("peak force", 4.1), ("impulse", 4.85), ("a hold", 5.6)]
    for head, x in heads:
        page.text(MARGIN_IN + x, head, BODY - 1.5, "bold")
    page.y -= ROW
    for r in rows:
        cells = [r["who"], r["did"], r["to"], r["time"], r["reached"], r["peak"], r["impulse"], r["hold"]]
        let_go = r["hold"].startswith("LET GO")
        for (head, x), cell in zip(heads, cells):
            if head == "a hold":
                cell = fitted(cell, BODY, page.w - 2 * MARGIN_IN - x)
            page.text(MARGIN_IN + x, cell, BODY, "bold" if let_go and head == "a hold" else "normal")
        page.y -= ROW
    page.para("Peak force: the largest force between the hands and the partner; impulse: that force over the time it "
              "acted. A hold lets go when the pull on it passes its breaking force.", BODY - 1, color=SOFT)


CLOSING_DRAWN_IN = 2.75   # in the closing takes as drawn (measured: 2.38 in of cursor and the last sign-off line)
FOOTER_CLEAR_IN = 0.45    # in from the bottom the page's text must stay above (the footer is at 0.3 in)
CLOSING_IN = 3.0    # in: the checklist, the caution and the sign-off lines
MIN_PLOT_IN = 1.9   # in: the envelope plot goes on a page of its own rather than smaller than this


def _envelope(page: Page, scene, sweep, sweep_summary, height: float) -> None:
    from preview.plots import draw_envelope
    page.heading("speed envelope: margins against top speed")
    width_in = page.w - 2 * MARGIN_IN
    # Room on the right for the second axis and the legend, below for the axis label.
    ax = page.fig.add_axes((page.fx(MARGIN_IN + 0.45), page.fy(page.y - height + 0.6), page.fx(width_in - 3.2),
                            page.fy(height - 0.7)))
    draw_envelope(ax, scene, sweep, sweep_summary)
    page.y -= height


def _closing(page: Page, content) -> None:
    page.heading("crew checklist (tick on the day)")
    for item in CHECKLIST:
        page.text(MARGIN_IN, "☐", BODY + 1.5)
        page.para(item, x_in=MARGIN_IN + 0.22, gap=0.02)
    page.rule()
    page.heading("caution")
    page.para(CAUTION)
    page.y -= 0.12
    for k, role in enumerate(SIGN_OFF):
        x = MARGIN_IN + (k % 2) * (page.w - 2 * MARGIN_IN) / 2
        if k % 2 == 0 and k:
            page.y -= 0.42
        page.text(x, f"{role}", BODY, "bold")
        page.fig.text(page.fx(x), page.fy(page.y - 0.3), "name ____________________  signature ____________  "
                      "date _______", fontsize=BODY - 0.5, color=INK)


def _actions_table(page: Page, scene, content) -> None:
    system = scene.units
    req = content["required_factors"]
    length_unit = to_display(1.0, "length", system)[1]
    wind_unit = to_display(1.0, "wind", system)[1]
    heads = [("action", 0.0), ("time (s)", 1.15), ("verdict", 1.76), ("grip ratio", 2.5),
             (f"balance ({length_unit})", 3.08), ("lift ratio", 3.78), ("lean (°)", 4.3),
             (f"wind ({wind_unit}, Bft)", 4.75), (f"land. ({length_unit})", 5.65), (f"clear. ({length_unit})", 6.2),
             (f"edge ({length_unit})", 6.75)]
    needed = {"grip ratio": "grip ratio", f"balance ({length_unit})": "balance margin", "lift ratio": "lift ratio",
              f"land. ({length_unit})": "landing margin", f"clear. ({length_unit})": "overhead clearance",
              f"edge ({length_unit})": "side-edge margin"}
    page.heading("verdict per action: margins beside the factors required (≥)")
    for head, x in heads:
        page.text(MARGIN_IN + x, head, BODY - 1.5, "bold")
    page.y -= ROW - 0.03
    for head, x in heads:
        if head in needed:
            f = req[needed[head]]
            value = display(f["value"], "length", system).split()[0] if f["unit"] == "m" else f"{f['value']:.2f}"
            page.text(MARGIN_IN + x, f"≥ {value}", BODY - 1, color=SOFT)
    page.y -= ROW
    # Margins rounded down, never up (a ratio of 0.998 is not shown as 1.00).
    length = lambda v: "-" if v is None else f"{floor_to(to_display(v, 'length', system)[0]):.2f}"  # noqa: E731
    ratio = lambda v: "-" if v is None else f"{floor_to(v):.2f}"  # noqa: E731
    length3 = lambda v: "-" if v is None else f"{floor_to(to_display(v, 'length', system)[0], 3):+.3f}"  # noqa: E731
    whose = None
    verdicts = {p["name"]: p["verdict"] for p in content.get("performers") or []}
    for a in content["actions"]:
        if a.get("performer") and a["performer"] != whose:
            whose = a["performer"]
            page.text(MARGIN_IN, f"{whose}'s actions ({verdicts.get(whose, '').upper()})", BODY, "bold")
            page.y -= ROW
        name = a["name"] if len(a["name"]) <= 20 else a["name"][:19] + "…"
        cells = [name, f"{a['start_s']:.1f}-{a['end_s']:.1f}"]
        if not a["assessed"]:
            page.text(MARGIN_IN, cells[0])
            page.text(MARGIN_IN + 1.15, cells[1])
            page.text(MARGIN_IN + 1.76, "FAILS: not reached, the beat failed before it", BODY, "bold")
            page.y -= ROW
            continue
        cells += [a["verdict"].upper(), ratio(a["grip_ratio_min"]), length3(a["balance_margin_min_m"]),
                  ratio(a["lift_ratio_min"]), f"{a['lean_max_deg']:.1f}",
                  f"{to_display(a['apparent_wind_max_ms'], 'wind', system)[0]:.1f}, {a['beaufort_max']}",
                  length(a["landing_margin_min_m"]), length(a["clearance_min_m"]), length(a["edge_margin_min_m"])]
        short = {s["margin"] for s in a.get("below_required", a["marginal_because"])}
        for (head, x), cell in zip(heads, cells):
            bold = head == "verdict" or needed.get(head) in short
            page.text(MARGIN_IN + x, cell, BODY, "bold" if bold else "normal")
        page.y -= ROW
        if a["marginal_because"]:
            steps = a.get("recovery_steps") or 0
            stepped = f"; {steps} recovery step{'s' if steps > 1 else ''} taken" if steps else ""
            page.para("why marginal: " + marginal_words(a["marginal_because"], system) + stepped, BODY - 0.5,
                      x_in=MARGIN_IN + 0.2, color=SOFT)


def _page_two(page: Page, scene, content, playback) -> None:
    from preview.canvas import FigureCanvas
    from preview.frame import ViewSettings, draw_frame
    _header(page, scene, content, "key frames")
    frame = deciding_view(playback)
    width_in = page.w - 2 * MARGIN_IN
    height_in = width_in * KEY_FRAME_SIZE[1] / KEY_FRAME_SIZE[0]
    what = {"split": "ground and car frames", "car": "car frame", "end": "end view, across the track"}[frame]
    for label, t in key_times(playback):
        page.para(f"{label}: {timecode(t, scene.frame_rate)} ({t:.2f} s), {what}", BODY + 0.5, "bold", gap=0.0)
        page.para(frame_facts(playback, t), BODY, gap=0.06)
        ax = page.fig.add_axes((page.fx(MARGIN_IN), page.fy(page.y - height_in), page.fx(width_in),
                                page.fy(height_in)))
        follow = {"follow": focus(playback)} if "follow" in ViewSettings.__dataclass_fields__ else {}
        draw_frame(FigureCanvas(ax, KEY_FRAME_SIZE), playback, min(t, scene.duration),
                   ViewSettings(frame=frame, zoom=1.6, readout=False, text_boost=KEY_FRAME_BOOST, **follow))
        page.y -= height_in + 0.2


def _page_ladder(page: Page, scene, content, ladder) -> None:
    """The rehearsal ladder: the abort limits in large type, the rungs with their margins, the wind
    machine for a static rehearsal, and the rigging's table (or a line saying the scene has none)."""
    from physics.units import display as show
    from physics.verdict import FACTORS
    from preview.analysis import display as value_words
    from preview.analysis import limit_words
    from preview.report import factor_value
    system = scene.units
    _header(page, scene, content, "rehearsal ladder and abort limits")
    if ladder is None:
        page.para("No ladder: the consist does not move in this scene.", BODY + 1, "bold")
        return
    worse = f" ({ladder['margins_are']})" if ladder.get("margins_are") else ""
    page.heading("abort limits: stop the rehearsal above these" + worse)
    limits = ladder["abort_limits"]
    for name, head in (("speed", "TOP SPEED"),
                       ("wind_speed", f"AMBIENT WIND from {limits['wind_from_deg']:.0f}°, at the planned speed")):
        factored = limits[name]["limits"][0]
        uniform = limits.get("uniform_air")
        if uniform is not None:
            # The air over the roof lowers the loads on soft coefficients: the free stream's limit is the
            # headline, the profile's beside it.
            value = uniform[name]
            big = (f"{head}: none holds with the required factors with the free stream at every height: do not "
                   "shoot the beat as written" if value is None else
                   f"{head}: {value_words(name, value, system)} (the free stream at every height)")
            page.para(big, 13, "bold")
            profiled = ("none holds" if factored["value"] is None
                        else f"holds up to {value_words(name, factored['value'], system)}")
            page.para(f"With the air over the roof on: {profiled} with the required factors; its coefficients are "
                      "roofbeat's defaults or the scene's, not measured on this train: abort at the figure above "
                      "unless they are checked.", BODY + 1, "bold")
        else:
            if factored["value"] is None:
                big = f"{head}: none holds with the required factors: do not shoot the beat as written"
            else:
                big = f"{head}: {value_words(name, factored['value'], system)}"
                if factored["bound"]:
                    big += " or more (the end of the sweep)"
            page.para(big, 13, "bold")
        for limit in limits[name]["limits"]:
            words = limit_words(name, limit, limits[name]["range"], system, limits[name]["limits"])
            page.para(("With the air over the roof on: " if uniform is not None else "") + words + ".", BODY,
                      color=SOFT)
    if ladder.get("scaling_note"):
        note = ladder["scaling_note"]
        page.para(note[0].upper() + note[1:] + ".", BODY + 0.5, "bold")
    page.rule()
    page.heading("rungs: build up from walking pace; margins are the worst over the beat"
                 + (f", the {ladder['margins_are']}" if worse else ""))
    heads = [("rung", 0.0), ("speed", 0.45), ("verdict", 1.3)] + [(w, 2.1 + 0.86 * i) for i, (_, _, w, _)
                                                                      in enumerate(FACTORS)]
    short_words = {"grip ratio": "grip ratio", "balance margin": "balance", "lift ratio": "lift ratio",
                   "landing margin": "landing", "overhead clearance": "clearance", "side-edge margin": "side edge"}
    for head, x in heads:
        page.text(MARGIN_IN + x, short_words.get(head, head), BODY - 1.5, "bold")
    page.y -= ROW
    for row in ladder["rungs"]:
        cells = [str(row["rung"]), show(row["speed_ms"], "speed", system, ".1f"), row["verdict"].upper()]
        for (_, _, words, unit) in FACTORS:
            value = row["margins"][words]
            cells.append("-" if value is None else factor_value(value, unit, system))
        short = {s["margin"] for s in row["below_required"]}
        for (head, x), cell in zip(heads, cells):
            page.text(MARGIN_IN + x, cell, BODY, "bold" if head in short or head == "verdict" else "normal")
        page.y -= ROW
    if any("uniform_air_verdict" in row for row in ladder["rungs"]):
        page.para("With the air over the roof off (the free stream at every height, the bound) the rungs read: "
                  + "; ".join(f"{row['rung']} {row['uniform_air_verdict'].upper()}" for row in ladder["rungs"])
                  + ".", BODY, "bold")
    if worse:
        page.para("Each one's own verdict: " + "; ".join(
            f"rung {row['rung']} " + ", ".join(f"{n} {v.upper()}" for n, v in row["performers"].items())
            for row in ladder["rungs"]) + ".", BODY)
    first = ladder["first_rung_short"]
    if first is None:
        words = "Every rung holds with the required factors."
    else:
        why = ladder['rungs'][first - 1]['first_failure'] or 'marginal'
        words = (f"First rung short of the factors: rung {first} ({why}): " +
                 ("do not go past the rung before it." if first > 1 else
                  "the first rung already falls short: do not start this ladder; rework the beat first."))
    page.para(words, BODY + 0.5, "bold")
    page.rule()
    machine = ladder["wind_machine"]
    page.para(f"Static rehearsal: a wind machine giving {show(machine['air_speed_ms'], 'wind', system, '.1f')} "
              f"from {machine['from_deg']:.0f}° (0 = from ahead, + from the left) gives the performer the planned "
              f"speed's apparent wind. Note: {machine['note']}.")
    _rigging_table(page, scene, content)


def _rigging_table(page: Page, scene, content) -> None:
    """The rigging: per tether its role, peak forces, travel and where the body hangs, each number
    against its limit with the limit's source; or a plain line when the scene has none."""
    from preview.report import rigging_rows
    page.rule()
    rigging = content.get("rigging") or []
    if not rigging and scene.pair:
        page.para("Rigging: roofbeat models tethers for one performer only; a scene with two performers has none "
                  "here. The rigger's own calculation governs.", BODY, "bold")
        return
    if not rigging:
        page.para("Rigging: this scene has no [[rigging]]; tethers, running lines and their limits are checked "
                  "when the scene gives them. The rigger's own calculation governs.", BODY, "bold")
        return
    page.heading("rigging: each tether against its limits (harness at the body's centre of mass)")
    sources = {}
    for row in rigging_rows(rigging, scene.units):
        page.para(f"{row['name']} ({row['kind']}): {row['role']}, {row['reach']}; peak tether force "
                  f"{row['peak_tether']}; went {row['went']} before it held; {row['hangs']}"
                  + (f"; {row['absorber']}" if row["absorber"] else ""), BODY, "bold")
        for head, x in (("", 0.2), ("value", 2.3), ("limit", 3.4), ("", 4.5), ("source", 5.3)):
            if head:
                page.text(MARGIN_IN + x, head, BODY - 1.5, "bold")
        page.y -= ROW
        for c in row["checks"]:
            mark = sources.setdefault(c["source"], len(sources) + 1)
            over = c["state"] == "OVER"
            for x, cell in ((0.2, c["what"]), (2.3, c["value"]), (3.4, c["limit"]), (4.5, c["state"]),
                            (5.3, f"[{mark}]")):
                page.text(MARGIN_IN + x, cell, BODY, "bold" if over else "normal")
            page.y -= ROW
    for source, mark in sources.items():
        page.para(f"[{mark}] {source}", BODY - 1, color=SOFT)
    page.para("Deceleration distance here runs from the tether going taut to the stop with its stretch, so it is "
              "at least the standard's figure, which leaves the lifeline's stretch out. The rigger's own "
              "calculation governs.", BODY - 1, color=SOFT)


def write_brief(scene, out: Path, paper: str = "a4") -> dict:
    """Render the pages to OUT (PDF) and the content to OUT with .json; returns the content."""
    from matplotlib.backends.backend_pdf import PdfPages

    from physics.ladder import POINTS, build_ladder, speed_range
    from physics.sweep import SweepError, sweep_1d
    from preview.analysis import envelope_summary
    from preview.plots import _mpl
    from preview.session import make_playback

    plt = _mpl()
    playback = make_playback(scene)
    sweep = sweep_summary = ladder = None
    try:
        # The same sweep as the ladder's top-speed abort limit, so the two pages give one number.
        sweep = sweep_1d(scene, "speed", *speed_range(scene), points=POINTS)
        sweep_summary = envelope_summary(scene, sweep)
        ladder = build_ladder(scene)
    except SweepError:
        pass
    content = brief_content(scene, playback, sweep_summary)
    content["ladder"] = ladder
    pages = [Page(plt, paper, content)]
    out = Path(out)
    try:
        left_over = _page_one(pages[0], scene, content, sweep, sweep_summary)
        if content.get("closing_page"):
            pages.append(Page(plt, paper, content))
            _header(pages[-1], scene, content, "safety meeting brief, continued: checklist and sign-off")
            if left_over is not None:   # the envelope's plot has room here
                _envelope(pages[-1], scene, left_over, sweep_summary, 3.2)
                pages[-1].rule()
                left_over = None
            _closing(pages[-1], content)
        pages.append(Page(plt, paper, content))
        _page_two(pages[-1], scene, content, playback)
        if left_over is not None:
            pages.append(Page(plt, paper, content))
            _header(pages[-1], scene, content, "speed envelope")
            _envelope(pages[-1], scene, left_over, sweep_summary, 3.2)
        pages.append(Page(plt, paper, content))
        _page_ladder(pages[-1], scene, content, ladder)
        for n, page in enumerate(pages, start=1):
            page.footer(n, len(pages))
        content["pages"] = len(pages)
        # The pages and the JSON appear together or not at all.
        with OutputSet() as outs:
            pdf, data = outs.file(out), outs.file(out.with_suffix(".json"))
            with PdfPages(pdf, metadata={"Title": f"roofbeat brief: {scene.title}",
                                         "Creator": f"roofbeat {content['roofbeat_version']}"}) as doc:
                for page in pages:
                    doc.savefig(page.fig)
            data.write_text(json.dumps(content, indent=2, default=str))
    finally:
        for page in pages:
            plt.close(page.fig)
    return content


def cmd_brief(args) -> int:
    from preview.session import load
    scene = load(args)
    out = Path(args.output)
    check_target(out, folder=False)
    check_target(out.with_suffix(".json"), folder=False)
    try:
        content = write_brief(scene, out, args.paper)
    except OSError as exc:
        raise OutputError(f"{out}: could not write: {exc.strerror or exc}") from None
    except zlib.error as exc:
        # The PDF writer compresses its pages as it writes them: a write that fails under it (a full
        # disk) can surface as the compressor's error instead of the disk's.
        raise OutputError(f"{out}: could not write the PDF's compressed pages ({exc}); is the disk full?") from None
    print(f"wrote {out} ({content['pages']} pages) and {out.with_suffix('.json')}; verdict {content['verdict']}")
    return 0
