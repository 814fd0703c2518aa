"""Vessel volumes, liquid heights and wetted areas.

Cylinders with heads and partial fill come from the ``fluids`` library
(``fluids.geometry.TANK``); spheres from ``fluids.geometry`` partial-sphere
functions; boxes are exact rectangular formulas.  All lengths in m, areas in
m^2, volumes in m^3.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from screening.core.root_finding import brent_root
from screening.core.root_finding import brent_root as brentq

# fluids' default torispherical proportion: crown radius = 1.0 D, knuckle radius = 0.06 D
# (a common flanged-and-dished proportion, common practice).
DEFAULT_CROWN_FRACTION = 1.0
DEFAULT_KNUCKLE_FRACTION = 0.06


@dataclass(frozen=True)
class VesselShape:
    shape: str  # vertical-cylinder | horizontal-cylinder | sphere | box
    diameter: float | None = None
    length: float | None = None  # straight side (cylinders) or box length
    width: float | None = None
    height: float | None = None
    heads: str = "flat"
    crown_radius: float | None = None
    knuckle_radius: float | None = None


def _tank(v: VesselShape):
    from fluids.geometry import TANK

    horizontal = v.shape == "horizontal-cylinder"
    if v.heads == "flat":
        side = None
        kwargs = {}
    elif v.heads == "hemispherical":
        side = "spherical"
        kwargs = {"sideA_a": v.diameter / 2, "sideB_a": v.diameter / 2}
    elif v.heads == "ellipsoidal":
        side = "ellipsoidal"
        kwargs = {"sideA_a": v.diameter / 4, "sideB_a": v.diameter / 4}  # 2:1 semi-ellipsoidal
    else:
        side = "torispherical"
        f = (v.crown_radius / v.diameter) if v.crown_radius else DEFAULT_CROWN_FRACTION
        k = (v.knuckle_radius / v.diameter) if v.knuckle_radius else DEFAULT_KNUCKLE_FRACTION
        kwargs = {"sideA_f": f, "sideA_k": k, "sideB_f": f, "sideB_k": k}
    return TANK(D=v.diameter, L=v.length, horizontal=horizontal, sideA=side, sideB=side, **kwargs)


def total_volume(v: VesselShape) -> float:
    """Internal volume of the vessel, m^3."""
    if v.shape == "box":
        return v.length * v.width * v.height
    if v.shape == "sphere":
        return math.pi * v.diameter ** 3 / 6.0
    return float(_tank(v).V_total)


def total_area(v: VesselShape) -> float:
    """Total internal surface area (shell and heads), m^2."""
    if v.shape == "box":
        return 2.0 * (v.length * v.width + v.length * v.height + v.width * v.height)
    if v.shape == "sphere":
        return math.pi * v.diameter ** 2
    return float(_tank(v).A)


def maximum_height(v: VesselShape) -> float:
    """Inside height from the bottom to the top, m."""
    if v.shape == "box":
        return v.height
    if v.shape == "sphere":
        return v.diameter
    return float(_tank(v).h_max)


def liquid_height(v: VesselShape, liquid_volume: float) -> float:
    """Liquid height for a liquid volume (m^3) in the vessel, m (capped at full)."""
    full = total_volume(v)
    if liquid_volume >= full:
        return maximum_height(v)
    if liquid_volume <= 0:
        return 0.0
    if v.shape == "box":
        return liquid_volume / (v.length * v.width)
    if v.shape == "sphere":
        from fluids.geometry import V_partial_sphere

        return float(brentq(lambda h: V_partial_sphere(v.diameter, h) - liquid_volume, 0.0, v.diameter,
                            xtol=1e-12, rtol=1e-14))
    tank = _tank(v)
    # Invert the monotone V(h) ourselves: fluids' h_from_V builds a spline table (slow to import).

    return float(brent_root(lambda h: float(tank.V_from_h(h)) - liquid_volume, 0.0, float(tank.h_max),
                            xtol=1e-13, rtol=1e-15))


def wetted_area(v: VesselShape, liquid_volume: float) -> float:
    """Area of the vessel wall in contact with the liquid (bottom included), m^2."""
    h = liquid_height(v, liquid_volume)
    if v.shape == "box":
        if h >= v.height:  # brim-full: the lid is wetted too, as for full cylinders and spheres
            return total_area(v)
        return v.length * v.width + 2.0 * (v.length + v.width) * h
    if v.shape == "sphere":
        from fluids.geometry import SA_partial_sphere

        return float(SA_partial_sphere(v.diameter, h)) if h < v.diameter else math.pi * v.diameter ** 2
    tank = _tank(v)
    if h >= tank.h_max:
        return float(tank.A)
    return float(tank.SA_from_h(h))


def wetted_area_below(v: VesselShape, liquid_volume: float, height_above_bottom: float) -> float:
    """Wetted area up to a height above the vessel bottom, m^2 (for fire exposure)."""
    h_liquid = liquid_height(v, liquid_volume)
    h = max(0.0, min(h_liquid, height_above_bottom))
    if h <= 0:
        return 0.0
    return wetted_area(v, liquid_volume_at_height(v, h))


def liquid_volume_at_height(v: VesselShape, h: float) -> float:
    if v.shape == "box":
        return v.length * v.width * min(h, v.height)
    if v.shape == "sphere":
        from fluids.geometry import V_partial_sphere

        return float(V_partial_sphere(v.diameter, min(h, v.diameter)))
    tank = _tank(v)
    return float(tank.V_from_h(min(h, tank.h_max)))


def conduction_shape(v: VesselShape | None) -> tuple[str, float] | None:
    """Geometry and radius for conduction in unstirred contents.

    A cylinder is treated as infinitely long (radius D/2) and a box as a slab of
    half its smallest dimension; both give a lower critical parameter than the
    finite body, which is conservative.
    """
    if v is None:
        return None
    if v.shape == "sphere":
        return ("sphere", v.diameter / 2)
    if v.shape == "box":
        return ("slab", min(v.length, v.width, v.height) / 2)
    return ("cylinder", v.diameter / 2)
