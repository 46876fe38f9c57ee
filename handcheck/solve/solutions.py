"""The exact solutions of one circuit, each computed once, on first use.

The checker, the mistake catalogue's comparisons, the numerical evidence and the
plots all ask for the same steady-state phasors and the same closed-form
transient; :class:`ExactSolutions` computes each at most once per check and hands
the same object to every stage (the pipeline makes one per worksheet).
"""

from __future__ import annotations

from typing import Any

from handcheck.budget import Budget
from handcheck.circuit.model import Circuit
from handcheck.errors import LimitError

__all__ = ["ExactSolutions"]


class ExactSolutions:
    """Steady-state phasors and the closed-form transient of ``circuit``, lazily.

    Parameters
    ----------
    circuit
        The built circuit.
    budget
        The check's time budget: checked before each solve, and what is left of it
        bounds the transient solver's own limit.

    Examples
    --------
    >>> import handcheck
    >>> from handcheck.circuit.build import build
    >>> circuit = build(handcheck.loads('''
    ... [worksheet]
    ... format = 1
    ... title = "Divider"
    ... [parts]
    ... V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
    ... R1 = { resistor = "3 kohm", nodes = ["in", "out"] }
    ... R2 = { resistor = "2 kohm", nodes = ["out", "gnd"] }
    ... '''))
    >>> exact = ExactSolutions(circuit)
    >>> exact.phasors.node_voltage("out"), exact.phasors is exact.phasors
    (4, True)
    """

    def __init__(self, circuit: Circuit, budget: Budget | None = None) -> None:
        self.circuit = circuit
        self.budget = budget or Budget(None)
        self._phasors: Any = None
        self._transient: Any = None
        #: How many times each solution was computed (a test holds these at most 1).
        self.counts = {"phasors": 0, "transient": 0}

    @property
    def phasors(self) -> Any:
        """The exact steady-state :class:`~handcheck.solve.phasor.Solution`."""
        if self._phasors is None:
            from handcheck.solve.phasor import solve

            self.budget.check("the steady-state phasors")
            self.counts["phasors"] += 1
            self._phasors = solve(self.circuit)
        return self._phasors

    @property
    def has_phasors(self) -> bool:
        """Whether the phasors have been computed already."""
        return self._phasors is not None

    @property
    def transient(self) -> Any:
        """The closed-form :class:`~handcheck.solve.transient.TransientSolution`."""
        if self._transient is None:
            from handcheck.solve.transient import TIME_LIMIT, transient_solution

            self.budget.check("the closed-form transient")
            self.counts["transient"] += 1
            limit = self.budget.remaining(TIME_LIMIT)
            try:
                self._transient = transient_solution(
                    self.circuit, time_limit=limit if limit is not None else TIME_LIMIT
                )
            except LimitError:
                if self.budget.expired:
                    raise self.budget.error("the closed-form transient") from None
                raise
        return self._transient
