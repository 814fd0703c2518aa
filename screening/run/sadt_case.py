"""SADT, control and emergency temperatures of a packaged self-reactive substance (storage cases).

Each trial integrates the package for 7 days from uniform at the trial ambient with the
temperature-dependent sources only (no constant, decaying, fire or heating-medium input, and the wall
not credited): stirred or convecting liquids with the lumped balance on the batch engine
(:func:`screening.core.arrhenius_history_batch.first_crossing_times_arrhenius`), unstirred contents with
the transient conduction model on the batched conduction integrator
(:func:`screening.core.transient_conduction_batch.hot_spot_histories`), whose centre is the temperature
the test criterion names. The search on the 5 °C grid is :func:`screening.core.sadt.search_sadt_lockstep`,
started at the critical ambient (Semenov or Frank-Kamenetskii) the storage criteria already give: the
searches of many packages run in lock-step (:func:`sadt_searches`, a register chunk's storage rows), and
one case is a group of one, through the same batch trial functions.
"""
from __future__ import annotations

import dataclasses
import math
from collections import OrderedDict

from screening.case.display import temp
from screening.case.prepare import UA_PER_MASS_CAUTION, PreparedCase
from screening.core import sadt as cs
from screening.core.model import Limit, ScreeningModel

#: The result keys this module writes (storage cases only).
SADT_KEYS = ("sadt_K", "sadt_note", "control_temperature_K", "emergency_temperature_K", "sadt")

SADT_CONVENTION = ("SADT: the lowest multiple of 5 °C at which the centre of the contents, starting uniform at that "
                   "ambient, rises 6 K or more above it within 7 days (UN Manual of Tests and Criteria, test series H, "
                   "from memory), computed here from the kinetics and the package's heat loss, not measured.")
TABLE_CONVENTION = ("Control and emergency temperatures: UN Model Regulations table for single packagings and IBCs "
                    "(from memory): SADT <= 20 °C: SADT - 20 K and SADT - 10 K; 20 °C < SADT <= 35 °C: SADT - 15 K "
                    "and SADT - 10 K; SADT > 35 °C: SADT - 10 K and SADT - 5 K.")
PORTABLE_TANK_NOTE = ("Portable tanks have their own row in the Model Regulations' table, not applied here: the "
                      "control and emergency temperatures given are for single packagings and IBCs.")
CLASSIFICATION_NOTE = "Classification (self-reactive substance, organic peroxide and its type) stays the user's " \
                      "responsibility."

_CACHE: "OrderedDict" = OrderedDict()
_CACHE_SIZE = 32


_SEARCH_FAILURES = (RuntimeError, ValueError, ArithmeticError)  # an integration failed: said, not raised


def _search_key(model: ScreeningModel, criteria: dict):
    """(cache key, method, bound, estimate) of a storage case's search."""
    method = "lumped" if model.mixing == "stirred" else "conduction"
    estimate = criteria.get("critical_ambient_temperature_K")
    if method == "lumped" and any(c.power != 0 for c in model.constant_sources):
        estimate = _semenov_of_the_decomposition(model)  # the trials leave the constant sources out
    tops = [s.tested_range[1] if s.tested_range is not None else None for s in model.arrhenius_sources]
    bound = cs.search_bound(tops)
    return (_key_model(model), method, bound, estimate), method, bound, estimate


def sadt_searches(prepared_cases) -> dict:
    """The SADT searches of many storage cases: the stirred ones in one lock-step run of the batch engine,
    the unstirred ones in one lock-step run of the batched conduction integrator.

    Returns {search key: SadtSearch or the exception of a failed trial}, for :func:`sadt_results`'
    ``searches``; cases without an SADT are left out. The search's start needs the critical ambient of the
    criteria: it is computed here as :mod:`screening.run.scenario_criteria` does for a storage case (Semenov
    for stirred contents, Frank-Kamenetskii at the surface Biot number for unstirred ones; a different value
    only means that :func:`sadt_results` runs the search itself).
    """
    from screening.core import runaway as rc
    from screening.core.terms import constant_power
    from screening.run.scenario_criteria import frank_kamenetskii_block, roles_of

    groups: dict = {"lumped": ([], [], [], []), "conduction": ([], [], [], [])}
    seen = set()
    for prepared in prepared_cases:
        model = prepared.model
        if model.scenario != "storage" or _not_applicable(prepared)[0] is not None:
            continue
        try:
            if model.mixing == "stirred":
                critical = rc.semenov_critical_ambient(model.contents_mass, model.arrhenius_sources,
                                                       constant_power(model), model.ua, model.heating_media).ambient
            else:
                fk = frank_kamenetskii_block(model, roles_of(model)[1], [])
                critical = fk["critical_ambient_K"] if fk else None
        except _SEARCH_FAILURES:
            continue
        key, method, bound, estimate = _search_key(model, {"critical_ambient_temperature_K": critical})
        if key in seen or key in _CACHE:
            continue
        seen.add(key)
        grid = cs.sadt_grid(cs.SADT_LOWEST, bound)
        keys, models, grids, starts = groups[method]
        keys.append(key)
        models.append(model)
        grids.append(grid)
        starts.append(cs.start_index(grid, estimate))
    out = {}
    for method, (keys, models, grids, starts) in groups.items():
        if keys:
            out.update(zip(keys, cs.search_sadt_lockstep(_trials_of(method)(models), grids, starts)))
    return out


def sadt_results(prepared: PreparedCase, criteria: dict, searches: dict | None = None) -> dict:
    """The SADT keys of a storage case's result (``criteria``: the scenario keys already computed;
    ``searches``: searches computed beforehand, e.g. :func:`sadt_searches` for a register chunk)."""
    model = prepared.model
    unit = prepared.display_temperature_unit
    out = dict.fromkeys(SADT_KEYS)
    reason, status = _not_applicable(prepared)
    if reason is not None:
        out["sadt_note"] = reason
        out["sadt"] = {"status": status}
        return out
    key, method, bound, estimate = _search_key(model, criteria)
    search = searches.get(key) if searches else None
    if search is None:
        search = _CACHE.get(key)
        if search is not None:
            _CACHE.move_to_end(key)
    if search is None:
        grid = cs.sadt_grid(cs.SADT_LOWEST, bound)
        start = cs.start_index(grid, estimate)
        try:  # a group of one: the same batch trials as a register chunk's
            search = cs.search_sadt_lockstep(_trials_of(method)([model]), [grid], [start])[0]
        except _SEARCH_FAILURES as exc:
            search = exc
    if not isinstance(search, BaseException):
        _CACHE[key] = search
        while len(_CACHE) > _CACHE_SIZE:
            _CACHE.popitem(last=False)
    if isinstance(search, BaseException):
        out["sadt_note"] = (f"No SADT: a 7-day integration of the search failed ({search}); the SADT could not be "
                            f"computed.")
        out["sadt"] = {"status": "failed"}
        return out
    notes = []
    sadt = search.sadt
    tops = [s.tested_range[1] if s.tested_range is not None else None for s in model.arrhenius_sources]
    crit_method = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(
        criteria.get("critical_ambient_method"), "critical-ambient")
    if sadt is None:
        notes.append(f"above {temp(search.bound, unit)}: no 5 °C step up to {temp(search.bound, unit)} (the search "
                     f"bound: {cs.SADT_BOUND_ABOVE_TESTED:g} K above the top of the tested range, at most 200 °C) gave "
                     f"a rise of {cs.SADT_RISE:g} K within 7 days.")
    else:
        known = [t for t in tops if t is not None]
        if len(known) < len(tops):
            notes.append("The kinetics' tested range is not given for every source, so whether the SADT is "
                         "extrapolated cannot be said.")
        elif sadt > max(known) + 1e-9:
            notes.append(f"Extrapolated: the SADT lies above the kinetics' tested range (top "
                         f"{temp(max(known), unit)}); kinetics extrapolated beyond it are not conservative.")
        if estimate is not None and sadt > cs.round_up_to_step(estimate) + 1e-9:
            notes.append(f"The SADT lies above the {crit_method} critical ambient ({temp(estimate, unit)}) rounded "
                         f"up to 5 °C: the 7-day window has missed a slower runaway, and storage longer than 7 days "
                         f"is governed by the critical ambient.")
    if prepared.spec.heat_loss.ua_per_mass is not None:
        notes.append(UA_PER_MASS_CAUTION)
    volume = _contents_volume(prepared)
    packaging = _packaging(volume, model.contents_mass)
    portable_tank = packaging == "tank"
    control = emergency = None
    if sadt is not None and packaging == "package":
        control, emergency = cs.control_and_emergency_temperatures(sadt)
    if packaging == "unknown":
        notes.append(f"The contents' volume is not known (no vessel geometry and no contents.density) and their mass "
                     f"({model.contents_mass:.4g} kg) is more than a single packaging holds "
                     f"({cs.SINGLE_PACKAGING_LARGEST_MASS:g} kg net, from memory): whether they are in an IBC or a "
                     f"tank cannot be told, so no control or emergency temperature is given (the Model Regulations' "
                     f"table used for them applies to single packagings and IBCs). The SADT shown is that of the "
                     f"stated mass and heat loss; give the vessel or contents.density to settle the packaging.")
    if portable_tank:
        notes.append(f"The contents ({volume:.3g} m^3) exceed an IBC's largest capacity ({cs.IBC_LARGEST_VOLUME:g} m^3, "
                     f"from memory): a tank. " + PORTABLE_TANK_NOTE.replace(
                         "the control and emergency temperatures given are for single packagings and IBCs",
                         "no control or emergency temperature is given"))
    control_required = None
    if sadt is not None:
        control_required = {
            "self_reactive_threshold_K": cs.SELF_REACTIVE_CONTROL_THRESHOLD,
            "self_reactive": bool(sadt <= cs.SELF_REACTIVE_CONTROL_THRESHOLD + 1e-9),
            "organic_peroxide_threshold_K": cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD,
            "organic_peroxide": bool(sadt <= cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD + 1e-9),
            "organic_peroxide_by_type_threshold_K": cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD_BY_TYPE,
            "organic_peroxide_by_type": bool(sadt <= cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD_BY_TYPE + 1e-9),
            "note": _control_sentence(sadt, unit),
        }
    if method == "conduction":
        notes.append("Unstirred contents: the centre temperature comes from the transient conduction model "
                     "(the lumped temperature would understate it and is not used).")
    else:
        notes.append("Stirred or convecting contents: the lumped (well-mixed) temperature is taken as the centre "
                     "temperature.")
    out.update(
        sadt_K=sadt, control_temperature_K=control, emergency_temperature_K=emergency,
        sadt_note=" ".join(notes),
        sadt={
            "status": "computed" if sadt is not None else "above bound",
            "method": method,
            "convention": SADT_CONVENTION,
            "table_convention": TABLE_CONVENTION,
            "step_K": cs.SADT_STEP, "rise_K": cs.SADT_RISE, "window_s": cs.SADT_WINDOW,
            "lowest_K": search.lowest, "bound_K": search.bound,
            "critical_ambient_K": estimate, "critical_ambient_method": criteria.get("critical_ambient_method"),
            "trials": [{"ambient_K": t.ambient, "triggered": t.triggered, "rise_time_s": t.rise_time,
                        "centre_at_7_days_K": t.centre_at_end, "peak_centre_K": t.peak_centre,
                        "stopped_at_s": t.stopped_at} for t in search.trials],
            "temperature_control_required": control_required,
            "portable_tank": portable_tank,
            "packaging": packaging,
            "packaging_note": PORTABLE_TANK_NOTE,
            "classification_note": CLASSIFICATION_NOTE,
            "sources": "temperature-dependent (decomposition) sources only; no constant, decaying, fire or "
                       "heating-medium input; the wall's heat capacity not credited (conservative)",
        },
    )
    return out


def _control_sentence(sadt: float, unit: str) -> str:
    def side(threshold):
        return "at or below" if sadt <= threshold + 1e-9 else "above"

    return (f"The SADT ({temp(sadt, unit)}) is {side(cs.SELF_REACTIVE_CONTROL_THRESHOLD)} "
            f"{temp(cs.SELF_REACTIVE_CONTROL_THRESHOLD, unit)}, at or below which the Model Regulations require "
            f"temperature control for a self-reactive substance, and {side(cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD)} "
            f"{temp(cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD, unit)} ({side(cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD_BY_TYPE)} "
            f"{temp(cs.ORGANIC_PEROXIDE_CONTROL_THRESHOLD_BY_TYPE, unit)}, which applies to some types) for an "
            f"organic peroxide (thresholds from memory). " + CLASSIFICATION_NOTE)


def _not_applicable(prepared: PreparedCase) -> tuple[str | None, str | None]:
    """(why no SADT is computed for a storage case, and the status: "not applicable" or "data missing"),
    or (None, None)."""
    model = prepared.model
    if not model.arrhenius_sources:
        return "No SADT: the case has no temperature-dependent (decomposition) source.", "not applicable"
    if any(s.role == "synthesis" for s in model.arrhenius_sources):
        return ("No SADT: a synthesis (desired reaction) source is present; the SADT is defined for a substance whose "
                "temperature-dependent sources are all decompositions."), "not applicable"
    if any(h.ua > 0 for h in model.heating_media):
        return ("No SADT: the case stores the contents with a heating medium on, so the medium, not the ambient, "
                "sets their temperature; the SADT (a property of the package in still surroundings) does not "
                "apply."), "not applicable"
    if model.mixing != "stirred" and None in (model.conduction_geometry, model.conduction_radius, model.density,
                                              model.thermal_conductivity):
        return ("No SADT: unstirred contents need a vessel shape, contents.density and contents.thermal_conductivity "
                "for the conduction model of the centre temperature (the lumped figure is not used for them)."), \
            "data missing"
    return None, None


def _semenov_of_the_decomposition(model: ScreeningModel) -> float | None:
    """Semenov critical ambient of the temperature-dependent sources alone (what the lumped trials integrate)."""
    from screening.core import runaway as rc

    return rc.semenov_critical_ambient(model.contents_mass, model.arrhenius_sources, 0.0, model.ua, ()).ambient


def _contents_volume(prepared: PreparedCase) -> float | None:
    v = (prepared.geometry or {}).get("liquid_volume_m3")
    if v is not None:
        return float(v)
    model = prepared.model
    return model.contents_mass / model.density if model.density else None


def _packaging(volume: float | None, mass: float) -> str:
    """"package" (at most an IBC's capacity, or with the volume unknown at most a single packaging's net mass),
    "tank" (more than an IBC holds) or "unknown" (the volume unknown and more than a single packaging's mass)."""
    if volume is not None:
        return "tank" if volume > cs.IBC_LARGEST_VOLUME else "package"
    return "unknown" if mass > cs.SINGLE_PACKAGING_LARGEST_MASS else "package"


def _key_model(model: ScreeningModel) -> ScreeningModel:
    """The model with what the trials do not read blanked, so that ``margin`` on the ambient reuses the search
    (and a row whose start time of day is chosen when it is screened finds its chunk's search)."""
    return dataclasses.replace(model, ambient_temperature=0.0, initial_temperature=0.0, horizon=0.0, limits=(),
                               constant_sources=(), decaying_sources=(), fire_sources=(), heating_media=(),
                               boiling=None, maximum_technical_temperature=None, released_at_start=(),
                               wall_heat_capacity=0.0, scenario="storage", daily_cycle=None)


def _trial_model(model: ScreeningModel, ambient: float) -> ScreeningModel:
    """A stirred package at one ambient for 7 days, from uniform at it, with its decompositions alone
    (no wall credited), and the rise of the test criterion as its one limit."""
    return ScreeningModel(model.contents_mass, model.contents_specific_heat, 0.0, model.ua, ambient, ambient,
                          cs.SADT_WINDOW, arrhenius_sources=tuple(model.arrhenius_sources),
                          limits=(Limit("sadt rise", ambient + cs.SADT_RISE),), scenario="storage")


def _lumped_trials(models):
    """Trials of stirred packages for :func:`screening.core.sadt.search_sadt_lockstep`: every pending
    (package, ambient) of a round integrated together by the batch engine
    (:func:`screening.core.arrhenius_history_batch.first_crossing_times_arrhenius`), stopped at the
    ambient + 100 K (a runaway) and otherwise followed to the end of the 7 days."""
    from screening.core.arrhenius_history_batch import (STATUS_FAILED, STATUS_HORIZON,
                                                        first_crossing_times_arrhenius, samples_from_models)

    def trials(requests):
        runs = [_trial_model(models[p], ambient) for p, ambient in requests]
        params, limits, horizon = samples_from_models(runs)
        stop = [ambient + 100.0 for _, ambient in requests]
        try:
            res = first_crossing_times_arrhenius(params, limits, horizon, stop_temperature=stop, to_horizon=True,
                                                 on_failure="flag")
        except _SEARCH_FAILURES as exc:  # inputs out of the engine's range: find which package, alone
            if len(requests) == 1:
                return [exc]
            return [trials([r])[0] for r in requests]
        out = []
        for k, (_, ambient) in enumerate(requests):
            if res.status[k] == STATUS_FAILED:
                out.append(RuntimeError(f"the 7-day integration at {ambient:.2f} K needed more steps than allowed"))
                continue
            t = float(res.times[k, 0])
            hit = math.isfinite(t)
            horizon_end = res.status[k] == STATUS_HORIZON
            out.append(cs.SadtTrial(ambient, hit, t if hit else None,
                                    float(res.end_temperature[k]) if horizon_end else None,
                                    float(res.peak_temperature[k]),
                                    None if horizon_end else float(res.end_time[k])))
        return out

    return trials


def _conduction_trials(models):
    """Trials of unstirred packages for :func:`screening.core.sadt.search_sadt_lockstep`: every pending
    (package, ambient) of a round integrated together by the batched conduction integrator
    (:func:`screening.core.transient_conduction_batch.hot_spot_histories`, 64 cells, each body with its own
    step, so a trial's numbers do not depend on the others of its batch), from uniform at the ambient with the
    decompositions alone (:func:`screening.run.conduction_case.conduction_body`, ``other_heat=False``), the rise
    located on the hottest cell (the centre of a self-heating body), stopped at the ambient + 100 K (a runaway)
    and otherwise followed to the end of the 7 days."""
    from screening.core.transient_conduction_batch import hot_spot_histories
    from screening.run.conduction_case import conduction_body

    def trials(requests):
        try:
            bodies = [conduction_body(models[p], initial_temperature=ambient, ambient_temperature=ambient,
                                      other_heat=False) for p, ambient in requests]
            hists = hot_spot_histories(bodies, [[ambient + cs.SADT_RISE] for _, ambient in requests],
                                       cs.SADT_WINDOW, stop_temperature=[ambient + 100.0 for _, ambient in requests])
        except _SEARCH_FAILURES as exc:  # a body out of range, or one that needed too many steps: which, alone
            if len(requests) == 1:
                if isinstance(exc, RuntimeError):
                    exc = RuntimeError(f"the 7-day conduction integration at {requests[0][1]:.2f} K needed more "
                                       f"steps than allowed")
                return [exc]
            return [trials([r])[0] for r in requests]
        out = []
        for (_, ambient), hist in zip(requests, hists):
            t = hist.limit_times[0]
            end = float(hist.time[-1])
            out.append(cs.SadtTrial(ambient, t is not None, t, None if hist.stopped else float(hist.centre[-1]),
                                    float(hist.centre.max()), end if hist.stopped else None))
        return out

    return trials


def _trials_of(method: str):
    """The batch trial function of a search method ("lumped" or "conduction")."""
    return _lumped_trials if method == "lumped" else _conduction_trials


def sadt_sentence(result: dict, unit: str) -> str | None:
    """One line for the readable output: SADT, control and emergency temperatures with their conventions."""
    if "sadt_K" not in result:
        return None
    sadt = result.get("sadt_K")
    if sadt is None:
        return result.get("sadt_note")
    text = f"SADT {temp(sadt, unit)} (computed; {result['sadt']['method']} centre temperature)"
    if result.get("control_temperature_K") is not None:
        text += (f"; control temperature {temp(result['control_temperature_K'], unit)}, emergency temperature "
                 f"{temp(result['emergency_temperature_K'], unit)}")
    return text + "."


__all__ = ["SADT_KEYS", "sadt_results", "sadt_searches", "sadt_sentence"]
