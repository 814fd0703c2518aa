"""Dotted case paths: split them, find the quantity at one, replace values at paths."""
from __future__ import annotations

from typing import Any

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
