"""Columnar screening of a uniform group of register rows.

Most registers are many rows of one shape: the same filled columns over the
same base case, differing only in numbers.  When such a group's representative
row (validated and screened in full) is a simple closed-form case, namely

* a heat-up scenario (no synthesis or decomposition source), no fire, heating medium, boiling data,
  cooling recovery, alarm or uncertainty block, and either
* no vessel block and heat loss as a given UA, or
* a vessel given by geometry with stirred contents and heat loss as a given UA or a coefficient on
  the wetted, total or a given area (a group of tanks: its volumes, areas, mass and UA come from
  :mod:`screening.case.geometry_columns`, the functions prepare_case calls with a group of one),

and every column that varies in the group is one of the quantities listed in
:data:`VARYING_PATHS` (or :data:`GEOMETRY_PATHS` for tanks, or the id or title), the other rows need not be built
one by one.  Their cells are parsed a column at a time with the column's unit
looked up once, the SI model numbers are assembled as arrays, the vectorised
engine runs once for the group, and each row's result object is the
representative's with the row's numbers written in.

The result is the same object ``check --json`` prints for the equivalent case:
the same formulas (in the same floating-point order) and the same warning texts
(:mod:`screening.run.warnings` provides them).  Each group checks itself: the
representative is also rebuilt this way and compared with its result from the
general path; on any difference the group goes the general way, row by row.
A row whose cells the column parser does not accept (a unit in a cell where the
header gives one, a value out of range, an empty id) also goes the general
way, where it gets exactly the errors a case file would.
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
from screening.core.terms import conductance_and_drive, heat_capacity
from screening.core.vessel_geometry_arrays import VesselArrays
from screening.register.reading import Column
from screening.register.rows import _NUMBER_ONLY, _cell_value
from screening.register.validation import _is_absolute_temperature
from screening.register.vectorised import run_engine
from screening.run.closed_form_case import ClosedFormValues
from screening.run.warnings import (
    ADIABATIC_WARNING,
    MARGIN_NOTE_ASSUMED,
    biot_and_validity,
    case_assumptions,
    limit_at_start_warning,
    response_beyond_horizon_warning,
    short_horizon_warning,
    still_rising_warning,
)

#: Quantity paths a uniform group may vary per row (list indices are filled in by the plan).
VARYING_PATHS = ("contents.mass", "contents.specific_heat", "contents.initial_temperature",
                 "heat_loss.ambient_temperature", "heat_loss.ua", "horizon", "response_time",
                 "limits.N.temperature", "heat_sources.N.power", "heat_sources.N.time_constant",
                 "heat_sources.N.half_life")

#: The keys of a result object a row of a uniform group may hold differently from its representative.
VARYING_KEYS = frozenset({
    "id", "title", "time_constant_s", "peak_temperature_K", "peak_time_s", "steady_temperature_K", "limits",
    "adiabatic", "warnings", "detection_time_s", "response_time_s", "initial_temperature_K", "ambient_temperature_K",
    "horizon_s", "heat_capacity_J_per_K", "ua_W_per_K", "limit_exceeded_at_start", "assumptions", "inputs", "units",
    "input_hash", "geometry"})

#: Raise instead of falling back when a group's self-check fails (the tests set this).
STRICT_SELF_CHECK = False

#: Quantity paths a group of tanks given by geometry may also vary (path -> kind).
GEOMETRY_PATHS = {("vessel", "diameter"): "diameter", ("vessel", "length"): "length", ("vessel", "width"): "width",
                  ("vessel", "height"): "height", ("vessel", "crown_radius"): "crown_radius",
                  ("vessel", "knuckle_radius"): "knuckle_radius", ("contents", "fill"): "fill",
                  ("contents", "volume"): "volume", ("contents", "density"): "density",
                  ("heat_loss", "coefficient"): "coefficient"}

#: Model slots (screening.case.paths) a uniform group may vary, column by column.
_SCALAR_KINDS = ("mass", "cp", "T0", "Ta", "ua", "H", "response")
_COLUMN_KINDS = frozenset(_SCALAR_KINDS + ("limit", "const", "dpower", "dtau", "dhalf"))


class SelfCheckError(AssertionError):
    """The columnar result of a representative differs from its general-path result."""


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
            or model.arrhenius_sources or model.fire_sources or model.heating_media or model.boiling is not None
            or rep.recovery is not None or rep.detection_alarm is not None or rep.uncertainty_plan is not None
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
        out.append(_Varying(col, slot.kind, slot.index, marker, ".".join(str(p) for p in path)))
    return out


def _is_tank_group(rep) -> bool | None:
    """True for a vessel given by its geometry that a group can take (stirred contents, heat loss as a given UA
    or a coefficient on the wetted, total or a given area), False without a vessel block, None otherwise."""
    spec = rep.spec
    if spec.vessel is None:
        return False
    if spec.vessel.shape is None or rep.model.mixing != "stirred":
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

    ``rep`` is the representative's PreparedCase (row ``rep_index``); ``row_hash(cells)`` gives a row's
    input hash and ``rep_result_of(values)`` the representative's public result from the general path
    for the given ClosedFormValues (the self-check).
    """
    idx = [rep_index] + list(members)  # the representative first: it is rebuilt for the self-check
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
    if not ok[0]:
        return GroupResults({}, list(members))
    cols = _model_columns(rep, plan, parsed, n)
    tank = None
    if rep.spec.vessel is not None:
        tank = _TankColumns(rep, plan, parsed, cols, n)
        ok &= tank.ok
        if not ok[0]:
            return GroupResults({}, list(members))

    m = rep.model
    nl = len(m.limits)
    k = max(len(m.decaying_sources), 1)
    P = np.zeros((n, k))
    b = np.zeros((n, k))
    with np.errstate(divide="ignore"):  # a zero only where a cell was refused (that row goes the general way)
        for j in range(len(m.decaying_sources)):
            P[:, j] = cols["dpower"][j]
            b[:, j] = 1.0 / cols["dtau"][j]
    L = np.full((n, nl + 2), np.nan)  # + boiling point + alarm, unused here (as in vectorised_values)
    for j in range(nl):
        L[:, j] = cols["limit"][j]
    C = heat_capacity(cols["mass"], cols["cp"], m.wall_heat_capacity)
    p0 = sum(cols["const"]) + np.zeros(n)
    G, Q0 = conductance_and_drive(cols["ua"], cols["Ta"], p0)
    G_ad, Q0_ad = conductance_and_drive(np.zeros(n), cols["Ta"], p0)
    engine_ok, times, summary, ad_times = run_engine(C, G, Q0, G_ad, Q0_ad, cols["T0"], P, b, L, cols["H"], nl)
    ok &= engine_ok
    if not ok[0]:
        return GroupResults({}, list(members))
    numbers = _GroupNumbers(rep, cols, C, G, Q0, times[:, :nl], summary, ad_times)
    reference = rep_result_of(numbers.values_of(0))
    builder = _RowBuilder(rep, plan, parsed, numbers, dict(reference), tank)
    mine = builder.result(0, row_hash(rows[rep_index]))
    reference["input_hash"] = mine["input_hash"]
    if mine != reference:
        if STRICT_SELF_CHECK:
            diff = sorted(k for k in set(mine) | set(reference) if mine.get(k) != reference.get(k))
            raise SelfCheckError(f"columnar and general results of the representative differ in {diff}")
        return GroupResults({}, list(members))
    results, left = {}, []
    for r, good in enumerate(ok.tolist()):
        if r == 0:
            continue
        i = idx[r]
        if good:
            results[i] = builder.result(r, row_hash(rows[i]))
        else:
            left.append(i)
    return GroupResults(results, left, builder.template)


def _nullable(a: np.ndarray) -> list:
    """Python floats, None where NaN (not reached / not defined)."""
    out = a.astype(object)
    out[np.isnan(a)] = None
    return out.tolist()


class _GroupNumbers:
    """Per-row numbers of a group as Python lists, computed as screen_closed_form computes them."""

    def __init__(self, rep, cols: dict, C, G, Q0, times, summary, ad_times):
        m = rep.model
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            tau = C / G
            steady_lossy = Q0 / G
            pa = np.zeros(len(C))
            for j in range(len(m.decaying_sources)):
                pa = pa + cols["dpower"][j] * cols["dtau"][j]
            steady_adiabatic = cols["T0"] + pa / C
            rise = pa / C
        tau = np.where((G > 0) & np.isfinite(tau), tau, np.nan)
        steady = np.where(G > 0, np.where(np.isfinite(steady_lossy), steady_lossy, np.nan),
                          np.where(Q0 == 0, steady_adiabatic, np.nan))
        self.tau, self.steady = _nullable(tau), _nullable(steady)
        self.C, self.rise = C.tolist(), rise.tolist()
        self.T0, self.Ta, self.ua, self.H = (cols[k].tolist() for k in ("T0", "Ta", "ua", "H"))
        self.peak_T, self.peak_t = summary.peak_temperature.tolist(), summary.peak_time.tolist()
        self.end_T, self.end_rate = summary.end_temperature.tolist(), summary.end_rate.tolist()
        self.times, self.ad_times = _nullable(times), _nullable(ad_times)
        self.limit_T = np.stack(cols["limit"], axis=1).tolist() if cols["limit"] else [[]] * len(C)
        self.response = cols["response"].tolist() if cols["response"] is not None else [None] * len(C)
        detection = rep.detection_delay if rep.detection_delay is not None else 0.0
        self.detection = detection
        # rows that need a warning text (the same conditions as screen_closed_form / detection_and_recovery)
        with np.errstate(invalid="ignore"):
            flags = (np.isnan(tau) | ~(cols["H"] < tau)) & ~(summary.end_rate > 0) & ~(G == 0) \
                & ~(times == 0.0).any(axis=1)
            if cols["response"] is not None:
                flags &= ~(cols["H"] < cols["response"] + (detection or 0.0))
        self.plain = flags.tolist()  # True: no closed-form warning for this row (the rising check needs a
        #                               limit not reached, so end_rate > 0 alone sends a row to the full test)

    def values_of(self, r: int):
        return ClosedFormValues(self.times[r], None, None, (self.peak_T[r], self.peak_t[r]), self.end_T[r],
                                self.end_rate[r], self.ad_times[r])


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
            "dtau": [full(s.time_constant) for s in m.decaying_sources]}
    for v in plan:
        if v.marker is None:
            continue
        si = np.asarray(parsed[id(v)][0], dtype=float)
        if v.kind in _SCALAR_KINDS:
            cols[v.kind] = si
        elif v.kind == "limit":
            cols["limit"][v.slot] = si
        elif v.kind in ("const", "dpower", "dtau"):
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


class _RowBuilder:
    """Writes one row's numbers into a copy of the representative's result object."""

    def __init__(self, rep, plan: list[_Varying], parsed: dict, numbers: _GroupNumbers, template: dict,
                 tank: _TankColumns | None = None):
        self.rep = rep
        self.tank = tank
        self.numbers = numbers
        self.names = [lim.name for lim in rep.model.limits]
        extra = {"warnings": []}
        biot_and_validity(rep, extra)  # depends on nothing a row varies here
        self.tail_warnings = extra["warnings"]
        self.assumptions = extra["assumptions"] + case_assumptions(rep)
        self.margin_note = MARGIN_NOTE_ASSUMED if rep.detection_delay is None else None  # no alarm in a group
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
        self.unit_words = [(varying_texts.get(p), rep.inputs[p]["text"].split(None, 1)[-1]) for p in abs_positions]
        self.display_unit = display_unit_from_texts
        self.unit_cache: dict = {}
        self.texts = [(kind, parsed[id(v)][0]) for kind in ("id", "title") for v in plan
                      if v.marker is None and v.kind == kind]
        self.template = template

    def _unit(self, r: int) -> str:
        key = tuple(fixed if texts is None else texts[r].split(None, 1)[-1] for texts, fixed in self.unit_words)
        unit = self.unit_cache.get(key)
        if unit is None:
            unit = self.unit_cache[key] = self.display_unit(["0 " + t for t in key])
        return unit

    def result(self, r: int, input_hash: str) -> dict:
        rep, g = self.rep, self.numbers
        inputs = list(rep.inputs)
        for pos, field, unit_si, si, texts, sources in self.input_slots:
            inputs[pos] = {"field": field, "text": texts[r], "value_si": si[r], "unit_si": unit_si,
                           "source": sources[r] if sources is not None else None}
        unit = self._unit(r)
        response, detection = g.response[r], g.detection
        times = g.times[r]
        note = self.margin_note
        limit_rows = [{"name": name, "temperature_K": lt, "time_s": t, "reached": t is not None,
                       "margin_s": t - (detection + response) if t is not None and response is not None else None,
                       "margin_note": note if t is not None and response is not None else None}
                      for name, lt, t in zip(self.names, g.limit_T[r], times)]
        warnings = list(rep.warnings) if self.tank is None else self.tank.warnings(r)
        if not g.plain[r]:
            warnings += self._warnings(r, limit_rows, unit)
        warnings += self.tail_warnings
        out = dict(self.template)
        for kind, values in self.texts:
            out[kind] = values[r]
        out.update(time_constant_s=g.tau[r], peak_temperature_K=g.peak_T[r], peak_time_s=g.peak_t[r],
                   steady_temperature_K=g.steady[r], limits=limit_rows,
                   adiabatic={"limits": [{"name": name, "time_s": t} for name, t in zip(self.names, g.ad_times[r])],
                              "temperature_rise_K": g.rise[r]},
                   warnings=warnings, detection_time_s=detection, response_time_s=response,
                   initial_temperature_K=g.T0[r], ambient_temperature_K=g.Ta[r], horizon_s=g.H[r],
                   heat_capacity_J_per_K=g.C[r], ua_W_per_K=g.ua[r], limit_exceeded_at_start=0.0 in times,
                   assumptions=list(self.assumptions), inputs=inputs, units={"temperature": unit},
                   input_hash=input_hash)
        if self.tank is not None:
            out["geometry"] = self.tank.geometry(r)
        return out

    def _warnings(self, r: int, limit_rows: list, unit: str) -> list[str]:
        """The closed-form warnings of one row, in screen_closed_form's order and with its texts."""
        g = self.numbers
        H, tau, response = g.H[r], g.tau[r], g.response[r]
        out = [limit_at_start_warning(row["name"], row["temperature_K"], g.T0[r], unit)
               for row in limit_rows if row["time_s"] == 0.0]
        if tau is not None and H < tau:
            out.append(short_horizon_warning(H, tau))
        if g.end_rate[r] > 0 and any(not row["reached"] for row in limit_rows):
            out.append(still_rising_warning(g.end_T[r], g.end_rate[r], g.steady[r], unit))
        if g.ua[r] + 0.0 == 0:
            out.append(ADIABATIC_WARNING)
        if response is not None and H < response + (g.detection or 0.0):
            out.append(response_beyond_horizon_warning(H))
        return out
