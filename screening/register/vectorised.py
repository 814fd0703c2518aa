"""The closed-form rows of a register through the vectorised time-to-limit engine.

Rows the engine does not accept (absurd but valid inputs, outside its numeric range) are left to
the scalar engine by the caller.
"""
from __future__ import annotations

import numpy as np

from screening.core.terms import model_start_temperature, model_terms


def vectorised_values(prepared_list: list) -> list:
    """ClosedFormValues for many closed-form cases at once (vectorised engine)."""
    from screening.run.closed_form_case import ClosedFormValues

    n = len(prepared_list)
    if n == 0:
        return []
    models = [p.model for p in prepared_list]
    k = max(len(m.decaying_sources) for m in models)
    n_lim = max(len(m.limits) for m in models) + 2  # + boiling point + alarm
    C = np.empty(n)
    G = np.empty(n)
    Q0 = np.empty(n)
    Q0_ad = np.empty(n)
    G_ad = np.empty(n)
    T0 = np.empty(n)
    H = np.empty(n)
    P = np.zeros((n, max(k, 1)))
    b = np.zeros((n, max(k, 1)))
    L = np.full((n, n_lim), np.nan)
    for i, (prep, m) in enumerate(zip(prepared_list, models)):
        lossy, adiabatic = model_terms(m), model_terms(m, ua=0.0)
        C[i], G[i], Q0[i] = lossy.heat_capacity, lossy.conductance, lossy.drive
        G_ad[i], Q0_ad[i] = adiabatic.conductance, adiabatic.drive
        T0[i] = model_start_temperature(m)
        H[i] = m.horizon
        for j, s in enumerate(m.decaying_sources):
            P[i, j] = s.power
            b[i, j] = 1.0 / s.time_constant
        for j, lim in enumerate(m.limits):
            L[i, j] = lim.temperature
        if m.boiling is not None:
            L[i, n_lim - 2] = m.boiling.boiling_point
        if prep.detection_alarm is not None:
            L[i, n_lim - 1] = prep.detection_alarm
    ok, times, summary, ad_times = run_engine(C, G, Q0, G_ad, Q0_ad, T0, P, b, L, H, n_lim - 2)
    out = []
    t = times
    conv = lambda v: None if not np.isfinite(v) else float(v)  # noqa: E731
    for i, m in enumerate(models):
        if not ok[i]:
            out.append(None)  # outside the vectorised engine's range: the scalar engine takes it
            continue
        nl = len(m.limits)
        out.append(ClosedFormValues(
            limit_times=[conv(t[i, j]) for j in range(nl)],
            boil_time=conv(t[i, n_lim - 2]) if m.boiling is not None else None,
            alarm_time=conv(t[i, n_lim - 1]) if prepared_list[i].detection_alarm is not None else None,
            peak=(float(summary.peak_temperature[i]), float(summary.peak_time[i])),
            end_temperature=float(summary.end_temperature[i]),
            end_rate=float(summary.end_rate[i]),
            adiabatic_limit_times=[conv(ad_times[i, j]) for j in range(nl)],
        ))
    return out


def run_engine(C, G, Q0, G_ad, Q0_ad, T0, P, b, L, H, n_adiabatic: int):
    """The vectorised engine with heat loss and without (UA = 0), for the rows it accepts.

    Returns (accepted mask, crossing times (n, L), history summary, adiabatic crossing times of the first
    ``n_adiabatic`` limits); rows outside the engine's range (absurd but valid inputs) are left out and
    their entries are NaN: the caller runs them through the scalar engine.
    """
    from screening.core.time_to_limit_batch import (
        HistorySummary,
        screen_register,
        within_engine_range,
    )

    ok = within_engine_range(C, G, Q0, T0, P, b, H) & within_engine_range(C, G_ad, Q0_ad, T0, P, b, H)
    if ok.all():
        main = screen_register(C, G, Q0, T0, P, b, L, H)
        ad_times = screen_register(C, G_ad, Q0_ad, T0, P, b, L[:, :n_adiabatic], H).times
        return ok, main.times, main.summary, ad_times
    n = len(C)
    times = np.full(L.shape, np.nan)
    ad_times = np.full((n, n_adiabatic), np.nan)
    summary = HistorySummary(np.full(P.shape, np.nan), *(np.full(n, np.nan) for _ in range(4)))
    if ok.any():
        sel = np.flatnonzero(ok)
        main = screen_register(C[sel], G[sel], Q0[sel], T0[sel], P[sel], b[sel], L[sel], H[sel])
        times[sel] = main.times
        for full, part in zip(summary, main.summary):
            full[sel] = part
        ad_times[sel] = screen_register(C[sel], G_ad[sel], Q0_ad[sel], T0[sel], P[sel], b[sel],
                                        L[sel, :n_adiabatic], H[sel]).times
    return ok, times, summary, ad_times
