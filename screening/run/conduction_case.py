"""Unstirred contents: the transient conduction solution joined to a screening result.

Unstirred contents (``contents.mixing: unstirred``: powders, pastes, solids, a liquid left without
agitation) cool and heat through their surface by conduction, so their centre runs hotter or colder
than their surface. For them the time to each limit is the time at which the **hottest point** reaches
it, from the 1-D heat equation with the case's heat sources (:mod:`screening.core.transient_conduction`);
the lumped (well-mixed) result is kept under ``lumped`` for comparison.

How the case becomes a body (:func:`conduction_body`):

- shape: a sphere is a sphere; a box is a slab of half its smallest dimension and a cylinder is
  infinitely long, both losing less heat than the real body (conservative); the vessel's shape is used
  whatever the fill (a partly filled vessel's contents are thinner: conservative);
- temperature-dependent sources: their rates per kg, with depletion, at every point;
- constant and decaying sources: uniform per unit mass (W / contents mass);
- surface: the case's heat-loss coefficient, or UA spread over the vessel's area (``model.surface_coefficient``);
  none when UA is 0 (adiabatic, or a fire: the fire correlation is a net heat input);
- fire and heating media: at the surface, per unit mass as in the lumped balance (the fire's W / kg times
  the body's mass per unit surface as a flux; a medium's ua / kg likewise as a conductance per unit area), so
  the heat they bring to the whole mass is that of the lumped balance while the surface takes it first;
- the vessel wall's heat capacity is not counted (conservative for self-heating and for heat from outside);
- boiling is not modelled in the conduction solution: no tempering credit (conservative for the time to a
  limit); the time the hot spot reaches the boiling point is reported.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.case.display import duration, temp
from screening.case.prepare import PreparedCase
from screening.core.model import ScreeningModel
from screening.core.terms import constant_power, fire_power, released_specific_energy, start_temperature
from screening.core.transient_conduction import (
    GEOMETRY_INDEX,
    MESH_TOLERANCE,
    ConductionBody,
    ConductionHistory,
)
from screening.core.transient_conduction_batch import hot_spot_histories_with_mesh_check
from screening.run.recovery import detection_and_recovery

__all__ = ["conduction_body", "apply_conduction", "conduction_solutions", "ConductionSolution", "geometry_approximation",
           "is_liquid", "APPROXIMATIONS"]

#: vessel shape -> (geometry of the conduction body, how it is approximated, or None when exact)
APPROXIMATIONS = {
    "sphere": ("sphere", None),
    "box": ("slab", "the box is treated as an infinite slab of half its smallest dimension"),
    "vertical-cylinder": ("cylinder", "the finite cylinder is treated as infinitely long"),
    "horizontal-cylinder": ("cylinder", "the finite cylinder is treated as infinitely long"),
}

RISING_K = 0.1  # K over the last tenth of the horizon: "still rising" (smaller rises are a settling approach)
SELF_LIMITING = ("The synthesis is self-limiting here: the contents peak and cool instead of running away, and the "
                 "MTSR (adiabatic, no heat loss) bounds the peak.")
LUMPED_PHRASE = "In the computed history (with the heat loss as stated)"


def _mass_per_area(geometry: str, density: float, half_thickness: float) -> float:
    """kg of the body per m^2 of its surface: rho R / (j + 1) for a slab, cylinder or sphere."""
    return density * half_thickness / (GEOMETRY_INDEX[geometry] + 1)


def conduction_body(model: ScreeningModel, *, sources=None, initial_temperature: float | None = None,
                    ambient_temperature: float | None = None, other_heat: bool = True) -> ConductionBody:
    """The unstirred body of a model, in SI, for :func:`screening.core.transient_conduction_batch.hot_spot_histories`.

    Parameters
    ----------
    model : ScreeningModel
        With ``conduction_geometry``, ``conduction_radius``, ``thermal_conductivity`` and ``density`` set
        (``case.prepare`` refuses an unstirred case without them).
    sources : sequence of ArrheniusSource, optional
        Temperature-dependent sources to include (default: all of the model's).
    initial_temperature : float, [K], optional
        Uniform start temperature (default: the model's initial temperature plus any heat released at
        t = 0, per kg of contents over the contents' specific heat).
    ambient_temperature : float, [K], optional
        Default: the model's.
    other_heat : bool, default True
        Include the constant and decaying sources, fire and heating media; False gives the body with the
        temperature-dependent sources alone (e.g. for a self-accelerating temperature search).

    Returns
    -------
    ConductionBody
    """
    geometry, R = model.conduction_geometry, model.conduction_radius
    k, rho = model.thermal_conductivity, model.density
    if geometry is None or R is None or k is None or rho is None:
        raise ValueError("unstirred contents need a conduction geometry, radius, thermal conductivity and density")
    m, cp = model.contents_mass, model.contents_specific_heat
    mass_per_area = _mass_per_area(geometry, rho, R)
    if model.ua > 0:
        h = model.surface_coefficient
        if h is None:  # UA with no area to spread it over: per unit mass, as in the lumped balance
            h = model.ua / m * mass_per_area
    else:
        h = 0.0
    if initial_temperature is None:
        initial_temperature = start_temperature(model.initial_temperature, m, m * cp, released_specific_energy(model))
    uniform, decaying, flux, hm, tm = 0.0, (), 0.0, 0.0, 0.0
    if other_heat:
        fire = fire_power(model)
        uniform = (constant_power(model) - fire) / m  # the constant sources alone
        decaying = tuple((s.power / m, s.time_constant) for s in model.decaying_sources)
        flux = fire / m * mass_per_area
        media = [x for x in model.heating_media if x.ua > 0]
        if media:
            ua_m = sum(x.ua for x in media)
            hm = ua_m / m * mass_per_area
            tm = sum(x.ua * x.medium_temperature for x in media) / ua_m
    return ConductionBody(
        geometry, R, rho, cp, k, float(h),
        float(model.ambient_temperature if ambient_temperature is None else ambient_temperature),
        float(initial_temperature),
        tuple(model.arrhenius_sources if sources is None else sources), uniform, decaying, flux, hm, tm,
        daily_cycle=model.daily_cycle if other_heat else None)  # an SADT trial is at a constant ambient


@dataclass(frozen=True)
class ConductionSolution:
    """The conduction solution of one case: what was solved (body, limits with the boiling point last when the
    contents have one, surface limits, horizon) and the answer (the 128-cell history and the mesh change)."""

    body: ConductionBody
    limits: tuple
    surface_limits: tuple
    horizon: float
    history: ConductionHistory
    mesh_change: float | None


def _problem(prepared: PreparedCase) -> tuple:
    """(body, limits and the boiling point, surface limits, horizon) of an unstirred case."""
    model = prepared.model
    limits = [lim.temperature for lim in model.limits]
    if model.boiling is not None:
        limits.append(model.boiling.boiling_point)
    surface = [prepared.detection_alarm] if prepared.detection_alarm is not None else []
    return conduction_body(model), tuple(limits), tuple(surface), float(model.horizon)


def conduction_solutions(prepared_cases) -> list[ConductionSolution]:
    """The conduction solutions of unstirred cases, integrated together (one batch per mesh).

    One case is a group of one: :func:`apply_conduction` calls this with its own case, and a register chunk with
    all its unstirred rows; each body has its own step, so a row's numbers are those of the same case alone.
    """
    problems = [_problem(p) for p in prepared_cases]
    if not problems:
        return []
    solved = hot_spot_histories_with_mesh_check([b for b, *_ in problems], [list(l) for _, l, _, _ in problems],
                                                [H for *_, H in problems],
                                                surface_limits=[list(s) for _, _, s, _ in problems])
    return [ConductionSolution(b, l, s, H, hist, change) for (b, l, s, H), (hist, change) in zip(problems, solved)]


def geometry_approximation(prepared: PreparedCase) -> str | None:
    """How the vessel's shape was approximated for the conduction solution (None: a sphere, exact)."""
    shape = prepared.spec.vessel.shape if prepared.spec.vessel is not None else None
    return APPROXIMATIONS.get(shape, (None, None))[1]


def is_liquid(model: ScreeningModel) -> bool:
    """Contents are taken as a liquid when a boiling point is given (a powder or solid has none to give)."""
    return model.boiling is not None


def _rows(model: ScreeningModel, hist: ConductionHistory, mesh_change, unit: str) -> tuple[list, list]:
    rows, warnings = [], []
    ill = mesh_change is not None and mesh_change > MESH_TOLERANCE
    for lim, t in zip(model.limits, hist.limit_times):
        row = {"name": lim.name, "temperature_K": lim.temperature, "time_s": t, "reached": t is not None}
        if ill and t is not None:
            change = "a limit reached on one mesh only" if math.isinf(mesh_change) else f"{mesh_change * 100:.2g} %"
            row["time_note"] = (f"hot-spot time not mesh-converged: halving the mesh moved a limit time by {change} "
                                f"(more than {MESH_TOLERANCE * 100:.1g} %): the time is ill-conditioned (near "
                                f"criticality) or the mesh is coarse for a fast change at the surface; read it "
                                f"with care")
            text = f"Limit '{lim.name}' reached by the hot spot after {duration(t)}: {row['time_note']}."
            warnings.append(text)
        rows.append(row)
    return rows, warnings


def still_rising(hist: ConductionHistory, horizon: float) -> bool:
    """The hot spot rose by more than RISING_K over the last tenth of the horizon (and did not stop early)."""
    if hist.stopped or len(hist.time) < 2:
        return False
    before = float(np.interp(0.9 * horizon, hist.time, hist.hot_spot))
    return bool(hist.hot_spot[-1] - before > RISING_K and hist.hot_spot[-1] >= hist.hot_spot[-2])


def _history_sentence(hist: ConductionHistory, model: ScreeningModel, unit: str) -> str:
    H = model.horizon
    if hist.stopped:
        return (f"In the transient conduction solution the hot spot runs away: it passes "
                f"{temp(hist.hot_spot[-1], unit)} after {duration(float(hist.time[-1]))}.")
    if still_rising(hist, H):
        return (f"In the transient conduction solution the hot spot is still rising at the end of the horizon "
                f"({temp(hist.hot_spot[-1], unit)} after {duration(H)}).")
    if hist.peak_time > 0:
        return (f"In the transient conduction solution the hot spot peaks at {temp(hist.peak_temperature, unit)} "
                f"after {duration(hist.peak_time)}; at the end of the horizon it is at {temp(hist.hot_spot[-1], unit)}"
                f" (centre {temp(hist.centre[-1], unit)}).")
    return (f"In the transient conduction solution the hot spot does not rise above its start "
            f"({temp(hist.peak_temperature, unit)}); at the end of the horizon the centre is at "
            f"{temp(hist.centre[-1], unit)}.")


# Lumped-path texts that are not true of a conduction result, and what replaces them.
_DROP_PREFIXES = (
    "Contents are unstirred: the lumped (well-mixed) history understates",
    "The temperature is still rising at the end of the horizon",
    "The alarm temperature is not reached within the horizon",
    "The horizon (",  # response beyond horizon / short horizon: re-added below where they still hold
    "Tempering credit taken",  # the lumped history's boiling: the conduction solution takes no credit
    "The contents boil dry at",
)


def apply_conduction(prepared: PreparedCase, core: dict, solution: ConductionSolution | None = None) -> None:
    """Turn the lumped core of an unstirred case's result into the conduction result, in place.

    ``limits`` (and their margins), ``peak_temperature_K`` / ``peak_time_s``, the detection time and ``boiling``
    become the hot spot's; the lumped values go under ``lumped`` (``_history`` stays the lumped history, and
    ``_conduction_history`` holds the hot spot, centre and surface); ``conduction`` says how the body was built
    and how well the mesh converged. ``solution``: the case's conduction solution computed elsewhere (a
    register chunk's batch, :func:`conduction_solutions`); used only if it solved this case's body, limits and
    horizon, else the case is solved here (a group of one).
    """
    model = prepared.model
    unit = prepared.display_temperature_unit
    problem = _problem(prepared)
    if solution is None or (solution.body, solution.limits, solution.surface_limits, solution.horizon) != problem:
        solution, = conduction_solutions([prepared])
    body = solution.body
    boiling_point = model.boiling.boiling_point if model.boiling is not None else None
    extra = [boiling_point] if boiling_point is not None else []
    surface_limits = list(solution.surface_limits)
    hist, mesh_change = solution.history, solution.mesh_change
    times = list(hist.limit_times)
    boil_time = times.pop() if extra else None
    hist = _with_times(hist, times)
    warnings = [w for w in core["warnings"] if not w.startswith(_DROP_PREFIXES)]

    core["lumped"] = {
        "limits": [{k: r.get(k) for k in ("name", "temperature_K", "time_s", "reached")} for r in core["limits"]],
        "peak": {"temperature_K": core.get("peak_temperature_K"), "time_s": core.get("peak_time_s")},
        "steady_temperature_K": core.get("steady_temperature_K"),
        "boiling": core.get("boiling"),
        "recovery": core.get("recovery"),
    }
    rows, row_warnings = _rows(model, hist, mesh_change, unit)
    core["limits"] = rows
    core["peak_temperature_K"] = hist.peak_temperature
    core["peak_time_s"] = hist.peak_time
    core["steady_temperature_K"] = None  # the lumped steady state is not the body's; see conduction
    core["recovery"] = None
    core.pop("_recovery_history", None)
    # detection: an alarm is taken to sound when the surface reaches it (a probe on the outside of the mass)
    detection = {"limits": rows, "warnings": []}
    detection_and_recovery(prepared, detection, alarm_time=hist.surface_limit_times[0] if surface_limits else None)
    for key in ("detection_time_s", "detection_basis", "detection_note", "response_time_s"):
        core[key] = detection[key]
    warnings += row_warnings + detection["warnings"]

    approx = geometry_approximation(prepared)
    biot = body.biot_number
    centre_end = None if hist.stopped else float(hist.centre[-1])
    notes = [f"Limit times and the peak are those of the hottest point of the unstirred contents, from a transient "
             f"conduction solution ({body.geometry}, {'half-thickness' if body.geometry == 'slab' else 'radius'} "
             f"{body.half_thickness:.4g} m, surface Biot number {biot:.3g}); the lumped (well-mixed) result is kept "
             f"under 'lumped' for comparison."]
    if approx is not None:
        notes.append(f"Geometry approximated: {approx}, which loses less heat than the real body, so the hot spot "
                     f"is hotter and reaches a limit earlier than in the real body (conservative).")
    if prepared.fill_fraction is not None and prepared.fill_fraction < 1.0 - 1e-9:
        notes.append(f"The contents fill {prepared.fill_fraction * 100:.3g} % of the vessel; the conduction body "
                     f"takes the vessel's full cross-section, at least as thick as the contents (conservative).")
    notes.append("The vessel wall's heat capacity is not counted in the conduction solution (conservative).")
    if model.boiling is not None:
        notes.append(f"Boiling is not modelled in the conduction solution: no tempering credit is taken, so the hot "
                     f"spot may pass the boiling point ({temp(boiling_point, unit)}); conservative for the times to "
                     f"the limits. The time shown to boil is when the hot spot first reaches the boiling point.")
    if model.fire_sources or any(x.ua > 0 for x in model.heating_media) \
            or model.ambient_temperature > body.initial_temperature:
        warnings.append(f"Heat enters the unstirred contents through their surface (a fire, a heating medium or a "
                        f"warmer ambient): the hottest point can be the surface itself, while the hot spot is taken "
                        f"at the centre of the outer cell, {body.half_thickness / hist.cells * 500:.3g} mm inside "
                        f"it, which reaches a limit somewhat later than the surface (not conservative); the mesh "
                        f"change shown says by how much the times still move.")
    if prepared.detection_alarm is not None:
        notes.append("The alarm is taken to sound when the surface of the contents reaches the alarm temperature "
                     "(a probe on the outside of the mass).")
    if prepared.recovery is not None:
        warnings.append("Recovery is not computed for unstirred contents: restored cooling reaches the hot spot only "
                        "by conduction through the mass, which the lumped recovery path (kept under 'lumped') does "
                        "not show; it is not valid for them.")
    liquid = is_liquid(model)
    if liquid:
        warnings.append("The contents are taken as a liquid (a boiling point is given): in an unstirred liquid "
                        "natural convection governs and carries heat far faster than conduction, so these "
                        "pure-conduction hot-spot times are very conservative (early) and the hot spot is hotter "
                        "than it would be.")
    if core.get("runaway_summary"):
        summary = core["runaway_summary"].replace(LUMPED_PHRASE,
                                                  "In the lumped (well-mixed) history, kept for comparison,")
        # said of the lumped history; the hot spot's own sentence follows
        summary = summary.replace(" " + SELF_LIMITING, "").replace(SELF_LIMITING, "")
        core["runaway_summary"] = summary
    sentence = _history_sentence(hist, model, unit)
    core["runaway_summary"] = (core.get("runaway_summary") + " " + sentence) if core.get("runaway_summary") \
        else sentence
    if not hist.stopped and still_rising(hist, model.horizon):
        warnings.append(f"The hot spot is still rising at the end of the horizon ({temp(hist.hot_spot[-1], unit)}): "
                        f"a limit not reached within the horizon may be reached later.")
    if core.get("boiling") is not None or model.boiling is not None:
        core["boiling"] = {"time_to_boil_s": boil_time, "peak_boil_off_kg_per_s": None, "boiled_off_kg": None,
                           "time_to_dry_s": None}
    core["conduction"] = {
        "geometry": body.geometry,
        "half_thickness_m": body.half_thickness,
        "biot_number": biot,
        "centre_temperature_at_horizon_K": centre_end,
        "hot_spot_temperature_at_end_K": float(hist.hot_spot[-1]),
        "end_time_s": float(hist.time[-1]),
        "runs_away": hist.stopped,
        "mesh_relative_change": None if mesh_change is None or math.isinf(mesh_change) else mesh_change,
        "mesh_converged": None if mesh_change is None else bool(mesh_change <= MESH_TOLERANCE),
        "cells": hist.cells,
        "geometry_approximated": approx is not None,
        "geometry_approximation": approx,
        "liquid": liquid,
        "notes": notes,
    }
    core["warnings"] = _unique(warnings)
    core["_conduction_history"] = {"time_s": hist.time.tolist(), "hot_spot_K": hist.hot_spot.tolist(),
                                   "centre_K": hist.centre.tolist(), "surface_K": np.asarray(hist.surface).tolist()}


def _with_times(hist: ConductionHistory, times: list) -> ConductionHistory:
    from dataclasses import replace

    return replace(hist, limit_times=times)


def _unique(items):
    seen, out = set(), []
    for x in items:
        if x not in seen:
            seen.add(x)
            out.append(x)
    return out
