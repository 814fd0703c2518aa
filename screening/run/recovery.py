"""Detection, response margins and the recovery path of a closed-form case."""
from __future__ import annotations

import numpy as np

from screening.case.prepare import PreparedCase
from screening.core.closed_form_history import balance_of, temperature
from screening.core.time_to_limit import first_crossing, history_shape
from screening.result import HISTORY_POINTS
from screening.run.warnings import MARGIN_NOTE_ASSUMED, detection_basis, response_beyond_horizon_warning


def detection_and_recovery(prepared: PreparedCase, result: dict, balance=None, alarm_time=None) -> None:
    """Detection time, margins, and the recovery path (closed-form cases).

    Detection is never silently instant: without a detection block it is assumed at t = 0 and every margin
    carries a note saying so; a storage case without one is unmonitored (no detection time, and a limit
    reached within the storage period is reached without warning).
    """
    model = prepared.model
    H = model.horizon
    basis, note = detection_basis(prepared)
    detection = 0.0
    if basis == "delay":
        detection = prepared.detection_delay
    elif basis == "alarm":
        detection = alarm_time
        if detection is None:
            result["warnings"].append("The alarm temperature is not reached within the horizon: the alarm never "
                                      "sounds, so detection relies on something else.")
    elif basis == "unmonitored":
        detection = None
    result["detection_time_s"] = detection
    result["detection_basis"] = basis
    result["detection_note"] = note
    result["response_time_s"] = prepared.response_time
    for row in result["limits"]:
        if row["time_s"] is not None and prepared.response_time is not None and detection is not None:
            row["margin_s"] = row["time_s"] - (detection + prepared.response_time)
        else:
            row["margin_s"] = None
        row["margin_note"] = MARGIN_NOTE_ASSUMED if basis == "assumed" and row["margin_s"] is not None else None
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
