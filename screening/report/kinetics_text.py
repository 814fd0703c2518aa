"""The readable summary of ``heatscreen kinetics``."""
from __future__ import annotations

import math


def _c(kelvin) -> str:
    return "n/a" if kelvin is None else f"{kelvin - 273.15:.1f} degC"


def _kj(joule) -> str:
    return "n/a" if joule is None else f"{joule / 1000:.1f} kJ/mol"


def format_kinetics(result: dict) -> str:
    """The result of :func:`screening.run.kinetics_analysis.analyse_dsc` / ``analyse_adiabatic`` as text."""
    lines = ["Kinetics from calorimeter runs (screening estimate: check against the data and a qualified review)", ""]
    kind = result.get("kind")
    for run in result.get("runs", []):
        if kind == "scanning":
            lines.append(f"  {run['file']}: {run['heating_rate_K_per_s'] * 60:.3g} K/min, peak {_c(run['peak_temperature_K'])}, "
                         f"heat {run['fitted_heat_J_per_kg'] / 1000:.4g} kJ/kg")
        elif kind == "isothermal":
            lines.append(f"  {run['file']}: isothermal at {_c(run['peak_temperature_K'])}, heat "
                         f"{run['fitted_heat_J_per_kg'] / 1000:.4g} kJ/kg")
        else:
            lines.append(f"  {run['file']}: adiabatic run, phi = {result['phi']:.3g}")
    lines.append("")
    if kind == "adiabatic":
        lines += [
            f"Onset (at {result['onset_threshold_K_per_s'] * 60:g} K/min): measured {_c(result['onset_temperature_measured_K'])}, "
            f"corrected to phi = 1: {_c(result['onset_temperature_corrected_K'])}",
            f"  {result['onset_note']}",
            f"Temperature rise: measured {result['temperature_rise_measured_K']:.1f} K, adiabatic (x phi) "
            f"{result['adiabatic_temperature_rise_K']:.1f} K",
            f"phi correction: {result['phi_correction']}",
            f"Self-heat-rate fit (Townsend and Tou 1980): R^2 = {result['self_heat_rate_r_squared']:.4f}"
            + ("; the n-th-order linearisation FAILS: a sign of autocatalysis" if result["nth_order_linearisation_fails"]
               else ""),
            "",
        ]
    else:
        lines.append("Model-free activation energy:")
        if result.get("kissinger_activation_energy_J_per_mol") is not None:
            lines.append(f"  Kissinger (1957; ASTM E2890):                  {_kj(result['kissinger_activation_energy_J_per_mol'])}")
            lines.append(f"  Flynn-Wall-Ozawa (ASTM E698, Doyle):           {_kj(result['flynn_wall_ozawa_activation_energy_J_per_mol'])}")
        iso = result.get("isoconversional") or []
        if iso:
            shown = [p for p in iso if any(abs(p["conversion"] - a) < 1e-9 for a in (0.1, 0.3, 0.5, 0.7, 0.9))]
            lines.append("  Friedman (1964), by conversion:                " + ", ".join(
                f"{p['conversion']:.1f}: {p['activation_energy_J_per_mol'] / 1000:.0f}" for p in shown) + " kJ/mol")
        if result.get("complex_mechanism"):
            lines.append(f"  E changes by {result['isoconversional_spread']:.0%} over conversion 0.1-0.9: a complex "
                         f"mechanism (more than 20 %)")
        lines.append("")
        lines.append("Model fits to all runs together (nonlinear least squares on the heat flow, 95 % intervals):")
        for name, fit in result["fits"].items():
            p = fit["parameters"]
            e = p["activation_energy"]
            text = (f"  {name:14s} AIC {fit['aic']:.1f}: E = {e['value'] / 1000:.2f} "
                    f"[{e['interval_95'][0] / 1000:.2f}, {e['interval_95'][1] / 1000:.2f}] kJ/mol, "
                    f"k({_c(fit['reference_temperature_K'])}) = {fit['rate_constant_per_s']:.4g} 1/s, "
                    f"n = {p['order']['value']:.3g}")
            if "autocatalytic_order" in p:
                text += (f", m = {p['autocatalytic_order']['value']:.3g}, "
                         f"z = {math.exp(p['ln_initiation']['value']):.3g}")
            lines.append(text)
        lines.append("")
    lines.append(f"Chosen: {result['model']}. {result['choice_reason']}")
    lines.append(f"  E = {result['activation_energy_J_per_mol'] / 1000:.2f} kJ/mol "
                 f"(95 %: {result['activation_energy_interval_J_per_mol'][0] / 1000:.2f} to "
                 f"{result['activation_energy_interval_J_per_mol'][1] / 1000:.2f}), "
                 f"k = {result['rate_constant_per_s']:.4g} 1/s at {_c(result['reference_temperature_K'])} "
                 f"(reference temperature where ln k and E are uncorrelated)")
    lines.append(f"  heat of reaction {result['specific_heat_of_reaction_J_per_kg'] / 1000:.4g} kJ/kg; "
                 f"tested range {_c(result['tested_range_K'][0])} to {_c(result['tested_range_K'][1])}: outside it the "
                 f"kinetics are extrapolated (not conservative)")
    for note in result.get("notes", []):
        lines.append(f"  Note: {note}")
    lines.append("")
    lines.append("Heat-source block (paste under heat_sources; --source-out writes it with the uncertainty entries):")
    import yaml

    block = yaml.safe_dump(result["source"], sort_keys=False, allow_unicode=True, default_flow_style=None)
    for line in block.splitlines():
        if line.startswith("gas_generating:"):
            line += f"  # {result['gas_generating_note']}"
        lines.append("  " + line)
    lines.append(f"  {result['uncertainty_note']}")
    return "\n".join(lines)
