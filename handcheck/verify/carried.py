"""A step whose formula cannot be evaluated on the true values of earlier steps.

An earlier step that went wrong can have a true value of exactly 0 that a later
formula divides by (an impedance the author computed as 15.4 ohm that is truly 0).
The later step still gets a verdict: against its quantity where it has one, and as
carried from that earlier step, with a note saying why its formula gave no true value.
"""

from __future__ import annotations

from handcheck.solve.quantities import Quantity
from handcheck.verify.claims import Claim, Tolerance, agrees, relative_error, to_complex
from handcheck.verify.cycles import expected_text
from handcheck.verify.findings import Shown, StepBase, StepFinding
from handcheck.worksheet.evaluate import Value

__all__ = ["without_true_formula"]


def without_true_formula(
    base: StepBase,
    claim: Claim,
    tolerance: Tolerance,
    truth: Value | None,
    quantity: Quantity | None,
    cause: str,
    reason: str,
) -> StepFinding:
    """The finding of a step whose formula fails on the true values because ``cause`` went wrong.

    Parameters
    ----------
    base
        The step's name, claim, quantity, formula and line.
    claim, tolerance
        The step's claim and its tolerance.
    truth
        The quantity's true value, None for a step without quantity.
    quantity
        The step's quantity, if any.
    cause
        The earlier step the error comes from.
    reason
        Why the formula gave no value (the evaluator's message).

    Returns
    -------
    StepFinding
        ``agrees`` when the claim is the quantity anyway, else ``carried`` from ``cause``.
    """
    message = f"its formula cannot be evaluated with the true values of earlier steps ({reason})"
    if truth is None:
        return StepFinding(**base, verdict="carried", caused_by=cause, message=message)
    reference = to_complex(truth.expr)
    shown: Shown = {
        "expected": expected_text(truth, claim, quantity.name if quantity else None),
        "expected_si": (reference.real, reference.imag),
        "exact": truth.expr,
        "error": relative_error(claim, reference),
    }
    if agrees(claim, reference, tolerance):
        return StepFinding(**base, **shown, verdict="agrees", message=message)
    return StepFinding(**base, **shown, verdict="carried", caused_by=cause, message=message)
