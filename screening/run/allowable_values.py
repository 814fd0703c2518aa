"""Allowable values: where an input's value changes the case's overall verdict.

The verdict is evaluated on a scan of the input over a stated range, then
every change of verdict between neighbouring scan points is located by
bisection on the full screening (engine and rule set), to a relative width of
``BISECTION_RTOL`` of the range.  Values are reported in the case's own units.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

from screening import progress
from screening.case.paths import apply_updates, locate_quantity, path_parts
from screening.case.prepare import PreparedCase, prepare_case
from screening.case.schema import CaseError, CaseSpec, FieldProblem, Quantity
from screening.case.units import (
    UnitError,
    kelvin_to,
    non_finite,
    not_finite_message,
    parse_quantity,
    temperature_unit_of,
    unit_factor,
)
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

BISECTION_RTOL = 1e-7
DEFAULT_POINTS = 41
ARRHENIUS_POINTS = 13


@dataclass(frozen=True)
class VerdictChange:
    value_si: float
    below: str
    above: str
    bracket_si: tuple[float, float]


def _unit_of(q: Quantity) -> str:
    parts = q.text.strip().split(None, 1)
    return parts[1].strip() if len(parts) == 2 else ""


def to_case_units(value_si: float, q: Quantity) -> float:
    unit = _unit_of(q)
    if q.dimension == "temperature":
        family = temperature_unit_of(q.text) or "K"
        return kelvin_to(value_si, family)
    if not unit:
        return value_si
    scale, offset = unit_factor(unit, q.dimension)
    return (value_si - offset) / scale


def locate_input(spec: CaseSpec, path: str):
    parts = path_parts(path)
    try:
        _, _, q, marker = locate_quantity(spec, parts)
    except KeyError:
        raise CaseError([FieldProblem("--vary", f"'{path}' is not a quantity given in this case; name one the case "
                                                f"sets, such as heat_loss.ambient_temperature, contents.mass, "
                                                f"heat_loss.ua, heat_sources.0.power or response_time")]) from None
    return parts, q, marker


def verdict_at(prepared: PreparedCase, parts: tuple, q: Quantity, value_si: float, rules_path) -> str:
    spec = apply_updates(prepared.spec, [(parts, replace(q, si=float(value_si)))])
    try:
        p = prepare_case(spec.model_copy(update={"uncertainty": None}))
    except CaseError:
        return "invalid"
    result = screen_prepared(p, with_history=False)
    apply_rules(result, rules_path)
    return result["verdict"]


def default_range(q: Quantity, check: str | None) -> tuple[float, float]:
    v = q.si
    if q.dimension == "temperature":
        return (max(v - 30.0, 1.0), v + 30.0)
    if v > 0:
        return (v / 5.0, v * 5.0)
    return (0.0, 1.0)


def parse_bound(text: str, q: Quantity, option: str = "--low/--high") -> float:
    """A scan bound (``option`` names it in messages): a value with its unit, or a percentage of the case's value."""
    text = text.strip()
    expected = f"a value with its unit, or a percentage of the case's value ({q.text})"
    if non_finite(text):
        raise CaseError([FieldProblem(option, not_finite_message(text, expected))])
    if text.endswith("%"):
        try:
            value = q.si * float(text[:-1]) / 100.0
        except ValueError:
            raise CaseError([FieldProblem(option, f"'{text}' is not a percentage; expected {expected}")]) from None
        if not math.isfinite(value):
            raise CaseError([FieldProblem(option, not_finite_message(text, expected))])
        return value
    try:
        return parse_quantity(text, q.dimension).value
    except UnitError as exc:
        raise CaseError([FieldProblem(option, str(exc))]) from None


def find_allowable_values(prepared: PreparedCase, path: str, low: float | None = None, high: float | None = None,
                          points: int | None = None, rules_path=None) -> dict:
    """Scan ``path`` over [low, high] (SI) and locate every change of the overall verdict."""
    parts, q, marker = locate_input(prepared.spec, path)
    lo_d, hi_d = default_range(q, marker.check)
    lo = lo_d if low is None else low
    hi = hi_d if high is None else high
    if marker.check in ("positive", "absolute"):
        lo = max(lo, 1e-12 * max(abs(hi), 1.0))
    elif marker.check == "nonnegative":
        lo = max(lo, 0.0)
    elif marker.check in ("unit_fraction", "day_length"):  # (0, 1] and (0, 24 h]
        top = 1.0 if marker.check == "unit_fraction" else 86400.0
        lo, hi = max(lo, 1e-12 * top), min(hi, top)
    elif marker.check == "time_of_day":  # [0, 24 h)
        lo, hi = max(lo, 0.0), min(hi, 86400.0 * (1.0 - 1e-12))
    if not hi > lo:
        raise CaseError([FieldProblem("--low/--high", "the range is empty: high must be greater than low")])
    n = points or (ARRHENIUS_POINTS if prepared.model.arrhenius_sources else DEFAULT_POINTS)
    log_scan = lo > 0 and hi / lo > 20 and q.dimension != "temperature"
    if log_scan:
        xs = [lo * (hi / lo) ** (k / (n - 1)) for k in range(n)]
    else:
        xs = [lo + (hi - lo) * k / (n - 1) for k in range(n)]
    with progress.task(f"margin: {path}", total=n) as advance:
        verdicts = []
        for x in xs:
            verdicts.append(verdict_at(prepared, parts, q, x, rules_path))
            advance()
        changes = []
        tol = BISECTION_RTOL * (hi - lo)
        steps = math.ceil(math.log2(max((hi - lo) / max(tol, 1e-300), 2.0)))  # bisection steps per change, at most
        advance.add_total(steps * sum(va != vb for va, vb in zip(verdicts[:-1], verdicts[1:])))
        for a, b, va, vb in zip(xs[:-1], xs[1:], verdicts[:-1], verdicts[1:]):
            if va == vb:
                continue
            # bisection keeps the two verdicts at the bracket ends; with several changes inside one scan cell
            # the first one found is reported and the scan resolution is stated
            for _ in range(80):
                if b - a <= tol:
                    break
                mid = 0.5 * (a + b)
                vm = verdict_at(prepared, parts, q, mid, rules_path)
                advance()
                if vm == va:
                    a = mid
                else:
                    b, vb = mid, vm
            changes.append(VerdictChange(0.5 * (a + b), va, vb, (a, b)))
    unit = _unit_of(q)
    conv = lambda v: to_case_units(v, q)  # noqa: E731
    return {
        "input": path,
        "unit": unit or q.si_unit,
        "nominal": conv(q.si),
        "range": [conv(lo), conv(hi)],
        "points": n,
        "scan": [{"value": conv(x), "verdict": v} for x, v in zip(xs, verdicts)],
        "verdict_at_low": verdicts[0],
        "verdict_at_high": verdicts[-1],
        "changes": [{"value": conv(c.value_si), "below": c.below, "above": c.above,
                     "bracket": [conv(c.bracket_si[0]), conv(c.bracket_si[1])], "value_si": c.value_si}
                    for c in changes],
        "note": (f"Scanned at {n} points ({'logarithmic' if log_scan else 'even'} spacing) and each change located "
                 f"by bisection to {BISECTION_RTOL:g} of the range; two changes closer than one scan step may "
                 f"show as one."),
    }


def format_allowable(report: dict) -> str:
    unit = report["unit"]
    if report.get("nominal") is None or report.get("range") is None:  # not computed (the note says why)
        return f"Allowable values of {report['input']}: {report['note']}"
    lines = [f"Allowable values of {report['input']} (case value {report['nominal']:.6g} {unit}; scanned "
             f"{report['range'][0]:.6g} to {report['range'][1]:.6g} {unit}):"]
    if not report["changes"]:
        lines.append(f"  the verdict stays '{report['verdict_at_low']}' over the whole range.")
    for c in report["changes"]:
        lines.append(f"  at {c['value']:.6g} {unit}: {c['below']} below, {c['above']} above "
                     f"(between {c['bracket'][0]:.8g} and {c['bracket'][1]:.8g} {unit})")
    lines.append("  " + report["note"])
    lines.append("  Screening estimate only: an allowable value is not a design limit; defer to codes, test data and "
                 "qualified review.")
    return "\n".join(lines)
