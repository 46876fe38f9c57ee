"""Limits of a closed-form waveform: its final value and its steady-state phasors.

The final value is the constant part (pole s = 0) once every decaying term has gone
(the final-value theorem, lim s F(s) as s -> 0, where it applies; e.g. Ogata,
*Modern Control Engineering*, 5th ed., sec. 2-3, from memory); the steady phasor at
w is ``2 c exp(-j w d)`` summed over the undamped terms ``c exp(j w (t - d))``.
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING, Any

from handcheck.errors import CircuitError
from handcheck.solve.exact import compact, real_part
from handcheck.solve.roots import WORK_DPS
from handcheck.solve.terms import is_exact, to_mpf_time

if TYPE_CHECKING:  # pragma: no cover - typing only
    from handcheck.solve.timefunction import TimeFunction

__all__ = ["final_value", "polynomial_tail", "steady_phasor"]


def polynomial_tail(f: TimeFunction) -> list[Any] | None:
    """Exact coefficients (powers of t) of the pole-0 part after the last delay, if exact."""
    import sympy

    zero_terms = [t for t in f.terms if t.real_sign == 0 and t.imag_sign == 0]
    if not all(t.exact for t in zero_terms):
        return None
    tt = sympy.Symbol("t")
    poly = sympy.Integer(0)
    for term in zero_terms:
        poly += term.coefficient * (tt - term.delay) ** term.power
    poly = sympy.Poly(sympy.expand(poly), tt)
    coeffs = list(reversed(poly.all_coeffs())) if not poly.is_zero else [sympy.Integer(0)]
    return [real_part(c) for c in coeffs]


def final_value(f: TimeFunction) -> Any:
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

    if f.horizon is not None:
        raise CircuitError(
            f"{f.name} is driven by a repeating source, which never stops: it has no final value "
            "(its steady state is periodic, not constant)"
        )
    why = f.growth()
    if why is not None:
        raise CircuitError(f"{f.name} grows without bound ({why}): it has no final value")
    if f.persistent_frequencies():
        return None
    ramp = polynomial_tail(f)
    if ramp is not None:
        return ramp[0]
    with mpmath.workdps(WORK_DPS):
        total = mpmath.mpc(0)
        for term in f.terms:
            if term.real_sign == 0 and term.imag_sign == 0 and term.power == 0:
                total += term.numeric[0]
        return +total.real


def steady_phasor(f: TimeFunction, omega: Any) -> Any:
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
        zero = [t for t in f.terms if t.real_sign == 0 and t.imag_sign == 0 and t.power == 0]
        if all(t.exact for t in zero):
            return real_part(sum((t.coefficient for t in zero), sympy.Integer(0)))
        with mpmath.workdps(WORK_DPS):
            return +sum((t.numeric[0] for t in zero), mpmath.mpc(0)).real
    if isinstance(omega, (int, Fraction)) and not isinstance(omega, bool):
        omega = sympy.Rational(omega)
    exact_omega = omega if is_exact(omega) else None
    with mpmath.workdps(WORK_DPS):
        w = to_mpf_time(omega) if exact_omega is not None else mpmath.mpf(omega)
        tol = mpmath.mpf(10) ** (-(WORK_DPS - 10)) * abs(w)
        match = [
            t
            for t in f.terms
            if t.real_sign == 0 and t.imag_sign > 0 and t.power == 0 and abs(t.numeric[2].imag - w) <= tol
        ]
        if match and all(t.exact for t in match) and exact_omega is not None:
            total = sympy.Integer(0)
            for t in match:
                total += 2 * t.coefficient * sympy.exp(-sympy.I * exact_omega * t.delay)
            return compact(total)
        total = mpmath.mpc(0)
        for t in match:
            c, _, p, d = t.numeric
            total += 2 * c * mpmath.exp(-p * d)
        return total if match else sympy.Integer(0)
