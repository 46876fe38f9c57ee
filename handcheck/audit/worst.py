"""The extremes of an exact rational function over a box of part values, found rigorously.

Branch and bound in ball arithmetic (python-flint ``arb``): a box's enclosure of
R = num/den bounds R over the whole box; where the sign of a partial derivative's
numerator (num' den - num den') is certain over a box, R is monotone in that part and
the part is fixed at the better end; otherwise the box is halved along its widest
part. The result is a value that R reaches (at a point, in a ball) and a certified
bound that no point of the box exceeds; the two are within the stated tolerance
unless the budget of boxes ran out, which the result says.

References
----------
R. E. Moore, R. B. Kearfott, M. J. Cloud, *Introduction to Interval Analysis*,
SIAM 2009, ch. 5 and 6 (interval extensions, monotonicity test, bisection; from memory).
"""

from __future__ import annotations

import heapq
import itertools
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import flint

from handcheck.audit.ring import RatFunc

__all__ = ["Extreme", "extreme", "ratio_at", "ratio_ball"]

#: Bits of working precision for the balls.
PRECISION = 106
#: Most boxes examined for one extreme.
MAX_BOXES = 6000
#: Width within which the extreme is pinned down (absolute, on R).
TOLERANCE = 1e-8


@dataclass(frozen=True)
class Extreme:
    """The largest (or smallest) value of R over the box.

    ``value`` is reached at ``point``; ``bound`` is a certified bound on the extreme
    (no point does better); ``complete`` is False when the box budget ran out first.
    """

    value: float
    bound: float
    point: tuple[Fraction, ...]
    complete: bool
    boxes: int


class _Poly:
    """A polynomial's terms, ready for ball evaluation."""

    def __init__(self, poly: Any) -> None:
        self.terms = [(int(c), tuple(int(p) for p in m)) for m, c in zip(poly.monoms(), poly.coeffs(), strict=True)]

    def __call__(self, values: Sequence[Any]) -> Any:
        total = flint.arb(0)
        for coeff, monom in self.terms:
            term = flint.arb(coeff)
            for value, power in zip(values, monom, strict=True):
                if power:
                    term *= value**power
            total += term
        return total


def _ball(low: Any, high: Any) -> Any:
    """The ball holding [low, high] (python-flint fmpq ends)."""
    if low == high:
        return flint.arb(low)
    return flint.arb(low).union(flint.arb(high))


def _fmpq(value: Fraction) -> Any:
    return flint.fmpq(value.numerator, value.denominator)


def _fraction(value: Any) -> Fraction:
    return Fraction(int(value.p), int(value.q))


class _Search:
    def __init__(self, ratio: RatFunc, names: tuple[str, ...], sign: int) -> None:
        ring = ratio.ring
        # the ring's variables: s (absent here), the audited names, pi
        self.index = [ring.names.index(n) for n in names]
        self.size = len(ring.names)
        self.pi_index = ring.names.index("pi")
        self.num, self.den = _Poly(ratio.num), _Poly(ratio.den)
        self.slopes = []
        for i in self.index:
            top = ratio.num.derivative(i) * ratio.den - ratio.num * ratio.den.derivative(i)
            self.slopes.append(_Poly(top))
        self.sign = sign

    def values(self, box: Sequence[tuple[Fraction, Fraction]]) -> list[Any]:
        values = [flint.arb(0)] * self.size
        values[self.pi_index] = flint.arb.pi()
        for k, (low, high) in zip(self.index, box, strict=True):
            values[k] = _ball(low, high)
        return values

    def enclose(self, box: Sequence[tuple[Fraction, Fraction]]) -> Any:
        """R over the box: the natural extension, narrowed by the mean-value form
        R(c) + sum dR/dx_k(X) (X_k - c_k), whose excess shrinks with the square of the width."""
        values = self.values(box)
        den = self.den(values)
        natural = self.sign * self.num(values) / den
        if all(low == high for low, high in box):
            return natural
        centre = self.values([((low + high) / 2, (low + high) / 2) for low, high in box])
        form = self.sign * self.num(centre) / self.den(centre)
        square = den * den
        for k, slope in zip(self.index, self.slopes, strict=True):
            if values[k].rad() != 0:
                form += self.sign * slope(values) / square * (values[k] - centre[k])
        if not form.is_finite():
            return natural
        if not natural.is_finite():
            return form
        low = form.lower() if form.lower() > natural.lower() else natural.lower()
        high = form.upper() if form.upper() < natural.upper() else natural.upper()
        return low.union(high)

    def upper(self, box: Sequence[tuple[Fraction, Fraction]]) -> float:
        ball = self.enclose(box)
        if not ball.is_finite():
            return float("inf")
        return float(ball.upper())

    def point_value(self, point: Sequence[Fraction]) -> float:
        ball = self.enclose([(p, p) for p in point])
        return float(ball.mid()) if ball.is_finite() else float("-inf")

    def reduce(self, box: list[tuple[Fraction, Fraction]]) -> list[tuple[Fraction, Fraction]]:
        """Fix every part in which the (signed) ratio is certainly monotone over the box."""
        changed = True
        while changed:
            changed = False
            values = self.values(box)
            for k, slope in enumerate(self.slopes):
                low, high = box[k]
                if low == high:
                    continue
                d = self.sign * slope(values)
                if d >= 0:  # certainly (weakly) increasing over the box, or independent of the part
                    box[k] = (high, high)
                elif d <= 0:
                    box[k] = (low, low)
                else:
                    continue
                changed = True
                values = self.values(box)
        return box


def extreme(
    ratio: RatFunc,
    names: tuple[str, ...],
    box: Sequence[tuple[Fraction, Fraction]],
    largest: bool,
    check: Callable[[], None] | None = None,
) -> Extreme:
    """The largest (``largest``) or smallest value of ``ratio`` over ``box``.

    Parameters
    ----------
    ratio
        A rational function of the names (and pi) with no ``s``.
    names
        The ring names that vary, in the order of ``box``.
    box
        Exact (low, high) for each name.
    largest
        Whether to look for the largest value (else the smallest).
    check
        The time budget's check, called between boxes.

    Returns
    -------
    Extreme
        In R's own sign: the value reached and the certified bound.
    """
    with flint.ctx.workprec(PRECISION):
        return _extreme(ratio, names, box, largest, check)


def _extreme(
    ratio: RatFunc,
    names: tuple[str, ...],
    box: Sequence[tuple[Fraction, Fraction]],
    largest: bool,
    check: Callable[[], None] | None,
) -> Extreme:
    sign = 1 if largest else -1
    search = _Search(ratio, names, sign)
    box = [(_fmpq(low), _fmpq(high)) for low, high in box]
    best, where = float("-inf"), tuple(low for low, _ in box)
    corners = itertools.islice(itertools.product(*box), 1024)
    for corner in corners:
        value = search.point_value(corner)
        if value > best:
            best, where = value, tuple(corner)
    heap: list[tuple[float, int, list[tuple[Fraction, Fraction]]]] = [(-search.upper(box), 0, list(box))]
    counter, bound = 1, best
    while heap and counter < MAX_BOXES:
        if check is not None and counter % 64 == 0:
            check()
        _, _, current = heapq.heappop(heap)
        current = search.reduce(current)
        top = search.upper(current)
        mid = tuple((low + high) / 2 for low, high in current)
        value = search.point_value(mid)
        if value > best:
            best, where = value, mid
        if top <= best + TOLERANCE or all(low == high for low, high in current):
            continue
        k = max(range(len(current)), key=lambda i: (current[i][1] - current[i][0]) / current[i][1])
        low, high = current[k]
        half = (low + high) / 2
        for part in ((low, half), (half, high)):
            child = list(current)
            child[k] = part
            heapq.heappush(heap, (-search.upper(child), counter, child))
            counter += 1
    remaining = max((-h[0] for h in heap), default=best)
    bound = max(best, remaining)
    point = tuple(_fraction(p) for p in where)
    return Extreme(sign * best, sign * bound, point, bound <= best + TOLERANCE, counter)


def ratio_at(ratio: RatFunc, names: tuple[str, ...], point: Sequence[Fraction]) -> float:
    """R at one exact point, through a ball of :data:`PRECISION` bits (certified to far below a double's last digit)."""
    with flint.ctx.workprec(PRECISION):
        return _Search(ratio, names, 1).point_value([_fmpq(p) for p in point])


def ratio_ball(ratio: RatFunc, names: tuple[str, ...], point: Sequence[Fraction]) -> Any:
    """R at one exact point as a python-flint ball of :data:`PRECISION` bits."""
    with flint.ctx.workprec(PRECISION):
        return _Search(ratio, names, 1).enclose([(_fmpq(p), _fmpq(p)) for p in point])
