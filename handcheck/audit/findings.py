"""What the audit finds for one ``[[formula]]``: values and codes, no prose for the page."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from handcheck.audit.sampling import MonteCarlo
from handcheck.verify.findings import Diagnosis

__all__ = ["AUDIT_VERDICTS", "AuditFinding", "AuditVerdict", "WorstCase"]

AuditVerdict = Literal["equivalent", "differs", "unit", "spread"]
AUDIT_VERDICTS: tuple[AuditVerdict, ...] = ("equivalent", "differs", "unit", "spread")


@dataclass(frozen=True)
class WorstCase:
    """The lowest and highest relative error over the ranges and where the larger one occurs.

    ``method`` is "ball arithmetic" (certified: ``bounds`` enclose the true extremes)
    or "sampled ..." (the extremes of a grid), with ``bounds`` proved afterwards
    ("bounds certified in ball arithmetic") or None ("not certified").
    """

    low: float
    high: float
    at: tuple[tuple[str, float], ...]
    method: str
    bounds: tuple[float, float] | None = None
    complete: bool = True


@dataclass(frozen=True)
class AuditFinding:
    """The audit of one formula (Format 1, second edition: the ``audit`` list)."""

    name: str
    quantity: str
    verdict: AuditVerdict
    true_expression: str
    expression: str | None = None
    reference: str | None = None
    unit: str = ""
    holds_when: tuple[str, ...] = ()
    nominal_error: float | None = None
    nominal_true: float | None = None
    nominal_formula: float | None = None
    worst_case: WorstCase | None = None
    monte_carlo: MonteCarlo | None = None
    diagnosis: tuple[Diagnosis, ...] = ()
    method: str = ""
    notes: tuple[str, ...] = ()
    line: int | None = None
    #: For a function of s, the frequency (Hz) its errors are taken at: the value at 0
    #: (DC), the magnitude at any other; None for a quantity that is no function of s.
    error_frequency: float | None = None
    #: Each audited part's unit ("ohm", "F", "" for an op-amp's gain), for showing worst_case_at.
    units: tuple[tuple[str, str], ...] = ()

    @property
    def ok(self) -> bool:
        """True unless the formula differs from the quantity or is in the wrong unit."""
        return self.verdict in ("equivalent", "spread")
