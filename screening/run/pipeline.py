"""Screen a case file end to end: load, validate, prepare, screen, apply the rule set.

This is what the command line, the HTTP service and ``margin`` call.
"""
from __future__ import annotations

import numpy as np

from screening.case.files import load_case_file
from screening.case.prepare import prepare_case
from screening.case.uncertainty_plan import physically_possible, quantile
from screening.run.allowable_values import find_allowable_values
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules


def screen_file(path: str, rules_path: str | None = None):
    """Load, validate and screen one case file; returns the full result dict."""
    loaded = load_case_file(path)
    prepared = prepare_case(loaded.spec)
    result = screen_prepared(prepared, loaded.input_hash)
    apply_rules(result, rules_path)
    result["allowable_values"] = allowable_for_uncertain_inputs(prepared, rules_path)
    return result


def allowable_for_uncertain_inputs(prepared, rules_path):
    """Allowable values of each uncertain input over its 0.5-99.5 % range (closed-form cases only)."""
    plan = prepared.uncertainty_plan
    if plan is None:
        return None
    if prepared.model.arrhenius_sources:
        return [{"input": inp.path, "unit": "", "nominal": None, "range": None, "changes": [], "scan": [],
                 "note": "not computed for cases with Arrhenius sources (each point needs a stiff integration); "
                         "run heatscreen margin CASE --vary " + inp.path} for inp in plan.inputs]

    out = []
    for inp in plan.inputs:
        lo, hi = quantile(inp, 0.005), quantile(inp, 0.995)
        if not physically_possible(inp, np.array([lo]))[0]:
            lo = inp.nominal * 1e-3 if inp.nominal > 0 else lo
        report = find_allowable_values(prepared, inp.path, lo, hi, 21, rules_path)
        report.pop("scan", None)
        report["note"] += (" The verdict at each point is that of the case's own values with this one input "
                           "changed; the Monte Carlo probabilities are not re-run.")
        out.append(report)
    return out
