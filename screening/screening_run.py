"""Screen one prepared case: history, limits, criteria, warnings -> a result dict.

This module joins the physics core (closed form or numeric history, runaway
criteria) to the result object that ``heatscreen check --json`` prints.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import __version__
from .case_to_model import PreparedCase
from .closed_form_history import LinearBalance, linear_balance, temperature
from .model import ScreeningModel
from .time_to_limit import first_crossing, history_shape
from .units import kelvin_to

HISTORY_POINTS = 401
BIOT_LIMIT = 0.1  # Incropera et al., ch. 5 (common practice)

STIRRED_ASSUMPTION = ("Contents are treated as well mixed (stirred): one temperature for the whole mass. A Biot "
                      "number from molecular conductivity has no meaning for a stirred liquid, so none is given.")


def balance_of(model: ScreeningModel, ua: float | None = None, initial_temperature: float | None = None,
               time_shift: float = 0.0, extra_media: tuple = ()) -> LinearBalance:
    """The linear balance of a model's constant, decaying, fire and medium terms.

    ``time_shift`` starts the clock later (decaying sources have decayed by
    exp(-shift / a)); ``extra_media`` adds (temperature, ua) pairs such as restored cooling.
    """
    p_const = sum(s.power for s in model.constant_sources) + sum(f.power for f in model.fire_sources)
    powers = [s.power * math.exp(-time_shift / s.time_constant) for s in model.decaying_sources]
    taus = [s.time_constant for s in model.decaying_sources]
    media_ua = [h.ua for h in model.heating_media] + [u for _, u in extra_media]
    media_t = [h.medium_temperature for h in model.heating_media] + [t for t, _ in extra_media]
    return linear_balance(model.heat_capacity, model.ua if ua is None else ua, model.ambient_temperature,
                          model.initial_temperature if initial_temperature is None else initial_temperature,
                          p_const, powers, taus, media_ua, media_t)


def heat_rates(model: ScreeningModel, t, temp, extra_media: tuple = (), time_shift: float = 0.0):
    """(heat input, heat loss to ambient) in W at times t and temperatures temp.

    Heat input counts constant, decaying and fire sources and heating media
    (a medium colder than the contents counts as negative input).
    """
    t = np.asarray(t, dtype=float)
    temp = np.asarray(temp, dtype=float)
    gen = np.full(t.shape, sum(s.power for s in model.constant_sources) + sum(f.power for f in model.fire_sources))
    for s in model.decaying_sources:
        gen = gen + s.power * np.exp(-(t + time_shift) / s.time_constant)
    for h in model.heating_media:
        gen = gen + h.ua * (h.medium_temperature - temp)
    for tm, u in extra_media:
        gen = gen + u * (tm - temp)
    loss = model.ua * (temp - model.ambient_temperature)
    return gen, loss


def _fmt_temp(k: float, unit: str) -> str:
    sym = {"degC": "°C", "degF": "°F", "K": "K", "degR": "°R"}[unit]
    return f"{kelvin_to(k, unit):.1f} {sym}"


def _hours(s: float) -> str:
    return f"{s / 3600:.3g} h"


# Warnings of a closed-form result (also used by the columnar register path, which decides per row
# when each applies by the same conditions as screen_closed_form and detection_and_recovery).
ADIABATIC_WARNING = "No heat loss and no heating medium (UA = 0): the vessel is treated as adiabatic."


def limit_at_start_warning(name: str, temperature: float, initial_temperature: float, unit: str) -> str:
    return (f"Limit '{name}' ({_fmt_temp(temperature, unit)}) is already reached at the start: "
            f"the initial temperature is {_fmt_temp(initial_temperature, unit)}.")


def short_horizon_warning(horizon: float, tau: float) -> str:
    return (f"The horizon ({_hours(horizon)}) is shorter than the vessel's time constant ({_hours(tau)}): the "
            f"temperature is still far from where it settles. Extend the horizon to see the whole response.")


def still_rising_warning(end_temperature: float, end_rate: float, steady: float | None, unit: str) -> str:
    where = f"; it settles at {_fmt_temp(steady, unit)}" if steady is not None else "; it has no steady state"
    return (f"The temperature is still rising at the end of the horizon ({_fmt_temp(end_temperature, unit)}, "
            f"{end_rate * 3600:.3g} K/h){where}. A limit not reached within the horizon may be reached later.")


def response_beyond_horizon_warning(horizon: float) -> str:
    return f"The horizon ({_hours(horizon)}) ends before detection plus response time: extend it."


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
    T0 = model.initial_temperature

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
            warnings.append(limit_at_start_warning(lim.name, lim.temperature, T0, unit))
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
    if end_rate > 0 and any(not r["reached"] for r in limit_rows):
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

    Same formulas as :func:`screening.closed_form_history.steady_temperature`: Q0 / G with heat loss;
    T0 + sum P_i a_i / C when adiabatic with no constant drive; None otherwise.
    """
    G = model.ua + sum(h.ua for h in model.heating_media)
    Q0 = (model.ua * model.ambient_temperature + sum(h.ua * h.medium_temperature for h in model.heating_media)
          + sum(s.power for s in model.constant_sources) + sum(f.power for f in model.fire_sources))
    if G > 0:
        steady = Q0 / G
        return G, steady if math.isfinite(steady) else None
    if Q0 == 0:
        return G, model.initial_temperature + sum(s.power * s.time_constant for s in model.decaying_sources) / \
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
    from .root_finding import brent_root as brentq

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
    p_const = sum(s.power for s in model.constant_sources) + sum(f.power for f in model.fire_sources)
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


def detection_and_recovery(prepared: PreparedCase, result: dict, balance=None, alarm_time=None) -> None:
    """Detection time, margins, and the recovery path (closed-form cases)."""
    model = prepared.model
    H = model.horizon
    detection = 0.0
    if prepared.detection_delay is not None:
        detection = prepared.detection_delay
    elif prepared.detection_alarm is not None:
        detection = alarm_time
        if detection is None:
            result["warnings"].append("The alarm temperature is not reached within the horizon: the alarm never "
                                      "sounds, so detection relies on something else.")
    result["detection_time_s"] = detection
    result["response_time_s"] = prepared.response_time
    for row in result["limits"]:
        if row["time_s"] is not None and prepared.response_time is not None and detection is not None:
            row["margin_s"] = row["time_s"] - (detection + prepared.response_time)
        else:
            row["margin_s"] = None
    if prepared.response_time is not None and model.horizon < prepared.response_time + (detection or 0.0):
        result["warnings"].append(response_beyond_horizon_warning(H))
    result["recovery"] = None
    if prepared.recovery is None or prepared.response_time is None or detection is None or balance is None:
        return
    start = detection + prepared.response_time
    tm, ua_r = prepared.recovery
    if start >= H:
        result["recovery"] = {"start_s": start, "peak_temperature_K": None, "peak_time_s": None,
                              "limits_reached": [r["name"] for r in result["limits"] if r["reached"]],
                              "past_no_return": None}
        return
    T_start = float(temperature(balance, start))
    rec = balance_of(model, initial_temperature=T_start, time_shift=start, extra_media=((tm, ua_r),))
    rshape = history_shape(rec, H - start)
    reached = []
    for row, lim in zip(result["limits"], model.limits):
        if row["time_s"] is not None and row["time_s"] <= start:
            reached.append(lim.name)
        elif first_crossing(rec, lim.temperature, H - start, rshape) is not None:
            reached.append(lim.name)
    peak_T, peak_t = (rshape.peak_temperature, start + rshape.peak_time)
    pre = history_shape(balance, start)
    if pre.peak_temperature > peak_T:
        peak_T, peak_t = pre.peak_temperature, pre.peak_time
    times = np.linspace(0.0, H, HISTORY_POINTS)
    temps = np.where(times <= start, temperature(balance, np.minimum(times, start)),
                     temperature(rec, np.maximum(times - start, 0.0)))
    result["recovery"] = {"start_s": start, "peak_temperature_K": peak_T, "peak_time_s": peak_t,
                          "limits_reached": reached, "past_no_return": None}
    result["_recovery_history"] = {"time_s": times.tolist(), "temperature_K": temps.tolist()}


def biot_and_validity(prepared: PreparedCase, result: dict) -> None:
    model = prepared.model
    result["mixing"] = model.mixing
    result["biot_number"] = None
    result.setdefault("assumptions", [])
    if model.mixing == "stirred":
        result["assumptions"].append(STIRRED_ASSUMPTION)
        return
    h = model.surface_coefficient
    k = model.thermal_conductivity
    lc = model.characteristic_length
    if k is None or h is None or lc is None:
        missing = [n for n, v in (("contents.thermal_conductivity", k), ("a heat-loss coefficient or vessel area", h),
                                  ("the contents volume and wetted area", lc)) if v is None]
        result["warnings"].append("Unstirred contents: the Biot number cannot be computed (missing "
                                  + ", ".join(missing) + "), so the lumped model's validity is unknown. Treat the "
                                  "result as optimistic: the centre of an unstirred mass runs hotter than its average.")
        return
    bi = h * lc / k
    result["biot_number"] = bi
    if bi > BIOT_LIMIT:
        result["warnings"].append(f"Unstirred contents with Biot number {bi:.3g} (> {BIOT_LIMIT}): the lumped "
                                  f"(single temperature) model is not valid; the centre runs hotter than the lumped "
                                  f"temperature. Use a conduction analysis (Frank-Kamenetskii) instead.")
    else:
        result["assumptions"].append(f"Unstirred contents with Biot number {bi:.3g} (<= {BIOT_LIMIT}): the lumped "
                                     f"model is acceptable by the usual criterion (Incropera et al., ch. 5).")


def screen_prepared(prepared: PreparedCase, input_hash: str | None = None,
                    values: ClosedFormValues | None = None, with_history: bool = True) -> dict:
    """Full result dict for one prepared case (without a verdict).

    ``values`` (closed-form cases only) are engine results computed elsewhere,
    e.g. by the vectorised engine for a register.
    """
    model = prepared.model
    if model.arrhenius_sources:
        from .runaway_screening import screen_with_arrhenius

        core = screen_with_arrhenius(prepared)
    else:
        core = screen_closed_form(prepared, values, with_history=with_history)
    spec = prepared.spec
    result = {
        "id": spec.id,
        "title": spec.title,
        **{k: v for k, v in core.items() if not k.startswith("_")},
    }
    result["warnings"] = list(prepared.warnings) + core["warnings"]
    result.update(
        initial_temperature_K=model.initial_temperature,
        ambient_temperature_K=model.ambient_temperature,
        horizon_s=model.horizon,
        heat_capacity_J_per_K=model.heat_capacity,
        ua_W_per_K=model.ua,
        limit_exceeded_at_start=any(r["time_s"] == 0.0 for r in core["limits"]),
    )
    for key in ("tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K",
                "critical_ambient_method", "critical_temperature_K", "no_return_temperature_K",
                "adiabatic_temperature_rise_K", "mtsr_K", "criticality_class"):
        result.setdefault(key, None)
    result["maximum_technical_temperature_K"] = model.maximum_technical_temperature
    biot_and_validity(prepared, result)
    if model.fire_sources:
        from .fire_exposure import FIRE_CAUTIONS

        result["fire"] = [{"power_W": f.power, "wetted_area_m2": f.wetted_area, "environment_factor": f.environment_factor,
                           "drainage_and_firefighting": f.drainage_and_firefighting} for f in model.fire_sources]
        result["warnings"].extend(c for c in FIRE_CAUTIONS if c not in result["warnings"])
    result["geometry"] = prepared.geometry or None
    result["inputs"] = prepared.inputs
    result["units"] = {"temperature": prepared.display_temperature_unit}
    meta = spec.meta
    result["meta"] = {"prepared_by": meta.prepared_by if meta else None, "prepared_for": meta.prepared_for if meta else None,
                      "revision": meta.revision if meta else None, "notes": meta.notes if meta else None}
    result["tool_version"] = __version__
    result["input_hash"] = input_hash
    if core.get("_history") is not None:
        result["_history"] = core["_history"]
    if prepared.uncertainty_plan is not None:
        from .uncertainty import analyse

        unc = analyse(prepared, prepared.uncertainty_plan)
        result["_uncertainty_cdf"] = unc.pop("_cdf", None)
        result["uncertainty"] = unc
    else:
        result["uncertainty"] = None
    if "_recovery_history" in core:
        result["_recovery_history"] = core["_recovery_history"]
    if "_heat_balance" in core:
        result["_heat_balance"] = core["_heat_balance"]
    return result


def public_result(result: dict) -> dict:
    """The JSON object: without the plotting arrays."""
    return {k: v for k, v in result.items() if not k.startswith("_")}


def finite_or_null(obj):
    """A copy with every non-finite float replaced by None (JSON has no inf or NaN)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: finite_or_null(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite_or_null(v) for v in obj]
    return obj


def memo_view(result: dict) -> dict:
    """The object the memo writer takes: JSON keys plus history, heat balance, recovery path."""
    out = public_result(result)
    if result.get("_history") is not None:
        out["history"] = result["_history"]
    if result.get("_heat_balance") is not None:
        out["heat_balance"] = result["_heat_balance"]
    if result.get("_recovery_history") is not None:
        out["recovery_history"] = result["_recovery_history"]
    if result.get("_uncertainty_cdf") is not None:
        out["uncertainty_cdf"] = result["_uncertainty_cdf"]
    return out
