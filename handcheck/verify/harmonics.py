"""A power claimed for a circuit whose sources run at several frequencies.

``power(P)`` and ``reactive_power(P)`` are phasor quantities: the power at the analysis
frequency. When the sources also drive DC or other frequencies, the average power over
a period is the sum of the powers at each frequency, the cross terms averaging to zero
(orthogonality of the Fourier terms; e.g. Alexander & Sadiku, Fundamentals of Electric
Circuits, 5th edition, section 17.6, from memory). An author who writes I_rms^2*R for a
resistor fed at two frequencies claims that total; the step then says what its
quantity holds and what the total is, so the difference is not a mystery.
"""

from __future__ import annotations

import sympy

from handcheck.circuit.model import Circuit
from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.solve.derived import retuned, spectrum
from handcheck.solve.phasor import solve
from handcheck.solve.quantities import Quantity, evaluate_quantity
from handcheck.verify.claims import Claim, Tolerance, agrees, to_complex
from handcheck.verify.present import format_number, format_value
from handcheck.worksheet.evaluate import Value

__all__ = ["SUMMED", "other_frequencies_note"]

#: Quantities whose total over several frequencies is the sum of their parts.
SUMMED = frozenset({"power", "reactive_power", "delivered_power", "delivered_reactive_power"})


def other_frequencies_note(circuit: Circuit, quantity: Quantity, claim: Claim, tolerance: Tolerance) -> str | None:
    """A note for a power step of a circuit driven at other frequencies than the analysis one.

    Parameters
    ----------
    circuit
        The circuit, with its analysis frequency.
    quantity
        The step's quantity.
    claim
        The step's claim (the note says when it is the total).
    tolerance
        The step's tolerance.

    Returns
    -------
    str or None
        None when the quantity is no power or every source runs at the analysis frequency.
    """
    if quantity.name not in SUMMED or claim.form not in ("real", "rect", "polar"):
        return None
    try:
        frequencies = spectrum(circuit, quantity.text)
    except HandcheckError:
        return None
    others = [w for w in frequencies if sympy.simplify(w - circuit.omega) != 0]
    if not others:
        return None
    try:
        own = evaluate_quantity(solve(circuit), quantity)
        parts = [evaluate_quantity(solve(retuned(circuit, w)), quantity).expr for w in others]
    except TimeLimitError:
        raise
    except (HandcheckError, ZeroDivisionError):
        return None
    total = own.expr + sum(parts)
    named = ", ".join("DC" if w == 0 else f"{format_number(float(w / (2 * sympy.pi)), 6)} Hz" for w in others)
    here = "DC" if circuit.omega == 0 else f"{format_number(float(circuit.frequency), 6)} Hz"
    total_value = Value(total, own.dim)
    note = (
        f"{quantity.text} is the part at the analysis frequency ({here}) only; the sources also run at "
        f"{named}, and over every frequency together it is {format_value(total_value, claim)}"
    )
    if agrees(claim, to_complex(total), tolerance):
        note += ": the claim is that total"
    return note
