"""Exact values that are fractions of polynomials in pi, kept in one short canonical form.

A formula that names an earlier step holds that step's exact value; a chain of steps
such as ``Zk = R1 + (Z(k-1) || (j*Xc))`` at 1 kHz (pi stays exact) then holds the
previous value twice, and as sympy builds it the tree doubles with every step: sympy's
own arithmetic on it (the numberness tests inside every division) walks that tree,
exponential along the chain. Every such value is an element of the field Q(i)(pi) (pi
is transcendental: Lindemann 1882, from memory), so it has a canonical form

    (A(pi) + i*B(pi)) / C(pi),    A, B, C in Q[x],  C monic,  gcd(A, B, C) = 1,

with a real denominator (multiply by the conjugate). The form is unique: C must be a
multiple of lcm(D, conj(D)) for the reduced denominator D over Q(i)[x], and any real
factor more would divide A, B and C. The polynomials are python-flint ``fmpq_poly``
(FLINT's exact rational polynomials; its gcd is monic), so a step of the chain costs
a few polynomial products and gcds of degree about twice the step's index, and the
size of the value grows linearly along the chain, not exponentially.

Only a value of rationals, i and pi under +, -, * and whole powers (division
included) has the form; anything else (a root, an exponential) is left to sympy.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import flint
import sympy

__all__ = ["PiFraction", "canonical", "combine", "from_expr", "negated", "parts", "to_expr"]

#: Largest whole power of a value converted (the evaluator refuses larger ones anyway).
MAX_POWER = 64
#: Largest power of pi converted: a canonical form's own terms (degree about twice the
#: length of a chain of steps).
MAX_DEGREE = 100_000


@dataclass(frozen=True)
class PiFraction:
    """(re(pi) + i*im(pi)) / den(pi), reduced: ``den`` monic, no common factor of all three."""

    re: Any  # flint.fmpq_poly
    im: Any
    den: Any

    @property
    def is_zero(self) -> bool:
        """True for the value 0."""
        return bool(self.re.is_zero() and self.im.is_zero())

    def bits(self) -> int:
        """Bits of the largest numerator or denominator among the coefficients."""
        most = 0
        for poly in (self.re, self.im, self.den):
            for c in poly.coeffs():
                most = max(most, int(c.p).bit_length(), int(c.q).bit_length())
        return most


def _reduced(re: Any, im: Any, den: Any) -> PiFraction:
    if re.is_zero() and im.is_zero():
        return PiFraction(re, im, flint.fmpq_poly([1]))
    if den.degree() > 0:
        common = den.gcd(re)  # monic
        if common.degree() > 0:
            common = common.gcd(im)
        if common.degree() > 0:
            re, im, den = re // common, im // common, den // common
    lead = den.coeffs()[-1]
    if lead != 1:
        re, im, den = re / lead, im / lead, den / lead
    return PiFraction(re, im, den)


def _constant(re: Any, im: Any = 0) -> PiFraction:
    return PiFraction(flint.fmpq_poly([re]), flint.fmpq_poly([im]), flint.fmpq_poly([1]))


def add(x: PiFraction, y: PiFraction) -> PiFraction:
    """x + y."""
    if x.den == 1 and y.den == 1:
        return PiFraction(x.re + y.re, x.im + y.im, x.den)
    if x.den == y.den:
        return _reduced(x.re + y.re, x.im + y.im, x.den)
    return _reduced(x.re * y.den + y.re * x.den, x.im * y.den + y.im * x.den, x.den * y.den)


def mul(x: PiFraction, y: PiFraction) -> PiFraction:
    """x * y."""
    if x.den == 1 and y.den == 1:
        return PiFraction(x.re * y.re - x.im * y.im, x.re * y.im + x.im * y.re, x.den)
    return _reduced(x.re * y.re - x.im * y.im, x.re * y.im + x.im * y.re, x.den * y.den)


def inverse(x: PiFraction) -> PiFraction | None:
    """1 / x, or None for x = 0."""
    if x.is_zero:
        return None
    norm = x.re * x.re + x.im * x.im  # never 0 at pi: pi is no root of a rational polynomial
    return _reduced(x.re * x.den, -x.im * x.den, norm)


def power(x: PiFraction, n: int) -> PiFraction | None:
    """x ** n for a whole n, or None for 0 to a negative power."""
    if n < 0:
        inv = inverse(x)
        return None if inv is None else power(inv, -n)
    out, base = _constant(1), x
    while n:
        if n & 1:
            out = mul(out, base)
        n >>= 1
        if n:
            base = mul(base, base)
    return out


def _convert(expr: sympy.Basic, memo: dict[sympy.Basic, PiFraction | None]) -> PiFraction | None:
    if expr in memo:
        return memo[expr]
    out: PiFraction | None = None
    if isinstance(expr, sympy.Rational):
        out = _constant(flint.fmpq(int(expr.p), int(expr.q)))
    elif expr is sympy.I:
        out = _constant(0, 1)
    elif expr is sympy.pi:
        out = PiFraction(flint.fmpq_poly([0, 1]), flint.fmpq_poly([]), flint.fmpq_poly([1]))
    elif isinstance(expr, (sympy.Add, sympy.Mul)):
        parts = [_convert(a, memo) for a in expr.args]
        if all(p is not None for p in parts):
            combine = add if isinstance(expr, sympy.Add) else mul
            out = parts[0]
            for p in parts[1:]:
                out = combine(out, p)  # type: ignore[arg-type]
    elif isinstance(expr, sympy.Pow) and expr.base is sympy.pi and expr.exp.is_Integer and 0 < expr.exp <= MAX_DEGREE:
        out = PiFraction(flint.fmpq_poly([0] * int(expr.exp) + [1]), flint.fmpq_poly([]), flint.fmpq_poly([1]))
    elif isinstance(expr, sympy.Pow) and expr.exp.is_Integer and abs(int(expr.exp)) <= MAX_POWER:
        base = _convert(expr.base, memo)
        out = None if base is None else power(base, int(expr.exp))
    memo[expr] = out
    return out


def from_expr(expr: sympy.Basic) -> PiFraction | None:
    """The canonical form of an exact sympy number in Q(i)(pi), or None when it has none.

    Each distinct subexpression is converted once (the walk is over the expression's
    graph, not its tree), so a value that repeats an earlier one costs no more.

    >>> f = from_expr(1 / (sympy.pi + sympy.I))
    >>> str(f.re), f.im.coeffs(), str(f.den)
    ('x', [-1], 'x^2 + 1')
    """
    return _convert(expr, {})


def _terms(poly: Any) -> list[sympy.Expr]:
    terms: list[sympy.Expr] = []
    for k, c in enumerate(poly.coeffs()):
        if c == 0:
            continue
        coefficient = sympy.Integer(int(c))
        if k == 0:
            terms.append(coefficient)
            continue
        monomial = sympy.pi if k == 1 else sympy.Pow(sympy.pi, k, evaluate=False)
        terms.append(monomial if c == 1 else sympy.Mul(coefficient, monomial, evaluate=False))
    return terms


def _sum(terms: list[sympy.Expr]) -> sympy.Expr:
    if not terms:
        return sympy.Integer(0)
    return terms[0] if len(terms) == 1 else sympy.Add(*terms, evaluate=False)


def to_expr(value: PiFraction) -> sympy.Expr:
    """The sympy number of a canonical form, with integer coefficients.

    Built unevaluated: every term is already in sympy's own form, and sympy's
    evaluation of each new term and sum asks their assumptions (most of the cost of a
    chain of steps). Sums of one term and a denominator of one term are evaluated.

    >>> to_expr(from_expr((2 * sympy.pi + sympy.I) / (4 * sympy.pi)))
    (2*pi + I)/(4*pi)
    """
    scale = flint.fmpz(1)
    for poly in (value.re, value.im, value.den):
        scale = scale.lcm(poly.denom())
    re, im, den = ((poly * scale).numer() for poly in (value.re, value.im, value.den))
    content = re.content().gcd(im.content()).gcd(den.content())
    re, im, den = (poly // content for poly in (re, im, den))
    terms = _terms(re)
    imaginary = _sum(_terms(im))
    if imaginary.is_Add:
        terms.append(sympy.Mul(sympy.I, imaginary, evaluate=False))
    elif imaginary != 0:
        terms.append(sympy.I * imaginary)
    numerator = _sum(terms)
    if den.degree() == 0 and den[0] == 1:
        return numerator
    denominator = _sum(_terms(den))
    if not (numerator.is_Add and denominator.is_Add):
        return numerator / denominator
    return sympy.Mul(numerator, sympy.Pow(denominator, -1, evaluate=False), evaluate=False)


def canonical(expr: sympy.Expr, max_bits: int) -> sympy.Expr | None:
    """``expr`` rewritten in its canonical form, or None when it has none within ``max_bits``.

    Parameters
    ----------
    expr
        An exact sympy number.
    max_bits
        Largest size, in bits, of a coefficient's numerator or denominator: a form
        with larger ones is not returned (the caller keeps ``expr``).

    Returns
    -------
    sympy.Expr or None
    """
    value = from_expr(expr)
    if value is None or value.bits() > max_bits:
        return None
    return to_expr(value)


def _parallel(x: PiFraction, y: PiFraction) -> PiFraction | None:
    total = add(x, y)
    inv = inverse(total)
    return None if inv is None else mul(mul(x, y), inv)


def _negated(x: PiFraction) -> PiFraction:
    return PiFraction(-x.re, -x.im, x.den)


def _quotient(x: PiFraction, y: PiFraction) -> PiFraction | None:
    inv = inverse(y)
    return None if inv is None else mul(x, inv)


_BINARY = {
    "+": add,
    "-": lambda x, y: add(x, _negated(y)),
    "*": mul,
    "/": _quotient,
    "||": lambda x, y: PiFraction(x.re, x.im, x.den) if x.is_zero and y.is_zero else _parallel(x, y),
}


def combine(op: str, left: sympy.Expr, right: sympy.Expr, max_bits: int) -> sympy.Expr | None:
    """``left op right`` (op one of + - * / ||) in canonical form, or None.

    None when an operand has no canonical form, the result has coefficients of more
    than ``max_bits`` bits, or the operation has no value (a division by 0): the
    caller then does the operation as sympy does, and reports what it finds.

    >>> combine("||", sympy.pi, sympy.I, 64)
    (pi + I*pi**2)/(1 + pi**2)
    """
    x, y = from_expr(left), from_expr(right)
    if x is None or y is None:
        return None
    out = _BINARY[op](x, y)
    if out is None or out.bits() > max_bits:
        return None
    return to_expr(out)


def negated(expr: sympy.Expr) -> sympy.Expr | None:
    """-expr in canonical form, or None when ``expr`` has none."""
    x = from_expr(expr)
    return None if x is None else to_expr(_negated(x))


def parts(expr: sympy.Expr) -> tuple[sympy.Expr, sympy.Expr, sympy.Expr] | None:
    """The real part, the imaginary part and the squared magnitude of ``expr``, or None.

    Each in canonical form (real numbers of Q(pi)): the real and imaginary parts are
    A/C and B/C, the squared magnitude (A^2 + B^2)/C^2.

    >>> parts(3 + 4 * sympy.I)
    (3, 4, 25)
    """
    x = from_expr(expr)
    if x is None:
        return None
    zero = flint.fmpq_poly([])
    re = _reduced(x.re, zero, x.den)
    im = _reduced(x.im, zero, x.den)
    size = _reduced(x.re * x.re + x.im * x.im, zero, x.den * x.den)
    return to_expr(re), to_expr(im), to_expr(size)
