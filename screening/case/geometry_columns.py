"""A vessel's geometry, contents and heat-loss area on arrays: one case is a group of one.

:func:`screening.case.prepare.prepare_case` calls these with arrays of one row, and a
register group of tanks given by geometry (:mod:`screening.register.columns`) with one row
per tank, so both take the same numbers from the same operations in the same order, and the
same warning texts.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from screening.core.vessel_geometry_arrays import VesselArrays, liquid_height, maximum_height, total_area, total_volume

#: A heat-loss coefficient above this is more than passive surfaces lose to still air (common practice).
HIGH_COEFFICIENT = 25.0


@dataclass
class VesselColumns:
    """Per-row SI numbers of the vessels (arrays; None where the case has no such number).

    ``computable`` is False where the dimensions give a non-finite or negative volume, area or
    height (or a zero volume): the row's problem, named by field (see prepare_case).
    """

    vessel_volume: np.ndarray
    total_area: np.ndarray
    height: np.ndarray
    mass: np.ndarray | None
    liquid_volume: np.ndarray | None
    fill_fraction: np.ndarray | None
    liquid_height: np.ndarray | None
    wetted_area: np.ndarray | None
    computable: np.ndarray  # the vessel's volume, area and height
    liquid_computable: np.ndarray | None  # the liquid height and wetted area


def _good(*columns, positive_first: bool = False) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        ok = np.ones(len(columns[0]), dtype=bool)
        for x in columns:
            ok &= np.isfinite(x) & (x >= 0.0)
        if positive_first:
            ok &= columns[0] > 0.0
    return ok


def vessel_columns(v: VesselArrays, mass=None, volume=None, fill=None, density=None) -> VesselColumns:
    """Volumes, areas, heights and the contents' mass of each vessel; exactly one of ``mass``,
    ``volume`` and ``fill`` (arrays), ``density`` with volume and fill, optional with mass."""
    with np.errstate(all="ignore"):
        vessel_volume, area, height = total_volume(v), total_area(v), maximum_height(v)
        if mass is not None:
            liquid_volume = mass / density if density is not None else None
        elif volume is not None:
            liquid_volume = volume
            mass = liquid_volume * density
        else:
            liquid_volume = fill * vessel_volume
            mass = liquid_volume * density
        fill_fraction = h = wetted = liquid_ok = None
        if liquid_volume is not None:
            fill_fraction = liquid_volume / vessel_volume
            h, wetted = liquid_height(v, liquid_volume, with_area=True)
            liquid_ok = _good(h, wetted)
    return VesselColumns(vessel_volume, area, height, mass, liquid_volume, fill_fraction, h, wetted,
                         _good(vessel_volume, area, height, positive_first=True), liquid_ok)


def is_over_full(fill_fraction) -> np.ndarray:
    """Where the contents are more than the vessel holds (beyond rounding)."""
    return np.asarray(fill_fraction) > 1.0 + 1e-9


def over_full_warning(liquid_volume: float, fill_fraction: float, vessel_volume: float) -> str:
    """The warning of contents larger than the vessel."""
    return (f"The contents ({liquid_volume:.4g} m^3) fill {fill_fraction * 100:.1f} % of the vessel "
            f"volume ({vessel_volume:.4g} m^3): more than it holds. Check mass, density, fill and "
            f"dimensions; areas are taken at full.")


def heat_loss_columns(ua=None, coefficient=None, area_used=None, wetted_area=None, total_area=None):
    """(UA [W/K], surface coefficient [W/(m^2 K)] or None) of each row.

    With ``ua`` given the surface coefficient is UA over the wetted area (or the total area where
    there is no wetted area), None without a vessel; else UA = coefficient x ``area_used``.
    """
    if ua is None:
        return coefficient * area_used, coefficient
    area = wetted_area if wetted_area is not None else total_area
    if area is None:
        return ua, None
    if wetted_area is not None and total_area is not None:
        area = np.where(wetted_area != 0, wetted_area, total_area)  # a zero wetted area counts as none
    with np.errstate(all="ignore"):
        sc = np.where((ua > 0) & (area != 0), ua / area, np.nan)
    return ua, sc


def high_coefficient_warning(coefficient: float) -> str:
    """The warning of a heat-loss coefficient above what passive surfaces lose."""
    return (f"The heat-loss coefficient is {coefficient:.3g} W/(m^2 K): more than passive surfaces "
            f"lose to still air (bare steel about 5-15 W/(m^2 K) with radiation, common practice). A "
            f"loss this large is not conservative unless it is measured.")
