r"""Frank-Kamenetskii's criterion for unstirred contents with conduction.

Unstirred contents heat by reaction and lose heat by conduction to their surface.
With the exponential approximation and :math:`\theta = E (T - T_a)/(R T_a^2)` the
steady temperature field obeys
:math:`\nabla^2\theta + \delta e^{\theta} = 0`; steady states exist only while the
Frank-Kamenetskii parameter :math:`\delta` is below a critical value
:math:`\delta_c` that depends on the shape and on the surface Biot number.

References
----------
Frank-Kamenetskii, D. A., Acta Physicochimica URSS 10 (1939) 365 (from memory);
*Diffusion and Heat Exchange in Chemical Kinetics*, Princeton University Press (1955),
2nd ed. Plenum (1969).  Critical values at infinite Biot number 0.878 (slab), 2.000
(cylinder), 3.322 (sphere) (from memory; reproduced numerically here).
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from screening.core.model import GAS_CONSTANT
from screening.core.runaway.rates import (
    FK_GEOMETRIES,
    SEARCH_RANGE,
    WARNING_FK_ARRHENIUS_ONLY,
    WARNING_FK_SURFACE_AT_AMBIENT,
    _check_sources,
    _exp_capped,
    _grid,
    _log_energy_weighted_rate,
    _positive_temperature,
    _root,
    _safe_log,
    _scalar_or_array,
    kinetics_warnings,
)

# --------------------------------------------------------------------------
# Frank-Kamenetskii: unstirred contents, conduction
# --------------------------------------------------------------------------

def frank_kamenetskii_parameter(ambient, density, sources, radius, conductivity,
                                conversion=None):
    r"""Frank-Kamenetskii parameter delta of unstirred contents.

    Parameters
    ----------
    ambient : float or array, [K]
        Ambient (surroundings) temperature Ta.
    density : float, [kg/m^3]
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    radius : float or array, [m]
        Half-thickness of a slab, radius of a cylinder or sphere (broadcast with
        ``ambient``).
    conductivity : float, [W/(m K)]
        Thermal conductivity k of the contents.
    conversion : None, float or sequence of float, [-]
        None means zero conversion.

    Returns
    -------
    float or array, [-]

    Notes
    -----
    .. math:: \delta = \frac{\rho r^2}{k R T_a^2} \sum_i q_i(T_a) E_i

    which for one source is :math:`(E / (R T_a^2)) \rho q(T_a) r^2 / k`
    (Frank-Kamenetskii [1]_).  Zero order (the rate at the given conversion), the
    rate taken at the ambient temperature.

    References
    ----------
    .. [1] Frank-Kamenetskii, D. A., Diffusion and Heat Exchange in Chemical
       Kinetics, Princeton University Press (1955).

    Examples
    --------
    By hand: 1000 kg/m^3 releasing 1 mW/kg at 300 K with E = 100 kJ/mol, r = 0.5 m,
    k = 0.2 W/(m K): delta = 100000 / (8.314462618 x 300^2) x 1000 x 0.001 x 0.5^2 / 0.2
    = 0.16704:

    >>> from screening.core.model import ArrheniusSource
    >>> src = ArrheniusSource(1e-3, 300.0, 100e3)
    >>> round(frank_kamenetskii_parameter(300.0, 1000.0, [src], 0.5, 0.2), 5)
    0.16704
    """
    t = _positive_temperature(ambient, "ambient")
    for name, value in (("density", density), ("conductivity", conductivity)):
        if not (math.isfinite(value) and value > 0):
            raise ValueError(f"{name} must be finite and > 0")
    r = np.asarray(radius, dtype=float)
    if not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise ValueError("radius must be finite and > 0")
    sources = _check_sources(sources)
    log_delta = (math.log(density) + 2.0 * np.log(r) - math.log(conductivity)
                 - math.log(GAS_CONSTANT) - 2.0 * np.log(t)
                 + _log_energy_weighted_rate(t, sources, conversion))
    return _scalar_or_array(_exp_capped(log_delta))


_FK_S0 = 1e-4  # start of the numerical solution; series below
_FK_SMAX = 12.0  # beyond the first turning point for every geometry and Bi
_FK_GRID = np.geomspace(1e-9, _FK_SMAX, 4000)
_FK_TINY_BIOT = 1e-12  # below this, delta_c = (j + 1) Bi / e to about 1e-12


def _fk_series(j, s):
    """Series of the universal solution w(s) near the centre: (w, w')."""
    a2 = -1.0 / (2.0 * (j + 1))
    a4 = 1.0 / (8.0 * (j + 1) * (j + 3))
    return a2 * s ** 2 + a4 * s ** 4, 2.0 * a2 * s + 4.0 * a4 * s ** 3


@lru_cache(maxsize=None)
def _fk_universal(j):
    """Universal solution of w'' + (j/s) w' + exp(w) = 0, w(0) = w'(0) = 0.

    Returns a callable s -> (w, w') valid for 0 < s <= _FK_SMAX and the
    values on _FK_GRID.
    """
    from scipy.integrate import solve_ivp  # heavy; imported where used

    w0, dw0 = _fk_series(j, _FK_S0)

    def rhs(s, y):
        return [y[1], -math.exp(y[0]) - j * y[1] / s]

    sol = solve_ivp(rhs, (_FK_S0, _FK_SMAX), [w0, dw0], method="DOP853",
                    rtol=1e-12, atol=1e-14, dense_output=True)
    if not sol.success:  # pragma: no cover - fixed, smooth problem
        raise RuntimeError("Frank-Kamenetskii reference solution failed")
    dense = sol.sol

    def evaluate(s):
        s = np.asarray(s, dtype=float)
        small = s < _FK_S0
        ws, dws = _fk_series(j, np.where(small, s, _FK_S0))
        wd, dwd = dense(np.where(small, _FK_S0, s).ravel())
        return (np.where(small, ws, wd.reshape(s.shape)),
                np.where(small, dws, dwd.reshape(s.shape)))

    grid_w, grid_dw = evaluate(_FK_GRID)
    return evaluate, grid_w, grid_dw


def _fk_log_delta_and_slope(j, biot, s, w, dw):
    """ln delta(s) along the solution family and d(ln delta)/ds."""
    d2w = -np.exp(w) - j * dw / s
    inv_bi = 0.0 if math.isinf(biot) else 1.0 / biot
    log_delta = 2.0 * np.log(s) + w + s * dw * inv_bi
    slope = 2.0 / s + dw + (dw + s * d2w) * inv_bi
    return log_delta, slope


@lru_cache(maxsize=4096)
def _fk_critical_cached(j, biot):
    evaluate, grid_w, grid_dw = _fk_universal(j)
    _, slope = _fk_log_delta_and_slope(j, biot, _FK_GRID, grid_w, grid_dw)
    down = np.flatnonzero(slope <= 0)
    if down.size == 0 or down[0] == 0:  # pragma: no cover - covered by the grid range
        raise RuntimeError("Frank-Kamenetskii turning point outside the tabulated range")
    k = int(down[0])

    def f(s):
        w, dw = evaluate(s)
        return float(_fk_log_delta_and_slope(j, biot, s, w, dw)[1])

    s_star = _root(f, float(_FK_GRID[k - 1]), float(_FK_GRID[k]))
    w, dw = evaluate(s_star)
    log_delta = float(_fk_log_delta_and_slope(j, biot, s_star, w, dw)[0])
    return math.exp(log_delta) if log_delta > -745.0 else 0.0


def _geometry_index(geometry):
    try:
        return FK_GEOMETRIES[geometry]
    except (KeyError, TypeError):
        raise ValueError(f"geometry must be one of {sorted(FK_GEOMETRIES)}") from None


def frank_kamenetskii_critical(geometry, biot=math.inf):
    r"""Critical Frank-Kamenetskii parameter for a surface Biot number.

    Parameters
    ----------
    geometry : {"slab", "cylinder", "sphere"}
        Infinite slab (half-thickness r), infinite cylinder, sphere.
    biot : float, [-], default inf
        Surface Biot number Bi = h r / k (h surface heat-transfer
        coefficient to ambient, [W/(m^2 K)]).  ``inf``: surface held at
        ambient.  0: insulated surface, delta_c = 0.

    Returns
    -------
    float, [-]
        delta_c; for Bi = inf 0.8785 (slab), 2.0000 (cylinder), 3.3220
        (sphere).  Lower for finite Bi; for small Bi it tends to the Semenov
        (lumped) value (j + 1) Bi / e.

    Notes
    -----
    Steady conduction with the Frank-Kamenetskii exponential approximation
    [1]_, dimensionless temperature rise
    :math:`\theta = E (T - T_a) / (R T_a^2)`:

    .. math:: \theta'' + \frac{j}{x}\theta' + \delta e^{\theta} = 0,\quad
              \theta'(0) = 0,\quad -\theta'(1) = Bi\,\theta(1)

    (j = 0, 1, 2).  The equation is invariant under
    :math:`u(s) \to u(a s) + 2\ln a`, so all centre temperatures follow from
    one solution w of :math:`w'' + (j/s) w' + e^w = 0`, w(0) = w'(0) = 0:
    with :math:`\sigma = \sqrt{\delta}\,e^{\theta(0)/2}`,

    .. math:: \delta(\sigma) = \sigma^2 \exp\left(w(\sigma)
              + \sigma w'(\sigma) / Bi\right)

    and :math:`\delta_c` is the first maximum of this curve (where the
    branch of steady solutions turns).  w is computed once per geometry
    (DOP853, rtol 1e-12, a series near the centre), the maximum is bracketed
    on a grid and refined with Brent's method on :math:`d\ln\delta/d\sigma`;
    results are cached.  The exponential approximation and zero order
    overstate the rate, so they are conservative.  An infinite slab or
    cylinder loses less heat than a finite body of the same r: using them
    for a finite body is conservative.

    References
    ----------
    .. [1] Frank-Kamenetskii, D. A., Diffusion and Heat Exchange in Chemical
       Kinetics, Princeton University Press (1955; 2nd ed. Plenum 1969).

    Examples
    --------
    Frank-Kamenetskii's critical values for a surface held at ambient (infinite Biot
    number): 0.878 (slab), 2.000 (cylinder), 3.322 (sphere) (from memory):

    >>> [round(frank_kamenetskii_critical(g), 3) for g in ("slab", "cylinder", "sphere")]
    [0.878, 2.0, 3.322]

    A finite Biot number lowers them; for a small one they tend to Semenov's lumped value
    (j + 1) Bi / e (by hand, j = 0, 1, 2 for slab, cylinder, sphere; the lumped criterion
    with surface-to-volume ratio (j + 1) / r):

    >>> frank_kamenetskii_critical("slab", 10.0) < frank_kamenetskii_critical("slab")
    True
    >>> import math
    >>> round(frank_kamenetskii_critical("sphere", 1e-13) / (3e-13 / math.e), 9)
    1.0
    """
    j = _geometry_index(geometry)
    biot = float(biot)
    if math.isnan(biot) or biot < 0:
        raise ValueError("biot must be >= 0")
    if biot == 0:
        return 0.0
    if biot < _FK_TINY_BIOT:
        # Lumped (Semenov) limit; the relative correction is O(Bi).
        return (j + 1) * biot / math.e
    return _fk_critical_cached(j, biot)


def frank_kamenetskii_critical_ambient(geometry, biot, density, sources, radius,
                                       conductivity, conversion=None, *,
                                       temperature_range=SEARCH_RANGE,
                                       full_output=False):
    r"""Ambient temperature at which unstirred contents become critical.

    Parameters
    ----------
    geometry : {"slab", "cylinder", "sphere"}
    biot : float, [-]
        Surface Biot number h r / k; ``inf`` for a surface held at ambient
        (not conservative, see :data:`WARNING_FK_SURFACE_AT_AMBIENT`).
    density : float, [kg/m^3]
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    radius : float, [m]
        Half-thickness of a slab, radius of a cylinder or sphere.
    conductivity : float, [W/(m K)]
    conversion : None, float or sequence of float, [-]
    temperature_range : (float, float), [K], default (10, 5000)
        Range searched.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    float or None, [K]
        The lowest ambient at which delta(Ta) reaches delta_c(Bi).  None
        when Bi = 0 (insulated: no steady state at any ambient), with no
        Arrhenius source, or when no crossing lies in the range
        (``full_output`` says which).
    warnings : list of str
        Only with ``full_output=True``.  Always includes
        :data:`WARNING_FK_ARRHENIUS_ONLY`.

    Notes
    -----
    Solves :math:`\delta(T_a) = \delta_c(Bi)` with
    :func:`frank_kamenetskii_parameter` and
    :func:`frank_kamenetskii_critical`.  :math:`\ln\delta` rises with Ta
    while Ta < E/(2R); the lowest crossing is bracketed on a grid and refined
    with Brent's method.  The Biot number is held fixed, as given.

    .. math:: \frac{E}{R T_{a,c}^2} \frac{\rho\, r^2}{k} \sum_i q_i(T_{a,c}) = \delta_c(Bi)

    References
    ----------
    .. [1] Frank-Kamenetskii, D. A., Diffusion and Heat Exchange in Chemical
       Kinetics, Princeton University Press (1955).

    Examples
    --------
    By hand: for a sphere (r = 0.5 m, rho = 1000 kg/m^3, k = 0.2 W/(m K), E = 100 kJ/mol)
    a rate at 300 K of q = 3.322 k R T^2 / (E rho r^2) = 0.019887 W/kg makes delta(300 K)
    equal to the critical 3.322 (from memory), so the critical ambient is 300 K:

    >>> from screening.core.model import ArrheniusSource
    >>> q = 3.322 * 0.2 * GAS_CONSTANT * 300.0**2 / (100e3 * 1000.0 * 0.5**2)
    >>> t = frank_kamenetskii_critical_ambient("sphere", math.inf, 1000.0,
    ...                                        [ArrheniusSource(q, 300.0, 100e3)], 0.5, 0.2)
    >>> round(t, 2)
    300.0
    """
    sources = _check_sources(sources)
    delta_c = frank_kamenetskii_critical(geometry, biot)
    warnings: list[str] = [WARNING_FK_ARRHENIUS_ONLY]
    if math.isinf(float(biot)):
        warnings.append(WARNING_FK_SURFACE_AT_AMBIENT)
    result = None
    if delta_c == 0:
        warnings.append("Insulated surface (Bi = 0): no steady state at any "
                        "ambient, so there is no critical ambient temperature.")
    else:
        grid = _grid(temperature_range)
        log_dc = math.log(delta_c)

        def f(t):
            delta = frank_kamenetskii_parameter(t, density, sources, radius, conductivity,
                                                conversion)
            return _safe_log(delta) - log_dc

        log_delta = f(grid)
        if not np.any(np.isfinite(log_delta)):
            warnings.append("No Arrhenius source with a temperature-dependent rate: "
                            "no Frank-Kamenetskii critical point.")
        elif log_delta[0] >= 0:
            warnings.append(f"delta already exceeds its critical value at {grid[0]:.1f} K: "
                            "the critical ambient lies below the range searched.")
        else:
            up = np.flatnonzero(log_delta >= 0)
            if up.size == 0:
                warnings.append(f"delta stays below its critical value up to "
                                f"{grid[-1]:.0f} K: no critical ambient in the range searched.")
            else:
                k = int(up[0])
                result = _root(lambda t: float(f(t)), float(grid[k - 1]), float(grid[k]))
    warnings = kinetics_warnings(sources, [result], conversion) + warnings
    if full_output:
        return result, warnings
    return result
