"""Dotted case paths: split them, find the quantity at one, replace values at paths."""
from __future__ import annotations

from typing import Any, NamedTuple

from screening.case.schema import CaseSpec, Quantity, quantity_field


def set_path(data: dict, path: tuple, value: Any) -> str | None:
    """Set a dotted path in nested dicts/lists; returns an error message or None."""
    node: Any = data
    for i, part in enumerate(path):
        last = i == len(path) - 1
        where = ".".join(str(p) for p in path[: i + 1])
        if isinstance(part, int):
            if not isinstance(node, list):
                return f"'{where}' indexes a list, but {'.'.join(str(p) for p in path[:i]) or 'the case'} is not one"
            if part > len(node):
                return (f"list items must be numbered from 0 without gaps: {where} given, but "
                        f"{'.'.join(str(p) for p in path[:i])} has {len(node)} item(s) so far")
            if part == len(node):
                node.append(value if last else ([] if isinstance(path[i + 1], int) else {}))
                if last:
                    return None
            elif last:
                node[part] = value
                return None
            node = node[part]
        else:
            if not isinstance(node, dict):
                return f"'{where}' cannot be set: its parent is a single value, not a group of fields"
            if last:
                node[part] = value
                return None
            if part not in node or node[part] is None:
                node[part] = [] if isinstance(path[i + 1], int) else {}
            node = node[part]
    return None


def apply_updates(obj, updates: list):
    """Copy a validated model tree with new values at several paths (one copy per touched node)."""
    groups: dict = {}
    for path, value in updates:
        groups.setdefault(path[0], []).append((path[1:], value))
    if isinstance(obj, list):
        items = list(obj)
        for idx, sub in groups.items():
            items[idx] = sub[0][1] if sub[0][0] == () else apply_updates(items[idx], sub)
        return items
    changed = {name: (sub[0][1] if sub[0][0] == () else apply_updates(getattr(obj, name), sub))
               for name, sub in groups.items()}
    return obj.model_copy(update=changed)


def path_parts(path: str) -> tuple:
    return tuple(int(p) if p.isdigit() else p for p in path.split("."))


def locate_quantity(spec: CaseSpec, parts: tuple):
    """(owner model, field name, Quantity, QuantityField) at a path, or raise KeyError."""
    node: Any = spec
    for p in parts[:-1]:
        if isinstance(p, int):
            if not isinstance(node, list) or p >= len(node):
                raise KeyError(p)
            node = node[p]
        else:
            node = getattr(node, p, None)
            if node is None:
                raise KeyError(p)
    name = parts[-1]
    if isinstance(name, int) or not hasattr(type(node), "model_fields"):
        raise KeyError(name)
    marker = quantity_field(node, name)
    value = getattr(node, name, None)
    if marker is None or not isinstance(value, Quantity):
        raise KeyError(name)
    return node, name, value, marker


# ------------------------------------------------------------------ paths -> model slots
#
# The fast paths (register rows on the direct and columnar paths, Monte Carlo samples) change SI
# numbers of an already prepared model instead of preparing a new case. This one table says which
# model number a quantity path sets; each fast path says which slots it can write.

#: Quantity paths of single model numbers, and the slot each one sets.
SCALAR_SLOTS = {
    ("contents", "mass"): "mass", ("contents", "specific_heat"): "cp",
    ("contents", "initial_temperature"): "T0", ("heat_loss", "ambient_temperature"): "Ta",
    ("heat_loss", "ua"): "ua", ("heat_loss", "ua_per_mass"): "ua_per_mass", ("heat_loss", "coefficient"): "coefficient", ("horizon",): "H",
    ("response_time",): "response", ("detection", "delay"): "delay", ("detection", "alarm_temperature"): "alarm",
    ("vessel", "wall_mass"): "wall_mass", ("vessel", "wall_specific_heat"): "wall_cp",
    ("heat_loss", "daily_range"): "daily_range", ("heat_loss", "warmest_time_of_day"): "warmest",
    ("start_time_of_day",): "start", ("sun", "peak_irradiance"): "irradiance", ("sun", "absorptivity"): "absorptivity",
    ("sun", "day_length"): "day_length", ("sun", "outer_coefficient"): "outer_coefficient",
}

#: (heat-source kind, field) -> slot; the slot's index is the source's position among sources of its kind.
SOURCE_SLOTS = {
    ("constant", "power"): "const",
    ("decaying", "power"): "dpower", ("decaying", "time_constant"): "dtau", ("decaying", "half_life"): "dhalf",
    ("heating-medium", "ua"): "medium_ua", ("heating-medium", "medium_temperature"): "medium_T",
    ("arrhenius", "specific_power"): "q", ("arrhenius", "reference_temperature"): "Tr",
    ("arrhenius", "activation_energy"): "E", ("arrhenius", "specific_heat_of_reaction"): "dh",
    ("arrhenius", "accumulated_fraction"): "af", ("arrhenius", "initial_conversion"): "ic",
    ("autocatalytic", "rate_constant"): "kr", ("autocatalytic", "reference_temperature"): "Tr",
    ("autocatalytic", "activation_energy"): "E", ("autocatalytic", "specific_heat_of_reaction"): "dh",
    ("autocatalytic", "initial_conversion"): "ic",
}

#: Kinds whose sources share one tuple of the model (arrhenius and autocatalytic sources are both
#: ``ScreeningModel.arrhenius_sources``, in the order of the case), so they share one count of positions.
_POSITION_GROUP = {"autocatalytic": "arrhenius"}


class Slot(NamedTuple):
    """The model number a quantity path sets: its kind (a key of the tables above, or "limit") and index."""

    kind: str
    index: int = 0


def slot_kind(source) -> str:
    """The kind a heat source's slots are filed under: its ``kind``, except that an arrhenius synthesis given
    without kinetics (released at t = 0, not an Arrhenius source of the model) is ``arrhenius-at-start``, whose
    fields no fast path writes."""
    if source.kind == "arrhenius" and not source.has_kinetics:
        return "arrhenius-at-start"
    return source.kind


def source_positions(spec: CaseSpec) -> tuple[int, ...]:
    """For each entry of ``heat_sources``: its position among the model's sources of the same kind."""
    counts: dict = {}
    out = []
    for s in spec.heat_sources:
        kind = slot_kind(s)
        kind = _POSITION_GROUP.get(kind, kind)
        out.append(counts.get(kind, 0))
        counts[kind] = out[-1] + 1
    return tuple(out)


def model_slot(spec: CaseSpec, path: tuple, positions: tuple[int, ...] | None = None) -> Slot | None:
    """The model slot a quantity path sets, or None for a path no fast path can write directly.

    ``positions`` are :func:`source_positions` of the spec (computed once per prepared case).
    """
    kind = SCALAR_SLOTS.get(path)
    if kind is not None:
        return Slot(kind)
    if len(path) == 3 and path[0] == "limits" and path[2] == "temperature" and isinstance(path[1], int):
        return Slot("limit", path[1])
    if len(path) == 3 and path[0] == "heat_sources" and isinstance(path[1], int) and path[1] < len(spec.heat_sources):
        source = spec.heat_sources[path[1]]
        kind = SOURCE_SLOTS.get((slot_kind(source), path[2]))
        if kind is None:
            return None
        if kind in ("af", "ic") and getattr(source, "initial_specific_power", None) is not None:
            return None  # the zero-conversion rate follows the accumulated fraction: prepare the case again
        pos = (positions if positions is not None else source_positions(spec))[path[1]]
        return Slot(kind, pos)
    return None
