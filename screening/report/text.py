"""Readable plain-text report of a result, in the case's own temperature unit."""
from __future__ import annotations

import textwrap

from screening.case.display import dtemp, duration, temp


def _wrap(text: str, indent: str = "    - ") -> str:
    return textwrap.fill(text, width=100, initial_indent=indent, subsequent_indent=" " * len(indent))


def format_result(r: dict) -> str:
    u = (r.get("units") or {}).get("temperature", "K")
    lines = []
    title = f"{r['id']}" + (f" — {r['title']}" if r.get("title") else "")
    lines.append(title)
    lines.append("=" * min(len(title), 100))
    if r.get("verdict"):
        lines.append(f"Verdict: {r['verdict'].upper()}  (rule set {r.get('rule_set', {}).get('name', '?')})")
        for reason in r.get("reasons", []):
            lines.append(_wrap(reason))
    lines.append(f"Initial {temp(r['initial_temperature_K'], u)}; ambient {temp(r['ambient_temperature_K'], u)}; "
                 f"horizon {duration(r['horizon_s'])}")
    tc = r.get("time_constant_s")
    lines.append(f"Heat capacity {r['heat_capacity_J_per_K']:.4g} J/K; UA {r['ua_W_per_K']:.4g} W/K; "
                 f"time constant {duration(tc) if tc is not None else 'none (adiabatic)'}")
    if r.get("response_time_s") is not None:
        det = r.get("detection_time_s")
        lines.append(f"Detection at {duration(det) if det is not None else 'never (alarm not reached)'}; "
                     f"response time {duration(r['response_time_s'])}")
    lines.append("")
    lines.append("Limits:")
    width = max(len(l["name"]) for l in r["limits"])
    for l in r["limits"]:
        when = f"reached after {duration(l['time_s'])}" if l["time_s"] is not None else \
            f"not reached within {duration(r['horizon_s'])}"
        margin = ""
        if l.get("margin_s") is not None:
            margin = f"; margin {duration(abs(l['margin_s']))}" + (" SHORT" if l["margin_s"] < 0 else "")
        lines.append(f"  {l['name']:<{width}}  {temp(l['temperature_K'], u)}  {when}{margin}")
    lines.append("")
    lines.append(f"Peak {temp(r['peak_temperature_K'], u)} at {duration(r['peak_time_s'])}")
    st = r.get("steady_temperature_K")
    lines.append(f"Steady temperature {temp(st, u) if st is not None else 'none (no stable steady state)'}")
    ad = r.get("adiabatic") or {}
    if ad:
        parts = [f"{a['name']}: {duration(a['time_s']) if a['time_s'] is not None else 'not reached'}"
                 for a in ad.get("limits", [])]
        lines.append(f"Adiabatic bound (UA = 0): {'; '.join(parts)}; rise from decaying sources "
                     f"{dtemp(ad.get('temperature_rise_K'), u)}")
    if r.get("tmr_adiabatic_s") is not None or r.get("critical_ambient_temperature_K") is not None \
            or r.get("mtsr_K") is not None:
        lines.append("")
        lines.append("Runaway criteria:")
        if r.get("runaway_summary"):
            lines.append(_wrap(r["runaway_summary"], "  "))
        rows = [("TMRad from the initial temperature", duration(r.get("tmr_adiabatic_s"))),
                ("T_D24 (TMRad = 24 h)", temp(r.get("t_d24_K"), u)),
                (f"Critical ambient ({r.get('critical_ambient_method') or '—'})", temp(r.get("critical_ambient_temperature_K"), u)),
                ("Critical contents temperature", temp(r.get("critical_temperature_K"), u)),
                ("No-return temperature", temp(r.get("no_return_temperature_K"), u)),
                ("Adiabatic temperature rise", dtemp(r.get("adiabatic_temperature_rise_K"), u)),
                ("MTSR", temp(r.get("mtsr_K"), u)),
                ("TMRad at MTSR", duration(r.get("tmr_at_mtsr_s"))),
                ("Criticality class", str(r.get("criticality_class") or "—"))]
        for k, v in rows:
            lines.append(f"  {k:<40} {v}")
    if r.get("biot_number") is not None:
        lines.append(f"Biot number {r['biot_number']:.3g}")
    b = r.get("boiling")
    if b:
        lines.append("")
        lines.append("Boiling:")
        num = lambda v, u: "—" if v is None else f"{v:.4g} {u}"  # noqa: E731
        lines.append(f"  time to boil {duration(b['time_to_boil_s']) if b['time_to_boil_s'] is not None else 'not within horizon'}; "
                     f"peak boil-off {num(b['peak_boil_off_kg_per_s'], 'kg/s')}; "
                     f"boiled off {num(b['boiled_off_kg'], 'kg')} within the horizon; "
                     f"dry {duration(b['time_to_dry_s']) if b['time_to_dry_s'] is not None else 'not within horizon'}")
    unc = r.get("uncertainty")
    if unc:
        lines.append("")
        lines.append(f"Uncertainty (Monte Carlo, {unc.get('accepted', unc['samples'])} samples accepted of "
                     f"{unc['samples']}, {unc['rejected']} rejected as physically impossible, seed {unc['seed']}, "
                     f"{unc['sampling']} sampling):")
        if unc.get("note"):
            lines.append(_wrap(unc["note"]))
        for l in unc.get("limits", []):
            pb = l["probability_before_response"]
            pb_text = "—" if pb is None else f"{pb:.4f} ± {l['probability_before_response_standard_error']:.4f}"
            lines.append(f"  {l['name']}: P(before detection + response) {pb_text}"
                         f"; P(within horizon) {l['probability_within_horizon']:.4f}; time 5/50/95 %: "
                         f"{duration(l['p05_time_s']) if l['p05_time_s'] is not None else 'not reached'} / "
                         f"{duration(l['p50_time_s']) if l['p50_time_s'] is not None else 'not reached'} / "
                         f"{duration(l['p95_time_s']) if l['p95_time_s'] is not None else 'not reached'}")
        if unc.get("sensitivity"):
            lines.append(f"  Sensitivity of the time to '{unc.get('first_limit')}' (each input at its 5th and 95th "
                         f"percentile, others at the case values):")
            for s_ in unc["sensitivity"]:
                rho = s_.get("rank_correlation")
                lines.append(f"    {s_['input']:<36} {duration(s_['low_time_s']) if s_['low_time_s'] is not None else 'not reached':>12}"
                             f" .. {duration(s_['high_time_s']) if s_['high_time_s'] is not None else 'not reached':<12}"
                             f" rank correlation {'—' if rho is None else f'{rho:+.2f}'}")
    for av in r.get("allowable_values") or []:
        lines.append("")
        from screening.run.allowable_values import format_allowable

        lines.append(format_allowable(av))
    rec = r.get("recovery")
    if rec:
        lines.append("")
        lines.append(f"Recovery from {duration(rec['start_s'])}: peak {temp(rec['peak_temperature_K'], u)} at "
                     f"{duration(rec['peak_time_s'])}; limits still reached: {', '.join(rec['limits_reached']) or 'none'}")
        if rec.get("past_no_return"):
            lines.append("  The contents were already past the no-return temperature when cooling returned.")
    if r.get("warnings"):
        lines.append("")
        lines.append("Warnings:")
        for w in r["warnings"]:
            lines.append(_wrap(w))
    if r.get("assumptions"):
        lines.append("Assumptions:")
        for a in r["assumptions"]:
            lines.append(_wrap(a))
    lines.append("")
    lines.append(_wrap("Screening estimate only: not a design or relief-sizing calculation. Defer to applicable "
                       "codes, test data and review by a licensed or otherwise qualified professional.", ""))
    return "\n".join(lines)
