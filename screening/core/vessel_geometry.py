r"""Vessel volumes, liquid heights and wetted areas.

Cylinders with heads and partial fill come from the ``fluids`` library
(``fluids.geometry.TANK``); spheres from ``fluids.geometry`` partial-sphere
functions; boxes are exact rectangular formulas.  All lengths in m, areas in
m^2, volumes in m^3.

Heads: flat; hemispherical (depth D/2); 2:1 semi-ellipsoidal (depth D/4, volume
:math:`\pi D^3/24` each); torispherical (crown radius f D, knuckle radius k D,
default f = 1, k = 0.06).  Areas are internal surface areas of a thin wall; a
wetted area includes the bottom (and the top when the vessel is brim-full).

References
----------
Bell, C. and contributors, *fluids: Fluid dynamics component of the Chemical
Engineering Design Library (ChEDL)*, ``fluids.geometry`` (``TANK``,
``V_partial_sphere``, ``SA_partial_sphere``), version 1.x; its documentation
names the sources of each head formula.
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
    """Shape and dimensions of a vessel.

    Parameters
    ----------
    shape : {"vertical-cylinder", "horizontal-cylinder", "sphere", "box"}
    diameter : float or None, [m]
        Inside diameter (cylinders and spheres).
    length : float or None, [m]
        Straight side of a cylinder (heads not included), or the length of a box.
    width : float or None, [m]
        Box only.
    height : float or None, [m]
        Box only.
    heads : {"flat", "hemispherical", "ellipsoidal", "torispherical"}, default "flat"
        Both heads of a cylinder; "ellipsoidal" is 2:1 semi-ellipsoidal (depth D/4).
    crown_radius, knuckle_radius : float or None, [m]
        Torispherical heads; default 1.0 D and 0.06 D
        (:data:`DEFAULT_CROWN_FRACTION`, :data:`DEFAULT_KNUCKLE_FRACTION`).
    """

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
    r"""Internal volume of the vessel.

    Parameters
    ----------
    v : VesselShape

    Returns
    -------
    float, [m^3]

    Notes
    -----
    Box :math:`L W H`; sphere :math:`\pi D^3/6`; cylinders from ``fluids.geometry.TANK``
    (straight side :math:`\pi D^2 L/4` plus the heads).

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By hand, D = 2 m, straight side 3 m: flat heads pi x 1 x 3 = 9.424778 m^3; 2:1
    ellipsoidal heads add 2 pi D^3 / 24 = 2.094395 m^3 (11.519173); hemispherical heads add
    pi D^3 / 6 = 4.188790 m^3 (13.613568):

    >>> [round(total_volume(VesselShape(o, diameter=2.0, length=3.0, heads=h)), 6)
    ...  for o, h in (("vertical-cylinder", "flat"), ("vertical-cylinder", "ellipsoidal"),
    ...               ("horizontal-cylinder", "hemispherical"))]
    [9.424778, 11.519173, 13.613568]
    >>> round(total_volume(VesselShape("sphere", diameter=2.0)), 6)
    4.18879
    """
    if v.shape == "box":
        return v.length * v.width * v.height
    if v.shape == "sphere":
        return math.pi * v.diameter ** 3 / 6.0
    return float(_tank(v).V_total)


def total_area(v: VesselShape) -> float:
    r"""Total internal surface area (shell and heads).

    Parameters
    ----------
    v : VesselShape

    Returns
    -------
    float, [m^2]

    Notes
    -----
    Box :math:`2(LW + LH + WH)`; sphere :math:`\pi D^2`; cylinders from
    ``fluids.geometry.TANK`` (shell :math:`\pi D L` plus the heads).

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By hand, D = 2 m, straight side 3 m: flat heads 6 pi + 2 pi = 25.132741 m^2;
    hemispherical heads 6 pi + 4 pi = 31.415927 m^2; a 2 x 1 x 1.5 m box 13 m^2:

    >>> round(total_area(VesselShape("vertical-cylinder", diameter=2.0, length=3.0)), 6)
    25.132741
    >>> round(total_area(VesselShape("horizontal-cylinder", diameter=2.0, length=3.0, heads="hemispherical")), 6)
    31.415927
    >>> total_area(VesselShape("box", length=2.0, width=1.0, height=1.5))
    13.0
    """
    if v.shape == "box":
        return 2.0 * (v.length * v.width + v.length * v.height + v.width * v.height)
    if v.shape == "sphere":
        return math.pi * v.diameter ** 2
    return float(_tank(v).A)


def maximum_height(v: VesselShape) -> float:
    """Inside height from the bottom to the top.

    Parameters
    ----------
    v : VesselShape

    Returns
    -------
    float, [m]
        Box H; sphere D; a vertical cylinder L plus both head depths; a horizontal
        cylinder D.

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By hand: a vertical cylinder with 2:1 ellipsoidal heads, D = 2 m, L = 3 m, is
    3 + 2 x D/4 = 4 m tall; lying down it is D = 2 m tall:

    >>> maximum_height(VesselShape("vertical-cylinder", diameter=2.0, length=3.0, heads="ellipsoidal"))
    4.0
    >>> maximum_height(VesselShape("horizontal-cylinder", diameter=2.0, length=3.0, heads="ellipsoidal"))
    2.0
    """
    if v.shape == "box":
        return v.height
    if v.shape == "sphere":
        return v.diameter
    return float(_tank(v).h_max)


def liquid_height(v: VesselShape, liquid_volume: float) -> float:
    """Liquid height above the vessel bottom for a liquid volume.

    Parameters
    ----------
    v : VesselShape
    liquid_volume : float, [m^3]

    Returns
    -------
    float, [m]
        0 for an empty vessel; :func:`maximum_height` at or above the total volume.

    Notes
    -----
    Inverts the monotone V(h) of ``fluids`` (or of the partial sphere) with Brent's
    method (:func:`screening.core.root_finding.brent_root`) to about 1e-13 m.

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By symmetry: a half-full sphere or horizontal cylinder of D = 2 m is filled to 1 m;
    by hand, pi x 1.5 m^3 in a flat-bottomed vertical cylinder of D = 2 m stands 1.5 m:

    >>> sphere = VesselShape("sphere", diameter=2.0)
    >>> round(liquid_height(sphere, total_volume(sphere) / 2), 9)
    1.0
    >>> drum = VesselShape("horizontal-cylinder", diameter=2.0, length=3.0, heads="ellipsoidal")
    >>> round(liquid_height(drum, total_volume(drum) / 2), 9)
    1.0
    >>> import math
    >>> round(liquid_height(VesselShape("vertical-cylinder", diameter=2.0, length=3.0), math.pi * 1.5), 9)
    1.5
    """
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
    r"""Area of the vessel wall in contact with the liquid (bottom included).

    Parameters
    ----------
    v : VesselShape
    liquid_volume : float, [m^3]

    Returns
    -------
    float, [m^2]
        The whole internal area when the vessel is brim-full (the top is wetted too).

    Notes
    -----
    Box :math:`LW + 2(L + W) h`; sphere :math:`\pi D h` (spherical cap, via
    ``fluids.geometry.SA_partial_sphere``); cylinders ``fluids.geometry.TANK.SA_from_h``.

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By hand: a half-full sphere of D = 2 m wets 2 pi = 6.283185 m^2; a half-full horizontal
    cylinder, D = 2 m, L = 3 m, flat ends, wets half its shell and half of each end,
    3 pi + pi = 12.566371 m^2; a 2 x 1 m box holding 1 m^3 (h = 0.5 m) wets 2 + 6 x 0.5 = 5 m^2:

    >>> sphere = VesselShape("sphere", diameter=2.0)
    >>> round(wetted_area(sphere, total_volume(sphere) / 2), 6)
    6.283185
    >>> drum = VesselShape("horizontal-cylinder", diameter=2.0, length=3.0)
    >>> round(wetted_area(drum, total_volume(drum) / 2), 6)
    12.566371
    >>> wetted_area(VesselShape("box", length=2.0, width=1.0, height=1.5), 1.0)
    5.0
    """
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
    """Wetted area up to a height above the vessel bottom (for fire exposure).

    Parameters
    ----------
    v : VesselShape
    liquid_volume : float, [m^3]
    height_above_bottom : float, [m]
        Only wall below this height counts (the fire zone, see
        :func:`screening.core.fire_exposure.fire_wetted_area`).

    Returns
    -------
    float, [m^2]
        The wetted area of the liquid below min(liquid height, ``height_above_bottom``).

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By hand: a 2 x 1 x 1.5 m box holding 2 m^3 (h = 1 m), counted to 0.25 m, gives
    2 + 6 x 0.25 = 3.5 m^2:

    >>> wetted_area_below(VesselShape("box", length=2.0, width=1.0, height=1.5), 2.0, 0.25)
    3.5
    """
    h_liquid = liquid_height(v, liquid_volume)
    h = max(0.0, min(h_liquid, height_above_bottom))
    if h <= 0:
        return 0.0
    return wetted_area(v, liquid_volume_at_height(v, h))


def liquid_volume_at_height(v: VesselShape, h: float) -> float:
    r"""Liquid volume when the vessel is filled to a height h above its bottom.

    Parameters
    ----------
    v : VesselShape
    h : float, [m]
        Capped at the full height.

    Returns
    -------
    float, [m^3]

    Notes
    -----
    Box :math:`L W h`; sphere :math:`\pi h^2 (3 D/2 - h)/3` (``fluids.geometry.V_partial_sphere``);
    cylinders ``fluids.geometry.TANK.V_from_h``.

    References
    ----------
    Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``, partial spheres), version 1.x;
    hand formulas for the flat, hemispherical and 2:1 ellipsoidal cases (common practice).

    Examples
    --------
    By hand: a sphere of D = 2 m filled to 1 m holds pi x 1 x (3 - 1) / 3 = 2.094395 m^3:

    >>> round(liquid_volume_at_height(VesselShape("sphere", diameter=2.0), 1.0), 6)
    2.094395
    """
    if v.shape == "box":
        return v.length * v.width * min(h, v.height)
    if v.shape == "sphere":
        from fluids.geometry import V_partial_sphere

        return float(V_partial_sphere(v.diameter, min(h, v.diameter)))
    tank = _tank(v)
    return float(tank.V_from_h(min(h, tank.h_max)))


def conduction_shape(v: VesselShape | None) -> tuple[str, float] | None:
    """Geometry and radius for conduction in unstirred contents.

    Parameters
    ----------
    v : VesselShape or None

    Returns
    -------
    (str, float) or None, ([-], [m])
        ("sphere", D/2), ("cylinder", D/2) or ("slab", half the smallest box dimension),
        for :func:`screening.core.runaway.frank_kamenetskii_critical`; None without a shape.

    Notes
    -----
    A cylinder is treated as infinitely long (radius D/2) and a box as a slab of
    half its smallest dimension; both lose less heat than the finite body, so the
    critical conditions found for them are reached earlier: conservative.

    References
    ----------
    Frank-Kamenetskii, D. A., *Diffusion and Heat Exchange in Chemical Kinetics*, Princeton University
    Press (1955) (infinite slab, infinite cylinder and sphere).

    Examples
    --------
    >>> conduction_shape(VesselShape("box", length=2.0, width=1.0, height=1.5))
    ('slab', 0.5)
    >>> conduction_shape(VesselShape("horizontal-cylinder", diameter=2.0, length=3.0))
    ('cylinder', 1.0)
    """
    if v is None:
        return None
    if v.shape == "sphere":
        return ("sphere", v.diameter / 2)
    if v.shape == "box":
        return ("slab", min(v.length, v.width, v.height) / 2)
    return ("cylinder", v.diameter / 2)
