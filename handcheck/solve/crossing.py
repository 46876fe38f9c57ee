"""The first time a closed-form waveform reaches a level: ``crossing_time(Q, "1.2 V")``.

On each piece between delays the waveform is monotone between consecutive zeros of
its derivative (bracketed on the grid of :mod:`handcheck.solve.pieces`, refined in
mpmath), so ``f - level`` changes sign at most once between them; the first such
interval (or the first delay at which the waveform jumps across the level) holds the
first crossing; a crest that meets the level to within ``1e-45`` of the waveform's
size counts as reaching it (the level of an exact peak). The root is refined by the Illinois variant of regula falsi and then
certified: ``f - level`` is evaluated at :data:`~handcheck.solve.roots.WORK_DPS` + 20
digits at both ends of an interval of relative width ``1e-35`` around it and must
change sign there, so the reported time is within ``1e-35`` (relative) of a true
crossing. A first-order response ``A + B exp(p t)`` with exact ``A``, ``B``, ``p``
gets the exact time ``ln((level - A)/B)/p`` (for an RC charge from rest to ``Vs``,
``t = -RC ln(1 - level/Vs)``; e.g. Hayt & Kemmerly, *Engineering Circuit Analysis*,
8th ed., ch. 8, from memory).
"""

from __future__ import annotations

import itertools
from typing import TYPE_CHECKING, Any

from handcheck.errors import CircuitError, LimitError
from handcheck.solve.exact import short
from handcheck.solve.extremes import critical_brackets, refine_critical, tail_length
from handcheck.solve.pieces import group_value, illinois_root
from handcheck.solve.roots import WORK_DPS, approx
from handcheck.solve.terms import to_mpf_time

if TYPE_CHECKING:  # pragma: no cover - typing only
    from handcheck.solve.timefunction import TimeFunction

__all__ = ["crossing_time"]

_TAIL = 1e-26  # beyond the last delay the search ends when the decaying terms are below this (relative)
_CERTIFY = 35  # the certified interval's relative width is 10**-_CERTIFY


def crossing_time(f: TimeFunction, level: Any, unit: str = "") -> Any:
    """The first time ``t >= 0`` at which ``f(t)`` equals ``level``, from either side.

    Parameters
    ----------
    f : TimeFunction
    level : sympy number
        The level, in f's coherent SI unit.
    unit : str
        f's unit word, for messages.

    Returns
    -------
    sympy.Expr or mpmath.mpf
        Exact for a first-order response ``A + B exp(p t)`` with exact data; else
        certified to a relative ``1e-35`` (see the module docstring). At a delay
        where the waveform jumps across the level, that delay.

    Raises
    ------
    CircuitError
        If the level is never reached (the message gives the waveform's range), the
        waveform grows without bound, or it is driven by a repeating source whose
        written-out span ends first.
    """
    import mpmath

    with mpmath.workdps(WORK_DPS):
        target = approx(level).real
        segments = f.segments
        if f.horizon is not None:
            end = to_mpf_time(f.horizon)
        else:
            why = f.growth()
            if why is not None:
                raise CircuitError(f"{f.name} grows without bound ({why}): its crossing time is not searched")
            last = segments[-1]
            scale = float(f.size_scale(last))
            end = last.start + mpmath.mpf(tail_length(f, last, _TAIL * scale))
            waves = f.persistent_frequencies()
            if waves:  # a full period of the slowest persistent sinusoid beyond the transient
                end += 2 * mpmath.pi / min(waves)
        scale = float(f.size_scale(segments[-1]))
        seen: list[Any] = []  # values met on the way, for the message
        left = None  # the value just before the current piece's start
        for index, seg in enumerate(segments):
            if seg.start > end:
                break
            stop = end if seg.end is None else min(seg.end, end)
            length = stop - seg.start

            def g(u: Any, seg: Any = seg) -> Any:
                return group_value(seg.groups, u).real - target

            here = g(mpmath.mpf(0))
            seen.append(here + target)
            if here == 0 or (left is not None and (left > 0) != (here > 0)):
                return f._breakpoints[index]  # the exact delay (0 included)
            found = _first_in_piece(seg, g, here, length, scale, seen, target)
            if found is not None:
                return _exact_or(f, level, +(seg.start + found))
            left = g(length)
            seen.append(left + target)
        raise CircuitError(_never(f, level, seen, unit))


def _first_in_piece(seg: Any, g: Any, g0: Any, length: Any, scale: float, seen: list[Any], target: Any) -> Any:
    """Local time of the first root of ``g`` on ``(0, length]`` of this piece, or None."""
    import mpmath

    a, ga = mpmath.mpf(0), g0
    # lazily: the critical points are refined only up to the first crossing
    points = itertools.chain(
        (refine_critical(seg, bracket) for bracket, _ in critical_brackets(seg, length, scale)), [length]
    )
    touch = mpmath.mpf(10) ** (-(WORK_DPS - 15)) * scale  # a crest that meets the level (g is quadratic there)
    for b in points:
        if b <= a:
            continue
        gb = g(b)
        seen.append(gb + target)
        if abs(gb) <= touch:
            return b
        if (ga > 0) != (gb > 0):
            return _certified(g, illinois_root(g, a, b, ga, gb), a, b)
        a, ga = b, gb
    return None


def _certified(g: Any, root: Any, a: Any, b: Any) -> Any:
    """``root`` once ``g`` is seen to change sign across ``root * (1 +- 1e-35)`` at higher precision."""
    import mpmath

    with mpmath.workdps(WORK_DPS + 20):
        width = mpmath.mpf(10) ** (-_CERTIFY) * max(abs(root), mpmath.mpf(10) ** -30 * abs(b - a))
        lo, hi = max(a, root - width), min(b, root + width)
        glo, ghi = g(lo), g(hi)
        if glo == 0 or ghi == 0 or (glo > 0) != (ghi > 0):
            return +root
        # regula falsi stalls where the waveform is flat at the level (just below a crest):
        # bisect the bracket instead, keeping the sign change inside
        ga, gb = g(a), g(b)
        if ga != 0 and gb != 0 and (ga > 0) != (gb > 0):
            for _ in range(600):
                if b - a <= width:
                    return (a + b) / 2
                mid = (a + b) / 2
                gm = g(mid)
                if gm == 0:
                    return mid
                if (gm > 0) == (ga > 0):
                    a, ga = mid, gm
                else:
                    b = mid
    raise LimitError("the crossing time could not be certified to 35 digits (the waveform is too flat at the level)")


def _exact_or(f: TimeFunction, level: Any, found: Any) -> Any:
    """The exact ``ln((level - A)/B)/p`` when f is ``A + B exp(p t)`` with exact data and it agrees."""
    import mpmath
    import sympy

    if not f.exact or f.impulses or any(t.delay != 0 or t.power != 0 for t in f.terms):
        return found
    by_pole: dict[Any, Any] = {}
    for t in f.terms:
        by_pole[t.pole] = by_pole.get(t.pole, 0) + t.coefficient
    constant = by_pole.pop(sympy.Integer(0), sympy.Integer(0))
    if len(by_pole) != 1:
        return found
    ((pole, weight),) = by_pole.items()
    if not (pole.is_real and pole.is_nonzero and weight.is_real and weight.is_nonzero and constant.is_real):
        return found
    ratio = (level - constant) / weight
    if not ratio.is_positive:
        return found
    exact = sympy.log(ratio) / pole
    with mpmath.workdps(WORK_DPS):
        if abs(approx(exact).real - found) <= mpmath.mpf(10) ** (-30) * max(abs(found), mpmath.mpf(10) ** -30):
            return exact
    return found  # pragma: no cover - the two agree whenever the form applies


def _never(f: TimeFunction, level: Any, seen: list[Any], unit: str) -> str:
    import mpmath

    def show(x: Any) -> str:
        return f"{short(x)} {unit}".strip()

    low, high = min(seen), max(seen)
    start = show(seen[0]) if seen else show(0)
    if f.horizon is not None:
        until = mpmath.nstr(to_mpf_time(f.horizon), 6)
        return (
            f"{f.name} does not reach {show(level)} up to t = {until} s, where the written-out repeating source "
            f"ends: it starts at {start} and stays between {show(low)} and {show(high)}; give a longer [transient] span"
        )
    final = f.final()
    if final is None:
        ending = "then swings in its steady state"
    else:
        ending = f"ends at {show(final)}"
        if abs(approx(final).real - approx(level).real) <= mpmath.mpf(10) ** (-25) * max(abs(approx(final)), 1):
            return (
                f"{f.name} never reaches {show(level)}: it starts at {start} and only approaches "
                "that level as t grows without bound"
            )
    return (
        f"{f.name} never reaches {show(level)}: from t = 0 it starts at {start}, {ending}, and stays "
        f"between {show(low)} and {show(high)}"
    )
