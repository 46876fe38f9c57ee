"""Hertz or radians per second: a frequency claimed with the other measure's unit.

A frequency f in Hz and an angular frequency w = 2*pi*f in rad/s have the same SI unit,
1/s (the radian is dimensionless: SI Brochure, 9th edition, 2019, Table 4, from memory),
so a claim's number is compared with the quantity in the quantity's own measure
whatever unit word the claim carries (worksheet format 1: a natural frequency claimed
as ``"1591.5 Hz"`` where w0 = 10000 rad/s is the ``hertz-as-angular`` slip). What this
module adds is for the reader: where the claim's word names the other measure, the
expected value is shown in both, and the step carries a note saying how it was read.

>>> cycles_of("kHz"), cycles_of("rad/s"), cycles_of("ohm")
('cyclic', 'angular', None)
"""

from __future__ import annotations

import math
import re
from typing import Literal

from handcheck.solve.frequency import FREQUENCY_QUANTITIES
from handcheck.verify.claims import Claim, to_complex
from handcheck.verify.present import format_number, format_value
from handcheck.worksheet.evaluate import Value

__all__ = ["Convention", "cycles_of", "expected_text", "measure_note", "quantity_cycles"]

Convention = Literal["cyclic", "angular"]

#: The measure of each quantity whose value is a frequency.
QUANTITY_CYCLES: dict[str, Convention] = {
    **{name: "cyclic" for name, unit in FREQUENCY_QUANTITIES.items() if unit == "Hz"},
    **{name: "angular" for name, unit in FREQUENCY_QUANTITIES.items() if unit == "rad/s"},
    "natural_frequency": "angular",
}
_UNIT = {"cyclic": "Hz", "angular": "rad/s"}

_RADIANS = re.compile(r"(?<![A-Za-z])[a-zA-Zµ]?rad\b")
_HERTZ = re.compile(r"(?<![A-Za-z])[a-zA-Zµ]?Hz\b")


def cycles_of(unit_text: str) -> Convention | None:
    """Which measure a claim's unit names: ``"cyclic"`` for hertz, ``"angular"`` for
    radians per time, None for anything else.

    Parameters
    ----------
    unit_text
        The unit as the claim writes it.

    Returns
    -------
    {"cyclic", "angular"} or None
    """
    if _HERTZ.search(unit_text or ""):
        return "cyclic"
    if _RADIANS.search(unit_text or ""):
        return "angular"
    return None


def quantity_cycles(name: str) -> Convention | None:
    """The measure a quantity's value is in, None when it is no frequency.

    Parameters
    ----------
    name
        The quantity's name, like ``"cutoff_frequency"``.

    Returns
    -------
    {"cyclic", "angular"} or None
    """
    return QUANTITY_CYCLES.get(name)


def _crossed(name: str | None, claim: Claim) -> Convention | None:
    """The quantity's measure when the claim's unit names the other one, else None."""
    own = quantity_cycles(name) if name else None
    claimed = cycles_of(claim.unit_text)
    return own if own is not None and claimed is not None and own != claimed else None


def expected_text(truth: Value, claim: Claim, name: str | None) -> str:
    """The true value as shown beside the claim: in the claim's unit, and, where that
    unit names the other measure, in the quantity's own measure with the claim's beside it.

    Parameters
    ----------
    truth
        The exact value.
    claim
        The step's claim.
    name
        The quantity's name, None for a formula-only step.

    Returns
    -------
    str
    """
    own = _crossed(name, claim)
    if own is None:
        return format_value(truth, claim)
    value = to_complex(truth.expr).real
    other = value / (2 * math.pi) if own == "angular" else value * 2 * math.pi
    factor = float(claim.unit_factor) if claim.unit_factor else 1.0
    return f"{format_number(value, 6)} {_UNIT[own]} (= {format_number(other / factor, 6)} {claim.unit_text})"


def measure_note(name: str, claim: Claim) -> str | None:
    """How a frequency claimed with the other measure's unit was read.

    Parameters
    ----------
    name
        The quantity's name.
    claim
        The step's claim.

    Returns
    -------
    str or None
        None unless the claim's unit names the other measure.
    """
    first = (claim.items or (claim,))[0]
    own = _crossed(name, first)
    if own is None:
        return None
    return (
        f"{name} is in {_UNIT[own]}: the claim's number is compared with it as written, although its unit "
        f"says {first.unit_text} (w = 2*pi*f); write the value in {_UNIT[own]}"
    )
