"""Monte Carlo over the scene's stated uncertainties.

Every value written with "+/-" in the scene is drawn uniformly between value -
spread and value + spread (a coordinator's "give or take"); turbulence, when
the scene has it, gets its own seed per sample. Samples run in batches on the
engine's batch axis. Failure probabilities carry a 95 % Wilson score interval
(Wilson 1927, J. Am. Stat. Assoc. 22:209-212). Which inputs drive failure is
ranked by Spearman rank correlation with the failure outcome.

With two performers a sample fails when either fails, each margin is the worse
of the two, and each performer's own share of failing runs is kept beside the
beat's (`by_performer`). The loader keeps spreads off a pair's performer
values, so every uncertain input is the beat's (speed, wind, roof friction).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.stats import spearmanr

from physics.records import EVENT_WORDS, FAILURES
from physics.scene import Scene
from physics.scene_load import ROOF_STATIC
from physics.simulation import Variants, simulate_batch, variants
from physics.sweep import apply, base_value, pair_words
from physics.verdict import first_failure_time, verdict_codes

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
    performers: dict = None  # two performers: name -> {"fails": bool per sample, "first": bool per sample,
    #                          "kinds": failure kind -> bool per sample}


# How an uncertain input is shown: its display dimension (physics.units) or None for a plain number.
INPUT_DIMENSIONS = {"speed": "speed", "wind_speed": "wind", "mass": "mass", "drag_area": "area",
                    "reaction_time": "time"}


def input_name(scene: Scene, key: str) -> str:
    """What a person calls an uncertain input."""
    if key.startswith(ROOF_STATIC):
        return f"roof friction, {scene.cars[int(key[len(ROOF_STATIC):])].name}"
    return key.replace("_", " ")


def sample_variants(scene: Scene, samples: int, seed: int) -> tuple[Variants, dict]:
    """`samples` variants with every uncertain value drawn uniformly within its spread.

    The loader refuses a spread that reaches outside the value's own limits, so
    every draw is a value a scene could give.
    """
    rng = np.random.default_rng(seed)
    v = variants(scene, samples)
    inputs = {}
    for key, spread in sorted(scene.uncertain.items()):
        if spread <= 0:
            continue
        if key.startswith(ROOF_STATIC):
            car = int(key[len(ROOF_STATIC):])
            centre = scene.cars[car].sole_static
            values = rng.uniform(centre - spread, centre + spread, samples)
            v.roof_scale[:, car] = values / centre
        elif key == "reaction_time":
            centre = scene.performer.reaction_time
            values = rng.uniform(centre - spread, centre + spread, samples)
            v.params["reaction_time"] = values
        else:
            centre = base_value(scene, key)
            values = rng.uniform(centre - spread, centre + spread, samples)
            apply(scene, v, key, values)
        inputs[input_name(scene, key)] = values
    if scene.air.turbulence is not None:
        v.params["turbulence_seed"] = scene.air.turbulence.seed + np.arange(samples) * 7919
    return v, inputs


# Per-sample minima kept from each batch (the rest of a batch's events and outcomes is let go).
SUMMARY_MARGINS = {"grip_ratio_min": "grip_ratio_min", "balance_margin_min_m": "balance_margin_min",
                   "lift_ratio_min": "lift_ratio_min", "landing_margin_min_m": "landing_margin_min",
                   "clearance_min_m": "clearance_min"}
MAX_WORK = 5e9  # engine steps in one Monte Carlo run: about ten minutes on two cores


def check_work(scene: Scene, samples: int) -> None:
    steps = samples * (round(scene.duration / scene.step) + 1)
    if steps > MAX_WORK:
        raise ValueError(f"{samples:,} samples of this beat are {steps:.2g} engine steps, more than the "
                         f"{MAX_WORK:.0e} one run does (about ten minutes on two cores); take fewer samples")


def run_risk(scene: Scene, samples: int, seed: int = 0, batch: int = 2000, progress=None) -> RiskResult:
    if samples < 1:
        raise ValueError("samples must be at least 1")
    check_work(scene, samples)
    v, inputs = sample_variants(scene, samples, seed)
    codes = np.empty(samples, dtype=int)
    failed_kind = {EVENT_WORDS[k]: np.zeros(samples, dtype=bool) for k in FAILURES}
    margins = {name: np.empty(samples) for name in SUMMARY_MARGINS}
    per = ({part.name: {"fails": np.zeros(samples, dtype=bool), "first": np.zeros(samples, dtype=bool),
                        "kinds": {EVENT_WORDS[k]: np.zeros(samples, dtype=bool) for k in FAILURES}}
            for part in scene.cast} if scene.pair else None)
    for start in range(0, samples, batch):
        stop = min(samples, start + batch)
        chunk = simulate_batch(scene, Variants(v.params[start:stop], v.roof_scale[start:stop]))
        codes[start:stop] = verdict_codes(scene, chunk.events, chunk.outcomes)
        for k in FAILURES:
            failed_kind[EVENT_WORDS[k]][start:stop] = ~np.isnan(chunk.events["time"][:, k])
        for name, field in SUMMARY_MARGINS.items():
            margins[name][start:stop] = chunk.outcomes[field].min(axis=1)
        if per:
            _pair_chunk(scene, chunk, per, start, stop)
        if progress:
            progress(stop, samples)
    drivers = _drivers(inputs, codes == 2, margins["grip_ratio_min"])
    return RiskResult(samples, seed, inputs, codes, failed_kind, margins, drivers, per)


def _pair_chunk(scene: Scene, chunk, per: dict, start: int, stop: int) -> None:
    """Each performer's own failures in one batch of a pair: whether it failed, whether its failure was
    the beat's first, and by kind."""
    times = np.stack([first_failure_time(e) for e in chunk.pair.events])
    first = np.argmin(times, axis=0)
    for who, (part, events) in enumerate(zip(scene.cast, chunk.pair.events)):
        row = per[part.name]
        row["fails"][start:stop] = np.isfinite(times[who])
        row["first"][start:stop] = np.isfinite(times[who]) & (first == who)
        for k in FAILURES:
            row["kinds"][EVENT_WORDS[k]][start:stop] = ~np.isnan(events["time"][:, k])


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
        "uncertain_inputs": {k: {"low": float(v.min()), "high": float(v.max()), "dimension": _dimension(k)}
                             for k, v in result.inputs.items()},
        "verdicts": {name: int(np.sum(result.codes == code)) for code, name in enumerate(("holds", "marginal",
                                                                                           "fails"))},
        "failure_probability": _prob(fails, n),
        "by_kind": {k: _prob(int(v.sum()), n) for k, v in result.failed_kind.items() if v.any()},
        "margins": {},
        "drivers": [{"input": name, "rank_correlation_with_failure": _clean(rf),
                     "rank_correlation_with_grip_ratio": _clean(rg)} for name, rf, rg in result.drivers],
    }
    if result.performers:
        out["margins_are"] = pair_words(scene)
        out["by_performer"] = {name: {"failure_probability": _prob(int(row["fails"].sum()), n),
                                      "fails_first": _prob(int(row["first"].sum()), n),
                                      "by_kind": {k: _prob(int(v.sum()), n) for k, v in row["kinds"].items()
                                                  if v.any()}}
                               for name, row in result.performers.items()}
    for name, values in result.margins.items():
        finite = values[np.isfinite(values)]
        if finite.size:
            p5, p50, p95 = np.percentile(finite, [5, 50, 95])
            out["margins"][name] = {"p5": float(p5), "median": float(p50), "p95": float(p95)}
    return out


def _dimension(name: str) -> str | None:
    return INPUT_DIMENSIONS.get(name.replace(" ", "_"))


def _prob(k: int, n: int) -> dict:
    lo, hi = wilson_interval(k, n)
    return {"count": k, "probability": k / n, "ci95_low": lo, "ci95_high": hi}


def _clean(x: float):
    return None if not math.isfinite(x) else float(x)
