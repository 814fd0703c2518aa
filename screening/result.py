"""The result contract: the JSON object of a screened case and the view the memo takes.

Keys ending in ``_s``, ``_K``, ``_W``, ``_kg`` carry SI values. Keys starting with ``_``
(plotting arrays) are stripped from the JSON (:func:`public_result`); the memo takes
:func:`memo_view`.
"""
from __future__ import annotations

import math

#: Points of the plotted temperature history in a result (plus turning points and crossings).
HISTORY_POINTS = 401


def public_result(result: dict) -> dict:
    """The JSON object: without the plotting arrays."""
    return {k: v for k, v in result.items() if not k.startswith("_")}


def finite_or_null(obj):
    """A copy with every non-finite float replaced by None (JSON has no inf or NaN)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: finite_or_null(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite_or_null(v) for v in obj]
    return obj


def _non_finite_paths(obj, path: str, out: list[str]) -> None:
    if isinstance(obj, float):
        if not math.isfinite(obj):
            out.append(path or "(result)")
    elif isinstance(obj, dict):
        for k, v in obj.items():
            _non_finite_paths(v, f"{path}.{k}" if path else str(k), out)
    elif isinstance(obj, (list, tuple)):
        for i, v in enumerate(obj):
            _non_finite_paths(v, f"{path}.{i}", out)


NON_FINITE_SHOWN = 10


def json_safe(public: dict) -> dict:
    """The JSON object with every non-finite number (inf, NaN) as null, and a warning naming where.

    The last line of defence of what is printed or answered: a screening result should hold none
    (each source is fixed where it is found), but if one does, the reader is told which values are
    missing instead of the whole answer failing (JSON has no inf or NaN)."""
    paths: list[str] = []
    _non_finite_paths(public, "", paths)
    if not paths:
        return public
    out = finite_or_null(public)
    shown = ", ".join(paths[:NON_FINITE_SHOWN]) + (f" and {len(paths) - NON_FINITE_SHOWN} more"
                                                    if len(paths) > NON_FINITE_SHOWN else "")
    warnings = list(out.get("warnings") or [])
    warnings.append(f"The result held values that are not finite numbers (infinite or NaN) at {shown}; they are "
                    f"given as null. This is a fault of the tool's numerics for this case: do not rely on those "
                    f"values, and report the case.")
    out["warnings"] = warnings
    return out


def memo_view(result: dict) -> dict:
    """The object the memo writer takes: JSON keys plus history, heat balance, recovery path."""
    out = public_result(result)
    if result.get("_history") is not None:
        out["history"] = result["_history"]
    if result.get("_heat_balance") is not None:
        out["heat_balance"] = result["_heat_balance"]
    if result.get("_recovery_history") is not None:
        out["recovery_history"] = result["_recovery_history"]
    if result.get("_uncertainty_cdf") is not None:
        out["uncertainty_cdf"] = result["_uncertainty_cdf"]
    for key in ("case_fields", "derived_inputs"):  # every field as written; what the tool derived and used
        if result.get("_" + key) is not None:
            out[key] = result["_" + key]
    return out
