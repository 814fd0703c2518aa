"""Screen a closed-form case: history, limits, boiling, warnings -> the core of a result.

For constant and decaying sources, fire and heating media the lumped balance is linear
in T and has an exact solution (:mod:`screening.core.closed_form_history`).
"""
from __future__ import annotations


import numpy as np

from screening.case.prepare import PreparedCase
from screening.core.closed_form_history import balance_of, heat_rates, temperature
from screening.core.time_to_limit import first_crossing, history_shape
from screening.result import HISTORY_POINTS
from screening.run.closed_form_group import ClosedFormGroup, ClosedFormValues, ClosedFormWriter, GroupValues
from screening.run.daily_cycle import climbing_peaks_warning
from screening.run.recovery import recovery_path


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
    cycle_peaks = None
    if model.daily_cycle is not None:
        def cycle_peaks(r, peak, unit_):
            return climbing_peaks_warning(model, balance if balance is not None else balance_of(model), peak, unit_)
    writer = ClosedFormWriter(prepared, ClosedFormGroup.of_case(prepared), GroupValues.of_one(values), unit,
                              cycle_peaks=cycle_peaks)
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
