"""The text table and JSON of `roofbeat check`."""

from __future__ import annotations

import json
import math

from physics.units import display, to_display
from physics.wind_scales import BEAUFORT_NAMES, beaufort, pedestrian_threshold, saffir_simpson
from preview.caution import CAUTION
from preview.timecode import timecode


def floor_to(value: float, places: int = 2) -> float:
    """A margin rounded down, never up: a ratio of 0.998 shows as 0.99, not as 1.00."""
    scale = 10 ** places
    return math.floor(value * scale + 1e-9) / scale


def _fmt(value, spec: str, unit: str = "") -> str:
    if value is None:
        return "n/a"
    places = int(spec[-2]) if spec.endswith("f") and spec[-2].isdigit() else None
    value = floor_to(value, places) if places is not None else value
    return f"{value:{spec}}{(' ' + unit) if unit else ''}"


def wind_words(speed: float, system: str) -> str:
    """'14.5 m/s, Beaufort 7 (near gale), Lawson: ...' for a wind speed in m/s."""
    value, unit = to_display(speed, "wind", system)
    force = beaufort(speed)
    words = f"{value:.1f} {unit}, Beaufort {force} ({BEAUFORT_NAMES[force]})"
    category = saffir_simpson(speed)
    if category:
        words += f", Saffir-Simpson category {category} strength"
    threshold = pedestrian_threshold(speed)
    if threshold:
        limit, meaning, sources = threshold
        words += f"; pedestrian threshold crossed: {display(limit, 'wind', system, '.0f')}, {meaning} ({sources})"
    return words


def text_report(scene, summary: dict) -> str:
    system = scene.units
    lines = [f"roofbeat check: {scene.title}", f"scene file: {scene.source}", ""]
    pair = summary.get("performers")
    if pair:
        lines.append(f"two performers, {pair[0]['name']} and {pair[1]['name']}: the beat's verdict is the worse of "
                     "the two, its first failure the earlier")
        for part in pair:
            lines += ["", f"{part['name'].upper()}: {part['verdict'].upper()}"]
            lines += action_lines(part["actions"], system)
            first = part["first_failure"]
            lines.append(f"{part['name']}'s first failure: " + (failure_words(first, scene, system) if first
                                                                 else "none"))
            for phase in part.get("aftermath", []):
                lines.append(f"  then, {phase['from_s']:.2f}-{phase['to_s']:.2f} s: {phase_words(phase, system)}")
        lines += [""] + interaction_lines(summary.get("interactions", []), system)
    else:
        lines += action_lines(summary["actions"], system)
    lines.append("")
    lines.append("required: " + required_words(summary["required_factors"], system))
    lines.append("grip = roof friction available / needed (min); balance = margin of stability, the smaller of "
                 "along and across the track (min); lift = normal force / weight (min); lean = lean needed to "
                 "balance the load (max); side edge = support to the nearer side edge (min)")
    lines.append(apparent_wind_line(summary, system))
    storm = storm_words(summary)
    if storm:
        lines.append(storm)
    lines.append("")
    for duck in summary.get("ducks", []):
        if duck.get("not_searched"):
            lines.append(f"duck '{duck['name']}' ({duck['performer']}'s action {duck['action']}): not searched: "
                         f"{duck['not_searched']}")
        elif duck["latest_start_s"] is None:
            lines.append(f"duck '{duck['name']}' ({duck_whose(duck)}action {duck['action']}): no start time clears "
                         "the structure")
        else:
            spare = duck.get("spare_s")
            words = f", {spare:+.2f} s from the planned start" if spare is not None else ""
            latest = duck["latest_start_s"]
            lines.append(f"duck '{duck['name']}' ({duck_whose(duck)}action {duck['action']}): latest start that "
                         "still clears "
                         f"{timecode(latest, scene.frame_rate)} ({latest:.2f} s){words}")
    lines.append(f"verdict: {summary['verdict'].upper()}"
                 + (f" (the worse of {pair_verdicts(pair)})" if pair else ""))
    bound = uniform_air_words(summary)
    if bound:
        lines.append(bound)
    first = summary["first_failure"]
    if first:
        who = f"{first['performer']}, " if pair else ""
        lines.append(f"first failure: {who}{failure_words(first, scene, system)}")
        if pair and summary.get("aftermath"):
            lines.append(f"  then: what became of {first['performer']} is under {first['performer'].upper()} above")
    for phase in ([] if pair else summary.get("aftermath", [])):
        lines.append(f"  then, {phase['from_s']:.2f}-{phase['to_s']:.2f} s: {phase_words(phase, system)}")
    others = [e for e in summary["events"] if e is not first]
    for e in others:
        who = f"{e['performer']}: " if pair else ""
        lines.append(f"  also: {who}{e['kind']} at {e['time_s']:.2f} s: {e['detail']}")
    if summary.get("rigging"):
        lines += [""] + rigging_lines(summary["rigging"], system)
    lines += ["", "CAUTION: " + CAUTION]
    return "\n".join(lines)


def action_lines(actions: list[dict], system: str) -> list[str]:
    """The table of actions with their verdicts and margins, and why each is marginal."""
    header = (f"{'action':<16}{'time (s)':>12}  {'verdict':<9}{'grip':>6}{'balance':>10}{'lift':>6}"
              f"{'lean':>7}{'wind':>13}{'Bft':>4}{'drag':>9}")
    lines = [header, "-" * len(header)]
    for row in actions:
        if not row["assessed"]:
            lines.append(f"{_name(row['name']):<16}{row['start_s']:5.1f}-{row['end_s']:<6.1f} {'fails':<9}"
                         "not reached: the beat failed before this action")
            continue
        wind, wind_unit = to_display(row["apparent_wind_max_ms"], "wind", system)
        drag, drag_unit = to_display(row["drag_max_n"], "force", system)
        bal = row["balance_margin_min_m"]
        bal_value, bal_unit = to_display(bal, "length", system) if bal is not None else (None, "")
        bal_text = "n/a" if bal is None else f"{floor_to(bal_value):.2f} {bal_unit}"
        lines.append(
            f"{_name(row['name']):<16}{row['start_s']:5.1f}-{row['end_s']:<6.1f} {row['verdict']:<9}"
            f"{_fmt(row['grip_ratio_min'], '.2f'):>6}{bal_text:>10}{_fmt(row['lift_ratio_min'], '.2f'):>6}"
            f"{row['lean_max_deg']:6.1f}°{wind:8.1f} {wind_unit:<4}{row['beaufort_max']:>4}{drag:7.0f} {drag_unit}")
        extra = []
        if row["landing_margin_min_m"] is not None:
            extra.append(f"landing margin {_length(row['landing_margin_min_m'], system)}")
        if row["clearance_min_m"] is not None:
            extra.append(f"overhead clearance {_length(row['clearance_min_m'], system)}")
        if row.get("edge_margin_min_m") is not None:
            extra.append(f"side edge {_length(row['edge_margin_min_m'], system)}")
        if row.get("frontal_balance_margin_min_m") is not None:
            extra.append(f"balance across the track {_length(row['frontal_balance_margin_min_m'], system)}")
        if extra:
            lines.append(" " * 16 + "; ".join(extra))
        if row["marginal_because"]:
            lines.append(" " * 16 + "marginal because " + marginal_words(row["marginal_because"], system))
        elif row["verdict"] == "fails" and row.get("below_required"):
            lines.append(" " * 16 + "before the failure, already below the required: "
                         + marginal_words(row["below_required"], system))
        if row.get("recovery_steps"):
            n = row["recovery_steps"]
            lines.append(" " * 16 + f"{n} recovery step{'s' if n > 1 else ''}: the performer had to step to stay up")
    return lines


def _length(value: float, system: str) -> str:
    """A margin with its unit: '0.89 m', '2.92 ft'."""
    shown, unit = to_display(value, "length", system)
    return f"{_fmt(shown, '.2f')} {unit}"


def _name(name: str) -> str:
    """An action's name in the table's 15 characters, cut with an ellipsis that shows it was cut."""
    return name if len(name) <= 15 else name[:14] + "…"


def failure_words(first: dict, scene, system: str) -> str:
    """'slip at 00:00:02:02 (2.07 s) on box car, car frame x = ..., ground frame x = ...: detail'."""
    x_car, unit = to_display(first["x_car_m"], "length", system)
    x_ground, _ = to_display(first["x_ground_m"], "length", system)
    where = f"on {first['car_name']}" if first["car_name"] else "off the roof"
    return (f"{first['kind']} at {timecode(first['time_s'], scene.frame_rate)} ({first['time_s']:.2f} s) {where}, "
            f"car frame x = {x_car:.2f} {unit}, ground frame x = {x_ground:.1f} {unit}: {first['detail']}")


def impulse_words(value: float, system: str) -> str:
    """An impulse in the scene's force unit times seconds: '35.6 N s', '8.0 lbf s'."""
    return f"{display(value, 'force', system, '.1f')} s"


def interaction_rows(interactions: list[dict], system: str) -> list[dict]:
    """Per interaction, the words of its row: who did what to whom, when, whether the hands reached,
    the peak force and the impulse between them, and what became of a hold."""
    rows = []
    for it in interactions:
        if it["pulled_short"]:
            reached = "pulled short"
        elif it["reached"]:
            reached = f"yes, at {it['contact_s']:.2f} s"
        else:
            reached = "no: out of reach"
        if it["breaking_force_n"] is None:
            hold = "-"
        elif it["let_go_s"] is not None:
            hold = (f"LET GO at {it['let_go_s']:.2f} s (breaking force "
                    f"{display(it['breaking_force_n'], 'force', system, '.0f')})")
        elif it["reached"]:
            hold = f"unbroken (breaks at {display(it['breaking_force_n'], 'force', system, '.0f')})"
        else:
            hold = "never took hold"
        rows.append({"who": it["actor"], "did": it["kind"], "to": it["partner"],
                     "time": f"{it['start_s']:.1f}-{it['end_s']:.1f}", "reached": reached,
                     "peak": display(it["peak_force_n"], "force", system, ".0f"),
                     "impulse": impulse_words(it["impulse_ns"], system), "hold": hold})
    return rows


def interaction_lines(interactions: list[dict], system: str) -> list[str]:
    """The interactions table of `roofbeat check` for two performers."""
    lines = ["interactions (who did what to whom):"]
    if not interactions:
        return lines + ["  none: the two performers do not act on each other in this scene"]
    head = (f"  {'who':<12}{'did':<7}{'to whom':<12}{'time (s)':<10}{'reached':<16}{'peak force':>11}"
            f"{'impulse':>12}  hold")
    lines += [head, "  " + "-" * (len(head) - 2)]
    for r in interaction_rows(interactions, system):
        lines.append(f"  {r['who'][:11]:<12}{r['did']:<7}{r['to'][:11]:<12}{r['time']:<10}{r['reached']:<16}"
                     f"{r['peak']:>11}{r['impulse']:>12}  {r['hold']}")
    lines.append("  peak force: the largest force between their hands and the partner; impulse: that force over "
                 "the time it acted")
    return lines


def pair_verdicts(performers: list[dict]) -> str:
    """"Dana's MARGINAL and Eli's FAILS"."""
    return " and ".join(f"{p['name']}'s {p['verdict'].upper()}" for p in performers)


def duck_whose(duck: dict) -> str:
    return f"{duck['performer']}'s " if duck.get("performer") else ""


def apparent_wind_line(summary: dict, system: str) -> str:
    """The highest apparent wind: over the assessed beat, and over the whole run when a failure cut the
    assessment short and the body met more wind after it."""
    peak = max((r["apparent_wind_max_ms"] for r in summary["actions"]), default=0.0)
    first = summary["first_failure"]
    whole = summary.get("apparent_wind_whole_beat_ms", peak)
    if first is None:
        words = f"apparent wind, highest: {wind_words(max(peak, whole), system)}"
    else:
        words = (f"apparent wind, highest before the first failure ({first['time_s']:.2f} s): "
                 f"{wind_words(peak, system)}")
        if whole > peak + 0.05:
            words += f"; over the whole beat as simulated: {display(whole, 'wind', system, '.1f')}"
    return words + body_wind_words(summary, system)


def body_wind_words(summary: dict, system: str) -> str:
    """With the air over the roof on: the highest wind at the body's own height beside the free stream's;
    off, a plain word that every height meets the free stream."""
    if summary.get("air_over_roof") != "on":
        return "; air over the roof off: every height meets the free stream"
    body = max((r.get("body_wind_max_ms", 0.0) for r in summary["actions"] if r["assessed"]), default=0.0)
    return (f"; at the body's centre of mass height, in the air over the roof: "
            f"{display(body, 'wind', system, '.1f')}")


def uniform_air_words(summary: dict) -> str | None:
    """The verdict with the air over the roof off (the free stream at every height), when it is on: the
    bound beside the profile's answer; None when the profile is off."""
    bound = summary.get("uniform_air")
    if not bound:
        return None
    words = (f"with the air over the roof off (the free stream at every height, the bound): "
             f"{bound['verdict'].upper()}")
    if bound["first_failure"]:
        words += f", first failure {bound['first_failure']} at {bound['first_failure_s']:.2f} s"
    if bound["verdict"] != summary["verdict"]:
        words += (". The verdict above rests on the air over the roof, whose coefficients are roofbeat's own "
                  "defaults or the scene's: check them before relying on the difference")
    return words


STORM_FORCE = 10   # Beaufort force from which a HOLDS gets a plain warning beside it


def storm_words(summary: dict) -> str | None:
    """A plain warning when the body meets storm-force apparent wind (Beaufort 10 and up), whatever
    the verdict: the model's numbers are a calculation there, not evidence; None below it."""
    peak = max([r["apparent_wind_max_ms"] for r in summary["actions"]]
               + [summary.get("apparent_wind_whole_beat_ms", 0.0)])
    force = beaufort(peak)
    if force < STORM_FORCE:
        return None
    return (f"WARNING: the apparent wind reaches Beaufort {force} ({BEAUFORT_NAMES[force]}). roofbeat's air "
            "loads and balance are checked against hand calculations and standing volunteers in far gentler "
            "conditions, not against people in winds this strong: a verdict here is a calculation, not "
            "evidence. Build up to it in steps (roofbeat ladder) and let the stunt coordinator decide.")


def factor_value(value: float, unit: str, system: str, measured: bool = True) -> str:
    """A margin (rounded down, never flattering) or a required factor (rounded as usual)."""
    if unit == "m":
        number, name = to_display(value, "length", system)
        return f"{floor_to(number) if measured else number:.2f} {name}"
    if unit == "N":   # a force (an arrest's peak beside the limit on the body): what it was, not a margin
        return display(value, "force", system, ".0f")
    return f"{floor_to(value) if measured else value:.2f}"


def marginal_words(shortfalls: list[dict], system: str) -> str:
    """'balance margin 0.02 m, required 0.03 m; ...': which factor made an action marginal."""
    return "; ".join(f"{s['margin']} {factor_value(s['value'], s['unit'], system)}, "
                     + ("limit on the body " if s["unit"] == "N" else "required ")
                     + factor_value(s["required"], s["unit"], system, False) for s in shortfalls)


def required_words(factors: dict, system: str) -> str:
    return ", ".join(f"{name} {factor_value(f['value'], f['unit'], system, False)}" for name, f in factors.items())


def phase_words(phase: dict, system: str) -> str:
    """What the body did in one phase after the first failure."""
    words = phase["state"]
    if phase["state"] == "sliding":
        words += (f" {display(phase['distance_m'], 'length', system)} at up to "
                  f"{display(phase['peak_speed_ms'], 'wind', system)}")
    elif "ground_x_m" in phase:
        words += f" at ground x = {display(phase['ground_x_m'], 'length', system, '.1f')}"
        y = phase.get("ground_y_m", 0.0)
        if "beside the track" in phase["state"]:
            words += (f", {display(abs(y), 'length', system, '.1f')} {'left' if y > 0 else 'right'} of the "
                      "track's centreline")
    return words


def _limit_value(value, unit: str, system: str) -> str:
    if value is None:
        return "n/a"
    if unit == "N":
        return display(value, "force", system, ".0f")
    return display(value, "length", system)


def rigging_rows(rigging: list[dict], system: str) -> list[dict]:
    """Per tether, the words of its table row: name, role, what it can reach, and each number against
    its limit ('over' where the physics passes the limit)."""
    rows = []
    for t in rigging:
        geo = t["geometry"]
        reach_words = ("reaches no edge or end" if not geo["reachable"]
                       else "reaches the " + ", ".join(geo["reachable"]))
        checks = []
        for c in t["limits"]:
            state = "n/a" if c["within"] is None else ("within" if c["within"] else "OVER")
            checks.append({"what": c["what"], "value": _limit_value(c["value"], c["unit"], system),
                           "limit": _limit_value(c["limit"], c["unit"], system), "state": state,
                           "source": c["source"]})
        went = _limit_value(t["went_before_held_m"], "m", system)
        rows.append({"name": t["name"], "kind": t["kind"], "role": geo["role"], "reach": reach_words,
                     "peak_tether": _limit_value(t["peak_force_n"], "N", system), "went": went,
                     "hangs": t["hangs"], "checks": checks,
                     "absorber": (None if t["absorber"] is None else
                                  f"absorber paid out {_limit_value(t['absorber']['paid_out_m'], 'm', system)} of "
                                  f"{_limit_value(t['absorber']['max_extension_m'], 'm', system)}")})
    return rows


def rigging_lines(rigging: list[dict], system: str) -> list[str]:
    """The rigging table of `roofbeat check`: each tether against its limits, the sources named."""
    lines = ["rigging (harness taken at the body's centre of mass):"]
    sources = {}
    for row in rigging_rows(rigging, system):
        lines.append(f"  {row['name']} ({row['kind']}): {row['role']}, {row['reach']}; peak tether force "
                     f"{row['peak_tether']}; went {row['went']} before it held; {row['hangs']}")
        if row["absorber"]:
            lines.append(f"    {row['absorber']}")
        for c in row["checks"]:
            mark = sources.setdefault(c["source"], len(sources) + 1)
            lines.append(f"    {c['what']:<24}{c['value']:>12}  limit {c['limit']:>10}  {c['state']:<7}[{mark}]")
    lines.append("  deceleration distance: from the tether going taut to the stop, its stretch included (OSHA's "
                 "leaves the lifeline's stretch out), so at least OSHA's figure")
    for source, mark in sources.items():
        lines.append(f"  [{mark}] {source}")
    return lines


def json_report(scene, summary: dict) -> str:
    out = {"scene": scene.title, "file": scene.source, "units": "SI", **summary, "caution": CAUTION}
    return json.dumps(out, indent=2)
