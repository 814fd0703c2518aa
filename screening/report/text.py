"""Readable plain-text report of a result, in the case's own temperature unit."""
from __future__ import annotations

import textwrap

from screening.case.display import dtemp, duration, temp
from screening.core.fire_exposure import CONSTANT_ADEQUATE_DRAINAGE, CONSTANT_INADEQUATE_DRAINAGE
from screening.report import readings


def _wrap(text: str, indent: str = "    - ") -> str:
    return textwrap.fill(text, width=100, initial_indent=indent, subsequent_indent=" " * len(indent))


def _roles_text(r: dict) -> str:
    parts = []
    if r.get("synthesis_sources"):
        parts.append("synthesis: " + "; ".join(r["synthesis_sources"]))
    if r.get("decomposition_sources"):
        parts.append("decomposition: " + "; ".join(r["decomposition_sources"]))
    return f" ({', '.join(parts)})" if parts else ""


def _pct(x) -> str:
    return "—" if x is None else f"{x * 100:.4g} %"


def criteria_rows(r: dict, u: str) -> list[tuple[str, str]]:
    """The runaway criteria of the result's scenario, labelled for the reader."""
    scenario = r.get("scenario")
    has_decomposition = bool(r.get("decomposition_sources"))
    rows: list[tuple[str, str]] = []
    if scenario == "cooling-failure":
        rows.append(("Process temperature", temp(r.get("initial_temperature_K"), u)))
        for part in r.get("mtsr_parts") or []:
            share = f", {_pct(part['accumulated_fraction'])} accumulated" if part.get("accumulated_fraction") is not None \
                else ""
            rows.append((f"  + {part['source']}", f"{dtemp(part['temperature_rise_K'], u)} ({part['kind']}{share})"))
        rows.append(("MTSR", temp(r.get("mtsr_K"), u)))
        mtt = r.get("maximum_technical_temperature_K")
        rows.append((f"MTT ({r.get('mtt_basis') or 'not given'})", temp(mtt, u)))
        if has_decomposition:
            rows.append(("T_D24 (decomposition)", temp(r.get("t_d24_K"), u)))
            rows.append(("TMRad at MTSR (decomposition)", duration(r.get("tmr_at_mtsr_s"))))
            shares = r.get("decomposition_shares_at_mtsr") or []
            if len(shares) > 1:
                for sh in shares:
                    rows.append((f"  share at MTSR: {sh['source']}", _pct(sh.get("share"))))
            rows.append(("TMRad from the process temperature", duration(r.get("tmr_adiabatic_s"))))
            rows.append(("Decomposition temperature rise", "unbounded" if r.get("decomposition_rise_unbounded")
                         else dtemp(r.get("decomposition_temperature_rise_K"), u)))
            final = r.get("final_temperature_K")
            rows.append(("Final temperature (MTSR + decomposition rise)",
                         temp(final, u) + (f"; {dtemp(r.get('final_minus_process_K'), u)} above the process temperature"
                                           if final is not None else "")))
            nr = r.get("no_return_temperature_K")
            above = r.get("mtsr_above_no_return")
            rows.append(("No-return temperature (decomposition)",
                         temp(nr, u) + ("" if above is None else ("; MTSR above it" if above else "; MTSR below it"))))
        else:
            rows.append(("T_D24", "— (no decomposition source: T_D24 must be measured)"))
        cls = r.get("criticality_class")
        if cls is not None:
            rows.append(("Criticality class", str(cls)))
        elif r.get("criticality_classes_possible"):
            classes = [str(c) for c in r["criticality_classes_possible"]]
            rows.append(("Criticality class", f"{', '.join(classes[:-1])} or {classes[-1]} (T_D24 must be measured)"))
        else:
            rows.append(("Criticality class", "— (not determined)"))
    elif scenario == "storage":
        crit = r.get("critical_ambient_temperature_K")
        method = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(r.get("critical_ambient_method"),
                                                                                      "—")
        margin = r.get("critical_ambient_margin_K")
        which = "the daily maximum of the effective ambient" if r.get("daily_cycle") else "the ambient"
        rows.append((f"Critical ambient ({method})", temp(crit, u) + (
            f"; {which} is {dtemp(margin, u)} below it" if margin is not None and margin > 0
            else (f"; {which} is at or above it" if margin is not None else ""))))
        if r.get("critical_ambient_margin_at_daily_mean_K") is not None:
            rows.append(("Margin at the daily mean", dtemp(r["critical_ambient_margin_at_daily_mean_K"], u)))
        if r.get("critical_ambient_method") == "semenov":
            rows.append(("Critical contents temperature", temp(r.get("critical_temperature_K"), u)))
            rows.append(("No-return temperature", temp(r.get("no_return_temperature_K"), u)))
        rows.append(("Storage temperature (higher of initial, ambient)", temp(r.get("storage_temperature_K"), u)))
        rows.append(("TMRad at the storage temperature", duration(r.get("tmr_at_storage_temperature_s"))))
        rows.append(("T_D24", temp(r.get("t_d24_K"), u)))
        rows.append(("Decomposition temperature rise", "unbounded" if r.get("decomposition_rise_unbounded")
                     else dtemp(r.get("decomposition_temperature_rise_K"), u)))
        gas = r.get("gas_generating_sources") or []
        rows.append(("Gas generation", ("; ".join(gas) + (" (closed vessel or package)" if r.get("gas_in_closed_package") else ""))
                     if gas else "none declared"))
    elif scenario is not None and has_decomposition:
        rows.append(("TMRad of the decomposition from the initial temperature", duration(r.get("tmr_adiabatic_s"))))
        rows.append(("T_D24 (decomposition)", temp(r.get("t_d24_K"), u)))
        if r.get("no_return_temperature_K") is not None:
            rows.append(("No-return temperature", temp(r.get("no_return_temperature_K"), u)))
    elif scenario is None and (r.get("tmr_adiabatic_s") is not None or r.get("mtsr_K") is not None):
        rows += [("TMRad from the initial temperature", duration(r.get("tmr_adiabatic_s"))),
                 ("T_D24 (TMRad = 24 h)", temp(r.get("t_d24_K"), u)),
                 ("MTSR", temp(r.get("mtsr_K"), u)), ("TMRad at MTSR", duration(r.get("tmr_at_mtsr_s"))),
                 ("Criticality class", str(r.get("criticality_class") or "—"))]
    if r.get("critical_medium_temperature_K") is not None or r.get("heating_medium_temperature_K") is not None:
        tm, tmc = r.get("heating_medium_temperature_K"), r.get("critical_medium_temperature_K")
        rows.append(("Critical medium temperature (Semenov)", temp(tmc, u) + (f"; medium {temp(tm, u)}" if tm else "")
                     + ("; the medium is hotter than T_D24" if r.get("medium_above_t_d24") else "")))
    return rows


def _conduction_lines(r: dict, u: str) -> list[str]:
    """Unstirred contents: what the limit times above are, and the lumped times beside them."""
    cond = r.get("conduction")
    if not isinstance(cond, dict):
        return []
    size = "half-thickness" if cond.get("geometry") == "slab" else "radius"
    change = cond.get("mesh_relative_change")
    mesh = (f"halving the mesh moved the limit times by {change * 100:.2g} %" if change is not None
            else "no limit reached, so no mesh change of a time" if cond.get("mesh_converged") is None
            else "a limit reached on one mesh only")
    out = [_wrap(f"Times above: the hottest point of the unstirred contents (transient conduction, "
                 f"{cond.get('geometry')}, {size} {cond.get('half_thickness_m'):.4g} m, surface Biot number "
                 f"{cond.get('biot_number'):.3g}; {mesh}). Centre at the end of the horizon: "
                 + (temp(cond["centre_temperature_at_horizon_K"], u)
                    if cond.get("centre_temperature_at_horizon_K") is not None else "— (the hot spot ran away)")
                 + ".", "  ")]
    if cond.get("geometry_approximation"):
        out.append(_wrap(f"Geometry approximated: {cond['geometry_approximation']} (conservative).", "  "))
    lumped = r.get("lumped") or {}
    parts = [f"{x['name']}: {duration(x['time_s']) if x.get('time_s') is not None else 'not reached'}"
             for x in lumped.get("limits", [])]
    if parts:
        out.append(_wrap("Lumped (well-mixed) times, for comparison only: " + "; ".join(parts) + ".", "  "))
    return out
SADT_LABEL = "SADT (UN test series H, from memory: 5 °C steps, centre +6 K in 7 d)"
CONTROL_LABEL = "Control temperature (UN Model Regulations table, from memory)"
EMERGENCY_LABEL = "Emergency temperature (same table)"


def sadt_rows(r: dict, u: str) -> list[tuple[str, str]]:
    """SADT, control and emergency temperatures with their conventions (storage cases), or []."""
    if "sadt_K" not in r:
        return []
    block = r.get("sadt") or {}
    sadt = r.get("sadt_K")
    method = {"lumped": "lumped (well-mixed) temperature", "conduction": "centre of the conduction model"}.get(
        block.get("method"), "")
    if sadt is None:
        return [(SADT_LABEL, "—")]
    rows = [(SADT_LABEL, temp(sadt, u) + (f"; {method}" if method else ""))]
    rows.append((CONTROL_LABEL, temp(r.get("control_temperature_K"), u)))
    rows.append((EMERGENCY_LABEL, temp(r.get("emergency_temperature_K"), u)))
    return rows


def sadt_trial_text(t: dict, u: str) -> str:
    """One step of the SADT search: the ambient, and the centre temperature at 7 days (or the runaway)."""
    amb = t["ambient_K"]
    if t.get("centre_at_7_days_K") is not None:
        end = f"centre {temp(t['centre_at_7_days_K'], u)} at 7 d ({dtemp(t['centre_at_7_days_K'] - amb, u)} above)"
    else:
        end = f"runs away (centre past {temp(t['peak_centre_K'], u)} after {duration(t.get('stopped_at_s'))})"
    rise = f"; +6 K after {duration(t['rise_time_s'])}" if t.get("rise_time_s") is not None else "; no 6 K rise"
    return f"{temp(amb, u)}: {end}{rise}"


def _sadt_lines(r: dict, u: str) -> list[str]:
    rows = sadt_rows(r, u)
    if not rows:
        return []
    lines = ["", "Package (SADT, control and emergency temperatures; storage):"]
    width = max(len(k) for k, _ in rows)
    lines += [f"  {k:<{width}}  {v}" for k, v in rows]
    block = r.get("sadt") or {}
    trials = block.get("trials") or []
    if trials:
        lines.append("  Steps tried:")
        lines += [f"    {sadt_trial_text(t, u)}" for t in trials]
    control = block.get("temperature_control_required") or {}
    if control.get("note"):
        lines.append(_wrap(control["note"], "  "))
    if r.get("sadt_note"):
        lines.append(_wrap(r["sadt_note"], "  "))
    if block.get("packaging_note") and block.get("packaging", "package") == "package" and not block.get("portable_tank"):
        lines.append(_wrap(block["packaging_note"], "  "))
    return lines


def _geometry_and_fire_lines(r: dict) -> list[str]:
    """The vessel geometry and each fire's heat input, as computed: what a reviewer recomputes first."""
    lines = []
    geo = r.get("geometry") if isinstance(r.get("geometry"), dict) else None
    if geo:
        parts = []
        if geo.get("vessel_volume_m3") is not None:
            parts.append(f"vessel {geo['vessel_volume_m3']:.4g} m³")
        if geo.get("liquid_volume_m3") is not None:
            fill = f" (fill {geo['fill_fraction']:.4g})" if geo.get("fill_fraction") is not None else ""
            parts.append(f"contents {geo['liquid_volume_m3']:.4g} m³{fill}")
        if geo.get("liquid_height_m") is not None:
            parts.append(f"fill height {geo['liquid_height_m']:.4g} m")
        if geo.get("wetted_area_m2") is not None:
            parts.append(f"wetted area {geo['wetted_area_m2']:.4g} m²")
        if geo.get("heat_loss_area_m2") is not None:
            parts.append(f"heat-loss area {geo['heat_loss_area_m2']:.4g} m²")
        if parts:
            lines.append(_wrap("Geometry: " + "; ".join(parts), ""))
    for fire in r.get("fire") or []:
        if not isinstance(fire, dict) or fire.get("power_W") is None:
            continue
        drained = fire.get("drainage_and_firefighting", True)
        factor = (CONSTANT_ADEQUATE_DRAINAGE if drained else CONSTANT_INADEQUATE_DRAINAGE) / 1e3
        lines.append(_wrap(f"Fire heat input {fire['power_W'] / 1e3:.4g} kW = {factor:g} kW x F {fire['environment_factor']:.3g}"
                           f" x A^0.82 on a wetted area A of {fire['wetted_area_m2']:.4g} m² (API Standard 521, "
                           f"{'with' if drained else 'without'} adequate drainage and fire-fighting)", ""))
    return lines


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
    cycle = r.get("daily_cycle")
    mean = " (daily mean)" if cycle else ""
    lines.append(f"Initial {temp(r['initial_temperature_K'], u)}; ambient {temp(r['ambient_temperature_K'], u)}{mean}; "
                 f"horizon {duration(r['horizon_s'])}")
    if cycle:
        lines.extend(_cycle_lines(r, cycle, u))
    tc = r.get("time_constant_s")
    lumped_only = " (C/UA of a well-mixed mass; the unstirred body is solved by conduction below)" \
        if r.get("mixing") == "unstirred" and tc is not None else ""
    lines.append(_wrap(f"Heat capacity {r['heat_capacity_J_per_K']:.4g} J/K; UA {r['ua_W_per_K']:.4g} W/K; "
                       f"time constant {duration(tc) if tc is not None else 'none (adiabatic)'}{lumped_only}", ""))
    lines.extend(_geometry_and_fire_lines(r))
    if r.get("scenario"):
        lines.append(f"Scenario: {r['scenario']}" + _roles_text(r))
    basis = r.get("detection_basis")
    if r.get("response_time_s") is not None or basis in ("assumed", "unmonitored"):
        det = r.get("detection_time_s")
        if basis == "unmonitored":
            det_text = "none (storage not monitored: limits are checked against the storage period)"
        elif basis == "assumed":
            det_text = "assumed at t = 0 (no detection block)"
        else:
            det_text = f"at {duration(det)}" if det is not None else "never (alarm not reached)"
        resp = r.get("response_time_s")
        lines.append(f"Detection {det_text}; response time {duration(resp) if resp is not None else 'not given'}")
    if r.get("detection_note"):
        lines.append(_wrap(r["detection_note"], "  "))
    lines.append("")
    lines.append("Limits:")
    width = max(len(l["name"]) for l in r["limits"])
    for l in r["limits"]:
        when = f"reached after {duration(l['time_s'])}" if l["time_s"] is not None else \
            f"not reached within {duration(r['horizon_s'])}"
        margin = ""
        if l.get("margin_s") is not None:
            margin = f"; margin {duration(abs(l['margin_s']))}" + (" SHORT" if l["margin_s"] < 0 else "")
            if l.get("margin_note"):
                margin += f" ({l['margin_note']})"
        lines.append(f"  {l['name']:<{width}}  {temp(l['temperature_K'], u)}  {when}{margin}")
        if l.get("time_note"):
            lines.append(_wrap(f"({l['time_note']})", "    "))
    lines.extend(_conduction_lines(r, u))
    lines.append("")
    if r.get("start_release"):
        lines.append(_wrap(r["start_release"]["note"], ""))
    st = r.get("steady_temperature_K")
    cond = r.get("conduction") if isinstance(r.get("conduction"), dict) else None
    steady_word = "Steady temperature (daily mean)" if r.get("daily_cycle") else "Steady temperature"
    plateau = readings.boiling_plateau(r)
    if cond:
        if cond.get("runs_away"):
            lines.append(f"The hot spot runs away: the conduction solution stops at {temp(r['peak_temperature_K'], u)} "
                         f"after {duration(r['peak_time_s'])} (not a peak: still climbing there)")
        else:
            lines.append(f"Peak {temp(r['peak_temperature_K'], u)} at {duration(r['peak_time_s'])}")
        lumped = r.get("lumped") or {}
        lst = lumped.get("steady_temperature_K")
        lines.append(_wrap("Steady temperature not computed for the unstirred body" + (
            f" (the lumped, well-mixed balance settles at {temp(lst, u)}; not valid for unstirred contents)"
            if lst is not None else ""), ""))
    elif plateau is not None:
        dry = plateau.get("time_to_dry_s")
        lines.append(f"Boiling plateau (open vessel) {temp(r['peak_temperature_K'], u)} from "
                     f"{duration(plateau['time_to_boil_s'])} until "
                     f"{duration(dry) if dry is not None else 'the end of the horizon (not dry within it)'}")
        if st is not None and st > r["peak_temperature_K"]:
            lines.append(f"{steady_word} after dry-out (only if heating continued once dry) {temp(st, u)}")
        else:
            lines.append(f"{steady_word} {temp(st, u) if st is not None else 'none (no stable steady state)'}")
    else:
        if readings.stops_in_runaway(r):
            lines.append(f"Runs away: the solution stops at {temp(r['peak_temperature_K'], u)} after "
                         f"{duration(r['peak_time_s'])} (not a peak: still climbing there)")
        elif readings.still_rising(r):
            lines.append(f"Temperature at the end of the horizon {temp(r['peak_temperature_K'], u)} (still rising; "
                         f"no peak within it)")
        else:
            lines.append(f"Peak {temp(r['peak_temperature_K'], u)} at {duration(r['peak_time_s'])}")
        lines.append(f"{steady_word} {temp(st, u) if st is not None else 'none (no stable steady state)'}")
    ad = r.get("adiabatic") or {}
    if ad:
        parts = [f"{a['name']}: {duration(a['time_s']) if a['time_s'] is not None else 'not reached'}"
                 for a in ad.get("limits", [])]
        bound = readings.adiabatic_is_bound(r)
        if r.get("daily_cycle"):
            head = ("No heat loss (UA = 0), a bound here (the contents never fall below the daily maximum of the "
                    "effective ambient)" if bound else
                    "No heat loss (UA = 0), not shown to be a bound here (the contents do not stay above the daily "
                    "maximum of the effective ambient)" if bound is False else "No heat loss (UA = 0)")
        else:
            head = ("No heat loss (UA = 0), a bound here (the contents never fall below the ambient)" if bound else
                    "No heat loss (UA = 0), not a bound here (the ambient is above the contents for part of the "
                    "history)" if bound is False else "No heat loss (UA = 0)")
        rise = ad.get("temperature_rise_K")
        lines.append(f"{head}: {'; '.join(parts)}" + (f"; rise from decaying sources {dtemp(rise, u)}"
                                                       if rise is not None and rise > 0 else ""))
    sensitive = [l["name"] for l in r["limits"] if l.get("time_s") is not None
                 and readings.near_peak(r, l.get("temperature_K"))]
    if sensitive:
        lines.append(_wrap(f"Sensitive to the inputs: {', '.join(sensitive)} lies within 2 % of the peak "
                           f"temperature rise; a small change in any input moves its time a lot.", ""))
    rows = criteria_rows(r, u)
    if rows or r.get("runaway_summary"):
        lines.append("")
        lines.append(f"Runaway criteria ({r.get('scenario') or 'all sources'}):")
        if r.get("runaway_summary"):
            lines.append(_wrap(r["runaway_summary"], "  "))
        width = min(max(len(k) for k, _ in rows), 50) if rows else 0
        for k, v in rows:
            lines.append(f"  {k:<{width}}  {v}")
    lines += _sadt_lines(r, u)
    if r.get("biot_number") is not None:
        lines.append(f"Biot number {r['biot_number']:.3g}" + (" (of the lumped model, h V / (A k))" if cond else ""))
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
        if unc.get("correlation"):
            lines.append(_wrap(f"Correlated inputs ({unc['correlation']['note']}): "
                               + ", ".join(unc["correlation"]["inputs"])))
        for l in unc.get("limits", []):
            pb = l["probability_before_response"]
            n_acc = unc.get("accepted", unc["samples"])
            pb_text = "—" if pb is None else _probability_text(pb, l['probability_before_response_standard_error'],
                                                               n_acc)
            pw_text = _probability_text(l['probability_within_horizon'],
                                        l.get('probability_within_horizon_standard_error'), n_acc)
            lines.append(f"  {l['name']}: P(before detection + response) {pb_text}"
                         f"; P(within horizon) {pw_text}; time 5/50/95 %: "
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


def _cycle_lines(r: dict, cycle: dict, u: str) -> list[str]:
    """The daily cycle: the air's range, the sun, the effective ambient's maximum and the start time of day."""
    def hours(s):
        return f"{s / 3600.0:.4g} h"

    out = [f"Daily cycle: air range {dtemp(cycle['daily_range_K'], u)}, warmest at {hours(cycle['warmest_time_of_day_s'])} "
           f"solar time; start at {hours(cycle['start_time_of_day_s'])} ({cycle['start_time_basis']})"]
    sun = cycle.get("sun")
    if sun:
        out.append(f"Sun: {sun['peak_irradiance_W_per_m2']:.4g} W/m^2 at noon, absorptivity {sun['absorptivity']:.3g}, "
                   f"exposed area {sun['exposed_area_m2']:.4g} m^2 ({sun['exposed_area_basis']}, "
                   f"{sun['exposed_share'] * 100:.3g} % of the heat-loss area), h_o "
                   f"{sun['outer_coefficient_W_per_m2K']:.3g} W/(m^2*K): sol-air rise {dtemp(sun['sol_air_rise_K'], u)} "
                   f"at noon on the contents' share; day {hours(sun['day_length_s'])}")
    out.append(f"Effective ambient (the air and the sun's share): daily maximum "
               f"{temp(cycle['effective_ambient_max_K'], u)} at {hours(cycle['effective_ambient_max_time_of_day_s'])}; "
               f"the critical-ambient criteria compare with {temp(r.get('criteria_ambient_K'), u)}")
    return [_wrap(line, "") for line in out]


def _probability_text(p: float, se, n) -> str:
    """A Monte Carlo probability; with no hit (or all hits) in n samples, the one-sided 95 % bound
    1 - 0.05^(1/n) (about 3/n), not "0.0000 +- 0.0000"."""
    if n and p in (0.0, 1.0) and not se:
        bound = 1.0 - 0.05 ** (1.0 / n)
        if p == 0.0:
            return f"0 of {n} samples (below {bound:.2g}, one-sided 95 % upper bound)"
        return f"all {n} samples (above {1 - bound:.4g}, one-sided 95 % lower bound)"
    return f"{p:.4f}" if se is None else f"{p:.4f} ± {se:.4f}"
