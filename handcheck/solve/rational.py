"""Exact rational functions of s: the value type of the s-domain solution.

:class:`RationalFunction` holds a reduced ratio of two polynomials with exact
coefficients (rationals, or an algebraic number field); :func:`number_field` builds
that field for a set of exact matrix entries, :func:`to_sympy_number` reads one
entry exactly. The solver that produces these functions is
:mod:`handcheck.solve.network`.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from numbers import Integral
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover - typing only
    import sympy

__all__ = (
    "RationalFunction",
    "algebraic_pi_field",
    "laplace_symbol",
    "number_field",
    "pi_field",
    "to_sympy_number",
)


def laplace_symbol() -> sympy.Symbol:
    """Return the Laplace variable ``s`` used in every returned polynomial.

    Returns
    -------
    sympy.Symbol
        ``sympy.Symbol("s")`` (sympy caches symbols by name, so equal
        to any other ``Symbol("s")``).
    """
    import sympy

    return sympy.Symbol("s")


@dataclass(frozen=True)
class RationalFunction:
    """Reduced rational function ``num(s) / den(s)`` with exact coefficients.

    Parameters
    ----------
    num : sympy.Poly
        Numerator in the symbol ``s``.
    den : sympy.Poly
        Denominator in ``s``, nonzero and monic, same domain as ``num``
        (``QQ``, or an algebraic field ``QQ<a>`` for algebraic input).

    Notes
    -----
    Instances built by :func:`solve_rational` or :meth:`reduced` have
    ``gcd(num, den) = 1``, so two equal functions have equal fields and the
    dataclass equality is exact equality of rational functions.
    """

    num: sympy.Poly
    den: sympy.Poly

    def __post_init__(self) -> None:
        import sympy

        if not isinstance(self.num, sympy.Poly) or not isinstance(self.den, sympy.Poly):
            raise TypeError("num and den must be sympy.Poly")
        if self.num.gens != (laplace_symbol(),) or self.den.gens != (laplace_symbol(),):
            raise ValueError("num and den must be univariate polynomials in s")
        if self.num.domain != self.den.domain:
            raise ValueError("num and den must share one coefficient domain")
        if self.den.is_zero:
            raise ZeroDivisionError("denominator polynomial is zero")
        if self.den.LC() != 1:
            raise ValueError("denominator must be monic; use RationalFunction.reduced")

    @classmethod
    def reduced(cls, num: sympy.Poly, den: sympy.Poly) -> RationalFunction:
        """Build the reduced form of ``num / den`` (gcd cancelled, monic den).

        Parameters
        ----------
        num, den : sympy.Poly
            Polynomials in ``s`` over one field (``QQ`` or an algebraic field).

        Returns
        -------
        RationalFunction
        """
        if den.is_zero:
            raise ZeroDivisionError("denominator polynomial is zero")
        if num.is_zero:
            return cls(num, den.one)
        g = num.gcd(den)
        num = num.exquo(g)
        den = den.exquo(g)
        lc = den.LC()
        return cls(num.exquo_ground(lc), den.monic())

    def as_expr(self) -> sympy.Expr:
        """Return ``num/den`` as a sympy expression in ``s``."""
        return self.num.as_expr() / self.den.as_expr()

    def __call__(self, value: Any) -> sympy.Expr:
        """Evaluate exactly at a number.

        Parameters
        ----------
        value : int, fractions.Fraction or sympy number
            Rational or algebraic point (no floats).

        Returns
        -------
        sympy.Expr
            Exact value (a ``sympy.Rational`` for rational coefficients and
            a rational point).

        Raises
        ------
        ZeroDivisionError
            If ``value`` is a pole (the denominator vanishes there).

        Notes
        -----
        Horner's rule in the smallest number field containing the
        coefficients and ``value`` (built by ``sympy.construct_domain``), so
        the zero test on the denominator is exact.
        """
        v = to_sympy_number(value)
        coeffs_n = self.num.all_coeffs()
        coeffs_d = self.den.all_coeffs()
        if self.num.domain.is_QQ and v.is_Rational:
            from sympy import QQ

            dom = QQ
            conv = [QQ(int(c.p), int(c.q)) for c in coeffs_n + coeffs_d + [v]]
        else:
            dom, conv = number_field(coeffs_n + coeffs_d + [v])
        cn = conv[: len(coeffs_n)]
        cd = conv[len(coeffs_n) : len(coeffs_n) + len(coeffs_d)]
        x = conv[-1]
        vn = _horner(cn, x, dom)
        vd = _horner(cd, x, dom)
        if not vd:
            raise ZeroDivisionError(f"s = {v} is a pole of this rational function")
        field = dom if dom.is_Field else dom.get_field()
        return field.to_sympy(field.quo(field.convert(vn, dom), field.convert(vd, dom)))


def _horner(coeffs: list, x: Any, dom: Any) -> Any:
    """Evaluate a polynomial (coefficients high to low) by Horner's rule in ``dom``."""
    acc = dom.zero
    for c in coeffs:
        acc = acc * x + c
    return acc


# --------------------------------------------------------------------------
# input conversion
# --------------------------------------------------------------------------


def to_sympy_number(x: Any) -> sympy.Expr:
    """Convert one exact number to sympy, refusing floats and text.

    Parameters
    ----------
    x : int, fractions.Fraction or sympy number
        ``bool``, ``float``, ``sympy.Float``, ``str`` and expressions with
        free symbols are refused.

    Returns
    -------
    sympy.Expr
    """
    import sympy

    if isinstance(x, bool):
        raise TypeError("a bool is not a matrix entry")
    if isinstance(x, sympy.Basic):
        if x.has(sympy.Float):
            raise TypeError(f"inexact (floating-point) entry refused: {x!r}")
        if not x.is_number:
            raise TypeError(f"entry must be a number, got {x!r}")
        return x
    if isinstance(x, Integral):
        return sympy.Integer(int(x))
    if isinstance(x, Fraction):
        return sympy.Rational(x.numerator, x.denominator)
    if isinstance(x, float):
        raise TypeError(f"float entry refused (give a Fraction or sympy Rational): {x!r}")
    raise TypeError(f"unsupported entry type {type(x).__name__}: {x!r}")


def pi_field(domain: Any) -> bool:
    """Whether a coefficient domain is QQ(pi) (or ZZ[pi]): exact, with pi as a transcendental.

    An op-amp's gain-bandwidth product written in Hz is 2*pi times a rational in
    rad/s, so pi enters the equations themselves, not only the analysis frequency.
    """
    import sympy

    return bool(domain.is_PolynomialRing or domain.is_FractionField) and tuple(domain.symbols) == (sympy.pi,)


def number_field(exprs: list) -> tuple[Any, list]:
    """Smallest exact number field holding ``exprs``, and the converted elements.

    Parameters
    ----------
    exprs : list of sympy.Expr
        Exact numbers.

    Returns
    -------
    tuple
        ``(K, elements)`` with ``K`` one of ``QQ``, ``QQ_I``, an algebraic
        field ``QQ<a>`` (primitive element), from
        ``sympy.polys.constructor.construct_domain(..., extension=True)``, or the
        field ``QQ(pi)`` when pi is the one transcendental (see :func:`pi_field`).

    Raises
    ------
    TypeError
        If the numbers are neither all algebraic nor all in ``QQ(pi)``.
    """
    from sympy.polys.constructor import construct_domain

    K, elems = construct_domain(exprs, extension=True)
    if K.is_ZZ or K.is_ZZ_I:
        F = K.get_field()
        return F, [F.convert(e, K) for e in elems]
    if pi_field(K):
        F = K.get_field()  # pi from a gain-bandwidth product in Hz: the field QQ(pi), pi transcendental
        return F, [F.convert(e, K) for e in elems]
    if K.is_EX:
        mixed = algebraic_pi_field(exprs)
        if mixed is not None:  # pi and a square root together: the field QQ<a>(pi)
            return mixed, [mixed.from_sympy(e) for e in exprs]
    if not (K.is_QQ or K.is_QQ_I or K.is_AlgebraicField):
        raise TypeError(f"entries must be rational or algebraic numbers; they span {K}")
    return K, elems


def algebraic_pi_field(exprs: list) -> Any:
    """The field ``QQ<a>(pi)`` holding ``exprs``, or None when they are not all in one.

    An op-amp's gbw in Hz brings pi into the equations and a coupling's mutual
    inductance k*sqrt(L1*L2) a square root; sympy's domain constructor puts the two
    together in its inexact-symbolic domain, so the field is built here: each number
    is written as a ratio of polynomials in pi (pi replaced by a symbol, which is exact
    because pi is transcendental), their coefficients span an algebraic field ``QQ<a>``
    (primitive element), and the numbers lie in its field of fractions in pi.
    """
    import sympy
    from sympy.polys.constructor import construct_domain

    p = sympy.Dummy("p")
    coefficients: list = []
    for e in exprs:
        num, den = sympy.fraction(sympy.together(e.subs(sympy.pi, p)))
        try:
            coefficients += sympy.Poly(num, p).coeffs() + sympy.Poly(den, p).coeffs()
        except sympy.PolynomialError:
            return None
    A, _ = construct_domain(coefficients, extension=True)
    if A.is_ZZ or A.is_QQ:
        A = sympy.QQ
    elif not A.is_AlgebraicField:
        return None
    return A.frac_field(sympy.pi)
