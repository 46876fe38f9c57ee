"""What a check finds: one :class:`StepFinding` per step and a :class:`Report`."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal, TypedDict

import sympy

__all__ = [
    "BASES",
    "VERDICTS",
    "Basis",
    "Diagnosis",
    "Expected",
    "Report",
    "Shown",
    "StepBase",
    "StepFinding",
    "Verdict",
]

Verdict = Literal["agrees", "arithmetic", "formula", "carried", "differs", "unit", "unchecked"]
VERDICTS: tuple[Verdict, ...] = ("agrees", "arithmetic", "formula", "carried", "differs", "unit", "unchecked")
#: What a step was checked against (check output format 1, second edition).
Basis = Literal["circuit", "formula", "none"]
BASES: tuple[Basis, ...] = ("circuit", "formula", "none")
#: Verdicts that do not make a worksheet fail.
PASSING: frozenset[str] = frozenset({"agrees", "unchecked"})


class StepBase(TypedDict):
    """The fields of a :class:`StepFinding` that come from the step itself."""

    name: str
    claimed: str
    quantity: str | None
    formula: str | None
    line: int | None


class Expected(TypedDict, total=False):
    """The fields of a :class:`StepFinding` that show the true value beside the claim."""

    expected: str | None
    expected_si: tuple[float, float] | None
    exact: sympy.Expr | None


class Shown(Expected, total=False):
    """:class:`Expected` with the claim's error and the value its own formula gives."""

    error: float | None
    recomputed: str | None


@dataclass(frozen=True)
class Diagnosis:
    """A catalogued mistake that reproduces the claimed number."""

    mistake: str
    detail: str


@dataclass(frozen=True)
class StepFinding:
    """The verdict on one step, with the values behind it.

    ``basis`` says what the step was checked against (``"circuit"``: its quantity;
    ``"formula"``: only its own formula; ``"none"``: nothing), ``notes`` every remark
    on it (see :mod:`handcheck.verify.basis`).
    """

    name: str
    verdict: Verdict
    claimed: str
    expected: str | None = None
    expected_si: tuple[float, float] | None = None
    error: float | None = None
    caused_by: str | None = None
    diagnosis: tuple[Diagnosis, ...] = ()
    message: str | None = None
    quantity: str | None = None
    formula: str | None = None
    line: int | None = None
    exact: sympy.Expr | None = field(default=None, compare=False)
    recomputed: str | None = None
    basis: Basis = "none"
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Report:
    """The findings for a whole worksheet."""

    path: str
    sha256: str
    title: str
    steps: tuple[StepFinding, ...]
    reference: str | None = None
    cautions: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    analysis: str = ""

    @property
    def ok(self) -> bool:
        return all(step.verdict in PASSING for step in self.steps)

    @property
    def first_divergence(self) -> str | None:
        for step in self.steps:
            if step.verdict not in ("agrees", "carried", "unchecked"):
                return step.name
        return None
