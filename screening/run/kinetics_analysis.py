"""From calorimeter runs to kinetics and a heat-source block: what ``heatscreen kinetics`` computes.

DSC runs (scanning at several heating rates, or isothermal) and adiabatic runs are read at the case
boundary (:mod:`screening.case.calorimeter_runs`), reduced and fitted by the pure core
(:mod:`screening.core.calorimetry_baseline`, :mod:`screening.core.kinetics_fit`,
:mod:`screening.core.thermal_inertia`), and assembled here into the command's result: the fits, the
model-free checks, the chosen model and why, and the source block with the uncertainty entries that carry
the fit's covariance into Monte Carlo.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.case.calorimeter_runs import CalorimeterRun
from screening.case.schema import CaseError, FieldProblem
from screening.core.model import GAS_CONSTANT

AIC_DIFFERENCE = 10.0  # below this the information criterion does not separate the models (common practice)
ISOCONVERSIONAL_SPREAD = 0.20  # E(alpha) varying more than this share of its mean: a complex mechanism
DEFAULT_SPECIFIC_HEAT = 2000.0  # J/(kg K), organic liquids and solids (common practice), for the TMRad choice
DEFAULT_ONSET_THRESHOLD = 0.02 / 60.0  # K/s: 0.02 K/min, a usual adiabatic-calorimeter sensitivity (common practice)
GAS_NOTE = "unknown from DSC; set false only with evidence"
FIT_ONLY_NOTE = ("These spreads cover the fit of the data only: not the choice of the model form, not the "
                 "extrapolation outside the tested range, and not errors of the instrument's calibration.")
ONSET_NOTE = ("An onset temperature depends on the instrument's sensitivity, the sample mass and the heating "
              "rate: it is not a property of the material and not a safe temperature.")


@dataclass(frozen=True)
class KineticsOptions:
    exo_down: bool = False
    sample_mass: float | None = None  # kg
    limits: tuple | None = None  # K (scanning) or s (isothermal)
    mass_fraction: float = 1.0
    isothermal: bool = False
    temperature_of_interest: float | None = None  # K
    specific_heat: float | None = None  # J/(kg K), for the TMRad comparison
    source_index: int = 0
    label: str | None = None
    # adiabatic runs
    phi: float | None = None
    sample_specific_heat: float | None = None
    cell_mass: float | None = None
    cell_specific_heat: float | None = None
    onset_threshold: float = DEFAULT_ONSET_THRESHOLD


def _problem(where: str, message: str) -> CaseError:
    return CaseError([FieldProblem(where, message)])


def _g(x: float, digits: int = 6) -> str:
    return f"{x:.{digits}g}"


def _degc(kelvin: float) -> str:
    return f"{kelvin - 273.15:.2f} degC"


# ------------------------------------------------------------------ DSC runs


def _signed_heat_flow(run: CalorimeterRun, exo_down: bool, isothermal: bool) -> np.ndarray:
    """The heat flow with exotherms positive; refuses a run whose main peak points the wrong way."""
    from screening.core.calorimetry_baseline import find_exotherm

    q = -run.heat_flow if exo_down else run.heat_flow
    if isothermal:  # the reaction may run from the start of the hold: the level at its end is the baseline
        end = float(np.median(q[-max(q.size // 10, 1):]))
        up, down = q - end, end - q
    else:
        up = find_exotherm(run.temperature, q).net
        down = find_exotherm(run.temperature, -q).net
    if down.max() > up.max():
        hint = ("--exo-down was given, but after reversing it the main peak is negative: the instrument already "
                "plots exotherms up; leave --exo-down out" if exo_down else
                "the main peak is negative; if the instrument plots exotherms down, give --exo-down; an "
                "endothermic main peak (melting, evaporation) is not a decomposition to fit")
        raise _problem(f"{run.path}: column 'heat_flow'", hint)
    return q


def _isothermal_rise(time, net) -> bool:
    """Whether the heat flow rises during an isothermal hold (after the first 5 % of it): a sign of autocatalysis."""
    n = net.size
    span = max(5, n // 100) | 1
    smooth = np.convolve(net, np.ones(span) / span, mode="same")
    early = max(int(0.05 * n), span)
    if early >= n - span:
        return False
    start_level = float(np.mean(smooth[early:early + span]))
    peak = int(np.argmax(smooth[early:])) + early
    return peak > early + span and smooth[peak] > 1.2 * max(start_level, 0.0) and smooth[peak] > 0


def analyse_dsc(runs: list[CalorimeterRun], options: KineticsOptions) -> dict:
    """Fit DSC runs (scanning or isothermal) and build the result of ``heatscreen kinetics``."""
    from screening.core.calorimetry_baseline import analyse_run
    from screening.core.kinetics_fit import (
        AUTOCATALYTIC,
        NTH_ORDER,
        fit_autocatalytic,
        fit_nth_order,
        flynn_wall_ozawa,
        friedman,
        kissinger,
    )

    if len(runs) < 2:
        raise _problem("runs", f"{len(runs)} run given; expected runs at two or more (better three to five) "
                               f"heating rates or isothermal temperatures: kinetics from one run are not "
                               f"reliable (ICTAC Kinetics Committee recommendations)")
    reduced, fit_inputs, signals, rising = [], [], [], []
    for run in runs:
        if run.heat_flow is None:
            raise _problem(f"{run.path}: column 'heat_flow'", "is missing; expected a heat flow per mass")
        q = _signed_heat_flow(run, options.exo_down, options.isothermal)
        try:
            r = analyse_run(run.time, run.temperature, q, limits=options.limits, isothermal=options.isothermal)
        except ValueError as exc:
            raise _problem(run.path, f"{exc}; check --range and the file's columns") from None
        if not options.isothermal and not r.heating_rate > 0:
            raise _problem(f"{run.path}: column 'temperature'", "does not rise over the exotherm; expected a "
                                                                "scanning run (or give --isothermal)")
        reduced.append(r)
        fit_inputs.append(r.fit_input(run.time, run.temperature, q))
        signals.append(q)
        if options.isothermal:
            w = slice(r.exotherm.start, r.exotherm.stop + 1)
            rising.append(bool(_isothermal_rise(run.time[w], r.exotherm.net[w])))
    notes: list[str] = []
    if not options.isothermal:
        betas = np.array([r.heating_rate for r in reduced])
        if np.ptp(betas) < 0.05 * betas.mean():
            raise _problem("runs", "the runs have the same heating rate; expected runs at two or more different "
                                   "heating rates")
        peaks = np.array([r.peak_temperature for r in reduced])
        kis = kissinger(betas, peaks)
        fwo = flynn_wall_ozawa(betas, peaks)
    else:
        kis = fwo = None
        betas = np.zeros(len(runs))
        peaks = np.array([float(np.mean(r.fit_input(run.time, run.temperature, s).signal_temperature))
                          for r, run, s in zip(reduced, runs, signals)])
    iso = friedman([_smoothed(r) for r in fit_inputs])
    band = [p["activation_energy"] for p in iso if 0.1 - 1e-9 <= p["conversion"] <= 0.9 + 1e-9]
    spread = (max(band) - min(band)) / abs(np.mean(band)) if len(band) >= 2 else None
    complex_mechanism = bool(spread is not None and spread > ISOCONVERSIONAL_SPREAD)
    if complex_mechanism:
        notes.append(f"The isoconversional activation energy changes by {spread:.0%} of its mean over conversion "
                     f"0.1-0.9 (more than {ISOCONVERSIONAL_SPREAD:.0%}): a sign of a complex mechanism (several "
                     f"steps); a single rate law is a simplification (ICTAC Kinetics Committee recommendations, "
                     f"from memory).")
    t_start = 1.0 / float(np.mean(1.0 / peaks))
    fits = {}
    for name, fitter in ((NTH_ORDER, fit_nth_order), (AUTOCATALYTIC, fit_autocatalytic)):
        try:
            f = fitter(fit_inputs, t_start)
        except (ValueError, np.linalg.LinAlgError) as exc:
            raise _problem("runs", f"the {name} model could not be fitted: {exc}") from None
        tref = round(f.uncorrelated_reference(), 2)
        if not (0.5 * t_start < tref < 2.0 * t_start):
            tref = round(t_start, 2)
        fits[name] = f.at_reference(tref)
    tested = _tested_range(fits[NTH_ORDER], fit_inputs)
    choice, reason, tmr = _choose(fits, tested, options, rising)
    fit = fits[choice]
    heats = fit.heats
    k = heats.size
    dh = float(np.mean(heats))
    dh_sd_fit = math.sqrt(max(float(np.ones(k) @ fit.heat_covariance @ np.ones(k)), 0.0)) / k
    dh_sd_runs = float(np.std(heats, ddof=1)) / math.sqrt(k) if k > 1 else 0.0
    dh_sd = max(dh_sd_fit, dh_sd_runs)
    w = options.mass_fraction
    if w != 1.0:
        notes.append(f"The heat of reaction is scaled by the mass fraction {w:g} (the sample is the pure substance, "
                     f"the case holds a mixture); the rate constant is not.")
    if fit.at_bounds:
        notes.append(f"The {choice} fit ended at a bound of {', '.join(fit.at_bounds)}: the interval of that "
                     f"parameter means little.")
    if any(rising):
        notes.append("The heat flow rises during an isothermal hold: a sign of autocatalysis.")
    result = _common_result(fits, choice, fit, dh * w, dh_sd * w, tested, reason, tmr, notes, options)
    result.update({
        "kind": "isothermal" if options.isothermal else "scanning",
        "kissinger_activation_energy_J_per_mol": None if kis is None else kis["activation_energy"],
        "kissinger_activation_energy_standard_error_J_per_mol": None if kis is None else _finite(
            kis["activation_energy_standard_error"]),
        "flynn_wall_ozawa_activation_energy_J_per_mol": None if fwo is None else fwo["activation_energy"],
        "isoconversional": [{"conversion": p["conversion"], "activation_energy_J_per_mol": p["activation_energy"]}
                            for p in iso],
        "isoconversional_spread": spread,
        "complex_mechanism": complex_mechanism,
        "autocatalysis_in_isothermal_hold": any(rising) if options.isothermal else None,
        "runs": [{"file": run.path, "heating_rate_K_per_s": float(b), "peak_temperature_K": float(p),
                  "heat_J_per_kg": float(r.heat), "fitted_heat_J_per_kg": float(h)}
                 for run, b, p, r, h in zip(runs, betas, peaks, reduced, heats)],
        "_plot": {"runs": [run.path for run in runs], "fit_inputs": fit_inputs, "fits": fits,
                  "isothermal": options.isothermal},
    })
    return result


def _smoothed(run):
    """The run with its rate as a moving average over 1 % of its points (the differential method is noisy)."""
    from dataclasses import replace

    span = max(3, run.rate.size // 100) | 1
    return replace(run, rate=np.convolve(run.rate, np.ones(span) / span, mode="same"))


def _finite(x):
    return x if x is not None and math.isfinite(x) else None


def _tested_range(fit, fit_inputs) -> tuple[float, float]:
    """Temperatures over which the fitted conversion of some run is between 2 % and 98 %."""
    from screening.core.kinetics_fit import fitted_heat_flows

    lo, hi = [], []
    for t, temp, _, model in fitted_heat_flows(fit, fit_inputs):
        inc = np.concatenate([[0.0], np.cumsum(0.5 * (model[1:] + model[:-1]) * np.diff(t))])
        if not inc[-1] > 0:
            continue
        conv = inc / inc[-1]
        inside = (conv >= 0.02) & (conv <= 0.98)
        if inside.any():
            lo.append(float(temp[inside].min()))
            hi.append(float(temp[inside].max()))
    return (min(lo), max(hi))


def _tmr_of(fit, dh, cp, temperature):
    """TMRad [s] of a fitted model at a temperature: Townsend-Tou for n-th order (the existing criterion), the
    adiabatic integral for the autocatalytic model."""
    from screening.core.kinetics_fit import NTH_ORDER, autocatalytic_tmr_adiabatic
    from screening.core.model import ArrheniusSource
    from screening.core.runaway import tmr_adiabatic

    k = math.exp(fit.value("ln_rate_constant"))
    e = fit.value("activation_energy")
    if fit.model == NTH_ORDER:
        source = ArrheniusSource(dh * k, fit.reference_temperature, e, order=fit.value("order"),
                                 specific_heat_of_reaction=dh)
        return float(tmr_adiabatic(temperature, cp, [source]))
    return autocatalytic_tmr_adiabatic(temperature, dh / cp, k, fit.reference_temperature, e, fit.value("order"),
                                       fit.value("autocatalytic_order"), math.exp(fit.value("ln_initiation")))


def _choose(fits, tested, options, rising):
    from screening.core.kinetics_fit import AUTOCATALYTIC, NTH_ORDER

    nth, auto = fits[NTH_ORDER], fits[AUTOCATALYTIC]
    delta = nth.aic - auto.aic  # > 0: the autocatalytic model fits better
    t_low = options.temperature_of_interest if options.temperature_of_interest is not None else tested[0]
    cp = options.specific_heat if options.specific_heat is not None else DEFAULT_SPECIFIC_HEAT
    dh = {name: float(np.mean(f.heats)) * options.mass_fraction for name, f in fits.items()}
    tmr = {name: _tmr_of(f, dh[name], cp, t_low) for name, f in fits.items()}
    where = (f"at {_degc(t_low)} ({'the lowest temperature of interest' if options.temperature_of_interest else 'the low end of the tested range; give --temperature-of-interest'}), "
             f"with a specific heat of {cp / 1000:g} kJ/(kg K){'' if options.specific_heat else ' (assumed; give --specific-heat)'}")
    tmr_text = (f"TMRad {tmr[NTH_ORDER] / 3600:.3g} h (n-th order, Townsend-Tou at zero conversion) against "
                f"{tmr[AUTOCATALYTIC] / 3600:.3g} h (autocatalytic, adiabatic integral)")
    if delta >= AIC_DIFFERENCE:
        return AUTOCATALYTIC, (f"The autocatalytic model fits clearly better (AIC lower by {delta:.1f}, at least "
                               f"{AIC_DIFFERENCE:g})."), {"temperature_K": t_low, "specific_heat_J_per_kg_K": cp,
                                                          "nth-order_s": tmr[NTH_ORDER],
                                                          "autocatalytic_s": tmr[AUTOCATALYTIC]}
    if delta <= -AIC_DIFFERENCE and not any(rising):
        return NTH_ORDER, (f"The n-th-order model fits clearly better (AIC lower by {-delta:.1f}, at least "
                           f"{AIC_DIFFERENCE:g})."), {"temperature_K": t_low, "specific_heat_J_per_kg_K": cp,
                                                      "nth-order_s": tmr[NTH_ORDER],
                                                      "autocatalytic_s": tmr[AUTOCATALYTIC]}
    if any(rising) and delta > -AIC_DIFFERENCE:
        choice = AUTOCATALYTIC
        why = ("The heat flow rises during an isothermal hold (autocatalysis) and the information criterion does "
               f"not favour the n-th-order model clearly (AIC difference {delta:.1f}).")
    else:
        choice = NTH_ORDER if tmr[NTH_ORDER] <= tmr[AUTOCATALYTIC] else AUTOCATALYTIC
        why = (f"The information criterion does not separate the models (AIC difference {abs(delta):.1f}, below "
               f"{AIC_DIFFERENCE:g}); the {choice} model is taken because it gives the shorter TMRad {where}: "
               f"{tmr_text}.")
    return choice, why, {"temperature_K": t_low, "specific_heat_J_per_kg_K": cp, "nth-order_s": tmr[NTH_ORDER],
                         "autocatalytic_s": tmr[AUTOCATALYTIC]}


def _fit_summary(fit) -> dict:
    out = {"aic": fit.aic, "points": fit.points, "reference_temperature_K": fit.reference_temperature,
           "parameters": {}}
    for name in fit.names:
        lo, hi = fit.interval(name)
        out["parameters"][name] = {"value": fit.value(name), "standard_error": fit.standard_error(name),
                                   "interval_95": [lo, hi]}
    out["rate_constant_per_s"] = math.exp(fit.value("ln_rate_constant"))
    out["at_bounds"] = list(fit.at_bounds)
    return out


def _common_result(fits, choice, fit, dh, dh_sd, tested, reason, tmr, notes, options) -> dict:
    from screening.core.kinetics_fit import AUTOCATALYTIC, NTH_ORDER

    e_lo, e_hi = fit.interval("activation_energy")
    lk_lo, lk_hi = fit.interval("ln_rate_constant")
    out = {
        "model": choice,
        "activation_energy_J_per_mol": fit.value("activation_energy"),
        "activation_energy_interval_J_per_mol": [e_lo, e_hi],
        "rate_constant_per_s": math.exp(fit.value("ln_rate_constant")),
        "rate_constant_interval_per_s": [math.exp(lk_lo), math.exp(lk_hi)],
        "order": fit.value("order"),
        "order_interval": list(fit.interval("order")),
        "specific_heat_of_reaction_J_per_kg": dh,
        "specific_heat_of_reaction_standard_error_J_per_kg": dh_sd,
        "reference_temperature_K": fit.reference_temperature,
        "tested_range_K": [tested[0], tested[1]],
        "covariance": {"parameters": list(fit.names), "units": [_UNITS[n] for n in fit.names],
                       "matrix": fit.covariance.tolist()},
        "choice_reason": reason,
        "tmr_comparison": tmr,
        "fits": {name: _fit_summary(f) for name, f in fits.items()},
        "aic_difference": fits[NTH_ORDER].aic - fits[AUTOCATALYTIC].aic if len(fits) == 2 else None,
    }
    if choice == AUTOCATALYTIC:
        out["autocatalytic_order"] = fit.value("autocatalytic_order")
        out["autocatalytic_order_interval"] = list(fit.interval("autocatalytic_order"))
        z_lo, z_hi = fit.interval("ln_initiation")
        out["initiation"] = math.exp(fit.value("ln_initiation"))
        out["initiation_interval"] = [math.exp(z_lo), math.exp(z_hi)]
    source, uncertainty, block_notes = source_and_uncertainty(fit, dh, dh_sd, tested, options)
    out["source"] = source
    out["uncertainty"] = uncertainty
    out["gas_generating_note"] = GAS_NOTE
    out["uncertainty_note"] = FIT_ONLY_NOTE
    out["notes"] = notes + block_notes
    return out


_UNITS = {"ln_rate_constant": "ln(1/s)", "activation_energy": "J/mol", "order": "1", "autocatalytic_order": "1",
          "ln_initiation": "ln(1)"}


# ------------------------------------------------------------------ the source block and its uncertainty


def _conditional(cov: np.ndarray, keep: list[int]) -> np.ndarray:
    """Covariance of the kept parameters given the others at their fitted values (Schur complement)."""
    rest = [i for i in range(cov.shape[0]) if i not in keep]
    a = cov[np.ix_(keep, keep)]
    if not rest:
        return a
    b = cov[np.ix_(keep, rest)]
    c = cov[np.ix_(rest, rest)]
    return a - b @ np.linalg.pinv(c) @ b.T


def source_and_uncertainty(fit, dh, dh_sd, tested, options, label: str | None = None, extra_notes=()):
    """The heat-source block (a mapping with quantities as text) and the ``uncertainty`` entries for it."""
    from screening.core.kinetics_fit import AUTOCATALYTIC

    n = options.source_index
    k = math.exp(fit.value("ln_rate_constant"))
    e = fit.value("activation_energy")
    label = options.label or label or "decomposition (fitted by heatscreen kinetics)"
    tested_text = [_degc(tested[0]), _degc(tested[1])]
    notes = list(extra_notes)
    names = list(fit.names)
    keep = [names.index("ln_rate_constant"), names.index("activation_energy")]
    cov = _conditional(fit.covariance, keep)  # the orders (and z) are held at their fitted values
    held = [x for x in names if x not in ("ln_rate_constant", "activation_energy")]
    if fit.model == AUTOCATALYTIC:
        source = {"kind": "autocatalytic", "label": label, "role": "decomposition",
                  "rate_constant": f"{_g(k)} 1/s", "reference_temperature": _degc(fit.reference_temperature),
                  "activation_energy": f"{_g(e / 1000)} kJ/mol", "order": float(_g(fit.value("order"), 4)),
                  "autocatalytic_order": float(_g(fit.value("autocatalytic_order"), 4)),
                  "initiation": float(_g(math.exp(fit.value("ln_initiation")), 4)),
                  "specific_heat_of_reaction": f"{_g(dh / 1000)} kJ/kg", "gas_generating": True,
                  "tested_range": tested_text}
        rate_path = f"heat_sources.{n}.rate_constant"
        var_ln_rate = cov[0, 0]
        cov_rate_e = cov[0, 1]
        cov_rate_dh = 0.0
    else:
        source = {"kind": "arrhenius", "label": label, "role": "decomposition",
                  "specific_power": f"{_g(dh * k)} W/kg", "reference_temperature": _degc(fit.reference_temperature),
                  "activation_energy": f"{_g(e / 1000)} kJ/mol", "order": float(_g(fit.value("order"), 4)),
                  "specific_heat_of_reaction": f"{_g(dh / 1000)} kJ/kg", "gas_generating": True,
                  "tested_range": tested_text}
        rate_path = f"heat_sources.{n}.specific_power"
        # ln q = ln k + ln dh, with dh from the runs' heats (independent of the rate law's parameters)
        rel = dh_sd / dh if dh > 0 else 0.0
        var_ln_rate = cov[0, 0] + rel ** 2
        cov_rate_e = cov[0, 1]
        cov_rate_dh = rel * 1.0  # cov(ln q, dh) = var(dh) / dh; as a correlation: rel / sd(ln q)
    sd_ln = math.sqrt(max(var_ln_rate, 0.0))
    sd_e = math.sqrt(max(cov[1, 1], 0.0))
    inputs = {rate_path: {"distribution": "lognormal", "gsd": float(_g(math.exp(sd_ln), 6))},
              f"heat_sources.{n}.activation_energy": {"distribution": "normal", "sd": f"{_g(sd_e / 1000, 4)} kJ/mol"}}
    order = [rate_path, f"heat_sources.{n}.activation_energy"]
    corr = np.eye(3 if dh_sd > 0 else 2)
    corr[0, 1] = corr[1, 0] = cov_rate_e / (sd_ln * sd_e) if sd_ln > 0 and sd_e > 0 else 0.0
    if dh_sd > 0:
        inputs[f"heat_sources.{n}.specific_heat_of_reaction"] = {"distribution": "normal",
                                                                 "sd": f"{_g(dh_sd / 1000, 4)} kJ/kg"}
        order.append(f"heat_sources.{n}.specific_heat_of_reaction")
        corr[0, 2] = corr[2, 0] = (cov_rate_dh * dh_sd / dh) / (sd_ln * (dh_sd / dh)) if sd_ln > 0 else 0.0
    corr = np.round(corr, 4)
    while np.linalg.eigvalsh(corr).min() < 0:  # rounding may leave a nearly singular matrix just indefinite
        off = corr - np.eye(corr.shape[0])
        corr = np.round(np.eye(corr.shape[0]) + 0.999 * off, 4)
    uncertainty = {"inputs": inputs,
                   "correlation": {"inputs": order, "matrix": [[float(v) for v in row] for row in corr]}}
    if held:
        notes.append(f"{', '.join(held)} {'is' if len(held) == 1 else 'are'} held at the fitted value in Monte "
                     f"Carlo (plain numbers in the case); the rate constant's and activation energy's spreads are "
                     f"those given {'it' if len(held) == 1 else 'them'} (conditional covariance).")
    return source, uncertainty, notes


def source_yaml(result: dict) -> str:
    """The text of ``--source-out``: the heat-source block and the uncertainty entries, as YAML to paste."""
    import yaml

    src = yaml.safe_dump([result["source"]], sort_keys=False, allow_unicode=True, default_flow_style=None)
    src = "\n".join(("  " + line) if line else line for line in src.splitlines())
    src = src.replace("gas_generating: true", f"gas_generating: true  # {GAS_NOTE}")
    unc = yaml.safe_dump({"uncertainty": result["uncertainty"]}, sort_keys=False, default_flow_style=None)
    unc_lines = unc.splitlines()
    header = [
        "# Heat source fitted by `heatscreen kinetics`: paste the item under the case's heat_sources, and the",
        "# uncertainty entries under its top-level uncertainty block (merge with any inputs it already has;",
        "# the paths assume this source is heat_sources."
        f"{result['uncertainty']['correlation']['inputs'][0].split('.')[1]}).",
        f"# Model: {result['model']}. {result['choice_reason']}",
        f"# {FIT_ONLY_NOTE}",
    ]
    for note in result.get("notes", []):
        header.append(f"# Note: {note}")
    wrapped = []
    for line in header:
        while len(line) > 110:
            cut = line.rfind(" ", 0, 110)
            cut = cut if cut > 2 else 110
            wrapped.append(line[:cut])
            line = "# " + line[cut:].lstrip()
        wrapped.append(line)
    return "\n".join(wrapped + ["heat_sources:", src, *unc_lines]) + "\n"


# ------------------------------------------------------------------ adiabatic runs


def analyse_adiabatic(run: CalorimeterRun, options: KineticsOptions) -> dict:
    """Kinetics from one adiabatic run: phi correction, self-heat-rate fit, source block."""
    from screening.core.thermal_inertia import (
        PHI_CORRECTION_SOURCE,
        fit_self_heat_rate,
        onset_index,
        phi_corrected,
        phi_factor,
    )

    phi = options.phi
    if phi is None:
        given = (options.sample_mass, options.sample_specific_heat, options.cell_mass, options.cell_specific_heat)
        if any(v is None for v in given):
            raise _problem("--phi", "give the thermal-inertia factor (--phi 1.6), or --sample-mass, "
                                    "--sample-specific-heat, --cell-mass and --cell-specific-heat to compute it")
        phi = phi_factor(*given)
    if not (math.isfinite(phi) and phi >= 1.0):
        raise _problem("--phi", f"{phi:g} is below 1; expected the thermal-inertia factor, 1 or more")
    if options.sample_specific_heat is None:
        raise _problem("--sample-specific-heat", "is needed to turn the adiabatic temperature rise into a heat of "
                                                 "reaction (e.g. '2 kJ/(kg*K)')")
    t, temp = run.time, run.temperature
    rate = run.self_heat_rate if run.self_heat_rate is not None else np.gradient(temp, t)
    i0 = onset_index(rate, options.onset_threshold)
    peak = int(np.nanargmax(rate))
    if peak - i0 < 5:
        raise _problem(f"{run.path}: column 'temperature'", "shows no self-heating above the onset threshold; "
                                                             "expected the exotherm of an adiabatic run")
    t0 = float(temp[i0])
    tf = float(np.max(temp))
    try:
        sh = fit_self_heat_rate(temp[i0:], rate[i0:], t0, tf)
    except ValueError as exc:
        raise _problem(run.path, str(exc)) from None
    onset_corr, t_corr, r_corr = phi_corrected(temp[i0:], rate[i0:], t0, phi, sh.activation_energy)
    rise_meas = tf - t0
    rise_ad = phi * rise_meas
    dh = options.sample_specific_heat * rise_ad
    conv = (temp[i0:] - t0) / rise_meas
    inside = (conv >= 0.02) & (conv <= 0.9)
    tested = (float(temp[i0:][inside].min()), float(temp[i0:][inside].max()))
    notes = [ONSET_NOTE]
    if sh.linear_fails:
        notes.append(f"The n-th-order linearisation does not straighten the self-heat rate (best order "
                     f"{sh.order:g}, R^2 = {sh.r_squared:.4f}): a sign of autocatalysis. The n-th-order block "
                     f"below then understates the rate after an induction period: not conservative; test "
                     f"isothermally.")
    from screening.core.kinetics_fit import NTH_ORDER, KineticFit

    cov = np.diag([sh.ln_rate_constant_standard_error ** 2, sh.activation_energy_standard_error ** 2, 0.0])
    fit = KineticFit(NTH_ORDER, ("ln_rate_constant", "activation_energy", "order"),
                     np.array([math.log(sh.rate_constant), sh.activation_energy, sh.order]), cov,
                     sh.reference_temperature, sh.points, 0.0)
    fit = fit.at_reference(round(fit.uncorrelated_reference(), 2))
    w = options.mass_fraction
    reason = ("One adiabatic run: n-th-order kinetics from the self-heat rate (Townsend and Tou 1980)"
              + ("; the linearisation fails (see the notes)." if sh.linear_fails else "."))
    result = _common_result({NTH_ORDER: fit}, NTH_ORDER, fit, dh * w, 0.0, tested, reason, None, notes, options)
    result["fits"][NTH_ORDER]["aic"] = None
    result["order_interval"] = None
    result["source"]["order"] = float(_g(sh.order, 4))
    if sh.linear_fails:
        result["source"]["label"] = result["source"]["label"] + " (n-th order; data suggest autocatalysis)"
    result.update({
        "kind": "adiabatic",
        "kissinger_activation_energy_J_per_mol": None,
        "flynn_wall_ozawa_activation_energy_J_per_mol": None,
        "isoconversional": [],
        "phi": phi,
        "phi_correction": PHI_CORRECTION_SOURCE,
        "onset_temperature_measured_K": t0,
        "onset_temperature_corrected_K": onset_corr,
        "onset_threshold_K_per_s": options.onset_threshold,
        "onset_note": ONSET_NOTE,
        "temperature_rise_measured_K": rise_meas,
        "adiabatic_temperature_rise_K": rise_ad,
        "maximum_self_heat_rate_corrected_K_per_s": float(np.max(r_corr)),
        "self_heat_rate_r_squared": sh.r_squared,
        "nth_order_linearisation_fails": sh.linear_fails,
        "runs": [{"file": run.path}],
        "_plot": {"adiabatic": True, "temperature": temp[i0:], "rate": rate[i0:], "temperature_corrected": t_corr,
                  "rate_corrected": r_corr, "fit": fit, "onset": t0, "final": tf, "file": run.path},
    })
    result["notes"].append("Only the fit's spread of the rate constant and activation energy is carried; the "
                           "heat of reaction's uncertainty from one run is unknown (not sampled).")
    return result
