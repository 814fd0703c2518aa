"""How a result with a daily cycle is read (report/readings.py, shared by the memo, the text report and the web
page): the "no heat loss" column is a bound only when the contents never fall below the highest ambient they
see, the daily maximum of the effective ambient; rising at the end of the horizon is only the time of day.

Reference: heat flows from the warmer body to the colder (the second law; the sign of UA (T_eff - T) in the
lumped balance, Incropera et al., ch. 5): leaving UA out can only lengthen the times to a limit when the
surroundings never heat the contents, i.e. when T >= T_eff(t) throughout, which holds for every t exactly
when min T >= max T_eff.
"""
from __future__ import annotations

import copy

from screening.report import readings
from screening.report.text import format_result

BASE = {
    "id": "R-1",
    "initial_temperature_K": 310.0,
    "ambient_temperature_K": 301.15,  # with a cycle: the daily mean of the air
    "peak_temperature_K": 320.0,
    "peak_time_s": 72 * 3600.0,
    "horizon_s": 72 * 3600.0,
    "history": {"time_s": [0.0, 3600.0, 72 * 3600.0], "temperature_K": [310.0, 309.0, 320.0]},
}
CYCLE = {"effective_ambient_max_K": 317.77, "mean_ambient_K": 301.15}


def with_cycle(r: dict) -> dict:
    out = copy.deepcopy(r)
    out["daily_cycle"] = dict(CYCLE)
    return out


def test_bound_compares_with_the_daily_maximum_of_the_effective_ambient():
    # without a cycle the contents (at least 309 K) never fall below the constant ambient 301.15 K: a bound
    assert readings.bound_ambient(BASE) == 301.15
    assert readings.adiabatic_is_bound(BASE) is True
    # with one, the sunny afternoon's effective ambient (317.77 K) is above them for part of the day: no bound
    r = with_cycle(BASE)
    assert readings.bound_ambient(r) == 317.77
    assert readings.adiabatic_is_bound(r) is False
    # contents that stay above that maximum (318 K and up) are never heated by the surroundings: a bound again
    hot = with_cycle(BASE)
    hot["initial_temperature_K"] = 318.0
    hot["history"]["temperature_K"] = [318.0, 318.5, 320.0]
    assert readings.adiabatic_is_bound(hot) is True


def test_the_end_of_the_horizon_is_only_a_time_of_day_with_a_cycle():
    # the highest temperature at the very end of the horizon: "still rising" without a cycle...
    assert readings.still_rising(BASE) is True
    # ...but with the daily cycle the horizon ends at some time of day (the screening warns separately when
    # the daily peaks still climb), so the peak and its time are shown as such
    assert readings.still_rising(with_cycle(BASE)) is False


def test_text_report_says_daily_mean_and_names_the_bound_basis():
    r = {**with_cycle(BASE), "units": {"temperature": "K"}, "limits": [], "steady_temperature_K": 305.4,
         "heat_capacity_J_per_K": 3.2e5, "ua_W_per_K": 20.0, "time_constant_s": 16000.0,
         "adiabatic": {"limits": [{"name": "x", "time_s": None}], "temperature_rise_K": 0.0},
         "daily_cycle": {**CYCLE, "daily_range_K": 14.0, "warmest_time_of_day_s": 54000.0,
                         "start_time_of_day_s": 36000.0, "start_time_basis": "given",
                         "effective_ambient_max_time_of_day_s": 48636.0, "sun": None},
         "criteria_ambient_K": 317.77}
    r["limits"] = [{"name": "x", "temperature_K": 330.0, "time_s": None, "reached": False, "margin_s": None}]
    text = format_result(r)
    assert "Steady temperature (daily mean) 305.4 K" in text
    assert "Peak 320.0 K at 72 h" in text and "still rising" not in text
    assert "not shown to be a bound here (the contents do not stay above the daily maximum of the effective " \
           "ambient)" in " ".join(text.split())
