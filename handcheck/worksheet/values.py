"""Constant values of a worksheet read exactly: part values, frequencies, phases, times.

Each reader parses the text once with the project's own parser and checks the unit;
the loader calls them so that no later stage reads worksheet text.
"""

from __future__ import annotations

import functools
from fractions import Fraction

import sympy

from handcheck.errors import HandcheckError, UnitError, WorksheetError
from handcheck.worksheet.evaluate import Value, evaluate
from handcheck.worksheet.expr import Node, Number, one_line, parse, walk
from handcheck.worksheet.model import Worksheet
from handcheck.worksheet.units import DIMENSIONLESS, Dim, dim_of, suggest_for

__all__ = ["EXAMPLES", "read_angle", "read_frequency", "read_span", "read_value"]

#: An example value per unit, for messages.
EXAMPLES = {
    "ohm": "4.7 kohm",
    "H": "95 mH",
    "F": "0.22 uF",
    "V": "24 V",
    "A": "10 mA",
    "S": "2 mS",
    "s": "1.5 ms",
    "Hz": "50 Hz",
    "": "10",
}


def read_value(text: str, unit: str, what: str, *, file: str | None = None, line: int | None = None) -> sympy.Expr:
    """Read a constant value such as ``"0.22 uF"`` and check it is in ``unit``.

    Parameters
    ----------
    text : str
        The value as written.
    unit : str
        The unit it must be in (any unit of that dimension is accepted: ``"100 1/s"``
        for ``"Hz"``); ``""`` for a plain number.
    what : str
        How messages name the value.
    file, line : optional
        Where the value is written, for messages.

    Returns
    -------
    sympy.Expr
        The exact value in coherent SI units.

    Raises
    ------
    UnitError, WorksheetError, ParseError
        For a value in another unit, without one, complex, or unreadable.
    """
    try:
        return _read_value(text, unit, what, file=file, line=line)
    except HandcheckError as exc:
        raise one_line(exc) from None


@functools.lru_cache(maxsize=1024)
def _constant(text: str) -> tuple[Node, Value]:
    """The parse and exact value of a constant's text (kept: a large circuit repeats
    a handful of values in hundreds of parts)."""
    tree = parse(text)
    return tree, evaluate(tree, {}, text)


def _read_value(text: str, unit: str, what: str, *, file: str | None, line: int | None) -> sympy.Expr:
    try:
        tree, value = _constant(text)
    except HandcheckError as exc:
        raise exc.located(file, line) from None
    expected = dim_of(unit) if unit else DIMENSIONLESS
    if value.dim != expected:
        has_unit = any(isinstance(n, Number) and n.unit for n in walk(tree))
        if unit and not has_unit:
            raise UnitError(
                f'{what} "{text}" has no unit; write it with one, like "{EXAMPLES.get(unit, "1 " + unit)}"',
                file=file,
                line=line,
            )
        found = str(value.dim) or "no unit"
        want = unit or "a plain number"
        words = [w for n in walk(tree) if isinstance(n, Number) for w, power in n.unit if power == 1]
        meant = next(filter(None, (suggest_for(w, expected) for w in words)), None)
        hint = f'; did you mean "{meant}"?' if meant else ""
        raise UnitError(f'{what} "{text}" is in {found}, but must be in {want}{hint}', file=file, line=line)
    if value.expr.has(sympy.I) or not value.expr.is_real:
        raise WorksheetError(f'{what} "{text}" must be a real number', file=file, line=line)
    return value.expr


def read_frequency(text: str, what: str, *, file: str | None = None, line: int | None = None) -> sympy.Expr:
    """Read a frequency in Hz or rad/s and return the angular frequency in rad/s.

    The radian is dimensionless in SI, so pint alone cannot tell 1000 rad/s from
    1000 Hz; a value whose unit names ``rad`` is taken as angular.

    Parameters
    ----------
    text : str
        The frequency as written.
    what : str
        How messages name it.
    file, line : optional
        Where it is written.

    Returns
    -------
    sympy.Expr
        The exact angular frequency in rad/s.

    Raises
    ------
    UnitError
        For anything but a positive frequency.
    """
    try:
        return _read_frequency(text, what, file=file, line=line)
    except HandcheckError as exc:
        raise one_line(exc) from None


def _read_frequency(text: str, what: str, *, file: str | None, line: int | None) -> sympy.Expr:
    try:
        tree = parse(text)
        value = evaluate(tree, {}, text)
    except HandcheckError as exc:
        raise exc.located(file, line) from None
    if value.dim != Dim(time=Fraction(-1)) or not value.expr.is_positive:
        raise UnitError(
            f'{what} "{text}" must be a positive frequency in Hz or rad/s, like "60 Hz" or "377 rad/s"',
            file=file,
            line=line,
        )
    angular = any(isinstance(n, Number) and any(w.startswith("rad") for w, _ in n.unit) for n in walk(tree))
    return value.expr if angular else 2 * sympy.pi * value.expr


def read_angle(text: str, what: str, *, file: str | None = None, line: int | None = None) -> sympy.Expr:
    """Read an angle in deg or rad (``"30 deg"``) exactly, in radians.

    Parameters
    ----------
    text : str
        The angle as written; a plain number is accepted only if it is 0.
    what : str
        How messages name the angle, its text included (``'phase "30" of part "V1"'``).
    file, line : optional
        Where it is written.

    Returns
    -------
    sympy.Expr

    Raises
    ------
    UnitError
        For anything but a real angle with a unit.
    """
    try:
        tree = parse(text)
        value = evaluate(tree, {}, text)
    except HandcheckError as exc:
        raise one_line(exc).located(file, line) from None
    has_unit = any(isinstance(n, Number) and n.unit for n in walk(tree))
    if not value.dim.dimensionless or not value.expr.is_real or (not has_unit and value.expr != 0):
        raise UnitError(f'{what} must be an angle in deg or rad, like "30 deg"', file=file, line=line)
    return value.expr


def read_span(worksheet: Worksheet) -> float | None:
    """The ``[transient] span`` in seconds, or None when it is not given.

    Parameters
    ----------
    worksheet : Worksheet

    Returns
    -------
    float or None

    Raises
    ------
    UnitError, WorksheetError
        For a span that is no positive time.
    """
    written = dict(worksheet.transient).get("span")
    if not written:
        return None
    value = read_value(written, "s", "span in [transient]", file=worksheet.path)
    if value <= 0:
        raise WorksheetError(f'span = "{written}" in [transient] must be more than 0 s', file=worksheet.path)
    return float(value)
