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
from screening.core.root_finding import brent_root as brentq
from screening.core.terms import constant_power
from screening.core.time_to_limit import first_crossing, history_shape
from screening.result import HISTORY_POINTS
from screening.run.closed_form_group import ClosedFormGroup, ClosedFormWriter, GroupValues
from screening.run.daily_cycle import climbing_peaks_warning
from screening.run.recovery import recovery_path
from screening.run.warnings import _hours


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
    scalar engine computes them. The keys are written by
    :class:`screening.run.closed_form_group.ClosedFormWriter` for a group of one, the writer a
    register group of rows uses.
    """
    model = prepared.model
    unit = prepared.display_temperature_unit
    H = model.horizon
    needs_balance = values is None or with_history or model.boiling is not None or prepared.recovery is not None
    balance = balance_of(model) if needs_balance else None
    if values is None:
        values = closed_form_values(prepared)
    boiling = cycle_peaks = None
    if model.boiling is not None:
        def boiling(r, t_boil, credit, unit_):
            return boiling_closed_form(model, balance, t_boil, credit, unit_)
    if model.daily_cycle is not None:
        def cycle_peaks(r, peak, unit_):
            return climbing_peaks_warning(model, balance if balance is not None else balance_of(model), peak, unit_)
    writer = ClosedFormWriter(prepared, ClosedFormGroup.of_case(prepared), GroupValues.of_one(values), unit,
                              boiling=boiling, cycle_peaks=cycle_peaks)
    result = writer.write(0, {})
    recovery_path(prepared, result, balance, result["detection_time_s"])
    if with_history:
        shape = history_shape(balance, H)
        boil_credit = model.boiling is not None and model.boiling.venting == "open"
        result["_history"] = closed_form_history_arrays(model, balance, H, shape, result["limits"],
                                                        values.boil_time if boil_credit else None)
    return result


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
