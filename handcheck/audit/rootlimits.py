"""Where a formula for a frequency with no closed form holds: each symbol to 0 and to infinity.

The true frequency is sqrt(u_T)/(2 pi) with u_T the lowest positive root of a
polynomial P(u) whose coefficients are polynomials in the symbols; the formula gives
u_F = (2 pi F)^2. Put u = u_F (1 + e): the relative error e of the formula's u is a root
of Q(e) = P(u_F (1 + e)) = sum_j q_j e^j, with q_j = sum_{k >= j} C(k, j) p_k u_F^k
rational functions of the symbols. As one symbol x goes to 0 (or to infinity) with the
others held, each q_j behaves like x^(v_j) times a function of the others (the leading
terms of its numerator and denominator in x). By the Newton polygon of Q in that limit
(the lower convex hull of the points (j, v_j); Newton-Puiseux, e.g. Walker, *Algebraic
Curves*, ch. IV, from memory), some roots e tend to 0 exactly when v_0 exceeds
min_{j >= 1} v_j: those roots of P tend to u_F, relatively.

That some root of P tends to the formula is proved by those leading terms alone; that
it is the lowest positive one (the frequency audited) is confirmed at one exact point
far along the limit (the symbol scaled by 10^6 from its nominal value), where the
certified lowest positive root must lie closer to the formula than at the nominal
values. A condition is reported only when both hold.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction
from typing import Any

import sympy

from handcheck.audit.errors import lowest_root_exact
from handcheck.audit.ring import AuditError, RatFunc, Ring

__all__ = ["root_limits"]

#: How far along a limit the root is confirmed: the symbol times (or over) this.
_FAR = Fraction(10) ** 6


def _valuation(q: RatFunc, index: int, towards_zero: bool) -> float:
    """The exponent of x in q's leading behaviour as x -> 0 (or the exponent of 1/x as x -> oo)."""
    if q.is_zero:
        return math.inf
    if towards_zero:
        low = [min((int(m[index]) for m in p.monoms()), default=0) for p in (q.num, q.den)]
        return low[0] - low[1]
    return q.den.degrees()[index] - q.num.degrees()[index]


def _error_polynomial(ring: Ring, coefficients: Sequence[Any], u_formula: RatFunc) -> list[RatFunc]:
    """q_0, q_1, ...: the coefficients of P(u_F (1 + e)) in e."""
    powers = [ring.fraction(sympy.Integer(1))]
    for _ in range(1, len(coefficients)):
        powers.append(powers[-1] * u_formula)
    q = []
    for j in range(len(coefficients)):
        total = ring.fraction(sympy.Integer(0))
        for k in range(j, len(coefficients)):
            term = RatFunc.make(ring, coefficients[k], ring.constant(1)) * powers[k]
            total = total + term * ring.fraction(sympy.Integer(math.comb(k, j)))
        q.append(total)
    return q


def _relative_error(
    poly: Any, ring: Ring, u_formula: sympy.Expr, names: tuple[str, ...], point: Sequence[Fraction]
) -> float | None:
    """|u_F/u_T - 1| at an exact point (None when there is no positive root there)."""
    try:
        u_true = lowest_root_exact(poly, names, ring.names, point)
    except (AuditError, KeyError):  # no positive root there, or pi among P's coefficients
        return None
    values = {
        sympy.Symbol(n, positive=True): sympy.Rational(p.numerator, p.denominator)
        for n, p in zip(names, point, strict=True)
    }
    u_value = float(sympy.N(u_formula.subs(values), 30))
    return abs(u_value / u_true - 1)


def root_limits(
    ring: Ring,
    poly: Any,
    coefficients: Sequence[Any],
    u_formula: RatFunc,
    names: tuple[str, ...],
    nominal: Sequence[Fraction],
) -> tuple[str, ...]:
    """The single limits ``"x -> 0"`` and ``"x -> oo"`` under which the formula's frequency
    tends to the lowest positive root of ``poly`` (see the module's text).

    Parameters
    ----------
    ring
        The audit's ring (u held in its ``s`` slot).
    poly, coefficients
        P(u) and its coefficients p_k in the symbols.
    u_formula
        (2 pi F)^2 of the formula, exact.
    names, nominal
        The symbols and their nominal values (exact).
    """
    q = _error_polynomial(ring, coefficients, u_formula)
    u_expr = u_formula.to_sympy()
    baseline = _relative_error(poly, ring, u_expr, names, nominal)
    found = []
    used = set().union(*(c.free() for c in q))
    for position, name in enumerate(names):
        if name not in used:
            continue
        index = ring.names.index(name)
        for towards_zero, text, factor in ((True, "0", 1 / _FAR), (False, "oo", _FAR)):
            v = [_valuation(c, index, towards_zero) for c in q]
            if not v[0] > min(v[1:], default=math.inf):
                continue
            far = list(nominal)
            far[position] = far[position] * factor
            error = _relative_error(poly, ring, u_expr, names, far)
            if error is not None and baseline is not None and error < baseline:
                found.append(f"{name} -> {text}")
    return tuple(found)
