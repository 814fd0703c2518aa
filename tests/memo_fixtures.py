"""Hand-made result dicts for the memo writer tests.

They follow the result object the engine prints (SI units, suffix names the
unit) plus the memo-only ``history`` / ``heat_balance`` / ``recovery_history``
keys.  The numbers are self-consistent enough to look right on a chart; they
are made here with simple formulas and are not a check of the engine.
"""
from __future__ import annotations

import copy
import math

R = 8.314462618
HASH_A = "3f1c0c9a4b2e5d6f708192a3b4c5d6e7f8091a2b3c4d5e6f708192a3b4c5d6e7"
RULES = {"name": "site default rules v1", "hash": "9b2d4e6f8a0c1e3f5a7b9c1d3e5f7a9b1c3d5e7f9a1b3c5d7e9f1a3b5c7d9e1f"}


def _inp(field, text, value, unit, source=None):
    return {"field": field, "text": text, "value_si": value, "unit_si": unit, "source": source}


# --------------------------------------------------------------------------- closed form


def closed_form_case() -> dict:
    """Storage tank warmed by a constant heat input; stable steady state above two limits."""
    mass, cp, wall = 9000.0, 2000.0, 1.0e6
    C = mass * cp + wall
    ua, power = 150.0, 6000.0
    ta, t0 = 298.15, 303.15
    tau = C / ua
    ts = ta + power / ua
    horizon = 72 * 3600.0
    response = 2 * 3600.0

    def t_at(t):
        return ts + (t0 - ts) * math.exp(-t / tau)

    def time_to(tl):
        return -tau * math.log((tl - ts) / (t0 - ts))

    limits = []
    for name, tl in (("High temperature alarm", 318.15), ("Maximum storage temperature", 328.15),
                     ("Flash point", 339.15)):
        t = time_to(tl) if tl < ts else None
        if t is not None and t > horizon:
            t = None
        limits.append({"name": name, "temperature_K": tl, "time_s": t, "reached": t is not None,
                       "margin_s": (t - response) if t is not None else None})
    times = [horizon * i / 200 for i in range(201)]
    temps = [t_at(t) for t in times]
    ad_rate = power / C
    ad_limits = [{"name": l["name"], "time_s": (l["temperature_K"] - t0) / ad_rate} for l in limits]
    return copy.deepcopy({
        "id": "TK-101",
        "title": "Solvent storage tank, circulation pump left running",
        "time_constant_s": tau,
        "peak_temperature_K": temps[-1],
        "peak_time_s": horizon,
        "steady_temperature_K": ts,
        "initial_temperature_K": t0,
        "ambient_temperature_K": ta,
        "horizon_s": horizon,
        "heat_capacity_J_per_K": C,
        "ua_W_per_K": ua,
        "limits": limits,
        "limit_exceeded_at_start": False,
        "response_time_s": response,
        "detection_time_s": 0.0,
        "adiabatic": {"limits": ad_limits, "temperature_rise_K": power * horizon / C},
        "tmr_adiabatic_s": None, "tmr_at_mtsr_s": None, "t_d24_K": None,
        "critical_ambient_temperature_K": None, "critical_ambient_method": None,
        "critical_temperature_K": None, "no_return_temperature_K": None,
        "adiabatic_temperature_rise_K": None, "mtsr_K": None, "maximum_technical_temperature_K": None,
        "criticality_class": None,
        "biot_number": None, "mixing": "stirred",
        "boiling": None, "recovery": None,
        "warnings": ["UA was estimated from a bare-wall correlation; insulation or fouling would lower it."],
        "verdict": "review",
        "reasons": ["Maximum storage temperature reached after 44.1 h, within the 72 h horizon."],
        "rule_set": RULES,
        "inputs": [
            _inp("contents.mass", "9000 kg", 9000.0, "kg", "level gauge LT-101, 2024 survey"),
            _inp("contents.specific_heat", "2.0 kJ/(kg K)", 2000.0, "J/(kg K)", "supplier data sheet"),
            _inp("vessel.wall_heat_capacity", "1 MJ/K", 1.0e6, "J/K"),
            _inp("loss.ua", "150 W/K", 150.0, "W/K", "estimate, bare wall"),
            _inp("ambient.temperature", "25 degC", 298.15, "K"),
            _inp("initial.temperature", "30 degC", 303.15, "K"),
            _inp("sources.constant.power", "6 kW", 6000.0, "W", "pump motor rating"),
            _inp("response.time", "2 h", 7200.0, "s", "operating procedure OP-12"),
        ],
        "units": {"temperature": "degC"},
        "meta": {"prepared_by": "A. Engineer", "prepared_for": "Tank farm HAZOP", "revision": "A",
                 "notes": "Pump P-101 keeps circulating with the cooler bypassed.\nCooling water lost."},
        "tool_version": "0.1.0",
        "input_hash": HASH_A,
        "history": {"time_s": times, "temperature_K": temps,
                    "generation_W": [power] * len(times), "loss_W": [ua * (t - ta) for t in temps]},
    })


# --------------------------------------------------------------------------- Arrhenius


_M, _CP, _UA, _TA, _T0 = 5000.0, 1800.0, 400.0, 303.15, 333.15
_QREF, _TREF, _E, _QR = 5.0, 333.15, 100e3, 300e3  # W/kg, K, J/mol, J/kg (first order)
_TB, _HV = 393.15, 900e3  # boiling point K, latent heat J/kg


def _gen(T, x=0.0):
    return _M * _QREF * math.exp(-_E / R * (1 / T - 1 / _TREF)) * (1 - x)


def _integrate(horizon, extra_ua_after=None, extra_ua=0.0):
    """Explicit steps with a temperature-step cap; boiling holds T at the boiling point."""
    C = _M * _CP
    t, T, x, boiled = 0.0, _T0, 0.0, 0.0
    ts, Ts, gs, ls = [t], [T], [_gen(T)], [_UA * (T - _TA)]
    t_boil, peak_boil = None, 0.0
    while t < horizon:
        ua = _UA + (extra_ua if extra_ua_after is not None and t >= extra_ua_after else 0.0)
        g = _gen(T, x)
        loss = ua * (T - _TA)
        dTdt = (g - loss) / C
        dt = min(120.0, 0.2 / max(abs(dTdt), 1e-12), horizon - t)
        if extra_ua_after is not None and t < extra_ua_after:
            dt = min(dt, extra_ua_after - t) or dt
        x = min(1.0, x + g * dt / (_M * _QR))
        T_new = T + dTdt * dt
        if T_new >= _TB and g > loss:
            if t_boil is None:
                t_boil = t
            rate = (g - loss) / _HV
            peak_boil = max(peak_boil, rate)
            boiled += rate * dt
            T_new = _TB
        T = T_new
        t += dt
        ts.append(t)
        Ts.append(T)
        gs.append(_gen(T, x))
        ls.append(ua * (T - _TA))
    return ts, Ts, gs, ls, t_boil, peak_boil, boiled


def _bisect(f, a, b, n=80):
    fa = f(a)
    for _ in range(n):
        m = 0.5 * (a + b)
        fm = f(m)
        if (fm > 0) == (fa > 0):
            a, fa = m, fm
        else:
            b = m
    return 0.5 * (a + b)


def _tmr(T):
    """Zero-order adiabatic time to maximum rate, s."""
    return _CP * R * T * T / (_QREF * math.exp(-_E / R * (1 / T - 1 / _TREF)) * _E)


def arrhenius_case() -> dict:
    """Reactor with a first-order decomposition, heat balance and boiling."""
    horizon = 24 * 3600.0
    ts, Ts, gs, ls, t_boil, peak_boil, boiled = _integrate(horizon)
    temps = [300.0 + i * 1.5 for i in range(101)]
    gen = [_gen(T) for T in temps]
    loss = [_UA * (T - _TA) for T in temps]
    diff = [g - l for g, l in zip(gen, loss)]
    steady = []
    for i in range(len(temps) - 1):
        if diff[i] == 0 or (diff[i] > 0) != (diff[i + 1] > 0):
            steady.append(_bisect(lambda T: _gen(T) - _UA * (T - _TA), temps[i], temps[i + 1]))
    # Semenov tangency: dP/dT = UA  ->  P(Tc) E / (R Tc^2) = UA
    tc = _bisect(lambda T: _gen(T) * _E / (R * T * T) - _UA, 300.0, 450.0)
    ta_crit = tc - _gen(tc) / _UA
    td24 = _bisect(lambda T: _tmr(T) - 24 * 3600.0, 250.0, 450.0)
    rise = _QR / _CP

    def first(tl):
        for t, T in zip(ts, Ts):
            if T >= tl:
                return t
        return None

    limits = []
    for name, tl in (("Onset of decomposition (DSC)", 358.15), ("Boiling point", _TB), ("Design temperature", 423.15)):
        t = first(tl)
        limits.append({"name": name, "temperature_K": tl, "time_s": t, "reached": t is not None, "margin_s": None})
    peak_i = max(range(len(Ts)), key=Ts.__getitem__)
    return copy.deepcopy({
        "id": "R-201",
        "title": "Batch reactor after loss of jacket cooling",
        "time_constant_s": _M * _CP / _UA,
        "peak_temperature_K": Ts[peak_i], "peak_time_s": ts[peak_i],
        "steady_temperature_K": None,
        "initial_temperature_K": _T0, "ambient_temperature_K": _TA, "horizon_s": horizon,
        "heat_capacity_J_per_K": _M * _CP, "ua_W_per_K": _UA,
        "limits": limits,
        "limit_exceeded_at_start": False,
        "response_time_s": None,
        "detection_time_s": 0.0,
        "adiabatic": {"limits": [{"name": l["name"], "time_s": (l["time_s"] or 0) * 0.8 or None} for l in limits],
                      "temperature_rise_K": rise},
        "tmr_adiabatic_s": _tmr(_T0),
        "tmr_at_mtsr_s": _tmr(_T0 + 12.0),
        "t_d24_K": td24,
        "critical_ambient_temperature_K": ta_crit,
        "critical_ambient_method": "semenov",
        "critical_temperature_K": tc,
        "no_return_temperature_K": steady[1] if len(steady) > 1 else None,
        "adiabatic_temperature_rise_K": rise,
        "mtsr_K": _T0 + 12.0,
        "maximum_technical_temperature_K": _TB,
        "criticality_class": 4,
        "biot_number": None, "mixing": "stirred",
        "boiling": {"time_to_boil_s": t_boil, "peak_boil_off_kg_per_s": peak_boil, "boiled_off_kg": boiled,
                    "time_to_dry_s": None},
        "recovery": None,
        "warnings": [
            "Kinetics measured up to 150 °C only; rates above that are extrapolated.",
            "Zero-order TMRad ignores reactant depletion (conservative) but the heat balance uses first order.",
            "Boiling tempering credit assumes the vent stays open; a closed vessel gets none.",
        ],
        "verdict": "fail",
        "reasons": ["TMRad from the initial temperature is below 8 h.",
                    "The contents reach the onset temperature within the horizon and no response time is given."],
        "rule_set": RULES,
        "inputs": [
            _inp("contents.mass", "5 t", 5000.0, "kg", "batch record"),
            _inp("contents.specific_heat", "1.8 kJ/(kg·K)", 1800.0, "J/(kg K)", "estimate"),
            _inp("loss.ua", "400 W/K", 400.0, "W/K"),
            _inp("ambient.temperature", "30 °C", 303.15, "K"),
            _inp("initial.temperature", "60 °C", 333.15, "K", "normal operating temperature"),
            _inp("sources.arrhenius.specific_power", "5 W/kg at 60 °C", 5.0, "W/kg", "ARC test 2023-117"),
            _inp("sources.arrhenius.activation_energy", "100 kJ/mol", 100e3, "J/mol", "ARC test 2023-117"),
            _inp("sources.arrhenius.heat_of_reaction", "300 J/g", 300e3, "J/kg", "DSC, µ-sample, Müller lab"),
            _inp("boiling.point", "120 °C", 393.15, "K"),
            _inp("boiling.latent_heat", "900 kJ/kg", 900e3, "J/kg"),
            _inp("boiling.venting", "open", None, None),
        ],
        "units": {"temperature": "degC"},
        "meta": {"prepared_by": "B. Müller", "prepared_for": "Reactor R-201 PHA", "revision": "2",
                 "notes": None},
        "tool_version": "0.1.0",
        "input_hash": "a" * 64,
        "history": {"time_s": ts, "temperature_K": Ts, "generation_W": gs, "loss_W": ls},
        "heat_balance": {"temperature_K": temps, "generation_W": gen, "loss_W": loss,
                         "steady_states_K": steady, "critical_ambient_K": ta_crit, "ambient_K": _TA},
        "some_future_key": {"ignored": True},
    })


def recovery_case() -> dict:
    """The reactor with an alarm and a recovery action (cooling restored); display in °F."""
    res = arrhenius_case()
    horizon = res["horizon_s"]
    alarm_K = 343.15
    detection = None
    for t, T in zip(res["history"]["time_s"], res["history"]["temperature_K"]):
        if T >= alarm_K:
            detection = t
            break
    response = 900.0
    start = detection + response
    ts, Ts, *_ = _integrate(horizon, extra_ua_after=start, extra_ua=20000.0)
    peak_i = max(range(len(Ts)), key=Ts.__getitem__)
    res.update({
        "id": "R-201-REC",
        "title": "Batch reactor, high-temperature alarm and emergency cooling",
        "units": {"temperature": "degF"},
        "response_time_s": response,
        "detection_time_s": detection,
        "recovery": {"start_s": start, "peak_temperature_K": Ts[peak_i], "peak_time_s": ts[peak_i],
                     "limits_reached": [l["name"] for l in res["limits"] if l["temperature_K"] <= Ts[peak_i]],
                     "past_no_return": False},
        "recovery_history": {"time_s": ts, "temperature_K": Ts},
        "verdict": "pass",
        "reasons": ["With the alarm and emergency cooling the peak stays below the onset temperature."],
    })
    for lim in res["limits"]:
        if lim["time_s"] is not None:
            lim["margin_s"] = lim["time_s"] - (detection + response)
    return res


def all_cases() -> list[dict]:
    return [closed_form_case(), arrhenius_case(), recovery_case()]
