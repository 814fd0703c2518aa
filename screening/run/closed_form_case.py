"""Screen a closed-form case: history, limits, boiling, warnings -> the core of a result.

For constant and decaying sources, fire and heating media the lumped balance is linear
in T and has an exact solution (:mod:`screening.core.closed_form_history`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.case.prepare import PreparedCase
from screening.core.closed_form_history import balance_of, heat_rates, temperature
from screening.core.daily_cycle import mean_rise
from screening.core.model import ScreeningModel
from screening.core.root_finding import brent_root as brentq
from screening.core.terms import constant_power, model_start_temperature, model_terms
from screening.core.time_to_limit import first_crossing, history_shape
from screening.result import HISTORY_POINTS
from screening.run.recovery import detection_and_recovery
from screening.run.daily_cycle import climbing_peaks_warning
from screening.run.warnings import (
    ADIABATIC_WARNING,
    _fmt_temp,
    _hours,
    limit_at_start_warning,
    short_horizon_warning,
    still_rising_warning,
)


@dataclass
class ClosedFormValues:
    """What the time-to-limit solver gives for one closed-form case (from either engine).

    limit_times : first time to each model limit, s (None: not reached within the horizon)
    boil_time : first time to the boiling point, s, or None
    alarm_time : first time to the alarm temperature, s, or None
    peak : (temperature K, time s) within the horizon
    end_temperature, end_rate : K and K/s at the horizon
    adiabatic_limit_times : the same limits with UA = 0
    """

    limit_times: list
    boil_time: float | None
    alarm_time: float | None
    peak: tuple
    end_temperature: float
    end_rate: float
    adiabatic_limit_times: list


def closed_form_values(prepared: PreparedCase) -> ClosedFormValues:
    """Scalar engine: turning points, peak and first crossings for one case."""
    model = prepared.model
    H = model.horizon
    balance = balance_of(model)
    shape = history_shape(balance, H)
    times = [first_crossing(balance, lim.temperature, H, shape) for lim in model.limits]
    boil = first_crossing(balance, model.boiling.boiling_point, H, shape) if model.boiling is not None else None
    alarm = (first_crossing(balance, prepared.detection_alarm, H, shape)
             if prepared.detection_alarm is not None else None)
    ad = balance_of(model, ua=0.0)
    ad_shape = history_shape(ad, H)
    ad_times = [first_crossing(ad, lim.temperature, H, ad_shape) for lim in model.limits]
    return ClosedFormValues(times, boil, alarm, (shape.peak_temperature, shape.peak_time), shape.end_temperature,
                            shape.end_rate, ad_times)


def screen_closed_form(prepared: PreparedCase, values: ClosedFormValues | None = None,
                       with_history: bool = True) -> dict:
    """Result for a case whose sources are constant, decaying, fire or heating media.

    ``values`` may come from the vectorised engine (registers); by default the
    scalar engine computes them.
    """
    model = prepared.model
    unit = prepared.display_temperature_unit
    warnings: list[str] = []
    H = model.horizon
    needs_balance = values is None or with_history or model.boiling is not None or prepared.recovery is not None
    balance = balance_of(model) if needs_balance else None
    if values is None:
        values = closed_form_values(prepared)
    G, steady = _conductance_and_steady(model)
    C = model.heat_capacity
    tau = C / G if G > 0 and math.isfinite(C / G) else None

    boiling_result = None
    boil = model.boiling
    boil_credit = boil is not None and boil.venting == "open"
    t_boil = values.boil_time
    limit_rows = []
    for lim, t in zip(model.limits, values.limit_times):
        if boil_credit and t_boil is not None and lim.temperature > boil.boiling_point:
            t = None  # held at the boiling point while liquid remains
        limit_rows.append({"name": lim.name, "temperature_K": lim.temperature, "time_s": t, "reached": t is not None})
        if t == 0.0:
            warnings.append(limit_at_start_warning(lim.name, lim.temperature, model_start_temperature(model), unit))
    peak_T, peak_t = values.peak
    end_rate = values.end_rate
    if boil is not None:
        boiling_result, boil_warnings, boil_peak = boiling_closed_form(model, balance, t_boil, boil_credit, unit)
        warnings.extend(boil_warnings)
        if boil_peak is not None:
            peak_T, peak_t = boil_peak
            end_rate = 0.0 if boiling_result.get("_boiling_at_end") else end_rate
        boiling_result.pop("_boiling_at_end", None)
        if boil_credit and t_boil is not None:
            for lim in model.limits:
                if lim.temperature > boil.boiling_point:
                    warnings.append(f"Limit '{lim.name}' ({_fmt_temp(lim.temperature, unit)}) lies above the boiling "
                                    f"point ({_fmt_temp(boil.boiling_point, unit)}): it is not reached while liquid "
                                    f"remains, on credit for boiling in an open vessel. That credit is not "
                                    f"conservative if the vent is undersized or blocked.")

    # adiabatic bound (UA = 0; heating media stay on)
    adiabatic = {
        "limits": [{"name": lim.name, "time_s": t} for lim, t in zip(model.limits, values.adiabatic_limit_times)],
        "temperature_rise_K": sum(s.power * s.time_constant for s in model.decaying_sources) / C,
    }

    if tau is not None and H < tau:
        warnings.append(short_horizon_warning(H, tau))
    if model.daily_cycle is not None and G > 0:  # rising or falling at the horizon is the time of day
        if any(not r["reached"] for r in limit_rows):
            climbing = climbing_peaks_warning(model, balance if balance is not None else balance_of(model), peak_T,
                                              unit)
            if climbing:
                warnings.append(climbing)
    elif end_rate > 0 and any(not r["reached"] for r in limit_rows):
        warnings.append(still_rising_warning(values.end_temperature, end_rate, steady, unit))
    if G == 0:
        warnings.append(ADIABATIC_WARNING)

    result = {
        "time_constant_s": tau,
        "peak_temperature_K": peak_T,
        "peak_time_s": peak_t,
        "steady_temperature_K": steady,
        "limits": limit_rows,
        "adiabatic": adiabatic,
        "boiling": boiling_result,
        "warnings": warnings,
        "method": "closed-form",
    }
    detection_and_recovery(prepared, result, balance=balance, alarm_time=values.alarm_time)
    if with_history:
        shape = history_shape(balance, H)
        result["_history"] = closed_form_history_arrays(model, balance, H, shape, limit_rows,
                                                        t_boil if boil_credit else None)
    return result


def _conductance_and_steady(model: ScreeningModel) -> tuple[float, float | None]:
    """G = UA + sum of media ua (W/K) and the settling temperature (K, or None), in plain floats.

    Same formulas as :func:`screening.core.closed_form_history.steady_temperature`: Q0 / G with heat loss;
    T0 + sum P_i a_i / C when adiabatic with no constant drive; None otherwise.
    """
    terms = model_terms(model)
    G, Q0 = terms.conductance, terms.drive
    if model.daily_cycle is not None and G > 0:  # the daily mean of the periodic state (the sun's mean drive)
        Q0 = Q0 + model.ua * mean_rise(model.daily_cycle)
    if G > 0:
        steady = Q0 / G
        return G, steady if math.isfinite(steady) else None
    if Q0 == 0:
        return G, model_start_temperature(model) + sum(s.power * s.time_constant for s in model.decaying_sources) / \
            model.heat_capacity
    return G, None


def closed_form_history_arrays(model, balance, H, shape, limit_rows, t_boil=None) -> dict:
    times = np.linspace(0.0, H, HISTORY_POINTS)
    extra = [r["time_s"] for r in limit_rows if r["time_s"] is not None] + list(shape.turning_times)
    times = np.unique(np.concatenate([times, np.array(extra, dtype=float)]))
    temps = temperature(balance, times)
    if t_boil is not None:
        temps = np.where(times >= t_boil, np.minimum(temps, model.boiling.boiling_point), temps)
    gen, loss = heat_rates(model, times, temps)
    return {"time_s": times.tolist(), "temperature_K": temps.tolist(), "generation_W": gen.tolist(),
            "loss_W": loss.tolist()}


def boiling_closed_form(model, balance, t_boil, credit, unit):
    """Boiling phase of a closed-form case.

    With credit (open vessel) the contents hold at the boiling point while the
    net heat input N(t) = P0 + sum P_i exp(-t/a_i) + sum ua_k (Tm_k - Tb) - UA (Tb - Ta)
    is positive; N falls with time, so boiling runs from t_boil until N = 0
    or the contents are dry.  Vapour rate N / latent heat.
    """
    boil = model.boiling
    warnings = ["Vent and relief sizing are out of scope: the boil-off figures are not a vent or relief-sizing "
                "calculation; use the applicable standard."]
    H = model.horizon
    res = {"time_to_boil_s": t_boil, "peak_boil_off_kg_per_s": None, "boiled_off_kg": None, "time_to_dry_s": None,
           "_boiling_at_end": False}
    if not credit:
        if t_boil is not None:
            warnings.append("The vessel is closed (vessel.venting: closed): no credit is taken for boiling; the "
                            "temperature and pressure keep rising past the boiling point. The tool does not model "
                            "pressure.")
        return res, warnings, None
    warnings.append("Boiling credit assumes an open or adequately vented vessel whose vapour leaves at a known "
                    "pressure; for a mixture the boiling point climbs as the light component leaves, so the "
                    "credit is not conservative for mixtures.")
    if t_boil is None:
        res["boiled_off_kg"] = 0.0
        return res, warnings, None
    Tb, L = boil.boiling_point, boil.latent_heat
    p_const = constant_power(model)
    steady_net = p_const + sum(h.ua * (h.medium_temperature - Tb) for h in model.heating_media) - model.ua * (Tb - model.ambient_temperature)

    def net(t):
        return steady_net + sum(s.power * math.exp(-t / s.time_constant) for s in model.decaying_sources)

    def boiled(t1, t2):
        e = steady_net * (t2 - t1) + sum(s.power * s.time_constant * (math.exp(-t1 / s.time_constant)
                                                                       - math.exp(-t2 / s.time_constant))
                                         for s in model.decaying_sources)
        return e / L

    n0 = net(t_boil)
    if n0 <= 0:
        res.update(peak_boil_off_kg_per_s=0.0, boiled_off_kg=0.0)
        return res, warnings, (Tb, t_boil)
    t_stop = H
    if net(H) < 0:
        t_stop = brentq(net, t_boil, H, xtol=1e-12 * H, rtol=1e-15)
    mass = model.contents_mass
    t_dry = None
    if boiled(t_boil, t_stop) >= mass:
        t_dry = brentq(lambda t: boiled(t_boil, t) - mass, t_boil, t_stop, xtol=1e-12 * H, rtol=1e-15)
        t_stop = t_dry
        warnings.append(f"The contents boil dry at {_hours(t_dry)}; the tool does not follow the temperature after that.")
    res.update(peak_boil_off_kg_per_s=n0 / L, boiled_off_kg=boiled(t_boil, t_stop), time_to_dry_s=t_dry)
    res["_boiling_at_end"] = t_stop >= H
    return res, warnings, (Tb, t_boil)
