"""The terms of a closed-form waveform: exponential terms and impulses, with exact times.

``coefficient * (t - delay)**power * exp(pole*(t - delay))`` for ``t >= delay`` (0
before), and Dirac impulses ``coefficient * delta^(order)(t - delay)``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING, Any

from handcheck.solve.roots import WORK_DPS, approx

if TYPE_CHECKING:  # pragma: no cover - typing only
    import mpmath

__all__ = ["Impulse", "Term", "is_exact", "to_mpf_time"]


def is_exact(value: Any) -> bool:
    """Whether a number is an exact sympy number (not an mpmath one).

    Parameters
    ----------
    value : number

    Returns
    -------
    bool
    """
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
        return is_exact(self.coefficient) and is_exact(self.pole)

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


# --------------------------------------------------------------------------
# the waveform
# --------------------------------------------------------------------------
