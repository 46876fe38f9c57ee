"""The energy a part absorbs over ``[0, T]``: ``absorbed_energy(P, "10 ms")``.

``w(T) = integral_0^T v(t) i(t) dt`` with the part's voltage ``v = v(nodes[0]) -
v(nodes[1])`` and the current ``i`` entering ``nodes[0]`` (the passive sign
convention, as ``power(...)``): positive for a resistor, negative for a source that
supplies energy. Both waveforms are sums of terms ``c (t - d)**n exp(p (t - d))``
for ``t >= d``; the product of two terms is, in the local time ``u = t - D`` with
``D = max(d1, d2)``, ``K * poly(u) * exp(q u)`` with ``q = p1 + p2``, and every
``u**k exp(q u)`` integrates in closed form (integration by parts, from memory):

    integral_0^L u**k exp(q u) du = L**(k+1)/(k+1)                                  (q = 0)
        = k! * (exp(q L) * sum_{j=0..k} (-1)**(k-j) L**j / (j! q**(k-j+1)) - (-1)**k / q**(k+1))

The sum is exact (sympy) when every coefficient and pole is; otherwise it is taken in
mpmath at :data:`~handcheck.solve.roots.WORK_DPS` + 20 digits, with the power series
``sum_m q**m L**(k+m+1) / (m! (k+m+1))`` wherever ``|q L| < 1`` (no cancellation).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from handcheck.errors import CircuitError
from handcheck.solve.exact import real_part, short
from handcheck.solve.roots import WORK_DPS, approx
from handcheck.solve.terms import Term, to_mpf_time

if TYPE_CHECKING:  # pragma: no cover - typing only
    from handcheck.solve.timefunction import TimeFunction

__all__ = ["product_integral"]

_EXACT_PAIRS = 100  # beyond this many term pairs the exact sum is not kept (its value is still 40+ digits)


def product_integral(f: TimeFunction, g: TimeFunction, until: Any) -> Any:
    """``integral_0^until f(t) g(t) dt`` of two waveforms.

    Parameters
    ----------
    f, g : TimeFunction
    until : sympy number
        The upper limit ``T >= 0`` in seconds.

    Returns
    -------
    sympy.Expr or mpmath.mpf
        Exact when both waveforms are (and the sum has at most 100 pairs of terms);
        else an mpmath number at 80 digits.

    Raises
    ------
    CircuitError
        If either waveform holds an impulse at or before ``until`` (the product with
        a Dirac delta has no integral).
    LimitError
        If ``until`` lies beyond the span a repeating source is written out over.
    """
    import mpmath
    import sympy

    f.check_time(until)
    g.check_time(until)
    for w in (f, g):
        for imp in w.impulses:
            if to_mpf_time(imp.delay) <= to_mpf_time(until):
                raise CircuitError(
                    f"{w.name} holds an impulse (a Dirac delta of weight {short(imp.coefficient)}) at t = "
                    f"{imp.delay} s from ideal switching, so the energy through it is not defined; add the "
                    "series resistance of the source or switch"
                )
    with mpmath.workdps(WORK_DPS):
        end = to_mpf_time(until)
        # terms that start at or after the end add nothing (a pulse train written out far beyond it)
        first = [t for t in f.terms if to_mpf_time(t.delay) < end]
        second = [t for t in g.terms if to_mpf_time(t.delay) < end]
    exact = all(t.exact for t in first) and all(t.exact for t in second)
    if exact and len(first) * len(second) <= _EXACT_PAIRS and getattr(until, "is_Rational", False):
        total = sympy.Integer(0)
        for a in first:
            for b in second:
                total += _pair_exact(a, b, sympy.Rational(until))
        return real_part(total)
    with mpmath.workdps(WORK_DPS + 20):
        end = to_mpf_time(until)
        left = [_numeric(t) for t in first]
        right = [_numeric(t) for t in second]
        total = mpmath.mpc(0)
        for x in left:
            for y in right:
                total += _pair_numeric(x, y, end)
        return +total.real


def _numeric(term: Term) -> tuple[Any, int, Any, Any, int]:
    """``(c, n, p, d, real_sign)`` of a term at the working precision (80 digits)."""
    return (
        approx(term.coefficient, WORK_DPS + 20),
        term.power,
        approx(term.pole, WORK_DPS + 20),
        to_mpf_time(term.delay),
        term.real_sign,
    )


def _pair_exact(a: Term, b: Term, until: Any) -> Any:
    import sympy

    start = max(a.delay, b.delay)
    if start >= until:
        return sympy.Integer(0)
    span = until - start
    u = sympy.Symbol("u")
    poly = sympy.Poly(sympy.expand((u + start - a.delay) ** a.power * (u + start - b.delay) ** b.power), u)
    q = sympy.expand(a.pole + b.pole)
    if q != 0 and abs(approx(q)) <= 1e-50 * (abs(approx(a.pole)) + abs(approx(b.pole))):
        q = sympy.Integer(0)  # pragma: no cover - opposite poles are written alike
    shift = a.pole * (start - a.delay) + b.pole * (start - b.delay)
    weight = a.coefficient * b.coefficient * (sympy.exp(shift) if shift != 0 else 1)
    total = sympy.Integer(0)
    for (k,), c in poly.terms():
        total += c * _moment_exact(k, q, span)
    return weight * total


def _moment_exact(k: int, q: Any, span: Any) -> Any:
    """``integral_0^span u**k exp(q u) du``, exactly."""
    import sympy

    if q == 0:
        return span ** (k + 1) / (k + 1)
    grow = sympy.exp(q * span)
    inner = sum(
        (sympy.Integer(-1) ** (k - j) * span**j / (math.factorial(j) * q ** (k - j + 1)) for j in range(k + 1)),
        sympy.Integer(0),
    )
    return math.factorial(k) * (grow * inner - sympy.Integer(-1) ** k / q ** (k + 1))


def _pair_numeric(a: tuple[Any, int, Any, Any, int], b: tuple[Any, int, Any, Any, int], until: Any) -> Any:
    import mpmath

    ca, na, pa, da, ra = a
    cb, nb, pb, db, rb = b
    start = max(da, db)
    if start >= until:
        return mpmath.mpc(0)
    span = until - start
    # coefficients of (u + sa)**na (u + sb)**nb in powers of u
    sa, sb = start - da, start - db
    left = [math.comb(na, j) * sa ** (na - j) for j in range(na + 1)]
    right = [math.comb(nb, j) * sb ** (nb - j) for j in range(nb + 1)]
    poly = [mpmath.mpf(0)] * (na + nb + 1)
    for i, x in enumerate(left):
        for j, y in enumerate(right):
            poly[i + j] += x * y
    q = pa + pb
    if (ra == 0 and rb == 0) and abs(q) <= mpmath.mpf(10) ** (-(WORK_DPS - 10)) * (abs(pa) + abs(pb)):
        q = mpmath.mpc(0)
    weight = ca * cb * mpmath.exp(pa * sa + pb * sb)
    return weight * sum((c * _moment_numeric(k, q, span) for k, c in enumerate(poly)), mpmath.mpc(0))


def _moment_numeric(k: int, q: Any, span: Any) -> Any:
    import mpmath

    if abs(q * span) < 1:  # the power series: no cancellation
        total, term, m = mpmath.mpc(0), mpmath.mpc(1), 0
        while True:
            piece = term * span ** (k + m + 1) / (k + m + 1)
            total += piece
            if abs(piece) <= mpmath.eps * abs(total) or m > 400:
                return total
            m += 1
            term *= q / m
    inner = sum(
        ((-1) ** (k - j) * span**j / (math.factorial(j) * q ** (k - j + 1)) for j in range(k + 1)), mpmath.mpc(0)
    )
    return math.factorial(k) * (mpmath.exp(q * span) * inner - (-1) ** k / q ** (k + 1))
