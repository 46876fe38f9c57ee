"""Worksheet parts, read by the loader, to an exact :class:`Circuit` with its structure checked."""

from __future__ import annotations

import re

import sympy

from handcheck.circuit.kinds import SOURCES
from handcheck.circuit.model import GROUND, Circuit, Part, Source
from handcheck.circuit.structure import check_structure
from handcheck.errors import HandcheckError, WorksheetError
from handcheck.worksheet.model import PartSpec, Worksheet

__all__ = ["build"]


def _part(spec: PartSpec) -> Part:
    """The circuit part of one worksheet part (its values were read by the loader)."""
    source = None
    if spec.kind in SOURCES:
        assert spec.source is not None
        source = Source(spec.source, spec.rms)
    return Part(
        id=spec.id,
        kind=spec.kind,  # type: ignore[arg-type]
        nodes=spec.nodes,
        value=spec.number,
        source=source,
        control=spec.control,
        inductors=spec.inductors,
        initial=spec.initial,
        line=spec.line,
        gbw=spec.gbw,
    )


def _analysis_omega(worksheet: Worksheet, parts: tuple[Part, ...]) -> sympy.Expr:
    if worksheet.omega is not None:
        return worksheet.omega
    omegas: list[sympy.Expr] = []
    for part in parts:
        if part.source is not None:
            for omega in part.source.frequencies:
                if not any(sympy.simplify(omega - o) == 0 for o in omegas):
                    omegas.append(omega)
    if len(omegas) > 1:
        raise WorksheetError(
            'the sources run at more than one frequency; set frequency = "..." in [worksheet] to choose the analysis frequency',
            file=worksheet.path,
            line=dict(worksheet.lines).get("title"),
        )
    return omegas[0] if omegas else sympy.Integer(0)


def build(worksheet: Worksheet) -> Circuit:
    """Turn the worksheet's parts into a checked, exact circuit.

    Raises
    ------
    WorksheetError, UnitError
        For a value in the wrong unit or out of range.
    CircuitError
        For a circuit that cannot be solved as drawn (see :func:`check_structure`).
    """
    try:
        return _build(worksheet)
    except HandcheckError as exc:
        exc.message = exc.message.replace("\n", " ")
        exc.args = (exc.message,)
        raise


def _build(worksheet: Worksheet) -> Circuit:
    parts = tuple(_part(spec) for spec in worksheet.parts)
    nodes: dict[str, None] = {}
    for part in parts:
        for node in part.nodes:
            if node != GROUND:
                nodes.setdefault(node, None)
    circuit = Circuit(
        parts=parts,
        nodes=tuple(nodes),
        omega=_analysis_omega(worksheet, parts),
        phasors=worksheet.phasors,
        path=worksheet.path,
        start=dict(worksheet.transient).get("start", "rest"),  # type: ignore[arg-type]
    )
    named = frozenset(
        word for step in worksheet.steps if step.quantity for word in re.findall(r"[A-Za-z0-9_]+", step.quantity)
    )
    check_structure(circuit, named)
    return circuit
