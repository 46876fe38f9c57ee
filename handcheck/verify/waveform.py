"""A claimed time function compared with the circuit's true waveform.

A step that claims a waveform (an expression in ``t``) is judged over a span of
time rather than at one value: the largest difference over 401 equally spaced
times, relative to the waveform's largest value.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import sympy

from handcheck.circuit.model import Circuit
from handcheck.solve.quantities import Quantity
from handcheck.solve.timequantities import waveform_of
from handcheck.verify.claims import TIME, Claim, Tolerance
from handcheck.verify.findings import StepBase, StepFinding, Verdict
from handcheck.verify.present import describe_function, format_number
from handcheck.worksheet.model import Worksheet
from handcheck.worksheet.values import read_span

__all__ = ["check_waveform", "comparison_span"]


def check_waveform(
    base: StepBase,
    claim: Claim,
    quantity: Quantity,
    tolerance: Tolerance,
    transient: Any,
    span: Callable[[], float],
) -> StepFinding:
    """Compare a claimed time function with the true waveform from t = 0 over a span.

    Parameters
    ----------
    base : StepBase
        The fields every finding of the step carries.
    claim : Claim
        The claimed function of ``t``.
    quantity : Quantity
        The quantity the step names.
    tolerance : Tolerance
        The step's tolerance: its percentage, or 1 % under "digits".
    transient
        The closed-form complete response of the circuit.
    span : callable
        Gives the time compared over (s), see :func:`comparison_span`; called
        only once the dimensions match.

    Returns
    -------
    StepFinding
        ``agrees`` or ``differs`` with the largest difference relative to the
        waveform's largest value; ``unit`` where the dimensions differ.
    """
    wave, dim = waveform_of(transient, quantity)
    if claim.dim != dim:
        return StepFinding(
            **base,
            verdict="unit",
            message=f"the claim is in {claim.dim or 'no unit'}, but the quantity is in {dim}",
        )
    until = span()
    times = [until * k / 400 for k in range(401)]
    truth = [complex(wave.value(t)) for t in times]
    claimed = [complex(sympy.N(claim.value.expr.subs(TIME, t), 20)) for t in times]
    scale = max(abs(v) for v in truth) or 1.0
    error = max(abs(a - b) for a, b in zip(claimed, truth, strict=True)) / scale
    limit = tolerance.relative if tolerance.relative is not None else 0.01
    message = (
        f"compared at 401 times from 0 to {format_number(until, 4)} s; largest difference "
        f"{error:.3g} of the waveform's largest value (allowed {limit:.3g})"
    )
    verdict: Verdict = "agrees" if error <= limit else "differs"
    return StepFinding(**base, error=error, expected=describe_function(wave, claim), message=message, verdict=verdict)


def comparison_span(worksheet: Worksheet, circuit: Circuit, transient: Any) -> float:
    """The time span (s) a claimed waveform is compared over.

    Five of the slowest time constants, and at least three periods of any
    sinusoidal source or pulse train after its last start ([transient] span if set).
    """
    written = read_span(worksheet)
    if written is not None:
        return written
    candidates = []
    for pole in transient.natural_modes():
        rate = abs(complex(pole).real)
        if rate > 0:
            candidates.append(5 / rate)
    for part in circuit.parts:
        if part.source is not None:
            function = part.source.function
            candidates += [3 * 2 * math.pi / float(w) for w in part.source.frequencies]
            candidates += [float(function.last_start) + 3 * float(r.period) for r in function.repeats]
            if function.last_start > 0:
                candidates.append(2 * float(function.last_start))
    return max(candidates, default=1e-3)
