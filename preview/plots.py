"""Plots for the envelope and the brief (matplotlib, Agg; imported only here)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from physics.wind_scales import beaufort
from preview.caution import CAUTION_SHORT

VERDICT_COLORS = {0: "#3e825c", 1: "#c8962a", 2: "#d1495b"}


def _mpl():
    import matplotlib
    matplotlib.use("Agg")
    matplotlib.rcParams["pdf.fonttype"] = 42
    import matplotlib.pyplot as plt
    return plt


def _x_display(scene, name, values):
    from preview.analysis import DISPLAY_DIMENSION
    from physics.units import to_display
    if name == "wind_from":
        return np.degrees(values), "wind from (deg, 0 = ahead)"
    if name == "friction":
        return values, "roof static friction"
    unit = to_display(1.0, DISPLAY_DIMENSION[name], scene.units)[1]
    return np.array([to_display(v, DISPLAY_DIMENSION[name], scene.units)[0] for v in values]), f"{name} ({unit})"


def draw_envelope(ax, scene, sweep, summary) -> None:
    """Margins against the varied value, Beaufort bands of the apparent wind behind."""
    x, label = _x_display(scene, sweep.name, sweep.values)
    m = sweep.result.outcomes
    wind = m["apparent_wind_max"].max(axis=1)
    forces = np.array([beaufort(w) for w in wind])
    for k in range(len(x) - 1):
        shade = 0.97 - 0.035 * (forces[k] % 2)
        ax.axvspan(x[k], x[k + 1], color=(shade, shade, shade), lw=0, zorder=0)
    for f in sorted(set(forces)):
        idx = np.nonzero(forces == f)[0]
        ax.text(x[idx].mean(), 0.02, f"Bft {f}", transform=ax.get_xaxis_transform(), ha="center", fontsize=7,
                color="#555")
    grip = m["grip_ratio_min"].min(axis=1)
    bal = m["balance_margin_min"].min(axis=1)
    lift = m["lift_ratio_min"].min(axis=1)
    ax.plot(x, np.where(np.isfinite(grip), np.minimum(grip, 5), np.nan), color="#1f7a8c", label="grip ratio (min)")
    ax.plot(x, lift, color="#6a4c93", label="lift ratio N/W (min)")
    ax.axhline(scene.safety.grip_ratio, color="#1f7a8c", ls=":", lw=1)
    ax.axhline(1.0, color="#444", ls="--", lw=0.8)
    ax2 = ax.twinx()
    ax2.plot(x, np.where(np.isfinite(bal), bal, np.nan), color="#c77d00", label="balance margin (m, min)")
    ax2.axhline(scene.safety.balance_margin, color="#c77d00", ls=":", lw=1)
    ax2.set_ylabel("balance margin (m)", color="#c77d00", fontsize=8)
    for t in summary["thresholds"]:
        tx, _ = _x_display(scene, sweep.name, np.array([t["value"]]))
        ax.axvline(tx[0], color=VERDICT_COLORS[2 if t["kind"] == "holds at all" else 1], lw=1.5)
    ax.scatter(x, np.full(len(x), -0.15), c=[VERDICT_COLORS[c] for c in sweep.codes], s=10, marker="s",
               transform=ax.get_xaxis_transform(), clip_on=False)
    ax.set_xlabel(label, fontsize=8)
    ax.set_ylabel("ratio", fontsize=8)
    ax.set_ylim(bottom=0)
    ax.legend(loc="upper right", fontsize=7)
    ax.tick_params(labelsize=7)
    ax2.tick_params(labelsize=7)


def _save(fig, path: Path) -> None:
    from preview.outputs import OutputSet
    with OutputSet() as outs:
        tmp = outs.file(path)
        fig.savefig(tmp, dpi=150, format=path.suffix.lstrip(".").lower())


def envelope_plot(scene, sweep, summary, path: Path) -> None:
    plt = _mpl()
    fig, ax = plt.subplots(figsize=(8, 4.5))
    draw_envelope(ax, scene, sweep, summary)
    ax.set_title(f"{scene.title}: envelope over {sweep.name}", fontsize=10)
    fig.text(0.01, 0.01, "\n".join(__import__("textwrap").wrap(CAUTION_SHORT, 150)), fontsize=5.5, color="#444")
    fig.tight_layout(rect=(0, 0.04, 1, 1))
    _save(fig, path)
    plt.close(fig)


def map_plot(scene, summary, codes, path: Path) -> None:
    plt = _mpl()
    from matplotlib.colors import ListedColormap
    name1, name2 = summary["parameters"]
    x, xl = _x_display(scene, name1, np.array(summary["values_1"]))
    y, yl = _x_display(scene, name2, np.array(summary["values_2"]))
    fig, ax = plt.subplots(figsize=(7, 5))
    cmap = ListedColormap([VERDICT_COLORS[0], VERDICT_COLORS[1], VERDICT_COLORS[2]])
    ax.pcolormesh(x, y, codes, cmap=cmap, vmin=-0.5, vmax=2.5, shading="nearest")
    ax.contour(x, y, codes, levels=[0.5, 1.5], colors="k", linewidths=1)
    ax.set_xlabel(xl)
    ax.set_ylabel(yl)
    ax.set_title(f"{scene.title}\nholds (green) / marginal (amber) / fails (red)", fontsize=9)
    fig.text(0.01, 0.01, CAUTION_SHORT, fontsize=5, color="#444")
    fig.tight_layout(rect=(0, 0.04, 1, 1))
    _save(fig, path)
    plt.close(fig)
