"""Bracketed scalar root finding without importing scipy.optimize (keeps `check` fast)."""
from __future__ import annotations

import math


def brent_root(f, a: float, b: float, fa: float | None = None, fb: float | None = None,
               xtol: float = 1e-12, rtol: float = 4.5e-16, maxiter: int = 200) -> float:
    """Root of f in [a, b] where f(a) and f(b) differ in sign (Brent's method).

    Parameters
    ----------
    f : callable float -> float
    a, b : float, the bracket
    fa, fb : float, optional, f(a) and f(b) if already known
    xtol, rtol : float, absolute and relative tolerance on the root
    maxiter : int, iteration cap (the loop always ends)

    Returns
    -------
    float

    Notes
    -----
    Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall (1973), ch. 4:
    inverse quadratic interpolation and secant steps safeguarded by bisection.
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
