"""Waveforms of a linear circuit: finite sums of exponential terms, and their analysis.

A :class:`TimeFunction` is

    f(t) = sum_k  c_k (t - d_k)**n_k exp(p_k (t - d_k)) H(t - d_k)
           + sum_m  a_m delta^(j_m)(t - e_m)

with exact delays ``d_k`` (sympy rationals), poles ``p_k`` and coefficients ``c_k``
exact (sympy) wherever the pole has a closed form and otherwise numbers carrying at
least 30 significant digits (``mpmath.mpc`` computed at :data:`WORK_DPS` digits).
``H`` is the unit step (right-continuous: a term is on at ``t = d_k``) and the
impulses are Dirac deltas (or their derivatives) from ideal switching.

Evaluation is at :data:`WORK_DPS` digits with mpmath. The extreme values and the
settling time are found on each piece between delays by locating the zeros of the
derivative: the derivative is sampled on a grid finer than a tenth of the fastest
live time scale (``1/|p|``; a term is dropped from the grid rule once it is below
``1e-22`` of the waveform's size), every sign change is bracketed, and the root is
refined in mpmath by the Illinois variant of regula falsi (Dahlquist and Bjorck,
*Numerical Methods*, 1974, sec. 6.2, from memory) to at least 30 digits. Floating
point numbers are used only to place the grid and to choose which brackets to
refine; every value returned is computed in mpmath. Beyond the last delay the
decaying terms are bounded by ``sum |c| t**n exp(Re(p) t)``, which fixes how far the
search must go.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass
from fractions import Fraction
from functools import cached_property
from typing import TYPE_CHECKING, Any

from handcheck.errors import CircuitError, LimitError
from handcheck.solve.exact import real_imag, real_part
from handcheck.solve.pieces import DIGITS, Group, Segment, group_value, shift_group
from handcheck.solve.roots import WORK_DPS, approx
from handcheck.solve.terms import Impulse, Term, is_exact, to_mpf_time

if TYPE_CHECKING:  # pragma: no cover - typing only
    import mpmath
    import sympy

__all__ = ["DIGITS", "Impulse", "Term", "TimeFunction", "to_mpf_time"]

_MANY_TERMS = 256  # beyond this many terms, values come from the pieces between delays


@dataclass(frozen=True)
class TimeFunction:
    """A voltage or current of the circuit as a function of time, for ``t >= 0``.

    Parameters
    ----------
    terms : tuple of Term
        The exponential terms (see the module docstring).
    impulses : tuple of Impulse
        Dirac impulses from ideal switching; they have no value at any ``t > 0`` other
        than their own instant, but make the peak infinite.
    exact_initial : sympy.Expr or None
        The exact value at ``t = 0+`` when known (from the initial-value theorem).
    horizon : sympy.Expr or None
        When not None the terms are complete only before this time (a pulse train,
        expanded period by period, whose next edge falls here); evaluation at or
        after it is refused.
    name : str
        The quantity's label, for messages (``"voltage(out)"``, ``"current(L1)"``).
    """

    terms: tuple[Term, ...]
    impulses: tuple[Impulse, ...] = ()
    exact_initial: Any = None
    horizon: Any = None
    name: str = "f"

    # ----- arithmetic ------------------------------------------------------------

    def __neg__(self) -> TimeFunction:
        return self * -1

    def __add__(self, other: TimeFunction) -> TimeFunction:
        if not isinstance(other, TimeFunction):
            return NotImplemented
        return _merge(self, other, f"{self.name} + {other.name}")

    def __sub__(self, other: TimeFunction) -> TimeFunction:
        if not isinstance(other, TimeFunction):
            return NotImplemented
        return _merge(self, other * -1, f"{self.name} - {other.name}")

    def __mul__(self, factor: Any) -> TimeFunction:
        """Scaled by an exact number (int, Fraction, sympy) or an mpmath number."""
        import mpmath
        import sympy

        if isinstance(factor, bool) or not isinstance(factor, (int, Fraction, sympy.Basic, mpmath.mpf, mpmath.mpc)):
            return NotImplemented
        if isinstance(factor, (int, Fraction)):
            factor = sympy.Rational(factor)
        exact = is_exact(factor)

        def scale(c: Any) -> Any:
            if exact and is_exact(c):
                return c * factor
            with mpmath.workdps(WORK_DPS):
                return approx(c) * approx(factor)

        terms = tuple(
            Term(scale(t.coefficient), t.power, t.pole, t.delay, t.real_sign, t.imag_sign) for t in self.terms
        )
        impulses = tuple(Impulse(scale(i.coefficient), i.order, i.delay) for i in self.impulses)
        initial = self.exact_initial * factor if exact and self.exact_initial is not None else None
        return TimeFunction(terms, impulses, initial, self.horizon, self.name)

    __rmul__ = __mul__

    # ----- basic evaluation ------------------------------------------------

    @property
    def exact(self) -> bool:
        """True when every pole and coefficient is exact (``as_expr`` is available)."""
        return all(term.exact for term in self.terms) and all(is_exact(i.coefficient) for i in self.impulses)

    def check_time(self, t: Any) -> Any:
        import mpmath

        value = to_mpf_time(t)
        if value < 0:
            raise ValueError(f"{self.name} is described for t >= 0 only; t = {t} was asked for")
        if self.horizon is not None and value >= to_mpf_time(self.horizon):
            raise LimitError(
                f"{self.name} is driven by a repeating source written out up to (not including) "
                f"t = {mpmath.nstr(to_mpf_time(self.horizon), 6)} s; give a longer [transient] span "
                "to evaluate it at later times"
            )
        return value

    def __call__(self, t: Any) -> mpmath.mpf:
        """The value at time ``t`` (seconds; the right limit at a delay), at 30+ digits.

        Parameters
        ----------
        t : sympy Rational, int, Fraction, float or mpmath.mpf
            ``t >= 0``. At ``t = 0`` this is the value at ``0+``.

        Returns
        -------
        mpmath.mpf
            Computed at :data:`WORK_DPS` digits; the imaginary rounding residue of
            conjugate pairs is dropped.

        Notes
        -----
        The error is below ``10**-30`` times the largest term at ``t``. Where the
        terms cancel (a far node of a long ladder soon after a step) and all terms
        are exact, the sum is redone with more digits until 30 significant digits of
        the value itself survive.
        """
        import mpmath

        with mpmath.workdps(WORK_DPS):
            t = self.check_time(t)
            if len(self.terms) > _MANY_TERMS:  # a long pulse train: sum the few live groups of t's piece
                starts = [seg.start for seg in self.segments]
                seg = self.segments[bisect.bisect_right(starts, t) - 1]
                return +group_value(seg.groups, t - seg.start).real
            total, size = self._sum_at(t, WORK_DPS)
            # Cancellation: fewer than DIGITS + 5 digits of the sum survive. Exact terms are
            # then evaluated again with more digits; numerical ones carry WORK_DPS digits
            # relative to the largest term (see the Notes).
            dps = WORK_DPS
            while (
                abs(total) < size * mpmath.mpf(10) ** (DIGITS + 5 - dps)
                and self.exact
                and dps < 8 * WORK_DPS
                and total != 0
            ):
                dps *= 2
                total, size = self._sum_at(t, dps)
            return +total.real

    def _sum_at(self, t: Any, dps: int) -> tuple[Any, Any]:
        """The sum of the terms at ``t`` and the sum of their sizes, at ``dps`` digits."""
        import mpmath

        with mpmath.workdps(dps):
            total = mpmath.mpc(0)
            size = mpmath.mpf(0)
            for term in self.terms:
                if dps == WORK_DPS:
                    c, n, p, d = term.numeric
                else:
                    c, n, p, d = (
                        approx(term.coefficient, dps),
                        term.power,
                        approx(term.pole, dps),
                        approx(term.delay, dps).real,
                    )
                if d > t:
                    continue
                tau = t - d
                value = c * tau**n * mpmath.exp(p * tau)
                total += value
                size += abs(value)
            return total, size

    def value(self, t: Any) -> float:
        """The value at time ``t`` as a Python float (for plotting and reports)."""
        return float(self(t))

    def derivative_at(self, t: Any, order: int = 1) -> mpmath.mpf:
        """The ``order``-th time derivative at ``t`` (right limit; impulses excluded), at 30+ digits."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            t = self.check_time(t)
            total = mpmath.mpc(0)
            for term in self.terms:
                c, n, p, d = term.numeric
                if d > t:
                    continue
                tau = t - d
                factor = mpmath.mpc(0)
                for j in range(0, min(order, n) + 1):
                    factor += (
                        math.comb(order, j)
                        * (math.factorial(n) // math.factorial(n - j))
                        * tau ** (n - j)
                        * p ** (order - j)
                    )
                total += c * factor * mpmath.exp(p * tau)
            return +total.real

    # ----- limits ------------------------------------------------------------

    def initial(self) -> Any:
        """The value at ``t = 0+``.

        Returns
        -------
        sympy.Expr or mpmath.mpf
            Exact (the initial-value theorem, ``lim s F(s)`` as ``s`` grows, or the
            exact terms) where available, else a 30+-digit mpmath number.
        """
        import sympy

        if self.exact_initial is not None:
            return self.exact_initial
        now = [t for t in self.terms if t.delay == 0 and t.power == 0]
        if all(t.exact for t in now):
            return real_part(sum((t.coefficient for t in now), sympy.Integer(0)))
        return self(0)

    def growth(self) -> str | None:
        """Why the waveform grows without bound, or None when it stays bounded."""
        import mpmath

        seg = self.last_segment()
        scale = self.size_scale(seg)
        with mpmath.workdps(WORK_DPS):
            tiny = mpmath.mpf(10) ** (-(WORK_DPS - 15)) * scale
            for g in seg.groups:
                if g.real_sign > 0 and any(abs(c) > tiny for c in g.coeffs):
                    return f"it has a pole at s = {mpmath.nstr(g.pole, 8)} in the right half-plane"
                if g.real_sign == 0 and any(abs(c) > tiny for c in g.coeffs[1:]):
                    if g.imag_sign == 0:
                        return "it has a repeated pole at s = 0 (it ramps)"
                    w = mpmath.nstr(abs(g.pole.imag), 8)
                    return f"it is driven at its own undamped natural frequency {w} rad/s (resonance)"
        # pole 0 exactly: ramps must cancel exactly
        ramp = self._exact_polynomial_tail()
        if ramp is not None and any(c != 0 for c in ramp[1:]):
            return "it has a repeated pole at s = 0 (it ramps)"
        return None

    def final(self) -> Any:
        """The limit as ``t`` grows without bound; see :func:`~handcheck.solve.limits.final_value`.

        Returns
        -------
        sympy.Expr, mpmath.mpf or None
            None when a sinusoid persists (use :meth:`steady_phasor`).
        """
        from handcheck.solve.limits import final_value

        return final_value(self)

    def steady_phasor(self, omega: Any) -> Any:
        """The peak phasor of the persistent sinusoid at ``omega`` rad/s; see
        :func:`~handcheck.solve.limits.steady_phasor`.

        Parameters
        ----------
        omega : sympy number or mpmath.mpf
            Angular frequency in rad/s (0: the constant part).

        Returns
        -------
        sympy.Expr or mpmath.mpc
        """
        from handcheck.solve.limits import steady_phasor

        return steady_phasor(self, omega)

    def _exact_polynomial_tail(self) -> list[Any] | None:
        from handcheck.solve.limits import polynomial_tail

        return polynomial_tail(self)

    def persistent_frequencies(self) -> list[Any]:
        import mpmath

        seg = self.last_segment()
        scale = self.size_scale(seg)
        with mpmath.workdps(WORK_DPS):
            tiny = mpmath.mpf(10) ** (-(WORK_DPS - 15)) * scale
            return [g.pole.imag for g in seg.groups if g.real_sign == 0 and g.imag_sign > 0 and abs(g.coeffs[0]) > tiny]

    # ----- pieces between delays --------------------------------------------

    @cached_property
    def _breakpoints(self) -> tuple[Any, ...]:
        """Exact distinct delays, sorted, always starting with 0."""
        import sympy

        delays = {sympy.Integer(0)} | {t.delay for t in self.terms}
        return tuple(sorted(delays))

    @cached_property
    def segments(self) -> tuple[Segment, ...]:
        """The waveform on each interval between delays, as groups in local time."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            by_delay: dict[Any, list[Term]] = {}
            for term in self.terms:
                by_delay.setdefault(term.delay, []).append(term)
            groups: dict[Any, Group] = {}
            segments = []
            points = self._breakpoints
            previous = None
            for i, b in enumerate(points):
                start = to_mpf_time(b)
                if previous is not None:
                    delta = start - previous
                    groups = {k: shift_group(g, delta) for k, g in groups.items()}
                for term in by_delay.get(b, []):
                    c, n, p, _ = term.numeric
                    g = groups.get(p)
                    coeffs = list(g.coeffs) if g else []
                    while len(coeffs) <= n:
                        coeffs.append(mpmath.mpc(0))
                    coeffs[n] += c
                    groups[p] = Group(p, tuple(coeffs), term.real_sign, term.imag_sign)
                end = to_mpf_time(points[i + 1]) if i + 1 < len(points) else None
                segments.append(Segment(start, end, tuple(groups.values())))
                previous = start
            return tuple(segments)

    def last_segment(self) -> Segment:
        return self.segments[-1]

    def size_scale(self, seg: Segment) -> Any:
        """A size for the waveform: the largest group magnitude at any piece's start."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            best = mpmath.mpf(0)
            for s in self.segments:
                for g in s.groups:
                    best = max(best, sum((abs(c) for c in g.coeffs), mpmath.mpf(0)))
            return best if best > 0 else mpmath.mpf(1)

    # ----- extremes (solve/extremes.py) ---------------------------------------------

    def peak(self, t_end: Any = None) -> tuple[Any, Any]:
        """The largest absolute value for ``t > 0``, and when it occurs; see :func:`~handcheck.solve.extremes.peak`.

        Parameters
        ----------
        t_end : time, optional
            Search ``(0, t_end]`` only.

        Returns
        -------
        (mpmath.mpf, mpmath.mpf)
        """
        from handcheck.solve.extremes import peak

        return peak(self, t_end)

    def settling_time(self, band: Any, reference: Any = None) -> mpmath.mpf:
        """When the waveform last leaves a band around its final value; see
        :func:`~handcheck.solve.extremes.settling_time`.

        Parameters
        ----------
        band : number
            Fraction, e.g. ``0.02`` for a 2 % band.
        reference : number, optional
            The band is ``band * |reference|``.

        Returns
        -------
        mpmath.mpf
        """
        from handcheck.solve.extremes import settling_time

        return settling_time(self, band, reference)

    # ----- closed form -----------------------------------------------------------

    def as_expr(self, t: sympy.Symbol | None = None) -> sympy.Expr:
        """The waveform as a sympy expression in ``t`` (valid for ``t > 0``).

        Delayed terms carry ``Heaviside(t - d)``; impulses ``DiracDelta``. Conjugate
        pole pairs are written as ``exp(sigma t) (A cos(w t) + B sin(w t))``.

        Parameters
        ----------
        t : sympy.Symbol, optional
            The time symbol; ``Symbol("t")`` by default.

        Raises
        ------
        CircuitError
            If a pole has no closed form (a factor of the characteristic polynomial
            of degree three or more that does not split).
        """
        import sympy

        if not self.exact:
            raise CircuitError(
                f"{self.name} has poles with no closed form (roots of a factor of degree three or more); "
                "its closed form cannot be written exactly, but its values are known to 30 digits"
            )
        t = t if t is not None else sympy.Symbol("t")
        expr = sympy.Integer(0)
        for term in self.terms:
            if term.imag_sign < 0:
                continue  # written with its conjugate partner
            tau = t - term.delay
            c = term.coefficient
            if term.imag_sign == 0:
                re_c = real_part(c)
                piece = re_c * tau**term.power * sympy.exp(term.pole * tau)
            else:
                re_p, im_p = real_imag(term.pole)
                re_c, im_c = real_imag(c)
                piece = (
                    2
                    * tau**term.power
                    * sympy.exp(re_p * tau)
                    * (re_c * sympy.cos(im_p * tau) - im_c * sympy.sin(im_p * tau))
                )
            if term.delay != 0:
                piece *= sympy.Heaviside(tau)
            expr += piece
        for imp in self.impulses:
            expr += (
                real_part(imp.coefficient) * sympy.DiracDelta(t - imp.delay, imp.order)
                if imp.order
                else real_part(imp.coefficient) * sympy.DiracDelta(t - imp.delay)
            )
        return expr


def _merge(a: TimeFunction, b: TimeFunction, name: str) -> TimeFunction:
    """The sum of two waveforms, equal terms (pole, power, delay) combined."""
    import mpmath
    import sympy

    sums: dict[tuple[Any, int, Any], list[Term]] = {}
    for term in a.terms + b.terms:
        sums.setdefault((term.numeric[2], term.power, term.delay), []).append(term)
    terms = []
    for group in sums.values():
        first = group[0]
        if len(group) == 1:
            terms.append(first)
            continue
        if all(t.exact for t in group):
            total = sympy.expand(sum((t.coefficient for t in group), sympy.Integer(0)))
            if total == 0:
                continue
            terms.append(Term(total, first.power, first.pole, first.delay, first.real_sign, first.imag_sign))
        else:
            with mpmath.workdps(WORK_DPS):
                total = sum((t.numeric[0] for t in group), mpmath.mpc(0))
            terms.append(Term(total, first.power, first.numeric[2], first.delay, first.real_sign, first.imag_sign))
    impulses: dict[tuple[int, Any], Any] = {}
    for imp in a.impulses + b.impulses:
        key = (imp.order, imp.delay)
        impulses[key] = impulses[key] + imp.coefficient if key in impulses else imp.coefficient
    kept = tuple(Impulse(c, order, delay) for (order, delay), c in impulses.items() if not (is_exact(c) and c == 0))
    initial = None
    if a.exact_initial is not None and b.exact_initial is not None:
        initial = a.exact_initial + b.exact_initial
    horizons = [h for h in (a.horizon, b.horizon) if h is not None]
    horizon = min(horizons) if horizons else None
    return TimeFunction(tuple(terms), kept, initial, horizon, name)
