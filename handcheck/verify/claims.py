"""Claims as written, and tolerances.

A claim is a number with a unit (``35.81 ohm``), a rectangular value
(``12.3 - 4.5j ohm``: the trailing unit applies to both parts) or a polar value
(``0.63 A ∠ -22.1 deg``, ASCII ``/_`` for ∠; an angle with no unit is in degrees).

The "digits" tolerance is half a unit in the last digit written, applied to each
written number separately: real and imaginary part of a rectangular claim,
magnitude and angle of a polar one (the usual reading of a rounded figure, common
practice). A percentage tolerance bounds the relative error of the whole value.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction
from itertools import pairwise
from typing import Literal

import mpmath
import sympy

from handcheck.errors import HandcheckError, LimitError, ParseError, UnitError, WorksheetError
from handcheck.worksheet.evaluate import Value, evaluate, unit_of
from handcheck.worksheet.expr import Binary, Name, Number, Unary, one_line, parse, printable, walk
from handcheck.worksheet.units import DIMENSIONLESS, Dim, dim_of
from handcheck.worksheet.unittext import split_unit

__all__ = ["Claim", "Tolerance", "agrees", "read_claim", "read_tolerance", "to_complex"]

#: Working precision (decimal digits) of every numerical comparison.
DIGITS = 30
#: Relative slack for comparisons: a few units in the last place of a double, for the
#: one rounding of each exact value to floating point (docs/worksheet.md, Tolerances).
SLACK = 1e-15
#: Widest angle resolution a polar claim may have (radians): a quarter turn.
_WIDEST_ANGLE = math.pi / 2

Form = Literal["real", "rect", "polar", "function", "laplace", "list"]

#: The time variable of a claimed time function, in seconds.
TIME = sympy.Symbol("t", real=True)
#: The Laplace variable of a claimed network function, in rad/s (the solver's own s).
LAPLACE = sympy.Symbol("s")


@dataclass(frozen=True)
class Tolerance:
    """Either "digits" (half a unit in the last digit written) or a relative bound."""

    relative: float | None = None  # None means "digits"

    def __str__(self) -> str:
        return "digits" if self.relative is None else f"{self.relative * 100:g}%"


def read_tolerance(text: str, *, file: str | None = None, line: int | None = None) -> Tolerance:
    """Read ``"digits"`` or a percentage such as ``"0.5%"``."""
    cleaned = text.strip()
    if cleaned == "digits":
        return Tolerance()
    match = re.fullmatch(r"(\d+(?:\.\d*)?|\.\d+)\s*%", cleaned)
    if not match:
        raise WorksheetError(
            f'tolerance "{printable(text)}" must be "digits" or a percentage like "0.5%"', file=file, line=line
        )
    value = float(match.group(1)) / 100
    if not 0 < value < 1:
        raise WorksheetError(
            f'tolerance "{printable(text)}" must be more than 0% and less than 100%', file=file, line=line
        )
    return Tolerance(value)


@dataclass(frozen=True)
class Claim:
    """A claimed value: exact, with the resolution of each written number.

    ``resolution`` is (real, imaginary) for real and rectangular claims and
    (magnitude, angle in radians) for polar ones, in SI units; a real claim has 0 for
    the imaginary resolution. ``unit_text`` and ``unit_factor`` describe the unit
    the author wrote, to show expected values in it.
    """

    text: str
    value: Value
    form: Form
    resolution: tuple[float, float]
    unit_text: str
    unit_factor: sympy.Expr
    angle_unit: str = "deg"
    items: tuple[Claim, ...] = ()  # the values of a list claim ("-500 + 866j, -1000 rad/s")
    angle: float | None = None  # a polar claim's angle as written, in radians (not wrapped)

    @property
    def dim(self) -> Dim:
        return self.value.dim


def _resolution(digits: str) -> Fraction:
    """Half a unit in the last digit of a literal such as ``"35.81"`` or ``"2.2e-6"``."""
    mantissa, _, exponent = digits.lower().partition("e")
    decimals = len(mantissa.partition(".")[2])
    power = -decimals + (int(exponent) if exponent else 0)
    return Fraction(1, 2) * Fraction(10) ** power


def _split_unit(text: str) -> tuple[str, str]:
    """Split ``"12.3 - 4.5j ohm"`` into ``("12.3 - 4.5j", "ohm")``; no unit gives ``""``."""
    return split_unit(text, imaginary=True)


def _numbers_only(text: str, tree: object) -> None:
    for node in walk(tree):  # type: ignore[arg-type]
        if not isinstance(node, (Number, Binary, Unary)) or (isinstance(node, Binary) and node.op not in "+-"):
            raise ParseError(
                'a claim is a number with its unit, a rectangular value like "12.3 - 4.5j ohm", '
                'or a polar value like "0.63 A ∠ -22.1 deg"',
                text,
                getattr(node, "start", 0) + 1,
            )


def _component_resolutions(tree: object) -> tuple[Fraction, Fraction]:
    real = imag = Fraction(0)
    for node in walk(tree):  # type: ignore[arg-type]
        if isinstance(node, Number):
            res = _resolution(node.digits)
            if node.imaginary:
                imag = max(imag, res)
            else:
                real = max(real, res)
    if real == 0 and imag > 0:
        real = imag  # "-1592j ohm": the unwritten real part is zero to the same digit
    return real, imag


def read_claim(text: str, *, file: str | None = None, line: int | None = None) -> Claim:
    """Read a claim.

    Raises
    ------
    ParseError, UnitError
        If the text is not a number, rectangular or polar value with a unit.
    """
    try:
        return _read_claim(text.strip())
    except HandcheckError as exc:
        raise one_line(exc).located(file, line) from None


#: Written numbers in a claim must lie within this magnitude (or be 0): the claim is
#: compared in floating point, whose range ends near 1e308.
CLAIM_RANGE = 300
_HUGE = sympy.Integer(10) ** CLAIM_RANGE


def _in_range(text: str, tree: object, factor: sympy.Expr) -> None:
    """Refuse a claim with a written number too large or too small to compare."""
    for node in walk(tree):  # type: ignore[arg-type]
        if isinstance(node, Number) and node.value != 0:
            size = abs(sympy.Rational(node.value.numerator, node.value.denominator) * factor)
            if not 1 / _HUGE <= size <= _HUGE:
                raise LimitError(
                    f'the claim "{text}" holds a number out of range: handcheck compares numbers from '
                    f"1e-{CLAIM_RANGE} to 1e{CLAIM_RANGE} in size (in SI units)"
                )


_ONE_VALUE = 'a claim is one value with its unit written once at the end, like "35.81 ohm" or "12.3 - 4.5j ohm"'


def _read_claim(text: str) -> Claim:
    if not text:
        raise ParseError('the claim is empty; write the number the author wrote, like "35.81 ohm"', "", None)
    if "∠" in text or "/_" in text:
        return _read_polar(text)
    if _top_level_commas(text):
        return _read_list(text)
    level = _LEVEL.match(text)
    if level:
        return _read_level(text, level.group(1), level.group(2))
    body, unit = _split_unit(text)
    try:
        tree = parse(body, {"t", "s"})
    except ParseError as exc:
        if exc.message.endswith('write "*" to multiply'):
            # "1 V 2 A": a second value (or unit) after a complete one.
            raise ParseError(_ONE_VALUE, text, exc.column) from None
        raise
    if any(isinstance(node, Name) and node.ident == "t" for node in walk(tree)):
        return _read_function(text, body, unit, tree)
    if any(isinstance(node, Name) and node.ident == "s" for node in walk(tree)):
        return _read_laplace(text, body, unit, tree)
    _numbers_only(body, tree)
    if any(isinstance(n, Number) and n.unit for n in walk(tree)):
        raise ParseError("a claim takes one unit, written once at the end", text, None)
    factor: sympy.Expr = sympy.Integer(1)
    dim = DIMENSIONLESS
    if unit:
        factor, dim = unit_of(_unit_words(unit))
    _in_range(text, tree, factor)
    value = evaluate(tree, {}, body)
    real, imag = _component_resolutions(tree)
    imaginary = any(isinstance(n, Number) and n.imaginary for n in walk(tree))
    scale = float(factor)
    return Claim(
        text=text,
        value=Value(value.expr * factor, dim),
        form="rect" if imaginary else "real",
        resolution=(float(real) * scale, float(imag) * scale),
        unit_text=unit,
        unit_factor=factor,
    )


def _top_level_commas(text: str) -> list[int]:
    depth, found = 0, []
    for k, char in enumerate(text):
        depth += {"(": 1, ")": -1}.get(char, 0)
        if char == "," and depth == 0:
            found.append(k)
    return found


def _read_list(text: str) -> Claim:
    """A list of values with one unit at the end: ``"-500 + 866j, -500 - 866j, -1000 rad/s"``."""
    cuts = [-1, *_top_level_commas(text), len(text)]
    pieces = [text[a + 1 : b].strip() for a, b in pairwise(cuts)]
    if any(not piece for piece in pieces):
        raise ParseError(
            'a list claim holds values between commas, like "-500 + 866j, -500 - 866j, -1000 rad/s"', text, None
        )
    _, unit = _split_unit(pieces[-1])
    items = []
    for piece in pieces:
        _, own = _split_unit(piece)
        item = _read_claim(piece if own else f"{piece} {unit}".strip())
        if item.form in ("function", "laplace", "list"):
            raise ParseError("a list claim holds plain values, not functions", text, None)
        items.append(item)
    first = items[0]
    return Claim(text, first.value, "list", first.resolution, unit, first.unit_factor, items=tuple(items))


def _read_laplace(text: str, body: str, unit: str, tree: object) -> Claim:
    """A claimed network function in ``s`` (rad/s), with an optional unit at the end.

    The resolution kept is the sum of the relative digits of the numbers written with
    three or more significant digits (half a unit in the last digit, over the number):
    to first order, the most their roundings together move H away from a resonance.
    Shorter numbers (``2``, ``0.5``) are read as exact (common practice).
    """
    value = evaluate(tree, {"s": Value(LAPLACE, DIMENSIONLESS)}, body)  # type: ignore[arg-type]
    if not value.dim.dimensionless:
        raise ParseError("a network function takes one unit, written once at the end", text, None)
    factor, dim = unit_of(_unit_words(unit)) if unit else (sympy.Integer(1), DIMENSIONLESS)
    relative = 0.0
    for node in walk(tree):  # type: ignore[arg-type]
        if (
            isinstance(node, Number)
            and node.value != 0
            and len(node.digits.lower().partition("e")[0].replace(".", "").strip("0")) >= 3
        ):
            relative += float(_resolution(node.digits) / abs(node.value))
    return Claim(text, Value(value.expr * factor, dim), "laplace", (relative, 0.0), unit, factor)


#: A level claim: a ratio in dB or a power in dBm.
_LEVEL = re.compile(r"^(.*?\S)\s*(dBm|dB)$", re.S)


def _read_level(text: str, body: str, unit: str) -> Claim:
    """A claim in ``dB`` (20*log10 of a ratio's size) or ``dBm`` (10*log10 of P / 1 mW).

    The value kept is the ratio (or the power in W), exactly: 10^(x/20) or
    10^(x/10) mW (IEC 60027-3, the level of a field and of a power quantity). The
    resolution of the written level, half a unit in its last digit, becomes the
    matching band around that value.
    """
    tree = parse(body)
    _numbers_only(body, tree)
    if any(isinstance(n, Number) and (n.unit or n.imaginary) for n in walk(tree)):
        raise ParseError(f'a claim in {unit} is one real number, like "-3.01 {unit}"', text, None)
    _in_range(text, tree, sympy.Integer(1))
    level = evaluate(tree, {}, body).expr
    resolution, _ = _component_resolutions(tree)
    divisor = 20 if unit == "dB" else 10
    if abs(level) > divisor * CLAIM_RANGE:
        # 10^(level/divisor) would be out of the compared range, and built exactly
        # it could fill the memory (a fuzzed "1e29 dB" did).
        raise LimitError(
            f'the claim "{text}" is a level out of range: handcheck compares levels from '
            f"-{divisor * CLAIM_RANGE} to {divisor * CLAIM_RANGE} {unit}"
        )
    factor = sympy.Integer(1) if unit == "dB" else sympy.Rational(1, 1000)
    value = factor * sympy.Integer(10) ** (sympy.Rational(level) / divisor)
    size = float(sympy.N(value, 20))
    band = size * (10 ** (float(resolution) / divisor) - 1)
    return Claim(
        text=text,
        value=Value(value, DIMENSIONLESS if unit == "dB" else dim_of("W")),
        form="real",
        resolution=(band, 0.0),
        unit_text=unit,
        unit_factor=factor,
    )


def _read_function(text: str, body: str, unit: str, tree: object) -> Claim:
    """A claimed time function such as ``0.5*(1 - exp(-t/3.2 ms)) A``."""
    value = evaluate(tree, {"t": Value(TIME, dim_of("s"))}, body)  # type: ignore[arg-type]
    factor, dim = unit_of(_unit_words(unit)) if unit else (sympy.Integer(1), DIMENSIONLESS)
    if unit and not value.dim.dimensionless:
        raise ParseError("a time function takes one unit, written once at the end", text, None)
    if not unit:
        dim = value.dim
    return Claim(
        text=text,
        value=Value(value.expr * factor, dim),
        form="function",
        resolution=(0.0, 0.0),
        unit_text=unit,
        unit_factor=factor,
    )


def _unit_words(unit: str) -> tuple[tuple[str, int], ...]:
    tree = parse("1 " + unit)
    assert isinstance(tree, Number)
    return tree.unit


def _read_polar(text: str) -> Claim:
    mark = "∠" if "∠" in text else "/_"
    magnitude_text, _, angle_text = text.partition(mark)
    if not magnitude_text.strip() or not angle_text.strip():
        raise ParseError('a polar claim needs a magnitude and an angle, like "0.63 A ∠ -22.1 deg"', text, None)
    magnitude = _read_claim(magnitude_text.strip())
    if magnitude.form != "real" or not magnitude.value.expr.is_nonnegative:
        raise ParseError("the magnitude of a polar claim must be a number that is not negative", text, None)
    angle_body, angle_unit = _split_unit(angle_text.strip())
    angle_tree = parse(angle_body)
    _numbers_only(angle_body, angle_tree)
    if angle_unit and angle_unit not in ("deg", "degree", "degrees", "°", "rad", "radian", "radians"):
        raise UnitError(f'the angle of a polar claim is in deg or rad, not "{angle_unit}"')
    angle_unit = angle_unit or "deg"
    factor, _ = unit_of(_unit_words(angle_unit))
    _in_range(text, angle_tree, factor)
    angle = evaluate(angle_tree, {}, angle_body).expr * factor
    if not angle.is_extended_real:
        raise ParseError("the angle of a polar claim is a real number, like -22.1 deg", text, None)
    angle_res, _ = _component_resolutions(angle_tree)
    if float(angle_res) * float(factor) > _WIDEST_ANGLE:
        raise ParseError(
            f'the angle "{angle_text.strip()}" is read to within {float(angle_res):g} {angle_unit} from its digits, '
            "more than a quarter turn, so it checks nothing of the phase; write the angle with its digits "
            'between -180 and 180 deg, like "57.9 deg"',
            text,
            None,
        )
    return Claim(
        text=text,
        value=Value(magnitude.value.expr * sympy.exp(sympy.I * angle), magnitude.dim),
        form="polar",
        resolution=(magnitude.resolution[0], float(angle_res) * float(factor)),
        unit_text=magnitude.unit_text,
        unit_factor=magnitude.unit_factor,
        angle_unit="deg" if angle_unit in ("deg", "degree", "degrees", "°") else "rad",
        angle=float(angle),
    )


def to_complex(expr: sympy.Expr) -> complex:
    """An exact value evaluated to a Python complex: certified by ball arithmetic
    (:func:`handcheck.solve.certified.certify`), else via 30-digit arithmetic."""
    from handcheck.solve.certified import certify

    certified = certify(expr)
    if certified is not None:
        return certified.value
    value = sympy.N(expr, DIGITS)
    re_part, im_part = value.as_real_imag()
    try:
        number = complex(float(re_part), float(im_part))
    except TypeError as exc:
        raise ParseError(f"the value {expr} is not a finite number", "", None) from exc
    if not (math.isfinite(number.real) and math.isfinite(number.imag)):
        raise LimitError("a value is beyond the range of numbers handcheck compares (about 1e300)")
    return number


def _wrap(angle: float) -> float:
    return (angle + math.pi) % (2 * math.pi) - math.pi


def compared(claim: Claim, reference: complex) -> complex:
    """The reference value as the claim is read: its magnitude when a plain real
    number is claimed for a complex quantity."""
    if claim.form == "real" and reference.imag != 0 and abs(reference.imag) > SLACK * abs(reference):
        # a negative number claims the magnitude with the sign of a reversed phasor
        sign = -1 if to_complex(claim.value.expr).real < 0 else 1
        return complex(sign * abs(reference), 0)
    return reference


def relative_error(claim: Claim, reference: complex) -> float | None:
    """The claim's relative error against ``reference`` (absolute when the reference is 0)."""
    target = compared(claim, reference)
    value = to_complex(claim.value.expr)
    if target == 0:
        return abs(value)
    return abs(value - target) / abs(target)


def agrees(claim: Claim, reference: complex, tolerance: Tolerance, *, value: complex | None = None) -> bool:
    """True when the claim agrees with ``reference`` within the tolerance.

    With ``value``, judge that number instead of the claim's own, read with the
    claim's form and resolution (used to compare a recomputation with the truth).
    """
    target = compared(claim, reference)
    written_angle = claim.angle if value is None else None
    if value is None:
        value = to_complex(claim.value.expr)
    elif claim.form == "real" and value.imag != 0 and abs(value.imag) > SLACK * abs(value):
        value = complex(abs(value), 0)
    if not all(math.isfinite(x) for x in (target.real, target.imag, value.real, value.imag)):
        return False  # a value beyond floating point (about 1e308) agrees with nothing
    scale = max(abs(target), abs(value))
    slack = SLACK * scale + 1e-300
    if tolerance.relative is not None:
        return abs(value - target) <= tolerance.relative * abs(target) + slack
    res_a, res_b = claim.resolution
    if claim.form == "polar":
        if abs(abs(value) - abs(target)) > res_a + slack:
            return False
        if abs(target) <= res_a or abs(value) == 0:
            return True  # an angle means nothing for a value that rounds to zero
        if written_angle is not None and abs(written_angle) > 2 * math.pi + res_b:
            # more than a full turn: the digits cannot tell the turns apart, so the angle
            # is taken as written, not wrapped (-45 rad is not -0.77 rad seven turns on)
            angle_error = abs(written_angle - float(mpmath.arg(target)))
        else:
            angle_error = abs(_wrap(mpmath.arg(target) - mpmath.arg(value)))
        return bool(angle_error <= res_b + SLACK * math.pi)
    return abs(value.real - target.real) <= res_a + slack and abs(value.imag - target.imag) <= res_b + slack
