"""Whether a claim follows from the author's own earlier numbers, and what rounding explains.

A step's claim *follows* when it is what the step's formula gives from the numbers
the author wrote for earlier steps: on those numbers as written, on the author's
unrounded values where they can be known, or on any values those written numbers
stand for (their intervals carried through the formula with ball arithmetic,
module :mod:`handcheck.verify.rounding`), the claim read within its own digits. An
author who carries unrounded values through a chain writes claims that differ from
the formula on the rounded numbers by more than their last digit; the propagated
ball covers that, so the step is judged on its method, not on the rounding.

Then, for a claim that follows: ``carried`` from the earliest wrong step it uses
(never from a step that agrees), or, where every input agrees, ``agrees`` when the
true value lies inside the propagated ball widened by the claim's own digits.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any

import sympy

from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.verify.claims import Claim, Tolerance, agrees, to_complex
from handcheck.verify.findings import StepFinding
from handcheck.verify.present import format_number, format_value
from handcheck.verify.rounding import (
    Written,
    by_size,
    describe,
    holds_claim,
    inside_claim,
    propagate,
    widened,
    within,
)
from handcheck.worksheet.evaluate import Value, evaluate
from handcheck.worksheet.expr import Node, names_in

__all__ = ["Following", "follows", "follows_note", "root_cause", "rounded"]


@dataclasses.dataclass(frozen=True)
class Following:
    """The formula on the author's numbers, and whether the claim follows from them.

    ``ball`` is the propagated ball when only the written digits of the earlier steps
    explain the claim (the formula on the numbers as written, and on the unrounded
    ones, misses the claim's own digits), with ``inputs`` the earlier steps it carries.
    """

    recomputed: Value
    follows: bool
    ball: Any = None
    inputs: tuple[str, ...] = ()


def _earlier(tree: Node, written: Mapping[str, Written]) -> dict[str, Written]:
    """The earlier steps the formula uses, as written (each carrying only its own digits)."""
    return {n: dataclasses.replace(written[n], carried=None) for n in names_in(tree) if n in written}


def follows(
    claim: Claim,
    tolerance: Tolerance,
    tree: Node,
    text: str,
    envs: tuple[Mapping[str, Value], Mapping[str, Value]],
    written: Mapping[str, Written],
) -> Following:
    """Whether ``claim`` follows from the step's formula on the author's earlier numbers.

    Parameters
    ----------
    claim, tolerance
        The step's claim and its tolerance.
    tree, text
        The step's parsed formula and its text.
    envs
        The author's numbers as written, and as unrounded as they can be known
        (name -> value; part values, ``f`` and ``w`` in both).
    written
        The earlier steps' claims as written, used only for the names in ``tree``.

    Returns
    -------
    Following
        The formula on the numbers as written (the recomputation shown), and whether
        the claim follows: on those, on the unrounded ones, or inside the ball the
        written digits allow widened by the claim's own digits.
    """
    claimed_env, full_env = envs
    recomputed = evaluate(tree, claimed_env, text)
    point = to_complex(recomputed.expr)
    if agrees(claim, point, tolerance):
        return Following(recomputed, True)
    try:
        unrounded = evaluate(tree, full_env, text)
    except TimeLimitError:
        raise
    except HandcheckError:
        unrounded = None
    if unrounded is not None and agrees(claim, to_complex(unrounded.expr), tolerance):
        return Following(recomputed, True)
    inputs = _earlier(tree, written)
    if not inputs:
        return Following(recomputed, False)  # nothing rounded goes in: the numbers are exact
    ball = propagate(tree, claimed_env, inputs)
    if ball is None or not holds_claim(Written(claim, tolerance), ball, by_size(claim, point)):
        return Following(recomputed, False)
    return Following(recomputed, True, ball, tuple(inputs))


def follows_note(following: Following, claim: Claim) -> str | None:
    """The note of a claim that follows only through the written digits of earlier steps."""
    if following.ball is None:
        return None
    names = ", ".join(following.inputs)
    dim = following.recomputed.dim
    allowed = describe(following.ball, lambda z: _show(z, dim, claim), lambda x: _size(x, claim))
    return (
        f"follows from the numbers written for {names}: their digits (or stated tolerance), carried through "
        f"the formula, allow {allowed} here, and the claim lies inside within its own digits"
    )


def _show(z: complex, dim: Any, claim: Claim) -> str:
    return format_value(Value(sympy.Float(z.real, 17) + sympy.I * sympy.Float(z.imag, 17), dim), claim)


def _size(x: float, claim: Claim) -> str:
    return f"{format_number(x / float(claim.unit_factor), 4)} {claim.unit_text}".strip()


def root_cause(tree: Node, findings: Mapping[str, StepFinding]) -> str | None:
    """The earliest wrong step the formula uses (through what it carries), None when all agree."""
    for name in names_in(tree):
        finding = findings.get(name)
        if finding is None or finding.verdict in ("agrees", "unchecked"):
            continue
        return finding.caused_by if finding.verdict == "carried" and finding.caused_by else name
    return None


def rounded(
    finding: StepFinding,
    tree: Node,
    written: Written,
    truth: Value,
    earlier: tuple[Mapping[str, Value], Mapping[str, Written]],
) -> tuple[StepFinding, Written | None]:
    """A claim that follows from earlier numbers that all agree.

    ``agrees`` when their written digits, carried through the formula as balls
    (module :mod:`handcheck.verify.rounding`), reach the true value; else ``formula``
    (a plain size used as a number). Also returns the step's claim as it is carried
    on to later steps when it agreed through rounding (None: as written).
    """
    true_env, claims = earlier
    inputs = {n: claims[n] for n in names_in(tree) if n in claims}
    ball = propagate(tree, true_env, inputs)
    reference = to_complex(truth.expr)
    outside = [n for n in inputs if not inside_claim(inputs[n], to_complex(true_env[n].expr))]
    names = ", ".join(inputs)
    claim = written.claim

    def show(z: complex) -> str:
        return _show(z, truth.dim, claim)

    if ball is None and not outside:
        message = (
            f"follows from the rounded values of earlier steps: {names} as written (within their digits or "
            f"stated tolerance, with what they carry from earlier steps) leave{'s' * (len(inputs) == 1)} this "
            "value unbounded (the formula divides by a number that rounds to zero); write more digits there"
        )
        return dataclasses.replace(finding, message=message), None
    if ball is not None and within(written, ball, reference):
        carried = None
        if not by_size(claim, reference):  # a plain size carries only its own digits
            carried = dataclasses.replace(written, carried=widened(written, ball))
        message = (
            f"follows from the rounded values of earlier steps: {names} as written (within their digits or "
            f"stated tolerance, with what they carry from earlier steps) allow{'s' * (len(inputs) == 1)} "
            f"{describe(ball, show, lambda x: _size(x, claim))} here, and the true value {show(reference)} lies inside"
        )
        return dataclasses.replace(finding, message=message), carried
    outside = [n for n in outside if by_size(inputs[n].claim, to_complex(true_env[n].expr))]
    if outside:
        which = ", ".join(outside)
        message = (
            f"the claim follows from the numbers written for {names}, but {which} "
            f"{'is' if len(outside) == 1 else 'are'} written as a plain number that does not stand for "
            f"the value (the size of a complex value); used as a number in this formula it does not give "
            f"the true value {show(reference)}: write {which} as a polar or rectangular value"
        )
    else:
        message = "the claim follows from the numbers written in earlier steps, but not from their values"
    return dataclasses.replace(finding, verdict="formula", message=message), None
