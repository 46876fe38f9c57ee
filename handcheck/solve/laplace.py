"""Inverse Laplace transform of weighted, delayed rational functions, by partial fractions.

A response in the s-domain arrives here as a sum of *pieces*

    Y(s) = sum_i  w_i * N_i(s) / (D_i(s) * S_i(s)) * exp(-s d_i)

with exact scalar weights ``w_i`` (any exact sympy number, complex allowed, e.g.
``exp(j*22.1 deg)`` times a peak), ``N_i`` and monic ``D_i`` polynomials with exact
coefficients (over the rationals or the circuit's algebraic number field), ``S_i``
either 1 or ``(s - q)**m`` for one exact pole ``q`` that is not in that field (a
sinusoid at ``w = 2*pi*50``: ``q = j*100*pi``), and exact delays ``d_i``.

Each distinct rational function is expanded once. Its denominator is split over a
shared book of exact irreducible factors (:mod:`handcheck.solve.roots`), so every
pole is identified exactly, with its exact multiplicity, across all pieces. The
principal part at a pole ``p`` of multiplicity ``m`` comes from the Taylor series

    N(p + e) / Q(p + e) = c_0 + c_1 e + ... ,   Q(s) = D(s) S(s) / (s - p)**m,

as ``sum_j c_j / (s - p)**(m - j)``, i.e. ``c_j t**(m-j-1)/(m-j-1)! exp(p t)``
(the standard residue formula for repeated poles; e.g. Kreyszig, *Advanced
Engineering Mathematics*, 10th ed., sec. 6.4, from memory). At a pole with a closed
form the Taylor coefficients are computed exactly from ``D``'s own coefficients (so
the coefficient is exact even when other poles are numerical); at a numerical pole
``Q(p + e)`` is the product ``prod (p - q + e)**m_q`` over the other poles, at
:data:`~handcheck.solve.roots.WORK_DPS` digits. A polynomial part (degree of ``N``
at least that of ``D S``) is a sum of Dirac impulses and their derivatives. The
delays become Heaviside shifts (the time-shift theorem). The value at ``0+`` is the
initial-value theorem applied exactly to the undelayed pieces.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from handcheck.errors import LimitError
from handcheck.solve.exact import compact, tidy
from handcheck.solve.roots import WORK_DPS, Factor, Root, approx, irreducible_factors, roots_of_irreducible
from handcheck.solve.timefunction import Impulse, Term, TimeFunction

if TYPE_CHECKING:  # pragma: no cover - typing only
    import sympy

__all__ = ["Piece", "PoleBook", "Shape", "inverse_laplace"]


@dataclass(frozen=True)
class Shape:
    """``num(s) / (den(s) * (s - q)**m)``; ``extra = (q, m)``, or None for no such factor."""

    num: Any  # sympy.Poly
    den: Any  # sympy.Poly, monic
    extra: tuple[Any, int] | None = None


@dataclass(frozen=True)
class Piece:
    """``weight * shape(s) * exp(-s * delay)``."""

    weight: Any
    shape: Shape
    delay: Any


@dataclass(frozen=True)
class _Pole:
    value: Any  # exact sympy number or mpmath.mpc
    approx: Any  # mpmath.mpc
    real_sign: int
    imag_sign: int

    @property
    def exact(self) -> bool:
        import sympy

        return isinstance(self.value, sympy.Basic)


class PoleBook:
    """The distinct poles met so far: irreducible factors and sinusoid quadratics.

    A local helper of one computation (it is filled as denominators are split);
    seed it with the circuit's factors so their roots are found once.
    """

    def __init__(self, factors: Sequence[Factor] = ()) -> None:
        self.factors: list[Factor] = list(factors)
        self.extras: list[tuple[Any, _Pole]] = []

    def pole(self, key: tuple[str, int, int]) -> _Pole:
        kind, i, j = key
        if kind == "f":
            root: Root = self.factors[i].roots[j]
            return _Pole(root.value, root.approx, root.real_sign, root.imag_sign)
        return self.extras[i][1]

    def split(self, den: sympy.Poly, deadline: float | None) -> list[tuple[int, int]]:
        """Exact factorisation of ``den`` over the book: ``[(factor index, multiplicity)]``."""
        rest = den
        out: list[tuple[int, int]] = []
        for i, factor in enumerate(self.factors):
            if rest.degree() <= 0:
                break
            f = factor.poly if factor.poly.domain == rest.domain else factor.poly.set_domain(rest.domain)
            mult = 0
            while rest.degree() >= f.degree():
                q, r = rest.div(f)
                if not r.is_zero:
                    break
                rest = q
                mult += 1
            if mult:
                out.append((i, mult))
        if rest.degree() > 0:
            for f, mult in irreducible_factors(rest):
                _check(deadline)
                self.factors.append(Factor(f, roots_of_irreducible(f)))
                out.append((len(self.factors) - 1, mult))
        return out

    def extra_index(self, q: Any) -> int:
        """The index of the exact pole ``q`` (outside the circuit's field) in the book."""
        import mpmath
        import sympy

        for i, (q0, _) in enumerate(self.extras):
            if q == q0 or sympy.simplify(q - q0) == 0:
                return i
        re, im = sympy.re(q), sympy.im(q)
        with mpmath.workdps(WORK_DPS):
            value = approx(q)
        self.extras.append((q, _Pole(q, value, _sign(re), _sign(im))))
        return len(self.extras) - 1


def _sign(x: Any) -> int:
    """The exact sign of a real exact number."""
    if x == 0:
        return 0
    if x.is_positive:
        return 1
    if x.is_negative:
        return -1
    import mpmath

    with mpmath.workdps(WORK_DPS):
        value = approx(x).real
    return 0 if value == 0 else (1 if value > 0 else -1)


def _check(deadline: float | None) -> None:
    if deadline is not None and time.monotonic() > deadline:
        raise LimitError(
            "the transient solution took longer than its time limit; simplify the circuit or raise the limit"
        )


# --------------------------------------------------------------------------
# series helpers (exact sympy numbers or mpmath numbers alike)
# --------------------------------------------------------------------------


def _taylor(coeffs_high: list[Any], p: Any, order: int, exact: bool) -> list[Any]:
    """Taylor coefficients ``[P(p), P'(p), P''(p)/2, ...]`` up to ``order`` terms (synthetic division)."""
    work = list(coeffs_high)
    out = []
    for _ in range(order):
        if not work:
            out.append(0)
            continue
        acc = work[0]
        quotient = [acc]
        for c in work[1:]:
            acc = acc * p + c
            if exact:
                acc = tidy(acc)
            quotient.append(acc)
        out.append(quotient[-1])
        work = quotient[:-1]
    return out


def _power_series(c: Any, k: int, order: int) -> list[Any]:
    """Taylor coefficients of ``(c + e)**k`` in ``e``, up to ``order`` terms."""
    import sympy

    return [tidy(sympy.binomial(k, j) * c ** (k - j)) if j <= k else 0 for j in range(order)]


def _mul_series(a: list[Any], b: list[Any], order: int, exact: bool) -> list[Any]:
    out = []
    for k in range(order):
        acc = 0
        for i in range(k + 1):
            if i < len(a) and k - i < len(b):
                acc = acc + a[i] * b[k - i]
        out.append(tidy(acc) if exact else acc)
    return out


def _div_series(a: list[Any], b: list[Any], order: int, exact: bool) -> list[Any]:
    out: list[Any] = []
    for k in range(order):
        acc = a[k] if k < len(a) else 0
        for i in range(k):
            if k - i < len(b):
                acc = acc - out[i] * b[k - i]
        value = acc / b[0]
        out.append(tidy(value) if exact else value)
    return out


# --------------------------------------------------------------------------
# one rational function
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Expansion:
    terms: tuple[tuple[tuple[str, int, int], int, Any], ...]  # (pole key, power of t, coefficient)
    impulses: tuple[tuple[int, Any], ...]  # (derivative order, coefficient)
    initial: Any  # lim s*F(s) for the proper part, exact


def _full_denominator(shape: Shape) -> list[Any]:
    """The coefficients of ``den * (s - q)**m`` (exact, highest power first)."""
    import sympy

    full = list(shape.den.all_coeffs())
    if shape.extra is not None:
        q, m = shape.extra
        for _ in range(m):
            nxt = [sympy.Integer(0)] * (len(full) + 1)
            for i, c in enumerate(full):
                nxt[i] += c
                nxt[i + 1] -= c * q
            full = nxt
        full = [tidy(c) for c in full]
    return full


def _polynomial_part(num: list[Any], full: list[Any]) -> tuple[list[tuple[int, Any]], list[Any]]:
    """Long division by the monic ``full``: the impulses (order, weight) and the remainder."""
    impulses: list[tuple[int, Any]] = []
    rem = list(num)
    deg_full = len(full) - 1
    if len(rem) - 1 >= deg_full:
        quotient = []
        while len(rem) - 1 >= deg_full:
            lead = rem[0]
            quotient.append(lead)
            for k in range(len(full)):
                rem[k] = tidy(rem[k] - lead * full[k])
            rem = rem[1:]
        for order, c in enumerate(reversed(quotient)):
            if c != 0:
                impulses.append((order, c))
    while rem and rem[0] == 0:
        rem = rem[1:]
    return impulses, rem


def _poles_of(shape: Shape, book: PoleBook, deadline: float | None) -> list[tuple[tuple[str, int, int], int]]:
    """Every pole of the shape by its key in the book, with its multiplicity."""
    split = book.split(shape.den, deadline)
    poles: list[tuple[tuple[str, int, int], int]] = []
    for i, mult in split:
        for j in range(len(book.factors[i].roots)):
            poles.append((("f", i, j), mult))
    if shape.extra is not None:
        k = book.extra_index(shape.extra[0])
        poles.append((("q", k, 0), shape.extra[1]))
    return poles


def _laurent(
    shape: Shape, book: PoleBook, poles: list[tuple[tuple[str, int, int], int]], key: tuple[str, int, int], m: int
) -> list[Any]:
    """The first ``m`` Laurent coefficients at one pole: exactly for an exact pole, else in mpmath."""
    import mpmath

    num = list(shape.num.all_coeffs())
    den = list(shape.den.all_coeffs())
    pole = book.pole(key)
    if pole.exact:
        p = pole.value
        nt = _taylor(num, p, m, True)
        if key[0] == "q":  # the extra pole: the whole of den is the rest
            dt = _taylor(den, p, m, True)
        else:
            dt = _taylor(den, p, 2 * m, True)[m:]
            if shape.extra is not None:
                q, mq = shape.extra
                dt = _mul_series(dt, _power_series(tidy(p - q), mq, m), m, True)
        return _div_series(nt, dt, m, True)
    with mpmath.workdps(WORK_DPS):
        p = pole.approx
        num_n = [approx(c) for c in num]
        nt = _taylor(num_n, p, m, False)
        rest = [mpmath.mpc(1)]
        for other_key, other_m in poles:
            if other_key == key:
                continue
            r = book.pole(other_key).approx
            lin = [p - r, mpmath.mpc(1)]
            for _ in range(other_m):
                rest = _mul_series(rest, lin, m, False)
        return _div_series(nt, rest, m, False)


def _expand(shape: Shape, book: PoleBook, deadline: float | None) -> _Expansion:
    """The partial fractions of one shape: residue terms, impulses and the value at t = 0+."""
    import sympy

    num = list(shape.num.all_coeffs())
    if shape.num.is_zero:
        return _Expansion((), (), sympy.Integer(0))
    full = _full_denominator(shape)
    impulses, rem = _polynomial_part(num, full)
    deg_full = len(full) - 1
    initial = rem[0] if len(rem) == deg_full and deg_full > 0 else sympy.Integer(0)
    if deg_full == 0:
        return _Expansion((), tuple(impulses), sympy.Integer(0))
    poles = _poles_of(shape, book, deadline)
    terms: list[tuple[tuple[str, int, int], int, Any]] = []
    for key, m in poles:
        _check(deadline)
        exact = book.pole(key).exact
        for j, c in enumerate(_laurent(shape, book, poles, key, m)):
            power = m - 1 - j
            coefficient = c / math.factorial(power) if power > 1 else c
            if exact:
                coefficient = compact(tidy(coefficient))
                if coefficient == 0:
                    continue
            terms.append((key, power, coefficient))
    return _Expansion(tuple(terms), tuple(impulses), tidy(initial))


def inverse_laplace(
    pieces: Sequence[Piece],
    book: PoleBook,
    *,
    name: str = "f",
    horizon: Any = None,
    deadline: float | None = None,
) -> TimeFunction:
    """The time function of a sum of weighted, delayed rational functions.

    Parameters
    ----------
    pieces : sequence of Piece
    book : PoleBook
        Shared pole book (seeded with the circuit's factors).
    name : str
        Label for messages.
    horizon : sympy number or None
        Passed to the :class:`TimeFunction` (pulse trains).
    deadline : float or None
        ``time.monotonic()`` limit; :class:`LimitError` after it.

    Returns
    -------
    TimeFunction
    """
    import sympy

    acc = _accumulate(pieces, book, deadline)
    terms = _terms(acc, book, deadline)
    impulses = []
    for (order, delay), parts in acc.impulses.items():
        summed = _sum_exact([(p, approx(p)) for p in parts])
        if summed is not None:
            impulses.append(Impulse(summed[0], order, delay))
    impulses.sort(key=lambda i: (i.delay, i.order))
    init = tidy(acc.initial)
    if not init.is_real:
        init = sympy.expand_complex(init).as_real_imag()[0]
    init = compact(init)
    return TimeFunction(tuple(terms), tuple(impulses), init, horizon, name)


@dataclass(frozen=True)
class _Sums:
    """The pieces' partial fractions gathered by (pole key, power, delay).

    ``exact`` holds the exact parts with their values, ``numeric`` the sums of the
    parts at numerically known poles, ``impulses`` the weights by (order, delay),
    ``initial`` the value at t = 0+ of the undelayed pieces.
    """

    exact: dict[tuple[Any, int, Any], list[tuple[Any, Any]]]
    numeric: dict[tuple[Any, int, Any], Any]
    impulses: dict[tuple[int, Any], list[Any]]
    initial: Any


def _accumulate(pieces: Sequence[Piece], book: PoleBook, deadline: float | None) -> _Sums:
    """Every piece expanded (each shape once) and its weighted terms added up."""
    import mpmath
    import sympy

    expansions: dict[Shape, _Expansion] = {}
    exact_acc: dict[tuple[Any, int, Any], list[tuple[Any, Any]]] = {}  # (exact part, its value)
    numeric_acc: dict[tuple[Any, int, Any], Any] = {}
    impulse_acc: dict[tuple[int, Any], list[Any]] = {}
    values: dict[Any, Any] = {}  # exact number -> mpmath value, computed once (pulse trains repeat them)

    def value_of(x: Any) -> Any:
        if x not in values:
            values[x] = approx(x)
        return values[x]

    initial = sympy.Integer(0)
    for piece in pieces:
        if piece.weight == 0:
            continue
        exp = expansions.get(piece.shape)
        if exp is None:
            exp = _expand(piece.shape, book, deadline)
            expansions[piece.shape] = exp
        for key, power, coefficient in exp.terms:
            k = (key, power, piece.delay)
            with mpmath.workdps(WORK_DPS):
                if isinstance(coefficient, sympy.Basic):
                    part = piece.weight * coefficient
                    exact_acc.setdefault(k, []).append((part, value_of(piece.weight) * value_of(coefficient)))
                else:
                    numeric_acc[k] = numeric_acc.get(k, mpmath.mpc(0)) + value_of(piece.weight) * coefficient
        for order, coefficient in exp.impulses:
            impulse_acc.setdefault((order, piece.delay), []).append(piece.weight * coefficient)
        if piece.delay == 0:
            initial += piece.weight * exp.initial
        _check(deadline)
    return _Sums(exact_acc, numeric_acc, impulse_acc, initial)


def _terms(acc: _Sums, book: PoleBook, deadline: float | None) -> list[Term]:
    """The exponential terms of the sums, zero sums left out, in a fixed order."""
    terms: list[Term] = []
    for (key, power, delay), parts in acc.exact.items():
        _check(deadline)
        summed = _sum_exact(parts)
        if summed is None:
            continue
        total, total_value = summed
        pole = book.pole(key)
        terms.append(Term(total, power, pole.value, delay, pole.real_sign, pole.imag_sign, (total_value, pole.approx)))
    for (key, power, delay), total in acc.numeric.items():
        pole = book.pole(key)
        terms.append(Term(total, power, pole.approx, delay, pole.real_sign, pole.imag_sign, (total, pole.approx)))
    terms.sort(key=lambda t: (t.delay, -t.real_sign, float(abs(t.numeric[2])), t.imag_sign, t.power))
    return terms


def _sum_exact(parts: list[tuple[Any, Any]]) -> tuple[Any, Any] | None:
    """The exact sum of ``(exact, value)`` parts and its value, or None when it is zero.

    A zero that the canonical forms do not show (a trigonometric identity) is
    recognised when the value cancels to the working precision and
    ``sympy.simplify`` confirms it.
    """
    import mpmath
    import sympy

    with mpmath.workdps(WORK_DPS):
        value = sum((v for _, v in parts), mpmath.mpc(0))
        if len(parts) == 1:
            return (parts[0][0], value) if parts[0][0] != 0 else None
        total = compact(tidy(sympy.Add(*(p for p, _ in parts))))
        if total == 0:
            return None
        size = sum((abs(v) for _, v in parts), mpmath.mpf(0))
        if abs(value) <= mpmath.mpf(10) ** (-(WORK_DPS - 10)) * size and sympy.simplify(total) == 0:
            return None
        if total.is_Rational:
            value = mpmath.mpc(approx(total))
        return total, value
