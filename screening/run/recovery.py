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


def write_detection(result: dict, basis: str, note: str | None, detection: float | None,
                    response: float | None, horizon: float) -> None:
    """The detection keys of one result and the margin of each of its limit rows (one case, or one row
    of a group: :mod:`screening.run.closed_form_group` calls it per row)."""
    if basis == "alarm" and detection is None:
        result["warnings"].append(ALARM_NOT_REACHED)
    result["detection_time_s"] = detection
    result["detection_basis"] = basis
    result["detection_note"] = note
    result["response_time_s"] = response
    timed = response is not None and detection is not None
    margin_note = MARGIN_NOTE_ASSUMED if basis == "assumed" else None
    for row in result["limits"]:
        t = row["time_s"]
        if timed and t is not None:
            row["margin_s"] = t - (detection + response)
            row["margin_note"] = margin_note
        else:
            row["margin_s"] = None
            row["margin_note"] = None
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
