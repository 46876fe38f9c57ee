"""The product of two closed-form waveforms, itself a closed-form waveform.

``c1 (t - d1)**n1 exp(p1 (t - d1))`` times ``c2 (t - d2)**n2 exp(p2 (t - d2))`` is, for
``t >= D = max(d1, d2)`` and in ``u = t - D``,
``c1 c2 exp(p1 (D - d1) + p2 (D - d2)) (u + D - d1)**n1 (u + D - d2)**n2 exp((p1 + p2) u)``:
a sum of terms of the same form with the pole ``p1 + p2`` and the delay ``D`` (the
binomial theorem). Exact terms give exact terms. Used for the stored energy ``C v**2 / 2``
and ``L i**2 / 2`` as a function of time (``at(energy(C1), "1 ms")``, ``peak(energy(L1))``).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from handcheck.solve.roots import WORK_DPS
from handcheck.solve.terms import Term, to_mpf_time

if TYPE_CHECKING:  # pragma: no cover - typing only
    from handcheck.solve.timefunction import TimeFunction

__all__ = ["product"]

_EXACT_PAIRS = 400  # beyond this many pairs of terms (a long pulse train) the product is numerical (60 digits)


def product(f: TimeFunction, g: TimeFunction, name: str) -> TimeFunction:
    """``f(t) g(t)`` for ``t >= 0`` (neither may hold an impulse).

    Parameters
    ----------
    f, g : TimeFunction
    name : str
        The label of the product, for messages.

    Returns
    -------
    TimeFunction
        Exact terms where both factors' terms are exact.

    Raises
    ------
    ValueError
        If either factor holds an impulse (the square of a Dirac delta is not defined);
        callers turn it into a :class:`~handcheck.errors.CircuitError` naming the part.
    """
    from handcheck.solve.timefunction import TimeFunction, _merge

    if f.impulses or g.impulses:
        raise ValueError("a product of waveforms holding impulses is not defined")
    exact = f.exact and g.exact and len(f.terms) * len(g.terms) <= _EXACT_PAIRS
    numeric = {id(t): (*t.numeric, to_mpf_time(t.delay)) for t in (*f.terms, *g.terms)}
    terms: list[Term] = []
    for a in f.terms:
        for b in g.terms:
            terms.extend(_pair(a, b, exact, numeric[id(a)], numeric[id(b)]))
    horizons = [h for h in (f.horizon, g.horizon) if h is not None]
    merged = _merge(TimeFunction(tuple(terms), name=name), TimeFunction((), name=name), name)
    return TimeFunction(merged.terms, (), None, min(horizons) if horizons else None, name)


def _sign(x: Any) -> int:
    return 0 if x == 0 else (1 if x > 0 else -1)


def _signs(a: Term, b: Term, pole: Any, pa: Any, pb: Any) -> tuple[int, int, Any]:
    """The exact signs of ``pole = a.pole + b.pole`` (and the pole, cleaned of a zero part);
    ``pa`` and ``pb`` are the two poles at the working precision."""
    import mpmath
    import sympy

    numeric = pa + pb
    size = abs(pa) + abs(pb)
    tiny = mpmath.mpf(10) ** (-(WORK_DPS - 10)) * size
    signs = []
    for first, second, part in ((a.real_sign, b.real_sign, numeric.real), (a.imag_sign, b.imag_sign, numeric.imag)):
        if 0 in (first, second) or first == second:
            signs.append(first or second)
        else:  # opposite signs: the sum's sign, zero when they cancel (conjugate poles)
            signs.append(0 if abs(part) <= tiny else _sign(part))
    real_sign, imag_sign = signs
    if isinstance(pole, sympy.Basic):
        if imag_sign == 0 and not pole.is_real:
            pole = sympy.re(pole)
        if real_sign == 0 and pole.is_real is False and sympy.re(pole) != 0:
            pole = sympy.I * sympy.im(pole)
    else:
        with mpmath.workdps(WORK_DPS):
            pole = mpmath.mpc(0 if real_sign == 0 else pole.real, 0 if imag_sign == 0 else pole.imag)
    return real_sign, imag_sign, pole


def _pair(a: Term, b: Term, exact: bool, na: tuple[Any, ...], nb: tuple[Any, ...]) -> list[Term]:
    """The terms of ``a * b``; ``na``, ``nb`` are ``(c, n, p, d, d as mpf)`` of each at the working precision."""
    import mpmath
    import sympy

    ca, _, pa, _, da = na
    cb, _, pb, _, db = nb
    with mpmath.workdps(WORK_DPS):
        if da >= db:
            start, sa, sb, fa, fb = a.delay, 0, b.delay, mpmath.mpf(0), da - db
        else:
            start, sa, sb, fa, fb = b.delay, b.delay, 0, db - da, mpmath.mpf(0)
    if exact:
        sa = start - a.delay
        sb = start - b.delay
        pole = sympy.expand(a.pole + b.pole)
        shift = a.pole * sa + b.pole * sb
        weight = a.coefficient * b.coefficient * (sympy.exp(shift) if shift != 0 else 1)
    else:
        with mpmath.workdps(WORK_DPS):
            pole = pa + pb
            weight = ca * cb * mpmath.exp(pa * fa + pb * fb)
            sa, sb = fa, fb
    real_sign, imag_sign, pole = _signs(a, b, pole, pa, pb)
    left = [math.comb(a.power, j) * sa ** (a.power - j) for j in range(a.power + 1)]
    right = [math.comb(b.power, j) * sb ** (b.power - j) for j in range(b.power + 1)]
    poly: list[Any] = [sympy.Integer(0) if exact else mpmath.mpf(0)] * (a.power + b.power + 1)
    for i, x in enumerate(left):
        for j, y in enumerate(right):
            poly[i + j] += x * y
    out = []
    for k, c in enumerate(poly):
        if c == 0:
            continue
        if exact:
            coefficient = sympy.expand(weight * c)
        else:
            with mpmath.workdps(WORK_DPS):
                coefficient = weight * c
        out.append(Term(coefficient, k, pole, start, real_sign, imag_sign, hint=None if exact else (coefficient, pole)))
    return out
