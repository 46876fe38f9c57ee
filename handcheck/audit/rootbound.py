"""Certified bounds on the worst case of a frequency that has no closed form.

The quantity is u = w^2, the lowest positive root of P(u) = sum c_k u^k (coefficients
polynomials in the parts); the formula gives u_F, a rational function of the parts,
and the error is sqrt(g) - 1 with g = u_F/u. A bound is proved, not searched for:

- g <= G everywhere when P has no root in (0, u_F/G] anywhere: with
  Q(lam) = P(lam u_F/G)/c_0, which is 1 at lam = 0, that is min Q > 0 over
  lam in [0, 1] and the box;
- g >= G everywhere when P(u_F/G)/c_0 < 0 everywhere: P changes sign between 0 and
  u_F/G, so a root, and the lowest one, lies below (the intermediate value theorem).

Both are extremes of rational functions over a box, found in ball arithmetic by
:func:`handcheck.audit.worst.extreme` (its certified bound decides). G starts just
beyond the sampled extreme and is widened until the proof goes through.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from fractions import Fraction
from typing import Any

import sympy

from handcheck.audit.ring import AuditError, RatFunc
from handcheck.audit.truth import coefficients_in_s
from handcheck.audit.worst import extreme

__all__ = ["certified_bounds"]

#: Relative widenings of the sampled extreme tried in turn.
WIDENINGS = (1e-9, 1e-6, 1e-4, 1e-2, 1e-1)


def _normalised(poly: Any, u_formula: RatFunc, g: Fraction, lam: bool) -> RatFunc:
    """P(t)/c_0 with t = lam u_F/g (lam the ring's s slot) or t = u_F/g."""
    ring = u_formula.ring
    coefficients = coefficients_in_s(ring, poly)
    c0 = coefficients[0]
    if c0.is_zero():
        raise AuditError("the defining polynomial vanishes at 0")
    t = u_formula * ring.fraction(sympy.Rational(g.denominator, g.numerator))
    if lam:
        t = t * RatFunc(ring, ring.gen("s"), ring.constant(1))
    total = RatFunc(ring, ring.constant(1), ring.constant(1))
    for k, coefficient in enumerate(coefficients[1:], start=1):
        if not coefficient.is_zero():
            total = total + RatFunc.make(ring, coefficient, c0) * t.power(k)
    return total


def _upper_holds(
    poly: Any, u_formula: RatFunc, g: Fraction, names: tuple[str, ...], box: Sequence[Any], check: Any
) -> bool:
    q = _normalised(poly, u_formula, g, lam=True)
    lowest = extreme(q, ("s", *names), [(Fraction(0), Fraction(1)), *box], largest=False, check=check)
    return lowest.bound > 0


def _lower_holds(
    poly: Any, u_formula: RatFunc, g: Fraction, names: tuple[str, ...], box: Sequence[Any], check: Any
) -> bool:
    q = _normalised(poly, u_formula, g, lam=False)
    return extreme(q, names, box, largest=True, check=check).bound < 0


def certified_bounds(
    poly: Any,
    u_formula: RatFunc,
    names: tuple[str, ...],
    box: Sequence[tuple[Fraction, Fraction]],
    sampled: tuple[float, float],
    check: Callable[[], None] | None = None,
) -> tuple[float | None, float | None]:
    """Certified (lowest, highest) bounds on the error sqrt(u_F/u) - 1 over the box.

    Parameters
    ----------
    poly
        P(u), u in the ring's ``s`` slot.
    u_formula
        u_F as a rational function of the parts.
    names, box
        The audited parts and their exact ranges.
    sampled
        The lowest and highest error seen on samples.
    check
        The time budget's check.

    Returns
    -------
    tuple
        Each bound, or None where no widening up to 10 % could be proved.
    """
    low_e, high_e = sampled
    g_low, g_high = (1 + low_e) ** 2, (1 + high_e) ** 2
    found: list[float | None] = [None, None]
    for widen in WIDENINGS:
        g = Fraction(g_high * (1 + widen))
        if _upper_holds(poly, u_formula, g, names, box, check):
            found[1] = math.nextafter(math.sqrt(float(g)) - 1, math.inf)  # rounded outward
            break
    for widen in WIDENINGS:
        g = Fraction(g_low * (1 - widen))
        if g > 0 and _lower_holds(poly, u_formula, g, names, box, check):
            found[0] = math.nextafter(math.sqrt(float(g)) - 1, -math.inf)
            break
    return found[0], found[1]
