r"""Heat input to a liquid-filled vessel engulfed in a pool fire.

The wetted-area correlation of API Standard 521 / ISO 23251 for a vessel in an
open pool fire, in SI form:

.. math:: Q = C\, F\, A_w^{0.82}

with Q in W, A_w the wetted area in m^2 counted up to 7.6 m (25 ft) above the
fire base, F the environment factor (1 for a bare vessel) and C = 43,200 with
adequate drainage and fire-fighting, 70,900 without.  The customary form is
C = 21,000 and 34,500 with Q in Btu/h and A in ft^2.  The SI constants are
as recalled (from memory) and agree with the unit-converted customary
constants to about 0.1 % (checked in the tests).

The correlation is a screening estimate of the heat absorbed by the wetted
wall; it is not a relief-sizing calculation.  The caution texts below travel
with every number this module returns.

References
----------
API Standard 521, *Pressure-relieving and Depressuring Systems*, American
Petroleum Institute, 5th ed. (2007) and 6th ed. (2014) (editions from memory;
the 5th edition is identical to ISO 23251); ISO 23251:2006, *Petroleum,
petrochemical and natural gas industries - Pressure-relieving and depressuring
systems* (fire exposure of vessels containing liquid; wetted-area correlation;
edition year from memory).  API Standard 2000 for atmospheric and low-pressure
storage tanks.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Height above the fire base up to which wetted area counts, m (25 ft).
FIRE_ZONE_HEIGHT = 7.6
#: SI constants of the correlation, W / m^1.64 (from memory; see module docstring).
CONSTANT_ADEQUATE_DRAINAGE = 43_200.0
CONSTANT_INADEQUATE_DRAINAGE = 70_900.0
AREA_EXPONENT = 0.82

#: Cautions that apply to every fire heat input from this module.
FIRE_CAUTIONS = (
    "Fire heat input (API Standard 521 / ISO 23251 wetted-area correlation) is a net heat input to the "
    "exposed surface: no credit for heat loss to ambient is taken on the fire-exposed surface.",
    "Insulation earns environment-factor credit (F < 1) only if it stays in place in a fire (fire-resistant "
    "cladding and fixings); otherwise use F = 1.",
    "Atmospheric and low-pressure storage tanks fall under API Standard 2000, not this correlation.",
    "Only wetted area up to 7.6 m (25 ft) above the fire base counts; the fire base is grade or any surface "
    "that can hold a pool of burning liquid.",
    "The correlation covers the wetted wall only: an unwetted wall in the fire heats quickly and can fail "
    "at a pressure below the set pressure; not assessed here.",
    "Relief sizing for fire needs the standard itself; this screening heat input is not a sizing basis.",
)


@dataclass(frozen=True)
class FireHeatInput:
    """Fire heat input with the cautions that belong to it (returned by :func:`api521_fire_heat_input`).

    Attributes
    ----------
    power : float or numpy.ndarray, [W]
        Q; a float for scalar input.  ``float(result)`` gives it for a scalar case.
    wetted_area : float or numpy.ndarray, [m^2]
        A_w, as given.
    environment_factor : float or numpy.ndarray, [-]
        F, as given.
    adequate_drainage_and_firefighting : bool or numpy.ndarray
        As given (True: constant 43,200; False: 70,900).
    cautions : tuple of str
        :data:`FIRE_CAUTIONS` and any that the inputs add; keep them next to the number.
    """

    power: float | np.ndarray
    wetted_area: float | np.ndarray
    environment_factor: float | np.ndarray
    adequate_drainage_and_firefighting: bool | np.ndarray
    cautions: tuple[str, ...]

    def __float__(self) -> float:
        return float(self.power)


def api521_fire_heat_input(wetted_area, environment_factor=1.0, adequate_drainage_and_firefighting=True):
    r"""Heat input to the wetted wall of a vessel in a pool fire.

    Parameters
    ----------
    wetted_area : float or array_like, [m^2]
        Wetted area within 7.6 m of the fire base (see :func:`fire_wetted_area`), >= 0;
        any shape (broadcast with the other arguments).
    environment_factor : float or array_like, [-], default 1.0
        F in (0, 1]; 1 for a bare vessel.  Values below 1 are credit for
        fire-proof insulation, water spray or similar and need justification.
    adequate_drainage_and_firefighting : bool or array_like of bool, default True
        True selects the constant 43,200, False 70,900.

    Returns
    -------
    FireHeatInput
        ``power`` in [W] (float for scalar input, array otherwise) and the
        caution texts; ``float(result)`` gives the power of a scalar case.

    Raises
    ------
    ValueError
        A negative or non-finite area, or F outside (0, 1].

    Notes
    -----
    .. math:: Q = C\, F\, A_w^{0.82}, \qquad C = 43\,200 \text{ (adequate drainage and
              fire-fighting) or } 70\,900 \text{ (without)}, \quad Q \text{ in W},\ A_w \text{ in m}^2

    SI form of the customary :math:`Q = 21\,000\, F A^{0.82}` and
    :math:`34\,500\, F A^{0.82}` (Btu/h, ft^2); converted exactly (1 Btu/h =
    0.29307107 W, 1 ft^2 = 0.09290304 m^2) they give 43,192 and 70,959, within 0.1 % of
    the SI constants (from memory).  An empirical correlation from pool-fire tests on
    liquid-filled vessels: a net heat input to the wetted wall (no credit for heat loss to
    ambient on the exposed surface), not a relief-sizing calculation; the unwetted wall and
    atmospheric storage tanks (API 2000) are outside it.

    References
    ----------
    API Standard 521, *Pressure-relieving and Depressuring Systems*, 5th ed. (2007) / 6th
    ed. (2014), and ISO 23251:2006: fire exposure of vessels containing liquid, heat
    absorption equations (editions and constants from memory; see the module docstring).

    Examples
    --------
    By hand, for 100 m^2 of bare wetted wall: 100^0.82 = 10^1.64 = 43.6516, so
    Q = 43,200 x 43.6516 = 1.8857e6 W with drainage and fire-fighting and
    70,900 x 43.6516 = 3.0949e6 W without:

    >>> round(api521_fire_heat_input(100.0).power)
    1885748
    >>> round(float(api521_fire_heat_input(100.0, adequate_drainage_and_firefighting=False)))
    3094897

    Arrays broadcast; by hand, F = 0.5 and 10 m^2 give 21,600 x 10^0.82 = 21,600 x 6.6069
    = 142,710 W:

    >>> [round(q) for q in api521_fire_heat_input([10.0, 100.0], 0.5).power]
    [142710, 942874]

    The customary constant, by hand: 21,000 Btu/h x 0.29307107 W/(Btu/h) x
    (1 / 0.09290304)^0.82 = 43,192 W, within 0.02 % of 43,200:

    >>> round(21_000 * (1055.05585262 / 3600) * (1 / 0.3048**2) ** AREA_EXPONENT)
    43192
    """
    A = np.asarray(wetted_area, dtype=float)
    F = np.asarray(environment_factor, dtype=float)
    adequate = np.asarray(adequate_drainage_and_firefighting, dtype=bool)
    if not np.all(np.isfinite(A)) or np.any(A < 0):
        raise ValueError("wetted_area must be finite and non-negative (m^2)")
    if not np.all(np.isfinite(F)) or np.any(F <= 0) or np.any(F > 1):
        raise ValueError("environment_factor must be above 0 and at most 1")
    const = np.where(adequate, CONSTANT_ADEQUATE_DRAINAGE, CONSTANT_INADEQUATE_DRAINAGE)
    power = const * F * A ** AREA_EXPONENT
    cautions = list(FIRE_CAUTIONS)
    if np.any(F < 1):
        cautions.append("An environment factor below 1 is credited here: confirm the insulation or other "
                        "protection survives the fire and is in place on the whole wetted surface.")
    if np.any(A == 0):
        cautions.append("No wetted area within the fire zone: the fire heat input is zero, but walls in the "
                        "fire above the liquid can still overheat (not assessed).")
    scalar = power.ndim == 0
    return FireHeatInput(
        power=float(power) if scalar else power,
        wetted_area=float(A) if A.ndim == 0 else A,
        environment_factor=float(F) if F.ndim == 0 else F,
        adequate_drainage_and_firefighting=bool(adequate) if adequate.ndim == 0 else adequate,
        cautions=tuple(cautions))


def fire_wetted_area(area_below, liquid_level, elevation=0.0, fire_zone_height=FIRE_ZONE_HEIGHT):
    r"""Wetted area that counts for fire exposure.

    Parameters
    ----------
    area_below : callable
        ``area_below(h)`` -> wetted wall area [m^2] from the vessel bottom up to
        a height h [m] above the bottom, for 0 <= h <= liquid level (bottom
        included).  For example ``lambda h: vessel_geometry.wetted_area_below(shape, volume, h)``.
    liquid_level : float, [m]
        Liquid height above the vessel bottom, >= 0.
    elevation : float, [m], default 0
        Height of the vessel bottom above the fire base (grade, or a platform
        or other surface that can hold a pool fire), >= 0.
    fire_zone_height : float, [m], default 7.6 (25 ft)

    Returns
    -------
    float, [m^2]

    Raises
    ------
    ValueError
        Negative level or elevation, a zone height <= 0, or ``area_below`` returning a
        negative or non-finite area.

    Notes
    -----
    The wetted surface counts up to the fire-zone height above the fire base,
    so up to :math:`h_c = \min(h_L,\ \max(0,\ H_f - z_b))` above the vessel bottom:

    .. math:: A_w = A_{below}(h_c), \qquad A_w = 0 \text{ when } h_c = 0

    References
    ----------
    API Standard 521 / ISO 23251 (wetted area up to 7.6 m, 25 ft, above the fire base;
    from memory).

    Examples
    --------
    By hand, for a flat-bottomed vertical cylinder, D = 3 m, filled to 10 m on grade, with
    :math:`A_{below}(h) = \pi D^2/4 + \pi D h`: only 7.6 m counts, so
    A_w = pi (2.25 + 3 x 7.6) = 78.697 m^2; standing 2 m above grade, 5.6 m counts,
    A_w = pi (2.25 + 16.8) = 59.847 m^2; 8 m above grade, nothing counts:

    >>> import math
    >>> below = lambda h: math.pi * 3.0**2 / 4 + math.pi * 3.0 * h
    >>> [round(fire_wetted_area(below, 10.0, z), 3) for z in (0.0, 2.0, 8.0)]
    [78.697, 59.847, 0.0]
    """
    if not (liquid_level >= 0 and elevation >= 0 and fire_zone_height > 0):
        raise ValueError("liquid_level and elevation must be >= 0, fire_zone_height > 0 (m)")
    h = min(float(liquid_level), max(0.0, float(fire_zone_height) - float(elevation)))
    if h <= 0:
        return 0.0
    area = float(area_below(h))
    if not (area >= 0 and np.isfinite(area)):
        raise ValueError("area_below returned a negative or non-finite area")
    return area
