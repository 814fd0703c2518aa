"""The result of closed-form cases, written from arrays: one case is a group of one.

A group is n closed-form cases of one structure (the same limits by name, the same kinds of
sources, the same detection basis): its SI parameters are arrays (:class:`ClosedFormGroup`),
an engine gives the turning points, peaks and first crossings as arrays
(:class:`GroupValues`: the scalar engine for one case, the vectorised one for a register
group), and :class:`ClosedFormWriter` computes the per-row numbers on the arrays (time
constant, steady temperature, adiabatic rise) and writes each row's keys: the limit rows with
their margins, the adiabatic bound, the warnings in their order (texts from
:mod:`screening.run.warnings`), the detection keys and the case keys of
:func:`write_case_keys`.

:func:`screening.run.closed_form_case.screen_closed_form` calls it with a group of one, the
register's uniform groups (:mod:`screening.register.columns`) with their column arrays, so the
two cannot differ. Pieces that stay scalar per row are a loop inside the writer (the boiling
phase, from the row's numbers) or a callable the one-case path passes in (the daily cycle's
climbing peaks: a register group does not take rows with a cycle).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from screening.case.prepare import PreparedCase
from screening.core.daily_cycle import mean_rise
from screening.core.root_finding import brent_root as brentq
from screening.core.terms import model_start_temperature, model_terms
from screening.run.recovery import detection_time, write_detection
from screening.run.recovery import limit_rows as make_limit_rows
from screening.run.warnings import (
    ADIABATIC_WARNING,
    BOILING_CLOSED_VESSEL,
    BOILING_CREDIT,
    BOILING_OUT_OF_SCOPE,
    above_boiling_point_warning,
    boil_dry_warning,
    detection_basis,
    limit_at_start_warning,
    short_horizon_warning,
    still_rising_warning,
)


@dataclass
class ClosedFormGroup:
    """SI parameters of n closed-form cases of one structure (float arrays of length n).

    heat_capacity : C = m c_p + C_wall, J/K
    conductance, drive : G = UA + sum ua_k (W/K) and Q0 = UA Ta + sum ua_k Tm_k + P_const (W)
    steady_drive : the drive the steady temperature is taken from (Q0 plus the sun's daily mean with a
        daily cycle), W
    start_temperature : where the history starts (the initial temperature plus heat released at t = 0), K
    initial_temperature, ambient_temperature, ua, horizon : K, K, W/K, s (the case keys)
    decaying_power, decaying_time : one array per decaying source, W and s
    limit_temperature : one array per limit, K
    response_time : s, or None when the cases give none
    boiling_point, latent_heat : K and J/kg, or None without boiling data
    mass, constant_power : contents mass (kg) and P_const (W), for the boiling phase
    media_ua, media_temperature : one array per heating medium, W/K and K, for the boiling phase
    """

    heat_capacity: np.ndarray
    conductance: np.ndarray
    drive: np.ndarray
    steady_drive: np.ndarray
    start_temperature: np.ndarray
    initial_temperature: np.ndarray
    ambient_temperature: np.ndarray
    ua: np.ndarray
    horizon: np.ndarray
    decaying_power: list
    decaying_time: list
    limit_temperature: list
    response_time: np.ndarray | None = None
    boiling_point: np.ndarray | None = None
    latent_heat: np.ndarray | None = None
    mass: np.ndarray | None = None
    constant_power: np.ndarray | None = None
    media_ua: list | None = None
    media_temperature: list | None = None

    @classmethod
    def of_case(cls, prepared: PreparedCase) -> "ClosedFormGroup":
        """A group of one: the case's model as arrays of length one."""
        m = prepared.model
        terms = model_terms(m)
        one = lambda x: np.array([x], dtype=float)  # noqa: E731
        steady_drive = terms.drive
        if m.daily_cycle is not None and terms.conductance > 0:  # the daily mean of the periodic state
            steady_drive = terms.drive + m.ua * mean_rise(m.daily_cycle)
        return cls(one(terms.heat_capacity), one(terms.conductance), one(terms.drive), one(steady_drive),
                   one(model_start_temperature(m)), one(m.initial_temperature), one(m.ambient_temperature),
                   one(m.ua), one(m.horizon), [one(s.power) for s in m.decaying_sources],
                   [one(s.time_constant) for s in m.decaying_sources], [one(lim.temperature) for lim in m.limits],
                   None if prepared.response_time is None else one(prepared.response_time),
                   None if m.boiling is None else one(m.boiling.boiling_point),
                   None if m.boiling is None else one(m.boiling.latent_heat), one(m.contents_mass),
                   one(terms.constant_power), [one(h.ua) for h in m.heating_media],
                   [one(h.medium_temperature) for h in m.heating_media])


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


@dataclass
class GroupValues:
    """What a time-to-limit engine gives for a group (NaN: not reached, or no such limit).

    limit_times, adiabatic_limit_times : (n, limits) first crossings with heat loss and without (UA = 0), s
    boil_time, alarm_time : (n,) first crossings of the boiling point and the alarm temperature, s
    peak_temperature, peak_time : (n,) within the horizon, K and s
    end_temperature, end_rate : (n,) at the horizon, K and K/s
    """

    limit_times: np.ndarray
    adiabatic_limit_times: np.ndarray
    peak_temperature: np.ndarray
    peak_time: np.ndarray
    end_temperature: np.ndarray
    end_rate: np.ndarray
    boil_time: np.ndarray | None = None
    alarm_time: np.ndarray | None = None

    @classmethod
    def of_one(cls, values) -> "GroupValues":
        """A group of one from a :class:`ClosedFormValues`."""
        row = lambda ts: np.array([[np.nan if t is None else t for t in ts]], dtype=float).reshape(1, len(ts))  # noqa
        one = lambda x: np.array([np.nan if x is None else x], dtype=float)  # noqa: E731
        return cls(row(values.limit_times), row(values.adiabatic_limit_times), one(values.peak[0]),
                   one(values.peak[1]), one(values.end_temperature), one(values.end_rate), one(values.boil_time),
                   one(values.alarm_time))


    def values_of(self, r: int) -> ClosedFormValues:
        """Row r as a :class:`ClosedFormValues` (for the one-case path, e.g. a register group's representative)."""
        def opt(a):
            return None if a is None or np.isnan(a[r]) else float(a[r])

        return ClosedFormValues(_nullable(self.limit_times[r]), opt(self.boil_time), opt(self.alarm_time),
                                (float(self.peak_temperature[r]), float(self.peak_time[r])),
                                float(self.end_temperature[r]), float(self.end_rate[r]),
                                _nullable(self.adiabatic_limit_times[r]))


def _nullable(a: np.ndarray) -> list:
    """Python floats, None where NaN (not reached / not defined)."""
    out = a.astype(object)
    out[np.isnan(a)] = None
    return out.tolist()


def write_case_keys(out: dict, initial_temperature: float, ambient_temperature: float, horizon: float,
                    heat_capacity: float, ua: float, limit_rows: list) -> None:
    """The case keys of a result, after its limit rows (every kind of case: the Arrhenius path too)."""
    out["initial_temperature_K"] = initial_temperature
    out["ambient_temperature_K"] = ambient_temperature
    out["horizon_s"] = horizon
    out["heat_capacity_J_per_K"] = heat_capacity
    out["ua_W_per_K"] = ua
    exceeded = False
    for row in limit_rows:
        if row["time_s"] == 0.0:
            exceeded = True
            break
    out["limit_exceeded_at_start"] = exceeded


#: The climbing-peaks warning of row r with a daily cycle: (r, peak K, unit) -> text or None.
CyclePeaks = Callable[[int, float, str], "str | None"]


class ClosedFormWriter:
    """Per-row numbers of a group on arrays, and each row's result keys written from them.

    ``rep`` is a case of the group (its limit names, detection basis and delay, venting); ``units`` the
    display temperature unit of each row (or one for all). ``boiling`` and ``cycle_peaks`` are the scalar
    piece of rows with a daily cycle (the one-case path passes it); the boiling phase of rows with boiling
    data is a loop over rows here (:func:`boiling_phase`).
    """

    def __init__(self, rep: PreparedCase, group: ClosedFormGroup, values: GroupValues, units,
                 cycle_peaks: CyclePeaks | None = None):
        model = rep.model
        C, G, H = group.heat_capacity, group.conductance, group.horizon
        n = len(C)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            tau = C / G
            steady_lossy = group.steady_drive / G
            pa = np.zeros(n)
            for P, a in zip(group.decaying_power, group.decaying_time):
                pa = pa + P * a
            rise = pa / C
            steady_adiabatic = group.start_temperature + rise
        tau = np.where((G > 0) & np.isfinite(tau), tau, np.nan)
        steady = np.where(G > 0, np.where(np.isfinite(steady_lossy), steady_lossy, np.nan),
                          np.where(group.drive == 0, steady_adiabatic, np.nan))
        times = values.limit_times
        self.tau, self.steady, self.rise = _nullable(tau), _nullable(steady), rise.tolist()
        self.times, self.ad_times = _nullable(times), _nullable(values.adiabatic_limit_times)
        self.peak_T, self.peak_t = values.peak_temperature.tolist(), values.peak_time.tolist()
        self.end_T, self.end_rate = values.end_temperature.tolist(), values.end_rate.tolist()
        self.G, self.H = G.tolist(), H.tolist()
        self.start = group.start_temperature.tolist()
        self.T0, self.Ta, self.C = group.initial_temperature.tolist(), group.ambient_temperature.tolist(), C.tolist()
        self.ua_case = group.ua.tolist()
        self.limit_T = (np.stack(group.limit_temperature, axis=1).tolist() if group.limit_temperature
                        else [[]] * n)
        self.names = [lim.name for lim in model.limits]
        self.units = [units] * n if isinstance(units, str) else list(units)
        self.response = group.response_time.tolist() if group.response_time is not None else [None] * n
        self.basis, self.note = detection_basis(rep)
        self.detection = detection_time(self.basis, rep.detection_delay, None)  # but the alarm's: per row
        alarm = values.alarm_time if self.basis == "alarm" and values.alarm_time is not None else None
        self.alarm = _nullable(alarm) if alarm is not None else [None] * n
        self.cycle_peaks = cycle_peaks
        self.boiling = model.boiling is not None
        self.venting_open = self.boiling and model.boiling.venting == "open"
        self.boil_time = _nullable(values.boil_time) if self.boiling else [None] * n
        if self.boiling:
            self.boiling_point = group.boiling_point.tolist()
            self.latent_heat = group.latent_heat.tolist()
            self.mass, self.p_const = group.mass.tolist(), group.constant_power.tolist()
            self.media = [(u.tolist(), t.tolist()) for u, t in zip(group.media_ua, group.media_temperature)]
            self.decaying = [(P.tolist(), a.tolist()) for P, a in zip(group.decaying_power, group.decaying_time)]
        # rows that need no closed-form warning before the detection ones (the conditions of _warnings, on
        # arrays; the rising check needs a limit not reached as well, so end_rate > 0 alone sends a row to it)
        with np.errstate(invalid="ignore"):
            plain = (np.isnan(tau) | ~(H < tau)) & ~(values.end_rate > 0) & ~(G == 0) & ~(times == 0.0).any(axis=1)
        if self.boiling or cycle_peaks is not None:
            plain[:] = False
        self.plain = plain.tolist()
        # what write() reads of each row, in one tuple
        self.rows = list(zip(self.times, self.limit_T, self.units, self.boil_time, self.alarm, self.response,
                             self.peak_T, self.peak_t, self.end_rate, self.tau, self.steady, self.ad_times, self.rise,
                             self.H, self.plain))

    def write(self, r: int, out: dict, case_keys: bool = False) -> dict:
        """Row r's closed-form keys into ``out`` (in the order of the one-case result), then returned; with
        ``case_keys`` also its :func:`write_case_keys` (a register row: ``out`` is a copy of a whole result)."""
        names, basis = self.names, self.basis
        (times, limit_T, unit, t_boil, alarm, response, peak_T, peak_t, end_rate, tau, steady, ad_times, rise, H,
         plain) = self.rows[r]
        warnings: list[str] = []
        credit = self.venting_open and t_boil is not None
        if credit:  # held at the boiling point while liquid remains
            Tb = self.boiling_point[r]
            times = [None if lt > Tb else t for lt, t in zip(limit_T, times)]
        detection = alarm if basis == "alarm" else self.detection
        limit_rows = make_limit_rows(names, limit_T, times, basis, detection, response)
        boiling_keys = None
        if not plain:
            warnings.extend(limit_at_start_warning(row["name"], row["temperature_K"], self.start[r], unit)
                            for row in limit_rows if row["time_s"] == 0.0)
            if self.boiling:
                boiling_keys, boil_warnings, boil_peak = self._boiling(r, t_boil, unit)
                warnings.extend(boil_warnings)
                if boil_peak is not None:
                    peak_T, peak_t = boil_peak
                    end_rate = 0.0 if boiling_keys.get("_boiling_at_end") else end_rate
                boiling_keys.pop("_boiling_at_end", None)
                if credit:
                    warnings.extend(above_boiling_point_warning(row["name"], row["temperature_K"], Tb, unit)
                                    for row in limit_rows if row["temperature_K"] > Tb)
            warnings.extend(self._warnings(r, limit_rows, peak_T, end_rate, unit))
        out["time_constant_s"] = tau
        out["peak_temperature_K"] = peak_T
        out["peak_time_s"] = peak_t
        out["steady_temperature_K"] = steady
        out["limits"] = limit_rows
        out["adiabatic"] = {"limits": [{"name": name, "time_s": t} for name, t in zip(names, ad_times)],
                            "temperature_rise_K": rise}
        out["boiling"] = boiling_keys
        out["warnings"] = warnings
        out["method"] = "closed-form"
        write_detection(out, basis, self.note, detection, response, H, margins=False)
        out["recovery"] = None
        if case_keys:
            write_case_keys(out, self.T0[r], self.Ta[r], H, self.C[r], self.ua_case[r], limit_rows)
        return out

    def _boiling(self, r: int, t_boil: float | None, unit: str) -> tuple:
        """Row r's boiling phase (:func:`boiling_phase`)."""
        Tb = self.boiling_point[r]
        # N = P_const + sum ua_k (Tm_k - Tb) - UA (Tb - Ta), the net heat input at the boiling point without the
        # decaying sources
        steady_net = self.p_const[r] + sum(u[r] * (t[r] - Tb) for u, t in self.media) - self.ua_case[r] * (Tb - self.Ta[r])
        decaying = [(P[r], a[r]) for P, a in self.decaying]
        return boiling_phase(Tb, self.latent_heat[r], self.H[r], steady_net, decaying, self.mass[r], t_boil,
                             self.venting_open)

    def _warnings(self, r: int, limit_rows: list, peak_T: float, end_rate: float, unit: str) -> list[str]:
        """The short-horizon, still-rising (or climbing daily peaks) and adiabatic warnings of row r."""
        out = []
        H, tau, G = self.H[r], self.tau[r], self.G[r]
        if tau is not None and H < tau:
            out.append(short_horizon_warning(H, tau))
        if self.cycle_peaks is not None and G > 0:  # rising or falling at the horizon is the time of day
            if any(not row["reached"] for row in limit_rows):
                climbing = self.cycle_peaks(r, peak_T, unit)
                if climbing:
                    out.append(climbing)
        elif end_rate > 0 and any(not row["reached"] for row in limit_rows):
            out.append(still_rising_warning(self.end_T[r], end_rate, self.steady[r], unit))
        if G == 0:
            out.append(ADIABATIC_WARNING)
        return out


def boiling_phase(boiling_point: float, latent_heat: float, horizon: float, steady_net: float, decaying: list,
                  mass: float, t_boil: float | None, credit: bool) -> tuple:
    """Boiling phase of one closed-form case: (boiling keys, warnings, (peak K, s) or None).

    With credit (open vessel) the contents hold at the boiling point while the
    net heat input N(t) = P0 + sum P_i exp(-t/a_i) + sum ua_k (Tm_k - Tb) - UA (Tb - Ta)
    is positive; N falls with time, so boiling runs from t_boil until N = 0
    or the contents are dry.  Vapour rate N / latent heat.  ``steady_net`` is N without the decaying
    terms, ``decaying`` the (P_i, a_i) pairs.  The keys hold ``_boiling_at_end`` (boiling at the horizon),
    which the writer takes out.
    """
    warnings = [BOILING_OUT_OF_SCOPE]
    H = horizon
    res = {"time_to_boil_s": t_boil, "peak_boil_off_kg_per_s": None, "boiled_off_kg": None, "time_to_dry_s": None,
           "_boiling_at_end": False}
    if not credit:
        if t_boil is not None:
            warnings.append(BOILING_CLOSED_VESSEL)
        return res, warnings, None
    warnings.append(BOILING_CREDIT)
    if t_boil is None:
        res["boiled_off_kg"] = 0.0
        return res, warnings, None
    Tb, L = boiling_point, latent_heat

    def net(t):
        return steady_net + sum(p * math.exp(-t / a) for p, a in decaying)

    def boiled(t1, t2):
        e = steady_net * (t2 - t1) + sum(p * a * (math.exp(-t1 / a) - math.exp(-t2 / a)) for p, a in decaying)
        return e / L

    n0 = net(t_boil)
    if n0 <= 0:
        res.update(peak_boil_off_kg_per_s=0.0, boiled_off_kg=0.0)
        return res, warnings, (Tb, t_boil)
    t_stop = H
    if net(H) < 0:
        t_stop = brentq(net, t_boil, H, xtol=1e-12 * H, rtol=1e-15)
    t_dry = None
    if boiled(t_boil, t_stop) >= mass:
        t_dry = brentq(lambda t: boiled(t_boil, t) - mass, t_boil, t_stop, xtol=1e-12 * H, rtol=1e-15)
        t_stop = t_dry
        warnings.append(boil_dry_warning(t_dry))
    res.update(peak_boil_off_kg_per_s=n0 / L, boiled_off_kg=boiled(t_boil, t_stop), time_to_dry_s=t_dry)
    res["_boiling_at_end"] = t_stop >= H
    return res, warnings, (Tb, t_boil)
