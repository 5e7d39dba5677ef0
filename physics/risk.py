"""Monte Carlo over the scene's stated uncertainties.

Every value written with "+/-" in the scene is drawn uniformly between value -
spread and value + spread (a coordinator's "give or take"); turbulence, when
the scene has it, gets its own seed per sample. Samples run in batches on the
engine's batch axis. Failure probabilities carry a 95 % Wilson score interval
(Wilson 1927, J. Am. Stat. Assoc. 22:209-212). Which inputs drive failure is
ranked by Spearman rank correlation with the failure outcome.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.stats import spearmanr

from physics import engine
from physics.scene import Scene
from physics.simulation import base_params, simulate_batch
from physics.sweep import apply, base_value
from physics.verdict import FAILURE_KINDS, verdict_codes

Z95 = 1.959963984540054  # two-sided 95 % standard normal quantile


def wilson_interval(successes: int, trials: int, z: float = Z95) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion."""
    if trials <= 0:
        return (0.0, 1.0)
    p = successes / trials
    denom = 1.0 + z * z / trials
    center = (p + z * z / (2 * trials)) / denom
    half = z * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials)) / denom
    return (max(0.0, center - half), min(1.0, center + half))


@dataclass(frozen=True)
class RiskResult:
    samples: int
    seed: int
    inputs: dict            # name -> sampled values (SI)
    codes: np.ndarray       # verdict code per sample
    failed_kind: dict       # failure kind -> boolean array
    margins: dict           # margin name -> per-sample minimum (or maximum) over the beat
    drivers: list           # (name, rho with failure, rho with grip ratio) sorted by |rho|


def sample_params(scene: Scene, samples: int, seed: int) -> tuple[np.ndarray, dict]:
    rng = np.random.default_rng(seed)
    params = np.tile(base_params(scene), (samples, 1))
    inputs = {}
    for name, spread in sorted(scene.uncertain.items()):
        if spread <= 0:
            continue
        centre = scene.performer.reaction_time if name == "reaction_time" else base_value(scene, name)
        values = rng.uniform(centre - spread, centre + spread, samples)
        values = np.maximum(values, 0.0 if name in ("speed", "wind_speed", "reaction_time") else 1e-3)
        if name == "reaction_time":
            params[:, engine.V_["reaction_time"]] = np.minimum(values, 0.25)
        else:
            apply(scene, params, name, values)
        inputs[name] = values
    if scene.air.turbulence is not None:
        params[:, engine.V_["turbulence_seed"]] = scene.air.turbulence.seed + np.arange(samples) * 7919.0
    return params, inputs


def run_risk(scene: Scene, samples: int, seed: int = 0, batch: int = 2000, progress=None) -> RiskResult:
    if samples < 1:
        raise ValueError("samples must be at least 1")
    params, inputs = sample_params(scene, samples, seed)
    codes = np.empty(samples, dtype=int)
    events = np.empty((samples, len(engine.EVENT_KINDS), engine.EVENT_FIELDS))
    margins = np.empty((samples, len(scene.actions), len(engine.MARGIN_KEYS)))
    for start in range(0, samples, batch):
        chunk = simulate_batch(scene, params[start:start + batch])
        codes[start:start + batch] = verdict_codes(scene, chunk.events, chunk.margins)
        events[start:start + batch] = chunk.events
        margins[start:start + batch] = chunk.margins
        if progress:
            progress(min(samples, start + batch), samples)
    failed_kind = {k: ~np.isnan(events[:, engine.EVENT_KINDS.index(k), 0]) for k in FAILURE_KINDS}
    summary_margins = {
        "grip_ratio_min": margins[:, :, engine.M_GRIP].min(axis=1),
        "balance_margin_min_m": margins[:, :, engine.M_BAL].min(axis=1),
        "lift_ratio_min": margins[:, :, engine.M_LIFT].min(axis=1),
        "landing_margin_min_m": margins[:, :, engine.M_LAND].min(axis=1),
        "clearance_min_m": margins[:, :, engine.M_CLEAR].min(axis=1),
    }
    drivers = _drivers(inputs, codes == 2, summary_margins["grip_ratio_min"])
    return RiskResult(samples, seed, inputs, codes, failed_kind, summary_margins, drivers)


def _drivers(inputs: dict, failed: np.ndarray, grip: np.ndarray) -> list:
    out = []
    # A grip ratio never loaded is +inf: rank it with the best finite one.
    grip = np.where(np.isfinite(grip), grip, np.max(grip[np.isfinite(grip)], initial=0.0))
    for name, values in inputs.items():
        rho_fail = _spearman(values, failed.astype(float))
        rho_grip = _spearman(values, grip)
        out.append((name, rho_fail, rho_grip))
    return sorted(out, key=lambda r: -abs(r[1]) if math.isfinite(r[1]) else 0.0)


def _spearman(a: np.ndarray, b: np.ndarray) -> float:
    if np.ptp(a) == 0 or np.ptp(b) == 0:
        return float("nan")
    return float(spearmanr(a, b).statistic)


def summarise_risk(scene: Scene, result: RiskResult) -> dict:
    n = result.samples
    fails = int(np.sum(result.codes == 2))
    out = {
        "samples": n, "seed": result.seed, "interval": "Wilson score, 95 %",
        "uncertain_inputs": {k: {"low": float(v.min()), "high": float(v.max())} for k, v in result.inputs.items()},
        "verdicts": {name: int(np.sum(result.codes == code)) for code, name in enumerate(("holds", "marginal",
                                                                                           "fails"))},
        "failure_probability": _prob(fails, n),
        "by_kind": {k: _prob(int(v.sum()), n) for k, v in result.failed_kind.items() if v.any()},
        "margins": {},
        "drivers": [{"input": name, "rank_correlation_with_failure": _clean(rf),
                     "rank_correlation_with_grip_ratio": _clean(rg)} for name, rf, rg in result.drivers],
    }
    for name, values in result.margins.items():
        finite = values[np.isfinite(values)]
        if finite.size:
            p5, p50, p95 = np.percentile(finite, [5, 50, 95])
            out["margins"][name] = {"p5": float(p5), "median": float(p50), "p95": float(p95)}
    return out


def _prob(k: int, n: int) -> dict:
    lo, hi = wilson_interval(k, n)
    return {"count": k, "probability": k / n, "ci95_low": lo, "ci95_high": hi}


def _clean(x: float):
    return None if not math.isfinite(x) else float(x)
