"""`roofbeat brief`: one printable page for the safety meeting, plus the same content as JSON.

Layout of our own: a header band with the verdict, the scene's key numbers,
the verdict per action with margins, two or three key frames drawn by the
preview's renderer, the speed envelope, the wind words, the caution and blank
sign-off lines. Black-and-white friendly: verdicts are words, not only colours.
"""

from __future__ import annotations

import datetime as dt
import json
import math
from pathlib import Path

import numpy as np

from physics.units import to_display
from preview.caution import CAUTION
from preview.outputs import OutputSet, check_target
from preview.session import OutputError
from preview.report import wind_words
from preview.timecode import timecode

PAPER = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}


def key_numbers(scene) -> list[tuple[str, str]]:
    system = scene.units
    length = lambda v: "{:.2f} {}".format(*to_display(v, "length", system))  # noqa: E731
    speed = lambda v: "{:.0f} {}".format(*to_display(v, "speed", system))  # noqa: E731
    cars = "; ".join(f"{c.name} {length(c.length)}, roof {length(c.roof_height)}, {c.surface} "
                     f"(static {c.sole_static:.2f})" for c in scene.cars)
    if len(scene.keyframes) == 1:
        profile = f"constant {speed(scene.keyframes[0].speed)}"
    else:
        profile = ", ".join(f"{speed(k.speed)} at {k.time:.0f} s" for k in scene.keyframes)
    wind = "{:.1f} {}".format(*to_display(scene.air.wind_speed, "wind", system))
    wind += f" from {math.degrees(scene.air.wind_from):.0f}° (0 = ahead)"
    if scene.air.gusts:
        wind += f"; {len(scene.air.gusts)} gust(s) to " + "{:.1f} {}".format(
            *to_display(max(g.peak for g in scene.air.gusts), "wind", system))
    if scene.air.turbulence:
        wind += "; turbulence"
    p = scene.performer
    mass = "{:.0f} {}".format(*to_display(p.mass, "mass", system))
    performer = f"{length(p.stature)}, {mass}, {p.body_model} body"
    if p.drag_area:
        performer += f", standing drag area {p.drag_area:.2f} m²"
    return [("consist", cars), ("speed", profile), ("wind", wind),
            ("air density", f"{scene.air.density:.3f} kg/m³"), ("performer", performer)]


def brief_content(scene, playback, sweep_summary) -> dict:
    s = playback.summary
    peak = max((a["apparent_wind_max_ms"] for a in s["actions"]), default=0.0)
    return {
        "title": scene.title, "scene_file": scene.source, "date": dt.date.today().isoformat(),
        "verdict": s["verdict"], "key_numbers": dict(key_numbers(scene)), "actions": s["actions"],
        "first_failure": s["first_failure"], "events": s["events"],
        "apparent_wind": wind_words(peak, scene.units), "apparent_wind_max_ms": peak,
        "envelope": sweep_summary, "caution": CAUTION,
        "sign_off": ["stunt coordinator", "safety officer"],
    }


def key_times(playback) -> list[tuple[str, float]]:
    """Start, the critical moment (lowest grip ratio or balance margin), and the failure or the landing."""
    tr = playback.trajectory
    times = [("start", 0.0)]
    first = playback.summary["first_failure"]
    demand = tr.field("grip_demand")
    critical = float(tr.times[int(np.nanargmax(np.where(np.isfinite(demand), demand, -1)))])
    from physics.records import Mode
    flying = np.nonzero(tr.field("mode") == Mode.FLIGHT)[0]
    if first:
        times.append(("just before", max(0.0, first["time_s"] - 0.5)))
        times.append((f"{first['kind']} at {first['time_s']:.2f} s", first["time_s"] + 0.2))
    elif flying.size:
        times.append(("in the air", float(tr.times[flying[len(flying) // 2]])))
        times.append(("landing", float(tr.times[min(flying[-1] + 12, tr.times.size - 1)])))
    else:
        times.append(("critical moment", critical))
    return times


def write_brief(scene, out: Path, paper: str = "a4") -> dict:
    """Render the page to OUT (PDF) and its content to OUT with .json; returns the content."""
    import matplotlib
    matplotlib.use("Agg")
    matplotlib.rcParams["pdf.fonttype"] = 42
    import matplotlib.pyplot as plt

    from physics.sweep import SweepError, sweep_1d
    from preview.analysis import envelope_summary
    from preview.export import frame_pixels
    from preview.session import make_playback
    from preview.frame import ViewSettings
    from preview.plots import draw_envelope

    playback = make_playback(scene)
    sweep = sweep_summary = None
    top = max(k.speed for k in scene.keyframes)
    try:
        sweep = sweep_1d(scene, "speed", max(0.5, 0.25 * top), max(top * 1.6, 10.0), points=33)
        sweep_summary = envelope_summary(scene, sweep)
    except SweepError:
        pass
    content = brief_content(scene, playback, sweep_summary)
    fig = plt.figure(figsize=PAPER[paper])
    _header(fig, scene, content)
    _tables(fig, scene, content)
    has_jump = any(a.kind == "jump" for a in scene.actions)
    for k, (label, t) in enumerate(key_times(playback)):
        frame = "split" if has_jump else "car"
        ax = fig.add_axes((0.05 + k * 0.31, 0.455, 0.29, 0.2))
        ax.imshow(frame_pixels(playback, min(t, scene.duration), ViewSettings(frame=frame, zoom=1.8), (800, 660)))
        ax.set_axis_off()
        ax.set_title(f"{label} ({timecode(t, scene.frame_rate)})", fontsize=7)
    if sweep is not None:
        ax = fig.add_axes((0.08, 0.205, 0.80, 0.2))
        draw_envelope(ax, scene, sweep, sweep_summary)
        ax.set_title("speed envelope: margins against top speed", fontsize=8)
    _footer(fig, content)
    out = Path(out)
    # The page and its JSON appear together or not at all.
    try:
        with OutputSet() as outs:
            pdf, data = outs.file(out), outs.file(out.with_suffix(".json"))
            fig.savefig(pdf, format="pdf")
            data.write_text(json.dumps(content, indent=2, default=str))
    finally:
        plt.close(fig)
    return content


def _header(fig, scene, content) -> None:
    from matplotlib.patches import Rectangle
    fig.patches.append(Rectangle((0, 0.93), 1, 0.07, transform=fig.transFigure, color="#2b3138", zorder=0))
    fig.text(0.05, 0.968, "roofbeat - safety meeting brief", color="white", fontsize=9)
    fig.text(0.05, 0.943, scene.title[:62], color="white", fontsize=11, weight="bold")
    fig.text(0.95, 0.968, f"{content['date']}  |  {Path(scene.source).name}", color="#dddddd", fontsize=7, ha="right")
    fig.text(0.95, 0.943, f"VERDICT: {content['verdict'].upper()}", color="white", fontsize=13, weight="bold",
             ha="right")


def _tables(fig, scene, content) -> None:
    y = 0.915
    for name, value in key_numbers(scene):
        fig.text(0.05, y, name, fontsize=7.5, weight="bold")
        fig.text(0.18, y, value if len(value) <= 118 else value[:115] + "...", fontsize=7.5)
        y -= 0.016
    y -= 0.008
    fig.text(0.05, y, "action", fontsize=7.5, weight="bold")
    heads = [("time (s)", 0.22), ("verdict", 0.31), ("grip", 0.41), ("balance (m)", 0.48), ("lift", 0.58),
             ("lean (°)", 0.64), ("wind (m/s, Bft)", 0.71), ("landing/clear. (m)", 0.83)]
    for head, x in heads:
        fig.text(x, y, head, fontsize=7.5, weight="bold")
    for a in content["actions"]:
        y -= 0.015
        fig.text(0.05, y, a["name"][:22], fontsize=7.5)
        if not a["assessed"]:
            fig.text(0.22, y, f"{a['start_s']:.1f}-{a['end_s']:.1f}", fontsize=7.5)
            fig.text(0.31, y, "FAILS (after the first failure)", fontsize=7.5, weight="bold")
            continue
        cells = [f"{a['start_s']:.1f}-{a['end_s']:.1f}", a["verdict"].upper(), _n(a["grip_ratio_min"]),
                 _n(a["balance_margin_min_m"]), _n(a["lift_ratio_min"]), f"{a['lean_max_deg']:.1f}",
                 f"{a['apparent_wind_max_ms']:.1f}, {a['beaufort_max']}",
                 f"{_n(a['landing_margin_min_m'])} / {_n(a['clearance_min_m'])}"]
        for (head, x), cell in zip(heads, cells):
            fig.text(x, y, cell, fontsize=7.5, weight="bold" if head == "verdict" else "normal")
    y -= 0.022
    first = content["first_failure"]
    text = (f"First failure: {first['kind']} at {first['time_s']:.2f} s on {first['car_name'] or 'no roof'} "
            f"- {first['detail']}") if first else "No failure in the simulated beat."
    fig.text(0.05, y, text, fontsize=8.5, weight="bold")
    import textwrap
    wind_lines = textwrap.wrap(f"Apparent wind, highest: {content['apparent_wind']}", 135)
    fig.text(0.05, y - 0.017, "\n".join(wind_lines[:2]), fontsize=7.5, va="top")
    y -= 0.012 * (len(wind_lines[:2]) - 1)
    env = content["envelope"]
    if env:
        from preview.analysis import limit_words
        words = limit_words("speed", env["limits"][0], env["range"], scene.units)
        fig.text(0.05, y - 0.04, f"Top speed: {words}", fontsize=8.5, weight="bold")


def _n(x) -> str:
    return "-" if x is None else f"{x:.2f}"


def _footer(fig, content) -> None:
    import textwrap
    fig.text(0.05, 0.118, "CAUTION", fontsize=8, weight="bold")
    fig.text(0.05, 0.11, "\n".join(textwrap.wrap(CAUTION, 120)), fontsize=7.5, va="top")
    for k, role in enumerate(content["sign_off"]):
        x = 0.05 + k * 0.47
        fig.text(x, 0.025, f"{role}: ______________________________   date: __________", fontsize=7.5)


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
    print(f"wrote {out} and {out.with_suffix('.json')}; verdict {content['verdict']}")
    return 0
