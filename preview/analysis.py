"""`roofbeat envelope` and `roofbeat risk`: tables, JSON and plots of the sweeps."""

from __future__ import annotations

import json
import math
import re
import sys
from pathlib import Path

from physics.units import QuantityError, parse_quantity, to_display
from physics.verdict import FACTORS as FACTORS_WORDS
from preview.caution import CAUTION
from preview.report import _fmt

DISPLAY_DIMENSION = {"speed": "speed", "wind_speed": "wind", "mass": "mass", "drag_area": "area", "gust": "wind",
                     "effort": "length"}


def parse_vary(text: str) -> tuple[str, float, float]:
    """'speed=20..140 km/h' -> ('speed', 5.56, 38.9) in SI."""
    from physics.sweep import PARAMETERS
    match = re.fullmatch(r"\s*([a-z_]+)\s*=\s*(.+?)\s*\.\.\s*(.+?)\s*", text)
    if not match:
        raise ValueError(f"--vary {text!r}: expected PARAM=FROM..TO, e.g. speed=20..140 km/h")
    name, lo_text, hi_text = match.groups()
    if name not in PARAMETERS:
        raise ValueError(f"--vary {text!r}: unknown parameter {name!r}; expected one of {', '.join(PARAMETERS)}")
    dimension = PARAMETERS[name][0]
    unit = re.sub(r"^[+-]?[\d.eE+-]+\s*", "", hi_text)
    if dimension != "dimensionless" and re.fullmatch(r"[+-]?[\d.]+(?:[eE][+-]?\d+)?", lo_text):
        lo_text = f"{lo_text} {unit}"
    try:
        if dimension == "dimensionless":
            lo, hi = float(lo_text), float(hi_text)
        else:
            lo, hi = parse_quantity(lo_text, dimension), parse_quantity(hi_text, dimension)
    except (QuantityError, ValueError) as exc:
        raise ValueError(f"--vary {text!r}: {exc}") from None
    if not hi > lo:
        raise ValueError(f"--vary {text!r}: FROM must be below TO")
    return name, lo, hi


def display(name: str, value: float, system: str) -> str:
    if name == "wind_from":
        return f"{math.degrees(value):.1f}°"
    if name == "friction":
        return f"{value:.3f}"
    v, unit = to_display(value, DISPLAY_DIMENSION[name], system)
    return f"{v:.2f} {unit}"


def envelope_summary(scene, sweep) -> dict:
    """The sweep's rows, thresholds and limits (JSON-ready, SI). With two performers every verdict and
    margin is the worse of the two (`margins_are`), each row keeps each one's own verdict
    (`performers`) and a first failure names its performer."""
    from physics.sweep import first_failures, limits, pair_words, performer_verdicts
    from physics.verdict import NAMES
    kinds = first_failures(scene, sweep.result)
    each = performer_verdicts(scene, sweep.result)
    m = sweep.result.outcomes
    rows = []
    for i, value in enumerate(sweep.values):
        rows.append({"value": float(value), "verdict": NAMES[sweep.codes[i]], "first_failure": kinds[i],
                     "grip_ratio_min": _f(m[i]["grip_ratio_min"].min()),
                     "balance_margin_min_m": _f(m[i]["balance_margin_min"].min()),
                     "lift_ratio_min": _f(m[i]["lift_ratio_min"].min()),
                     "apparent_wind_max_ms": float(m[i]["apparent_wind_max"].max())})
        if each:
            rows[-1]["performers"] = {name: NAMES[codes[i]] for name, codes in each.items()}
    pair = {"performers": [part.name for part in scene.cast], "margins_are": pair_words(scene)} if scene.pair else {}
    return {
        "scene": scene.title, "parameter": sweep.name, "units": "SI", **pair, "rows": rows,
        "range": [float(sweep.values[0]), float(sweep.values[-1])], "planned": _planned(scene, sweep.name),
        "thresholds": [{"kind": t.kind, "value": t.value, "tolerance": t.tolerance, "below": t.below,
                        "above": t.above, "failure_beyond": t.failure_beyond} for t in sweep.thresholds],
        "limits": [{"level": lim.level, "value": lim.value, "bound": lim.bound, "all_below": lim.all_below,
                    "failure_beyond": lim.failure_beyond} for lim in limits(sweep)],
        "caution": CAUTION,
    }


def _planned(scene, name: str) -> float | None:
    from physics.sweep import SweepError, base_value
    try:
        return float(base_value(scene, name))
    except SweepError:
        return None


def limit_words(name: str, limit: dict, span: list[float], system: str, others: list | None = None) -> str:
    """One limit in plain words, saying plainly when it is only a bound, and that "does not fail"
    is not a value to plan on. `others`: every limit of the sweep (for the words of the second)."""
    level = limit["level"]
    planning = level == "holds with the required factors"
    if limit["value"] is None:
        where = f"from {display(name, span[0], system)} to {display(name, span[1], system)}"
        return (f"no value {where} holds with the required factors" if planning
                else f"every value {where} fails")
    value = display(name, limit["value"], system)
    head = "holds with the required factors" if planning else "does not fail"
    if limit["bound"]:
        words = f"{head} up to at least {value} (the end of the sweep: the limit lies beyond it)"
    else:
        words = f"{head} up to {value}"
        if limit["failure_beyond"]:
            words += f"; beyond it the first failure is a {limit['failure_beyond']}"
    if not limit["all_below"]:
        words += " (not at every value below it: see the table)"
    if not planning:
        factored = next((o for o in others or [] if o["level"] == "holds with the required factors"), None)
        if factored is not None and factored["value"] is None:
            words += "; it never meets the required factors: not a value to plan on"
        elif factored is not None and factored["value"] < limit["value"] * (1 - 1e-9):
            first = display(name, factored["value"], system)
            words += f"; above {first} it holds only below the required factors (marginal): plan to {first}"
    return words


def _f(x):
    return float(x) if math.isfinite(x) else None


def envelope_text(scene, summary: dict) -> str:
    from physics.units import to_display
    name, system = summary["parameter"], scene.units
    planned = summary["planned"]
    lines = [f"roofbeat envelope: {scene.title}",
             f"varying {name}" + (f" (planned: {display(name, planned, system)})" if planned is not None else "")]
    names = summary.get("performers")
    if names:
        lines.append(f"two performers: every verdict and margin is the {summary['margins_are']}; each one's own "
                     "verdict in the last columns")
    lines += ["", f"{'value':>14}  {'verdict':<9}{'grip':>7}{'balance':>12}{'lift':>7}  "
              + ("".join(f"{n[:11]:<12}" for n in names or []) + "first failure")]
    for row in summary["rows"]:
        bal = row["balance_margin_min_m"]
        bal_text = "n/a" if bal is None else "{:.2f} {}".format(*to_display(bal, "length", system))
        each = "".join(f"{row['performers'][n]:<12}" for n in names or [])
        lines.append(f"{display(name, row['value'], system):>14}  {row['verdict']:<9}"
                     f"{_fmt(row['grip_ratio_min'], '.2f'):>7}{bal_text:>12}{_fmt(row['lift_ratio_min'], '.2f'):>7}  "
                     f"{each}{row['first_failure'] or ''}")
        if names:
            lines[-1] = lines[-1].rstrip()
    lines.append("")
    for t in summary["thresholds"]:
        tol = display(name, t["tolerance"], system)
        lines.append(f"threshold ({t['kind']}): {display(name, t['value'], system)} (+/- {tol})"
                     f": {t['below']} below, {t['above']} above; first failure beyond: {t['failure_beyond'] or '-'}")
    for limit in summary["limits"]:
        lines.append(limit_words(name, limit, summary["range"], system, summary["limits"]))
    bound = uniform_air_limit(summary, name, system)
    if bound:
        lines.append(bound)
    lines += ["", "CAUTION: " + CAUTION]
    return "\n".join(lines)


def cmd_envelope(args) -> int:
    from physics.sweep import SweepError, sweep_1d
    from preview.outputs import check_target
    from preview.session import UsageError, load
    scene = load(args)
    varies = args.vary
    if len(varies) not in (1, 2):
        raise UsageError("give --vary once (envelope) or twice (two-parameter map)")
    if args.plot:
        check_target(args.plot, folder=False)
    try:
        if len(varies) == 2:
            return _map(scene, varies, args)
        sweep = sweep_1d(scene, *varies[0], points=args.points)
    except SweepError as exc:
        raise UsageError(f"--vary {exc}") from None
    summary = envelope_summary(scene, sweep)
    if scene.air.roof_flow is not None:
        # The air over the roof's coefficients are soft: the limit with the free stream at every height beside it.
        from physics.roof_air import without_roof_air
        from physics.sweep import limits
        bound = limits(sweep_1d(without_roof_air(scene), *varies[0], points=args.points))[0]
        summary["uniform_air"] = {summary["parameter"]: bound.value}
    print(json.dumps(summary, indent=2) if args.json else envelope_text(scene, summary))
    if args.plot:
        from preview.plots import envelope_plot
        envelope_plot(scene, sweep, summary, Path(args.plot))
        print(f"wrote {args.plot}", file=sys.stderr)
    return 0


def _map(scene, varies, args) -> int:
    from physics.sweep import sweep_2d
    from physics.verdict import NAMES
    from physics.sweep import SweepError
    from preview.session import UsageError
    try:
        v1, v2, codes, result = sweep_2d(scene, varies[0], varies[1], points=min(args.points, 41))
    except SweepError as exc:
        raise UsageError(f"--vary {exc}") from None
    summary = {"scene": scene.title, "parameters": [varies[0][0], varies[1][0]], "units": "SI",
               "values_1": v1.tolist(), "values_2": v2.tolist(),
               "verdicts": [[NAMES[c] for c in row] for row in codes], "caution": CAUTION}
    if scene.pair:
        from physics.sweep import pair_words
        summary["margins_are"] = pair_words(scene)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        name1, name2 = summary["parameters"]
        print(f"roofbeat envelope map: {scene.title}\nrows: {name2}; columns: {name1}; H holds, m marginal, X fails"
              + (f"\ntwo performers: each verdict is the {summary['margins_are']}" if scene.pair else ""))
        for j in range(len(v2) - 1, -1, -1):
            print(f"{display(name2, v2[j], scene.units):>14} " + "".join("Hm X"[c if c < 2 else 3] for c in codes[j]))
        print(f"{'':>14} {display(name1, v1[0], scene.units)} .. {display(name1, v1[-1], scene.units)}")
        print("\nCAUTION: " + CAUTION)
    if args.plot:
        from preview.plots import map_plot
        map_plot(scene, summary, codes, Path(args.plot))
        print(f"wrote {args.plot}", file=sys.stderr)
    return 0


MARGIN_WORDS = {"grip_ratio_min": ("grip ratio, lowest", None), "balance_margin_min_m": ("balance margin, lowest",
                                                                                        "length"),
                "lift_ratio_min": ("lift ratio, lowest", None), "landing_margin_min_m": ("landing margin, lowest",
                                                                                       "length"),
                "clearance_min_m": ("overhead clearance, lowest", "length")}


def _value(value: float, dimension: str | None, system: str) -> str:
    if dimension is None:
        return f"{value:.3f}"
    from physics.units import display as shown
    return shown(value, dimension, system, ".3g" if dimension == "time" else ".2f")


def _share(q: dict) -> str:
    return f"{100 * q['probability']:5.1f} %  (95 % interval {100 * q['ci95_low']:.1f}-{100 * q['ci95_high']:.1f} %)"


def risk_text(scene, summary: dict) -> str:
    system = scene.units
    lines = [f"roofbeat risk: {scene.title}",
             f"{summary['samples']:,} samples, seed {summary['seed']}; intervals: {summary['interval']}", ""]
    if not summary["uncertain_inputs"]:
        lines.append("the scene states no uncertainties (+/-): every sample is the same beat")
    else:
        lines += ["uncertain inputs, each drawn uniformly within its spread:",
                  f"  {'input':<30}{'from':>14}{'to':>14}"]
        for name, rng in summary["uncertain_inputs"].items():
            lines.append(f"  {name:<30}{_value(rng['low'], rng['dimension'], system):>14}"
                         f"{_value(rng['high'], rng['dimension'], system):>14}")
    lines += ["", f"  {'verdict':<12}{'samples':>9}   share"]
    for name, count in summary["verdicts"].items():
        lines.append(f"  {name:<12}{count:>9,}   {100 * count / summary['samples']:5.1f} %")
    lines += ["", f"the beat fails in {_share(summary['failure_probability'])}"
              + (" (a run fails when either performer fails)" if summary.get("by_performer") else "")]
    for kind, q in summary["by_kind"].items():
        lines.append(f"  with a {kind}: {_share(q)}")
    for who, row in summary.get("by_performer", {}).items():
        lines.append(f"  {who} fails in {_share(row['failure_probability'])}; {who}'s failure comes first in "
                     f"{_share(row['fails_first'])}")
        for kind, q in row["by_kind"].items():
            lines.append(f"    {who}, with a {kind}: {_share(q)}")
    if summary["margins"]:
        lines += [""] + ([f"  margins: the {summary['margins_are']} in each sample"] if summary.get("margins_are")
                         else []) + [f"  {'margin over the samples':<30}{'5 %':>12}{'median':>12}{'95 %':>12}"]
        for key, m in summary["margins"].items():
            words, dimension = MARGIN_WORDS[key]
            lines.append(f"  {words:<30}" + "".join(f"{_value(m[p], dimension, system):>12}"
                                                  for p in ("p5", "median", "p95")))
    if summary["drivers"]:
        lines += ["", "inputs that drive failure most (Spearman rank correlation with failing, -1 to +1):"]
        for d in summary["drivers"]:
            rho = d["rank_correlation_with_failure"]
            lines.append(f"  {d['input']:<30}{'n/a (never failed or always failed)' if rho is None else f'{rho:+.2f}'}")
    lines += ["", "CAUTION: " + CAUTION]
    return "\n".join(lines)


def cmd_risk(args) -> int:
    from physics.risk import run_risk, summarise_risk
    from physics.risk import check_work
    from preview.export import Progress
    from preview.session import UsageError, load
    scene = load(args)
    try:
        check_work(scene, args.samples)
    except ValueError as exc:
        raise UsageError(f"--samples {args.samples}: {exc}") from None
    bar = Progress(args.samples, "sampling")
    try:
        result = run_risk(scene, args.samples, args.seed, progress=lambda done, total: bar.update(done))
    except ValueError as exc:
        raise UsageError(f"risk: {exc}") from None
    finally:
        bar.close()
    summary = summarise_risk(scene, result)
    summary["scene"] = scene.title
    summary["caution"] = CAUTION
    print(json.dumps(summary, indent=2) if args.json else risk_text(scene, summary))
    return 0


def ladder_text(scene, ladder: dict) -> str:
    """The rehearsal ladder as a table, the first rung short of the factors, and the abort limits."""
    from physics.units import display as show
    from preview.report import factor_value
    system = scene.units
    words = [w for _, _, w, _ in FACTORS_WORDS]
    names = ladder.get("performers") or []
    lines = [f"roofbeat ladder: {scene.title}", "rehearsal rungs from walking pace to the planned top speed "
             "(the whole speed profile scaled); margins are the worst over the beat"
             + (f", the {ladder['margins_are']}; each one's own verdict after the margins" if names else ""), "",
             f"{'rung':<5}{'speed':>12}  {'verdict':<9}" + "".join(f"{w[:14]:>16}" for w in words)
             + "".join(f"  {n[:11]:<11}" for n in names).rstrip()]
    for row in ladder["rungs"]:
        cells = []
        for w, unit in zip(words, (u for _, _, _, u in FACTORS_WORDS)):
            value = row["margins"][w]
            cells.append("-" if value is None else factor_value(value, unit, system))
        bound = row.get("uniform_air_verdict")
        lines.append((f"{row['rung']:<5}{show(row['speed_ms'], 'speed', system, '.1f'):>12}  {row['verdict']:<9}"
                      + "".join(f"{c:>16}" for c in cells)
                      + "".join(f"  {row['performers'][n]:<11}" for n in names)
                      + (f"  {row['first_failure']}" if row["first_failure"] else "")
                      + (f"  free stream: {bound}" if bound else "")).rstrip())
    lines.append("required: " + ", ".join(f"{w} {factor_value(getattr(scene.safety, f), u, system, False)}"
                                          for _, f, w, u in FACTORS_WORDS))
    short = ladder["first_rung_short"]
    if short is None:
        lines.append("every rung holds with the required factors")
    else:
        row = ladder["rungs"][short - 1]
        why = row["first_failure"] or "; ".join(
            f"{s['margin']} {factor_value(s['value'], s['unit'], system)}" for s in row["below_required"])
        lines.append(f"first rung short of the factors: rung {short} at "
                     f"{show(row['speed_ms'], 'speed', system, '.1f')} ({row['verdict']}: {why})")
    lines += ["", "ABORT LIMITS (watch on set; found by the envelope's sweeps over the ranges given)"
              + (f": the {ladder['margins_are']}" if names else "")]
    for name, head in (("speed", "top speed"), ("wind_speed", "ambient wind at the scene's direction "
                                                              f"({ladder['abort_limits']['wind_from_deg']:.0f}°)")):
        lim = ladder["abort_limits"][name]
        span = f"{display(name, lim['range'][0], system)}..{display(name, lim['range'][1], system)}"
        lines.append(f"  {head.upper()} (swept {span}, {lim['points']} points):")
        for limit in lim["limits"]:
            lines.append("    " + limit_words(name, limit, lim["range"], system, lim["limits"]))
        bound = uniform_air_limit(ladder["abort_limits"], name, system)
        if bound:
            lines.append("    " + bound)
    if ladder.get("scaling_note"):
        lines.append("  NOTE: " + ladder["scaling_note"])
    machine = ladder["wind_machine"]
    lines += ["", f"wind machine for a rehearsal on a stationary vehicle: "
                  f"{show(machine['air_speed_ms'], 'wind', system, '.1f')} from {machine['from_deg']:.0f}° "
                  f"(0 = from ahead, + from the left) gives the planned speed's apparent wind; "
                  f"{machine['note']}", "", "CAUTION: " + CAUTION]
    return "\n".join(lines)


def uniform_air_limit(limits: dict, name: str, system: str) -> str | None:
    """With the air over the roof on: the limit with the free stream at every height (the bound)."""
    bound = limits.get("uniform_air")
    if bound is None:
        return None
    value = bound[name]
    held = "none holds" if value is None else f"holds up to {display(name, value, system)}"
    return (f"with the air over the roof off (the free stream at every height, the bound): {held} with the required "
            "factors; abort at this figure unless the air over the roof's coefficients are checked")


def cmd_ladder(args) -> int:
    from physics.ladder import build_ladder
    from physics.sweep import SweepError
    from preview.session import UsageError, load
    scene = load(args)
    try:
        ladder = build_ladder(scene, args.rungs)
    except SweepError as exc:
        raise UsageError(f"ladder: {exc}") from None
    ladder["caution"] = CAUTION
    print(json.dumps(ladder, indent=2) if args.json else ladder_text(scene, ladder))
    return 0
