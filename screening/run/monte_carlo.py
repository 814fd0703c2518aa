"""How sure is the margin: Monte Carlo over uncertain inputs, sensitivity, percentiles.

Uncertain inputs are named by their dotted case path and given a distribution
(uniform, normal, triangular, lognormal).  Spreads may be absolute or relative
to the case's own value (``sd: 10 %``, or a ``gsd`` about it), so one block in a
register's base case applies to every row's own values.  Samples are drawn with
numpy's PCG64 generator or, as an option, by Latin hypercube sampling
(``scipy.stats.qmc``); physically impossible samples (a negative mass, a
temperature at or below absolute zero) are rejected and counted, never clipped.

Every sample is screened by the vectorised engines: the exact closed form
for constant and decaying sources (:mod:`screening.core.time_to_limit_batch`) and the
vectorised Rosenbrock integrator for Arrhenius sources
(:mod:`screening.core.arrhenius_history_batch`). Unstirred contents are screened sample by
sample with the transient conduction solution (:func:`unstirred_sample_times`): each sample's
case is rebuilt and prepared, so uncertain conductivities, densities and dimensions count.
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from screening import progress
from screening.case.paths import apply_updates, locate_quantity, model_slot
from screening.case.prepare import PreparedCase, prepare_case
from screening.case.schema import (
    CaseError,
    FieldProblem,
    FireSpec,
)
from screening.case.uncertainty_plan import (
    UncertainInput,
    UncertaintyPlan,
    draw,
    physically_possible,
    plan_uncertainty,
    quantile,
)
from screening.case.units import DIMENSIONS
from screening.core.daily_cycle import DAY, CycleForcing
from screening.core.terms import (
    conductance_and_drive,
    fire_power,
    heat_capacity,
    released_specific_energy,
    start_temperature,
)

SWING_QUANTILES = (0.05, 0.95)  # one-at-a-time swings: each input at its 5th and 95th percentile


# ------------------------------------------------------------------ parameter arrays


@dataclass
class SampleArrays:
    """SI parameters of N sample-cases for the vectorised engines."""

    m: np.ndarray
    cp: np.ndarray
    wall: np.ndarray
    ua: np.ndarray
    Ta: np.ndarray
    T0: np.ndarray
    Pc: np.ndarray  # (N, nc) constant sources; fire added as a constant column
    Pd: np.ndarray  # (N, kd)
    ad: np.ndarray  # (N, kd)
    mua: np.ndarray  # (N, km)
    mT: np.ndarray  # (N, km)
    q: np.ndarray  # (N, J) Arrhenius
    Tr: np.ndarray
    E: np.ndarray
    order: np.ndarray
    dh: np.ndarray  # NaN: none
    af: np.ndarray
    kr: np.ndarray  # (N, J) rate constant of an autocatalytic source, 1/s (its q is dh kr); NaN: not one
    am: np.ndarray  # (N, J) autocatalytic order m (0: n-th order)
    az: np.ndarray  # (N, J) initiation z
    limits: np.ndarray  # (N, L)
    horizon: np.ndarray
    response: np.ndarray  # NaN when not given
    delay: np.ndarray  # detection delay, NaN when an alarm or nothing
    alarm: np.ndarray  # alarm temperature, NaN when none
    e0: np.ndarray  # heat per kg released at t = 0 (syntheses without kinetics), J/kg
    # the daily cycle (zeros without one): air range K, warmest time s, start s, irradiance W/m^2, absorptivity,
    # outer coefficient W/(m^2 K), exposed share of UA, day length s
    rng: np.ndarray = None
    tw: np.ndarray = None
    s0: np.ndarray = None
    irr: np.ndarray = None
    alpha: np.ndarray = None
    ho: np.ndarray = None
    share: np.ndarray = None
    day: np.ndarray = None

    def forcing(self):
        """The daily cycle's forcing of every sample (W), or None when no sample has one."""
        if not (np.any(self.rng != 0.0) or np.any(self.irr * self.alpha != 0.0)):
            return None
        rise = self.share * self.alpha * self.irr / self.ho
        return CycleForcing(0.5 * self.ua * self.rng, self.tw, self.ua * rise, self.day, np.mod(self.s0, DAY))

    @property
    def n(self) -> int:
        return len(self.m)


def base_arrays(prepared: PreparedCase, n: int) -> SampleArrays:
    model = prepared.model
    full = lambda v: np.full(n, float(v))  # noqa: E731
    cols = lambda vals: np.tile(np.asarray(vals, dtype=float).reshape(1, -1), (n, 1))  # noqa: E731
    srcs = model.arrhenius_sources
    return SampleArrays(
        m=full(model.contents_mass), cp=full(model.contents_specific_heat), wall=full(model.wall_heat_capacity),
        ua=full(model.ua), Ta=full(model.ambient_temperature), T0=full(model.initial_temperature),
        Pc=cols([s.power for s in model.constant_sources] + [fire_power(model)]),
        Pd=cols([s.power for s in model.decaying_sources]), ad=cols([s.time_constant for s in model.decaying_sources]),
        mua=cols([h.ua for h in model.heating_media]), mT=cols([h.medium_temperature for h in model.heating_media]),
        q=cols([s.specific_power for s in srcs]), Tr=cols([s.reference_temperature for s in srcs]),
        E=cols([s.activation_energy for s in srcs]), order=cols([s.order for s in srcs]),
        dh=cols([s.specific_heat_of_reaction if s.specific_heat_of_reaction is not None else np.nan for s in srcs]),
        af=cols([s.accumulated_fraction for s in srcs]),
        kr=cols([s.specific_power / s.specific_heat_of_reaction if s.autocatalytic else np.nan for s in srcs]),
        am=cols([s.autocatalytic_order for s in srcs]), az=cols([s.initiation for s in srcs]),
        limits=cols([lim.temperature for lim in model.limits]), horizon=full(model.horizon),
        response=full(prepared.response_time if prepared.response_time is not None else np.nan),
        delay=full(prepared.detection_delay if prepared.detection_delay is not None else np.nan),
        alarm=full(prepared.detection_alarm if prepared.detection_alarm is not None else np.nan),
        e0=full(released_specific_energy(model)),
        **_cycle_arrays(prepared, full),
    )


def _cycle_arrays(prepared: PreparedCase, full) -> dict:
    """The daily cycle's columns of the sample arrays (the solar rise split into its factors, so that each may
    be sampled)."""
    cycle = prepared.model.daily_cycle
    if cycle is None:
        return dict(rng=full(0.0), tw=full(0.0), s0=full(0.0), irr=full(0.0), alpha=full(0.0), ho=full(1.0),
                    share=full(0.0), day=full(43200.0))
    sun = prepared.spec.sun
    geo = prepared.geometry
    if sun is None:
        irr, alpha, ho, share = 0.0, 0.0, 1.0, 0.0
    else:
        irr, alpha = sun.peak_irradiance.si, sun.absorptivity.si
        ho, share = geo["outer_coefficient_W_per_m2K"], geo["exposed_share"]
    return dict(rng=full(cycle.daily_range), tw=full(cycle.warmest_time), s0=full(cycle.start_time), irr=full(irr),
                alpha=full(alpha), ho=full(ho), share=full(share), day=full(cycle.day_length))


#: Monte Carlo array of each model slot (see screening.case.paths); per-source slots are columns.
_ARRAY_OF_SLOT = {"mass": "m", "cp": "cp", "T0": "T0", "Ta": "Ta", "ua": "ua", "H": "horizon", "response": "response",
                  "delay": "delay", "alarm": "alarm", "limit": "limits", "const": "Pc", "dpower": "Pd", "dtau": "ad",
                  "medium_ua": "mua", "medium_T": "mT", "q": "q", "Tr": "Tr", "E": "E", "dh": "dh", "af": "af",
                  "kr": "kr", "ic": "af",
                  "daily_range": "rng", "warmest": "tw", "start": "s0", "irradiance": "irr", "absorptivity": "alpha",
                  "day_length": "day", "outer_coefficient": "ho"}


def direct_setter(prepared: PreparedCase, parts: tuple):
    """A function (arrays, values) -> None that writes sampled SI values into the arrays, or None
    when the path changes something the arrays cannot express directly (geometry, fill ...)."""
    spec = prepared.spec
    slot = model_slot(spec, parts, prepared.source_positions)
    if slot is None:
        return None
    if slot.kind == "coefficient":
        area = prepared.geometry.get("heat_loss_area_m2")
        if area is None or any(isinstance(s, FireSpec) for s in spec.heat_sources):
            return None
        return lambda a, v: setattr(a, "ua", v * area)
    if slot.kind == "ua_per_mass" or (slot.kind == "mass" and spec.heat_loss.ua_per_mass is not None):
        if any(isinstance(s, FireSpec) for s in spec.heat_sources):
            return None
        if slot.kind == "mass":  # UA follows the mass
            per_kg = spec.heat_loss.ua_per_mass.si
            return lambda a, v: (setattr(a, "m", v), setattr(a, "ua", v * per_kg))
        def set_ua_per_mass(a, v):  # after every other setter (sample_arrays), so that a sampled mass is used
            a.ua = v * a.m
        set_ua_per_mass.last = True
        return set_ua_per_mass
    if slot.kind in ("wall_mass", "wall_cp"):
        v0 = spec.vessel
        other = v0.wall_specific_heat.si if slot.kind == "wall_mass" else v0.wall_mass.si
        return lambda a, v: setattr(a, "wall", v * other)
    if slot.kind == "dhalf":
        return lambda a, v: a.ad.__setitem__((slice(None), slot.index), v / math.log(2.0))
    name = _ARRAY_OF_SLOT.get(slot.kind)
    if name is None:
        return None
    if slot.kind == "ic":  # the initial conversion: the fraction left is 1 - it
        return lambda a, v: a.af.__setitem__((slice(None), slot.index), 1.0 - v)
    if slot.kind == "limit" or name in ("Pc", "Pd", "ad", "mua", "mT", "q", "Tr", "E", "dh", "af", "kr"):
        return lambda a, v: getattr(a, name).__setitem__((slice(None), slot.index), v)
    return lambda a, v: setattr(a, name, v)


def sample_arrays(prepared: PreparedCase, plan: UncertaintyPlan, values: np.ndarray) -> SampleArrays:
    """Parameter arrays for the given sampled values (rows already screened for possibility)."""
    n = values.shape[0]
    arrays = base_arrays(prepared, n)
    setters = [direct_setter(prepared, inp.parts) for inp in plan.inputs]
    if all(s is not None for s in setters):
        order = sorted(range(len(setters)), key=lambda j: getattr(setters[j], "last", False))
        for j in order:
            setters[j](arrays, values[:, j].copy())
        return arrays
    return _arrays_by_preparing(prepared, plan, values, arrays)


def _arrays_by_preparing(prepared, plan, values, arrays) -> SampleArrays:
    """Slow, general path: rebuild each sample's case and prepare it (geometry and fill included)."""
    from dataclasses import replace

    rows = []
    for i in range(values.shape[0]):
        updates = []
        for j, inp in enumerate(plan.inputs):
            _, _, q, _ = locate_quantity(prepared.spec, inp.parts)
            updates.append((inp.parts, replace(q, si=float(values[i, j]))))
        spec = apply_updates(prepared.spec, updates)
        try:
            p = prepare_case(spec)
        except CaseError:
            p = None
        rows.append(p)
    ok = [p for p in rows if p is not None]
    if not ok:
        raise CaseError([FieldProblem("uncertainty", "no sample could be prepared")])
    out = base_arrays(prepared, len(rows))
    for i, p in enumerate(rows):
        if p is None:
            out.m[i] = np.nan
            continue
        b = base_arrays(p, 1)
        for name in out.__dataclass_fields__:
            getattr(out, name)[i] = getattr(b, name)[0]
    return out


# ------------------------------------------------------------------ engines


@dataclass
class SampleTimes:
    limit_times: np.ndarray  # (N, L), NaN not reached
    detection: np.ndarray  # (N,), NaN: never detected (alarm not reached)


#: Samples integrated together at least, for cases with Arrhenius sources, when progress is reported in steps
#: (the batch integrator shares work between two processes only for twice its own chunk or more).
ARRHENIUS_STEP = 4 * 8192


def screen_samples_in_steps(prepared: PreparedCase, arrays: SampleArrays, advance) -> SampleTimes:
    """:func:`screen_samples` in about 20 steps when someone watches the progress (each sample's result does not
    depend on the others it is screened with), at once otherwise."""
    n = arrays.n
    step = max(math.ceil(n / 20), ARRHENIUS_STEP if prepared.model.arrhenius_sources else 1)
    if not progress.active() or n <= step:
        st = screen_samples(prepared, arrays)
        advance(n)
        return st
    parts = []
    for start in range(0, n, step):
        rows = slice(start, min(start + step, n))
        parts.append(screen_samples(prepared, SampleArrays(**{f.name: getattr(arrays, f.name)[rows]
                                                               for f in dataclasses.fields(SampleArrays)})))
        advance(rows.stop - rows.start)
    return SampleTimes(np.concatenate([p.limit_times for p in parts]), np.concatenate([p.detection for p in parts]))


def screen_samples(prepared: PreparedCase, arrays: SampleArrays) -> SampleTimes:
    """First crossing of each limit (and the alarm) for every sample."""
    n = arrays.n
    has_alarm = np.isfinite(arrays.alarm).any()
    L = arrays.limits
    if has_alarm:
        L = np.column_stack([L, arrays.alarm])
    C = heat_capacity(arrays.m, arrays.cp, arrays.wall)
    p_const = sum(arrays.Pc.T) + np.zeros(n)  # constant sources, and the fire heat input as one column
    T_start = start_temperature(arrays.T0, arrays.m, C, arrays.e0)
    if prepared.model.arrhenius_sources:
        from screening.core.arrhenius_history_batch import (
            ArrheniusSamples,
            first_crossing_times_arrhenius,
        )

        auto = np.isfinite(arrays.kr)
        params = ArrheniusSamples(
            heat_capacity=C, contents_mass=arrays.m, ua=arrays.ua, ambient_temperature=arrays.Ta,
            initial_temperature=T_start, constant_power=p_const,
            decaying_power=arrays.Pd, decay_time=arrays.ad, media_ua=arrays.mua, media_temperature=arrays.mT,
            specific_power=np.where(auto, arrays.dh * np.where(auto, arrays.kr, 0.0), arrays.q),
            reference_temperature=arrays.Tr, activation_energy=arrays.E,
            order=np.where(np.isnan(arrays.dh), 0.0, arrays.order), heat_of_reaction=arrays.dh,
            initial_conversion=np.where(np.isnan(arrays.dh), 0.0, np.clip(1.0 - arrays.af, 0.0, 1.0)),
            forcing=arrays.forcing(),
            **({"autocatalytic_order": arrays.am, "initiation": arrays.az} if auto.any() else {}))
        times = first_crossing_times_arrhenius(params, L, arrays.horizon).times
    else:
        from screening.core.time_to_limit_batch import first_crossing_times

        G, Q0 = conductance_and_drive(arrays.ua, arrays.Ta, p_const, list(arrays.mua.T), list(arrays.mT.T))
        P = arrays.Pd if arrays.Pd.shape[1] else np.zeros((n, 1))
        b = 1.0 / arrays.ad if arrays.ad.shape[1] else np.zeros((n, 1))
        forcing = arrays.forcing()
        if forcing is not None:  # the same closed form with the daily cycle, on arrays
            from screening.core.daily_cycle_batch import first_crossing_times_cycle

            times = first_crossing_times_cycle(C, G, Q0, T_start, P, b, forcing, L, arrays.horizon)
        else:
            times = first_crossing_times(C, G, Q0, T_start, P, b, L, arrays.horizon)
        times = np.asarray(times).reshape(n, -1)
    n_lim = arrays.limits.shape[1]
    if has_alarm:
        detection = times[:, n_lim]
    elif prepared.model.scenario == "storage" and prepared.detection_delay is None:
        detection = np.full(n, np.nan)  # unmonitored storage: never detected, checked against the storage period
    else:
        detection = np.where(np.isfinite(arrays.delay), arrays.delay, 0.0)
    return SampleTimes(times[:, :n_lim], detection)


def unstirred_sample_times(prepared: PreparedCase, plan: UncertaintyPlan, values: np.ndarray) -> SampleTimes:
    """Hot-spot time to each limit (and the surface's to the alarm) for every sample of unstirred contents.

    The method-of-lines solutions of all samples on the default mesh, integrated together
    (:func:`screening.core.transient_conduction_batch.hot_spot_histories`, each sample with its own step; the mesh
    check of the case's own result is not repeated per sample); a sample whose case cannot be prepared gives NaN
    times (not reached).
    """
    from dataclasses import replace

    from screening.core.transient_conduction_batch import hot_spot_histories
    from screening.run.conduction_case import conduction_body

    n, n_lim = values.shape[0], len(prepared.model.limits)
    times = np.full((n, n_lim), np.nan)
    detection = np.full(n, np.nan)
    located = [locate_quantity(prepared.spec, inp.parts)[2] for inp in plan.inputs]
    samples = []
    for i in range(n):
        updates = [(inp.parts, replace(q, si=float(values[i, j]))) for j, (inp, q) in
                   enumerate(zip(plan.inputs, located))]
        try:
            samples.append((i, prepare_case(apply_updates(prepared.spec, updates))))
        except CaseError:
            continue
    alarms = [[p.detection_alarm] if p.detection_alarm is not None else [] for _, p in samples]
    hists = hot_spot_histories([conduction_body(p.model) for _, p in samples],
                               [[lim.temperature for lim in p.model.limits] for _, p in samples],
                               [p.model.horizon for _, p in samples], surface_limits=alarms, points=3)
    for (i, p), alarm, hist in zip(samples, alarms, hists):
        model = p.model
        times[i] = [np.nan if t is None else t for t in hist.limit_times]
        if alarm:
            detection[i] = np.nan if hist.surface_limit_times[0] is None else hist.surface_limit_times[0]
        elif model.scenario == "storage" and p.detection_delay is None:
            detection[i] = np.nan  # unmonitored storage
        else:
            detection[i] = p.detection_delay if p.detection_delay is not None else 0.0
    return SampleTimes(times, detection)


def _sample_times(prepared, plan, values, arrays) -> SampleTimes:
    if prepared.model.mixing == "unstirred":
        return unstirred_sample_times(prepared, plan, values)
    return screen_samples(prepared, arrays)


# ------------------------------------------------------------------ statistics


def percentile_not_reached_last(times: np.ndarray, q: float) -> float | None:
    """q-quantile (inverted CDF) with not-reached (NaN) counted as later than any time; None if it falls there."""
    n = len(times)
    if n == 0:
        return None
    t = np.sort(np.where(np.isnan(times), np.inf, times))
    k = max(0, min(n - 1, int(math.ceil(q * n)) - 1))
    v = t[k]
    return None if not np.isfinite(v) else float(v)


def analyse(prepared: PreparedCase, plan: UncertaintyPlan | None = None) -> dict | None:
    """The ``uncertainty`` object of the result."""
    plan = plan if plan is not None else plan_uncertainty(prepared.spec)
    if plan is None:
        return None
    if prepared.model.boiling is not None and prepared.model.boiling.venting == "open" and \
            prepared.model.arrhenius_sources and prepared.model.mixing == "stirred":
        return {"samples": plan.samples, "seed": plan.seed, "sampling": plan.sampling, "rejected": 0,
                "limits": [], "sensitivity": [],
                "note": "Not computed: the vectorised integrator does not model boiling credit (open vessel with "
                        "Arrhenius sources)."}
    values = draw(plan)
    ok = np.ones(values.shape[0], dtype=bool)
    for j, inp in enumerate(plan.inputs):
        ok &= physically_possible(inp, values[:, j])
    rejected = int((~ok).sum())
    values = values[ok]
    arrays = sample_arrays(prepared, plan, values)
    bad = ~np.isfinite(arrays.m) | ~(heat_capacity(arrays.m, arrays.cp, arrays.wall) > 0)
    if bad.any():
        rejected += int(bad.sum())
        keep = ~bad
        values = values[keep]
        arrays = sample_arrays(prepared, plan, values)
    n = values.shape[0]
    if n == 0:
        raise CaseError([FieldProblem("uncertainty.inputs", f"all {plan.samples} samples were rejected as physically "
                                                            f"impossible (for example a negative mass or heat "
                                                            f"capacity): the distributions of "
                                                            f"{', '.join(inp.path for inp in plan.inputs)} give no "
                                                            f"value the case can take")])
    with progress.task(f"Monte Carlo: {n} samples", total=n + 2 * len(plan.inputs)) as advance:
        if prepared.model.mixing == "unstirred":
            st = unstirred_sample_times(prepared, plan, values)
            advance(n)
        else:
            st = screen_samples_in_steps(prepared, arrays, advance)
        return _summarise(prepared, plan, values, arrays, st, n, rejected, advance)


def _summarise(prepared, plan, values, arrays, st, n, rejected, advance) -> dict:
    model = prepared.model
    limits_out = []
    deadline = st.detection + arrays.response  # NaN when no response time, or never detected
    for j, lim in enumerate(model.limits):
        t = st.limit_times[:, j]
        reached = np.isfinite(t)
        within = float(reached.mean()) if n else None
        if prepared.response_time is not None or np.isfinite(arrays.response).any():
            never_detected = ~np.isfinite(st.detection)
            before = reached & (never_detected | (t < deadline))
            p_before = float(before.mean()) if n else None
        else:
            p_before = None
        se = lambda p: None if p is None else math.sqrt(max(p * (1 - p), 0.0) / max(n, 1))  # noqa: E731
        limits_out.append({
            "name": lim.name,
            "probability_before_response": p_before,
            "probability_before_response_standard_error": se(p_before),
            "probability_within_horizon": within,
            "probability_within_horizon_standard_error": se(within),
            "p05_time_s": percentile_not_reached_last(t, 0.05),
            "p50_time_s": percentile_not_reached_last(t, 0.50),
            "p95_time_s": percentile_not_reached_last(t, 0.95),
        })
    first = int(np.argmin([lim.temperature for lim in model.limits]))
    sensitivity = _sensitivity(prepared, plan, values, st.limit_times[:, first], float(np.max(arrays.horizon)))
    advance(2 * len(plan.inputs))
    cdf = _cdf(st.limit_times[:, first])
    return {
        "samples": plan.samples, "accepted": n, "rejected": rejected, "seed": plan.seed, "sampling": plan.sampling,
        "inputs": [{"input": inp.path, "distribution": inp.distribution,
                    **{k: v for k, v in inp.params.items() if v is not None}, "nominal": inp.nominal,
                    "unit_si": _si_unit(inp)} for inp in plan.inputs],
        **({"correlation": {"inputs": [plan.inputs[i].path for i in plan.correlation[0]],
                            "matrix": [list(row) for row in plan.correlation[1]],
                            "note": "correlated normal sampling (a Gaussian copula: the correlation of the values "
                                    "of a normal input, of the logarithm of a lognormal one); the one-at-a-time "
                                    "swings below vary each input alone"}}
           if plan.correlation is not None else {}),
        "first_limit": model.limits[first].name,
        "limits": limits_out,
        "sensitivity": sensitivity,
        "_cdf": cdf,
        "method": (("Monte Carlo over the transient conduction solution of each sample (hot-spot times, method of "
                    "lines on the default mesh)" if model.mixing == "unstirred" else
                    "Monte Carlo over the vectorised " + ("Rosenbrock integrator" if model.arrhenius_sources
                                                          else "closed-form engine"))
                   + f", {plan.sampling} sampling; probabilities have a binomial standard error "
                     f"sqrt(p (1 - p) / n), n = {n}."),
    }


def _si_unit(inp: UncertainInput) -> str:
    return DIMENSIONS[inp.dimension][0]


def _cdf(times: np.ndarray) -> dict:
    n = len(times)
    finite = np.sort(times[np.isfinite(times)])
    if finite.size == 0:
        return {"time_s": [], "probability": [], "n": n}
    idx = np.unique(np.linspace(0, finite.size - 1, min(200, finite.size)).astype(int))
    return {"time_s": finite[idx].tolist(), "probability": ((idx + 1) / n).tolist(), "n": n}


def _sensitivity(prepared, plan, values, first_times, horizon) -> list[dict]:
    """One-at-a-time swings (each input at its 5th and 95th percentile, the others at the case's values)
    and Spearman rank correlation of each input with the time to the first limit."""
    from scipy.stats import spearmanr

    d = len(plan.inputs)
    swing_values = np.tile(np.array([inp.nominal for inp in plan.inputs]), (2 * d, 1))
    for j, inp in enumerate(plan.inputs):
        swing_values[2 * j, j] = quantile(inp, SWING_QUANTILES[0])
        swing_values[2 * j + 1, j] = quantile(inp, SWING_QUANTILES[1])
    ok = np.ones(2 * d, dtype=bool)
    for j, inp in enumerate(plan.inputs):
        ok &= physically_possible(inp, swing_values[:, j])
    clipped = swing_values.copy()
    for j, inp in enumerate(plan.inputs):  # an impossible swing end is reported, not used
        bad = ~ok
        clipped[bad, j] = inp.nominal
    arrays = sample_arrays(prepared, plan, clipped)
    first = int(np.argmin([lim.temperature for lim in prepared.model.limits]))
    t = _sample_times(prepared, plan, clipped, arrays).limit_times[:, first]
    capped = np.where(np.isnan(first_times), np.inf, first_times)
    out = []
    for j, inp in enumerate(plan.inputs):
        lo, hi = t[2 * j], t[2 * j + 1]
        rho = None
        if len(values) > 2 and np.ptp(values[:, j]) > 0 and np.ptp(np.where(np.isinf(capped), 1e300, capped)) > 0:
            r = spearmanr(values[:, j], np.where(np.isinf(capped), 1e300, capped)).statistic
            rho = None if not np.isfinite(r) else float(r)
        lo_t = None if not np.isfinite(lo) else float(lo)
        hi_t = None if not np.isfinite(hi) else float(hi)
        swing = abs((horizon if lo_t is None else lo_t) - (horizon if hi_t is None else hi_t))
        out.append({"input": inp.path, "low_value": float(swing_values[2 * j, j]),
                    "high_value": float(swing_values[2 * j + 1, j]), "unit_si": _si_unit(inp),
                    "low_time_s": lo_t, "high_time_s": hi_t, "rank_correlation": rho,
                    "swing_s": swing, "swing_possible": bool(ok[2 * j] and ok[2 * j + 1])})
    out.sort(key=lambda r: (-r["swing_s"], -(abs(r["rank_correlation"]) if r["rank_correlation"] is not None else 0)))
    return out
