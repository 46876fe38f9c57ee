"""The extremes of a closed-form waveform: its peak and its settling time.

Candidates for the peak are the limits at each delay and at the window's end, and
every zero of the derivative (bracketed on a fine grid, refined in mpmath; see
:mod:`handcheck.solve.pieces`). Beyond the last delay the decaying terms are bounded
by ``sum |c| t**n exp(Re(p) t)``, which fixes how far the search must go.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from handcheck.errors import CircuitError, LimitError
from handcheck.solve.exact import short
from handcheck.solve.pieces import (
    FloatGroups,
    Group,
    Segment,
    derivative_groups,
    group_value,
    illinois_root,
    log_magnitude,
    sample_grid,
    sign_change_brackets,
)
from handcheck.solve.roots import WORK_DPS, approx
from handcheck.solve.terms import Term, is_exact, to_mpf_time

if TYPE_CHECKING:  # pragma: no cover - typing only
    import mpmath

    from handcheck.solve.timefunction import TimeFunction

__all__ = ["critical_brackets", "peak", "refine_critical", "settling_time", "steady_crest", "tail_length"]

_TAIL = 1e-26  # the search beyond the last delay ends when the decaying terms are below this


def tail_bound(seg: Segment, u: float) -> float:
    """Bound on the decaying part of the last piece at local time ``u`` and after."""
    total = 0.0
    for g in seg.groups:
        if g.real_sign < 0:
            k = len(g.coeffs) - 1
            alpha = -float(g.pole.real)
            uu = max(u, k / alpha)
            lm = log_magnitude(g, uu)
            total += math.exp(lm) if lm > -700 else 0.0
    return total


def tail_length(f: TimeFunction, seg: Segment, level: float) -> float:
    """Local time in the last piece after which the decaying part stays below ``level``."""
    decaying = [g for g in seg.groups if g.real_sign < 0]
    if not decaying:
        return 0.0
    slow = min(-float(g.pole.real) for g in decaying)
    u = 1.0 / slow
    while tail_bound(seg, u) > level:
        u *= 2.0
        if u > 1e300:
            raise LimitError(f"{f.name}: the transient does not fade within the floating-point range")
    return u


def critical_brackets(seg: Segment, length: Any, scale: float) -> list[tuple[Any, Any]]:
    """Brackets (local times) of the critical points of the piece on ``(0, length)``.

    Each comes with the function's float value near it, used only to choose
    which brackets to refine.
    """
    import mpmath

    length_f = float(length)
    if length_f <= 0 or not seg.groups:
        return []
    grid = sample_grid(seg.groups, length_f, scale)
    dgroups = derivative_groups(seg.groups, 1)
    fprime = FloatGroups(dgroups)(grid)
    fvalue = FloatGroups(seg.groups)
    out = []
    for i in sign_change_brackets(fprime):
        a, b = grid[i], grid[i + 1]
        fa, fb = fprime[i], fprime[i + 1]
        guess = a if fa == fb else a - fa * (b - a) / (fb - fa)
        out.append(((mpmath.mpf(a), mpmath.mpf(b)), float(fvalue(guess))))
    return out


def refine_critical(seg: Segment, bracket: tuple[Any, Any]) -> Any:
    """The zero of the derivative inside ``bracket`` (local times), in mpmath."""
    dgroups = derivative_groups(seg.groups, 1)

    def fp(u: Any) -> Any:
        return group_value(dgroups, u).real

    a, b = bracket
    fa, fb = fp(a), fp(b)
    if fa == 0:
        return a
    if fb == 0:
        return b
    if (fa > 0) == (fb > 0):  # the float sign change was rounding noise
        return a if abs(group_value(seg.groups, a)) > abs(group_value(seg.groups, b)) else b
    return illinois_root(fp, a, b, fa, fb)


def _window(f: TimeFunction, segments: Any, t_end: Any, scale: float) -> tuple[Any, Any]:
    """The end of the peak search, and the steady crest beyond it (None with a ``t_end`` or a horizon).

    Called with mpmath's working precision set by :func:`peak`.
    """
    import mpmath

    asymptote = None
    if t_end is not None:
        end = f.check_time(t_end)
    elif f.horizon is not None:
        end = to_mpf_time(f.horizon)
    else:
        why = f.growth()
        if why is not None:
            raise CircuitError(f"{f.name} grows without bound ({why}): it has no peak")
        asymptote = steady_crest(f)
        last = segments[-1]
        end = last.start + mpmath.mpf(tail_length(f, last, _TAIL * scale))
        waves = f.persistent_frequencies()
        if waves:  # at least one period of the slowest persistent sinusoid beyond the transient
            end = max(end, last.start + mpmath.mpf(tail_length(f, last, 1e-3 * scale)) + 2 * mpmath.pi / min(waves))
    return end, asymptote


def _candidates(segments: Any, end: Any, scale: float) -> list[tuple[float, Any, Any, Segment | None]]:
    """(|f| as a float, time, value or None, segment) at each delay, the window's end and each critical bracket."""
    import mpmath

    candidates: list[tuple[float, Any, Any, Segment | None]] = []  # (|f| float, time, value-or-None, seg)
    for seg in segments:
        if seg.start > end:
            break
        stop = end if seg.end is None else min(seg.end, end)
        length = stop - seg.start
        right = group_value(seg.groups, mpmath.mpf(0)).real
        candidates.append((float(abs(right)), seg.start, right, None))
        if length > 0:
            left = group_value(seg.groups, length).real
            candidates.append((float(abs(left)), stop, left, None))
        for bracket, fval in critical_brackets(seg, length, scale):
            candidates.append((abs(fval), (seg.start, bracket), None, seg))
    return candidates


def peak(f: TimeFunction, t_end: Any = None) -> tuple[Any, Any]:
    """The largest absolute value for ``t > 0``, and when it occurs.

    Parameters
    ----------
    t_end : time, optional
        Search ``(0, t_end]`` only. By default the whole of ``t > 0`` (up to the
        horizon for a pulse-train response).

    Returns
    -------
    (mpmath.mpf, mpmath.mpf)
        The value itself (with its sign) and the time. The time is
        ``mpmath.inf`` when the largest value is only approached as ``t`` grows
        (a response settling monotonically onto its final value, or a
        sinusoidal steady state whose crest the transient never exceeds); the
        value is then that limit. At a jump the value is the limit from the
        side where it is larger.

    Raises
    ------
    CircuitError
        If the waveform holds an impulse (its peak is infinite) or grows
        without bound.

    Notes
    -----
    Candidates: the limits at each delay and at the window's end, and every
    zero of the derivative (bracketed on a fine grid, refined in mpmath). With
    no ``t_end`` the search ends where the decaying terms are bounded below
    ``1e-26`` of the waveform's size; beyond it only the steady part remains,
    whose crest (constant plus one sinusoid: ``|dc| + amplitude``) is compared.
    """
    import mpmath

    for imp in f.impulses:
        raise CircuitError(
            f"{f.name} holds an impulse (a Dirac delta of weight {short(imp.coefficient)}) at "
            f"t = {imp.delay} s from ideal switching, so its peak is infinite; add the series resistance "
            "of the source or switch to get a finite peak"
        )
    with mpmath.workdps(WORK_DPS):
        segments = f.segments
        scale = float(f.size_scale(segments[-1]))
        end, asymptote = _window(f, segments, t_end, scale)
        candidates = _candidates(segments, end, scale)
        best_value, best_time = None, None
        if candidates:
            top = max(c[0] for c in candidates)
            chosen = [c for c in candidates if c[0] >= top * (1 - 1e-6) - 1e-300]
            for _, place, known, piece in chosen:
                if piece is not None:
                    start, bracket = place
                    u = refine_critical(piece, bracket)
                    val, when = group_value(piece.groups, u).real, start + u
                else:
                    val, when = known, place
                if best_value is None:
                    best_value, best_time = +val, +when
                    continue
                gap = abs(val) - abs(best_value)
                tie = abs(gap) <= mpmath.mpf(10) ** (-20) * abs(best_value)
                # equal crests of both signs (a sinusoid): report the positive one
                if (gap > 0 and not tie) or (tie and val > 0 > best_value):
                    best_value, best_time = +val, +when
        if asymptote is not None and (
            best_value is None or abs(asymptote) - abs(best_value) > mpmath.mpf(10) ** (-45) * abs(asymptote)
        ):
            return +asymptote, mpmath.inf
        if best_value is None:
            return mpmath.mpf(0), mpmath.mpf(0)
        return best_value, best_time


def steady_crest(f: TimeFunction) -> Any:
    """Largest absolute value of the persistent part (constant and sinusoids)."""
    import mpmath

    seg = f.last_segment()
    scale = f.size_scale(seg)
    tiny = mpmath.mpf(10) ** (-(WORK_DPS - 15)) * scale
    steady = [g for g in seg.groups if g.real_sign == 0 and abs(g.coeffs[0]) > tiny]
    dc = sum((g.coeffs[0].real for g in steady if g.imag_sign == 0), mpmath.mpf(0))
    waves = [g for g in steady if g.imag_sign > 0]
    if not waves:
        return dc
    if len(waves) == 1:
        amplitude = 2 * abs(waves[0].coeffs[0])
        return (abs(dc) + amplitude) * (1 if dc >= 0 else -1)
    # several frequencies: search the steady part over many periods of the slowest one
    groups = tuple(Group(g.pole, (g.coeffs[0],), 0, g.imag_sign) for g in steady)  # both halves of each pair
    slowest = min(abs(g.pole.imag) for g in waves)
    span = 200 * 2 * mpmath.pi / slowest
    window = Segment(mpmath.mpf(0), span, groups)
    best = abs(dc)
    sign = 1
    for bracket, _ in critical_brackets(window, span, float(scale)):
        u = refine_critical(window, bracket)
        v = group_value(groups, u).real
        if abs(v) > best:
            best, sign = abs(v), (1 if v > 0 else -1)
    return best * sign


def settling_time(f: TimeFunction, band: Any, reference: Any = None) -> mpmath.mpf:
    """The time after which the waveform stays within a band around its final value.

    Parameters
    ----------
    band : number
        Fraction, e.g. ``0.02`` for a 2 % band (common practice).
    reference : number, optional
        The band is ``band * |reference|``; by default ``band * |final|``. When a
        sinusoid persists, the deviation is measured from the steady-state
        waveform and the default reference is its crest (``|dc| + amplitude``).

    Returns
    -------
    mpmath.mpf
        The last time the deviation equals the band; 0 if it never leaves it.

    Raises
    ------
    CircuitError
        For a waveform that grows, holds a pulse train, or settles to 0 with no
        reference given.
    """
    import mpmath

    if f.horizon is not None:
        raise CircuitError(
            f"{f.name} is driven by a repeating source and never settles; ask for its peak or values instead"
        )
    why = f.growth()
    if why is not None:
        raise CircuitError(f"{f.name} grows without bound ({why}): it never settles")
    with mpmath.workdps(WORK_DPS):
        fraction = to_mpf_time(band)
        if fraction <= 0:
            raise ValueError("the settling band must be a positive fraction, like 0.02 for 2 %")
        persistent = f.persistent_frequencies()
        if reference is None:
            ref = approx(f.final()).real if not persistent else steady_crest(f)
        else:
            ref = approx(reference).real if is_exact(reference) else mpmath.mpf(reference)
        if ref == 0:
            raise CircuitError(
                f"{f.name} settles to 0, so a band relative to the final value is empty; give a reference value"
            )
        threshold = fraction * abs(ref)
        deviation = _deviation_of(f)
        segments = deviation.segments
        last = segments[-1]
        scale = float(deviation.size_scale(last))
        tail = mpmath.mpf(tail_length(deviation, last, float(threshold) / 2))
        # walk the pieces backwards looking for the last excursion beyond the band
        for index in range(len(segments) - 1, -1, -1):
            seg = segments[index]
            stop = seg.end if seg.end is not None else seg.start + tail
            found = last_excursion(deviation, seg, stop - seg.start, threshold, scale)
            if found is None:
                if index > 0:
                    prev = segments[index - 1]
                    left = group_value(prev.groups, seg.start - prev.start).real
                    if abs(left) > threshold:
                        return +seg.start  # the deviation jumps into the band at this delay
                continue
            return +(seg.start + found)
        return mpmath.mpf(0)


def last_excursion(f: TimeFunction, seg: Segment, length: Any, threshold: Any, scale: float) -> Any:
    """Local time in ``[0, length]`` after which ``|f| <= threshold`` on this piece, or None.

    The piece is monotone between consecutive critical points, so the last
    critical point (or end) outside the band and the next one bound a single
    crossing of the band's edge.
    """
    import mpmath

    points: list[tuple[Any, Any, float | None]] = [(mpmath.mpf(0), None, None)]
    for bracket, fval in critical_brackets(seg, length, scale):
        points.append((None, bracket, fval))
    points.append((length, None, None))
    resolved: dict[int, Any] = {}

    def where(i: int) -> Any:
        if i not in resolved:
            u, bracket, _ = points[i]
            resolved[i] = u if bracket is None else refine_critical(seg, bracket)
        return resolved[i]

    margin = float(threshold) * (1 - 1e-6)
    for i in range(len(points) - 1, -1, -1):
        _, bracket, fval = points[i]
        if bracket is not None and fval is not None and abs(fval) < margin:
            continue  # clearly inside the band (the float value is only used to skip)
        u = where(i)
        value = group_value(seg.groups, u).real
        if abs(value) <= threshold:
            continue
        if i == len(points) - 1:
            return u  # outside at the end of the piece: it comes in at the next delay
        a, b = u, where(i + 1)
        target = threshold if value > 0 else -threshold

        def g(x: Any, target: Any = target) -> Any:
            return group_value(seg.groups, x).real - target

        return illinois_root(g, a, b, g(a), g(b))
    return None


def _deviation_of(f: TimeFunction) -> TimeFunction:
    """The waveform minus its steady state (constant and persistent sinusoids), for t >= 0."""
    import mpmath

    with mpmath.workdps(WORK_DPS):
        terms = []
        for term in f.terms:
            c, n, p, d = term.numeric
            if term.real_sign < 0:
                terms.append(Term(c, n, p, term.delay, term.real_sign, term.imag_sign))
                continue
            if term.delay == 0:
                continue  # steady from the start: cancels with its own steady state
            terms.append(Term(c, n, p, term.delay, term.real_sign, term.imag_sign))
            terms.append(Term(-c * mpmath.exp(-p * d), n, p, 0 * term.delay, term.real_sign, term.imag_sign))
        return type(f)(tuple(terms), name=f.name)
