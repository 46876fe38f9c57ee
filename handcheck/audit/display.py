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


def _split_square(poly: sympy.Expr) -> tuple[sympy.Expr, sympy.Expr]:
    """poly = root**2 * rest, with root the product of every factor's even part."""
    coefficient, factors = sympy.factor_list(poly)
    root = sympy.Mul(*(base ** (power // 2) for base, power in factors))
    rest = coefficient * sympy.Mul(*(base ** (power % 2) for base, power in factors))
    return root, rest


def _square_root(square: sympy.Expr) -> sympy.Expr:
    """sqrt of a square of a rational function, every square factor taken out of the root:
    sqrt((a + b)**2/c**2) reads as abs((a + b)/c), sqrt(a*(b + c)**2/d) as
    (b + c)*sqrt(a/d); abs is left out where positive parts make the factor positive."""
    numerator, denominator = sympy.fraction(sympy.together(square))
    small = all(len(sympy.Add.make_args(sympy.expand(p))) <= MAX_FACTOR_TERMS for p in (numerator, denominator))
    if not (numerator.free_symbols | denominator.free_symbols) or not small:
        return sympy.sqrt(square)
    (top, top_rest), (bottom, bottom_rest) = _split_square(numerator), _split_square(denominator)
    outside = _magnitude(top / bottom)
    if top_rest.is_negative or bottom_rest.is_negative:  # sqrt of a negative: leave it whole
        return sympy.sqrt(square)
    return outside * sympy.sqrt(top_rest / bottom_rest)


def _magnitude(expr: sympy.Expr) -> sympy.Expr:
    """abs(expr), or expr itself where it is positive for every positive value of the parts."""
    positive = {x: sympy.Symbol(x.name, positive=True) for x in expr.free_symbols if isinstance(x, sympy.Symbol)}
    return expr if expr.subs(positive).is_positive else sympy.Abs(expr)
