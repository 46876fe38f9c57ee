"""The record's inputs: the worksheet, its circuit, the findings and the evidence, made once.

Everything the record shows comes in one :class:`Inputs`, made by
:func:`handcheck.pipeline.record_inputs` (the stages run once each, in the order of
DESIGN.md); the record itself never runs a stage.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = ["Inputs"]


@dataclass(frozen=True)
class Inputs:
    """What a record is made from.

    ``evidence`` is None when the numerical solution was not asked for; when it was
    asked for but could not be had, ``evidence_problem`` says why. ``audit`` holds the
    formula audit's findings (empty without ``[[formula]]`` entries); ``curves`` the
    exact network functions the steps name (:mod:`handcheck.solve.curves`), for the
    Bode plot.
    """

    worksheet: Any
    circuit: Any
    report: Any
    evidence: Any = None
    evidence_problem: str | None = None
    audit: tuple[Any, ...] = ()  # the formula audit's findings, one per [[formula]]
    curves: tuple[Any, ...] = ()  # the network functions the steps name
