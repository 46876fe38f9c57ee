"""The record's inputs: the worksheet, its circuit, the findings and the evidence, made once.

Everything the record shows comes through :func:`gather`, so that the record takes
its inputs from one place (the stages run in the order of DESIGN.md and each result
is kept once).
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from typing import Any

from handcheck.errors import HandcheckError, TimeLimitError

__all__ = ["Inputs", "gather"]


@dataclass(frozen=True)
class Inputs:
    """What a record is made from.

    ``evidence`` is None when the numerical solution was not asked for; when it was
    asked for but could not be had, ``evidence_problem`` says why.
    """

    worksheet: Any
    circuit: Any
    report: Any
    evidence: Any = None
    evidence_problem: str | None = None


def gather(worksheet: Any, *, evidence: bool = True, quiet: bool = False, budget: Any = None) -> Inputs:
    """Build, check and (optionally) simulate a loaded worksheet, each once (the pipeline).

    Parameters
    ----------
    worksheet : handcheck.worksheet.model.Worksheet
        The loaded worksheet.
    evidence : bool
        Also solve the circuit numerically in time (the independent evidence).
    quiet : bool
        Write no progress line on stderr.
    budget : handcheck.budget.Budget, optional
        The time budget (the pipeline's default when None).

    Returns
    -------
    Inputs
        The worksheet, circuit, report and evidence.

    Raises
    ------
    HandcheckError
        When the worksheet cannot be checked (as ``handcheck check`` reports it).
    """
    from handcheck.pipeline import evidence_for, run_worksheet

    result = run_worksheet(worksheet, check=True, evidence=False, budget=budget)
    if not evidence:
        return Inputs(worksheet, result.circuit, result.report)
    if not quiet:
        sys.stderr.write("handcheck: solving the circuit numerically in time...\n")
    try:
        found = evidence_for(worksheet, result.circuit, result.exact)
    except TimeLimitError:
        raise
    except HandcheckError as exc:
        return Inputs(worksheet, result.circuit, result.report, None, f"the numerical solution could not be made: {exc}")
    return Inputs(worksheet, result.circuit, result.report, found)
