"""Columnar screening of a uniform group of register rows.

Most registers are many rows of one shape: the same filled columns over the
same base case, differing only in numbers.  When such a group's representative
row (validated and screened in full) is a closed-form heat-up case without recovery,
wall, daily cycle or uncertainty block (heating media, boiling data, a detection alarm
or delay, and fire exposure on a given wetted area without tank geometry are taken), and either

* no vessel shape and heat loss as a given UA with the mass given, or
* a vessel given by geometry with stirred contents and heat loss as a given UA or a coefficient on
  the wetted, total or a given area (a group of tanks: its volumes, areas, mass and UA come from
  :mod:`screening.case.geometry_columns`, the functions prepare_case calls with a group of one),

and every column that varies in the group is one of the quantities listed in
:data:`VARYING_PATHS` (or :data:`GEOMETRY_PATHS` for tanks, or the id or title), the other rows need not be built
one by one.  Their cells are parsed a column at a time with the column's unit
looked up once, the SI model numbers are assembled as arrays, the vectorised
engine runs once for the group, and each row's closed-form keys are written by
:class:`screening.run.closed_form_group.ClosedFormWriter`, the writer the one-case
path uses for a group of one, into a copy of the representative's result (the keys
no row varies).

This module keeps what is register-specific: reading cells into SI arrays and texts,
which rows form a group, each row's inputs list entries and display unit.
A row whose cells the column parser does not accept (a unit in a cell where the
header gives one, a value out of range, an empty id), or that starts above its boiling
point, goes the general way, where it gets exactly the errors and warnings a case file would.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from screening.case.geometry_columns import (
    HIGH_COEFFICIENT,
    heat_loss_columns,
    high_coefficient_warning,
    is_over_full,
    over_full_warning,
    vessel_columns,
)
from screening.case.paths import model_slot
from screening.case.prepare import display_unit_from_texts
from screening.case.units import UnitError, unit_factor
from screening.core.fire_exposure import FIRE_CAUTIONS
from screening.core.terms import conductance_and_drive, fire_power, heat_capacity
from screening.core.vessel_geometry_arrays import VesselArrays
from screening.register.reading import Column
from screening.register.rows import _NUMBER_ONLY, _cell_value
from screening.register.validation import _is_absolute_temperature
from screening.register.vectorised import run_engine
from screening.run.closed_form_group import ClosedFormGroup, ClosedFormWriter, GroupValues
from screening.run.warnings import biot_and_validity, case_assumptions

#: Quantity paths a uniform group may vary per row (list indices are filled in by the plan).
VARYING_PATHS = ("contents.mass", "contents.specific_heat", "contents.initial_temperature",
                 "heat_loss.ambient_temperature", "heat_loss.ua", "horizon", "response_time",
                 "limits.N.temperature", "heat_sources.N.power", "heat_sources.N.time_constant",
                 "heat_sources.N.half_life", "heat_sources.N.ua", "heat_sources.N.medium_temperature",
                 "detection.alarm_temperature")

#: The keys of a result object a row of a uniform group may hold differently from its representative.
VARYING_KEYS = frozenset({
    "id", "title", "time_constant_s", "peak_temperature_K", "peak_time_s", "steady_temperature_K", "limits",
    "adiabatic", "warnings", "detection_time_s", "response_time_s", "initial_temperature_K", "ambient_temperature_K",
    "horizon_s", "heat_capacity_J_per_K", "ua_W_per_K", "limit_exceeded_at_start", "assumptions", "inputs", "units",
    "input_hash", "geometry", "boiling"})

#: Quantity paths a group of tanks given by geometry may also vary (path -> kind).
GEOMETRY_PATHS = {("vessel", "diameter"): "diameter", ("vessel", "length"): "length", ("vessel", "width"): "width",
                  ("vessel", "height"): "height", ("vessel", "crown_radius"): "crown_radius",
                  ("vessel", "knuckle_radius"): "knuckle_radius", ("contents", "fill"): "fill",
                  ("contents", "volume"): "volume", ("contents", "density"): "density",
                  ("heat_loss", "coefficient"): "coefficient"}

#: Model slots (screening.case.paths) a uniform group may vary, column by column.
_SCALAR_KINDS = ("mass", "cp", "T0", "Ta", "ua", "H", "response", "alarm")
_COLUMN_KINDS = frozenset(_SCALAR_KINDS + ("limit", "const", "dpower", "dtau", "dhalf", "medium_ua", "medium_T"))


@dataclass
class _Varying:
    col: Column
    kind: str  # "mass", "cp", "T0", "Ta", "ua", "H", "response", "limit", "const", "dpower", "dtau", "dhalf",
    #            "id", "title"
    slot: int  # index among limits / constant sources / decaying sources (0 otherwise)
    marker: object  # QuantityField of a quantity column, None for id / title
    field: str  # dotted path, as in the inputs list


def plan_group(rep, fast_cols) -> list[_Varying] | None:
    """The varying columns of a group whose representative ``rep`` (a PreparedCase) qualifies, else None.

    ``fast_cols`` are the group's non-structure columns as ``validate_rows`` finds them:
    (column, role, parser, field name, marker).
    """
    spec, model = rep.spec, rep.model
    tank = _is_tank_group(rep)
    if tank is None:
        return None
    if (model.scenario != "heat-up" or model.released_at_start
            or (not tank and (spec.heat_loss.ua is None or spec.contents.mass is None))
            or model.arrhenius_sources or (model.fire_sources and tank)
            or (model.boiling is not None and model.boiling.boiling_point < model.initial_temperature)
            or rep.recovery is not None or rep.uncertainty_plan is not None
            or model.wall_heat_capacity != 0.0 or model.daily_cycle is not None):
        return None
    out = []
    for col, role, _parse, name, marker in fast_cols:
        path = col.path
        if role == "text":
            if path not in (("id",), ("title",)):
                return None
            out.append(_Varying(col, path[0], 0, None, path[0]))
            continue
        if tank and path in GEOMETRY_PATHS and marker is not None:
            out.append(_Varying(col, GEOMETRY_PATHS[path], 0, marker, ".".join(path)))
            continue
        slot = model_slot(spec, path, rep.source_positions)
        if slot is None or slot.kind not in _COLUMN_KINDS or marker is None:
            return None
        if slot.kind == "ua" and model.fire_sources:
            return None  # prepare sets UA to 0 under fire, with a warning when the row's UA is not 0
        out.append(_Varying(col, slot.kind, slot.index, marker, ".".join(str(p) for p in path)))
    return out


def _is_tank_group(rep) -> bool | None:
    """True for a vessel given by its geometry that a group can take (stirred contents, heat loss as a given UA
    or a coefficient on the wetted, total or a given area), False without a vessel shape, None otherwise."""
    spec = rep.spec
    if spec.vessel is None:
        return False
    if spec.vessel.shape is None:  # a vessel block for its venting (or wall: refused by the caller) only
        return False if rep.model.mixing == "stirred" else None
    if rep.model.mixing != "stirred":
        return None
    if spec.heat_loss.ua is None and "heat_loss_area_m2" not in rep.geometry:
        return None
    return True


def _parse_column(v: _Varying, cells: list[str]):
    """(SI values, texts, sources, ok flags) of one quantity column, as the schema's validator reads them."""
    n = len(cells)
    marker, col = v.marker, v.col
    check = marker.check
    validator = None
    scale = offset = None
    if col.unit:
        try:
            scale, offset = unit_factor(col.unit, marker.dimension)
        except UnitError:
            return [0.0] * n, [""] * n, None, [False] * n
    if scale is not None and _all_plain_numbers(cells):  # the usual case: the whole column at once
        with np.errstate(over="ignore", invalid="ignore"):
            values = np.array(list(map(float, cells)), dtype=float) * scale + offset
            good = np.isfinite(values)
            if check in ("positive", "absolute"):
                good &= values > 0
            elif check == "nonnegative":
                good &= values >= 0
        suffix = " " + col.unit
        return values.tolist(), [cell.strip() + suffix for cell in cells], None, good.tolist()
    si, texts, sources, ok = [0.0] * n, [""] * n, None, [True] * n
    for i, cell in enumerate(cells):
        if scale is not None and _NUMBER_ONLY.match(cell):
            value = float(cell) * scale + offset
            if not math.isfinite(value) or (check in ("positive", "absolute") and not value > 0) \
                    or (check == "nonnegative" and value < 0):
                ok[i] = False
                continue
            si[i] = value
            texts[i] = f"{cell.strip()} {col.unit}"
            continue
        if col.unit:  # a cell the number-only parse does not take: the general path decides
            ok[i] = False
            continue
        if validator is None:
            validator = marker.validator()
        try:
            q = validator(_cell_value(col, cell))
        except ValueError:
            ok[i] = False
            continue
        si[i], texts[i] = q.si, q.text
        if q.source is not None:
            if sources is None:
                sources = [None] * n
            sources[i] = q.source
    return si, texts, sources, ok


_SEPARATOR = "\x1f"
_PLAIN_NUMBERS = re.compile(r"[ \t]*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?[ \t]*"
                            r"(?:\x1f[ \t]*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?[ \t]*)*")


def _all_plain_numbers(cells: list[str]) -> bool:
    """Whether every cell is a plain number (a stricter test than the per-cell one: False sends the
    column to the per-cell parse, never a wrong value through)."""
    joined = _SEPARATOR.join(cells)
    return joined.count(_SEPARATOR) == len(cells) - 1 and _PLAIN_NUMBERS.fullmatch(joined) is not None


@dataclass
class GroupResults:
    """Results of the rows a uniform group screened: row index -> public result (without a verdict)."""

    results: dict
    left: list  # row indices for the general path
    template: dict | None = None  # the representative's result: the rows differ from it only in VARYING_KEYS


def screen_group(rep, rep_index: int, rows: list[list[str]], members: list[int], plan: list[_Varying],
                 row_hash, rep_result_of) -> GroupResults:
    """Screen ``members`` (row indices into ``rows``) of a uniform group at once.

    ``rep`` is the representative's PreparedCase (row ``rep_index``, screened on its own); ``row_hash(cells)``
    gives a row's input hash and ``rep_result_of(values)`` the representative's public result for the given
    ClosedFormValues (its own from the group's engine run, or None: the scalar engine), the template of the
    keys no row varies. Each row's closed-form keys are written by
    :class:`screening.run.closed_form_group.ClosedFormWriter`, the writer of the one-case path.
    """
    if not members:
        return GroupResults({}, [])
    idx = [rep_index] + list(members)  # the representative first: its engine values serve its own result
    n = len(idx)
    ok = np.ones(n, dtype=bool)
    parsed = {}
    for v in plan:
        cells = [rows[i][v.col.index] for i in idx]
        if v.marker is None:
            good = [bool(c.strip()) if v.kind == "id" else True for c in cells]
            parsed[id(v)] = (cells, None, None)
        else:
            si, texts, sources, good = _parse_column(v, cells)
            parsed[id(v)] = (si, texts, sources)
        ok &= np.asarray(good, dtype=bool)
    cols = _model_columns(rep, plan, parsed, n)
    tank = None
    if rep.spec.vessel is not None and rep.spec.vessel.shape is not None:
        tank = _TankColumns(rep, plan, parsed, cols, n)
        ok &= tank.ok

    m = rep.model
    if m.boiling is not None:  # prepare refuses (open vessel) or warns (closed) where the contents start above it:
        with np.errstate(invalid="ignore"):  # those rows go the general way
            ok &= ~(m.boiling.boiling_point < cols["T0"])
    nl = len(m.limits)
    k = max(len(m.decaying_sources), 1)
    P = np.zeros((n, k))
    b = np.zeros((n, k))
    with np.errstate(divide="ignore"):  # a zero only where a cell was refused (that row goes the general way)
        for j in range(len(m.decaying_sources)):
            P[:, j] = cols["dpower"][j]
            b[:, j] = 1.0 / cols["dtau"][j]
    L = np.full((n, nl + 2), np.nan)  # + boiling point + alarm (as in vectorised_values)
    for j in range(nl):
        L[:, j] = cols["limit"][j]
    if m.boiling is not None:
        L[:, nl] = m.boiling.boiling_point
    if cols["alarm"] is not None:
        L[:, nl + 1] = cols["alarm"]
    C = heat_capacity(cols["mass"], cols["cp"], m.wall_heat_capacity)
    p0 = sum(cols["const"]) + np.zeros(n) + fire_power(m)  # constant_power: the constant sources, then fire
    G, Q0 = conductance_and_drive(cols["ua"], cols["Ta"], p0, cols["medium_ua"], cols["medium_T"])
    G_ad, Q0_ad = conductance_and_drive(np.zeros(n), cols["Ta"], p0, cols["medium_ua"], cols["medium_T"])
    engine_ok, times, summary, ad_times = run_engine(C, G, Q0, G_ad, Q0_ad, cols["T0"], P, b, L, cols["H"], nl)
    ok &= engine_ok
    if not ok[1:].any():
        return GroupResults({}, list(members))
    boiling = m.boiling
    group = ClosedFormGroup(C, G, Q0, Q0, cols["T0"], cols["T0"], cols["Ta"], cols["ua"], cols["H"],
                            cols["dpower"], cols["dtau"], cols["limit"], cols["response"],
                            None if boiling is None else np.full(n, boiling.boiling_point),
                            None if boiling is None else np.full(n, boiling.latent_heat), cols["mass"], p0,
                            cols["medium_ua"], cols["medium_T"])
    values = GroupValues(times[:, :nl], ad_times, summary.peak_temperature, summary.peak_time,
                         summary.end_temperature, summary.end_rate, times[:, nl], times[:, nl + 1])
    template = rep_result_of(values.values_of(0) if ok[0] else None)
    rows_out = _RowInputs(rep, plan, parsed, n)
    writer = ClosedFormWriter(rep, group, values, rows_out.units)
    extra = {"warnings": []}
    biot_and_validity(rep, extra)  # depends on nothing a row varies here
    tail_warnings = extra["warnings"]
    assumptions = extra["assumptions"] + case_assumptions(rep)
    texts = [(kind, parsed[id(v)][0]) for kind in ("id", "title") for v in plan
             if v.marker is None and v.kind == kind]
    results, left = {}, []
    for r, good in enumerate(ok.tolist()):
        if r == 0:
            continue  # the representative: screened on its own
        i = idx[r]
        if not good:
            left.append(i)
            continue
        out = dict(template)
        for kind, values_ in texts:
            out[kind] = values_[r]
        writer.write(r, out, case_keys=True)
        warnings = (list(rep.warnings) if tank is None else tank.warnings(r)) + out["warnings"] + tail_warnings
        if m.fire_sources:  # as screen_prepared: the fire cautions after the others, once each
            warnings.extend(c for c in FIRE_CAUTIONS if c not in warnings)
        out["warnings"] = warnings
        out["assumptions"] = list(assumptions)
        out["inputs"] = rows_out.inputs(r)
        out["units"] = {"temperature": rows_out.units[r]}
        out["input_hash"] = row_hash(rows[i])
        if tank is not None:
            out["geometry"] = tank.geometry(r)
        results[i] = out
    return GroupResults(results, left, template)


def _model_columns(rep, plan: list[_Varying], parsed: dict, n: int) -> dict:
    """SI arrays of the model numbers (the representative's value where no column varies it)."""
    m = rep.model
    full = lambda value: np.full(n, value, dtype=float)  # noqa: E731
    cols = {"mass": full(m.contents_mass), "cp": full(m.contents_specific_heat), "T0": full(m.initial_temperature),
            "Ta": full(m.ambient_temperature), "ua": full(m.ua), "H": full(m.horizon),
            "response": None if rep.response_time is None else full(rep.response_time),
            "limit": [full(lim.temperature) for lim in m.limits],
            "const": [full(s.power) for s in m.constant_sources],
            "dpower": [full(s.power) for s in m.decaying_sources],
            "dtau": [full(s.time_constant) for s in m.decaying_sources],
            "medium_ua": [full(h.ua) for h in m.heating_media],
            "medium_T": [full(h.medium_temperature) for h in m.heating_media],
            "alarm": None if rep.detection_alarm is None else full(rep.detection_alarm)}
    for v in plan:
        if v.marker is None:
            continue
        si = np.asarray(parsed[id(v)][0], dtype=float)
        if v.kind in _SCALAR_KINDS:
            cols[v.kind] = si
        elif v.kind == "limit":
            cols["limit"][v.slot] = si
        elif v.kind in ("const", "dpower", "dtau", "medium_ua", "medium_T"):
            cols[v.kind][v.slot] = si
        elif v.kind == "dhalf":
            cols["dtau"][v.slot] = si / math.log(2.0)
    return cols


class _TankColumns:
    """The vessels of a group given by geometry: volumes, areas, the contents' mass and the UA per row,
    from the same array functions prepare_case calls with a group of one (and the same warning texts)."""

    def __init__(self, rep, plan: list[_Varying], parsed: dict, cols: dict, n: int):
        spec = rep.spec
        v, c, hl = spec.vessel, spec.contents, spec.heat_loss
        given = {v_.kind: np.asarray(parsed[id(v_)][0], dtype=float) for v_ in plan
                 if v_.marker is not None and v_.kind in GEOMETRY_PATHS.values()}

        def column(kind, q):
            if kind in given:
                return given[kind]
            return None if q is None else np.full(n, q.si, dtype=float)

        dims = {name: column(name, getattr(v, name)) for name in
                ("diameter", "length", "width", "height", "crown_radius", "knuckle_radius")}
        vessels = VesselArrays.from_columns(v.shape, v.heads, **{k: (np.nan if x is None else x)
                                                                  for k, x in dims.items()})
        density = column("density", c.density)
        g = vessel_columns(vessels, mass=cols["mass"] if c.mass is not None else None,
                           volume=column("volume", c.volume), fill=column("fill", c.fill), density=density)
        self.ok = g.computable.copy()
        if g.liquid_computable is not None:
            self.ok &= g.liquid_computable
        if hl.ua is not None:
            ua, sc = heat_loss_columns(ua=cols["ua"], wetted_area=g.wetted_area, total_area=g.total_area)
            area_used = None
        else:
            area = hl.area
            if area == "wetted":
                area_used = g.wetted_area
            elif area == "total":
                area_used = g.total_area
            else:  # an area given as a number: the representative's, the same for every row
                area_used = np.full(n, rep.geometry["heat_loss_area_m2"])
            ua, sc = heat_loss_columns(coefficient=column("coefficient", hl.coefficient), area_used=area_used)
        cols["mass"], cols["ua"] = g.mass, ua
        with np.errstate(invalid="ignore"):
            self.high = (sc > HIGH_COEFFICIENT) if sc is not None else np.zeros(n, dtype=bool)
        self.over = is_over_full(g.fill_fraction) if g.fill_fraction is not None else np.zeros(n, dtype=bool)
        self.sc = sc.tolist() if sc is not None else None
        self.names = ["vessel_volume_m3", "total_area_m2", "height_m"]
        arrays = [g.vessel_volume, g.total_area, g.height]
        if g.liquid_volume is not None:
            self.names += ["liquid_volume_m3", "fill_fraction", "liquid_height_m", "wetted_area_m2"]
            arrays += [g.liquid_volume, g.fill_fraction, g.liquid_height, g.wetted_area]
        if area_used is not None:
            self.names.append("heat_loss_area_m2")
            arrays.append(area_used)
        self.values = [a.tolist() for a in arrays]
        self.over_list, self.high_list = self.over.tolist(), self.high.tolist()

    def geometry(self, r: int) -> dict:
        return {name: values[r] for name, values in zip(self.names, self.values)}

    def warnings(self, r: int) -> list[str]:
        """prepare_case's warnings of the row, in its order."""
        out = []
        if self.over_list[r]:
            g = self.geometry(r)
            out.append(over_full_warning(g["liquid_volume_m3"], g["fill_fraction"], g["vessel_volume_m3"]))
        if self.high_list[r]:
            out.append(high_coefficient_warning(self.sc[r]))
        return out


class _RowInputs:
    """The register-specific part of each row's result: its inputs list entries and its display unit."""

    def __init__(self, rep, plan: list[_Varying], parsed: dict, n: int):
        self.rep = rep
        positions = {item["field"]: p for p, item in enumerate(rep.inputs)}
        self.input_slots = []  # (position, field, SI unit, SI values, texts, sources) of each varying input
        for v in plan:
            if v.marker is not None and v.field in positions:
                pos = positions[v.field]
                si, texts, sources = parsed[id(v)]
                self.input_slots.append((pos, v.field, rep.inputs[pos]["unit_si"], si, texts, sources))
        abs_positions = [p for p, item in enumerate(rep.inputs)
                         if item["unit_si"] == "K" and _is_absolute_temperature(item["field"])]
        varying_texts = {pos: texts for pos, _, _, _, texts, _ in self.input_slots}
        # the display unit: from the unit words of the absolute temperatures (fixed unless a cell gives its own)
        unit_words = [(varying_texts.get(p), rep.inputs[p]["text"].split(None, 1)[-1]) for p in abs_positions]
        cache: dict = {}
        self.units = []
        for r in range(n):
            key = tuple(fixed if texts is None or not texts[r] else texts[r].split(None, 1)[-1]  # "": a refused
                        for texts, fixed in unit_words)                                             # cell
            unit = cache.get(key)
            if unit is None:
                unit = cache[key] = display_unit_from_texts(["0 " + t for t in key])
            self.units.append(unit)

    def inputs(self, r: int) -> list[dict]:
        inputs = list(self.rep.inputs)
        for pos, field, unit_si, si, texts, sources in self.input_slots:
            inputs[pos] = {"field": field, "text": texts[r], "value_si": si[r], "unit_si": unit_si,
                           "source": sources[r] if sources is not None else None}
        return inputs
