"""Calorimeter runs from CSV files: columns with their units in the header, read once into SI arrays.

A run is a CSV file whose header names each column with its unit in square brackets, for example::

    time [s],temperature [degC],heat_flow [W/g]

- ``time``: any time unit (s, min, h);
- ``temperature``: one temperature unit (K, degC, degF ...);
- ``heat_flow``: a heat flow per mass (W/g, mW/mg, W/kg), or an absolute heat flow (mW, W) with the
  sample's mass given separately (DSC runs);
- ``self_heat_rate``: optional in an adiabatic run, a temperature difference per time (K/min, degC/min).

Lines starting with ``#`` before the header are notes and skipped; the delimiter is a comma, a semicolon
or a tab, taken from the header line.  Every problem names the file, the column (and line) and what is
expected.
"""
from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass

import numpy as np

from screening.case.schema import CaseError, FieldProblem
from screening.case.units import DIMENSION_WORDS, UnitError, unit_factor
from screening.fileio import read_limited, short_path

MAX_RUN_BYTES = 64 * 1024 * 1024
MIN_POINTS = 20
_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_ ]*?)\s*\[(.+)\]\s*$")
_NAMES = ("time", "temperature", "heat_flow", "self_heat_rate")


@dataclass(frozen=True)
class CalorimeterRun:
    """One run in SI: time [s], temperature [K], heat flow per mass [W/kg] (or absolute [W] when
    ``heat_flow_is_absolute``), self-heat rate [K/s]; absent columns are None."""

    path: str
    time: np.ndarray
    temperature: np.ndarray
    heat_flow: np.ndarray | None = None
    heat_flow_is_absolute: bool = False
    self_heat_rate: np.ndarray | None = None


def _problem(path: str, column: str | None, message: str) -> CaseError:
    where = short_path(path) + (f": column '{column}'" if column else "")
    return CaseError([FieldProblem(where, message)])


def _rate_factor(unit: str) -> float:
    """K/s per unit of a self-heat rate written as <temperature difference>/<time>."""
    if "/" not in unit:
        raise UnitError(f"'{unit}' is not a temperature difference per time")
    top, bottom = unit.split("/", 1)
    top = top.strip().strip("()")
    per_kelvin = {"K": 1.0, "degC": 1.0, "°C": 1.0, "C": 1.0, "delta_degC": 1.0, "degF": 5.0 / 9.0, "°F": 5.0 / 9.0,
                  "F": 5.0 / 9.0, "delta_degF": 5.0 / 9.0, "degR": 5.0 / 9.0}.get(top)
    if per_kelvin is None:
        raise UnitError(f"'{top}' is not a temperature difference unit (K, degC, degF)")
    seconds, _ = unit_factor(bottom.strip(), "time")
    return per_kelvin / seconds


def read_run(path, kind: str = "dsc", sample_mass: float | None = None) -> CalorimeterRun:
    """Read one run; ``kind`` is "dsc" (scanning or isothermal: heat_flow needed) or "adiabatic"
    (time and temperature; self_heat_rate optional).  ``sample_mass`` [kg] turns an absolute heat flow
    into one per mass.  Raises CaseError naming the file and column."""
    where = str(path)
    raw = read_limited(path, MAX_RUN_BYTES, regular_only=True)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise _problem(where, None, f"is not UTF-8 text (byte {exc.start}); expected a CSV file") from None
    lines = text.splitlines()
    first = 0
    while first < len(lines) and (not lines[first].strip() or lines[first].lstrip().startswith("#")):
        first += 1
    if first >= len(lines):
        raise _problem(where, None, "has no header line; expected a CSV file with a header such as "
                                    "'time [s],temperature [degC],heat_flow [W/g]'")
    header_line = lines[first]
    delimiter = max((",", ";", "\t"), key=header_line.count)
    try:
        rows = list(csv.reader(io.StringIO("\n".join(lines[first:])), delimiter=delimiter))
    except csv.Error as exc:
        raise _problem(where, None, f"is not a readable CSV file ({exc})") from None
    header = rows[0]
    columns: dict[str, tuple[int, str]] = {}
    for j, cell in enumerate(header):
        m = _HEADER.match(cell)
        if not m:
            if cell.strip():
                raise _problem(where, cell.strip()[:60], "the header must give each column as 'name [unit]', "
                                                         "e.g. 'temperature [degC]'")
            continue
        name = m.group(1).strip().lower().replace(" ", "_")
        if name in columns:
            raise _problem(where, name, "is given twice in the header")
        columns[name] = (j, m.group(2).strip())
    need = ("time", "temperature", "heat_flow") if kind == "dsc" else ("time", "temperature")
    for name in need:
        if name not in columns:
            raise _problem(where, name, f"is missing; expected a header with {', '.join(need)} and their units "
                                        f"in brackets, e.g. 'time [s],temperature [degC]"
                                        f"{',heat_flow [W/g]' if kind == 'dsc' else ''}'")
    factors: dict[str, tuple[float, float]] = {}
    absolute = False
    for name, (_, unit) in columns.items():
        if name not in _NAMES:
            continue
        try:
            if name == "time":
                factors[name] = unit_factor(unit, "time")
            elif name == "temperature":
                factors[name] = unit_factor(unit, "temperature")
            elif name == "self_heat_rate":
                factors[name] = (_rate_factor(unit), 0.0)
            else:
                try:
                    factors[name] = unit_factor(unit, "specific_power")
                except UnitError:
                    factors[name] = unit_factor(unit, "power")
                    absolute = True
        except UnitError as exc:
            expected = {"time": DIMENSION_WORDS["time"], "temperature": DIMENSION_WORDS["temperature"],
                        "self_heat_rate": "a temperature difference per time (e.g. K/min)",
                        "heat_flow": "a heat flow per mass (e.g. W/g, mW/mg), nor a heat flow (e.g. mW) to give "
                                     "with --sample-mass"}[name]
            detail = f"[{unit}] is not {expected}" if name == "heat_flow" else f"[{unit}]: {exc}"
            raise _problem(where, name, f"unit {detail}") from None
    if absolute and kind == "dsc" and sample_mass is None:
        raise _problem(where, "heat_flow", f"is an absolute heat flow [{columns['heat_flow'][1]}]; give the "
                                           f"sample's mass with --sample-mass (e.g. '3.2 mg'), or a heat flow per "
                                           f"mass (e.g. W/g)")
    data = {name: [] for name in factors}
    for line_no, row in enumerate(rows[1:], start=first + 2):
        if not row or all(not c.strip() for c in row):
            continue
        for name in factors:
            j = columns[name][0]
            cell = row[j].strip() if j < len(row) else ""
            try:
                value = float(cell)
            except ValueError:
                shown = cell if len(cell) <= 40 else cell[:37] + "..."
                raise _problem(where, name, f"line {line_no}: '{shown}' is not a number; expected a number in "
                                            f"[{columns[name][1]}]") from None
            if not math.isfinite(value):
                raise _problem(where, name, f"line {line_no}: '{cell}' is not a finite number; expected a "
                                            f"number in [{columns[name][1]}]")
            data[name].append(value)
    n = len(data["time"])
    if n < MIN_POINTS:
        raise _problem(where, None, f"has {n} data line(s); expected at least {MIN_POINTS}")
    arrays = {name: np.asarray(v) * factors[name][0] + factors[name][1] for name, v in data.items()}
    t = arrays["time"]
    bad = np.flatnonzero(np.diff(t) <= 0)
    if bad.size:
        raise _problem(where, "time", f"does not increase at data line {int(bad[0]) + 2} of the table; expected "
                                      f"times in increasing order")
    if not np.all(arrays["temperature"] > 0):
        raise _problem(where, "temperature", "has a value at or below absolute zero; check the unit in the header")
    heat = arrays.get("heat_flow")
    if heat is not None and absolute and sample_mass is not None:
        heat = heat / sample_mass
    return CalorimeterRun(where, t, arrays["temperature"], heat, absolute and sample_mass is None,
                          arrays.get("self_heat_rate"))


def parse_option_quantity(text: str, dimension: str, option: str) -> float:
    """An option's text with a unit (e.g. --sample-mass '3.2 mg') as an SI float; CaseError naming the option."""
    from screening.case.units import parse_quantity

    try:
        return parse_quantity(text, dimension).value
    except UnitError as exc:
        raise CaseError([FieldProblem(option, str(exc))]) from None


def rate_quantity(text: str, option: str) -> float:
    """A temperature rate given as an option (e.g. '0.02 K/min') in K/s; CaseError naming the option."""
    from screening.case.units import split_number

    try:
        number, unit = split_number(text)
        value = number * _rate_factor(unit)
    except UnitError as exc:
        raise CaseError([FieldProblem(option, f"{exc}; expected a temperature rate such as '0.02 K/min'")]) from None
    if not value > 0:
        raise CaseError([FieldProblem(option, f"'{text}' must be greater than zero")])
    return value
