"""A bracketed root finder (Brent's method), so that a stage's edge needs no SciPy.

The exact event solver finds the first threshold crossing of a sum of
exponentials inside a bracket. SciPy's `optimize` package did this, and
importing it cost about 0.4 s of CPU: more than the whole check of a small
board whose only multi-capacitor or diode stage needed one root. This is
Brent's method (inverse quadratic interpolation, secant, bisection as the
fallback), as described in R. P. Brent, "Algorithms for Minimization without
Derivatives" (1973), chapter 4, with the stopping rule of `scipy.optimize.brentq`
(half the bracket below (xtol + rtol * |x|) / 2), so its roots agree with
SciPy's within that tolerance (tests/analysis/test_roots.py compares them).
"""

from __future__ import annotations

from collections.abc import Callable


def brent_root(f: Callable[[float], float], a: float, b: float, *, xtol: float, rtol: float,
               maxiter: int = 200) -> float:
    """The root of `f` in [a, b], where f(a) and f(b) have opposite signs (or one is zero)."""
    fa, fb = f(a), f(b)
    if fa == 0:
        return a
    if fb == 0:
        return b
    if (fa > 0) == (fb > 0):
        raise ValueError("f(a) and f(b) must have opposite signs")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0) == (fc > 0):  # keep the root between b and c
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):  # b is the best guess so far
            a, fa = b, fb
            b, fb = c, fc
            c, fc = a, fa
        delta = 0.5 * (xtol + rtol * abs(b))
        m = 0.5 * (c - b)
        if fb == 0 or abs(m) <= delta:
            return b
        d, e = _step(a, b, c, fa, fb, fc, d, e, m, delta)
        a, fa = b, fb
        b += d if abs(d) > delta else (delta if m > 0 else -delta)
        fb = f(b)
    raise RuntimeError(f"no convergence in {maxiter} iterations")


def _step(a: float, b: float, c: float, fa: float, fb: float, fc: float, d: float, e: float,
          m: float, delta: float) -> tuple[float, float]:
    """(new step, previous step): interpolation when it is safe and fast enough, else bisection."""
    if abs(e) < delta or abs(fa) <= abs(fb):
        return m, m
    s = fb / fa
    if a == c:  # two points: secant
        p, q = 2.0 * m * s, 1.0 - s
    else:  # three points: inverse quadratic interpolation
        q, r = fa / fc, fb / fc
        p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
        q = (q - 1.0) * (r - 1.0) * (s - 1.0)
    if p > 0:
        q = -q
    else:
        p = -p
    if 2.0 * p < min(3.0 * m * q - abs(delta * q), abs(e * q)):
        return p / q, d
    return m, m
