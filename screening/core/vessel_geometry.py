r"""Vessel volumes, liquid heights and wetted areas of one vessel.

Each function is the array function of :mod:`screening.core.vessel_geometry_arrays` called
with a group of one, so a case and a register row share one implementation (closed forms,
and a fixed Gauss-Legendre rule where a horizontal head has none).  All lengths in m, areas
in m^2, volumes in m^3.

Heads: flat; hemispherical (depth D/2); 2:1 semi-ellipsoidal (depth D/4, volume
:math:`\pi D^3/24` each); torispherical (crown radius f D, knuckle radius k D,
default f = 1, k = 0.06).  Areas are internal surface areas of a thin wall; a
wetted area includes the bottom (and the top when the vessel is brim-full).

References
----------
Standard mensuration (common practice); see :mod:`screening.core.vessel_geometry_arrays`.
The tests check every shape against mpmath quadrature and against ``fluids.geometry.TANK``
(Bell, C. and contributors, *fluids*, version 1.x) where its formulas are closed forms.
"""
from __future__ import annotations

from dataclasses import dataclass

from screening.core import vessel_geometry_arrays as arrays
from screening.core.vessel_geometry_arrays import DEFAULT_CROWN_FRACTION, DEFAULT_KNUCKLE_FRACTION  # noqa: F401


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


def _one(v: VesselShape) -> arrays.VesselArrays:
    """The vessel as arrays of one row."""
    return arrays.VesselArrays.of([v])


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
    Box :math:`L W H`; sphere :math:`\pi D^3/6`; cylinders the straight side :math:`\pi D^2 L/4`
    plus the heads (:func:`screening.core.vessel_geometry_arrays.total_volume`).

    References
    ----------
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

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
    return float(arrays.total_volume(_one(v))[0])


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
    Box :math:`2(LW + LH + WH)`; sphere :math:`\pi D^2`; cylinders the shell :math:`\pi D L`
    plus the heads (:func:`screening.core.vessel_geometry_arrays.total_area`).

    References
    ----------
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

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
    return float(arrays.total_area(_one(v))[0])


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
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

    Examples
    --------
    By hand: a vertical cylinder with 2:1 ellipsoidal heads, D = 2 m, L = 3 m, is
    3 + 2 x D/4 = 4 m tall; lying down it is D = 2 m tall:

    >>> maximum_height(VesselShape("vertical-cylinder", diameter=2.0, length=3.0, heads="ellipsoidal"))
    4.0
    >>> maximum_height(VesselShape("horizontal-cylinder", diameter=2.0, length=3.0, heads="ellipsoidal"))
    2.0
    """
    return float(arrays.maximum_height(_one(v))[0])


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
    Inverts V(h) by a safeguarded Newton iteration
    (:func:`screening.core.vessel_geometry_arrays.liquid_height`) to about 1e-14 of the height.

    References
    ----------
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

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
    return float(arrays.liquid_height(_one(v), liquid_volume)[0])


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
    Box :math:`LW + 2(L + W) h`; sphere :math:`\pi D h` (spherical zone); cylinders
    :func:`screening.core.vessel_geometry_arrays.wetted_area_at_height`.

    References
    ----------
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

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
    return float(arrays.liquid_height(_one(v), liquid_volume, with_area=True)[1][0])


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
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

    Examples
    --------
    By hand: a 2 x 1 x 1.5 m box holding 2 m^3 (h = 1 m), counted to 0.25 m, gives
    2 + 6 x 0.25 = 3.5 m^2:

    >>> wetted_area_below(VesselShape("box", length=2.0, width=1.0, height=1.5), 2.0, 0.25)
    3.5
    """
    one = _one(v)
    h_liquid = float(arrays.liquid_height(one, liquid_volume)[0])
    h = max(0.0, min(h_liquid, height_above_bottom))
    if h <= 0:
        return 0.0
    return float(arrays.wetted_area_at_height(one, h)[0])


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
    Box :math:`L W h`; sphere :math:`\pi h^2 (3 D/2 - h)/3`; cylinders
    :func:`screening.core.vessel_geometry_arrays.volume_at_height`.

    References
    ----------
    Standard mensuration (common practice); :mod:`screening.core.vessel_geometry_arrays`.

    Examples
    --------
    By hand: a sphere of D = 2 m filled to 1 m holds pi x 1 x (3 - 1) / 3 = 2.094395 m^3:

    >>> round(liquid_volume_at_height(VesselShape("sphere", diameter=2.0), 1.0), 6)
    2.094395
    """
    return float(arrays.volume_at_height(_one(v), h)[0])


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
