"""Detection, response margins and the recovery path of a closed-form case."""
from __future__ import annotations

import numpy as np

from screening.case.prepare import PreparedCase
from screening.core.closed_form_history import balance_of, temperature
from screening.core.time_to_limit import first_crossing, history_shape
from screening.result import HISTORY_POINTS
from screening.run.warnings import (
    ALARM_NOT_REACHED,
    MARGIN_NOTE_ASSUMED,
    detection_basis,
    response_beyond_horizon_warning,
)


def detection_and_recovery(prepared: PreparedCase, result: dict, balance=None, alarm_time=None) -> None:
    """Detection time, margins, and the recovery path (closed-form cases).

    Detection is never silently instant: without a detection block it is assumed at t = 0 and every margin
    carries a note saying so; a storage case without one is unmonitored (no detection time, and a limit
    reached within the storage period is reached without warning).
    """
    basis, note = detection_basis(prepared)
    detection = detection_time(basis, prepared.detection_delay, alarm_time)
    write_detection(result, basis, note, detection, prepared.response_time, prepared.model.horizon)
    recovery_path(prepared, result, balance, detection)


def detection_time(basis: str, delay: float | None, alarm_time: float | None) -> float | None:
    """The detection time, s, of a basis (:func:`screening.run.warnings.detection_basis`): the delay, the
    alarm's crossing (None if the alarm is not reached), 0 when assumed, None when unmonitored."""
    if basis == "delay":
        return delay
    if basis == "alarm":
        return alarm_time
    if basis == "unmonitored":
        return None
    return 0.0


def limit_rows(names, temperatures, times, basis: str, detection: float | None, response: float | None) -> list:
    """Limit rows with their margins: margin = time to the limit - (detection + response), when all three are
    known; the note says when detection is only assumed at t = 0."""
    if response is None or detection is None:
        return [{"name": name, "temperature_K": lt, "time_s": t, "reached": t is not None, "margin_s": None,
                 "margin_note": None} for name, lt, t in zip(names, temperatures, times)]
    total = detection + response
    note = MARGIN_NOTE_ASSUMED if basis == "assumed" else None
    return [{"name": name, "temperature_K": lt, "time_s": t, "reached": t is not None,
             "margin_s": None if t is None else t - total, "margin_note": None if t is None else note}
            for name, lt, t in zip(names, temperatures, times)]


def write_detection(result: dict, basis: str, note: str | None, detection: float | None,
                    response: float | None, horizon: float, margins: bool = True) -> None:
    """The detection keys of one result and (unless ``margins`` is False: the rows came from
    :func:`limit_rows`) the margin of each of its limit rows, as :func:`limit_rows` gives them."""
    if basis == "alarm" and detection is None:
        result["warnings"].append(ALARM_NOT_REACHED)
    result["detection_time_s"] = detection
    result["detection_basis"] = basis
    result["detection_note"] = note
    result["response_time_s"] = response
    if margins:
        rows = result["limits"]
        with_margins = limit_rows([r["name"] for r in rows], [r["temperature_K"] for r in rows],
                                  [r["time_s"] for r in rows], basis, detection, response)
        for row, done in zip(rows, with_margins):
            row["margin_s"] = done["margin_s"]
            row["margin_note"] = done["margin_note"]
    if response is not None and horizon < response + (detection or 0.0):
        result["warnings"].append(response_beyond_horizon_warning(horizon))


def recovery_path(prepared: PreparedCase, result: dict, balance, detection: float | None) -> None:
    """The recovery path of a closed-form case (``result["recovery"]``, None without one)."""
    model = prepared.model
    H = model.horizon
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
