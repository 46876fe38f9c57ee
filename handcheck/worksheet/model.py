"""The worksheet: frozen records of the TOML file's contents.

Part values are read here, once, into exact numbers and source functions (the text
as written is kept beside them for messages and records); :mod:`handcheck.circuit.build`
turns parts into circuit elements and :mod:`handcheck.verify` reads the steps.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    from handcheck.worksheet.audit import AuditSheet

import sympy

from handcheck.worksheet.sourcefunction import SourceFunction

__all__ = ["PartSpec", "PhasorConvention", "StepSpec", "Worksheet"]

PhasorConvention = Literal["peak", "rms"]


@dataclass(frozen=True)
class PartSpec:
    """One entry of ``[parts]``: its value as written and read.

    ``value`` is the kind's value as written; ``number`` its exact value in SI units
    (see :class:`~handcheck.worksheet.partvalues.PartValues`), ``source`` a source's
    function of time, ``rms`` whether its amplitude was written as rms, ``initial``
    the exact state of a capacitor or inductor at t = 0-, ``gbw`` an op-amp's
    gain-bandwidth product in rad/s.
    """

    id: str
    kind: str
    value: str
    nodes: tuple[str, ...] = ()
    control: tuple[str, ...] | str | None = None
    inductors: tuple[str, ...] = ()
    line: int | None = None
    number: sympy.Expr = sympy.Integer(0)
    source: SourceFunction | None = None
    rms: bool = False
    initial: sympy.Expr | None = None
    gbw: sympy.Expr | None = None


@dataclass(frozen=True)
class StepSpec:
    """One ``[[step]]``, as written."""

    name: str
    claim: str
    quantity: str | None = None
    formula: str | None = None
    tolerance: str | None = None
    line: int | None = None
    index: int = 0
    key_lines: tuple[tuple[str, int], ...] = ()

    def line_of(self, key: str) -> int | None:
        """The line of one of the step's keys (the step's first line if unknown)."""
        return dict(self.key_lines).get(key, self.line)


@dataclass(frozen=True)
class Worksheet:
    """A whole worksheet file, as written, with its provenance."""

    path: str
    text: str
    sha256: str
    title: str
    reference: str | None = None
    author: str | None = None  # who wrote the hand calculation (the record's sign-off block)
    checker: str | None = None  # who checks it
    phasors: PhasorConvention = "peak"
    frequency: str | None = None
    omega: sympy.Expr | None = None  # the analysis frequency read from ``frequency``, rad/s
    tolerance: str = "digits"
    parts: tuple[PartSpec, ...] = ()
    steps: tuple[StepSpec, ...] = ()
    transient: tuple[tuple[str, str], ...] = field(default_factory=tuple)
    lines: tuple[tuple[str, int], ...] = field(default_factory=tuple)
    audit: AuditSheet | None = None  # [audit], [[formula]], part tolerances and ranges

    def line_of(self, key: str) -> int | None:
        """The line of a ``[worksheet]`` key, where known."""
        return dict(self.lines).get(key)

    def part(self, ident: str) -> PartSpec:
        for part in self.parts:
            if part.id == ident:
                return part
        raise KeyError(ident)
