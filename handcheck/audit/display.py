"""The true expression of an audited quantity as text, in the worksheet's part ids.

Factored with sympy where the expression is small enough for that to be quick; a
network function is shown as polynomials in s whose coefficients are factored.
Printed by sympy's own printer (``**`` for powers, as the formula language reads).
"""

from __future__ import annotations

import sympy
from sympy.printing.str import StrPrinter

from handcheck.audit.ring import RatFunc, Ring
from handcheck.audit.truth import Truth, coefficients_in_s

__all__ = ["true_expression"]

#: Largest expression (terms) that is factored for display.
MAX_FACTOR_TERMS = 120


def _in_s(ring: Ring, poly: object) -> sympy.Expr:
    s = sympy.Symbol("s")
    terms = []
    for k, coefficient in enumerate(coefficients_in_s(ring, poly)):
        if coefficient.is_zero():
            continue
        value = ring.to_sympy(coefficient, plain=True)
        if len(coefficient) <= MAX_FACTOR_TERMS:
            value = sympy.factor(value)
        terms.append(value * s**k)
    return sympy.Add(*terms)


def _plain(value: RatFunc, in_s: bool) -> sympy.Expr:
    if in_s:
        return _in_s(value.ring, value.num) / _in_s(value.ring, value.den)
    expr = value.to_sympy(plain=True)
    if len(value.num) + len(value.den) <= MAX_FACTOR_TERMS:
        expr = sympy.factor(expr)
    return expr


def true_expression(ring: Ring, truth: Truth) -> str:
    """The exact truth as one line of text.

    Parameters
    ----------
    ring
        The ring the truth lives in.
    truth
        The quantity's truth (exact, its square, or a root of a polynomial in w^2).

    Returns
    -------
    str
        For example ``1/(C1*R1*s + 1)``, ``sqrt(1/(C1*C2*R1*R2))``, or
        ``sqrt(u)/(2*pi) Hz, u = w^2 the lowest positive root of ...``.
    """
    if truth.form == "root":
        u = sympy.Symbol("u")
        poly = _in_s(ring, truth.poly).subs(sympy.Symbol("s"), u)
        return f"sqrt(u)/(2*pi), u = w^2 (rad/s)^2 the lowest positive root of {sympy.sstr(sympy.expand(poly))} = 0"
    assert truth.value is not None
    expr = _plain(truth.value, truth.in_s)
    if truth.form == "square":
        expr = _square_root(expr)
    return _Printer().doprint(expr)


class _Printer(StrPrinter):
    """sympy's text printer, with ``abs(x)`` as the formula language writes it."""

    def _print_Abs(self, expr: sympy.Abs) -> str:  # noqa: N802  sympy's printer dispatches on _print_<class name>
        return f"abs({self._print(expr.args[0])})"


def _exact_root(poly: sympy.Expr) -> sympy.Expr | None:
    """The square root of a polynomial that is a perfect square (every factor to an
    even power, a square coefficient), up to sign; otherwise None."""
    coefficient, factors = sympy.factor_list(poly)
    root = sympy.sqrt(coefficient)
    if not (coefficient > 0 and root.is_Rational) or any(power % 2 for _, power in factors):
        return None
    return sympy.Mul(root, *(base ** (power // 2) for base, power in factors))


def _square_root(square: sympy.Expr) -> sympy.Expr:
    """sqrt of a square of a rational function: abs(N/D) when numerator and denominator
    are perfect squares (sqrt((a + b)**2/c**2) reads as abs((a + b)/c)), the root of
    either one taken out when only it is a square (sqrt(a/b**2) reads as sqrt(a)/b);
    abs is left out where positive parts make the root positive; sqrt else."""
    numerator, denominator = sympy.fraction(sympy.together(square))
    if (
        numerator.free_symbols | denominator.free_symbols
        and len(sympy.Add.make_args(sympy.expand(numerator))) <= MAX_FACTOR_TERMS
    ):
        top, bottom = _exact_root(numerator), _exact_root(denominator)
        if top is not None and bottom is not None:
            return _magnitude(top / bottom)
        if bottom is not None and len(sympy.Add.make_args(sympy.expand(denominator))) <= MAX_FACTOR_TERMS:
            return sympy.sqrt(numerator) / _magnitude(bottom)
        if top is not None:
            return _magnitude(top) / sympy.sqrt(denominator)
    return sympy.sqrt(square)


def _magnitude(expr: sympy.Expr) -> sympy.Expr:
    """abs(expr), or expr itself where it is positive for every positive value of the parts."""
    positive = {x: sympy.Symbol(x.name, positive=True) for x in expr.free_symbols if isinstance(x, sympy.Symbol)}
    return expr if expr.subs(positive).is_positive else sympy.Abs(expr)
