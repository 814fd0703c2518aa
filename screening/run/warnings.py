"""Warnings and validity notes of a screening result, in the case's own units.

Every path takes its texts from here (the closed-form writer of screening.run.closed_form_group
for one case and for a register group alike).
"""
from __future__ import annotations

from screening.case.prepare import PreparedCase
from screening.case.units import kelvin_to

BIOT_LIMIT = 0.1  # Incropera et al., ch. 5 (common practice)

STIRRED_ASSUMPTION = ("Contents are treated as well mixed (stirred): one temperature for the whole mass. A Biot "
                      "number from molecular conductivity has no meaning for a stirred liquid, so none is given.")


def _fmt_temp(k: float, unit: str) -> str:
    sym = {"degC": "°C", "degF": "°F", "K": "K", "degR": "°R"}[unit]
    return f"{kelvin_to(k, unit):.1f} {sym}"


def _hours(s: float) -> str:
    return f"{s / 3600:.3g} h"


# Warnings of a closed-form result (screening.run.closed_form_group decides per row when each applies).
ADIABATIC_WARNING = "No heat loss and no heating medium (UA = 0): the vessel is treated as adiabatic."


def limit_at_start_warning(name: str, temperature: float, start_temperature: float, unit: str) -> str:
    """``start_temperature``: where the history starts (the initial temperature, plus heat released at t = 0)."""
    return (f"Limit '{name}' ({_fmt_temp(temperature, unit)}) is already reached at the start: "
            f"the contents start at {_fmt_temp(start_temperature, unit)}.")


def short_horizon_warning(horizon: float, tau: float) -> str:
    return (f"The horizon ({_hours(horizon)}) is shorter than the vessel's time constant ({_hours(tau)}): the "
            f"temperature is still far from where it settles. Extend the horizon to see the whole response.")


def still_rising_warning(end_temperature: float, end_rate: float, steady: float | None, unit: str) -> str:
    where = f"; it settles at {_fmt_temp(steady, unit)}" if steady is not None else "; it has no steady state"
    return (f"The temperature is still rising at the end of the horizon ({_fmt_temp(end_temperature, unit)}, "
            f"{end_rate * 3600:.3g} K/h){where}. A limit not reached within the horizon may be reached later.")


BOILING_OUT_OF_SCOPE = ("Vent and relief sizing are out of scope: the boil-off figures are not a vent or relief-sizing "
                        "calculation; use the applicable standard.")
BOILING_CLOSED_VESSEL = ("The vessel is closed (vessel.venting: closed): no credit is taken for boiling; the "
                         "temperature and pressure keep rising past the boiling point. The tool does not model "
                         "pressure.")
BOILING_CREDIT = ("Boiling credit assumes an open or adequately vented vessel whose vapour leaves at a known "
                  "pressure; for a mixture the boiling point climbs as the light component leaves, so the "
                  "credit is not conservative for mixtures.")


def boil_dry_warning(t_dry: float) -> str:
    return f"The contents boil dry at {_hours(t_dry)}; the tool does not follow the temperature after that."


def above_boiling_point_warning(name: str, temperature: float, boiling_point: float, unit: str) -> str:
    return (f"Limit '{name}' ({_fmt_temp(temperature, unit)}) lies above the boiling point "
            f"({_fmt_temp(boiling_point, unit)}): it is not reached while liquid remains, on credit for boiling in "
            f"an open vessel. That credit is not conservative if the vent is undersized or blocked.")


def response_beyond_horizon_warning(horizon: float) -> str:
    return f"The horizon ({_hours(horizon)}) ends before detection plus response time: extend it."


# Detection: never silently instant.
DETECTION_ASSUMED = ("No detection block: detection is assumed at t = 0, the start of the scenario, so each margin is "
                     "the time to the limit less the response time alone. That holds only if the event is noticed "
                     "at once; state detection.alarm_temperature or detection.delay.")
DETECTION_UNMONITORED = ("Storage without monitoring (no detection block): nobody is assumed to notice a rise, so the "
                         "time-to-limit check is against the storage period (the horizon): a limit reached within it "
                         "counts as reached without warning.")
MARGIN_NOTE_ASSUMED = "detection assumed at t = 0 (no detection block)"
ALARM_NOT_REACHED = ("The alarm temperature is not reached within the horizon: the alarm never sounds, so detection "
                     "relies on something else.")


def detection_basis(prepared: PreparedCase) -> tuple[str, str | None]:
    """(basis, note) of the detection time: "alarm", "delay", "assumed" (at t = 0) or "unmonitored" (storage)."""
    if prepared.detection_delay is not None:
        return "delay", None
    if prepared.detection_alarm is not None:
        return "alarm", None
    if prepared.model.scenario == "storage":
        return "unmonitored", DETECTION_UNMONITORED
    return "assumed", DETECTION_ASSUMED


def case_assumptions(prepared: PreparedCase) -> list[str]:
    """Assumption lines from the case's stated defaults and its detection basis (after the validity lines)."""
    out = list(prepared.assumptions)
    note = detection_basis(prepared)[1]
    if note is not None:
        out.append(note)
    return out


def biot_and_validity(prepared: PreparedCase, result: dict) -> None:
    model = prepared.model
    result["mixing"] = model.mixing
    result["biot_number"] = None
    result.setdefault("assumptions", [])
    if model.mixing == "stirred":
        result["assumptions"].append(STIRRED_ASSUMPTION)
        return
    h = model.surface_coefficient
    k = model.thermal_conductivity
    lc = model.characteristic_length
    if result.get("conduction"):  # limit times from the transient conduction solution: the lumped model is not used
        if None not in (k, h, lc):
            result["biot_number"] = h * lc / k
        result["assumptions"].extend(result["conduction"]["notes"])
        return
    if k is None or h is None or lc is None:
        missing = [n for n, v in (("contents.thermal_conductivity", k), ("a heat-loss coefficient or vessel area", h),
                                  ("the contents volume and wetted area", lc)) if v is None]
        result["warnings"].append("Unstirred contents: the Biot number cannot be computed (missing "
                                  + ", ".join(missing) + "), so the lumped model's validity is unknown. Treat the "
                                  "result as optimistic: the centre of an unstirred mass runs hotter than its average.")
        return
    bi = h * lc / k
    result["biot_number"] = bi
    if bi > BIOT_LIMIT:
        result["warnings"].append(f"Unstirred contents with Biot number {bi:.3g} (> {BIOT_LIMIT}): the lumped "
                                  f"(single temperature) model is not valid; the centre runs hotter than the lumped "
                                  f"temperature. Use a conduction analysis (Frank-Kamenetskii) instead.")
    else:
        result["assumptions"].append(f"Unstirred contents with Biot number {bi:.3g} (<= {BIOT_LIMIT}): the lumped "
                                     f"model is acceptable by the usual criterion (Incropera et al., ch. 5).")
