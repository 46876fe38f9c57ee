"""Hertz or radians per second: a frequency claimed in the other convention.

A frequency f in Hz and an angular frequency w = 2*pi*f in rad/s have the same SI
dimension (1/s: the radian is dimensionless, SI Brochure, 9th edition, 2019, Table 4),
so a unit library converts one into the other with a factor of 1, not 2*pi. A claim
that writes its unit says which of the two it means: a natural frequency of 1000 rad/s
claimed as ``"159.15 Hz"`` is right, and ``"1000 Hz"`` is wrong. Before the claim is
judged, the true value is put into the claim's convention (times or over 2*pi, exactly),
so that the verdict, the value shown and the value later steps use all mean what the
author wrote; ``expected_si`` stays the quantity in its own coherent SI measure.

>>> import sympy
>>> from handcheck.worksheet.evaluate import Value
>>> from handcheck.worksheet.units import dim_of
>>> cycles_of("kHz"), cycles_of("krad/s"), cycles_of("1/s"), cycles_of("ohm")
('cyclic', 'angular', None, None)
>>> in_claimed_convention(Value(sympy.Integer(1000), dim_of("Hz")), "natural_frequency", "Hz").expr
500/pi
"""

from __future__ import annotations

import re
from typing import Literal

import sympy

from handcheck.solve.frequency import FREQUENCY_QUANTITIES
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.units import dim_of

__all__ = ["Convention", "cycles_of", "in_claimed_convention", "measure_factor", "quantity_cycles"]

Convention = Literal["cyclic", "angular"]

#: The convention of each quantity whose value is a frequency.
QUANTITY_CYCLES: dict[str, Convention] = {
    **{name: "cyclic" for name, unit in FREQUENCY_QUANTITIES.items() if unit == "Hz"},
    **{name: "angular" for name, unit in FREQUENCY_QUANTITIES.items() if unit == "rad/s"},
    "natural_frequency": "angular",
}

_RADIANS = re.compile(r"(?<![A-Za-z])[a-zA-Zµ]?rad\b")
_HERTZ = re.compile(r"(?<![A-Za-z])[a-zA-Zµ]?Hz\b")


def cycles_of(unit_text: str) -> Convention | None:
    """Which convention a claim's unit writes: ``"cyclic"`` for hertz, ``"angular"`` for
    radians per time, None for anything else (``1/s`` says neither).

    Parameters
    ----------
    unit_text
        The unit as the claim writes it.

    Returns
    -------
    {"cyclic", "angular"} or None
    """
    if not unit_text:
        return None
    if _HERTZ.search(unit_text):
        return "cyclic"
    if _RADIANS.search(unit_text):
        return "angular"
    return None


def quantity_cycles(name: str) -> Convention | None:
    """The convention a quantity's value is in, None when it is no frequency.

    Parameters
    ----------
    name
        The quantity's name, like ``"cutoff_frequency"``.

    Returns
    -------
    {"cyclic", "angular"} or None
    """
    return QUANTITY_CYCLES.get(name)


def in_claimed_convention(truth: Value, name: str, unit_text: str) -> Value:
    """The true value of quantity ``name`` in the convention the claim's unit writes.

    Parameters
    ----------
    truth
        The exact value, in the quantity's own convention.
    name
        The quantity's name.
    unit_text
        The claim's unit.

    Returns
    -------
    Value
        ``truth`` times 2*pi when a cyclic frequency is claimed in rad/s, over 2*pi when
        an angular one is claimed in Hz; ``truth`` itself otherwise.
    """
    if truth.dim != dim_of("Hz"):
        return truth
    return Value(truth.expr * measure_factor(name, unit_text), truth.dim)


def measure_factor(name: str, unit_text: str) -> sympy.Expr:
    """The exact factor from quantity ``name``'s own measure to the claim's: 2*pi for a
    cyclic frequency claimed in rad/s, 1/(2*pi) for an angular one claimed in Hz, else 1.

    Parameters
    ----------
    name
        The quantity's name.
    unit_text
        The claim's unit.

    Returns
    -------
    sympy.Expr
    """
    own, claimed = quantity_cycles(name), cycles_of(unit_text)
    if own is None or claimed is None or own == claimed:
        return sympy.Integer(1)
    return 2 * sympy.pi if claimed == "angular" else 1 / (2 * sympy.pi)
