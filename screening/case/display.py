"""Temperatures, temperature differences and durations as text in the case's own units."""
from __future__ import annotations

from screening.case.units import kelvin_difference_to, kelvin_to

SYMBOL = {"degC": "°C", "degF": "°F", "K": "K", "degR": "°R"}


def temp(k, unit: str) -> str:
    if k is None:
        return "—"
    if unit == "K":
        return f"{k:.1f} K"
    return f"{kelvin_to(k, unit):.1f} {SYMBOL[unit]} ({k:.2f} K)"


def dtemp(k, unit: str) -> str:
    if k is None:
        return "—"
    if unit in ("degF", "degR"):
        return f"{kelvin_difference_to(k, unit):.1f} {SYMBOL[unit]} ({k:.1f} K)"
    return f"{k:.1f} K"


def duration(s) -> str:
    if s is None:
        return "—"
    if s < 120:
        return f"{s:.3g} s"
    if s < 2 * 3600:
        return f"{s / 60:.3g} min"
    if s < 10 * 86400:
        return f"{s / 3600:.4g} h"
    return f"{s / 86400:.4g} d ({s / 3600:.4g} h)"
