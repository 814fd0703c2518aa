"""How a result is to be read, decided once for the memo, the text report and the web page.

Each function takes the result dict (JSON keys plus, where given, the plotted history) and
answers one question a reviewer asks of the numbers:

- :func:`start_temperature`: where the history starts (initial, or after heat released at t = 0);
- :func:`adiabatic_is_bound`: whether the case without heat loss (UA = 0) bounds the temperature:
  only when the contents never sit below the ambient (the surroundings never heat them); with a
  daily cycle the ambient compared is :func:`bound_ambient`, the daily maximum of the effective
  ambient (the air and the sun's share), since the surroundings heat the contents whenever that
  is above them;
- :func:`boiling_plateau`: an open vessel that boils holds at its boiling point until dry-out,
  which is not its steady state;
- :func:`still_rising`: no peak within the horizon (an asymptotic approach or a runaway), so a
  "time of peak" would only be the end of the horizon; never with a daily cycle, where rising or
  falling at the horizon is only the time of day (the screening warns instead when the daily peaks
  still climb);
- :func:`near_peak`: a limit reached within 2 % of the peak temperature rise, whose time moves a lot
  with the inputs.
"""
from __future__ import annotations

import math
from collections.abc import Mapping

#: A limit reached within this share of the peak temperature rise is flagged as sensitive to the inputs.
SENSITIVE_SHARE = 0.02


def _num(r: Mapping, key: str) -> float | None:
    v = r.get(key)
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        return None
    return float(v)


def start_temperature(r: Mapping) -> float | None:
    start = r.get("start_release")
    if isinstance(start, Mapping) and _num(start, "temperature_K") is not None:
        return _num(start, "temperature_K")
    return _num(r, "initial_temperature_K")


def history_of(r: Mapping) -> Mapping | None:
    h = r.get("history")
    if h is None:
        h = r.get("_history")
    return h if isinstance(h, Mapping) else None


def daily_cycle(r: Mapping) -> Mapping | None:
    """The result's daily-cycle block (the air's cycle and the sun), or None without one."""
    c = r.get("daily_cycle")
    return c if isinstance(c, Mapping) else None


def bound_ambient(r: Mapping) -> float | None:
    """The highest ambient the contents see: with a daily cycle the daily maximum of the effective ambient
    (the air and the sun's share), else the ambient."""
    cycle = daily_cycle(r)
    if cycle is not None:
        return _num(cycle, "effective_ambient_max_K")
    return _num(r, "ambient_temperature_K")


def adiabatic_is_bound(r: Mapping) -> bool | None:
    """True when the contents never fall below the ambient (with a daily cycle: its effective daily maximum), so
    heat loss only cools them; None if unknown."""
    amb, low = bound_ambient(r), start_temperature(r)
    if amb is None or low is None:
        return None
    hist = history_of(r)
    if hist is not None:
        temps = [x for x in (hist.get("temperature_K") or []) if isinstance(x, (int, float)) and math.isfinite(x)]
        if temps:
            low = min(low, min(temps))
    return low >= amb - 1e-9


def boiling_plateau(r: Mapping) -> Mapping | None:
    """The boiling block when the contents boil with credit (open vessel) within the horizon, else None."""
    b = r.get("boiling")
    if not isinstance(b, Mapping) or b.get("time_to_boil_s") is None or b.get("peak_boil_off_kg_per_s") is None:
        return None
    return b


def stops_in_runaway(r: Mapping) -> bool:
    """The history stops at a runaway, so the peak shown is where the solution stopped, not a peak: the hot spot of
    unstirred contents runs away (conduction), or the lumped history passed its ceiling temperature."""
    cond = r.get("conduction") if isinstance(r.get("conduction"), Mapping) else None
    if cond is not None:
        return bool(cond.get("runs_away"))
    return r.get("stop_reason") == "ceiling"


def still_rising(r: Mapping) -> bool:
    """No peak within the horizon: the highest temperature is the one at its end (never with a daily cycle: there
    the end of the horizon falls at a time of day, and a warning says when the daily peaks still climb)."""
    peak, t_peak, horizon = _num(r, "peak_temperature_K"), _num(r, "peak_time_s"), _num(r, "horizon_s")
    start = start_temperature(r)
    if None in (peak, t_peak, horizon) or boiling_plateau(r) is not None or daily_cycle(r) is not None:
        return False
    return t_peak >= horizon * (1 - 1e-9) and (start is None or peak > start)


def near_peak(r: Mapping, limit_temperature: float | None) -> bool:
    """A limit reached within :data:`SENSITIVE_SHARE` of the peak temperature rise (not a boiling plateau)."""
    peak, start = _num(r, "peak_temperature_K"), start_temperature(r)
    t = limit_temperature
    if peak is None or start is None or t is None or peak <= start or t <= start:
        return False
    if boiling_plateau(r) is not None and t >= peak - 1e-9:  # held at the boiling point, not a crossing
        return False
    return (peak - t) <= SENSITIVE_SHARE * (peak - start)
