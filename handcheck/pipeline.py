"""The stages of a check, run in order, each result kept once.

::

    worksheet text --load--> Worksheet --build--> Circuit --solve/check--> Report
                                                     \\--simulate--> Evidence

:func:`run` is the one entry point of the command line and of the Python API: it
loads the worksheet, builds its circuit once, makes one
:class:`~handcheck.solve.solutions.ExactSolutions` (phasors and closed-form
transient, each solved at most once) that the checker and the numerical evidence
share, and, when asked, runs the numerical time-domain solution once; the plots
draw from that same evidence.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from handcheck.budget import DEFAULT_TIME_LIMIT, Budget
from handcheck.circuit.model import Circuit
from handcheck.verify.findings import Report
from handcheck.worksheet.model import Worksheet

__all__ = ["Result", "curves_for", "evidence_for", "record_inputs", "run", "run_text", "run_worksheet"]


@dataclass(frozen=True)
class Result:
    """Everything one run of the pipeline produced.

    ``evidence`` is ``None`` unless the numerical solution was asked for;
    ``report`` is ``None`` for a run that only simulated.
    """

    worksheet: Worksheet
    circuit: Circuit
    report: Report | None
    evidence: Any = None
    exact: Any = field(default=None, compare=False, repr=False)
    audit: tuple[Any, ...] = ()  # the formula audit's findings, one per [[formula]]

    @property
    def ok(self) -> bool:
        """Whether every step agrees (or is unchecked), no audited formula differs, and
        the evidence found no problem."""
        report_ok = self.report is None or self.report.ok
        audit_ok = all(finding.ok for finding in self.audit)
        return report_ok and audit_ok and (self.evidence is None or self.evidence.ok)


def _budget(budget: Budget | None, time_limit: float | None) -> Budget:
    if budget is not None:
        return budget
    return Budget(DEFAULT_TIME_LIMIT if time_limit is None else time_limit)


def evidence_for(worksheet: Worksheet, circuit: Circuit, exact: Any) -> Any:
    """The numerical evidence of a built circuit, sharing the check's exact solutions.

    Parameters
    ----------
    worksheet
        The worksheet (its steps name the signals compared; ``[transient] span``).
    circuit
        Its circuit.
    exact
        The :class:`~handcheck.solve.solutions.ExactSolutions` of the check.

    Returns
    -------
    Evidence
    """
    from handcheck.verify.evidence import gather_evidence
    from handcheck.worksheet.values import read_span

    return gather_evidence(circuit, worksheet.steps, span=read_span(worksheet), exact=exact)


def curves_for(report: Report | None, exact: Any) -> tuple[Any, ...]:
    """The exact network functions the steps name, for the Bode plot (solved once each).

    Parameters
    ----------
    report
        The check's findings (None: nothing to draw).
    exact
        The :class:`~handcheck.solve.solutions.ExactSolutions` of the check.

    Returns
    -------
    tuple of handcheck.solve.curves.Curve
        Empty when no step names a network function.
    """
    from handcheck.solve.curves import named_curves, names_function

    if report is None or exact is None:
        return ()
    steps = [(step.name, step.quantity) for step in report.steps]
    if not any(names_function(text) for _, text in steps):
        return ()
    return named_curves(steps, exact.phasors)


def run_worksheet(
    worksheet: Worksheet,
    *,
    check: bool = True,
    evidence: bool = False,
    budget: Budget | None = None,
    time_limit: float | None = None,
) -> Result:
    """Run the stages on a loaded worksheet.

    Parameters
    ----------
    worksheet
        The loaded worksheet.
    check
        Whether to check the steps (``False`` for the numerical solution alone).
    evidence
        Whether to add the independent numerical time-domain solution.
    budget
        The time budget; by default one of ``time_limit`` seconds.
    time_limit
        Seconds allowed when no budget is given (default
        :data:`~handcheck.budget.DEFAULT_TIME_LIMIT`).

    Returns
    -------
    Result
    """
    from handcheck.circuit.build import build
    from handcheck.solve.solutions import ExactSolutions
    from handcheck.verify.check import check as check_steps

    budget = _budget(budget, time_limit)
    budget.check("the circuit")
    circuit = build(worksheet)
    exact = ExactSolutions(circuit, budget)
    report = check_steps(worksheet, circuit, exact=exact) if check else None
    audited: tuple[Any, ...] = ()
    if check and worksheet.audit is not None and worksheet.audit.formulas:
        from handcheck.audit import audit

        audited = audit(worksheet, circuit, budget)
    found = evidence_for(worksheet, circuit, exact) if evidence else None
    return Result(worksheet=worksheet, circuit=circuit, report=report, evidence=found, exact=exact, audit=audited)


def run(
    path: str | Path,
    *,
    check: bool = True,
    evidence: bool = False,
    budget: Budget | None = None,
    time_limit: float | None = None,
) -> Result:
    """Load the worksheet at ``path`` and run the stages (see :func:`run_worksheet`).

    Parameters
    ----------
    path
        The worksheet file.
    check, evidence, budget, time_limit
        As for :func:`run_worksheet`.

    Returns
    -------
    Result

    Raises
    ------
    HandcheckError
        For a worksheet that cannot be read or checked (the message names the file
        and line).
    TimeLimitError
        When the budget runs out.
    """
    from handcheck.worksheet.load import load

    budget = _budget(budget, time_limit)
    return run_worksheet(load(path), check=check, evidence=evidence, budget=budget)


def run_text(
    text: str,
    name: str = "<worksheet>",
    *,
    check: bool = True,
    evidence: bool = False,
    budget: Budget | None = None,
    time_limit: float | None = None,
) -> Result:
    """Run the stages on a worksheet given as text (see :func:`run_worksheet`).

    Parameters
    ----------
    text
        The worksheet's TOML text.
    name
        The name shown in messages and reports in place of a file name.
    check, evidence, budget, time_limit
        As for :func:`run_worksheet`.

    Returns
    -------
    Result
    """
    from handcheck.worksheet.load import loads

    budget = _budget(budget, time_limit)
    return run_worksheet(loads(text, name), check=check, evidence=evidence, budget=budget)


def record_inputs(
    worksheet: Worksheet, *, evidence: bool = True, budget: Budget | None = None, curves: bool = True
) -> Any:
    """The inputs of a calculation record: the stages run once, the evidence kept apart.

    A numerical solution that cannot be made does not stop the record: the record
    says why instead (``evidence_problem``).

    Parameters
    ----------
    worksheet
        The loaded worksheet.
    evidence
        Whether to add the independent numerical time-domain solution.
    budget
        The time budget.
    curves
        Whether to solve the network functions the steps name, for the Bode plot
        (``False`` where only the results are compared, as ``reverify`` does).

    Returns
    -------
    handcheck.record.inputs.Inputs
    """
    from handcheck.errors import HandcheckError
    from handcheck.record.inputs import Inputs

    result = run_worksheet(worksheet, check=True, evidence=False, budget=budget)
    made = Inputs(
        worksheet,
        result.circuit,
        result.report,
        audit=result.audit,
        curves=curves_for(result.report, result.exact) if curves else (),
    )
    if not evidence:
        return made
    try:
        found = evidence_for(worksheet, result.circuit, result.exact)
    except HandcheckError as exc:
        return replace(made, evidence_problem=f"the numerical solution could not be made: {exc}")
    return replace(made, evidence=found)
