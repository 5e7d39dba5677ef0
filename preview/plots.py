"""Plots for the envelope and the brief (matplotlib, Agg; imported only here).

A style of our own, in the preview's palette: paper background, ink text, no
boxes around the axes, every line named in the legend, limits labelled on the
plot with their values in the scene's display units, and the planned value
marked.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np

from physics.wind_scales import beaufort
from preview.caution import CAUTION_SHORT

VERDICT_COLORS = {0: "#3e825c", 1: "#c8962a", 2: "#d1495b"}
VERDICT_WORDS = {0: "holds", 1: "marginal", 2: "fails"}
INK, SOFT, PAPER, GRID = "#2b3138", "#787e85", "#fbfaf7", "#e4e2dc"
FAINT_SHADE = "#eeece6"
GRIP, LIFT, BALANCE, PLANNED = "#1f7a8c", "#6a4c93", "#c77d00", "#2b3138"


def _mpl():
    import matplotlib
    matplotlib.use("Agg")
    matplotlib.rcParams.update({
        "pdf.fonttype": 42, "font.family": "DejaVu Sans", "font.size": 8, "axes.facecolor": PAPER,
        "figure.facecolor": "white", "axes.edgecolor": SOFT, "axes.labelcolor": INK, "text.color": INK,
        "xtick.color": SOFT, "ytick.color": SOFT, "axes.spines.top": False, "axes.spines.right": False,
        "axes.grid": True, "grid.color": GRID, "grid.linewidth": 0.6, "legend.frameon": False,
    })
    import matplotlib.pyplot as plt
    return plt


def _x_display(scene, name, values):
    from physics.units import to_display
    from preview.analysis import DISPLAY_DIMENSION
    values = np.asarray(values, dtype=float)
    if name == "wind_from":
        return np.degrees(values), "wind from (deg, 0 = ahead)"
    if name == "friction":
        return values, "roof static friction"
    unit = to_display(1.0, DISPLAY_DIMENSION[name], scene.units)[1]
    return np.array([to_display(v, DISPLAY_DIMENSION[name], scene.units)[0] for v in values]), \
        f"{name.replace('_', ' ')} ({unit})"


def _length(scene, values):
    from physics.units import to_display
    unit = to_display(1.0, "length", scene.units)[1]
    return np.array([to_display(v, "length", scene.units)[0] for v in np.atleast_1d(values)]), unit


# Each margin the verdict weighs: (outcome field, [safety] factor, words, colour).
MARGINS = (
    ("grip_ratio_min", "grip_ratio", "grip ratio", GRIP),
    ("balance_margin_min", "balance_margin", "balance margin", BALANCE),
    ("lift_ratio_min", "lift_ratio", "lift ratio", LIFT),
    ("landing_margin_min", "landing_margin", "landing margin", "#3e825c"),
    ("clearance_min", "clearance", "overhead clearance", "#8a6d57"),
)
CLIP = 3.0   # margins are drawn up to three times what is required; above, the curve runs along the top
FLOOR = -0.5  # and down to half the required below zero; below, along the floor (its legend entry says so)


def draw_envelope(ax, scene, sweep, summary) -> None:
    """Every margin the verdict weighs, as a multiple of what the scene requires, against the varied
    value: below 1 is below the required factor. Where runs fail the curves stop and the band is
    shaded (a failed run's margins only reach its failure). Beaufort force of the apparent wind
    behind, the limits labelled, the planned value marked."""
    from physics.units import display as show
    from preview.analysis import display
    x, label = _x_display(scene, sweep.name, sweep.values)
    m = sweep.result.outcomes
    codes = np.asarray(sweep.codes)
    _beaufort_bands(ax, x, m["apparent_wind_max"].max(axis=1), codes)
    handles = []
    fails = codes == 2
    for k in range(len(x)):
        if fails[k]:
            lo = x[k - 1] if k else x[k]
            hi = x[k + 1] if k + 1 < len(x) else x[k]
            ax.axvspan(0.5 * (lo + x[k]), 0.5 * (x[k] + hi), color=VERDICT_COLORS[2], alpha=0.10, lw=0, zorder=0)
    if fails.any():
        from matplotlib.patches import Patch
        handles.append(Patch(color=VERDICT_COLORS[2], alpha=0.25, label="runs that fail (curves stop)"))
    lowest = 0.0
    for field, factor, words, colour in MARGINS:
        values = m[field].min(axis=1)
        if not np.isfinite(values).any():
            continue   # this beat has no such margin (no jump, no structure)
        required = float(getattr(scene.safety, factor))
        relative = values / max(required, 1e-9)
        drawn = np.where(np.isfinite(relative) & ~fails, np.clip(relative, FLOOR, CLIP), np.nan)
        if np.isfinite(drawn).any():
            lowest = min(lowest, float(np.nanmin(drawn)))
        need = show(required, "length", scene.units) if factor in ("balance_margin", "landing_margin",
                                                                   "clearance") else f"{required:g}"
        below = bool((np.isfinite(relative) & ~fails & (relative < FLOOR)).any())
        clipped = f"; below {FLOOR:g} drawn at {FLOOR:g}" if below else ""
        handles.append(ax.plot(x, drawn, color=colour, lw=1.6, label=f"{words} ÷ required ({need}{clipped})")[0])
    handles.append(ax.axhline(1.0, color=INK, ls=":", lw=1, label="1 = just the required factor"))
    ax.axhline(0.0, color=SOFT, lw=0.6)
    for limit, colour in zip(summary["limits"], (VERDICT_COLORS[1], VERDICT_COLORS[2])):
        if limit["value"] is None:
            continue
        lx, _ = _x_display(scene, sweep.name, [limit["value"]])
        words = ("at least " if limit["bound"] else "") + display(sweep.name, limit["value"], scene.units)
        name = "holds with the required factors" if limit["level"] == "holds with the required factors" \
            else "does not fail"
        handles.append(ax.axvline(lx[0], color=colour, lw=1.6, ls="--" if limit["bound"] else "-",
                                  label=f"{name} up to {words}"))
        ax.annotate(words, (lx[0], 1.0), xycoords=("data", "axes fraction"), rotation=90, va="top", ha="right",
                    fontsize=7, color=colour, xytext=(-2, -2), textcoords="offset points")
    if summary.get("planned") is not None:
        px, _ = _x_display(scene, sweep.name, [summary["planned"]])
        handles.append(ax.axvline(px[0], color=PLANNED, lw=1, ls="-.",
                                  label=f"planned: {display(sweep.name, summary['planned'], scene.units)}"))
    for code in (0, 1, 2):
        handles.append(ax.scatter([], [], color=VERDICT_COLORS[code], s=14, marker="s", label=VERDICT_WORDS[code]))
    # The verdict squares sit in their own row below the axis numbers (not over them).
    ax.scatter(x, np.full(len(x), -0.19), c=[VERDICT_COLORS[c] for c in codes], s=12, marker="s",
               transform=ax.get_xaxis_transform(), clip_on=False)
    ax.set_xlabel(label + "   (squares: the verdict at each swept value)", labelpad=24)
    worse = summary.get("margins_are")
    ax.set_ylabel(f"margin ÷ required (drawn {FLOOR:g} to {CLIP:g})" + (f"\n{worse}" if worse else ""))
    # Below zero, room under the lowest curve for the Beaufort labels along the bottom.
    ax.set_ylim(min(0.0, lowest - 0.05) if lowest >= 0.0 else lowest - 0.3, CLIP + 0.1)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=6.5)


def _beaufort_bands(ax, x, wind, codes) -> None:
    """Alternate shading by Beaufort force; one label per run of equal force (runs that fail have
    only the wind up to their failure, so they are left unlabelled)."""
    forces = np.array([beaufort(w) for w in wind])
    for k in range(len(x) - 1):
        shade = 0.985 - 0.03 * (forces[k] % 2)
        ax.axvspan(x[k], x[k + 1], color=(shade, shade, shade * 0.99), lw=0, zorder=0)
    start = 0
    last_label = -np.inf
    span = (x[-1] - x[0]) or 1.0
    for k in range(1, len(x) + 1):
        if k == len(x) or forces[k] != forces[start]:
            run = slice(start, k)
            middle = float(np.mean(x[run]))
            if k - start >= 2 and not (codes[run] == 2).any() and middle - last_label > 0.06 * span:
                ax.text(middle, 0.02, f"Bft {forces[start]}", transform=ax.get_xaxis_transform(), ha="center",
                        fontsize=6.5, color=SOFT)
                last_label = middle
            start = k


def _save(fig, path: Path) -> None:
    from preview.outputs import OutputSet
    with OutputSet() as outs:
        tmp = outs.file(path)
        fig.savefig(tmp, dpi=150, format=path.suffix.lstrip(".").lower())


def _caution(fig) -> None:
    fig.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION_SHORT, 160)), fontsize=5.5, color=SOFT)


def envelope_plot(scene, sweep, summary, path: Path) -> None:
    plt = _mpl()
    fig, ax = plt.subplots(figsize=(10, 4.8))
    draw_envelope(ax, scene, sweep, summary)
    worse = f" ({summary['margins_are']})" if summary.get("margins_are") else ""
    ax.set_title(f"{scene.title}: margins against {sweep.name.replace('_', ' ')}{worse}", fontsize=10, loc="left")
    _caution(fig)
    fig.tight_layout(rect=(0, 0.05, 1, 1))
    _save(fig, path)
    plt.close(fig)


def map_plot(scene, summary, codes, path: Path) -> None:
    plt = _mpl()
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch
    name1, name2 = summary["parameters"]
    x, xl = _x_display(scene, name1, summary["values_1"])
    y, yl = _x_display(scene, name2, summary["values_2"])
    fig, ax = plt.subplots(figsize=(8, 5))
    cmap = ListedColormap([VERDICT_COLORS[0], VERDICT_COLORS[1], VERDICT_COLORS[2]])
    ax.pcolormesh(x, y, codes, cmap=cmap, vmin=-0.5, vmax=2.5, shading="nearest")
    ax.contour(x, y, codes, levels=[0.5, 1.5], colors=INK, linewidths=0.8)
    ax.grid(False)
    ax.set_xlabel(xl)
    ax.set_ylabel(yl)
    worse = f" ({summary['margins_are']})" if summary.get("margins_are") else ""
    ax.set_title(f"{scene.title}: verdict over {name1.replace('_', ' ')} and {name2.replace('_', ' ')}{worse}",
                 fontsize=10, loc="left")
    ax.legend(handles=[Patch(color=VERDICT_COLORS[c], label=VERDICT_WORDS[c]) for c in (0, 1, 2)],
              loc="upper left", bbox_to_anchor=(1.01, 1.0))
    _caution(fig)
    fig.tight_layout(rect=(0, 0.05, 1, 1))
    _save(fig, path)
    plt.close(fig)


def speed_log_plot(scene, path: Path) -> None:
    """The measured log's raw samples against the smoothed speed the engine runs on, and the
    smoothed acceleration, over the beat, in the scene's display units."""
    from physics.units import to_display
    log = scene.speed_log
    plt = _mpl()
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(10, 5.6), sharex=True, gridspec_kw={"height_ratios": [2, 1]})
    _, speed_unit = to_display(1.0, "speed", scene.units)
    _, accel_unit = to_display(1.0, "acceleration", scene.units)
    inside = log.raw_time <= log.time[-1] + 1e-9
    top.plot(log.raw_time[inside], [to_display(v, "speed", scene.units)[0] for v in log.raw_speed[inside]], ".",
             ms=3, color=SOFT, label="logged samples (raw)")
    top.plot(log.time, [to_display(v, "speed", scene.units)[0] for v in log.speed], color=INK, lw=1.4,
             label=f"smoothed (Savitzky-Golay, {log.window:.2f} s window): what the engine runs on")
    beat = scene.duration
    for ax in (top, bottom):
        ax.axvspan(beat, max(log.time[-1], beat), color=FAINT_SHADE, lw=0)
    top.set_ylabel(f"speed ({speed_unit})")
    top.legend(loc="best", fontsize=8)
    bottom.plot(log.time, [to_display(a, "acceleration", scene.units)[0] for a in log.accel], color=INK, lw=1.2)
    bottom.axhline(0, color=SOFT, lw=0.6)
    bottom.set_ylabel(f"acceleration ({accel_unit})")
    bottom.set_xlabel("time from the log's first sample (s); shaded: after the beat")
    top.set_title(f"{scene.title}: speed log {Path(log.file).name}", fontsize=10, loc="left")
    _caution(fig)
    fig.tight_layout(rect=(0, 0.05, 1, 1))
    _save(fig, path)
    plt.close(fig)
