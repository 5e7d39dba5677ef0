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


def draw_envelope(ax, scene, sweep, summary) -> None:
    """Margins against the varied value, Beaufort bands of the apparent wind behind, the limits labelled."""
    from preview.analysis import display
    x, label = _x_display(scene, sweep.name, sweep.values)
    m = sweep.result.outcomes
    _beaufort_bands(ax, x, m["apparent_wind_max"].max(axis=1))
    grip = m["grip_ratio_min"].min(axis=1)
    lift = m["lift_ratio_min"].min(axis=1)
    bal, unit = _length(scene, m["balance_margin_min"].min(axis=1))
    s = scene.safety
    handles = [ax.plot(x, np.where(np.isfinite(grip), np.minimum(grip, 5), np.nan), color=GRIP,
                       label="grip ratio, lowest (friction available / needed)")[0],
               ax.plot(x, lift, color=LIFT, label="lift ratio, lowest (normal force / weight)")[0],
               ax.axhline(s.grip_ratio, color=GRIP, ls=":", lw=1, label=f"grip ratio required ({s.grip_ratio:g})"),
               ax.axhline(1.0, color=SOFT, ls="--", lw=0.8, label="ratio 1: the limit itself")]
    ax2 = ax.twinx()
    ax2.grid(False)
    ax2.spines["right"].set_visible(True)
    required, _ = _length(scene, s.balance_margin)
    handles += [ax2.plot(x, np.where(np.isfinite(bal), bal, np.nan), color=BALANCE,
                         label=f"balance margin, lowest ({unit})")[0],
                ax2.axhline(required[0], color=BALANCE, ls=":", lw=1,
                            label=f"balance margin required ({required[0]:.2f} {unit})")]
    ax2.set_ylabel(f"balance margin ({unit})", color=BALANCE)
    for limit, colour in zip(summary["limits"], (VERDICT_COLORS[1], VERDICT_COLORS[2])):
        if limit["value"] is None:
            continue
        lx, _ = _x_display(scene, sweep.name, [limit["value"]])
        words = ("at least " if limit["bound"] else "") + display(sweep.name, limit["value"], scene.units)
        handles.append(ax.axvline(lx[0], color=colour, lw=1.6, ls="--" if limit["bound"] else "-",
                                  label=f"{limit['level']} up to {words}"))
        ax.annotate(words, (lx[0], 1.0), xycoords=("data", "axes fraction"), rotation=90, va="top", ha="right",
                    fontsize=7, color=colour, xytext=(-2, -2), textcoords="offset points")
    if summary.get("planned") is not None:
        px, _ = _x_display(scene, sweep.name, [summary["planned"]])
        handles.append(ax.axvline(px[0], color=PLANNED, lw=1, ls="-.",
                                  label=f"planned: {display(sweep.name, summary['planned'], scene.units)}"))
    for code in (0, 1, 2):
        handles.append(ax.scatter([], [], color=VERDICT_COLORS[code], s=14, marker="s", label=VERDICT_WORDS[code]))
    ax.scatter(x, np.full(len(x), -0.1), c=[VERDICT_COLORS[c] for c in sweep.codes], s=12, marker="s",
               transform=ax.get_xaxis_transform(), clip_on=False)
    ax.set_xlabel(label + "   (squares: the verdict at each swept value)", labelpad=16)
    ax.set_ylabel("ratio")
    ax.set_ylim(bottom=0)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.12, 1.0), fontsize=6.5)


def _beaufort_bands(ax, x, wind) -> None:
    forces = np.array([beaufort(w) for w in wind])
    for k in range(len(x) - 1):
        shade = 0.985 - 0.03 * (forces[k] % 2)
        ax.axvspan(x[k], x[k + 1], color=(shade, shade, shade * 0.99), lw=0, zorder=0)
    for f in sorted(set(forces)):
        idx = np.nonzero(forces == f)[0]
        ax.text(x[idx].mean(), 0.02, f"Bft {f}", transform=ax.get_xaxis_transform(), ha="center", fontsize=6.5,
                color=SOFT)


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
    ax.set_title(f"{scene.title}: margins against {sweep.name.replace('_', ' ')}", fontsize=10, loc="left")
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
    ax.set_title(f"{scene.title}: verdict over {name1.replace('_', ' ')} and {name2.replace('_', ' ')}",
                 fontsize=10, loc="left")
    ax.legend(handles=[Patch(color=VERDICT_COLORS[c], label=VERDICT_WORDS[c]) for c in (0, 1, 2)],
              loc="upper left", bbox_to_anchor=(1.01, 1.0))
    _caution(fig)
    fig.tight_layout(rect=(0, 0.05, 1, 1))
    _save(fig, path)
    plt.close(fig)
