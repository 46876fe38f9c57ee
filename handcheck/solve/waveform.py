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
import itertools
import math
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property
from typing import TYPE_CHECKING, Any

from handcheck.errors import CircuitError, LimitError
from handcheck.solve.roots import WORK_DPS, approx

if TYPE_CHECKING:  # pragma: no cover - typing only
    import mpmath
    import sympy

__all__ = ["DIGITS", "Impulse", "Term", "TimeFunction", "to_mpf_time"]

#: Significant digits every reported number carries at least.
DIGITS = 30

_MAX_SAMPLES = 4_000_000  # grid points per analysis, in total
_NEGLIGIBLE = 1e-22  # a term below this fraction of the waveform's size no longer sets the grid
_TAIL = 1e-26  # the search beyond the last delay ends when the decaying terms are below this
_MANY_TERMS = 256  # beyond this many terms, values come from the pieces between delays


def _is_exact(value: Any) -> bool:
    import sympy

    return isinstance(value, sympy.Basic)


@dataclass(frozen=True)
class Term:
    """``coefficient * (t - delay)**power * exp(pole*(t - delay))`` for ``t >= delay``, 0 before.

    ``coefficient`` and ``pole`` are exact sympy numbers or ``mpmath.mpc`` values;
    ``delay`` is exact. ``real_sign`` and ``imag_sign`` are the exact signs of the
    pole's real and imaginary parts. ``hint`` optionally carries the coefficient and
    pole already evaluated to :data:`WORK_DPS` digits (``(c, p)`` as ``mpmath.mpc``),
    so that long pulse trains are not evaluated term by term again.
    """

    coefficient: Any
    power: int
    pole: Any
    delay: Any
    real_sign: int
    imag_sign: int
    hint: tuple[Any, Any] | None = field(default=None, compare=False, repr=False)

    @property
    def exact(self) -> bool:
        return _is_exact(self.coefficient) and _is_exact(self.pole)

    @cached_property
    def numeric(self) -> tuple[Any, int, Any, Any]:
        """``(c, n, p, d)`` as mpmath numbers at :data:`WORK_DPS` digits."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            if self.hint is not None:
                return self.hint[0], self.power, self.hint[1], to_mpf_time(self.delay)
            return approx(self.coefficient), self.power, approx(self.pole), to_mpf_time(self.delay)


@dataclass(frozen=True)
class Impulse:
    """``coefficient * delta^(order)(t - delay)``: a Dirac impulse (order 0) or its derivative."""

    coefficient: Any
    order: int
    delay: Any


def to_mpf_time(t: Any) -> mpmath.mpf:
    """A time in seconds as an mpmath number, without rounding exact input.

    Parameters
    ----------
    t : sympy number, int, fractions.Fraction, float or mpmath.mpf
        A float is taken at its exact binary value.

    Returns
    -------
    mpmath.mpf
    """
    from fractions import Fraction

    import mpmath
    import sympy

    with mpmath.workdps(WORK_DPS):
        if isinstance(t, bool):
            raise TypeError("a time must be a number")
        if isinstance(t, mpmath.mpf):
            return t
        if isinstance(t, (int, float)):
            return mpmath.mpf(t)
        if isinstance(t, Fraction):
            return mpmath.mpf(t.numerator) / t.denominator
        if isinstance(t, sympy.Basic):
            if t.is_Rational:
                return mpmath.mpf(int(t.p)) / int(t.q)
            value = approx(t)
            if value.imag != 0:
                raise ValueError(f"a time must be real, not {t}")
            return value.real
    raise TypeError(f"a time must be a number, not {type(t).__name__}")


def _binomial(n: int, k: int) -> int:
    return math.comb(n, k)


# --------------------------------------------------------------------------
# pieces between delays: each live pole with a polynomial in the local time
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Group:
    """``exp(p u) * sum_j coeffs[j] u**j`` in the local time ``u = t - start``."""

    pole: Any  # mpmath.mpc
    coeffs: tuple[Any, ...]  # mpmath.mpc
    real_sign: int
    imag_sign: int


@dataclass(frozen=True)
class _Segment:
    start: Any  # mpmath.mpf
    end: Any  # mpmath.mpf or None for the last (unbounded) piece
    groups: tuple[_Group, ...]


def _shift(group: _Group, delta: Any) -> _Group:
    """The same function written in the local time of a start later by ``delta``."""
    import mpmath

    p, a = group.pole, group.coeffs
    scale = mpmath.exp(p * delta)
    new = []
    for j in range(len(a)):
        acc = mpmath.mpc(0)
        for m in range(j, len(a)):
            acc += a[m] * _binomial(m, j) * delta ** (m - j)
        new.append(acc * scale)
    return _Group(p, tuple(new), group.real_sign, group.imag_sign)


def _group_value(groups: tuple[_Group, ...], u: Any, order: int = 0) -> Any:
    """Sum of the groups (or their ``order``-th derivative) at local time ``u``, in mpmath."""
    import mpmath

    total = mpmath.mpc(0)
    for g in groups:
        coeffs = list(g.coeffs)
        for _ in range(order):
            coeffs = [
                g.pole * coeffs[j] + ((j + 1) * coeffs[j + 1] if j + 1 < len(coeffs) else 0) for j in range(len(coeffs))
            ]
        poly = mpmath.mpc(0)
        for c in reversed(coeffs):
            poly = poly * u + c
        total += poly * mpmath.exp(g.pole * u)
    return total


def _derivative_groups(groups: tuple[_Group, ...], order: int) -> tuple[_Group, ...]:
    out = []
    for g in groups:
        coeffs = list(g.coeffs)
        for _ in range(order):
            coeffs = [
                g.pole * coeffs[j] + ((j + 1) * coeffs[j + 1] if j + 1 < len(coeffs) else 0) for j in range(len(coeffs))
            ]
        out.append(_Group(g.pole, tuple(coeffs), g.real_sign, g.imag_sign))
    return tuple(out)


class _FloatGroups:
    """The groups in double precision, for placing grids and choosing brackets only."""

    def __init__(self, groups: tuple[_Group, ...]) -> None:
        import numpy as np

        self.poles = np.array([complex(g.pole) for g in groups], dtype=complex)
        width = max((len(g.coeffs) for g in groups), default=1)
        self.coeffs = np.zeros((len(groups), width), dtype=complex)
        for i, g in enumerate(groups):
            for j, c in enumerate(g.coeffs):
                self.coeffs[i, j] = complex(c)

    def __call__(self, u: Any) -> Any:
        import numpy as np

        u = np.asarray(u, dtype=float)
        total = np.zeros(u.shape, dtype=complex)
        with np.errstate(over="raise", invalid="raise"):
            try:
                for i in range(len(self.poles)):
                    poly = np.zeros(u.shape, dtype=complex)
                    for c in self.coeffs[i, ::-1]:
                        poly = poly * u + c
                    total += poly * np.exp(self.poles[i] * u)
            except FloatingPointError:
                raise LimitError(
                    "the waveform grows beyond the floating-point range inside the time window; "
                    "ask for a shorter window"
                ) from None
        return total.real


def _log_magnitude(g: _Group, u: float) -> float:
    """log of ``sum |a_j| u**j * exp(Re(p) u)`` (a bound on the group's size)."""
    return _log_size([abs(complex(c)) for c in g.coeffs], float(g.pole.real), u)


def _log_size(mags: list[float], rate: float, u: float) -> float:
    mag = 0.0
    for j, c in enumerate(mags):
        mag += c * (u**j if u > 0 else (1.0 if j == 0 else 0.0))
    if mag == 0.0:
        return -math.inf
    return math.log(mag) + rate * u


def _fade_time(g: _Group, level: float) -> float:
    """Local time after which a decaying group stays below ``exp(level)`` (a bound)."""
    alpha = -float(g.pole.real)
    if alpha <= 0:
        return math.inf
    mags = [abs(complex(c)) for c in g.coeffs]
    k = len(mags) - 1
    u = max(k / alpha, 0.0)  # beyond its hump, u**j exp(-alpha u) decreases for every j <= k
    if _log_size(mags, -alpha, u) <= level:
        return u
    hi = max(u, 1.0 / alpha)
    while _log_size(mags, -alpha, hi) > level:
        hi *= 2.0
        if hi > 1e300:
            return math.inf
    lo = u
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if _log_size(mags, -alpha, mid) > level:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-9 * hi:
            break
    return hi


def _grid(groups: tuple[_Group, ...], length: float, scale: float) -> Any:
    """Local times on ``[0, length]``, finer than a tenth of every live time scale."""
    import numpy as np

    level = math.log(scale * _NEGLIGIBLE) if scale > 0 else -math.inf
    fade = [_fade_time(g, level) for g in groups]
    fades = sorted({0.0, length, *(min(f, length) for f in fade)})
    pieces = []
    total = 0
    for a, b in itertools.pairwise(fades):
        if b <= a:
            continue
        live = [g for g, f in zip(groups, fade, strict=True) if f > a and complex(g.pole) != 0]
        rates = [abs(complex(g.pole)) for g in live]
        h = 0.1 / max(rates) if rates else (b - a) / 64
        n = max(math.ceil((b - a) / h) + 1, 17)
        total += n
        if total > _MAX_SAMPLES:
            raise LimitError(
                "the waveform needs more than "
                f"{_MAX_SAMPLES} samples to search for its extremes (time scales too far apart, or a "
                "window of very many periods); ask for a shorter window"
            )
        pieces.append(np.linspace(a, b, n))
    if not pieces:
        return np.array([0.0, length])
    return np.unique(np.concatenate(pieces))


def _illinois(fun: Any, a: Any, b: Any, fa: Any, fb: Any) -> Any:
    """A root of ``fun`` in ``[a, b]`` where ``fa`` and ``fb`` differ in sign (mpmath)."""
    import mpmath

    tol = mpmath.mpf(10) ** (-(DIGITS + 8)) * max(abs(a), abs(b), mpmath.mpf(10) ** -30)
    side = 0
    for _ in range(400):
        if fa == 0:
            return a
        if fb == 0:
            return b
        c = b - fb * (b - a) / (fb - fa)
        if not (min(a, b) < c < max(a, b)):
            c = (a + b) / 2
        fc = fun(c)
        if fc == 0:
            return c
        if (fc > 0) == (fb > 0):
            b, fb = c, fc
            if side == -1:
                fa /= 2
            side = -1
        else:
            a, fa = c, fc
            if side == 1:
                fb /= 2
            side = 1
        if abs(b - a) <= tol:
            break
    return b if abs(fb) < abs(fa) else a


def _sign_change_brackets(values: Any) -> list[int]:
    """Indices i with a sign change (or an exact zero) between samples i and i+1."""
    import numpy as np

    s = np.sign(values)
    idx = np.nonzero((s[:-1] * s[1:] < 0) | (s[1:] == 0))[0]
    return [int(i) for i in idx]


# --------------------------------------------------------------------------
# the waveform
# --------------------------------------------------------------------------


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
        exact = _is_exact(factor)

        def scale(c: Any) -> Any:
            if exact and _is_exact(c):
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
        return all(term.exact for term in self.terms) and all(_is_exact(i.coefficient) for i in self.impulses)

    def _check_time(self, t: Any) -> Any:
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
            t = self._check_time(t)
            if len(self.terms) > _MANY_TERMS:  # a long pulse train: sum the few live groups of t's piece
                starts = [seg.start for seg in self._segments]
                seg = self._segments[bisect.bisect_right(starts, t) - 1]
                return +_group_value(seg.groups, t - seg.start).real
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

    def error_bound(self, t: Any) -> mpmath.mpf:
        """An absolute bound on the rounding error of ``self(t)``.

        ``10**-(WORK_DPS - 15)`` times the sum of the terms' sizes at ``t`` (the
        residues and poles carry :data:`WORK_DPS` digits; 15 are left for their
        rounding). Where it is not far below ``|self(t)|`` (terms cancelling, as at a
        far node of a long ladder just after a step) fewer than 30 digits of the
        value are significant.
        """
        import mpmath

        with mpmath.workdps(WORK_DPS):
            _, size = self._sum_at(self._check_time(t), WORK_DPS)
            return size * mpmath.mpf(10) ** (15 - WORK_DPS)

    def value(self, t: Any) -> float:
        """The value at time ``t`` as a Python float (for plotting and reports)."""
        return float(self(t))

    def derivative_at(self, t: Any, order: int = 1) -> mpmath.mpf:
        """The ``order``-th time derivative at ``t`` (right limit; impulses excluded), at 30+ digits."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            t = self._check_time(t)
            total = mpmath.mpc(0)
            for term in self.terms:
                c, n, p, d = term.numeric
                if d > t:
                    continue
                tau = t - d
                factor = mpmath.mpc(0)
                for j in range(0, min(order, n) + 1):
                    factor += (
                        _binomial(order, j)
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
            return _real_exact(sum((t.coefficient for t in now), sympy.Integer(0)))
        return self(0)

    def _growth(self) -> str | None:
        """Why the waveform grows without bound, or None when it stays bounded."""
        import mpmath

        seg = self._last_segment()
        scale = self._scale(seg)
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

    def _exact_polynomial_tail(self) -> list[Any] | None:
        """Exact coefficients (powers of t) of the pole-0 part after the last delay, if exact."""
        import sympy

        zero_terms = [t for t in self.terms if t.real_sign == 0 and t.imag_sign == 0]
        if not all(t.exact for t in zero_terms):
            return None
        tt = sympy.Symbol("t")
        poly = sympy.Integer(0)
        for term in zero_terms:
            poly += term.coefficient * (tt - term.delay) ** term.power
        poly = sympy.Poly(sympy.expand(poly), tt)
        coeffs = list(reversed(poly.all_coeffs())) if not poly.is_zero else [sympy.Integer(0)]
        return [_real_exact(c) for c in coeffs]

    def final(self) -> Any:
        """The limit as ``t`` grows without bound.

        Returns
        -------
        sympy.Expr, mpmath.mpf or None
            Exact when the pole-zero terms are exact (they always are: the pole
            ``s = 0`` is rational). None when a sinusoid persists: then use
            :meth:`steady_phasor`.

        Raises
        ------
        CircuitError
            If the waveform grows without bound, or is driven by a pulse train.
        """
        import mpmath

        if self.horizon is not None:
            raise CircuitError(
                f"{self.name} is driven by a repeating source, which never stops: it has no final value "
                "(its steady state is periodic, not constant)"
            )
        why = self._growth()
        if why is not None:
            raise CircuitError(f"{self.name} grows without bound ({why}): it has no final value")
        if self._persistent_frequencies():
            return None
        ramp = self._exact_polynomial_tail()
        if ramp is not None:
            return ramp[0]
        with mpmath.workdps(WORK_DPS):
            total = mpmath.mpc(0)
            for term in self.terms:
                if term.real_sign == 0 and term.imag_sign == 0 and term.power == 0:
                    total += term.numeric[0]
            return +total.real

    def _persistent_frequencies(self) -> list[Any]:
        import mpmath

        seg = self._last_segment()
        scale = self._scale(seg)
        with mpmath.workdps(WORK_DPS):
            tiny = mpmath.mpf(10) ** (-(WORK_DPS - 15)) * scale
            return [g.pole.imag for g in seg.groups if g.real_sign == 0 and g.imag_sign > 0 and abs(g.coeffs[0]) > tiny]

    def steady_frequencies(self) -> tuple[Any, ...]:
        """Angular frequencies (rad/s) of the sinusoids that persist, as 30+-digit numbers."""
        return tuple(self._persistent_frequencies())

    def steady_phasor(self, omega: Any) -> Any:
        """The phasor (peak convention) of the persistent sinusoid at ``omega`` rad/s.

        The steady-state part at that frequency is ``Re(X exp(j omega t))``; ``X`` is
        returned. ``omega = 0`` gives the constant (DC) part.

        Parameters
        ----------
        omega : sympy number or mpmath.mpf
            Angular frequency in rad/s.

        Returns
        -------
        sympy.Expr or mpmath.mpc
            Exact when the terms at that frequency are exact; 0 when there is none.
        """
        import mpmath
        import sympy

        if omega == 0:
            zero = [t for t in self.terms if t.real_sign == 0 and t.imag_sign == 0 and t.power == 0]
            if all(t.exact for t in zero):
                return _real_exact(sum((t.coefficient for t in zero), sympy.Integer(0)))
            with mpmath.workdps(WORK_DPS):
                return +sum((t.numeric[0] for t in zero), mpmath.mpc(0)).real
        if isinstance(omega, (int, Fraction)) and not isinstance(omega, bool):
            omega = sympy.Rational(omega)
        exact_omega = omega if _is_exact(omega) else None
        with mpmath.workdps(WORK_DPS):
            w = to_mpf_time(omega) if exact_omega is not None else mpmath.mpf(omega)
            tol = mpmath.mpf(10) ** (-(WORK_DPS - 10)) * abs(w)
            match = [
                t
                for t in self.terms
                if t.real_sign == 0 and t.imag_sign > 0 and t.power == 0 and abs(t.numeric[2].imag - w) <= tol
            ]
            if match and all(t.exact for t in match) and exact_omega is not None:
                total = sympy.Integer(0)
                for t in match:
                    total += 2 * t.coefficient * sympy.exp(-sympy.I * exact_omega * t.delay)
                from handcheck.solve.laplace import compact

                return compact(total)
            total = mpmath.mpc(0)
            for t in match:
                c, _, p, d = t.numeric
                total += 2 * c * mpmath.exp(-p * d)
            return total if match else sympy.Integer(0)

    # ----- pieces between delays --------------------------------------------

    @cached_property
    def _breakpoints(self) -> tuple[Any, ...]:
        """Exact distinct delays, sorted, always starting with 0."""
        import sympy

        delays = {sympy.Integer(0)} | {t.delay for t in self.terms}
        return tuple(sorted(delays))

    @cached_property
    def _segments(self) -> tuple[_Segment, ...]:
        """The waveform on each interval between delays, as groups in local time."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            by_delay: dict[Any, list[Term]] = {}
            for term in self.terms:
                by_delay.setdefault(term.delay, []).append(term)
            groups: dict[Any, _Group] = {}
            segments = []
            points = self._breakpoints
            previous = None
            for i, b in enumerate(points):
                start = to_mpf_time(b)
                if previous is not None:
                    delta = start - previous
                    groups = {k: _shift(g, delta) for k, g in groups.items()}
                for term in by_delay.get(b, []):
                    c, n, p, _ = term.numeric
                    g = groups.get(p)
                    coeffs = list(g.coeffs) if g else []
                    while len(coeffs) <= n:
                        coeffs.append(mpmath.mpc(0))
                    coeffs[n] += c
                    groups[p] = _Group(p, tuple(coeffs), term.real_sign, term.imag_sign)
                end = to_mpf_time(points[i + 1]) if i + 1 < len(points) else None
                segments.append(_Segment(start, end, tuple(groups.values())))
                previous = start
            return tuple(segments)

    def _last_segment(self) -> _Segment:
        return self._segments[-1]

    def _scale(self, seg: _Segment) -> Any:
        """A size for the waveform: the largest group magnitude at any piece's start."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            best = mpmath.mpf(0)
            for s in self._segments:
                for g in s.groups:
                    best = max(best, sum((abs(c) for c in g.coeffs), mpmath.mpf(0)))
            return best if best > 0 else mpmath.mpf(1)

    def _tail_bound(self, seg: _Segment, u: float) -> float:
        """Bound on the decaying part of the last piece at local time ``u`` and after."""
        total = 0.0
        for g in seg.groups:
            if g.real_sign < 0:
                k = len(g.coeffs) - 1
                alpha = -float(g.pole.real)
                uu = max(u, k / alpha)
                lm = _log_magnitude(g, uu)
                total += math.exp(lm) if lm > -700 else 0.0
        return total

    def _tail_length(self, seg: _Segment, level: float) -> float:
        """Local time in the last piece after which the decaying part stays below ``level``."""
        decaying = [g for g in seg.groups if g.real_sign < 0]
        if not decaying:
            return 0.0
        slow = min(-float(g.pole.real) for g in decaying)
        u = 1.0 / slow
        while self._tail_bound(seg, u) > level:
            u *= 2.0
            if u > 1e300:
                raise LimitError(f"{self.name}: the transient does not fade within the floating-point range")
        return u

    def _extremes(self, seg: _Segment, length: Any, scale: float) -> list[tuple[Any, Any]]:
        """Brackets (local times) of the critical points of the piece on ``(0, length)``.

        Each comes with the function's float value near it, used only to choose
        which brackets to refine.
        """
        import mpmath

        length_f = float(length)
        if length_f <= 0 or not seg.groups:
            return []
        grid = _grid(seg.groups, length_f, scale)
        dgroups = _derivative_groups(seg.groups, 1)
        fprime = _FloatGroups(dgroups)(grid)
        fvalue = _FloatGroups(seg.groups)
        out = []
        for i in _sign_change_brackets(fprime):
            a, b = grid[i], grid[i + 1]
            fa, fb = fprime[i], fprime[i + 1]
            guess = a if fa == fb else a - fa * (b - a) / (fb - fa)
            out.append(((mpmath.mpf(a), mpmath.mpf(b)), float(fvalue(guess))))
        return out

    def _refine_critical(self, seg: _Segment, bracket: tuple[Any, Any]) -> Any:
        """The zero of the derivative inside ``bracket`` (local times), in mpmath."""
        dgroups = _derivative_groups(seg.groups, 1)

        def fp(u: Any) -> Any:
            return _group_value(dgroups, u).real

        a, b = bracket
        fa, fb = fp(a), fp(b)
        if fa == 0:
            return a
        if fb == 0:
            return b
        if (fa > 0) == (fb > 0):  # the float sign change was rounding noise
            return a if abs(_group_value(seg.groups, a)) > abs(_group_value(seg.groups, b)) else b
        return _illinois(fp, a, b, fa, fb)

    # ----- peak ------------------------------------------------------------------

    def peak(self, t_end: Any = None) -> tuple[Any, Any]:
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

        for imp in self.impulses:
            raise CircuitError(
                f"{self.name} holds an impulse (a Dirac delta of weight {_short(imp.coefficient)}) at "
                f"t = {imp.delay} s from ideal switching, so its peak is infinite; add the series resistance "
                "of the source or switch to get a finite peak"
            )
        with mpmath.workdps(WORK_DPS):
            segments = self._segments
            scale = float(self._scale(segments[-1]))
            asymptote = None
            if t_end is not None:
                end = self._check_time(t_end)
            elif self.horizon is not None:
                end = to_mpf_time(self.horizon)
            else:
                why = self._growth()
                if why is not None:
                    raise CircuitError(f"{self.name} grows without bound ({why}): it has no peak")
                asymptote = self._steady_crest()
                last = segments[-1]
                end = last.start + mpmath.mpf(self._tail_length(last, _TAIL * scale))
                waves = self._persistent_frequencies()
                if waves:  # at least one period of the slowest persistent sinusoid beyond the transient
                    end = max(
                        end, last.start + mpmath.mpf(self._tail_length(last, 1e-3 * scale)) + 2 * mpmath.pi / min(waves)
                    )
            candidates: list[tuple[float, Any, Any, _Segment | None]] = []  # (|f| float, time, value-or-None, seg)
            for seg in segments:
                if seg.start > end:
                    break
                stop = end if seg.end is None else min(seg.end, end)
                length = stop - seg.start
                right = _group_value(seg.groups, mpmath.mpf(0)).real
                candidates.append((float(abs(right)), seg.start, right, None))
                if length > 0:
                    left = _group_value(seg.groups, length).real
                    candidates.append((float(abs(left)), stop, left, None))
                for bracket, fval in self._extremes(seg, length, scale):
                    candidates.append((abs(fval), (seg.start, bracket), None, seg))
            best_value, best_time = None, None
            if candidates:
                top = max(c[0] for c in candidates)
                chosen = [c for c in candidates if c[0] >= top * (1 - 1e-6) - 1e-300]
                for _, place, known, piece in chosen:
                    if piece is not None:
                        start, bracket = place
                        u = self._refine_critical(piece, bracket)
                        val, when = _group_value(piece.groups, u).real, start + u
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

    def _steady_crest(self) -> Any:
        """Largest absolute value of the persistent part (constant and sinusoids)."""
        import mpmath

        seg = self._last_segment()
        scale = self._scale(seg)
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
        groups = tuple(_Group(g.pole, (g.coeffs[0],), 0, g.imag_sign) for g in steady)  # both halves of each pair
        slowest = min(abs(g.pole.imag) for g in waves)
        span = 200 * 2 * mpmath.pi / slowest
        window = _Segment(mpmath.mpf(0), span, groups)
        best = abs(dc)
        sign = 1
        for bracket, _ in self._extremes(window, span, float(scale)):
            u = self._refine_critical(window, bracket)
            v = _group_value(groups, u).real
            if abs(v) > best:
                best, sign = abs(v), (1 if v > 0 else -1)
        return best * sign

    # ----- settling ------------------------------------------------------------------

    def settling_time(self, band: Any, reference: Any = None) -> mpmath.mpf:
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

        if self.horizon is not None:
            raise CircuitError(
                f"{self.name} is driven by a repeating source and never settles; ask for its peak or values instead"
            )
        why = self._growth()
        if why is not None:
            raise CircuitError(f"{self.name} grows without bound ({why}): it never settles")
        with mpmath.workdps(WORK_DPS):
            fraction = to_mpf_time(band)
            if fraction <= 0:
                raise ValueError("the settling band must be a positive fraction, like 0.02 for 2 %")
            persistent = self._persistent_frequencies()
            if reference is None:
                ref = approx(self.final()).real if not persistent else self._steady_crest()
            else:
                ref = approx(reference).real if _is_exact(reference) else mpmath.mpf(reference)
            if ref == 0:
                raise CircuitError(
                    f"{self.name} settles to 0, so a band relative to the final value is empty; give a reference value"
                )
            threshold = fraction * abs(ref)
            deviation = self._deviation()
            segments = deviation._segments
            last = segments[-1]
            scale = float(deviation._scale(last))
            tail = mpmath.mpf(deviation._tail_length(last, float(threshold) / 2))
            # walk the pieces backwards looking for the last excursion beyond the band
            for index in range(len(segments) - 1, -1, -1):
                seg = segments[index]
                stop = seg.end if seg.end is not None else seg.start + tail
                found = deviation._last_excursion(seg, stop - seg.start, threshold, scale)
                if found is None:
                    if index > 0:
                        prev = segments[index - 1]
                        left = _group_value(prev.groups, seg.start - prev.start).real
                        if abs(left) > threshold:
                            return +seg.start  # the deviation jumps into the band at this delay
                    continue
                return +(seg.start + found)
            return mpmath.mpf(0)

    def _last_excursion(self, seg: _Segment, length: Any, threshold: Any, scale: float) -> Any:
        """Local time in ``[0, length]`` after which ``|f| <= threshold`` on this piece, or None.

        The piece is monotone between consecutive critical points, so the last
        critical point (or end) outside the band and the next one bound a single
        crossing of the band's edge.
        """
        import mpmath

        points: list[tuple[Any, Any, float | None]] = [(mpmath.mpf(0), None, None)]
        for bracket, fval in self._extremes(seg, length, scale):
            points.append((None, bracket, fval))
        points.append((length, None, None))
        resolved: dict[int, Any] = {}

        def where(i: int) -> Any:
            if i not in resolved:
                u, bracket, _ = points[i]
                resolved[i] = u if bracket is None else self._refine_critical(seg, bracket)
            return resolved[i]

        margin = float(threshold) * (1 - 1e-6)
        for i in range(len(points) - 1, -1, -1):
            _, bracket, fval = points[i]
            if bracket is not None and fval is not None and abs(fval) < margin:
                continue  # clearly inside the band (the float value is only used to skip)
            u = where(i)
            value = _group_value(seg.groups, u).real
            if abs(value) <= threshold:
                continue
            if i == len(points) - 1:
                return u  # outside at the end of the piece: it comes in at the next delay
            a, b = u, where(i + 1)
            target = threshold if value > 0 else -threshold

            def g(x: Any, target: Any = target) -> Any:
                return _group_value(seg.groups, x).real - target

            return _illinois(g, a, b, g(a), g(b))
        return None

    def _deviation(self) -> TimeFunction:
        """The waveform minus its steady state (constant and persistent sinusoids), for t >= 0."""
        import mpmath

        with mpmath.workdps(WORK_DPS):
            terms = []
            for term in self.terms:
                c, n, p, d = term.numeric
                if term.real_sign < 0:
                    terms.append(Term(c, n, p, term.delay, term.real_sign, term.imag_sign))
                    continue
                if term.delay == 0:
                    continue  # steady from the start: cancels with its own steady state
                terms.append(Term(c, n, p, term.delay, term.real_sign, term.imag_sign))
                terms.append(Term(-c * mpmath.exp(-p * d), n, p, 0 * term.delay, term.real_sign, term.imag_sign))
            return TimeFunction(tuple(terms), name=self.name)

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
                re_c = _real_exact(c)
                piece = re_c * tau**term.power * sympy.exp(term.pole * tau)
            else:
                re_p, im_p = _real_imag(term.pole)
                re_c, im_c = _real_imag(c)
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
                _real_exact(imp.coefficient) * sympy.DiracDelta(t - imp.delay, imp.order)
                if imp.order
                else _real_exact(imp.coefficient) * sympy.DiracDelta(t - imp.delay)
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
    kept = tuple(Impulse(c, order, delay) for (order, delay), c in impulses.items() if not (_is_exact(c) and c == 0))
    initial = None
    if a.exact_initial is not None and b.exact_initial is not None:
        initial = a.exact_initial + b.exact_initial
    horizons = [h for h in (a.horizon, b.horizon) if h is not None]
    horizon = min(horizons) if horizons else None
    return TimeFunction(tuple(terms), kept, initial, horizon, name)


def _real_exact(value: Any) -> Any:
    """The real part of an exact number, written without ``re(...)``."""
    return _real_imag(value)[0]


def _real_imag(value: Any) -> tuple[Any, Any]:
    """Real and imaginary parts of an exact number, each in a short exact form."""
    import sympy

    from handcheck.solve.laplace import compact

    if value.is_real:
        return value, sympy.Integer(0)
    re, im = sympy.expand_complex(value).as_real_imag()
    return compact(re), compact(im)


def _short(value: Any) -> str:
    import mpmath

    with mpmath.workdps(WORK_DPS):
        return mpmath.nstr(approx(value).real, 6)
