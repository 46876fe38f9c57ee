"""Exact rational functions of s and the audited parts, on python-flint polynomials.

A :class:`Ring` names the indeterminates (``s`` first, then the audited parts in the
worksheet's order, then ``pi`` when a formula holds it: pi is transcendental, so an
identity that holds with pi as an indeterminate holds for the number and back).
A :class:`RatFunc` (rational function) is a numerator and a denominator in ``Z[s, parts, pi]`` with
no common factor and a positive leading coefficient in the denominator.
Conversion from sympy walks the expression tree; nothing is ever parsed from text.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import flint
import sympy

from handcheck.errors import HandcheckError
from handcheck.solve.exact import as_sympy

__all__ = ["AuditError", "RatFunc", "Ring"]

#: Largest polynomial (terms) kept during an audit before it is refused as too large.
MAX_TERMS = 400_000


class AuditError(HandcheckError, ValueError):
    """A formula or quantity of the audit cannot be handled as written."""


@dataclass(frozen=True)
class Ring:
    """Polynomials in ``names`` with integer coefficients (python-flint ``fmpz_mpoly``)."""

    names: tuple[str, ...]

    @property
    def ctx(self) -> Any:
        """The python-flint context (cached by python-flint itself)."""
        return flint.fmpz_mpoly_ctx.get(self.names, "degrevlex")

    def gen(self, name: str) -> Any:
        """The indeterminate ``name``."""
        return self.ctx.gens()[self.names.index(name)]

    def constant(self, value: int) -> Any:
        """The constant polynomial ``value``."""
        return self.ctx.constant(value)

    def symbols(self, plain: bool = False) -> tuple[sympy.Expr, ...]:
        """The sympy symbols of the indeterminates (positive reals, s unrestricted; ``pi`` the number).

        With ``plain``, symbols without assumptions (for display: sympy then keeps
        sqrt(R1*C1) together)."""
        return tuple(
            sympy.pi if n == "pi" else sympy.Symbol(n) if n == "s" or plain else sympy.Symbol(n, positive=True)
            for n in self.names
        )

    def fraction(self, expr: sympy.Expr) -> RatFunc:
        """The exact rational function of a sympy expression.

        Raises
        ------
        AuditError
            If the expression is not rational in the ring's names with rational
            coefficients (a square root of a part, an irrational number).
        """
        return _Converter(self).run(as_sympy(expr))

    def to_sympy(self, poly: Any, plain: bool = False) -> sympy.Expr:
        """A polynomial as a sympy expression in the ring's symbols."""
        syms = self.symbols(plain)
        terms = []
        for raw, coeff in zip(poly.monoms(), poly.coeffs(), strict=True):
            monom = tuple(int(e) for e in raw)
            term: sympy.Expr = sympy.Integer(int(coeff))
            for sym, power in zip(syms, monom, strict=True):
                if power:
                    term *= sym**power
            terms.append(term)
        return sympy.Add(*terms)


@dataclass(frozen=True)
class RatFunc:
    """num/den in the ring, reduced."""

    ring: Ring
    num: Any
    den: Any

    @staticmethod
    def make(ring: Ring, num: Any, den: Any) -> RatFunc:
        """num/den reduced by their gcd, the denominator's leading coefficient made positive."""
        if den.is_zero():
            raise AuditError("a division by zero in the audited expression")
        if num.is_zero():
            return RatFunc(ring, num, ring.constant(1))
        g = num.gcd(den)
        if not g.is_one():
            num, den = num / g, den / g
        if int(den.leading_coefficient()) < 0:
            num, den = -num, -den
        for poly in (num, den):
            if len(poly) > MAX_TERMS:
                raise AuditError(
                    f"the exact expression grows beyond {MAX_TERMS:,} terms; keep fewer parts as symbols in [audit]"
                )
        return RatFunc(ring, num, den)

    def __add__(self, other: RatFunc) -> RatFunc:
        return RatFunc.make(self.ring, self.num * other.den + other.num * self.den, self.den * other.den)

    def __sub__(self, other: RatFunc) -> RatFunc:
        return RatFunc.make(self.ring, self.num * other.den - other.num * self.den, self.den * other.den)

    def __mul__(self, other: RatFunc) -> RatFunc:
        return RatFunc.make(self.ring, self.num * other.num, self.den * other.den)

    def __truediv__(self, other: RatFunc) -> RatFunc:
        if other.num.is_zero():
            raise AuditError("a division by zero in the audited expression")
        return RatFunc.make(self.ring, self.num * other.den, self.den * other.num)

    def __neg__(self) -> RatFunc:
        return RatFunc(self.ring, -self.num, self.den)

    def power(self, exponent: int) -> RatFunc:
        """This fraction to a whole power (negative allowed)."""
        if exponent < 0:
            return RatFunc.make(self.ring, self.den ** (-exponent), self.num ** (-exponent))
        return RatFunc(self.ring, self.num**exponent, self.den**exponent)

    @property
    def is_zero(self) -> bool:
        return bool(self.num.is_zero())

    def to_sympy(self, plain: bool = False) -> sympy.Expr:
        """num/den as a sympy expression (not simplified further)."""
        return self.ring.to_sympy(self.num, plain) / self.ring.to_sympy(self.den, plain)

    def free(self) -> set[str]:
        """The names this rational function depends on."""
        used = [max(a, b) for a, b in zip(self.num.degrees(), self.den.degrees(), strict=True)]
        return {name for name, degree in zip(self.ring.names, used, strict=True) if degree}

    def substitute(self, values: dict[str, Any]) -> RatFunc:
        """Each named indeterminate replaced by a polynomial of the same ring."""
        ctx = self.ring.ctx
        gens = list(ctx.gens())
        for name, value in values.items():
            gens[self.ring.names.index(name)] = value
        return RatFunc.make(self.ring, self.num.compose(*gens), self.den.compose(*gens))


class _Converter:
    """Walks a sympy tree into a :class:`RatFunc`."""

    def __init__(self, ring: Ring) -> None:
        self.ring = ring
        self.names = {sympy.Symbol(n).name: n for n in ring.names}

    def one(self, value: int = 1) -> RatFunc:
        return RatFunc(self.ring, self.ring.constant(value), self.ring.constant(1))

    def run(self, expr: sympy.Expr) -> RatFunc:
        if expr.is_Integer:
            return self.one(int(expr))
        if expr.is_Rational:
            return RatFunc.make(self.ring, self.ring.constant(int(expr.p)), self.ring.constant(int(expr.q)))
        if expr is sympy.pi:
            if "pi" in self.ring.names:
                return RatFunc(self.ring, self.ring.gen("pi"), self.ring.constant(1))
            raise AuditError("pi appears where the ring has no pi")
        if expr.is_Symbol:
            if expr.name in self.names:
                return RatFunc(self.ring, self.ring.gen(expr.name), self.ring.constant(1))
            raise AuditError(f'"{expr.name}" is not one of the audited symbols')
        if expr.is_Add:
            total = self.one(0)
            for arg in expr.args:
                total = total + self.run(arg)
            return total
        if expr.is_Mul:
            product = self.one(1)
            for arg in expr.args:
                product = product * self.run(arg)
            return product
        if expr.is_Pow and expr.exp.is_Integer:
            return self.run(expr.base).power(int(expr.exp))
        raise AuditError(
            f"{expr} is not a rational function of the audited parts (a square root or another function of a part, "
            "or an irrational number)"
        )
