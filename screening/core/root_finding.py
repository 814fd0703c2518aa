"""Bracketed scalar root finding without importing scipy.optimize (keeps `check` fast).

References
----------
Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall (1973), ch. 4.
"""
from __future__ import annotations

import math


def brent_root(f, a: float, b: float, fa: float | None = None, fb: float | None = None,
               xtol: float = 1e-12, rtol: float = 4.5e-16, maxiter: int = 200) -> float:
    """Root of f in [a, b] where f(a) and f(b) differ in sign (Brent's method).

    Parameters
    ----------
    f : callable float -> float
        Continuous on [a, b].
    a, b : float
        The bracket, in the units of the root.
    fa, fb : float, optional
        f(a) and f(b) if already known (saves two evaluations).
    xtol, rtol : float, default 1e-12 and 4.5e-16
        Absolute and relative tolerance on the root: the search stops when half the
        bracket is at most ``2 rtol |x| + xtol / 2`` (xtol in the units of the root, rtol [-]).
    maxiter : int, default 200
        Iteration cap (the loop always ends; the last iterate is returned).

    Returns
    -------
    float
        A root of f in [a, b] (a or b itself when f vanishes there).

    Raises
    ------
    ValueError
        f(a) and f(b) have the same sign.

    Notes
    -----
    Inverse quadratic interpolation and secant steps safeguarded by bisection, as in
    Brent's ``zero`` (the same method as ``scipy.optimize.brentq``): convergence is
    superlinear near a simple root and never slower than about bisection's.

    References
    ----------
    Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall (1973), ch. 4.

    Examples
    --------
    By hand: the root of x^2 - 2 on [1, 2] is sqrt(2) = 1.41421356...:

    >>> round(brent_root(lambda x: x * x - 2.0, 1.0, 2.0), 12)
    1.414213562373
    >>> brent_root(lambda x: x - 1.0, 1.0, 3.0)
    1.0
    """
    fa = f(a) if fa is None else fa
    fb = f(b) if fb is None else fb
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        raise ValueError("brent_root: f(a) and f(b) must differ in sign")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0) == (fc > 0):
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 2.0 * rtol * abs(b) + 0.5 * xtol
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            return b
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:
                p = 2.0 * m * s
                q = 1.0 - s
            else:
                q = fa / fc
                r = fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q
            else:
                d = e = m
        else:
            d = e = m
        a, fa = b, fb
        b = b + d if abs(d) > tol else b + math.copysign(tol, m)
        fb = f(b)
        if fb == 0.0:
            return b
    return b
