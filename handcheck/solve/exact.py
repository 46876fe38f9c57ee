"""Short exact forms of sympy numbers, shared by the closed-form modules."""

from __future__ import annotations

from typing import Any

__all__ = ["as_sympy", "compact", "real_imag", "real_part", "short", "tidy", "transcendental"]


def as_sympy(x: Any) -> Any:
    """A number the program computed (int, Fraction, sympy) as a sympy number.

    Unlike ``sympy.sympify`` this never parses a string: text from a worksheet
    goes through ``worksheet.expr`` only.

    Raises
    ------
    TypeError
        For any other type (a string, a float that should have been exact).

    Examples
    --------
    >>> from fractions import Fraction
    >>> as_sympy(Fraction(3, 4))
    3/4
    """
    import fractions

    import sympy

    if isinstance(x, sympy.Basic):
        return x
    if isinstance(x, bool):
        raise TypeError("a truth value is not a number")
    if isinstance(x, int):
        return sympy.Integer(x)
    if isinstance(x, fractions.Fraction):
        return sympy.Rational(x.numerator, x.denominator)
    raise TypeError(f"not an exact number: {type(x).__name__}")


def tidy(x: Any) -> Any:
    """An exact number in a canonical-enough form: expanded, radicals out of denominators.

    Parameters
    ----------
    x : sympy number (or any other value, returned as it is)

    Returns
    -------
    sympy.Expr
    """
    import sympy

    if not isinstance(x, sympy.Basic) or x.is_Rational:
        return x
    if transcendental(x):
        return sympy.cancel(x)
    x = sympy.expand(x)
    if x.has(sympy.Pow):
        x = sympy.expand(sympy.radsimp(x))
    return x


def transcendental(x: Any) -> bool:
    """True when ``x`` holds pi or a function value (cos of a phase...): no radical tricks then.

    Parameters
    ----------
    x : sympy.Expr

    Returns
    -------
    bool
    """
    import sympy

    return x.has(sympy.pi, sympy.E) or bool(x.atoms(sympy.Function))


def compact(x: Any) -> Any:
    """A short exact form: one fraction (``sympy.cancel``) when transcendental numbers occur.

    Parameters
    ----------
    x : sympy number

    Returns
    -------
    sympy.Expr
    """
    import sympy

    if not isinstance(x, sympy.Basic) or x.is_Rational:
        return x
    if transcendental(x):
        return sympy.cancel(x)
    return tidy(x)


def real_part(value: Any) -> Any:
    """The real part of an exact number, written without ``re(...)``.

    Parameters
    ----------
    value : sympy number

    Returns
    -------
    sympy.Expr
    """
    return real_imag(value)[0]


def real_imag(value: Any) -> tuple[Any, Any]:
    """Real and imaginary parts of an exact number, each in a short exact form.

    Parameters
    ----------
    value : sympy number

    Returns
    -------
    (sympy.Expr, sympy.Expr)
    """
    import sympy

    if value.is_real:
        return value, sympy.Integer(0)
    re, im = sympy.expand_complex(value).as_real_imag()
    return compact(re), compact(im)


def short(value: Any) -> str:
    """A number in six digits, for messages.

    Parameters
    ----------
    value : sympy number or mpmath number

    Returns
    -------
    str
    """
    import mpmath

    from handcheck.solve.roots import WORK_DPS, approx

    with mpmath.workdps(WORK_DPS):
        return mpmath.nstr(approx(value).real, 6)
