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


# --------------------------------------------------------------------------- uncertainty


_Z95 = 1.6448536269514722  # standard normal 95th percentile


def _tank_time(limit_K, ua, power, ta, t0, heat_capacity, horizon):
    """Closed-form time for the constant-power tank to reach ``limit_K``; None if not within the horizon."""
    if t0 >= limit_K:
        return 0.0
    ts = ta + power / ua
    if ts <= limit_K:
        return None
    t = -heat_capacity / ua * math.log((limit_K - ts) / (t0 - ts))
    return t if t <= horizon else None


def _quantile(inp, q):
    d = inp["distribution"]
    if d == "uniform":
        return inp["low"] + q * (inp["high"] - inp["low"])
    if d == "normal":
        return inp["mean"] + (_Z95 if q > 0.5 else -_Z95) * inp["sd"] * (abs(q - 0.5) > 0.4499)
    if d == "triangular":
        a, c, b = inp["low"], inp["mode"], inp["high"]
        f = (c - a) / (b - a)
        return a + math.sqrt(q * (b - a) * (c - a)) if q < f else b - math.sqrt((1 - q) * (b - a) * (b - c))
    if d == "lognormal":
        return inp["median"] * inp["gsd"] ** ((_Z95 if q > 0.5 else -_Z95) * (abs(q - 0.5) > 0.4499))
    raise ValueError(d)


def _draw(rng, inp):
    d = inp["distribution"]
    if d == "uniform":
        return rng.uniform(inp["low"], inp["high"])
    if d == "normal":
        return rng.gauss(inp["mean"], inp["sd"])
    if d == "triangular":
        return rng.triangular(inp["low"], inp["high"], inp["mode"])
    return inp["median"] * math.exp(rng.gauss(0.0, math.log(inp["gsd"])))


def _ranks(values):
    order = sorted(range(len(values)), key=values.__getitem__)
    ranks = [0.0] * len(values)
    i = 0
    while i < len(order):
        j = i
        while j + 1 < len(order) and values[order[j + 1]] == values[order[i]]:
            j += 1
        for k in range(i, j + 1):
            ranks[order[k]] = (i + j) / 2.0
        i = j + 1
    return ranks


def _spearman(a, b):
    ra, rb = _ranks(a), _ranks(b)
    ma, mb = sum(ra) / len(ra), sum(rb) / len(rb)
    cov = sum((x - ma) * (y - mb) for x, y in zip(ra, rb))
    va = sum((x - ma) ** 2 for x in ra)
    vb = sum((y - mb) ** 2 for y in rb)
    return cov / math.sqrt(va * vb) if va > 0 and vb > 0 else None


def _percentile(times, q):
    """Inverted CDF with not-reached counted as later than any time; None when it falls there."""
    s = sorted(math.inf if t is None else t for t in times)
    k = max(0, min(len(s) - 1, math.ceil(q * len(s)) - 1))
    return None if math.isinf(s[k]) else s[k]


def _scan_changes(verdict, lo, hi, points=41):
    xs = [lo + (hi - lo) * k / (points - 1) for k in range(points)]
    vs = [verdict(x) for x in xs]
    changes = []
    for a, b, va, vb in zip(xs[:-1], xs[1:], vs[:-1], vs[1:]):
        if va == vb:
            continue
        for _ in range(80):
            if b - a <= 1e-7 * (hi - lo):
                break
            mid = 0.5 * (a + b)
            if verdict(mid) == va:
                a = mid
            else:
                b = mid
        changes.append({"value": 0.5 * (a + b), "below": va, "above": vb, "bracket": [a, b]})
    return [{"value": x, "verdict": v} for x, v in zip(xs, vs)], changes


def uncertainty_case(samples: int = 4000, seed: int = 11) -> dict:
    """The storage tank with a 20 h response, a Monte Carlo block and allowable values.

    The Monte Carlo here is a small pure-Python loop over the closed form, made
    only so that the tables and charts of the memo agree with each other.
    """
    import random

    res = closed_form_case()
    res["id"] = "TK-101-MC"
    res["title"] = "Solvent storage tank, cooling water restored by tanker within 20 h"
    response = 20 * 3600.0
    res["response_time_s"] = response
    for lim in res["limits"]:
        lim["margin_s"] = lim["time_s"] - response if lim["time_s"] is not None else None
    horizon = res["horizon_s"]
    mass, cp, wall, ua, power, ta, t0 = 9000.0, 2000.0, 1.0e6, 150.0, 6000.0, 298.15, 303.15
    inputs = [
        {"input": "heat_loss.ua", "distribution": "normal", "mean": 150.0, "sd": 50.0, "nominal": ua,
         "unit_si": "W/K"},
        {"input": "heat_sources.0.power", "distribution": "uniform", "low": 4500.0, "high": 7500.0,
         "nominal": power, "unit_si": "W"},
        {"input": "heat_loss.ambient_temperature", "distribution": "normal", "mean": 298.15, "sd": 3.0,
         "nominal": ta, "unit_si": "K"},
        {"input": "contents.initial_temperature", "distribution": "normal", "mean": 303.15, "sd": 2.0,
         "nominal": t0, "unit_si": "K"},
        {"input": "contents.mass", "distribution": "triangular", "low": 7000.0, "mode": 9000.0, "high": 9500.0,
         "nominal": mass, "unit_si": "kg"},
        {"input": "contents.specific_heat_capacity", "distribution": "lognormal", "median": 2000.0, "gsd": 1.1,
         "nominal": cp, "unit_si": "J/(kg K)"},
        {"input": "vessel.wall_heat_capacity", "distribution": "normal", "mean": 1.0e6, "sd": 6.5e5,
         "nominal": wall, "unit_si": "J/K"},
    ]
    nominal = [inp["nominal"] for inp in inputs]

    def times_for(v):
        u, p, a, i0, m, c, w = v
        return [_tank_time(lim["temperature_K"], u, p, a, i0, m * c + w, horizon) for lim in res["limits"]]

    def possible(k, x):
        return x > 0  # every input here must be positive (temperatures in K)

    rng = random.Random(seed)
    drawn, rejected = [], 0
    for _ in range(samples):
        v = [_draw(rng, inp) for inp in inputs]
        if all(possible(k, x) for k, x in enumerate(v)):
            drawn.append(v)
        else:
            rejected += 1
    n = len(drawn)
    times = [times_for(v) for v in drawn]

    def se(p):
        return math.sqrt(p * (1 - p) / n)

    limits = []
    for j, lim in enumerate(res["limits"]):
        tj = [t[j] for t in times]
        within = sum(t is not None for t in tj) / n
        before = sum(t is not None and t < response for t in tj) / n
        limits.append({"name": lim["name"], "probability_before_response": before,
                       "probability_before_response_standard_error": se(before),
                       "probability_within_horizon": within, "probability_within_horizon_standard_error": se(within),
                       "p05_time_s": _percentile(tj, 0.05), "p50_time_s": _percentile(tj, 0.50),
                       "p95_time_s": _percentile(tj, 0.95)})
    first = min(range(len(res["limits"])), key=lambda j: res["limits"][j]["temperature_K"])
    first_times = [t[first] for t in times]
    capped = [1e300 if t is None else t for t in first_times]
    sensitivity = []
    for k, inp in enumerate(inputs):
        lo_v, hi_v = _quantile(inp, 0.05), _quantile(inp, 0.95)
        ok = possible(k, lo_v) and possible(k, hi_v)
        ends = []
        for x in (lo_v, hi_v):
            v = list(nominal)
            v[k] = x if possible(k, x) else nominal[k]  # an impossible end is reported, not used
            ends.append(times_for(v)[first])
        rho = _spearman([v[k] for v in drawn], capped)
        swing = abs((horizon if ends[0] is None else ends[0]) - (horizon if ends[1] is None else ends[1]))
        sensitivity.append({"input": inp["input"], "low_value": lo_v, "high_value": hi_v, "unit_si": inp["unit_si"],
                            "low_time_s": ends[0], "high_time_s": ends[1], "rank_correlation": rho,
                            "swing_s": swing, "swing_possible": ok})
    sensitivity.sort(key=lambda r: (-r["swing_s"], -abs(r["rank_correlation"] or 0.0)))
    finite = sorted(t for t in first_times if t is not None)
    m = len(finite)
    idx = sorted({round(i * (m - 1) / (min(200, m) - 1)) for i in range(min(200, m))}) if m > 1 else list(range(m))
    res["uncertainty"] = {
        "samples": samples, "accepted": n, "rejected": rejected, "seed": seed, "sampling": "random",
        "inputs": inputs, "first_limit": res["limits"][first]["name"], "limits": limits,
        "sensitivity": sensitivity,
        "method": f"Monte Carlo over the closed-form engine, random sampling; probabilities have a binomial "
                  f"standard error sqrt(p (1 - p) / n), n = {n}.",
    }
    res["uncertainty_cdf"] = {"time_s": [finite[i] for i in idx], "probability": [(i + 1) / n for i in idx], "n": n}

    # Allowable values with a toy rule set: fail when the flash point is reached within the
    # horizon, review when the maximum storage temperature is, else pass.
    def verdict(values):
        t = times_for(values)
        return "fail" if t[2] is not None else "review" if t[1] is not None else "pass"

    def vary(k, to_si):
        return lambda x: verdict([to_si(x) if i == k else nominal[i] for i in range(len(nominal))])

    allowable = []
    for k, path, unit, to_si, from_si, lo, hi in (
            (2, "heat_loss.ambient_temperature", "degC", lambda c: c + 273.15, lambda kv: kv - 273.15, -5.0, 55.0),
            (0, "heat_loss.ua", "W/K", lambda x: x, lambda x: x, 30.0, 750.0),
            (4, "contents.mass", "t", lambda x: x * 1000.0, lambda x: x / 1000.0, 1.8, 45.0)):
        scan, changes = _scan_changes(vary(k, to_si), lo, hi)
        allowable.append({"input": path, "unit": unit, "nominal": from_si(nominal[k]), "range": [lo, hi],
                          "points": 41, "scan": scan, "changes": changes,
                          "note": "Scanned at 41 points (even spacing) and each change located by bisection."})
    allowable.append({"input": "response_time", "unit": "h", "nominal": 20.0, "range": [4.0, 100.0], "points": 41,
                      "scan": [{"value": 4.0 + 2.4 * i, "verdict": "review"} for i in range(41)], "changes": [],
                      "note": None})
    res["allowable_values"] = allowable
    res["warnings"] = list(res["warnings"]) + [
        "The response time of 20 h assumes a tanker is available; it is not demonstrated."]
    return res


def all_cases() -> list[dict]:
    return [closed_form_case(), arrhenius_case(), recovery_case()]
