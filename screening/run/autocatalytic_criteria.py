"""What the criteria say about an autocatalytic source: the methods used, the conversion of maximum rate, the
isothermal induction time at the storage temperature or at MTSR, and the cautions that go with them.

Hooks of :mod:`screening.run.scenario_criteria`: :func:`tmr` and :func:`td24` choose the method for TMRad and
T_D24 (the integrated adiabatic history when the decomposition has an autocatalytic source, else Townsend and
Tou's closed form, unchanged), and :func:`add_block` writes the ``autocatalytic`` object and the induction-time
keys, which a result has only when one of its sources is autocatalytic.
"""
from __future__ import annotations

import math

from screening.case.display import duration, temp
from screening.core import runaway as rc
from screening.core.arrhenius import conversion_function, conversion_of_maximum_rate

TMR_BASIS = ("TMRad and T_D24 come from the integrated adiabatic history of the decomposition (phi = 1: the "
             "contents' specific heat alone, the wall not credited), followed to its maximum rate; the Townsend-Tou "
             "closed form c_p R T0^2 / (q0 E) is the zero-order asymptote and does not apply to an autocatalytic "
             "reaction, whose rate at the start understates it.")
TMR_BASIS_CLOSED = ("TMRad and T_D24 of the decomposition use the Townsend-Tou closed form c_p R T0^2 / (q0 E) "
                    "(phi = 1): it has no autocatalytic source.")
STEADY_BASIS = ("The steady criteria (Semenov critical ambient and steady states, Frank-Kamenetskii, critical "
                "medium temperature) take each autocatalytic source's rate at its conversion of maximum rate "
                "alpha* = argmax (1 - alpha)^n (alpha^m + z), the largest rate it reaches at any temperature: "
                "conservative.")
SENSITIVITY = ("The induction time is very sensitive to the initiation term z and to the initial conversion: aged, "
               "recycled or contaminated material (partly converted, or seeded with its own products) has a much "
               "shorter one, down to none at all.")
INDUCTION_BASIS = ("Isothermal induction time: the time to the maximum rate at a constant temperature, "
                   "t = (1 / k(T)) integral from alpha_0 to alpha* of d(alpha) / f(alpha); heat loss and self-heating "
                   "are left out (the temperature history covers them).")


def has_autocatalytic(sources) -> bool:
    return any(s.autocatalytic for s in sources)


def tmr(temperature, specific_heat, decomposition):
    """TMRad at a temperature, by the method that fits the decomposition."""
    if has_autocatalytic(decomposition):
        return rc.tmr_adiabatic_integrated(temperature, specific_heat, decomposition)
    return rc.tmr_adiabatic(temperature, specific_heat, decomposition)


def td24(specific_heat, decomposition):
    """(T_D24, warnings) by the method that fits the decomposition."""
    if has_autocatalytic(decomposition):
        value = rc.t_d24_integrated(specific_heat, decomposition)
        return value, rc.kinetics_warnings(decomposition, [value])
    return rc.t_d24(specific_heat, decomposition, full_output=True)


def _initial_conversion(s) -> float:
    return 1.0 - s.accumulated_fraction


def add_block(prepared, out: dict, decomposition) -> list[str]:
    """The ``autocatalytic`` object and the induction-time keys of a result; the warnings that go with them."""
    model = prepared.model
    auto = [(i, s) for i, s in enumerate(model.arrhenius_sources, start=1) if s.autocatalytic]
    if not auto:
        return []
    unit = prepared.display_temperature_unit
    scenario = model.scenario
    storage_T = out.get("storage_temperature_K")
    mtsr = out.get("mtsr_K")
    rows = []
    storage_times, mtsr_times = [], []
    for i, s in auto:
        a0 = _initial_conversion(s)
        a_star = conversion_of_maximum_rate(s.order, s.autocatalytic_order, s.initiation, a0)
        f0 = conversion_function(a0, s.order, s.autocatalytic_order, s.initiation)
        f_star = conversion_function(a_star, s.order, s.autocatalytic_order, s.initiation)
        row = {"source": s.label or f"Arrhenius source {i}", "role": s.role, "order": s.order,
               "autocatalytic_order": s.autocatalytic_order, "initiation": s.initiation, "initial_conversion": a0,
               "conversion_of_maximum_rate": a_star,
               "rate_at_start_to_maximum_rate": f0 / f_star if f_star > 0 else None,
               "induction_time_at_initial_temperature_s": None,
               "induction_time_at_storage_temperature_s": None, "induction_time_at_mtsr_s": None}
        if s.role != "synthesis":
            row["induction_time_at_initial_temperature_s"] = _finite(
                rc.isothermal_induction_time(model.initial_temperature, s))
            if storage_T is not None:
                row["induction_time_at_storage_temperature_s"] = _finite(rc.isothermal_induction_time(storage_T, s))
                storage_times.append(row["induction_time_at_storage_temperature_s"])
            if mtsr is not None:
                row["induction_time_at_mtsr_s"] = _finite(rc.isothermal_induction_time(mtsr, s))
                mtsr_times.append(row["induction_time_at_mtsr_s"])
        rows.append(row)
    decomposition_auto = has_autocatalytic(decomposition)
    block = {"tmr_method": rc.METHOD_INTEGRATED if decomposition_auto else
             (rc.METHOD_CLOSED_FORM if decomposition else None),
             "tmr_basis": TMR_BASIS if decomposition_auto else (TMR_BASIS_CLOSED if decomposition else None),
             "steady_basis": STEADY_BASIS, "induction_basis": INDUCTION_BASIS, "sensitivity": SENSITIVITY,
             "sources": rows}
    out["autocatalytic"] = block
    warnings: list[str] = []
    if scenario == "storage" and storage_times:
        t_ind = min((t for t in storage_times if t is not None), default=math.inf)
        out["induction_time_at_storage_temperature_s"] = _finite(t_ind)
        out["induction_time_over_storage_period"] = t_ind / model.horizon if math.isfinite(t_ind) else None
        if t_ind <= model.horizon:
            warnings.append(f"The isothermal induction time at the storage temperature ({temp(storage_T, unit)}) is "
                            f"{duration(t_ind)}, within the storage period ({duration(model.horizon)}): the "
                            f"decomposition reaches its maximum rate during storage even if the temperature were "
                            f"held. {SENSITIVITY}")
        else:
            warnings.append(f"The isothermal induction time at the storage temperature ({temp(storage_T, unit)}) is "
                            f"{duration(t_ind)}, {t_ind / model.horizon:.3g} times the storage period. "
                            f"{SENSITIVITY}")
    if scenario == "cooling-failure" and mtsr_times:
        t_ind = min((t for t in mtsr_times if t is not None), default=math.inf)
        out["induction_time_at_mtsr_s"] = _finite(t_ind)
        warnings.append(f"The isothermal induction time of the decomposition at MTSR ({temp(mtsr, unit)}) is "
                        f"{duration(t_ind)}. {SENSITIVITY}")
    return warnings


def summary_sentences(out: dict, unit: str) -> list[str]:
    """The sentences the runaway summary adds for an autocatalytic source: each criterion's basis."""
    block = out.get("autocatalytic")
    if not block:
        return []
    text = []
    if block["tmr_basis"]:
        text.append(block["tmr_basis"])
    stars = "; ".join(f"{r['source']}: alpha* = {r['conversion_of_maximum_rate']:.3g} (from "
                      f"{r['initial_conversion']:.3g}; the rate at the start is "
                      f"{_ratio(r['rate_at_start_to_maximum_rate'])} of the largest)" for r in block["sources"])
    text.append(block["steady_basis"] + f" {stars}.")
    if out.get("induction_time_at_storage_temperature_s") is not None or \
            out.get("induction_time_over_storage_period") is not None:
        text.append(f"Isothermal induction time at the storage temperature: "
                    f"{duration(out['induction_time_at_storage_temperature_s'])} (storage period compared in the "
                    f"verdict). {block['sensitivity']}")
    elif out.get("induction_time_at_mtsr_s") is not None:
        text.append(f"Isothermal induction time at MTSR: {duration(out['induction_time_at_mtsr_s'])}. "
                    f"{block['sensitivity']}")
    return text


def _ratio(x) -> str:
    return "—" if x is None else f"{x:.3g}"


def _finite(x):
    return float(x) if x is not None and math.isfinite(float(x)) else None
