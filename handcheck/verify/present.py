"""Numbers as an engineer reads them: in the claim's own unit and form."""

from __future__ import annotations

import math
import re

import sympy

from handcheck.circuit.model import Circuit
from handcheck.verify.claims import Claim, to_complex
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.units import dim_name

__all__ = ["describe_frequency", "describe_rational", "format_number", "format_value"]

_NUMBER = re.compile(r"(\d+\.?\d*|\.\d+)")


def _significant(claim: Claim) -> int:
    """One digit more than the longest number the author wrote, at least 4."""
    written = [m.group(1).lstrip("0.") for m in _NUMBER.finditer(claim.text)]
    digits = max((len(w.replace(".", "")) for w in written), default=3)
    return max(4, min(digits + 1, 10))


def format_number(x: float, digits: int = 5) -> str:
    """``x`` to ``digits`` significant digits, without trailing noise."""
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    text = f"{x:.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        return f"{mantissa}e{int(exponent)}"
    return text


def format_value(value: Value, claim: Claim) -> str:
    """``value`` written in the claim's unit and form (real, rectangular or polar);
    a level in dB or dBm as 20*log10 of the ratio's size or 10*log10 of P / 1 mW."""
    if claim.unit_text in ("dB", "dBm") and value.dim == claim.dim:
        size = abs(to_complex(value.expr)) / float(claim.unit_factor)
        if size == 0:
            return f"-inf {claim.unit_text}"
        level = (20 if claim.unit_text == "dB" else 10) * math.log10(size)
        return f"{format_number(level, _significant(claim))} {claim.unit_text}"
    if value.dim == claim.dim and claim.unit_text:
        factor, unit = float(claim.unit_factor), claim.unit_text
    else:
        factor, unit = 1.0, dim_name(value.dim)
    number = to_complex(value.expr) / factor
    digits = _significant(claim)
    suffix = f" {unit}" if unit else ""
    is_complex = number.imag != 0 and abs(number.imag) > 1e-12 * abs(number)
    if claim.form == "polar" or (claim.form == "real" and is_complex):
        angle = math.atan2(number.imag, number.real)
        angle_text = (
            f"{format_number(math.degrees(angle), digits)} deg"
            if claim.angle_unit == "deg"
            else f"{format_number(angle, digits)} rad"
        )
        return f"{format_number(abs(number), digits)}{suffix} ∠ {angle_text}"
    if claim.form == "rect" or is_complex:
        sign = "-" if number.imag < 0 else "+"
        return f"{format_number(number.real, digits)} {sign} {format_number(abs(number.imag), digits)}j{suffix}"
    return f"{format_number(number.real, digits)}{suffix}"


def describe_frequency(circuit: Circuit) -> str:
    """``"60 Hz (w = 376.99 rad/s)"`` or ``"DC"``."""
    if circuit.omega == 0:
        return "DC"
    f = float(sympy.N(circuit.frequency, 15))
    w = float(sympy.N(circuit.omega, 15))
    return f"{format_number(f, 8)} Hz (w = {format_number(w, 8)} rad/s)"


def describe_function(wave: object, claim: Claim) -> str:
    """A true waveform as a short formula in t (5 significant digits), in the claim's unit."""
    try:
        expr = wave.as_expr()  # type: ignore[attr-defined]
    except (AttributeError, ValueError, NotImplementedError):
        return "see the record"
    if claim.unit_text:
        expr = expr / claim.unit_factor
    text = sympy.sstr(sympy.N(expr, 5))
    return f"{text} {claim.unit_text}".strip()


def describe_rational(expr: sympy.Expr, digits: int = 6) -> str:
    """A rational function of one variable as an author writes it: the denominator's
    leading coefficient 1, descending powers, ``^`` for powers, numbers to ``digits``
    significant digits (an integer of up to seven digits as it is).

    Parameters
    ----------
    expr
        An exact rational function, like a network function of s.
    digits
        Significant digits of a coefficient that is no short integer.

    Returns
    -------
    str

    Examples
    --------
    >>> s = sympy.Symbol("s")
    >>> describe_rational(2000000 / (2 * s**2 + 2000 * s + 2000000))
    '1000000/(s^2 + 1000*s + 1000000)'
    >>> describe_rational(s / (s + 1000 * sympy.pi))
    's/(s + 3141.59)'
    """
    variables = sorted(expr.free_symbols, key=str)
    if len(variables) != 1:
        return sympy.sstr(sympy.N(expr, digits)).replace("**", "^")
    var = variables[0]
    num, den = sympy.fraction(sympy.cancel(sympy.together(expr)))
    top = sympy.Poly(num, var).all_coeffs()
    bottom = sympy.Poly(den, var).all_coeffs()
    lead = bottom[0]
    top, bottom = [c / lead for c in top], [c / lead for c in bottom]
    numerator = _polynomial_text(top, str(var), digits)
    if len(bottom) == 1:
        return numerator
    if sum(1 for c in top if c != 0) > 1:
        numerator = f"({numerator})"
    return f"{numerator}/({_polynomial_text(bottom, str(var), digits)})"


def _polynomial_text(coefficients: list[sympy.Expr], var: str, digits: int) -> str:
    """``c0*s^n + c1*s^(n-1) + ...`` with zero terms left out and unit coefficients implied."""
    degree = len(coefficients) - 1
    text = ""
    for k, c in enumerate(coefficients):
        power = degree - k
        if c == 0:
            continue
        value = complex(sympy.N(c, 20))
        negative = value.real < 0 if value.real != 0 else value.imag < 0
        size = -c if negative else c
        if size.is_Integer and abs(int(size)) < 10**7:
            number = str(size)
        elif value.imag == 0:
            number = format_number(abs(value.real), digits)
        else:
            z = -value if negative else value
            sign_j = "-" if z.imag < 0 else "+"
            number = f"({format_number(z.real, digits)} {sign_j} {format_number(abs(z.imag), digits)}j)"
        monomial = "" if power == 0 else var if power == 1 else f"{var}^{power}"
        term = number if not monomial else monomial if number == "1" else f"{number}*{monomial}"
        sign = "-" if negative else "+"
        text = (f"-{term}" if negative else term) if not text else f"{text} {sign} {term}"
    return text or "0"
