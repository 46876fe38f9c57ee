"""Read each part's value text into exact, typed values, once, as the worksheet is loaded.

A resistor's ``"4.7 kohm"`` becomes the rational 4700, a source's text its
:class:`~handcheck.worksheet.sourcefunction.SourceFunction`; every unit and range is
checked here, with messages that name the part and its line.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from itertools import pairwise
from typing import Any

import sympy

from handcheck.circuit.kinds import KINDS
from handcheck.errors import HandcheckError, Where, WorksheetError
from handcheck.worksheet.sourcefunction import (
    SourceFunction,
    constant,
    from_points,
    read_function,
    sinusoid,
)
from handcheck.worksheet.unittext import uses_time
from handcheck.worksheet.values import read_angle, read_frequency, read_value

__all__ = ["PartValues", "read_part_values"]


@dataclass(frozen=True)
class PartValues:
    """The typed values of one part.

    Attributes
    ----------
    number : sympy.Expr
        The exact value in SI units (ohms, henries, farads, a gain, a coupling
        coefficient, the turns ratio N2/N1, a switch's 1 for "closes" and 0 for
        "opens", an ideal op-amp's 0; a source's 0: its value is ``source``).
    source : SourceFunction or None
        A source's function of time.
    rms : bool
        The source's amplitude was written as an rms value.
    initial : sympy.Expr or None
        A capacitor's voltage or inductor's current at t = 0-.
    gbw : sympy.Expr or None
        An op-amp's gain-bandwidth product as an angular frequency (rad/s).
    """

    number: sympy.Expr
    source: SourceFunction | None = None
    rms: bool = False
    initial: sympy.Expr | None = None
    gbw: sympy.Expr | None = None


_RATIO = re.compile(r"\s*([0-9.]+(?:[eE][+-]?\d+)?)\s*:\s*([0-9.]+(?:[eE][+-]?\d+)?)\s*\Z")
_AMPLITUDE_KIND = re.compile(r"^(.*?[^\s])\s*(rms|peak|pk)$", re.IGNORECASE | re.S)


def read_part_values(
    ident: str, kind: str, value: Any, body: dict[str, Any], *, file: str, line: int | None
) -> PartValues:
    """Read the value keys of one part (its kind's key, ``frequency``, ``phase``, ``initial``, ``gbw``).

    Parameters
    ----------
    ident, kind : str
        The part's id and kind.
    value : str or list
        The kind's value as written (a list of [time, value] pairs for a source).
    body : dict
        The part's other keys, as written (strings).
    file : str
        The worksheet's path, for messages.
    line : int or None
        The part's line.

    Returns
    -------
    PartValues

    Raises
    ------
    WorksheetError, UnitError, ParseError
        For a value in the wrong unit, out of range, or unreadable.
    """
    where: Where = {"file": file, "line": line}
    if kind != "opamp" and body.get("gbw") is not None:
        raise WorksheetError(
            f'{ident} is a {kind}; only an op-amp with a finite open-loop gain takes "gbw", '
            f'like {{ opamp = "200000", gbw = "1 MHz", nodes = ["out", "p", "n"] }}',
            **where,
        )
    if kind in ("voltage", "current"):
        return _source(ident, kind, value, body, file, line)
    text = str(value)
    if kind == "switch":
        action = text.strip().lower()
        if action not in ("opens", "closes"):
            raise WorksheetError(f'switch {ident} must be written switch = "opens" or "closes" (at t = 0)', **where)
        return PartValues(sympy.Integer(1 if action == "closes" else 0))
    if kind == "opamp":
        return _opamp(ident, text, body.get("gbw"), where)
    if kind == "transformer":
        match = _RATIO.match(text)
        if not match:
            raise WorksheetError(f'transformer {ident} needs a turns ratio like "10:1", not "{text}"', **where)
        n1, n2 = (read_value(g, "", f"the turns of {ident}", **where) for g in match.groups())
        if n1 <= 0 or n2 <= 0:
            raise WorksheetError(
                f'transformer {ident} has a turns ratio "{text}" with a zero; both turns must be positive', **where
            )
        return PartValues(n2 / n1)
    if kind == "coupling":
        number = read_value(text, "", f"the coupling coefficient of {ident}", **where)
        if not -1 <= number <= 1:
            raise WorksheetError(f"the coupling coefficient of {ident} is {text}; it must lie in [-1, 1]", **where)
        return PartValues(number)
    number = read_value(text, KINDS[kind].unit, f"the {kind} value of {ident}", **where)
    if kind in ("resistor", "inductor", "capacitor") and number <= 0:
        hint = (
            "; for a short circuit give both ends the same node name (and leave the part out), "
            "for an open circuit leave the part out"
            if number == 0
            else ""
        )
        raise WorksheetError(f"{ident} has {kind} value {text}; it must be positive{hint}", **where)
    initial = None
    if body.get("initial") is not None:
        unit = {"capacitor": "V", "inductor": "A"}.get(kind)
        if unit is None:
            raise WorksheetError(f'{ident} is a {kind}; only capacitors and inductors take "initial"', **where)
        initial = read_value(str(body["initial"]), unit, f"the initial value of {ident}", **where)
    return PartValues(number, initial=initial)


def _opamp(ident: str, text: str, gbw: str | None, where: Where) -> PartValues:
    """0 stands for ideal; else the finite open-loop DC gain, and with ``gbw`` its one pole."""
    if text.strip().lower() == "ideal":
        if gbw is not None:
            raise WorksheetError(
                f"op-amp {ident} is ideal, so it has no gain-bandwidth product; give its open-loop DC gain "
                f'with the gbw, like opamp = "200000", gbw = "{gbw}", or remove gbw',
                **where,
            )
        return PartValues(sympy.Integer(0))
    gain = read_value(text, "", f"the gain of op-amp {ident}", **where)
    if gain <= 0:
        raise WorksheetError(
            f'op-amp {ident} must be written opamp = "ideal" or with a positive open-loop gain, like opamp = "200000"',
            **where,
        )
    if gbw is None:
        return PartValues(gain)
    return PartValues(gain, gbw=read_frequency(gbw, f"the gain-bandwidth product (gbw) of op-amp {ident}", **where))


def _source(ident: str, kind: str, value: Any, body: dict[str, Any], file: str, line: int | None) -> PartValues:
    """A source's function: a list of points, a function of t, or the first edition's amplitude."""
    where: Where = {"file": file, "line": line}
    unit = KINDS[kind].unit
    frequency, phase = body.get("frequency"), body.get("phase")
    if isinstance(value, tuple):
        if frequency is not None or phase is not None:
            raise WorksheetError(f"{ident} is written as a list of points, so it takes no frequency or phase", **where)
        return PartValues(sympy.Integer(0), _points(ident, unit, value, where))
    text = str(value).strip()
    match = _AMPLITUDE_KIND.match(text)
    rms = bool(match) and match.group(2).lower() == "rms"  # type: ignore[union-attr]
    amplitude_text = match.group(1) if match else text
    if uses_time(amplitude_text):
        if frequency is not None or phase is not None:
            raise WorksheetError(
                f"{ident} is written as a function of t, so it takes no frequency or phase: write them into "
                f'the function, like voltage = "100*cos(2*pi*50 Hz*t + 30 deg) V"',
                **where,
            )
        if rms:
            raise WorksheetError(
                f'{ident} is written as a function of t, so "rms" has no meaning: write the peak into the '
                "function (an rms value times sqrt(2) for a sinusoid)",
                **where,
            )
        try:
            function = read_function(amplitude_text, unit, f"the {kind} of {ident}")
        except HandcheckError as exc:
            raise exc.located(file, line) from None
        return PartValues(sympy.Integer(0), function)
    amplitude = read_value(amplitude_text, unit, f"the {kind} of {ident}", **where)
    if frequency is None:
        if rms:
            raise WorksheetError(
                f'{ident} is a constant source (no frequency), so "rms" has no meaning; remove it or give a frequency',
                **where,
            )
        if phase is not None:
            raise WorksheetError(f"{ident} has a phase but no frequency; give it a frequency", **where)
        return PartValues(sympy.Integer(0), constant(amplitude))
    omega = read_frequency(str(frequency), f"the frequency of {ident}", **where)
    angle = sympy.Integer(0)
    if phase is not None:
        angle = read_angle(str(phase), f'phase "{phase}" of part "{ident}"', **where)
    peak = amplitude * sympy.sqrt(2) if rms else amplitude
    return PartValues(sympy.Integer(0), sinusoid(peak, omega, angle), rms)


def _points(ident: str, unit: str, pairs: tuple[tuple[str, str], ...], where: Where) -> SourceFunction:
    points = tuple(
        (
            read_value(t, "s", f"a time in the points of {ident}", **where),
            read_value(v, unit, f"a value in the points of {ident}", **where),
        )
        for t, v in pairs
    )
    times = [t for t, _ in points]
    if times[0] < 0 or any(b <= a for a, b in pairwise(times)):
        raise WorksheetError(f"the times in the points of {ident} must start at 0 s or later and increase", **where)
    return from_points(points)
